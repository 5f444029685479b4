"""Natural convection in enclosed air gaps: Rayleigh number and Nusselt-number correlations.

The Nusselt number multiplies the still-air conduction ``k_air / width`` of a gap. Correlations:

* vertical gaps (heat flowing horizontally): ElSherbiny, Raithby & Hollands (1982), 90° tilt;
* horizontal gaps heated from below (heat flowing up): Hollands, Unny, Raithby & Konicek (1976)
  at zero tilt;
* horizontal gaps heated from above (heat flowing down): stable stratification, ``Nu = 1``
  (common practice).

The onset of convection for a horizontal layer heated from below is the Rayleigh–Bénard critical
value ``Ra_c = 1708`` (Chandrasekhar 1961). For vertical gaps there is no sharp onset; we call it
passed where the vertical correlation gives a Nusselt number more than ``VERTICAL_ONSET_EXCESS``
above conduction.

References
----------
.. [ERH1982] S. M. ElSherbiny, G. D. Raithby, K. G. T. Hollands, "Heat transfer by natural
   convection across vertical and inclined air layers", J. Heat Transfer 104 (1982) 96–102.
.. [H1976] K. G. T. Hollands, T. E. Unny, G. D. Raithby, L. Konicek, "Free convective heat
   transfer across inclined air layers", J. Heat Transfer 98 (1976) 189–193.
.. [C1961] S. Chandrasekhar, Hydrodynamic and Hydromagnetic Stability, Oxford, 1961.
"""

from __future__ import annotations

import functools
import warnings

import numpy as np
from numpy.typing import ArrayLike
from scipy import optimize
from scipy.constants import g as STANDARD_GRAVITY

from plyrisk.models import air

CRITICAL_RAYLEIGH_HORIZONTAL = 1708.0
"""Onset of convection in a horizontal fluid layer between rigid plates heated from below [-],
[C1961]."""

VERTICAL_ONSET_EXCESS = 0.01
"""Excess of the vertical-gap Nusselt number over 1 taken as the onset of convection [-]."""

VERTICAL_RANGE = {"rayleigh": (1e2, 2e7), "aspect_ratio": (5.0, 110.0)}
"""Validity of the [ERH1982] vertical correlation (from memory of the paper's data range)."""

HORIZONTAL_UP_RANGE = {"rayleigh": (0.0, 1e5)}
"""Validity of the [H1976] correlation (from memory of the paper's data range)."""


def rayleigh_number(
    hot_face_temperature: ArrayLike,
    cold_face_temperature: ArrayLike,
    gap_width: ArrayLike,
) -> np.ndarray:
    """Rayleigh number of an air gap, properties at the mean temperature.

    ``Ra = g beta |T1 - T2| L^3 / (nu alpha)``, ``beta = 1/T_m`` (ideal gas).

    Parameters
    ----------
    hot_face_temperature
        Temperature of the face on the hot side of the gap [K].
    cold_face_temperature
        Temperature of the face on the cold side of the gap [K].
    gap_width
        Face-to-face width of the gap, ``L`` [m].

    Returns
    -------
    numpy.ndarray
        Rayleigh number [-].
    """
    t1 = np.asarray(hot_face_temperature, dtype=float)
    t2 = np.asarray(cold_face_temperature, dtype=float)
    tm = 0.5 * (t1 + t2)
    group = air.rayleigh_property_group(tm)  # T nu alpha
    return STANDARD_GRAVITY * np.abs(t1 - t2) * np.asarray(gap_width) ** 3 / group


def nusselt_vertical(rayleigh: ArrayLike, aspect_ratio: ArrayLike) -> np.ndarray:
    """Nusselt number of a vertical air gap, [ERH1982] Eqs. for 90° tilt.

    ``Nu = max(Nu1, Nu2, Nu3)`` with ``Nu1 = 0.0605 Ra^(1/3)``,
    ``Nu2 = [1 + (0.104 Ra^0.293 / (1 + (6310/Ra)^1.36))^3]^(1/3)`` and
    ``Nu3 = 0.242 (Ra / A)^0.272``. Valid for ``1e2 < Ra < 2e7`` and ``5 < A < 110``.

    Parameters
    ----------
    rayleigh
        Rayleigh number based on the gap width [-].
    aspect_ratio
        Gap height over gap width, ``A = H / L`` [-].

    Returns
    -------
    numpy.ndarray
        Nusselt number [-], at least 1.
    """
    ra = np.maximum(np.asarray(rayleigh, dtype=float), 1e-300)
    nu1 = 0.0605 * np.cbrt(ra)
    nu2 = np.cbrt(1.0 + (0.104 * ra**0.293 / (1.0 + (6310.0 / ra) ** 1.36)) ** 3)
    nu3 = 0.242 * (ra / np.asarray(aspect_ratio)) ** 0.272
    return np.maximum(np.maximum(nu1, nu2), np.maximum(nu3, 1.0))


