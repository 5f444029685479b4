"""Properties of dry air at atmospheric pressure as vectorized functions of temperature.

All functions take temperature in kelvin (scalar or array) and return SI values with the same
shape. The transport properties use the dilute-gas terms of Lemmon & Jacobsen (2004); at
101 325 Pa the density-dependent (residual) terms they omit are below 0.2 % between 250 and
1500 K, which the test suite checks against CoolProp's full implementation of the same model.
A ``RuntimeWarning`` is issued for temperatures outside the valid range.

References
----------
.. [LJ2004] E. W. Lemmon, R. T Jacobsen, "Viscosity and thermal conductivity equations for
   nitrogen, oxygen, argon, and air", Int. J. Thermophys. 25 (2004) 21–69.
.. [L2000] E. W. Lemmon, R. T Jacobsen, S. G. Penoncello, D. G. Friend, "Thermodynamic
   properties of air and mixtures of nitrogen, argon, and oxygen from 60 to 2000 K at pressures
   to 2000 MPa", J. Phys. Chem. Ref. Data 29 (2000) 331–385.
"""

from __future__ import annotations

import warnings

import numpy as np
from numpy.typing import ArrayLike
from scipy.constants import R as GAS_CONSTANT
from scipy.constants import atm as STANDARD_ATMOSPHERE

VALID_RANGE = (250.0, 1500.0)
"""Temperature range [K] over which the functions in this module are checked."""

MOLAR_MASS = 28.9586e-3
"""Molar mass of dry air [kg mol-1], [L2000]."""

# [LJ2004] Table I (air): Lennard-Jones parameters and collision-integral coefficients.
_EPSILON_OVER_K = 103.3  # [K]
_SIGMA_NM = 0.360  # [nm]
_OMEGA_B = (0.431, -0.4623, 0.08406, 0.005341, -0.00331)
# [LJ2004] Table II (air): dilute-gas thermal-conductivity coefficients, Eq. (5).
_T_CRITICAL = 132.6312  # [K], reducing temperature
_N1, _N2, _T2, _N3, _T3 = 1.308, 1.405, -1.1, -1.036, -0.3

# Quartic in theta = T/1000 K, least-squares fit (ours) to the isobaric heat capacity of the
# [L2000] equation of state at 101 325 Pa, 250–1500 K; max deviation 0.1 %. Highest power first.
_CP_POLY = (204.51051555, -861.36941468, 1225.60000501, -492.42525383, 1065.04818636)


def _warn_range(temperature: np.ndarray, what: str) -> None:
    lo, hi = VALID_RANGE
    t = np.asarray(temperature)
    if t.size and (np.nanmin(t) < lo or np.nanmax(t) > hi):
        warnings.warn(
            f"air {what}: temperature {np.nanmin(t):.6g}–{np.nanmax(t):.6g} K is outside the "
            f"checked range {lo:g}–{hi:g} K",
            RuntimeWarning,
            stacklevel=3,
        )


def _collision_integral(temperature: np.ndarray) -> np.ndarray:
    # [LJ2004] Eq. (4): Omega(T*) = exp(sum_i b_i (ln T*)^i), T* = T / (eps/k)
    ln_t = np.log(temperature / _EPSILON_OVER_K)
    b0, b1, b2, b3, b4 = _OMEGA_B
    return np.exp(b0 + ln_t * (b1 + ln_t * (b2 + ln_t * (b3 + ln_t * b4))))


def viscosity(temperature: ArrayLike, *, check_range: bool = True) -> np.ndarray:
    """Dynamic viscosity of dry air, dilute-gas limit.

    ``eta0 = 0.0266958 sqrt(M T) / (sigma^2 Omega(T*))`` [uPa s], [LJ2004] Eq. (3), with M in
    g/mol and sigma in nm. Valid 250–1500 K at atmospheric pressure to within 0.1 % of the full
    model.

    Parameters
    ----------
    temperature
        Air temperature [K].
    check_range
        Warn when a temperature is outside ``VALID_RANGE``.

    Returns
    -------
    numpy.ndarray
        Dynamic viscosity [Pa s].

    Examples
    --------
    >>> from plyrisk.models.air import viscosity
    >>> print(f"{viscosity(300.0):.4g} Pa s")
    1.852e-05 Pa s
    """
    t = np.asarray(temperature, dtype=float)
    if check_range:
        _warn_range(t, "viscosity")
    eta0 = 0.0266958 * np.sqrt(MOLAR_MASS * 1e3 * t) / (_SIGMA_NM**2 * _collision_integral(t))
    return eta0 * 1e-6


