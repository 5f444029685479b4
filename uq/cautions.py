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

TRANSIENT_CAUTIONS = (
    CAUTIONS[0],
    CAUTIONS[1],
    "Transient model limits: one-dimensional heat flow; dry fabrics (no moisture, sweat or "
    "evaporation); no melting, shrinkage, charring or degradation; no compression of layers or "
    "gaps during the exposure; constant thermal properties apart from the linear temperature "
    "terms given; still air in gaps unless convection is enabled; grey, diffuse surfaces; a "
    "three-layer skin with published property sets, or a lumped copper-disc sensor standing in "
    "for skin; the initial skin profile, perfusion and skin emissivity each move the time to "
    "burn by a few per cent up to about 30 %.",
    "The published burn criteria scatter widely: they are fitted to different experiments "
    "(human forearm and pig skin, bare skin, constant exposures), and at a constant basal "
    "temperature of 50 °C the Henriques (1947) and Weaver & Stoll (1969) damage constants "
    "give times to a second-degree burn of 202 s and 20 s. A time to burn is an estimate "
    "within that scatter, not a prediction of an injury; the confidence intervals shown cover "
    "the sampling of the inputs only, not the scatter of the criteria.",
)
"""The cautions of a transient study: the model's limits and the scatter of the burn criteria."""


def cautions_text(*, heading: str = "CAUTIONS", width: int = 92,
                  transient: bool = False) -> str:
    """The cautions as a plain-text block, lines wrapped at ``width`` characters.

    Parameters
    ----------
    heading
        First line of the block [-].
    width
        Maximum line length [-].
    transient
        The cautions of a transient study (:data:`TRANSIENT_CAUTIONS`) [-].

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