def nusselt_horizontal_up(rayleigh: ArrayLike) -> np.ndarray:
    """Nusselt number of a horizontal air gap heated from below, [H1976] at zero tilt.

    ``Nu = 1 + 1.44 [1 - 1708/Ra]^+ + [(Ra/5830)^(1/3) - 1]^+``, ``[x]^+ = max(x, 0)``.
    Valid for ``0 < Ra < 1e5``.

    Parameters
    ----------
    rayleigh
        Rayleigh number based on the gap width [-].

    Returns
    -------
    numpy.ndarray
        Nusselt number [-], equal to 1 up to ``Ra = 1708``.
    """
    ra = np.maximum(np.asarray(rayleigh, dtype=float), 1e-300)
    term1 = np.maximum(1.0 - CRITICAL_RAYLEIGH_HORIZONTAL / ra, 0.0)
    term2 = np.maximum(np.cbrt(ra / 5830.0) - 1.0, 0.0)
    return 1.0 + 1.44 * term1 + term2


def nusselt(rayleigh: ArrayLike, *, orientation: str, aspect_ratio: ArrayLike) -> np.ndarray:
    """Nusselt number of a gap of the given orientation.

    Parameters
    ----------
    rayleigh
        Rayleigh number based on the gap width [-].
    orientation
        ``"vertical"``, ``"horizontal-up"`` (heat flows up) or ``"horizontal-down"``.
    aspect_ratio
        Gap height over width, used for vertical gaps only [-].

    Returns
    -------
    numpy.ndarray
        Nusselt number [-].
    """
    if orientation == "vertical":
        return nusselt_vertical(rayleigh, aspect_ratio)
    if orientation == "horizontal-up":
        return nusselt_horizontal_up(rayleigh)
    if orientation == "horizontal-down":
        return np.ones_like(np.asarray(rayleigh, dtype=float))
    raise ValueError(
        f"orientation {orientation!r} is not one of vertical, horizontal-up, horizontal-down"
    )


def nusselt_with_slope(
    rayleigh: ArrayLike, *, orientation: str, aspect_ratio: ArrayLike
) -> tuple[np.ndarray, np.ndarray]:
    """Nusselt number of :func:`nusselt` and its slope ``d Nu / d ln Ra``, for Newton solves.

    The slope is that of the branch that is active (the largest term of [ERH1982], the
    positive parts of [H1976]); at a switch between branches it is one of the one-sided
    slopes.

    Parameters
    ----------
    rayleigh
        Rayleigh number based on the gap width [-].
    orientation
        ``"vertical"``, ``"horizontal-up"`` or ``"horizontal-down"``.
    aspect_ratio
        Gap height over width, used for vertical gaps only [-].

    Returns
    -------
    nu, dnu_dlnra
        Nusselt number [-] and its derivative with respect to ``ln Ra`` [-].
    """
    ra = np.maximum(np.asarray(rayleigh, dtype=float), 1e-300)
    if orientation == "vertical":
        nu1 = 0.0605 * np.cbrt(ra)
        with np.errstate(over="ignore"):  # x -> inf as Ra -> 0 is handled below
            x = (6310.0 / ra) ** 1.36
        y = 0.104 * ra**0.293 / (1.0 + x)
        y3 = y**3
        nu2 = np.cbrt(1.0 + y3)
        nu3 = 0.242 * (ra / np.asarray(aspect_ratio)) ** 0.272
        nu = np.maximum(np.maximum(nu1, nu2), np.maximum(nu3, 1.0))
        # d ln y / d ln Ra = 0.293 + 1.36 x / (1 + x); d Nu2 / d ln Ra = y^3 dln(y) / Nu2^2;
        # x / (1 + x) written as 1 / (1 + 1/x) stays finite (-> 1) as Ra -> 0 and x -> inf
        d2 = y3 * (0.293 + 1.36 / (1.0 + 1.0 / x)) / (nu2 * nu2)
        slope = np.where(
            nu == nu1, nu1 / 3.0, np.where(nu == nu2, d2, np.where(nu == nu3, 0.272 * nu3, 0.0))
        )
        return nu, slope
    if orientation == "horizontal-up":
        ratio = CRITICAL_RAYLEIGH_HORIZONTAL / ra
        c = np.cbrt(ra / 5830.0)
        nu = 1.0 + 1.44 * np.maximum(1.0 - ratio, 0.0) + np.maximum(c - 1.0, 0.0)
        slope = np.where(ratio < 1.0, 1.44 * ratio, 0.0) + np.where(c > 1.0, c / 3.0, 0.0)
        return nu, slope
    if orientation == "horizontal-down":
        return np.ones_like(ra), np.zeros_like(ra)
    raise ValueError(
        f"orientation {orientation!r} is not one of vertical, horizontal-up, horizontal-down"
    )


