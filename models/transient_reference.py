"""Independent per-sample reference of the transient model, for checking the batched stepper.

It integrates the same semi-discrete equations as :func:`plyrisk.models.transient.solve_transient`
on the same grid (node positions from :mod:`plyrisk.models.mesh`), but assembles its own
right-hand side, one sample at a time, in the explicit form ``dT/dt = F(T, t) / C(T)``, and
hands it to :func:`scipy.integrate.solve_ivp` (Radau by default, tight tolerances), restarted at
every jump of the exposure. It shares only the element laws of :mod:`plyrisk.models.elements`
with the stepper; the exposed-face law, the capacities, the perfusion term and the in-depth
absorption are written afresh here. The damage integrals are extra state variables
``dOmega/dt = rate(T_basal)`` (:func:`plyrisk.models.burn.damage_rate`), and the burn times are
events of ``solve_ivp`` (not the in-step interpolation of the stepper). Slow; for tests and the
benchmark only.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from typing import Any, overload

import numpy as np
from numpy.typing import ArrayLike
from scipy.constants import Stefan_Boltzmann as SIGMA
from scipy.integrate import solve_ivp
from scipy.optimize import root
from scipy.sparse import diags

from plyrisk.models.burn import BURN_THRESHOLDS, damage_parameters, damage_rate
from plyrisk.models.elements import contact_heat_flux, gap_heat_flux, solid_heat_flux
from plyrisk.models.exposure import Table, TransientExposure
from plyrisk.models.mesh import Mesh
from plyrisk.models.stack import Gap, Solid
from plyrisk.models.wearer import PrescribedWearer, SensorWearer, SkinWearer, Wearer

_Law = Callable[..., tuple[np.ndarray, np.ndarray, np.ndarray]]
"""An element law of :mod:`plyrisk.models.elements` (flux and its two derivatives)."""


@overload
def _pick(value: Table, i: int) -> Table: ...
@overload
def _pick(value: ArrayLike, i: int) -> float: ...
@overload
def _pick(value: ArrayLike | None, i: int) -> float | None: ...
def _pick(value: ArrayLike | Table | None, i: int) -> float | Table | str | None:
    if value is None or isinstance(value, Table | str):
        return value
    v = np.asarray(value, dtype=float)
    return float(v) if v.ndim == 0 else float(v[i])


def _at(value: float | Table, t: float) -> float:
    return float(value(t)) if isinstance(value, Table) else value


class _Sample:
    """The equations of one sample (index ``i``)."""

    def __init__(self, mesh: Mesh, layers: Sequence[Solid | Gap], wearer: Wearer,
                 exposure: TransientExposure, i: int) -> None:
        x = mesh.node_depth[:, i]
        N = x.size
        self.N = N
        self.cap0 = np.zeros(N)  # c(T) = a + b T per node: C(T) = cap0 + cap1 T
        self.cap1 = np.zeros(N)
        self.perf = np.zeros(N)
        self.links: list[tuple[int, _Law, dict[str, Any]]] = []
        self._cond: tuple[np.ndarray, dict[str, np.ndarray],
                          list[tuple[int, _Law, dict[str, Any]]]] | None = None
        self.fixed: dict[int, float] = {}
        self.arterial = 310.15
        for part in mesh.parts:
            src = part.source
            if part.kind in ("solid", "skin"):
                if part.kind == "solid":
                    assert isinstance(src, Solid)
                    assert src.density is not None and src.specific_heat is not None
                    rho, c = _pick(src.density, i), _pick(src.specific_heat, i)
                    s, tr = _pick(src.specific_heat_slope, i), _pick(src.reference_temperature, i)
                    law = {"conductivity": _pick(src.conductivity, i),
                           "conductivity_slope": _pick(src.conductivity_slope, i),
                           "reference_temperature": tr}
                    w = 0.0
                else:
                    assert isinstance(src, dict)
                    rho, c, s, tr = _pick(src["density"], i), _pick(src["specific_heat"], i), \
                        0.0, 0.0
                    law = {"conductivity": _pick(src["conductivity"], i)}
                    w = _pick(src["perfusion"], i)
                for j in range(part.first, part.last):
                    dx = x[j + 1] - x[j]
                    for node in (j, j + 1):
                        self.cap0[node] += 0.5 * rho * dx * (c - s * tr)
                        self.cap1[node] += 0.5 * rho * dx * s
                        self.perf[node] += 0.5 * w * dx
                    self.links.append((j, solid_heat_flux, dict(law, thickness=dx)))
            elif part.kind == "contact":
                assert isinstance(src, Solid | SkinWearer | SensorWearer | PrescribedWearer)
                self.links.append((part.first, contact_heat_flux,
                                   {"contact_resistance": _pick(src.contact_resistance, i)}))
            elif part.kind == "gap":
                assert isinstance(src, Gap)
                k = next(m for m, layer in enumerate(layers) if layer is src)
                before = layers[k - 1]  # a gap lies between solids, or a solid and the wearer
                after = layers[k + 1] if k + 1 < len(layers) else wearer
                assert isinstance(before, Solid) and not isinstance(after, Gap)
                eps_b = after.emissivity_hot if isinstance(after, Solid) else after.emissivity
                self.links.append((part.first, gap_heat_flux, {
                    "gap_width": _pick(src.width, i),
                    "emissivity_hot_face": _pick(before.emissivity_cold, i),
                    "emissivity_cold_face": _pick(eps_b, i),
                    "orientation": src.orientation, "gap_height": _pick(src.height, i)}))
            elif part.kind == "sensor":
                assert isinstance(src, SensorWearer)
                self.cap0[part.first] += _pick(src.heat_capacity, i)
            elif part.kind == "prescribed":
                assert isinstance(src, PrescribedWearer)
                self.fixed[part.first] = _pick(src.temperature, i)
        if isinstance(wearer, SkinWearer):
            self.fixed[mesh.fixed_nodes[0]] = _pick(wearer.core_temperature, i)
            self.arterial = _pick(wearer.arterial_temperature, i)
        self.free = np.array([j for j in range(N) if j not in self.fixed], dtype=int)
        for j in self.fixed:
            self.perf[j] = 0.0
        exposed = layers[0] if layers else wearer
        assert not isinstance(exposed, Gap)  # the exposed layer is a solid (validated)
        self.eps = _pick(exposed.emissivity_hot if isinstance(exposed, Solid)
                         else exposed.emissivity, i)
        self.share = np.zeros(N)
        self.share[0] = 1.0
        if isinstance(exposed, Solid) and exposed.radiant_transmissivity is not None:
            part = mesh.parts[0]
            tau = _pick(exposed.radiant_transmissivity, i)
            L = x[part.last] - x[part.first]
            self.share[:] = 0.0
            for j in range(part.first, part.last + 1):  # control volume [lo, hi]
                lo = x[j] if j == part.first else 0.5 * (x[j - 1] + x[j])
                hi = x[j] if j == part.last else 0.5 * (x[j] + x[j + 1])
                self.share[j] = tau ** (lo / L) - tau ** (hi / L)
            self.share[part.last] += tau
        e = exposure
        self.e = e
        self.i = i
        self.duration = _pick(e.exposure_duration, i)
        self.amb = _pick(e.ambient_temperature, i)
        self.h_amb = _pick(e.ambient_convection_coefficient, i)
        self.cool = self.amb if e.cooldown_temperature is None else _pick(e.cooldown_temperature, i)
        self.h_cool = self.h_amb if e.cooldown_convection_coefficient is None else _pick(
            e.cooldown_convection_coefficient, i)
        self.s_cool = self.cool if e.cooldown_surroundings_temperature is None else _pick(
            e.cooldown_surroundings_temperature, i)

    def face(self, t: float, phase: int, T0: float) -> tuple[float, float]:
        """Heat into the exposed side: face exchange at node 0 and absorbed flux [W m-2]."""
        e, i = self.e, self.i
        if phase == 0:
            return (self.h_amb * (self.amb - T0) - self.eps * SIGMA * (T0**4 - self.amb**4), 0.0)
        if phase == 2:
            if e.mode == "absorbed_flux":
                return 0.0, 0.0
            return (self.h_cool * (self.cool - T0)
                    - self.eps * SIGMA * (T0**4 - self.s_cool**4), 0.0)
        G = _at(_pick(e.incident_flux, i), t)
        if e.mode == "absorbed_flux":
            return 0.0, G
        Tg = _at(_pick(e.gas_temperature, i), t)
        h = _at(_pick(e.convection_coefficient, i), t)
        Ts = Tg if e.surroundings_temperature is None else _at(
            _pick(e.surroundings_temperature, i), t)
        return h * (Tg - T0) - self.eps * SIGMA * (T0**4 - Ts**4), self.eps * G

    def net(self, t: float, T: np.ndarray, phase: int) -> np.ndarray:
        """Net heat into every node [W m-2]."""
        out = np.zeros(self.N)
        if self._cond is None:  # conduction slices gathered once into arrays
            cond = [(j, kw) for j, law, kw in self.links if law is solid_heat_flux]
            idx = np.array([j for j, _ in cond], dtype=int)
            keys = ("thickness", "conductivity", "conductivity_slope", "reference_temperature")
            arrays = {k: np.array([kw.get(k, 0.0 if k != "reference_temperature" else 293.15)
                                   for _, kw in cond]) for k in keys}
            others = [(j, law, kw) for j, law, kw in self.links if law is not solid_heat_flux]
            self._cond = (idx, arrays, others)
        idx, arrays, others = self._cond
        if idx.size:
            q = solid_heat_flux(T[idx], T[idx + 1], **arrays)[0]
            np.subtract.at(out, idx, q)
            np.add.at(out, idx + 1, q)
        for j, law, kw in others:
            q = law(T[j], T[j + 1], **kw)[0]
            out[j] -= q
            out[j + 1] += q
        out += self.perf * (self.arterial - T)
        q_face, absorbed = self.face(t, phase, T[0])
        out[0] += q_face
        out += self.share * absorbed
        return out

    def full(self, y: np.ndarray) -> np.ndarray:
        T = np.empty(self.N)
        T[self.free] = y[: self.free.size]
        for j, v in self.fixed.items():
            T[j] = v
        return T


def reference_solution(mesh: Mesh, layers: Sequence[Solid | Gap], exposure: TransientExposure,
                       wearer: Wearer, sample: int, *, output_times: ArrayLike = (),
                       damage_model: str = "henriques_1947", method: str = "Radau",
                       rtol: float = 1e-8, atol: float = 1e-7) -> dict[str, Any]:
    """Solve one sample with :func:`scipy.integrate.solve_ivp`.

    Parameters
    ----------
    mesh
        The grid (e.g. from :func:`plyrisk.models.mesh.build_mesh`) [-].
    layers, exposure, wearer
        As for :func:`plyrisk.models.transient.solve_transient` [-].
    sample
        Index of the sample [-].
    output_times
        Times of the returned histories [s].
    damage_model
        Damage parameter set at the basal depth [-].
    method, rtol, atol
        :func:`scipy.integrate.solve_ivp` options [-]; ``atol`` in kelvin.

    Returns
    -------
    dict
        ``initial`` (node temperatures) [K], ``basal`` and ``surface`` and ``faces`` (at
        ``output_times``) [K], ``damage_at_end`` [-], ``time_to_first_degree_burn``,
        ``time_to_second_degree_burn``, ``time_to_third_degree_burn`` [s] (inf if not reached),
        ``peak_basal_temperature`` [K], ``final`` (node temperatures) [K].
    """
    s = _Sample(mesh, layers, wearer, exposure, sample)
    free = s.free
    start = s.full(np.full(free.size, s.amb))
    start[free] = np.linspace(s.amb, max(s.fixed.values(), default=s.amb), s.N)[free]
    sol = root(lambda y: s.net(0.0, s.full(y), 0)[free], start[free], method="hybr",
               options={"xtol": 1e-13})
    T0 = s.full(sol.x)
    skin = isinstance(wearer, SkinWearer)
    basal = mesh.basal_node
    params = damage_parameters(damage_model)
    thresholds = [BURN_THRESHOLDS[k] for k in ("first_degree", "second_degree", "third_degree")]
    times = [np.inf, np.inf, np.inf]
    tout = np.asarray(output_times, dtype=float)
    hist = np.full((tout.size, s.N), np.nan)
    if tout.size and tout[0] <= 0.0:
        hist[tout <= 0.0] = T0
    cap = s.cap0[free]
    cap1 = s.cap1[free]
    nf = free.size
    sparsity = diags([1.0, 1.0, 1.0], [-1, 0, 1], shape=(nf, nf)).tolil()
    sparsity.resize(nf + 1, nf + 1)
    if skin:
        sparsity[nf, :nf] = 1
    y = np.concatenate([T0[free], [0.0]])
    kinks = sorted({k for k in exposure.jump_times() if k > 0.0} | {s.duration, exposure.horizon})
    edges = [0.0] + [k for k in kinks if k <= exposure.horizon]
    peak = T0[basal] if skin else np.nan
    for a, b in zip(edges[:-1], edges[1:], strict=True):
        if b <= a:
            continue
        phase = 1 if a < s.duration else 2

        def rhs(t: float, y: np.ndarray, phase: int = phase) -> np.ndarray:
            T = s.full(y)
            dT = s.net(t, T, phase)[free] / (cap + cap1 * y[:nf])
            dO = float(damage_rate(T[basal], parameters=params)) if skin else 0.0
            return np.concatenate([dT, [dO]])

        events = [_ThresholdEvent(thr) for thr in thresholds]
        inside = tout[(tout > a) & (tout <= b)]
        r = solve_ivp(rhs, (a, b), y, method=method, rtol=rtol,
                      atol=np.concatenate([np.full(nf, atol), [1e-12]]),
                      t_eval=np.union1d(inside, [b]), events=events if skin else None,
                      jac_sparsity=sparsity, dense_output=skin)
        if not r.success:
            raise RuntimeError(f"reference solve failed on [{a}, {b}] s: {r.message}")
        if inside.size:
            for t_i, col in zip(r.t, r.y.T, strict=True):
                hit = np.flatnonzero(tout == t_i)
                if hit.size:
                    hist[hit[0]] = s.full(col)
        if skin:
            for m, te in enumerate(r.t_events):
                if te.size and not np.isfinite(times[m]):
                    times[m] = float(te[0])
            assert basal is not None  # skin has a basal node
            fine = np.linspace(a, b, 2001)
            peak = max(peak, float(np.max(r.sol(fine)[int(np.searchsorted(free, basal))])))
        y = r.y[:, -1]
    final = s.full(y)
    return {
        "initial": T0, "final": final, "faces": hist[:, list(mesh.face_nodes)],
        "basal": hist[:, basal] if skin else None, "surface": hist[:, mesh.surface_node],
        "damage_at_end": float(y[-1]) if skin else np.nan,
        "time_to_first_degree_burn": times[0], "time_to_second_degree_burn": times[1],
        "time_to_third_degree_burn": times[2], "peak_basal_temperature": peak,
        "sensor": isinstance(wearer, SensorWearer),
    }


class _ThresholdEvent:
    """A rising-crossing event of the damage state at ``threshold`` (for ``solve_ivp``)."""

    direction = 1.0

    def __init__(self, threshold: float) -> None:
        self.threshold = threshold

    def __call__(self, t: float, y: np.ndarray) -> float:
        return y[-1] - self.threshold
