"""Batched implicit time stepping of the transient model (assembly + wearer).

The semi-discrete equations (T.1) of :mod:`plyrisk.models.transient_problem`, ``dH(T)/dt =
F(T, t)``, are integrated per sample with its own time and step:

* TR-BDF2 (Bank et al. 1985, IEEE Trans CAD 4:436; Hosea & Shampine 1996, Appl Numer Math
  20:21-37) with ``gamma = 2 - sqrt 2``: a trapezoidal stage to ``t + gamma h`` and a BDF2
  stage to ``t + h``, written in enthalpy form so that every step conserves energy exactly up
  to the Newton tolerance; the error estimate of Hosea & Shampine filtered by
  ``(C - d h J)^-1`` (S.1);
* backward Euler for the first ``BACKWARD_EULER_STEPS`` steps and after every jump of the
  exposure (start, end, table kinks), which the steps land on exactly (S.2);
* a Newton iteration per stage on the tridiagonal Jacobian, one Thomas sweep per iteration
  (:func:`plyrisk.models.kernels.implicit_solve`), each sample frozen once its update is
  below the Newton tolerance (S.3);
* step control per sample from the local error estimate against ``temperature_tolerance``
  (S.4). Each sample keeps its own ``t`` and ``h``, and no quantity mixes samples, so a
  sample's result is bit-identical alone or in any batch (on the same
  :class:`~plyrisk.models.mesh.MeshLayout`).

The initial state is the steady state of the same discrete equations (``F = 0``) at the
pre-exposure conditions. Every sample is integrated to the horizon (no early stop), through
the exposure and the cool-down.
"""

from __future__ import annotations

import math
from typing import Any, cast

import numpy as np

from plyrisk.models.kernels import implicit_solve
from plyrisk.models.mesh import Mesh
from plyrisk.models.transient_drive import Drive
from plyrisk.models.transient_problem import (
    Fluxes,
    Problem,
    capacity,
    enthalpy,
    fluxes,
    node_sum,
)
from plyrisk.models.transient_tracking import BurnTracker, SensorTracker, track_peak

GAMMA = 2.0 - math.sqrt(2.0)
_D = GAMMA / 2.0
_W = math.sqrt(2.0) / 4.0
_E = ((1.0 - _W) / 3.0 - _W, 1.0 / 3.0, _D / 3.0 - _D)  # b_hat - b (Hosea & Shampine 1996)
BACKWARD_EULER_STEPS = 2
"""Backward-Euler steps at the start and after each jump of the exposure [-]."""
NEWTON_ITERATIONS = 8
"""Newton iterations per stage before the step is rejected [-]."""
NEWTON_TOLERANCE = 1e-2
"""Newton tolerance as a fraction of the step's temperature tolerance [-]."""
MAX_NEWTON_MOVE = 50.0
"""Largest change of any node temperature in one Newton iteration [K]."""


def newton(p: Problem, drive_face: dict[str, np.ndarray], absorbed: np.ndarray, T: np.ndarray,
           base: np.ndarray | float, theta: np.ndarray | float, h: np.ndarray | float,
           mask: np.ndarray, tol: float, *, steady: bool = False
           ) -> tuple[np.ndarray, np.ndarray, Fluxes]:
    """Solve ``H(T) - base - theta h F(T) = 0`` (or ``F(T) = 0`` when ``steady``) per sample.

    Returns the solution, a per-sample success flag (for the samples in ``mask``) and the
    :class:`~plyrisk.models.transient_problem.Fluxes` at the returned temperatures.
    """
    T = T.copy()
    k = T.shape[1]
    done = ~mask
    ok = np.zeros(k, dtype=bool)
    previous = np.full(k, np.inf)
    size = np.full(k, np.inf)
    fixed = p.fixed
    for it in range(NEWTON_ITERATIONS + 1):
        F = fluxes(p, T, drive_face, absorbed)
        if it > 0:
            rho = np.where(np.isfinite(previous), size / previous, np.inf)
            est = np.where(rho < 0.5, size * rho / (1.0 - rho), np.inf)
            newly = ~done & ((size <= tol) | (est <= 0.1 * tol))
            ok |= newly
            done |= newly | ~np.isfinite(size)
            if done.all() or it == NEWTON_ITERATIONS:
                break
        if steady:
            step = implicit_solve(T, p.c0, p.c1, np.ones(k), F.sub, F.diag, F.sup, fixed, F.rhs,
                                  None, 2)
        else:
            step = implicit_solve(T, p.c0, p.c1, theta * h, F.sub, F.diag, F.sup, fixed, F.rhs,
                                  cast(np.ndarray, base), 0)  # an array unless steady
        move = np.max(np.abs(step), axis=0)
        scale = np.where(move > MAX_NEWTON_MOVE, MAX_NEWTON_MOVE / move, 1.0)
        live = ~done
        T = np.where(live, T + step * scale, T)
        previous = np.where(live, size, previous)
        size = np.where(live, move, size)
    return T, ok & mask, F


