"""Copper-disc sensor and the Stoll & Chianta (1969) second-degree burn criterion.

Bench tests of heat-protective fabrics place a blackened copper disc behind the specimen and
take as the time to a second-degree burn the moment the energy the disc has absorbed since the
exposure started reaches the criterion curve of Stoll & Chianta (1969): the energy that,
delivered to bare blackened skin at a constant flux over the same time, just causes a blister.

The disc is a lumped body: its absorbed energy per unit area is ``(m c / A) dT``. The
criterion is a power law fitted to the published table (:data:`STOLL_CHIANTA_1969`).

Results are engineering estimates: the published burn criteria scatter widely and do not
replace certification testing.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike

from plyrisk.errors import PlyriskError

COPPER_DENSITY = 8960.0
"""Density of copper at 20 degC [kg m-3] (handbook value, from memory)."""


class SensorError(PlyriskError, ValueError):
    """An invalid sensor definition or criterion argument."""


@dataclass(frozen=True)
class CopperDisc:
    """A lumped copper-disc sensor with a blackened exposed face.

    Parameters
    ----------
    mass_per_area
        Mass of the disc per unit exposed area, ``m / A`` [kg m-2].
    specific_heat
        Specific heat capacity of copper ``c`` [J kg-1 K-1].
    emissivity
        Emissivity of the blackened face, also its absorptivity [-].
    initial_temperature
        Temperature of the disc when the exposure starts [K]; ``None`` to let the caller
        choose (e.g. the ambient temperature).
    """

    mass_per_area: ArrayLike
    specific_heat: ArrayLike
    emissivity: ArrayLike
    initial_temperature: ArrayLike | None = None

    @property
    def heat_capacity_per_area(self) -> np.ndarray:
        """Heat capacity per unit exposed area, ``m c / A`` [J m-2 K-1]."""
        return np.asarray(self.mass_per_area, dtype=float) * np.asarray(
            self.specific_heat, dtype=float
        )


def copper_disc(
    *,
    diameter: float = 0.040,
    thickness: float = 0.0016,
    mass: float | None = 0.018,
    specific_heat: float = 385.0,
    emissivity: float = 0.9,
    initial_temperature: float | None = None,
) -> CopperDisc:
    """Build the copper-disc sensor of the bench-test practice.

    Parameters
    ----------
    diameter
        Diameter of the disc's exposed face [m].
    thickness
        Thickness of the disc [m]; used for the mass when ``mass`` is ``None``.
    mass
        Mass of the disc [kg]; ``None`` for ``COPPER_DENSITY * area * thickness``.
    specific_heat
        Specific heat capacity of copper [J kg-1 K-1] (385 at 25 degC).
    emissivity
        Emissivity (and absorptivity) of the blackened face [-].
    initial_temperature
        Temperature of the disc when the exposure starts [K], or ``None``.

    Returns
    -------
    CopperDisc
        The sensor; the defaults give ``m c / A`` = 5515 J m-2 K-1.

    Raises
    ------
    SensorError
        (a ``ValueError``) naming the parameter and its bad value.

    Examples
    --------
    >>> round(float(copper_disc().heat_capacity_per_area), 1)
    5514.7
    """
    for label, value in (("diameter", diameter), ("thickness", thickness),
                         ("specific_heat", specific_heat)):
        if not (math.isfinite(value) and value > 0.0):
            raise SensorError(f"copper disc: {label} must be positive and finite, got {value!r}")
    if mass is not None and not (math.isfinite(mass) and mass > 0.0):
        raise SensorError(f"copper disc: mass must be positive and finite, got {mass!r}")
    if not (0.0 < emissivity <= 1.0):
        raise SensorError(f"copper disc: emissivity {emissivity!r} is outside (0, 1]")
    area = math.pi * diameter**2 / 4.0
    m = COPPER_DENSITY * area * thickness if mass is None else mass
    return CopperDisc(m / area, specific_heat, emissivity, initial_temperature)


def absorbed_energy(temperature_rise: ArrayLike, *, sensor: CopperDisc) -> np.ndarray:
    """Energy absorbed per unit area by a lumped sensor for a temperature rise.

    Parameters
    ----------
    temperature_rise
        Rise of the sensor's temperature since the exposure started, ``dT`` [K].
    sensor
        The sensor.

    Returns
    -------
    numpy.ndarray
        ``(m c / A) dT`` [J m-2].

    Notes
    -----
    Lumped energy balance of the disc (uniform temperature, no losses).           (C.1)

    Examples
    --------
    >>> round(float(absorbed_energy(10.0, sensor=copper_disc())), 1)
    55147.2
    """
    return sensor.heat_capacity_per_area * np.asarray(temperature_rise, dtype=float)


@dataclass(frozen=True)
class CriterionTable:
    """A published burn-criterion table.

    Attributes
    ----------
    reference
        Citation.
    exposure_time
        Exposure times [s].
    incident_flux
        Constant incident flux that causes the burn at each time [W m-2].
    absorbed_energy
        Energy at the burn, flux times time as printed [J m-2].
    """

    reference: str
    exposure_time: tuple[float, ...]
    incident_flux: tuple[float, ...]
    absorbed_energy: tuple[float, ...]


STOLL_CHIANTA_1969 = CriterionTable(
    reference=(
        "Stoll AM, Chianta MA. Method and rating system for evaluation of thermal protection. "
        "Aerospace Med 1969;40(11):1232-1238"
    ),
    exposure_time=(1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0, 8.0, 9.0, 10.0, 11.0, 12.0, 13.0, 14.0,
                   15.0, 16.0, 17.0, 18.0, 19.0, 20.0, 25.0, 30.0),
    incident_flux=(50e3, 31e3, 23e3, 19e3, 16e3, 14e3, 13e3, 11.5e3, 10.6e3, 9.8e3, 9.2e3,
                   8.6e3, 8.1e3, 7.7e3, 7.4e3, 7.0e3, 6.7e3, 6.4e3, 6.2e3, 6.0e3, 5.1e3, 4.5e3),
    absorbed_energy=(50e3, 61e3, 69e3, 75e3, 80e3, 85e3, 88e3, 92e3, 95e3, 98e3, 101e3, 103e3,
                     106e3, 108e3, 111e3, 113e3, 114e3, 116e3, 118e3, 120e3, 128e3, 135e3),
)
"""Stoll & Chianta (1969): incident flux and energy for a second-degree burn of bare blackened
skin versus exposure time (1-30 s), in SI units. The fluxes (kW m-2) and the energies up to 4 s
are as printed in a public explanatory note on the criterion; the energies from 5 s on are
recalled, equal to flux times time within the table's rounding."""