def thermal_conductivity(temperature: ArrayLike, *, check_range: bool = True) -> np.ndarray:
    """Thermal conductivity of dry air, dilute-gas limit.

    ``lambda0 = N1 eta0 + N2 tau^t2 + N3 tau^t3`` [mW m-1 K-1], ``tau = 132.6312 K / T``,
    [LJ2004] Eq. (5), eta0 in uPa s from :func:`viscosity`. Valid 250–1500 K at atmospheric
    pressure to within 0.2 % of the full model.

    Parameters
    ----------
    temperature
        Air temperature [K].
    check_range
        Warn when a temperature is outside ``VALID_RANGE``.

    Returns
    -------
    numpy.ndarray
        Thermal conductivity [W m-1 K-1].

    Examples
    --------
    Scalars and arrays alike (every function of this module broadcasts):

    >>> from plyrisk.models.air import thermal_conductivity
    >>> thermal_conductivity([300.0, 600.0]).round(4)
    array([0.0264, 0.046 ])

    Outside 250–1500 K the values are extrapolated, with a ``RuntimeWarning``:

    >>> import warnings
    >>> with warnings.catch_warnings(record=True) as caught:
    ...     warnings.simplefilter("always")
    ...     _ = thermal_conductivity(200.0)
    >>> caught[0].category.__name__
    'RuntimeWarning'
    """
    t = np.asarray(temperature, dtype=float)
    if check_range:
        _warn_range(t, "thermal conductivity")
    return _dilute_conductivity(t, viscosity(t, check_range=False) * 1e6)


def _dilute_conductivity(t: np.ndarray, eta0: np.ndarray) -> np.ndarray:
    # [LJ2004] Eq. (5): lambda0 = N1 eta0 + N2 tau^t2 + N3 tau^t3 [mW m-1 K-1], eta0 in uPa s
    ln_tau = np.log(_T_CRITICAL / t)
    return (_N1 * eta0 + _N2 * np.exp(_T2 * ln_tau) + _N3 * np.exp(_T3 * ln_tau)) * 1e-3


def density(
    temperature: ArrayLike, *, pressure: float = STANDARD_ATMOSPHERE, check_range: bool = True
) -> np.ndarray:
    """Density of dry air as an ideal gas, ``rho = p M / (R T)``.

    Within 0.12 % of [L2000] at 101 325 Pa over 250–1500 K.

    Parameters
    ----------
    temperature
        Air temperature [K].
    pressure
        Absolute pressure [Pa].
    check_range
        Warn when a temperature is outside ``VALID_RANGE``.

    Returns
    -------
    numpy.ndarray
        Density [kg m-3].

    Examples
    --------
    >>> from plyrisk.models.air import density
    >>> print(f"{density(300.0):.4g} kg m-3")
    1.176 kg m-3
    >>> print(f"{density(300.0, pressure=50e3):.4g} kg m-3")
    0.5805 kg m-3
    """
    t = np.asarray(temperature, dtype=float)
    if check_range:
        _warn_range(t, "density")
    return pressure * MOLAR_MASS / (GAS_CONSTANT * t)


