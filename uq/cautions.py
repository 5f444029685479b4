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
"""The cautions, one sentence group per item."""


def cautions_text(*, heading: str = "CAUTIONS", width: int = 92) -> str:
    """The cautions as a plain-text block, lines wrapped at ``width`` characters.

    Parameters
    ----------
    heading
        First line of the block.
    width
        Maximum line length.

    Returns
    -------
    str
        The block, ending without a newline.
    """
    lines = [heading]
    for item in CAUTIONS:
        lines.extend(
            textwrap.wrap(item, width=width, initial_indent="  - ", subsequent_indent="    ")
        )
    return "\n".join(lines)