def convection_onset(
    rayleigh: ArrayLike, *, orientation: str, aspect_ratio: ArrayLike
) -> np.ndarray:
    """Whether a gap is past the onset of natural convection.

    Horizontal, heated from below: ``Ra > 1708`` [C1961]. Vertical: the [ERH1982] Nusselt
    number exceeds ``1 + VERTICAL_ONSET_EXCESS``. Horizontal, heated from above: never.

    Parameters
    ----------
    rayleigh
        Rayleigh number based on the gap width [-].
    orientation
        ``"vertical"``, ``"horizontal-up"`` or ``"horizontal-down"``.
    aspect_ratio
        Gap height over width [-].

    Returns
    -------
    numpy.ndarray of bool
    """
    ra = np.asarray(rayleigh, dtype=float)
    if orientation == "horizontal-up":
        return ra > CRITICAL_RAYLEIGH_HORIZONTAL
    if orientation == "vertical":
        # each term of [ERH1982] is increasing in Ra: compare Ra with where each reaches the
        # onset value, the same test as nusselt_vertical(...) > 1 + excess, without powers
        ra1, ra2, r3 = _vertical_onset_thresholds()
        return (ra > ra1) | (ra > ra2) | (ra > r3 * np.asarray(aspect_ratio))
    if orientation == "horizontal-down":
        return np.zeros(ra.shape, dtype=bool)
    raise ValueError(
        f"orientation {orientation!r} is not one of vertical, horizontal-up, horizontal-down"
    )


@functools.cache
def _vertical_onset_thresholds() -> tuple[float, float, float]:
    """Where Nu1, Nu2 and Nu3 of [ERH1982] reach ``1 + VERTICAL_ONSET_EXCESS`` (Ra, Ra, Ra/A)."""
    target = 1.0 + VERTICAL_ONSET_EXCESS
    ra1 = (target / 0.0605) ** 3
    ra2 = optimize.brentq(
        lambda x: np.cbrt(1.0 + (0.104 * x**0.293 / (1.0 + (6310.0 / x) ** 1.36)) ** 3) - target,
        1.0, 1e9, xtol=1e-9, rtol=1e-14,
    )
    r3 = (target / 0.242) ** (1.0 / 0.272)
    return float(ra1), float(ra2), float(r3)


def warn_outside_range(rayleigh: np.ndarray, *, orientation: str,
                       aspect_ratio: ArrayLike) -> None:
    """Warn (once per message) when a correlation is used outside its validity range.

    Parameters
    ----------
    rayleigh
        Rayleigh numbers where the correlation was applied [-].
    orientation
        ``"vertical"``, ``"horizontal-up"`` or ``"horizontal-down"``.
    aspect_ratio
        Gap height over width at the same samples [-].
    """
    ra = np.asarray(rayleigh)
    if orientation == "vertical":
        lo, hi = VERTICAL_RANGE["rayleigh"]
        a_lo, a_hi = VERTICAL_RANGE["aspect_ratio"]
        a = np.asarray(aspect_ratio)
        if np.any(ra > hi) or np.any((a < a_lo) | (a > a_hi)):
            warnings.warn(
                "vertical-gap convection correlation used outside 1e2 < Ra < 2e7, 5 < H/L < 110",
                RuntimeWarning,
                stacklevel=3,
            )
    elif orientation == "horizontal-up" and np.any(ra > HORIZONTAL_UP_RANGE["rayleigh"][1]):
        warnings.warn(
            "horizontal-gap convection correlation used above Ra = 1e5",
            RuntimeWarning,
            stacklevel=3,
        )