CRITERION_COEFFICIENT = 50.006e3
"""``C`` of the criterion power law ``E = C t^b`` [J m-2 s^-b]."""
CRITERION_EXPONENT = 0.29226
"""``b`` of the criterion power law [-]."""
CRITERION_TIME_RANGE = (1.0, 30.0)
"""Times covered by the published table [s]; outside it the power law is extrapolated."""


def criterion_extrapolated(time: ArrayLike) -> np.ndarray:
    """Flag times outside the range of the published criterion table (1-30 s).

    Parameters
    ----------
    time
        Time since the exposure started [s].

    Returns
    -------
    numpy.ndarray
        ``True`` where :func:`criterion_energy` extrapolates the power law. Carry this flag
        with any time to burn read off the criterion.

    Examples
    --------
    >>> criterion_extrapolated([0.5, 4.0, 45.0]).tolist()
    [True, False, True]
    """
    t = np.asarray(time, dtype=float)
    return (t < CRITERION_TIME_RANGE[0]) | (t > CRITERION_TIME_RANGE[1])


def criterion_energy(time: ArrayLike, *, extrapolate: bool = True) -> np.ndarray:
    """Second-degree burn criterion: absorbed energy versus time since the exposure started.

    Parameters
    ----------
    time
        Time since the exposure started ``t`` [s].
    extrapolate
        Extrapolate the power law outside 1-30 s (flag those times with
        :func:`criterion_extrapolated`); if ``False`` return NaN there.

    Returns
    -------
    numpy.ndarray
        ``E(t)`` [J m-2]; 0 at ``t = 0``.

    Notes
    -----
    ``E = C t^b``, ``C`` = 50.006 kJ m-2, ``b`` = 0.29226                             (C.2)

    a least-squares fit in log-log to the 22 rows of Stoll & Chianta (1969)
    (:data:`STOLL_CHIANTA_1969`); it reproduces every row within 0.7 % (the often-quoted
    ``50.20 t^0.2901`` within 0.8 %). Valid range: 1-30 s.

    Examples
    --------
    >>> round(float(criterion_energy(1.0)))
    50006
    """
    t = np.asarray(time, dtype=float)
    with np.errstate(invalid="ignore"):
        energy = CRITERION_COEFFICIENT * np.power(np.maximum(t, 0.0), CRITERION_EXPONENT)
    energy = np.where(t < 0.0, np.nan, energy)
    if not extrapolate:
        energy = np.where(criterion_extrapolated(t), np.nan, energy)
    return energy


