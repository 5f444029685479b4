"""Burn injury as a damage integral of the basal-layer temperature history.

The damage ``Omega`` accrues at the Arrhenius rate of a published parameter set while the
temperature ``T`` at the epidermis-dermis interface (the basal layer) is at or above 44 degC,

    dOmega/dt = P exp(-(dE/R) / T),          T >= 317.15 K;       0 below,

and a burn of a given degree is reached when ``Omega`` crosses its threshold
(:data:`BURN_THRESHOLDS`). Each published set is stored as printed: pre-exponential factor ``P``
[s-1] and activation temperature ``dE/R`` [K]; an activation energy is never re-derived through
J/mol and the gas constant (that rounding moves the rate by a factor of five, see
:data:`DAMAGE_PARAMETER_SETS`).

All functions are pure and broadcast over samples. Temperatures are in kelvin, times in seconds.
A NaN temperature (a sample that did not converge) gives NaN, never a plausible damage.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike
from scipy.special import expn

from plyrisk.errors import PlyriskError

DAMAGE_ONSET_TEMPERATURE = 317.15
"""Temperature below which no damage accrues, 44 degC [K] (Henriques 1947)."""

_SWITCH_50C = 323.15  # 50 degC [K]: the published switch between the two-branch sets' branches


class DamageModelError(PlyriskError, ValueError):
    """An unknown damage parameter set or an invalid argument of the damage integral."""


@dataclass(frozen=True)
class DamageBranch:
    """One Arrhenius branch of a damage parameter set, valid for ``lower <= T < upper``.

    Parameters
    ----------
    lower_temperature
        Lowest temperature of the branch (inclusive) [K].
    upper_temperature
        Temperature at which the next branch takes over (exclusive); ``math.inf`` for an
        open branch [K].
    pre_exponential
        Pre-exponential factor ``P`` [s-1].
    activation_temperature
        Activation energy over the gas constant, ``dE/R`` [K].
    """

    lower_temperature: float
    upper_temperature: float
    pre_exponential: float
    activation_temperature: float


@dataclass(frozen=True)
class DamageParameters:
    """A published damage parameter set: one or more Arrhenius branches.

    Parameters
    ----------
    name
        Key of the set in :data:`DAMAGE_PARAMETER_SETS`, e.g. ``"henriques_1947"``.
    reference
        Citation of the publication the constants are taken from.
    branches
        Branches in increasing temperature, contiguous; the rate is zero below the first.
    """

    name: str
    reference: str
    branches: tuple[DamageBranch, ...]


DAMAGE_PARAMETER_SETS: dict[str, DamageParameters] = {
    "henriques_1947": DamageParameters(
        name="henriques_1947",
        reference=(
            "Henriques FC Jr. Studies of thermal injury V. The predictability and the "
            "significance of thermally induced rate processes leading to irreversible "
            "epidermal injury. Arch Pathol 1947;43:489-502"
        ),
        branches=(DamageBranch(DAMAGE_ONSET_TEMPERATURE, math.inf, 3.1e98, 75000.0),),
    ),
    "weaver_stoll_1969": DamageParameters(
        name="weaver_stoll_1969",
        reference=(
            "Weaver JA, Stoll AM. Mathematical model of skin exposed to thermal radiation. "
            "Aerospace Med 1969;40(1):24-30"
        ),
        branches=(
            DamageBranch(DAMAGE_ONSET_TEMPERATURE, _SWITCH_50C, 2.185e124, 93534.9),
            DamageBranch(_SWITCH_50C, math.inf, 1.823e51, 39109.8),
        ),
    ),
    "takata_1974": DamageParameters(
        name="takata_1974",
        reference=(
            "Takata AN. Development of criterion for skin burns. "
            "Aerospace Med 1974;45(6):634-637"
        ),
        branches=(
            DamageBranch(DAMAGE_ONSET_TEMPERATURE, _SWITCH_50C, 4.32e64, 50000.0),
            DamageBranch(_SWITCH_50C, math.inf, 9.39e104, 80000.0),
        ),
    ),
}
"""Published damage parameter sets, constants as printed (``P`` [s-1], ``dE/R`` [K]).

- ``henriques_1947``: one branch from 44 degC.
- ``weaver_stoll_1969``: 44 <= T < 50 degC and T >= 50 degC (the branches differ by 16 % at
  the switch; the published switch is kept).
