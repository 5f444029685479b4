"""Boundary conditions of the assembly: the hot (exposed) side and the cold (wearer) side.

Each boundary is a frozen dataclass whose numeric fields are scalars or arrays of shape ``(n,)``.
The heat-flow functions here are pure and broadcast over samples; each returns the heat flux and
its derivative with respect to the face temperature, for the Newton solve in
:mod:`plyrisk.models.network`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike
from scipy.constants import Stefan_Boltzmann as SIGMA

from plyrisk.models.stack import check_emissivity, check_nonnegative, check_temperature

FloatArray = float | np.ndarray
"""A scalar or an array of samples (what the heat-flow functions compute with)."""

# --------------------------------------------------------------------------------------------
# Hot side
# --------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class HotFlux:
    """Prescribed net heat flux into the exposed face.

    Parameters
    ----------
    heat_flux
        Net heat flux entering the exposed face [W m-2].
    """

    heat_flux: ArrayLike
    kind = "flux"
    name = "hot_side"

    def validate(self) -> None:
        check_nonnegative(self, "heat_flux")


@dataclass(frozen=True)
class HotTemperature:
    """Prescribed temperature of the exposed face.

    Parameters
    ----------
    temperature
        Exposed-face temperature [K].
    """

    temperature: ArrayLike
    kind = "temperature"
    name = "hot_side"

    def validate(self) -> None:
        check_temperature(self, "temperature")


@dataclass(frozen=True)
class HotEnvironment:
    """A fire or furnace exposure of the exposed face.

    The face absorbs ``emissivity * incident_flux`` (grey surface, absorptivity = emissivity),
    gains ``convection_coefficient * (gas_temperature - T)`` from hot gas and exchanges
    ``emissivity * sigma * (T**4 - surroundings_temperature**4)`` with its surroundings. The
    incident flux is the radiation from the source *in addition to* the surroundings' own
    blackbody irradiation ``sigma * surroundings_temperature**4``.

    Parameters
    ----------
    incident_flux
        Radiant flux from the source falling on the face [W m-2].
    gas_temperature
        Temperature of the gas flowing over the face [K].
    convection_coefficient
        Convective heat-transfer coefficient, gas to face [W m-2 K-1].
    surroundings_temperature
        Radiant temperature of the surroundings [K]; ``None`` means the gas temperature.
    """

    incident_flux: ArrayLike
    gas_temperature: ArrayLike
    convection_coefficient: ArrayLike
    surroundings_temperature: ArrayLike | None = None
    kind = "environment"
    name = "hot_side"

    def validate(self) -> None:
        check_nonnegative(self, "incident_flux")
        check_temperature(self, "gas_temperature")
        check_nonnegative(self, "convection_coefficient")
        if self.surroundings_temperature is not None:
            check_temperature(self, "surroundings_temperature")


HotSide = HotFlux | HotTemperature | HotEnvironment

# --------------------------------------------------------------------------------------------
# Cold side
# --------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class ColdTemperature:
    """Prescribed temperature of the innermost face of the assembly.

    Parameters
    ----------
    temperature
        Innermost-face temperature [K].
    """

    temperature: ArrayLike
    kind = "temperature"
    name = "cold_side"

    def validate(self) -> None:
        check_temperature(self, "temperature")


@dataclass(frozen=True)
class ColdSurface:
    """A surface at a known temperature (e.g. skin) reached across the assembly's last gap.

    Parameters
    ----------
    temperature
        Temperature of the surface [K].
    emissivity
        Total hemispherical emissivity of the surface [-].
    """

    temperature: ArrayLike
    emissivity: ArrayLike = 0.97
    kind = "surface"
    name = "cold_side"

    def validate(self) -> None:
        check_temperature(self, "temperature")
        check_emissivity(self, "emissivity")


@dataclass(frozen=True)
class ColdEnvironment:
    """The innermost face losing heat to an ambient by convection and radiation.

    Parameters
    ----------
    ambient_temperature
        Temperature of the air beyond the innermost face [K].
    convection_coefficient
        Convective heat-transfer coefficient, face to ambient air [W m-2 K-1].
    surroundings_temperature
        Radiant temperature of what the face sees [K]; ``None`` means the ambient temperature.
    """

    ambient_temperature: ArrayLike
    convection_coefficient: ArrayLike
    surroundings_temperature: ArrayLike | None = None
    kind = "environment"
    name = "cold_side"

    def validate(self) -> None:
        check_temperature(self, "ambient_temperature")
        check_nonnegative(self, "convection_coefficient")
        if self.surroundings_temperature is not None:
            check_temperature(self, "surroundings_temperature")


ColdSide = ColdTemperature | ColdSurface | ColdEnvironment

HOT_SIDE_KINDS = {"flux": HotFlux, "temperature": HotTemperature, "environment": HotEnvironment}
COLD_SIDE_KINDS = {
    "temperature": ColdTemperature,
    "surface": ColdSurface,
    "environment": ColdEnvironment,
}

# --------------------------------------------------------------------------------------------
# Heat-flow functions (pure, broadcasting)
# --------------------------------------------------------------------------------------------


def hot_environment_flux(
    face_temperature: np.ndarray,
    *,
    incident_flux: FloatArray,
    gas_temperature: FloatArray,
    convection_coefficient: FloatArray,
    surroundings_temperature: FloatArray,
    emissivity: FloatArray,
) -> tuple[np.ndarray, np.ndarray]:
    """Net heat flux into the exposed face from a fire or furnace environment.

    ``q = eps G + h (T_g - T) - eps sigma (T**4 - T_s**4)``                          (B.1)

    Parameters
    ----------
    face_temperature
        Exposed-face temperature [K].
    incident_flux
        Source radiant flux on the face, ``G`` [W m-2].
    gas_temperature
        Hot-gas temperature, ``T_g`` [K].
    convection_coefficient
        Gas-to-face heat-transfer coefficient, ``h`` [W m-2 K-1].
    surroundings_temperature
        Radiant temperature of the surroundings, ``T_s`` [K].
    emissivity
        Emissivity (= absorptivity) of the exposed face, ``eps`` [-].

    Returns
    -------
    q, dq_dT
        Net flux into the face [W m-2] and its derivative [W m-2 K-1].
    """
    T = face_temperature
    eps = emissivity
    h = convection_coefficient
    t3 = T * T * T
    es = eps * SIGMA
    q = eps * incident_flux + h * (gas_temperature - T) - es * (
        t3 * T - np.asarray(surroundings_temperature) ** 4
    )
    dq = -h - 4.0 * es * t3
    return q, dq


def cold_environment_flux(
    face_temperature: np.ndarray,
    *,
    ambient_temperature: FloatArray,
    convection_coefficient: FloatArray,
    surroundings_temperature: FloatArray,
    emissivity: FloatArray,
) -> tuple[np.ndarray, np.ndarray]:
    """Heat flux leaving the innermost face to an ambient.

    ``q = h (T - T_a) + eps sigma (T**4 - T_s**4)``                                  (B.2)

    Parameters
    ----------
    face_temperature
        Innermost-face temperature [K].
    ambient_temperature
        Ambient air temperature, ``T_a`` [K].
    convection_coefficient
        Face-to-air heat-transfer coefficient, ``h`` [W m-2 K-1].
    surroundings_temperature
        Radiant temperature of what the face sees, ``T_s`` [K].
    emissivity
        Emissivity of the innermost face, ``eps`` [-].

    Returns
    -------
    q, dq_dT
        Flux leaving the face [W m-2] and its derivative [W m-2 K-1].
    """
    T = face_temperature
    eps = emissivity
    h = convection_coefficient
    q = h * (T - ambient_temperature) + eps * SIGMA * (
        T**4 - np.asarray(surroundings_temperature) ** 4
    )
    dq = h + 4.0 * eps * SIGMA * T**3
    return q, dq
