"""Quantities followed during the transient stepping: burn damage, sensor criterion, peaks.

Each accepted step hands its trajectory as pieces ``(t_a, t_b, T_a, T_b)`` with the temperature
taken as linear in time on each piece (the TR-BDF2 step has two: start → inner stage → end).
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
from numpy.typing import NDArray

from plyrisk.models.burn import (
    BURN_THRESHOLDS,
    DamageParameters,
    crossing_fraction,
    damage_increment,
)

_Floats = NDArray[np.float64]
_Indices = NDArray[np.intp]

ONSET = 317.15
"""Below 44 degC no damage accrues (every published set) [K]."""


class BurnTracker:
    """Damage at the basal depth (and the dermis base) and the times thresholds are crossed.

    Parameters
    ----------
    k
        Samples [-].
    parameters
        Damage parameter set at the basal depth [-].
    third_degree
        ``"basal"`` (damage 1e4 at the basal depth) or ``"dermis_base"`` (Takata: damage 1
        at the dermis base with ``dermis_parameters``) [-].
    dermis_parameters
        Parameter set at the dermis base, for ``third_degree="dermis_base"`` [-].
    """

    def __init__(self, k: int, parameters: DamageParameters, third_degree: str,
                 dermis_parameters: DamageParameters | None = None) -> None:
        self.parameters = parameters
        self.third_degree = third_degree
        self.dermis_parameters = dermis_parameters
        self.damage = np.zeros(k)
        self.dermis_damage = np.zeros(k)
        self.times = {name: np.full(k, np.inf) for name in ("first", "second", "third")}

    def take(self, idx: _Indices) -> BurnTracker:
        """Restrict to samples ``idx`` (a copy)."""
        new = object.__new__(BurnTracker)
        new.parameters, new.third_degree = self.parameters, self.third_degree
        new.dermis_parameters = self.dermis_parameters
        new.damage, new.dermis_damage = self.damage[idx], self.dermis_damage[idx]
        new.times = {k: v[idx] for k, v in self.times.items()}
        return new

    def piece(self, idx: _Indices, t0: _Floats, dt: _Floats, basal0: _Floats, basal1: _Floats,
              dermis0: _Floats | None = None, dermis1: _Floats | None = None) -> None:
        """Add one piece of trajectory for samples ``idx``."""
        hot = np.maximum(basal0, basal1) > ONSET
        if np.any(hot):
            sel = idx[hot]
            a, b, h, s = basal0[hot], basal1[hot], dt[hot], t0[hot]
            d0 = self.damage[sel]
            inc = damage_increment(a, b, h, parameters=self.parameters)
            thresholds = [("first", BURN_THRESHOLDS["first_degree"]),
                          ("second", BURN_THRESHOLDS["second_degree"])]
            if self.third_degree == "basal":
                thresholds.append(("third", BURN_THRESHOLDS["third_degree"]))
            for name, thr in thresholds:
                cross = (d0 < thr) & (d0 + inc >= thr)
                if np.any(cross):
                    theta = crossing_fraction(a[cross], b[cross], h[cross], d0[cross], thr,
                                              parameters=self.parameters)
                    self.times[name][sel[cross]] = s[cross] + theta * h[cross]
            self.damage[sel] = d0 + inc
        if self.third_degree == "dermis_base" and dermis0 is not None:
            assert dermis1 is not None and self.dermis_parameters is not None
            hot = np.maximum(dermis0, dermis1) > ONSET
            if np.any(hot):
                sel = idx[hot]
                a, b, h, s = dermis0[hot], dermis1[hot], dt[hot], t0[hot]
                d0 = self.dermis_damage[sel]
                inc = damage_increment(a, b, h, parameters=self.dermis_parameters)
                cross = (d0 < 1.0) & (d0 + inc >= 1.0)
                if np.any(cross):
                    theta = crossing_fraction(a[cross], b[cross], h[cross], d0[cross], 1.0,
                                              parameters=self.dermis_parameters)
                    self.times["third"][sel[cross]] = s[cross] + theta * h[cross]
                self.dermis_damage[sel] = d0 + inc


class SensorTracker:
    """Absorbed energy of the sensor against the second-degree criterion (Stoll & Chianta 1969).

    Parameters
    ----------
    k
        Samples [-].
    heat_capacity
        Sensor heat capacity per area ``m c_p / A``, ``(k,)`` [J m-2 K-1].
    initial_temperature
        Sensor temperature at the start of the exposure, ``(k,)`` [K].
    criterion
        Callable ``time [s] -> criterion energy [J m-2]`` (NaN outside its range) [-].
    """

    def __init__(self, k: int, heat_capacity: _Floats, initial_temperature: _Floats,
                 criterion: Callable[[_Floats], _Floats]) -> None:
        self.capacity = heat_capacity
        self.t0 = initial_temperature
        self.criterion = criterion
        self.time = np.full(k, np.inf)
        self.exposure_energy = np.full(k, np.nan)

    def take(self, idx: _Indices) -> SensorTracker:
        """Restrict to samples ``idx`` (a copy)."""
        new = object.__new__(SensorTracker)
        new.capacity, new.t0 = self.capacity[idx], self.t0[idx]
        new.criterion = self.criterion
        new.time, new.exposure_energy = self.time[idx], self.exposure_energy[idx]
        return new

    def piece(self, idx: _Indices, ta: _Floats, tb: _Floats, Ta: _Floats, Tb: _Floats,
              exposure_energy_a: _Floats, exposure_flux_a: _Floats,
              exposure_flux_b: _Floats) -> None:
        """Check one piece of trajectory for samples ``idx``; exposure energy at ``ta``."""
        open_ = ~np.isfinite(self.time[idx]) & (tb > 0.0)
        if not np.any(open_):
            return
        sel = idx[open_]
        ta, tb, Ta, Tb = ta[open_], tb[open_], Ta[open_], Tb[open_]
        cap, t0 = self.capacity[sel], self.t0[sel]
        ga = cap * (Ta - t0) - self.criterion(np.maximum(ta, 1e-12))
        gb = cap * (Tb - t0) - self.criterion(tb)
        ga = np.where(ta <= 0.0, -np.inf, ga)
        cross = (gb >= 0.0) & ~(ga >= 0.0) & np.isfinite(gb)
        if not np.any(cross):
            return
        # bisection on g(theta) with the temperature linear over the piece
        ta, tb, Ta, Tb, cap, t0 = (x[cross] for x in (ta, tb, Ta, Tb, cap, t0))
        lo, hi = np.zeros(ta.shape), np.ones(ta.shape)
        for _ in range(48):
            mid = 0.5 * (lo + hi)
            tm = ta + mid * (tb - ta)
            g = cap * (Ta + mid * (Tb - Ta) - t0) - self.criterion(np.maximum(tm, 1e-12))
            up = (g >= 0.0) & np.isfinite(g)
            hi = np.where(up, mid, hi)
            lo = np.where(up, lo, mid)
        theta = hi
        sel = sel[cross]
        fa = exposure_flux_a[open_][cross]
        fb = exposure_flux_b[open_][cross]
        ea = exposure_energy_a[open_][cross]
        tc = ta + theta * (tb - ta)
        fc = fa + theta * (fb - fa)
        self.time[sel] = tc
        self.exposure_energy[sel] = ea + 0.5 * (fa + fc) * (tc - ta)


def track_peak(peak: _Floats, when: _Floats, idx: _Indices, value: _Floats, t: _Floats) -> None:
    """Keep the highest ``value`` and its time for samples ``idx`` (in place)."""
    higher = value > peak[idx]
    peak[idx[higher]] = value[higher]
    when[idx[higher]] = t[higher]
