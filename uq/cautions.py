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
    "Model limits (transient): one-dimensional heat flow; dry fabrics (no moisture, sweat or "
    "steam); no compression, shrinkage, degradation, charring or melting; gaps of fixed width "
    "with still air (conduction and radiation) unless convection is enabled; grey, diffuse "
    "surfaces; properties constant apart from the given temperature slopes; skin as three "
    "layers with Pennes perfusion and a fixed core temperature, a sensor as a lumped copper "
    "disc.",
    "Burn criteria: the published damage-integral constants and the copper-disc criterion "
    "scatter widely (at one basal temperature the times to a second-degree burn of two "
    "published parameter sets differ by up to a factor of 10); a time to burn is an estimate "
    "within that scatter, not a prediction of injury.",
)
"""The cautions of a transient study (time to burn), one sentence group per item."""


def cautions_for(study: object) -> tuple[str, ...]:
    """The cautions that apply to a study: :data:`TRANSIENT_CAUTIONS` for a transient one."""
    return TRANSIENT_CAUTIONS if getattr(study, "transient", None) is not None else CAUTIONS


def cautions_text(*, heading: str = "CAUTIONS", width: int = 92,
                  items: tuple[str, ...] = CAUTIONS) -> str:
    """The cautions as a plain-text block, lines wrapped at ``width`` characters.

    Parameters
    ----------
    heading
        First line of the block [-].
    width
        Maximum line length [-].
    items
        The cautions (:data:`CAUTIONS`, or :data:`TRANSIENT_CAUTIONS`) [-].

    Returns
    -------
    str
        The block, ending without a newline.
    """
    lines = [heading]
    for item in items:
        lines.extend(
            textwrap.wrap(item, width=width, initial_indent="  - ", subsequent_indent="    ")
        )
    return "\n".join(lines)