def heat_capacity(temperature: ArrayLike, *, check_range: bool = True) -> np.ndarray:
    """Isobaric specific heat capacity of dry air at 101 325 Pa.

    Quartic in ``theta = T / 1000 K`` fitted to [L2000]; max deviation 0.1 % over 250–1500 K.

    Parameters
    ----------
    temperature
        Air temperature [K].
    check_range
        Warn when a temperature is outside ``VALID_RANGE``.

    Returns
    -------
    numpy.ndarray
        Specific heat capacity [J kg-1 K-1].

    Examples
    --------
    >>> from plyrisk.models.air import heat_capacity
    >>> print(f"{heat_capacity(300.0):.4g} J kg-1 K-1")
    1006 J kg-1 K-1
    """
    t = np.asarray(temperature, dtype=float)
    if check_range:
        _warn_range(t, "heat capacity")
    return np.polyval(_CP_POLY, t / 1000.0)


def expansion_coefficient(temperature: ArrayLike, *, check_range: bool = True) -> np.ndarray:
    """Isobaric volumetric expansion coefficient of air as an ideal gas, ``beta = 1 / T``.

    Parameters
    ----------
    temperature
        Air temperature [K].
    check_range
        Warn when a temperature is outside ``VALID_RANGE``.

    Returns
    -------
    numpy.ndarray
        Expansion coefficient [K-1].

    Examples
    --------
    >>> from plyrisk.models.air import expansion_coefficient
    >>> print(f"{expansion_coefficient(300.0):.4g} K-1")
    0.003333 K-1
    """
    t = np.asarray(temperature, dtype=float)
    if check_range:
        _warn_range(t, "expansion coefficient")
    return 1.0 / t


def thermal_diffusivity(temperature: ArrayLike, *, check_range: bool = True) -> np.ndarray:
    """Thermal diffusivity ``alpha = k / (rho cp)``.

    Parameters
    ----------
    temperature
        Air temperature [K].
    check_range
        Warn when a temperature is outside ``VALID_RANGE``.

    Returns
    -------
    numpy.ndarray
        Thermal diffusivity [m2 s-1].

    Examples
    --------
    >>> from plyrisk.models.air import thermal_diffusivity
    >>> print(f"{thermal_diffusivity(300.0):.4g} m2 s-1")
    2.227e-05 m2 s-1
    """
    t = np.asarray(temperature, dtype=float)
    if check_range:
        _warn_range(t, "thermal diffusivity")
    kw = {"check_range": False}
    return thermal_conductivity(t, **kw) / (density(t, **kw) * heat_capacity(t, **kw))


def kinematic_viscosity(temperature: ArrayLike, *, check_range: bool = True) -> np.ndarray:
    """Kinematic viscosity ``nu = eta / rho``.

    Parameters
    ----------
    temperature
        Air temperature [K].
    check_range
        Warn when a temperature is outside ``VALID_RANGE``.

    Returns
    -------
    numpy.ndarray
        Kinematic viscosity [m2 s-1].

    Examples
    --------
    >>> from plyrisk.models.air import kinematic_viscosity
    >>> print(f"{kinematic_viscosity(300.0):.4g} m2 s-1")
    1.575e-05 m2 s-1
    """
    t = np.asarray(temperature, dtype=float)
    if check_range:
        _warn_range(t, "kinematic viscosity")
    return viscosity(t, check_range=False) / density(t, check_range=False)


def rayleigh_property_group(temperature: np.ndarray) -> np.ndarray:
    """The property group ``T nu alpha`` of the Rayleigh number of an ideal gas.

    With ``beta = 1/T``, ``Ra = g dT L^3 / (T nu alpha)``; ``nu = eta/rho`` and
    ``alpha = k/(rho cp)`` come from :func:`viscosity`, :func:`thermal_conductivity`,
    :func:`density` and :func:`heat_capacity`, with the viscosity evaluated once. No range check.

    Parameters
    ----------
    temperature
        Air temperature [K].

    Returns
    -------
    numpy.ndarray
        ``T nu alpha`` [K m4 s-2].
    """
    return conductivity_and_rayleigh_group(temperature)[1]


