"""The whole time loop of the transient model compiled per sample (numba).

:func:`integrate_compiled` does what :func:`plyrisk.models.stepper.integrate` does — the same
TR-BDF2 / backward-Euler steps (S.1)-(S.4), the same Newton iteration, step control, landing on
the exposure's jumps, outputs on the caller's grid, energy book-keeping, peaks and the sensor
criterion — but one sample at a time inside one compiled function, so that no Python runs per
step. The equations (T.1) are evaluated by the same element laws (conduction (E.1), contact
(E.2), air gap (E.4) with the air conductivity of :mod:`plyrisk.models.air`, exposed face
(B.1)), written out for scalars.

The damage integral does not feed back into the temperatures: the kernel logs every accepted
piece of trajectory at which the basal depth (or the dermis base) is above the damage onset,
and :func:`burn_outputs` integrates the damage over the logged pieces afterwards with
:func:`plyrisk.models.burn.damage_increment` and :func:`plyrisk.models.burn.crossing_fraction`,
summing in time order exactly as :class:`plyrisk.models.transient_tracking.BurnTracker` does.

Each sample is integrated on its own, so its result is bit-identical alone or in any batch and
on any number of workers. The two paths agree to rounding (the order of a few additions
differs), not bit for bit. Gap convection is not compiled (the batched path is used then).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import TYPE_CHECKING, Any, TypeVar

import numpy as np
from numpy.typing import NDArray
from scipy.constants import Stefan_Boltzmann as SIGMA

from plyrisk.models import air
from plyrisk.models.burn import (
    BURN_THRESHOLDS,
    DamageParameters,
    crossing_fraction,
    damage_increment,
)
from plyrisk.models.exposure import Table
from plyrisk.models.kernels import COMPILED, numba
from plyrisk.models.sensor import CRITERION_COEFFICIENT, CRITERION_EXPONENT
from plyrisk.models.stepper import (
    _D,
    _E,
    _W,
    BACKWARD_EULER_STEPS,
    GAMMA,
    MAX_NEWTON_MOVE,
    NEWTON_ITERATIONS,
    NEWTON_TOLERANCE,
)
from plyrisk.models.transient_tracking import ONSET, BurnTracker, SensorTracker

if TYPE_CHECKING:  # pragma: no cover - for type checkers only
    from plyrisk.models.mesh import Mesh
    from plyrisk.models.transient_drive import Drive
    from plyrisk.models.transient_problem import Problem

_Floats = NDArray[np.float64]
_Ints = NDArray[np.int64]
_Bools = NDArray[np.bool_]
_Fn = TypeVar("_Fn", bound=Callable[..., Any])

AVAILABLE = COMPILED
"""Whether the compiled time loop can be used (numba installed) [-]."""

PIECES = 512
"""Logged pieces of trajectory per sample at first; samples that need more are solved again
with a larger log (their results do not change) [-]."""

# per-sample scalar results (columns of ``res``)
_R_HOT, _R_FIXED, _R_PERF, _R_WEARER, _R_EXPOSURE = 0, 1, 2, 3, 4
_R_STORED, _R_STORED_END = 5, 6
_R_PEAK_S, _R_PEAK_S_T, _R_PEAK_B, _R_PEAK_B_T = 7, 8, 9, 10
_R_SENSOR_T, _R_SENSOR_E, _R_SURFACE_END = 11, 12, 13
_NRES = 14

_AIR = (math.log(air._EPSILON_OVER_K), *air._OMEGA_B,
        0.0266958 * math.sqrt(air.MOLAR_MASS * 1e3) / air._SIGMA_NM**2,
        math.log(air._T_CRITICAL), air._N1, air._N2, air._T2, air._N3, air._T3)
_E0, _E1, _E2 = _E


def _jit(f: _Fn) -> _Fn:
    """``f`` compiled (cached) when numba is installed (:data:`COMPILED`), else ``f``."""
    return numba.njit(cache=True)(f) if numba is not None else f


@_jit
def _air_conductivity(tm: float) -> tuple[float, float]:  # pragma: no cover - compiled
    """:func:`plyrisk.models.air.thermal_conductivity_with_slope` for one temperature."""
    ln_eps, b0, b1, b2, b3, b4, c, ln_tc, n1, n2, t2, n3, t3 = _AIR
    ln_t = math.log(tm)
    x = ln_t - ln_eps
    ln_omega = b0 + x * (b1 + x * (b2 + x * (b3 + x * b4)))
    dln_omega = b1 + x * (2.0 * b2 + x * (3.0 * b3 + x * 4.0 * b4))
    eta0 = c * math.exp(0.5 * ln_t - ln_omega)
    ln_tau = ln_tc - ln_t
    p2 = n2 * math.exp(t2 * ln_tau)
    p3 = n3 * math.exp(t3 * ln_tau)
    k = (n1 * eta0 + p2 + p3) * 1e-3
    dk = (n1 * eta0 * (0.5 - dln_omega) - t2 * p2 - t3 * p3) * 1e-3 / tm
    return k, dk


@_jit
def _fluxes(T: _Floats, s: int, kind: _Ints, L: _Floats, k0: _Floats, ks: _Floats, tref: _Floats,
            la: _Floats, lb: _Floats, rad_mode: int, perf: _Floats, art: float, share: _Floats,
            absorbed: float, gas: float, hc: float, sur: float, e: float, fixed: _Bools,
            surface: int, F: _Floats, q: _Floats
            ) -> tuple[float, float, float, float]:  # pragma: no cover - compiled
    """(T.1) at ``T`` for sample ``s``: ``F[0..3]`` = rhs, sub, diag, sup; returns the boundary
    terms (hot, into fixed nodes, perfusion, to the wearer) [W m-2]."""
    N = T.size
    rhs, sub, diag, sup = F[0], F[1], F[2], F[3]
    rhs[0] = share[s, 0] * absorbed
    diag[0] = 0.0
    sub[0] = 0.0
    psum = 0.0
    for j in range(N - 1):
        ta = T[j]
        tb = T[j + 1]
        kd = kind[j]
        if kd == 0:  # conduction through a slice (E.1)
            dt = ta - tb
            inv = L[s, j]  # the inverse slice thickness
            g = (k0[s, j] + ks[s, j] * (0.5 * (ta + tb) - tref[s, j])) * inv
            hs = 0.5 * ks[s, j] * inv * dt
            qq, qa, qb = g * dt, g + hs, hs - g
        elif kd == 1:  # contact (E.2)
            g = la[s, j]
            qq, qa, qb = g * (ta - tb), g, -g
        else:  # air gap: conduction in parallel with grey radiation (E.4)
            dt = ta - tb
            tm = 0.5 * (ta + tb)
            k, dk = _air_conductivity(tm)
            iw = la[s, j]
            g = k * iw
            dg = (0.5 * dt) * dk * iw
            es = lb[s, j]
            if rad_mode == 0:
                ta3 = ta * ta * ta
                tb3 = tb * tb * tb
                qq = g * dt + es * (ta3 * ta - tb3 * tb)
                qa = g + dg + 4.0 * es * ta3
                qb = dg - g - 4.0 * es * tb3
            else:
                tm2 = tm * tm
                hr = 4.0 * es * tm2 * tm
                dhr = 6.0 * es * tm2 * dt
                qq = (g + hr) * dt
                qa = g + hr + dg + dhr
                qb = dg + dhr - g - hr
        q[j] = qq
        source = perf[s, j] * (art - T[j])
        rhs[j] += source - qq
        diag[j] += -perf[s, j] - qa
        sup[j] = -qb
        psum += source
        rhs[j + 1] = qq + share[s, j + 1] * absorbed
        diag[j + 1] = qb
        sub[j + 1] = qa
    source = perf[s, N - 1] * (art - T[N - 1])
    rhs[N - 1] += source
    diag[N - 1] -= perf[s, N - 1]
    sup[N - 1] = 0.0
    psum += source
    # the exposed face (B.1) without its source term
    t0 = T[0]
    t3 = t0 * t0 * t0
    es = e * SIGMA
    s2 = sur * sur
    q_face = hc * (gas - t0) - es * (t3 * t0 - s2 * s2)
    rhs[0] += q_face
    diag[0] += -hc - 4.0 * es * t3
    into_fixed = 0.0
    for node in range(1, N):
        if fixed[node]:
            into_fixed += q[node - 1]
    wearer = q[surface - 1] if surface > 0 else q_face + absorbed
    return q_face + absorbed, into_fixed, psum, wearer


@_jit
def _solve(T: _Floats, s: int, c0: _Floats, c1: _Floats, th: float, F: _Floats, fixed: _Bools,
           rhs: _Floats, base: _Floats, mode: int, out: _Floats, cp: _Floats
           ) -> None:  # pragma: no cover
    """Thomas sweep of ``(C(T) - th J) x = d``: ``d`` the Newton residual (``mode`` 0) or
    ``rhs`` (1); fixed rows identity with zero right-hand side."""
    N = T.size
    sub, diag, sup = F[1], F[2], F[3]
    for j in range(N):
        if fixed[j]:
            a, b, c, d = 0.0, 1.0, 0.0, 0.0
        else:
            t = T[j]
            a = -th * sub[j]
            b = c0[s, j] + c1[s, j] * t - th * diag[j]
            c = -th * sup[j]
            if mode == 0:
                d = -(t * (c0[s, j] + 0.5 * c1[s, j] * t) - base[j] - th * rhs[j])
            else:
                d = rhs[j]
        if j == 0:
            inv = 1.0 / b
            cp[0] = c * inv
            out[0] = d * inv
        else:
            inv = 1.0 / (b - a * cp[j - 1])
            cp[j] = c * inv
            out[j] = (d - a * out[j - 1]) * inv
    for j in range(N - 2, -1, -1):
        out[j] -= cp[j] * out[j + 1]


@_jit
def _value(i: int, s: int, t: float, const: _Floats, tab_flag: _Ints, tab_t: _Floats,
           tab_v: _Floats, tab_n: _Ints) -> float:  # pragma: no cover - compiled
    if tab_flag[i] == 1:
        n = tab_n[i]
        return np.interp(t, tab_t[i, :n], tab_v[i, :n])
    return const[i, s]


@_jit
def _conditions(t: float, phase: int, s: int, mode: int, eps: float, rows: _Floats, const: _Floats,
                tab_flag: _Ints, tab_t: _Floats, tab_v: _Floats, tab_n: _Ints
                ) -> tuple[float, float, float, float, float, float]:  # pragma: no cover - compiled
    """Face exchange, absorbed flux and exposure flux at ``t`` (as
    :meth:`plyrisk.models.transient_drive.Drive.conditions`)."""
    amb, h_amb, cool, cool_h, cool_s = rows[0, s], rows[1, s], rows[2, s], rows[3, s], rows[4, s]
    G = _value(0, s, t, const, tab_flag, tab_t, tab_v, tab_n)
    Tg = _value(1, s, t, const, tab_flag, tab_t, tab_v, tab_n)
    h = _value(2, s, t, const, tab_flag, tab_t, tab_v, tab_n)
    Ts = Tg if tab_flag[3] == 2 else _value(3, s, t, const, tab_flag, tab_t, tab_v, tab_n)
    on = phase == 1
    pre = phase == 0
    if mode == 0:
        gas = Tg if on else (amb if pre else cool)
        hc = h if on else (h_amb if pre else cool_h)
        sur = Ts if on else (amb if pre else cool_s)
        e = eps
        absorbed = eps * G if on else 0.0
        ef = G + h * (Tg - amb) if on else 0.0
    else:
        gas = amb
        hc = h_amb if pre else 0.0
        sur = amb
        e = eps if pre else 0.0
        absorbed = G if on else 0.0
        ef = absorbed
    return gas, hc, sur, e, absorbed, ef


@_jit
def _criterion(t: float, C: float, b: float) -> float:  # pragma: no cover - compiled
    """:func:`plyrisk.models.sensor.criterion_energy` (extrapolated) for one time."""
    if t < 0.0:
        return np.nan
    return C * max(t, 0.0) ** b


@_jit
def _sensor_piece(res: _Floats, s: int, cap: float, t0: float, C: float, b: float, ta: float,
                  tb: float, Ta: float, Tb: float, ea: float, fa: float, fb: float
                  ) -> None:  # pragma: no cover
    """:meth:`plyrisk.models.transient_tracking.SensorTracker.piece` for one sample."""
    if np.isfinite(res[s, _R_SENSOR_T]) or not tb > 0.0:
        return
    ga = cap * (Ta - t0) - _criterion(max(ta, 1e-12), C, b)
    gb = cap * (Tb - t0) - _criterion(tb, C, b)
    if ta <= 0.0:
        ga = -np.inf
    if not (gb >= 0.0 and not (ga >= 0.0) and np.isfinite(gb)):
        return
    lo, hi = 0.0, 1.0
    for _ in range(48):
        mid = 0.5 * (lo + hi)
        tm = ta + mid * (tb - ta)
        g = cap * (Ta + mid * (Tb - Ta) - t0) - _criterion(max(tm, 1e-12), C, b)
        if g >= 0.0 and np.isfinite(g):
            hi = mid
        else:
            lo = mid
    theta = hi
    tc = ta + theta * (tb - ta)
    fc = fa + theta * (fb - fa)
    res[s, _R_SENSOR_T] = tc
    res[s, _R_SENSOR_E] = ea + 0.5 * (fa + fc) * (tc - ta)


@_jit
def _newton(T: _Floats, s: int, base: _Floats, theta: float, h: float, tol: float, kind: _Ints,
            L: _Floats, k0: _Floats, ks: _Floats, tref: _Floats, la: _Floats, lb: _Floats,
            rad_mode: int, perf: _Floats, art: float, share: _Floats, absorbed: float, gas: float,
            hc: float, sur: float, e: float, fixed: _Bools, surface: int, c0: _Floats, c1: _Floats,
            F: _Floats, Fb: _Floats, q: _Floats, step: _Floats, cp: _Floats
            ) -> bool:  # pragma: no cover - compiled
    """Solve ``H(T) - base - theta h F(T) = 0`` in place (S.3); ``F``/``Fb`` hold the fluxes
    at the returned ``T``. Returns whether it converged."""
    N = T.size
    previous = np.inf
    size = np.inf
    ok = False
    th = theta * h
    for it in range(NEWTON_ITERATIONS + 1):
        Fb[0], Fb[1], Fb[2], Fb[3] = _fluxes(T, s, kind, L, k0, ks, tref, la, lb, rad_mode,
                                             perf, art, share, absorbed, gas, hc, sur, e,
                                             fixed, surface, F, q)
        if it > 0:
            rho = size / previous if np.isfinite(previous) else np.inf
            est = size * rho / (1.0 - rho) if rho < 0.5 else np.inf
            if size <= tol or est <= 0.1 * tol:
                ok = True
                break
            if not np.isfinite(size) or it == NEWTON_ITERATIONS:
                break
        _solve(T, s, c0, c1, th, F, fixed, F[0], base, 0, step, cp)
        move = 0.0
        for j in range(N):
            a = abs(step[j])
            if a > move or a != a:
                move = a
        scale = MAX_NEWTON_MOVE / move if move > MAX_NEWTON_MOVE else 1.0
        for j in range(N):
            T[j] = T[j] + step[j] * scale
        previous = size
        size = move
    return ok


@_jit
def _one(s: int, T0: _Floats, c0: _Floats, c1: _Floats, c0a: _Floats, c1a: _Floats, perf: _Floats,
         art: _Floats, share: _Floats, fixed: _Bools, kind: _Ints, L: _Floats, k0: _Floats,
         ks: _Floats, tref: _Floats, la: _Floats, lb: _Floats, rad_mode: int, surface: int,
         basal: int, dermis: int, faces: _Ints, mode: int, eps: _Floats, rows: _Floats,
         duration: _Floats, horizon: float, kinks: _Floats, const: _Floats, tab_flag: _Ints,
         tab_t: _Floats, tab_v: _Floats, tab_n: _Ints, tout: _Floats, tol: float, first_step: float,
         max_step: float, min_step: float, max_steps: int, sensor: bool, cap: _Floats,
         sensor_t0: _Floats, crit_c: float, crit_b: float, log_dermis: bool, res: _Floats,
         steps_out: _Ints, rejected_out: _Ints, converged_out: _Bools, hist_face: _Floats,
         hist_basal: _Floats, hist_surface: _Floats, pieces: _Floats, counts: _Ints
         ) -> None:  # pragma: no cover - compiled
    N = T0.shape[1]
    K = tout.size
    newton_tol = NEWTON_TOLERANCE * tol
    P = pieces.shape[1]
    F1 = np.empty((4, N))
    F2 = np.empty((4, N))
    Fn = np.empty((4, N))
    b1 = np.empty(4)
    b2 = np.empty(4)
    bn = np.empty(4)
    q = np.empty(N - 1)
    step = np.empty(N)
    cp = np.empty(N)
    T = np.empty(N)
    T1 = np.empty(N)
    T2 = np.empty(N)
    Hn = np.empty(N)
    base = np.empty(N)
    slope = np.empty(N)
    est = np.empty(N)
    err = np.empty(N)
    for j in range(N):
        T[j] = T0[s, j]
    t = 0.0
    h = first_step
    be_left = BACKWARD_EULER_STEPS
    alive = True
    failed = False
    steps = 0
    rejected = 0
    acc_hot = acc_fixed = acc_perf = acc_wearer = acc_exp = 0.0
    peak_s, peak_s_t = -np.inf, 0.0
    peak_b, peak_b_t = -np.inf, 0.0
    stored_end = np.nan
    e_as0 = 0.0
    e0 = 0.0
    for j in range(N):
        e_as0 += T[j] * (c0a[s, j] + 0.5 * c1a[s, j] * T[j])
        if not fixed[j]:
            e0 += T[j] * (c0[s, j] + 0.5 * c1[s, j] * T[j])
    res[s, _R_SENSOR_T] = np.inf
    res[s, _R_SENSOR_E] = np.nan
    npieces = 0
    oidx = 0
    while oidx < K and tout[oidx] <= 0.0:
        for f in range(faces.size):
            hist_face[s, oidx, f] = T[faces[f]]
        hist_surface[s, oidx] = T[surface]
        if basal >= 0:
            hist_basal[s, oidx] = T[basal]
        oidx += 1
    if T[surface] > peak_s:
        peak_s, peak_s_t = T[surface], t
    if basal >= 0 and T[basal] > peak_b:
        peak_b, peak_b_t = T[basal], t
    ph = 1 if t < duration[s] else 2
    gas, hc, sur, e, ab, ef = _conditions(t, ph, s, mode, eps[s], rows, const, tab_flag,
                                          tab_t, tab_v, tab_n)
    bn[0], bn[1], bn[2], bn[3] = _fluxes(T, s, kind, L, k0, ks, tref, la, lb, rad_mode,
                                         perf, art[s], share, ab, gas, hc, sur, e, fixed,
                                         surface, Fn, q)
    for j in range(N):
        Hn[j] = T[j] * (c0[s, j] + 0.5 * c1[s, j] * T[j])
    for _attempt in range(max_steps):
        if not alive:
            break
        t_jump = horizon
        if duration[s] > t:
            t_jump = min(t_jump, duration[s])
        for kink in kinks:
            if kink > t:
                t_jump = min(t_jump, kink)
        rem = t_jump - t
        land = rem <= 1.05 * h
        hh = rem if land else (0.5 * rem if rem < 2.0 * h else h)
        ph = 1 if t < duration[s] else 2
        ef_n = _conditions(t, ph, s, mode, eps[s], rows, const, tab_flag, tab_t, tab_v,
                           tab_n)[5]
        be = be_left > 0
        for j in range(N):
            slope[j] = 0.0 if fixed[j] else Fn[0, j] / (c0[s, j] + c1[s, j] * T[j])
        # stage 1 (trapezoidal rule to t + gamma h)
        t1 = t + GAMMA * hh
        gas, hc, sur, e, ab1, ef1 = _conditions(t1, ph, s, mode, eps[s], rows, const,
                                                tab_flag, tab_t, tab_v, tab_n)
        ok1 = True
        if be:
            T1[:] = T
            F1[:] = Fn
            b1[:] = bn
        else:
            for j in range(N):
                T1[j] = T[j] + GAMMA * hh * slope[j]
                base[j] = Hn[j] + _D * hh * Fn[0, j]
            ok1 = _newton(T1, s, base, _D, hh, newton_tol, kind, L, k0, ks, tref, la, lb,
                          rad_mode, perf, art[s], share, ab1, gas, hc, sur, e, fixed,
                          surface, c0, c1, F1, b1, q, step, cp)
        # stage 2 (BDF2 to t + h, or backward Euler)
        t2 = t + hh
        gas, hc, sur, e, ab2, ef2 = _conditions(t2, ph, s, mode, eps[s], rows, const,
                                                tab_flag, tab_t, tab_v, tab_n)
        ok2 = False
        enorm = np.inf
        if ok1:
            if be:
                for j in range(N):
                    base[j] = Hn[j]
                    T2[j] = T[j] + hh * slope[j]
                theta = 1.0
            else:
                for j in range(N):
                    base[j] = Hn[j] + _W * hh * (Fn[0, j] + F1[0, j])
                    T2[j] = T[j] + (T1[j] - T[j]) / GAMMA
                theta = _D
            ok2 = _newton(T2, s, base, theta, hh, newton_tol, kind, L, k0, ks, tref, la,
                          lb, rad_mode, perf, art[s], share, ab2, gas, hc, sur, e, fixed,
                          surface, c0, c1, F2, b2, q, step, cp)
            # local error (S.1), in kelvin
            if be:
                for j in range(N):
                    err[j] = 0.5 * ((T2[j] - T[j]) - hh * slope[j])
            else:
                for j in range(N):
                    est[j] = 0.0 if fixed[j] else hh * (
                        _E0 * Fn[0, j] + _E1 * F1[0, j] + _E2 * F2[0, j])
                _solve(T2, s, c0, c1, _D * hh, F2, fixed, est, base, 1, err, cp)
            m = 0.0
            for j in range(N):
                a = abs(err[j])
                if a > m or a != a:
                    m = a
            enorm = m / tol
        good = ok2 and enorm <= 1.0
        if ok2:
            if enorm == 0.0:
                factor = np.inf
            else:
                factor = 0.9 * (enorm ** -0.5 if be else enorm ** (-1.0 / 3.0))
            factor = min(max(factor, 0.2), 4.0) if factor == factor else factor
        else:
            factor = 0.25
        if not good:
            rejected += 1
            h = hh * factor
            if h < min_step:
                failed = True
                alive = False
            continue
        # accepted: energies (trapezoidal / TR-BDF2 weights)
        wn = 0.0 if be else _W
        w2 = 1.0 if be else _D
        acc_hot += hh * (wn * bn[0] + wn * b1[0] + w2 * b2[0])
        acc_fixed += hh * (wn * bn[1] + wn * b1[1] + w2 * b2[1])
        acc_perf += hh * (wn * bn[2] + wn * b1[2] + w2 * b2[2])
        acc_wearer += hh * (wn * bn[3] + wn * b1[3] + w2 * b2[3])
        exposure_at_start = acc_exp
        acc_exp += hh * (wn * ef_n + wn * ef1 + w2 * ef2)
        ts1 = t + hh if be else t + GAMMA * hh
        Tm = T2 if be else T1
        for piece in range(2):
            if piece == 0:
                ta, tb, A, B = t, ts1, T, Tm
            else:
                ta, tb, A, B = ts1, t2, Tm, T2
            if B[surface] > peak_s:
                peak_s, peak_s_t = B[surface], tb
            if basal >= 0:
                if B[basal] > peak_b:
                    peak_b, peak_b_t = B[basal], tb
                dt = tb - ta
                if dt > 0.0:
                    hot = max(A[basal], B[basal]) > ONSET
                    if log_dermis and max(A[dermis], B[dermis]) > ONSET:
                        hot = True
                    if hot:
                        if npieces < P:
                            pieces[s, npieces, 0] = ta
                            pieces[s, npieces, 1] = dt
                            pieces[s, npieces, 2] = A[basal]
                            pieces[s, npieces, 3] = B[basal]
                            if log_dermis:
                                pieces[s, npieces, 4] = A[dermis]
                                pieces[s, npieces, 5] = B[dermis]
                        npieces += 1
        if sensor:
            ef_m = ef2 if be else ef1
            e_mid = exposure_at_start + (hh * ef2 if be else 0.5 * (ef_n + ef_m) * (ts1 - t))
            _sensor_piece(res, s, cap[s], sensor_t0[s], crit_c, crit_b, t, ts1, T[surface],
                          Tm[surface], exposure_at_start, ef_n, ef_m)
            _sensor_piece(res, s, cap[s], sensor_t0[s], crit_c, crit_b, ts1, t2, Tm[surface],
                          T2[surface], e_mid, ef_m, ef2)
        t_new = t_jump if land else t2
        # outputs on the caller's grid (quadratic through the stage for TR-BDF2)
        while oidx < K and tout[oidx] <= t_new:
            sx = (tout[oidx] - t) / hh
            g = GAMMA
            l0 = (sx - g) * (sx - 1.0) / g
            l1 = sx * (sx - 1.0) / (g * (g - 1.0))
            l2 = sx * (sx - g) / (1.0 - g)
            for f in range(faces.size + 2):
                if f < faces.size:
                    node = faces[f]
                elif f == faces.size:
                    node = surface
                else:
                    node = basal
                    if node < 0:
                        break
                if be:
                    v = (1.0 - sx) * T[node] + sx * T2[node]
                else:
                    v = l0 * T[node] + l1 * T1[node] + l2 * T2[node]
                if f < faces.size:
                    hist_face[s, oidx, f] = v
                elif f == faces.size:
                    hist_surface[s, oidx] = v
                else:
                    hist_basal[s, oidx] = v
            oidx += 1
        if land and t_jump == duration[s]:
            e_as = 0.0
            for j in range(N):
                e_as += T2[j] * (c0a[s, j] + 0.5 * c1a[s, j] * T2[j])
            stored_end = e_as - e_as0
        T[:] = T2
        t = t_new
        steps += 1
        if be:
            be_left = max(be_left - 1, 0)
        h = min(hh * factor, max_step)
        if land:
            be_left = BACKWARD_EULER_STEPS
            h = min(h, first_step)
        if t >= horizon:
            alive = False
        for j in range(N):
            Hn[j] = T[j] * (c0[s, j] + 0.5 * c1[s, j] * T[j])
        if land:  # fluxes at the new start, in the new phase
            ph = 1 if t < duration[s] else 2
            gas, hc, sur, e, ab, ef = _conditions(t, ph, s, mode, eps[s], rows, const,
                                                  tab_flag, tab_t, tab_v, tab_n)
            bn[0], bn[1], bn[2], bn[3] = _fluxes(T, s, kind, L, k0, ks, tref, la, lb,
                                                 rad_mode, perf, art[s], share, ab, gas,
                                                 hc, sur, e, fixed, surface, Fn, q)
        else:  # first same as last
            Fn[:] = F2
            bn[:] = b2
    if alive:
        failed = True  # out of steps
    e_end = 0.0
    for j in range(N):
        if not fixed[j]:
            e_end += T[j] * (c0[s, j] + 0.5 * c1[s, j] * T[j])
    res[s, _R_HOT] = acc_hot
    res[s, _R_FIXED] = acc_fixed
    res[s, _R_PERF] = acc_perf
    res[s, _R_WEARER] = acc_wearer
    res[s, _R_EXPOSURE] = acc_exp
    res[s, _R_STORED] = e_end - e0
    res[s, _R_STORED_END] = stored_end
    res[s, _R_PEAK_S] = peak_s
    res[s, _R_PEAK_S_T] = peak_s_t
    res[s, _R_PEAK_B] = peak_b
    res[s, _R_PEAK_B_T] = peak_b_t
    res[s, _R_SURFACE_END] = T[surface]
    steps_out[s] = steps
    rejected_out[s] = rejected
    converged_out[s] = not failed
    counts[s] = npieces



@numba.njit(cache=True, nogil=True) if numba is not None else (lambda f: f)  # as in _jit
def _integrate(lo: int, hi: int, T0: _Floats, c0: _Floats, c1: _Floats, c0a: _Floats, c1a: _Floats,
               perf: _Floats, art: _Floats, share: _Floats, fixed: _Bools, kind: _Ints, L: _Floats,
               k0: _Floats, ks: _Floats, tref: _Floats, la: _Floats, lb: _Floats, rad_mode: int,
               surface: int, basal: int, dermis: int, faces: _Ints, mode: int, eps: _Floats,
               rows: _Floats, duration: _Floats, horizon: float, kinks: _Floats, const: _Floats,
               tab_flag: _Ints, tab_t: _Floats, tab_v: _Floats, tab_n: _Ints, tout: _Floats,
               tol: float, first_step: float, max_step: float, min_step: float, max_steps: int,
               sensor: bool, cap: _Floats, sensor_t0: _Floats, crit_c: float, crit_b: float,
               log_dermis: bool, res: _Floats, steps_out: _Ints, rejected_out: _Ints,
               converged_out: _Bools, hist_face: _Floats, hist_basal: _Floats,
               hist_surface: _Floats, pieces: _Floats, counts: _Ints
               ) -> None:  # pragma: no cover - compiled
    """Integrate samples ``lo .. hi - 1`` (threads take disjoint ranges; no GIL held)."""
    for s in range(lo, hi):
        _one(s, T0, c0, c1, c0a, c1a, perf, art, share, fixed, kind, L, k0, ks, tref, la, lb,
             rad_mode, surface, basal, dermis, faces, mode, eps, rows, duration, horizon, kinks,
             const, tab_flag, tab_t, tab_v, tab_n, tout, tol, first_step, max_step, min_step,
             max_steps, sensor, cap, sensor_t0, crit_c, crit_b, log_dermis, res, steps_out,
             rejected_out, converged_out, hist_face, hist_basal, hist_surface, pieces, counts)


def _sample_major(x: np.ndarray) -> np.ndarray:
    """``(nodes, k)`` → C-contiguous ``(k, nodes)``."""
    return np.ascontiguousarray(np.asarray(x, dtype=float).T)


def compiled_supported(problem: Problem, drive: Drive) -> bool:
    """Whether :func:`integrate_compiled` handles this problem (numba, no gap convection)."""
    return AVAILABLE and not problem.convection_enabled


def integrate_compiled(p: Problem, drive: Drive, mesh: Mesh, T0: np.ndarray,
                       out: dict[str, np.ndarray], opts: dict[str, Any],
                       burn: BurnTracker | None, sensor: SensorTracker | None, *,
                       threads: int = 1) -> None:
    """Step every sample from 0 to the horizon with the compiled loop; write the outputs.

    Arguments and outputs as for :func:`plyrisk.models.stepper.integrate`; ``burn`` is a fresh
    :class:`~plyrisk.models.transient_tracking.BurnTracker` (its parameters are used) or
    ``None``, ``sensor`` a fresh
    :class:`~plyrisk.models.transient_tracking.SensorTracker` or ``None``; ``threads``
    integrate that many samples at once (results do not depend on it).
    """

    k = T0.shape[1]
    N = T0.shape[0]
    kind = np.zeros(N - 1, dtype=np.int64)
    la = np.zeros((N - 1, k))
    lb = np.zeros((N - 1, k))
    if p.contact:
        for m, j in enumerate(np.asarray(p.contact["idx"])):
            kind[j] = 1
            la[j] = 1.0 / np.asarray(p.contact["contact_resistance"][m], dtype=float)
    for j, g in p.gaps:
        kind[j] = 2
        la[j] = g["inverse_width"]
        lb[j] = g["radiative_factor"]
    c = p.cond
    # exposure values: per-sample constants or shared tables
    names = ("incident_flux", "gas_temperature", "convection_coefficient",
             "surroundings_temperature")
    const = np.zeros((4, k))
    tab_flag = np.zeros(4, dtype=np.int64)
    tables: dict[int, Table] = {}
    for i, name in enumerate(names):
        v = drive.values[name]
        if v is None:
            tab_flag[i] = 2
        elif isinstance(v, Table):
            tab_flag[i] = 1
            tables[i] = v
        else:
            const[i] = v
    m = max([t._t.size for t in tables.values()], default=1)
    tab_t = np.zeros((4, m))
    tab_v = np.zeros((4, m))
    tab_n = np.ones(4, dtype=np.int64)
    for i, tab in tables.items():
        tab_n[i] = tab._t.size
        tab_t[i, :tab._t.size] = tab._t
        tab_v[i, :tab._t.size] = tab._v
    r = drive.rows
    rows = np.ascontiguousarray(np.stack([r["ambient"], r["ambient_h"], r["cool"], r["cool_h"],
                                          r["cool_s"]]).astype(float))
    tout = np.ascontiguousarray(opts["output_times"], dtype=float)
    K = tout.size
    faces = np.asarray(mesh.face_nodes, dtype=np.int64)
    basal = -1 if mesh.basal_node is None else int(mesh.basal_node)
    dermis = -1 if mesh.dermis_base_node is None else int(mesh.dermis_base_node)
    log_dermis = burn is not None and burn.third_degree == "dermis_base"
    is_sensor = sensor is not None
    cap = sensor.capacity if sensor is not None else np.zeros(k)
    s_t0 = sensor.t0 if sensor is not None else np.zeros(k)
    fixed = np.ascontiguousarray(p.fixed, dtype=np.bool_)
    R, C = "row", "col"  # per-sample along the first or the last axis
    # the compiled loop's arguments (arrays and scalars), each tagged with its sample axis
    tagged: list[tuple[Any, str | None]] = [
        (_sample_major(T0), R), (_sample_major(p.c0), R), (_sample_major(p.c1), R),
        (_sample_major(p.c0_assembly), R), (_sample_major(p.c1_assembly), R),
        (_sample_major(p.perfusion), R), (np.ascontiguousarray(p.arterial, dtype=float), R),
        (_sample_major(p.radiant_share), R), (fixed, None), (kind, None),
        (_sample_major(1.0 / c["thickness"]), R), (_sample_major(c["conductivity"]), R),
        (_sample_major(c["conductivity_slope"]), R),
        (_sample_major(c["reference_temperature"]), R), (_sample_major(la), R),
        (_sample_major(lb), R), (0 if p.radiation == "exact" else 1, None),
        (int(mesh.surface_node), None), (basal, None), (dermis, None), (faces, None),
        (0 if drive.mode == "environment" else 1, None),
        (np.ascontiguousarray(r["emissivity"], dtype=float), R), (rows, C),
        (np.ascontiguousarray(r["duration"], dtype=float), R), (float(drive.horizon), None),
        (np.ascontiguousarray(drive.kinks, dtype=float), None), (const, C), (tab_flag, None),
        (tab_t, None), (tab_v, None), (tab_n, None), (tout, None),
        (float(opts["temperature_tolerance"]), None), (float(opts["first_step"]), None),
        (float(opts["max_step"]), None), (float(opts["min_step"]), None),
        (int(opts["max_steps"]), None), (is_sensor, None),
        (np.ascontiguousarray(cap, dtype=float), R), (np.ascontiguousarray(s_t0, dtype=float), R),
        (float(CRITERION_COEFFICIENT), None), (float(CRITERION_EXPONENT), None),
        (log_dermis, None)]
    args = [a for a, _ in tagged]
    res = np.full((k, _NRES), np.nan)
    steps = np.zeros(k, dtype=np.int64)
    rejected = np.zeros(k, dtype=np.int64)
    converged = np.zeros(k, dtype=np.bool_)
    hist_face = np.full((k, K, faces.size), np.nan)
    hist_basal = np.full((k, K), np.nan)
    hist_surface = np.full((k, K), np.nan)
    pieces = np.zeros((k, PIECES if basal >= 0 else 0, 6))
    counts = np.zeros(k, dtype=np.int64)
    _run(args, (res, steps, rejected, converged, hist_face, hist_basal, hist_surface, pieces,
                counts), threads)
    over = np.flatnonzero(counts > pieces.shape[1])
    if over.size:  # solve these samples again with a log long enough for them
        size = int(counts[over].max())
        sub_args = [a if how is None else np.ascontiguousarray(a[over] if how == R else a[:, over])
                    for a, how in tagged]
        sub_pieces = np.zeros((over.size, size, 6))
        sub_counts = np.zeros(over.size, dtype=np.int64)
        sub = (np.full((over.size, _NRES), np.nan), np.zeros(over.size, dtype=np.int64),
               np.zeros(over.size, dtype=np.int64), np.zeros(over.size, dtype=np.bool_),
               np.full((over.size, K, faces.size), np.nan), np.full((over.size, K), np.nan),
               np.full((over.size, K), np.nan))
        _run(sub_args, (*sub, sub_pieces, sub_counts), 1)
        for full, part in zip((res, steps, rejected, converged, hist_face, hist_basal,
                               hist_surface), sub, strict=True):
            full[over] = part
        wide = np.zeros((k, size, 6))
        wide[:, :pieces.shape[1]] = pieces
        wide[over] = sub_pieces
        pieces = wide
        counts[over] = sub_counts
    out["heat_in"] = res[:, _R_HOT]
    out["heat_to_core"] = res[:, _R_FIXED]
    out["heat_from_perfusion"] = res[:, _R_PERF]
    out["absorbed_energy"] = res[:, _R_WEARER]
    out["stored_energy_change"] = res[:, _R_STORED]
    out["stored_energy_at_exposure_end"] = res[:, _R_STORED_END]
    out["peak_surface_temperature"] = res[:, _R_PEAK_S]
    out["time_of_peak_surface_temperature"] = res[:, _R_PEAK_S_T]
    if basal >= 0:
        out["peak_basal_temperature"] = res[:, _R_PEAK_B]
        out["time_of_peak_basal_temperature"] = res[:, _R_PEAK_B_T]
    out["face_temperature"] = hist_face
    out["basal_temperature"] = hist_basal
    out["surface_temperature"] = hist_surface
    out["steps"] = steps
    out["rejected_steps"] = rejected
    out["converged"] = converged
    if burn is not None:
        times, damage = burn_outputs(pieces, counts, burn.parameters, burn.third_degree,
                                     burn.dermis_parameters)
        out["time_to_first_degree_burn"] = times["first"]
        out["time_to_second_degree_burn"] = times["second"]
        out["time_to_third_degree_burn"] = times["third"]
        out["damage_at_end"] = damage
    if sensor is not None:
        out["sensor_criterion_time"] = res[:, _R_SENSOR_T]
        out["exposure_energy_at_criterion"] = res[:, _R_SENSOR_E]
        out["absorbed_energy"] = sensor.capacity * (res[:, _R_SURFACE_END] - sensor.t0)


def _run(args: list[Any], outputs: tuple[np.ndarray, ...], threads: int) -> None:
    """Call the compiled loop on ``threads`` threads, each over its own block of samples."""
    k = args[0].shape[0]
    threads = max(1, min(int(threads), k))
    if threads == 1:
        _integrate(0, k, *args, *outputs)
        return
    from concurrent.futures import ThreadPoolExecutor

    edges = np.linspace(0, k, threads + 1).astype(int)
    with ThreadPoolExecutor(threads) as pool:
        jobs = [pool.submit(_integrate, int(a), int(b), *args, *outputs)
                for a, b in zip(edges[:-1], edges[1:], strict=True) if b > a]
        for job in jobs:
            job.result()


def burn_outputs(pieces: np.ndarray, counts: np.ndarray, parameters: DamageParameters,
                 third_degree: str, dermis_parameters: DamageParameters | None = None
                 ) -> tuple[dict[str, np.ndarray], np.ndarray]:
    """Damage over the logged pieces, in time order, and the times thresholds are crossed.

    Parameters
    ----------
    pieces
        ``(k, P, 6)``: start time [s], length [s], basal temperature at start and end [K],
        dermis-base temperature at start and end [K] of every logged piece.
    counts
        Logged pieces per sample [-].
    parameters, third_degree, dermis_parameters
        As for :class:`~plyrisk.models.transient_tracking.BurnTracker` [-].

    Returns
    -------
    times, damage
        Times to first-, second- and third-degree burn (``inf`` if not reached) [s], and the
        damage at the basal depth at the end [-].
    """
    k, P = pieces.shape[:2]
    valid = np.arange(P)[None, :] < counts[:, None]
    ta, dt = pieces[..., 0], pieces[..., 1]

    def accumulate(a: np.ndarray, b: np.ndarray, params: DamageParameters
                   ) -> tuple[np.ndarray, np.ndarray]:
        hot = valid & (np.maximum(a, b) > ONSET)
        inc = np.zeros((k, P))
        if np.any(hot):
            inc[hot] = damage_increment(a[hot], b[hot], dt[hot], parameters=params)
        total = np.cumsum(inc, axis=1)  # sequential, as the tracker adds step by step
        before = np.concatenate([np.zeros((k, 1)), total[:, :-1]], axis=1)
        return total, before

    def crossing(a: np.ndarray, b: np.ndarray, total: np.ndarray, before: np.ndarray, thr: float,
                 params: DamageParameters) -> np.ndarray:
        time = np.full(k, np.inf)
        cross = valid & (before < thr) & (total >= thr)
        rows = np.flatnonzero(cross.any(axis=1))
        if rows.size:
            j = np.argmax(cross[rows], axis=1)
            theta = crossing_fraction(a[rows, j], b[rows, j], dt[rows, j], before[rows, j],
                                      thr, parameters=params)
            time[rows] = ta[rows, j] + theta * dt[rows, j]
        return time

    a, b = pieces[..., 2], pieces[..., 3]
    total, before = accumulate(a, b, parameters)
    times: dict[str, np.ndarray] = {}
    for name, key in (("first", "first_degree"), ("second", "second_degree")):
        times[name] = crossing(a, b, total, before, BURN_THRESHOLDS[key], parameters)
    if third_degree == "basal":
        times["third"] = crossing(a, b, total, before, BURN_THRESHOLDS["third_degree"],
                                  parameters)
    else:
        assert dermis_parameters is not None  # third_degree "dermis_base" needs them
        da, db = pieces[..., 4], pieces[..., 5]
        d_total, d_before = accumulate(da, db, dermis_parameters)
        times["third"] = crossing(da, db, d_total, d_before, 1.0, dermis_parameters)
    damage = total[:, -1].copy() if P else np.zeros(k)
    return times, damage