- ``takata_1974``: 44-50 degC and above 50 degC; applied at the base of the dermis for a
  third-degree burn (``Omega = 1`` there).
"""

BURN_THRESHOLDS: dict[str, float] = {
    "first_degree": 0.53,
    "second_degree": 1.0,
    "third_degree": 1.0e4,
}
"""Damage at the basal layer that marks each burn degree [-] (Henriques 1947; Takata 1974)."""

# Gauss-Legendre rule used where the log-rate changes by at most _SPREAD_LIMIT over a piece.
_GL_NODES, _GL_WEIGHTS = np.polynomial.legendre.leggauss(8)
_SPREAD_LIMIT = 1.0


def damage_parameters(name: str) -> DamageParameters:
    """Return a published damage parameter set by name.

    Parameters
    ----------
    name
        One of the keys of :data:`DAMAGE_PARAMETER_SETS`.

    Returns
    -------
    DamageParameters
        The set, constants as printed in its source.

    Raises
    ------
    DamageModelError
        (a ``ValueError``) naming the valid choices when ``name`` is unknown.

    Examples
    --------
    >>> damage_parameters("henriques_1947").branches[0].activation_temperature
    75000.0
    """
    try:
        return DAMAGE_PARAMETER_SETS[name]
    except (KeyError, TypeError):
        choices = ", ".join(sorted(DAMAGE_PARAMETER_SETS))
        raise DamageModelError(
            f"damage parameter set {name!r} is not one of {choices}"
        ) from None


def damage_rate(temperature: ArrayLike, *, parameters: DamageParameters) -> np.ndarray:
    """Arrhenius damage rate at a temperature.

    Parameters
    ----------
    temperature
        Basal-layer temperature ``T`` [K].
    parameters
        Damage parameter set.

    Returns
    -------
    numpy.ndarray
        ``dOmega/dt`` [s-1]; zero below the first branch (44 degC), NaN where ``T`` is NaN.

    Notes
    -----
    ``dOmega/dt = P_i exp(-(dE/R)_i / T)`` on branch ``i`` (``lower_i <= T < upper_i``),
    zero below 44 degC                                                             (B.1)
    (Henriques 1947; Weaver & Stoll 1969; Takata 1974).

    Examples
    --------
    >>> p = damage_parameters("weaver_stoll_1969")
    >>> [round(float(r), 4) for r in damage_rate([323.15 - 1e-9, 323.15], parameters=p)]
    [0.0431, 0.0501]
    """
    t = np.asarray(temperature, dtype=float)
    rate = np.zeros_like(t)
    with np.errstate(over="ignore", divide="ignore", invalid="ignore"):
        for branch in parameters.branches:
            inside = (t >= branch.lower_temperature) & (t < branch.upper_temperature)
            value = np.exp(math.log(branch.pre_exponential) - branch.activation_temperature / t)
            rate = np.where(inside, value, rate)
    return np.where(np.isnan(t), np.nan, rate)


def _scaled_e2(x: np.ndarray) -> np.ndarray:
    """``exp(x) E_2(x)`` for ``x > 0``, without underflow for large ``x``."""
    x = np.asarray(x, dtype=float)
    small = np.minimum(x, 500.0)
    direct = expn(2, small) * np.exp(small)
    # Asymptotic series exp(x) E_2(x) ~ (1/x) sum_k (-1)^k (k+1)! / x^k (error < 1e-12, x > 500).
    big = np.maximum(x, 500.0)
    series = np.zeros_like(big)
    for k in range(6, -1, -1):  # Horner in 1/x
        series = (-1.0) ** k * math.factorial(k + 1) + series / big
    series = series / big
    return np.where(x <= 500.0, direct, series)


def _branch_mean_rate(
    t_a: np.ndarray, t_b: np.ndarray, branch: DamageBranch
) -> np.ndarray:
    """Mean of one branch's rate over temperatures between ``t_a`` and ``t_b``.

    For ``T`` linear in time this is the mean rate over the matching part of a time step.
    Where the log-rate changes by at most ``_SPREAD_LIMIT`` across the piece an 8-point
    Gauss-Legendre rule is used (error far below 1e-12); elsewhere the exact integral
    ``int exp(-a/T) dT = a [E_2(a/T) / (a/T)]`` (Abramowitz & Stegun 5.1.4 and 5.1.26 with
    ``x = a/T``), which is then free of cancellation.
    """
    ln_p = math.log(branch.pre_exponential)
    a = branch.activation_temperature
    with np.errstate(over="ignore", divide="ignore", invalid="ignore"):
        x_a, x_b = a / t_a, a / t_b
        spread = np.abs(x_a - x_b)
        mid, half = 0.5 * (t_a + t_b), 0.5 * (t_b - t_a)
        quadrature = np.zeros(np.shape(mid))
        for node, weight in zip(_GL_NODES, _GL_WEIGHTS, strict=True):
            quadrature = quadrature + 0.5 * weight * np.exp(ln_p - a / (mid + half * node))
        x_hot, x_cold = np.minimum(x_a, x_b), np.maximum(x_a, x_b)
        bracket = _scaled_e2(x_hot) / x_hot - np.exp(x_hot - x_cold) * _scaled_e2(x_cold) / x_cold
        exact = a * np.exp(ln_p - x_hot) * bracket / np.abs(t_b - t_a)
    return np.where(spread <= _SPREAD_LIMIT, quadrature, exact)


def damage_increment(
    start_temperature: ArrayLike,
    end_temperature: ArrayLike,
    time_step: ArrayLike,
    *,
    parameters: DamageParameters,
) -> np.ndarray:
    """Damage accrued over one time step with the temperature linear in time.

    Parameters
    ----------
    start_temperature
        Basal-layer temperature at the start of the step, ``T0`` [K].
    end_temperature
        Basal-layer temperature at the end of the step, ``T1`` [K].
    time_step
        Length of the step, ``dt`` [s].
    parameters
        Damage parameter set.

    Returns
    -------
    numpy.ndarray
        ``int_0^dt rate(T(s)) ds`` [-], broadcast over the inputs; NaN where an input is NaN.

    Notes
    -----
    With ``T(s) = T0 + (T1 - T0) s / dt`` the step is split where ``T`` crosses 44 degC and
    the branch switches; on each piece (``Ta``..``Tb``) of branch ``i``

        int rate ds = dt / (T1 - T0) int_Ta^Tb P_i exp(-a_i / T) dT,   a_i = (dE/R)_i   (B.2)

    evaluated exactly through the exponential integral ``E_2`` or, where the rate changes by
    less than a factor ``e`` across the piece, by Gauss-Legendre quadrature; the relative
    error is below 1e-10 for any step. Where ``T0 == T1`` the result is ``rate(T0) dt``.

    Examples
    --------
    >>> p = damage_parameters("henriques_1947")
    >>> float(damage_increment(330.0, 330.0, 2.0, parameters=p)) == float(
    ...     2.0 * damage_rate(330.0, parameters=p))
    True
    >>> float(damage_increment(310.0, 316.0, 5.0, parameters=p))
    0.0
    """
    t0, t1, dt = np.broadcast_arrays(
        np.asarray(start_temperature, dtype=float),
        np.asarray(end_temperature, dtype=float),
        np.asarray(time_step, dtype=float),
    )
    rise = t1 - t0
    flat = rise == 0.0
    safe_rise = np.where(flat, 1.0, rise)
    total = np.zeros(t0.shape)
    for branch in parameters.branches:
        lo, hi = branch.lower_temperature, branch.upper_temperature
        c0, c1 = np.clip(t0, lo, hi), np.clip(t1, lo, hi)
        inside = (t0 >= lo) & (t0 < hi)
        share = np.where(flat, inside.astype(float), (c1 - c0) / safe_rise)
        # Degenerate pieces (share 0) are evaluated at a finite temperature and weighted by 0.
        c0 = np.where(share > 0.0, c0, lo)
        c1 = np.where(share > 0.0, c1, lo)
        total = total + np.where(share > 0.0, dt * share * _branch_mean_rate(c0, c1, branch), 0.0)
    bad = np.isnan(t0) | np.isnan(t1) | np.isnan(dt)
    return np.where(bad, np.nan, total)


def crossing_fraction(
    start_temperature: ArrayLike,
    end_temperature: ArrayLike,
    time_step: ArrayLike,
    damage_start: ArrayLike,
    threshold: ArrayLike,
    *,
    parameters: DamageParameters,
) -> np.ndarray:
    """Fraction of a time step at which the damage reaches a threshold.

    Parameters
    ----------
    start_temperature
        Basal-layer temperature at the start of the step, ``T0`` [K].
    end_temperature
        Basal-layer temperature at the end of the step, ``T1`` [K].
    time_step
        Length of the step, ``dt`` [s].
    damage_start
        Damage at the start of the step, ``Omega0`` [-].
    threshold
        Damage threshold, e.g. ``BURN_THRESHOLDS["second_degree"]`` [-].
    parameters
        Damage parameter set.

    Returns
    -------
    numpy.ndarray
        ``theta`` in [0, 1] with ``Omega0 + int_0^(theta dt) rate ds = threshold``, the
        temperature linear in time over the step; NaN where the threshold is not crossed in
        this step (``Omega0 >= threshold``, or ``Omega0 + increment < threshold``).

    Notes
    -----
    Solved by Newton's method on (B.2) with the step's end as the start for a rising
    temperature (convex damage) and its start for a falling one (concave damage), safeguarded
    by bisection; converged to 1e-13 in ``theta``.

    Examples
    --------
    >>> p = damage_parameters("henriques_1947")
    >>> rate = float(damage_rate(330.0, parameters=p))
    >>> theta = crossing_fraction(330.0, 330.0, 2.0 / rate, 0.25, 1.0, parameters=p)
    >>> round(float(theta), 12)
    0.375
    """
    t0, t1, dt, d0, thr = np.broadcast_arrays(
        *(
            np.asarray(v, dtype=float)
            for v in (start_temperature, end_temperature, time_step, damage_start, threshold)
        )
    )
    theta_all = np.full(t0.shape, np.nan)
    increment = damage_increment(t0, t1, dt, parameters=parameters)
    crossed = (d0 < thr) & (d0 + increment >= thr)
    if not np.any(crossed):
        return theta_all
    t0, t1, dt = t0[crossed], t1[crossed], dt[crossed]
    target = thr[crossed] - d0[crossed]
    rise = t1 - t0
    low, high = np.zeros(t0.shape), np.ones(t0.shape)
    theta = np.where(rise >= 0.0, 1.0, 0.0)
    active = np.ones(t0.shape, dtype=bool)
    for _ in range(200):
        idx = np.flatnonzero(active)
        if idx.size == 0:
            break
        th = theta[idx]
        g = (
            damage_increment(t0[idx], t0[idx] + th * rise[idx], th * dt[idx], parameters=parameters)
            - target[idx]
        )
        slope = dt[idx] * damage_rate(t0[idx] + th * rise[idx], parameters=parameters)
        low[idx] = np.where(g < 0.0, th, low[idx])
        high[idx] = np.where(g >= 0.0, th, high[idx])
        with np.errstate(divide="ignore", invalid="ignore"):
            newton = th - g / slope
        ok = (slope > 0.0) & (newton > low[idx]) & (newton < high[idx])
        new = np.where(ok, newton, 0.5 * (low[idx] + high[idx]))
        done = (np.abs(new - th) <= 1e-13) | (g == 0.0) | (high[idx] - low[idx] <= 1e-13)
        theta[idx] = np.where(g == 0.0, th, new)
        active[idx] = ~done
    theta_all[crossed] = np.clip(theta, 0.0, 1.0)
    return theta_all


def time_to_damage(
    temperature: ArrayLike, *, parameters: DamageParameters, damage: ArrayLike = 1.0
) -> np.ndarray:
    """Time to reach a damage at a constant temperature.

    Parameters
    ----------
    temperature
        Constant basal-layer temperature ``T`` [K].
    parameters
        Damage parameter set.
    damage
        Damage to reach, ``Omega`` [-]; 1 for a second-degree burn.

    Returns
    -------
    numpy.ndarray
        ``Omega / rate(T)`` [s]; ``inf`` below 44 degC, NaN where ``T`` is NaN.

    Notes
    -----
    Closed form of (B.1) at constant temperature, ``t = Omega / (P exp(-(dE/R)/T))``.

    Examples
    --------
    >>> p = damage_parameters("henriques_1947")
    >>> round(float(time_to_damage(323.15, parameters=p)), 1)
    201.5
    """
    rate = damage_rate(temperature, parameters=parameters)
    positive = rate > 0.0
    time = np.asarray(damage, dtype=float) / np.where(positive, rate, 1.0)
    return np.where(positive, time, np.where(np.isnan(rate), np.nan, np.inf))
