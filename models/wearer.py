"""What lies behind the assembly in the transient model: skin, a copper-disc sensor, or a
surface held at a prescribed temperature.

The wearer is reached across the assembly's last gap when the stack ends with a
:class:`~plyrisk.models.stack.Gap` (gap conduction in parallel with radiation, the gap law of
:mod:`plyrisk.models.elements` with the wearer's emissivity as the cold face), or touches the
last solid when the stack ends with a :class:`~plyrisk.models.stack.Solid` (perfect contact, or
through ``contact_resistance``). With no layers at all the exposure falls on the wearer
directly (bare skin, bare sensor).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, TypedDict

import numpy as np
from numpy.typing import ArrayLike

from plyrisk.models.stack import StackError, check_emissivity, check_positive, check_temperature


class SkinLayerProperties(TypedDict):
    """One skin layer as the transient model reads it (:meth:`SkinWearer.layers`): name,
    thickness [m], conductivity [W m-1 K-1], density [kg m-3], specific heat [J kg-1 K-1] and
    the perfusion capacity rate ``w_b rho_b c_b`` [W m-3 K-1]."""

    name: str
    thickness: ArrayLike
    conductivity: ArrayLike
    density: ArrayLike
    specific_heat: ArrayLike
    perfusion: np.ndarray


@dataclass(frozen=True)
class SkinWearer:
    """Three-layer skin with Pennes perfusion (epidermis, dermis, subcutis).

    Parameters
    ----------
    skin
        A :class:`plyrisk.models.skin.Skin` (layers, blood properties, core and arterial
        temperatures, emissivity) [-].
    contact_resistance
        Contact resistance between the last solid and the skin when they touch [m2 K W-1];
        ``None`` for perfect contact. Not used across a gap.
    perfusion
        Include the blood-perfusion term of the Pennes equation [-].

    Notes
    -----
    In each layer ``rho c dT/dt = d/dx (k dT/dx) + w_b rho_b c_b (T_a - T)`` (Pennes 1948,
    J Appl Physiol 1:93-122); the base of the subcutis is held at the core temperature.
    """

    skin: Any
    contact_resistance: ArrayLike | None = None
    perfusion: bool = True

    kind = "skin"
    name = "skin"

    def validate(self) -> None:
        """Raise ``ValueError`` naming the skin layer, the quantity and the bad value."""
        from plyrisk.models.skin import validate_skin

        validate_skin(self.skin)
        if self.contact_resistance is not None:
            check_positive(self, "contact_resistance")

    @property
    def emissivity(self) -> ArrayLike:
        """Emissivity of the skin surface [-]."""
        return self.skin.emissivity

    def layers(self) -> list[SkinLayerProperties]:
        """Per skin layer: name, thickness [m], conductivity [W m-1 K-1], density [kg m-3],
        specific heat [J kg-1 K-1] and the perfusion capacity rate ``w_b rho_b c_b``
        [W m-3 K-1]."""
        skin = self.skin
        blood = np.asarray(skin.blood_density, dtype=float) * np.asarray(
            skin.blood_specific_heat, dtype=float
        )
        out: list[SkinLayerProperties] = []
        for layer in skin.layers:
            perfusion = np.asarray(layer.perfusion_rate, dtype=float) * blood
            out.append(
                {
                    "name": layer.name,
                    "thickness": layer.thickness,
                    "conductivity": layer.conductivity,
                    "density": layer.density,
                    "specific_heat": layer.specific_heat,
                    "perfusion": perfusion if self.perfusion else 0.0 * perfusion,
                }
            )
        return out

    @property
    def core_temperature(self) -> ArrayLike:
        """Temperature held at the base of the subcutis [K]."""
        return self.skin.core_temperature

    @property
    def arterial_temperature(self) -> ArrayLike:
        """Temperature of the perfusing blood [K]."""
        return self.skin.arterial_temperature


@dataclass(frozen=True)
class SensorWearer:
    """A lumped copper-disc sensor with an insulated back.

    Parameters
    ----------
    sensor
        A :class:`plyrisk.models.sensor.CopperDisc` [-].
    contact_resistance
        Contact resistance between the last solid and the sensor face when they touch
        [m2 K W-1]; ``None`` for perfect contact.

    Notes
    -----
    ``(m c_p / A) dT/dt = q`` with ``q`` the flux reaching the blackened face; the energy it
    absorbed is ``(m c_p / A) (T - T_0)`` (a lumped body: common practice for the thin disc).
    Before the exposure the disc is held at its ``initial_temperature`` when the sensor gives
    one (the assembly in front of it in the steady state with it), else it takes the steady
    state of the pre-exposure conditions.
    """

    sensor: Any
    contact_resistance: ArrayLike | None = None

    kind = "sensor"
    name = "sensor"

    def validate(self) -> None:
        """Raise ``ValueError`` naming the quantity and the bad value."""
        check_positive(self, "heat_capacity")
        check_emissivity(self, "emissivity")
        if self.contact_resistance is not None:
            check_positive(self, "contact_resistance")

    @property
    def emissivity(self) -> ArrayLike:
        """Emissivity (= absorptivity) of the sensor face [-]."""
        return self.sensor.emissivity

    @property
    def heat_capacity(self) -> np.ndarray:
        """Heat capacity per unit exposed area ``m c_p / A`` [J m-2 K-1]."""
        return self.sensor.heat_capacity_per_area


@dataclass(frozen=True)
class PrescribedWearer:
    """A surface held at a prescribed temperature (a cooled plate, a fixed skin temperature).

    Parameters
    ----------
    temperature
        Temperature of the surface [K].
    emissivity
        Emissivity of the surface, for radiation across the last gap [-].
    contact_resistance
        Contact resistance to the last solid when they touch [m2 K W-1]; ``None`` for perfect
        contact.
    """

    temperature: ArrayLike
    emissivity: ArrayLike = 0.95
    contact_resistance: ArrayLike | None = None

    kind = "prescribed"
    name = "prescribed"

    def validate(self) -> None:
        """Raise ``ValueError`` naming the quantity and the bad value."""
        check_temperature(self, "temperature")
        check_emissivity(self, "emissivity")
        if self.contact_resistance is not None:
            check_positive(self, "contact_resistance")


Wearer = SkinWearer | SensorWearer | PrescribedWearer
WEARER_KINDS = {"skin": SkinWearer, "sensor": SensorWearer, "prescribed": PrescribedWearer}
"""The wearer sides of the transient model, by kind."""


def check_wearer(wearer: object) -> None:
    """Raise ``ValueError`` unless ``wearer`` is one of :data:`WEARER_KINDS` and valid.

    Parameters
    ----------
    wearer
        The wearer side [-].
    """
    if not isinstance(wearer, SkinWearer | SensorWearer | PrescribedWearer):
        raise StackError(
            f"wearer: {type(wearer).__name__} is not one of SkinWearer, SensorWearer, "
            "PrescribedWearer"
        )
    wearer.validate()
