"""The cautions block that every user-facing output of plyrisk carries."""

from __future__ import annotations

import textwrap

from plyrisk.display import text_units

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
    "widely between sources and people. At a constant basal temperature of 50 °C the Henriques "
    "(1947) and Weaver & Stoll (1969) constants give 202 s and 20 s to a second-degree burn; "
    "the skin properties, initial skin profile and perfusion move the answer by tens of per "
    "cent. The confidence intervals shown cover the sampling of the inputs only, not that "
    "scatter.",
    "Model limits: one-dimensional heat flow; dry fabrics (no moisture, sweat or vapour); no "
    "compression; no degradation, shrinkage, charring or melting; grey, diffuse surfaces "
    "(in-depth absorption only where configured); still air in gaps unless convection is "
    "enabled; a three-layer skin with published property sets, or a lumped copper-disc sensor "
    "standing in for skin; dry-air properties checked for 250-1500 K only.",
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
            textwrap.wrap(text_units(item), width=width, initial_indent="  - ",
                          subsequent_indent="    ")
        )
    return "\n".join(lines)


COMPACT_CAUTION = ("Engineering estimate only, under the model's limits; not a substitute for "
                   "certification testing by accredited laboratories; defer to the applicable "
                   "standards, local codes and qualified practice.")
"""The cautions in one sentence, shown right below a verdict (the full block follows)."""

COMPACT_TRANSIENT = (" Times to burn rest on published burn criteria that scatter widely; the "
                     "intervals cover the sampling of the inputs only.")
"""What a transient study adds to :data:`COMPACT_CAUTION`."""


def compact_cautions(*, transient: bool = False, width: int = 92) -> str:
    """The cautions in a short boxed paragraph, for right below a verdict.

    Parameters
    ----------
    transient
        Add the scatter of the burn criteria (a transient study).
    width
        Line length of the box.

    Returns
    -------
    str

    Examples
    --------
    >>> print(compact_cautions(width=60).splitlines()[0])
    +----------------------------------------------------------+
    """
    text = COMPACT_CAUTION + (COMPACT_TRANSIENT if transient else "")
    inner = width - 4
    body = textwrap.wrap("CAUTION: " + text, width=inner)
    rule = "+" + "-" * (width - 2) + "+"
    return "\n".join([rule, *[f"| {line:<{inner}} |" for line in body], rule])