def steady_state(p: Problem, drive: Drive, guess: np.ndarray, tol: float
                 ) -> tuple[np.ndarray, np.ndarray]:
    """Steady state of (T.1) at the pre-exposure conditions; returns ``(T, ok)``."""
    k = guess.shape[1]
    face, absorbed, _ = drive.conditions(np.zeros(k), np.zeros(k, dtype=int))
    ok_all = np.zeros(k, dtype=bool)
    T = guess
    for _ in range(4):  # up to 4 x NEWTON_ITERATIONS, each sample frozen once converged
        T, ok, _ = newton(p, face, absorbed, T, 0.0, 1.0, 1.0, ~ok_all, tol, steady=True)
        ok_all |= ok
        if ok_all.all():
            break
    return T, ok_all


def integrate(p: Problem, drive: Drive, mesh: Mesh, T0: np.ndarray, out: dict[str, np.ndarray],
              opts: dict[str, Any], burn: BurnTracker | None,
              sensor: SensorTracker | None) -> None:
    """Step every sample from 0 to the horizon; write the per-sample outputs into ``out``."""
    k = T0.shape[1]
    tol = opts["temperature_tolerance"]
    newton_tol = NEWTON_TOLERANCE * tol
    horizon = drive.horizon
    tout = opts["output_times"]
    K = tout.size
    faces = np.asarray(mesh.face_nodes)
    basal, surface = mesh.basal_node, mesh.surface_node
    dermis = mesh.dermis_base_node
    free = ~p.fixed
    t = np.zeros(k)
    h = np.full(k, opts["first_step"])
    be_left = np.full(k, BACKWARD_EULER_STEPS)
    T = T0.copy()
    alive = np.ones(k, dtype=bool)
    failed = np.zeros(k, dtype=bool)
    steps = np.zeros(k, dtype=np.int64)
    rejected = np.zeros(k, dtype=np.int64)
    acc = {name: np.zeros(k) for name in ("hot", "fixed", "perfusion", "wearer", "exposure")}
    peaks = {name: np.full(k, -np.inf) for name in ("basal", "surface")}
    peak_t = {name: np.zeros(k) for name in ("basal", "surface")}
    stored_end = np.full(k, np.nan)
    e_assembly0 = node_sum(T0 * (p.c0_assembly + 0.5 * p.c1_assembly * T0))
    e0 = node_sum(enthalpy(p, T0)[free])
    hist = {"face": np.full((k, K, faces.size), np.nan), "basal": np.full((k, K), np.nan),
            "surface": np.full((k, K), np.nan)}
    oidx = np.zeros(k, dtype=np.int64)
    all_idx = np.arange(k)

    def record(sel: np.ndarray, Tsel: np.ndarray, times: np.ndarray) -> None:
        hist["face"][sel, oidx[sel]] = Tsel[faces].T
        hist["surface"][sel, oidx[sel]] = Tsel[surface]
        if basal is not None:
            hist["basal"][sel, oidx[sel]] = Tsel[basal]
        oidx[sel] += 1

    at0 = np.flatnonzero(tout <= 0.0)
    for _ in at0:
        record(all_idx, T, np.zeros(k))
    track_peak(peaks["surface"], peak_t["surface"], all_idx, T[surface], t)
    if basal is not None:
        track_peak(peaks["basal"], peak_t["basal"], all_idx, T[basal], t)

    phase = drive.phase(t)
    face_n, abs_n, _ = drive.conditions(t, phase)
    Fn = fluxes(p, T, face_n, abs_n)
    Hn = enthalpy(p, T)
    for _ in range(opts["max_steps"]):
        if not alive.any():
            break
        t_jump = drive.next_jump(t)
        rem = t_jump - t
        hh = np.where(rem <= 1.05 * h, rem, np.where(rem < 2.0 * h, 0.5 * rem, h))
        land = rem <= 1.05 * h
        phase = drive.phase(t)
        _, _, ef_n = drive.conditions(t, phase)
        be = be_left > 0
        tr = alive & ~be
        Cn = capacity(p, T)
        slope = np.where(free[:, None], Fn.rhs / Cn, 0.0)
        # stage 1 (trapezoidal rule to t + gamma h)
        T1 = T
        F1 = Fn
        ok1 = np.ones(k, dtype=bool)
        t1 = t + GAMMA * hh
        face1, abs1, ef1 = drive.conditions(t1, phase)
        if tr.any():
            T1, ok1, F1 = newton(p, face1, abs1, T + GAMMA * hh * slope, Hn + _D * hh * Fn.rhs,
                                 _D, hh, tr, newton_tol)
            ok1 |= ~tr
        # stage 2 (BDF2 to t + h, or backward Euler)
        t2 = t + hh
        face2, abs2, ef2 = drive.conditions(t2, phase)
        base = np.where(be, Hn, Hn + _W * hh * (Fn.rhs + F1.rhs))
        theta = np.where(be, 1.0, _D)
        guess = np.where(be, T + hh * slope, T + (T1 - T) / GAMMA)
        go = alive & ok1
        T2, ok2, F2 = newton(p, face2, abs2, guess, base, theta, hh, go, newton_tol)
        # local error (S.1), in kelvin
        est = hh * (_E[0] * Fn.rhs + _E[1] * F1.rhs + _E[2] * F2.rhs)
        est[p.fixed] = 0.0
        err_tr = implicit_solve(T2, p.c0, p.c1, _D * hh, F2.sub, F2.diag, F2.sup, p.fixed, est,
                                None, 1)
        err_be = 0.5 * ((T2 - T) - hh * slope)
        err = np.where(be, err_be, err_tr)
        enorm = np.max(np.abs(err), axis=0) / tol
        good = alive & ok2 & (enorm <= 1.0)
        bad = alive & ~good
        with np.errstate(divide="ignore"):
            factor = 0.9 * np.where(be, enorm ** -0.5, enorm ** (-1.0 / 3.0))
        factor = np.where(ok2, np.clip(factor, 0.2, 4.0), 0.25)
        rejected += bad
        h = np.where(bad, hh * factor, h)
        failed |= bad & (h < opts["min_step"])
        alive &= ~failed
        sel = np.flatnonzero(good)
        if sel.size:
            _accept(locals())
            t_new = np.where(land, t_jump, t2)
            # outputs on the caller's grid (quadratic through the stage for TR-BDF2)
            while True:
                nxt = tout[np.minimum(oidx, K - 1)] if K else np.zeros(k)
                due = good & (oidx < K) & (nxt <= t_new)
                if not due.any():
                    break
                s = (nxt - t) / hh
                g = GAMMA
                l0 = (s - g) * (s - 1.0) / g
                l1 = s * (s - 1.0) / (g * (g - 1.0))
                l2 = s * (s - g) / (1.0 - g)
                quad = l0 * T + l1 * T1 + l2 * T2
                lin = (1.0 - s) * T + s * T2
                Ti = np.where(be, lin, quad)
                record(np.flatnonzero(due), Ti[:, due], nxt[due])
            ends_exposure = good & land & (t_jump == drive.rows["duration"])
            if ends_exposure.any():
                e_as = node_sum(T2 * (p.c0_assembly + 0.5 * p.c1_assembly * T2))
                stored_end[ends_exposure] = (e_as - e_assembly0)[ends_exposure]
            T = np.where(good, T2, T)
            t = np.where(good, t_new, t)
            steps += good
            be_left = np.where(good, np.maximum(be_left - be, 0), be_left)
            h = np.where(good, np.minimum(hh * factor, opts["max_step"]), h)
            restart = good & land
            be_left = np.where(restart, BACKWARD_EULER_STEPS, be_left)
            h = np.where(restart, np.minimum(h, opts["first_step"]), h)
            alive &= ~(t >= horizon)
            Hn = enthalpy(p, T)
            # fluxes at the new start: FSAL, but re-evaluated where the phase changed
            phase_new = drive.phase(t)
            keep = good & ~restart
            face_r, abs_r, _ = drive.conditions(t, phase_new)
            if keep.all():
                Fn = F2
            else:
                Fr = fluxes(p, T, face_r, abs_r) if restart.any() else F2
                Fn = _merge(Fn, F2, Fr, keep, restart)
    failed |= alive  # out of steps
    e_end = node_sum(enthalpy(p, T)[free])
    out["heat_in"] = acc["hot"]
    out["heat_to_core"] = acc["fixed"]
    out["heat_from_perfusion"] = acc["perfusion"]
    out["absorbed_energy"] = acc["wearer"]
    out["stored_energy_change"] = e_end - e0
    out["stored_energy_at_exposure_end"] = stored_end
    out["peak_surface_temperature"] = peaks["surface"]
    out["time_of_peak_surface_temperature"] = peak_t["surface"]
    if basal is not None:
        out["peak_basal_temperature"] = peaks["basal"]
        out["time_of_peak_basal_temperature"] = peak_t["basal"]
    out["face_temperature"] = hist["face"]
    out["basal_temperature"] = hist["basal"]
    out["surface_temperature"] = hist["surface"]
    out["steps"] = steps
    out["rejected_steps"] = rejected
    out["converged"] = ~failed
    if burn is not None:
        out["time_to_first_degree_burn"] = burn.times["first"]
        out["time_to_second_degree_burn"] = burn.times["second"]
        out["time_to_third_degree_burn"] = burn.times["third"]
        out["damage_at_end"] = burn.damage
    if sensor is not None:
        out["sensor_criterion_time"] = sensor.time
        out["exposure_energy_at_criterion"] = sensor.exposure_energy
        out["absorbed_energy"] = sensor.capacity * (T[surface] - sensor.t0)


