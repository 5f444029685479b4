"""The cautions block that every user-facing output of plyrisk carries."""

from __future__ import annotations

import textwrap

CAUTIONS = (
    "Engineering estimates only. These results are not a substitute for certification "
    "testing to the applicable standards by accredited laboratories.",
    "Defer to the applicable standards, local codes and qualified professional practice in "
    "every safety decision.",
    "Model limits: steady state (no exposure duration, no heat storage, no burn-injury "
    "integral); dry fabrics; no compression; no degradation, charring or melting; no moisture "
    "or sweat; still air in gaps unless convection is enabled; grey, diffuse, opaque surfaces; "
    "one-dimensional heat flow; dry-air properties checked for 250-1500 K only.",
)
"""The cautions of a steady study, one sentence group per item."""

TRANSIENT_CAUTIONS = (
    CAUTIONS[0],
    CAUTIONS[1],
    "Times to burn are model estimates: the published burn criteria they rest on (the "
    "Henriques-type damage integral and its parameter sets, the Stoll & Chianta curve) scatter "
    "widely between sources and people, and the skin properties, initial skin profile and "
    "perfusion move the answer by tens of per cent.",
    "Model limits: one-dimensional heat flow; dry fabrics (no moisture, sweat or vapour); no "
    "compression; no degradation, shrinkage, charring or melting; grey, diffuse surfaces "
    "(in-depth absorption only where configured); still air in gaps unless convection is "
    "enabled; a lumped copper-disc sensor; dry-air properties checked for 250-1500 K only.",
)
"""The cautions of a transient study (times to burn, sensor criterion)."""


def cautions_text(*, heading: str = "CAUTIONS", width: int = 92,
                  transient: bool = False) -> str:
    """The cautions as a plain-text block, lines wrapped at ``width`` characters.

    Parameters
    ----------
    heading
        First line of the block.
    width
        Maximum line length.
    transient
        The cautions of a transient study (times to burn) instead of a steady one.

    Returns
    -------
    str
        The block, ending without a newline.
    """
    lines = [heading]
    for item in TRANSIENT_CAUTIONS if transient else CAUTIONS:
        lines.extend(
            textwrap.wrap(item, width=width, initial_indent="  - ", subsequent_indent="    ")
        )
    return "\n".join(lines)