def criterion_crossing(time: ArrayLike, absorbed_energy: ArrayLike) -> np.ndarray:
    """First time at which a sensor's absorbed energy reaches the criterion curve.

    Parameters
    ----------
    time
        Time grid since the exposure started, shape ``(n_times,)`` or broadcastable to
        ``absorbed_energy`` [s]; increasing.
    absorbed_energy
        Energy absorbed by the sensor since the exposure started, shape ``(..., n_times)``
        [J m-2].

    Returns
    -------
    numpy.ndarray
        Crossing time, shape ``(...)`` [s]: ``+inf`` where the criterion is never reached on
        the grid; NaN where the energy history holds a NaN. Check the result with
        :func:`criterion_extrapolated` (the criterion is published for 1-30 s only).

    Notes
    -----
    With ``d = E_abs - E_crit(t)`` on the grid (samples at ``t <= 0`` ignored), the first
    sample with ``d >= 0`` is found and the crossing interpolated linearly in ``d`` from the
    sample before it; a crossing at the first positive-time sample is returned as that time.

    Examples
    --------
    >>> t = np.linspace(0.0, 10.0, 1001)
    >>> q = 18.9e3  # absorbed flux [W m-2]
    >>> round(float(criterion_crossing(t, q * t)), 2)
    3.95
    """
    energy = np.asarray(absorbed_energy, dtype=float)
    t = np.broadcast_to(np.asarray(time, dtype=float), energy.shape)
    with np.errstate(invalid="ignore"):
        d = np.where(t > 0.0, energy - criterion_energy(t), -np.inf)
    reached = d >= 0.0
    any_reached = reached.any(axis=-1)
    k = np.argmax(reached, axis=-1)[..., None]
    k_prev = np.maximum(k - 1, 0)
    d_k = np.take_along_axis(d, k, axis=-1)[..., 0]
    d_p = np.take_along_axis(d, k_prev, axis=-1)[..., 0]
    t_k = np.take_along_axis(t, k, axis=-1)[..., 0]
    t_p = np.take_along_axis(t, k_prev, axis=-1)[..., 0]
    interpolate = (k[..., 0] > 0) & np.isfinite(d_p) & (d_p < 0.0)
    with np.errstate(invalid="ignore", divide="ignore"):
        fraction = np.where(interpolate, -d_p / np.where(interpolate, d_k - d_p, 1.0), 1.0)
    crossing = np.where(interpolate, t_p + fraction * (t_k - t_p), t_k)
    crossing = np.where(any_reached, crossing, np.inf)
    return np.where(np.isnan(energy).any(axis=-1), np.nan, crossing)