def conductivity_and_rayleigh_group(temperature: ArrayLike) -> tuple[np.ndarray, np.ndarray]:
    """Thermal conductivity and the Rayleigh property group ``T nu alpha``, sharing one viscosity.

    The same models as :func:`thermal_conductivity` and :func:`rayleigh_property_group`; no
    range check.

    Parameters
    ----------
    temperature
        Air temperature [K].

    Returns
    -------
    k, group
        Thermal conductivity [W m-1 K-1] and ``T nu alpha`` [K m4 s-2].
    """
    t = np.asarray(temperature, dtype=float)
    eta0 = viscosity(t, check_range=False) * 1e6  # [uPa s]
    k = _dilute_conductivity(t, eta0)
    rho = STANDARD_ATMOSPHERE * MOLAR_MASS / (GAS_CONSTANT * t)
    cp = np.polyval(_CP_POLY, t / 1000.0)
    return k, t * (eta0 * 1e-6 / rho) * (k / (rho * cp))


def thermal_conductivity_with_slope(temperature: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Thermal conductivity and its temperature derivative, for Newton solves.

    Same model as :func:`thermal_conductivity` ([LJ2004] Eqs. 3–5), written with one logarithm
    and three exponentials; no range check (the caller reports the range).

    Parameters
    ----------
    temperature
        Air temperature [K].

    Returns
    -------
    k, dk_dT
        Thermal conductivity [W m-1 K-1] and its derivative [W m-1 K-2].
    """
    ln_t = np.log(temperature)
    x = ln_t - np.log(_EPSILON_OVER_K)
    b0, b1, b2, b3, b4 = _OMEGA_B
    ln_omega = b0 + x * (b1 + x * (b2 + x * (b3 + x * b4)))
    dln_omega = b1 + x * (2.0 * b2 + x * (3.0 * b3 + x * 4.0 * b4))  # d ln(Omega) / d ln(T)
    # eta0 [uPa s] = c sqrt(T) / Omega, [LJ2004] Eq. (3)
    c = 0.0266958 * np.sqrt(MOLAR_MASS * 1e3) / _SIGMA_NM**2
    eta0 = c * np.exp(0.5 * ln_t - ln_omega)
    ln_tau = np.log(_T_CRITICAL) - ln_t
    p2 = _N2 * np.exp(_T2 * ln_tau)
    p3 = _N3 * np.exp(_T3 * ln_tau)
    k = (_N1 * eta0 + p2 + p3) * 1e-3
    # d/dT at fixed coefficients: d(eta0)/dlnT = eta0 (1/2 - dlnOmega), d(tau^t)/dlnT = -t tau^t
    dk = (_N1 * eta0 * (0.5 - dln_omega) - _T2 * p2 - _T3 * p3) * 1e-3 / temperature
    return k, dk


def rayleigh_property_slope(temperature: np.ndarray) -> np.ndarray:
    """Logarithmic temperature slope of the Rayleigh number's property group, for Newton solves.

    The Rayleigh number with ``beta = 1/T`` is ``g dT L^3 / (T nu alpha)``; with ``nu = eta/rho``,
    ``alpha = k / (rho cp)`` and ``rho`` proportional to ``1/T`` the group ``T nu alpha`` varies
    as ``eta k T^3 / cp``. This returns ``d ln(T nu alpha) / d ln T
    = 3 + d ln(eta)/d ln T + d ln(k)/d ln T - d ln(cp)/d ln T`` from the same models as
    :func:`viscosity`, :func:`thermal_conductivity` and :func:`heat_capacity`; no range check.

    Parameters
    ----------
    temperature
        Air temperature [K].

    Returns
    -------
    numpy.ndarray
        ``d ln(T nu alpha) / d ln T`` [-].
    """
    t = np.asarray(temperature, dtype=float)
    x = np.log(t / _EPSILON_OVER_K)
    _, b1, b2, b3, b4 = _OMEGA_B
    dln_eta = 0.5 - (b1 + x * (2.0 * b2 + x * (3.0 * b3 + x * 4.0 * b4)))  # [LJ2004] Eq. (3)
    k, dk = thermal_conductivity_with_slope(t)
    theta = t / 1000.0
    cp = np.polyval(_CP_POLY, theta)
    dcp_dtheta = np.polyval(np.polyder(_CP_POLY), theta)
    return 3.0 + dln_eta + dk * t / k - dcp_dtheta * theta / cp