def _merge(Fn: Fluxes, F2: Fluxes, Fr: Fluxes, keep: np.ndarray, restart: np.ndarray) -> Fluxes:
    """Fluxes at the start of the next step: ``F2`` where kept, ``Fr`` at restarts."""

    def pick(name: str) -> np.ndarray:
        a, b, c = getattr(Fn, name), getattr(F2, name), getattr(Fr, name)
        return np.where(restart, c, np.where(keep, b, a))

    return Fluxes(*(pick(f) for f in ("rhs", "sub", "diag", "sup", "hot", "fixed",
                                       "perfusion", "wearer")))


def _accept(v: dict[str, Any]) -> None:
    """Book-keeping of an accepted step (energies, peaks, damage, sensor) for ``v['sel']``."""
    sel, be, hh, t = v["sel"], v["be"][v["sel"]], v["hh"][v["sel"]], v["t"][v["sel"]]
    Fn, F1, F2, acc = v["Fn"], v["F1"], v["F2"], v["acc"]
    wn = np.where(be, 0.0, _W)
    w1 = np.where(be, 0.0, _W)
    w2 = np.where(be, 1.0, _D)
    for name in ("hot", "fixed", "perfusion", "wearer"):
        a, b, c = getattr(Fn, name)[sel], getattr(F1, name)[sel], getattr(F2, name)[sel]
        acc[name][sel] += hh * (wn * a + w1 * b + w2 * c)
    ef_n, ef1, ef2 = v["ef_n"], v["ef1"][sel], v["ef2"][sel]
    ef_n = ef_n[sel] if np.ndim(ef_n) else np.zeros(sel.size)
    exposure_at_start = acc["exposure"][sel].copy()
    acc["exposure"][sel] += hh * (wn * ef_n + w1 * ef1 + w2 * ef2)
    T, T1, T2 = v["T"][:, sel], v["T1"][:, sel], v["T2"][:, sel]
    t1, t2 = np.where(be, t + hh, t + GAMMA * hh), t + hh
    # pieces: start -> stage -> end (TR-BDF2) or start -> end (backward Euler, stage = end)
    Tm = np.where(be, T2, T1)
    pieces = ((t, t1, T, Tm), (t1, t2, Tm, T2))
    surface, basal, dermis = v["surface"], v["basal"], v["dermis"]
    for ta, tb, A, B in pieces:
        track_peak(v["peaks"]["surface"], v["peak_t"]["surface"], sel, B[surface], tb)
        if basal is not None:
            track_peak(v["peaks"]["basal"], v["peak_t"]["basal"], sel, B[basal], tb)
        dt = tb - ta
        if v["burn"] is not None:
            nonzero = dt > 0.0
            s = sel[nonzero]
            v["burn"].piece(s, ta[nonzero], dt[nonzero], A[basal][nonzero], B[basal][nonzero],
                            A[dermis][nonzero], B[dermis][nonzero])
    sensor = v["sensor"]
    if sensor is not None:
        ef_m = np.where(be, ef2, ef1)
        e_mid = exposure_at_start + np.where(be, hh * ef2, 0.5 * (ef_n + ef_m) * (t1 - t))
        sensor.piece(sel, t, t1, T[surface], Tm[surface], exposure_at_start, ef_n, ef_m)
        sensor.piece(sel, t1, t2, Tm[surface], T2[surface], e_mid, ef_m, ef2)
