"""The semi-discrete equations of the transient model on a :class:`~plyrisk.models.mesh.Mesh`.

For every free node ``i`` (hot side → wearer)

``dH_i/dt = q_{i-1} - q_i + w_i (T_a - T_i) + s_i Q_rad + [i = 0] q_face``          (T.1)

with ``H_i(T) = C0_i T + C1_i T^2 / 2`` the enthalpy of the node's control volume (half of each
adjoining slice, specific heat linear in temperature), ``q_i`` the heat flow through link ``i``
from the element laws of :mod:`plyrisk.models.elements` (conduction through a slice, contact,
air gap: conduction in parallel with grey radiation), ``w_i`` the Pennes perfusion capacity rate
of the node's tissue, ``Q_rad`` the radiant flux absorbed by the assembly with ``s_i`` the share
deposited at node ``i`` (all at the exposed face unless the exposed layer is semi-transparent),
and ``q_face`` the convective and radiative exchange of the exposed face
(:func:`plyrisk.models.boundary.hot_environment_flux` with no source term). Fixed nodes (the
base of the subcutis, a prescribed wearer surface) keep their temperature.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, replace
from typing import Any

import numpy as np
from numpy.typing import ArrayLike
from scipy.constants import Stefan_Boltzmann as SIGMA

from plyrisk.models.boundary import hot_environment_flux
from plyrisk.models.elements import contact_heat_flux, effective_emissivity, gap_kernel
from plyrisk.models.kernels import assemble
from plyrisk.models.mesh import Mesh, Part
from plyrisk.models.stack import Gap, Solid
from plyrisk.models.wearer import PrescribedWearer, SensorWearer, SkinWearer, Wearer


def _row(value: ArrayLike | None, n: int) -> np.ndarray:
    return np.broadcast_to(np.asarray(value, dtype=float), (n,)).copy()


@dataclass(frozen=True)
class Problem:
    """Coefficients of (T.1) for a working set of samples; arrays ``(nodes or links, k)``.

    Attributes
    ----------
    c0, c1
        Enthalpy coefficients of every node [J m-2 K-1], [J m-2 K-2].
    c0_assembly, c1_assembly
        The assembly's share of ``c0, c1`` (no skin or sensor) [J m-2 K-1], [J m-2 K-2].
    perfusion
        Perfusion capacity rate times control-volume thickness, ``w_i`` [W m-2 K-1].
    arterial
        Arterial temperature [K].
    radiant_share
        Share ``s_i`` of the absorbed radiant flux deposited at each node [-].
    emissivity
        Emissivity of the exposed face [-].
    fixed
        Boolean mask of fixed nodes (nodes,) [-]; ``fixed_value`` their temperatures [K].
    cond, contact, gaps
        Link groups: index arrays and per-link parameters (``cond`` and ``contact`` by name;
        ``gaps`` as ``(link, keywords of gap_kernel)`` pairs).
    radiation, convection_enabled
        Gap options [-].
    surface
        The wearer's surface node [-].
    """

    c0: np.ndarray
    c1: np.ndarray
    c0_assembly: np.ndarray
    c1_assembly: np.ndarray
    perfusion: np.ndarray
    arterial: np.ndarray
    radiant_share: np.ndarray
    emissivity: np.ndarray
    fixed: np.ndarray
    fixed_value: np.ndarray
    cond: dict[str, np.ndarray]
    contact: dict[str, np.ndarray]
    gaps: tuple[tuple[int, dict[str, Any]], ...]
    surface: int
    radiation: str
    convection_enabled: bool

    @property
    def nodes(self) -> int:
        """Number of nodes [-]."""
        return self.c0.shape[0]

    def take(self, idx: np.ndarray) -> Problem:
        """The problem restricted to the samples ``idx`` (last axis)."""

        def t(x: np.ndarray) -> np.ndarray:  # C order kept: the kernels run over samples innermost
            if isinstance(x, np.ndarray) and x.ndim >= 1 and x.shape[-1] == self.c0.shape[1]:
                return np.ascontiguousarray(x[..., idx])
            return x

        def td(d: dict[str, Any]) -> dict[str, Any]:
            return {k: t(v) for k, v in d.items()}

        return replace(
            self,
            c0=t(self.c0), c1=t(self.c1), c0_assembly=t(self.c0_assembly),
            c1_assembly=t(self.c1_assembly), perfusion=t(self.perfusion),
            arterial=t(self.arterial), radiant_share=t(self.radiant_share),
            emissivity=t(self.emissivity), fixed_value=t(self.fixed_value),
            cond=td(self.cond), contact=td(self.contact),
            gaps=tuple((idx_g, td(g)) for idx_g, g in self.gaps),
        )


def build_problem(mesh: Mesh, layers: Sequence[Solid | Gap], wearer: Wearer, n: int, *,
                  radiation: str = "exact", convection_enabled: bool = False) -> Problem:
    """Assemble the coefficients of (T.1) from the mesh, the layers and the wearer.

    Parameters
    ----------
    mesh
        Node chain from :func:`plyrisk.models.mesh.build_mesh` [-].
    layers
        Solids and gaps, hot side first [-].
    wearer
        The wearer side [-].
    n
        Samples [-].
    radiation, convection_enabled
        Gap options as for :func:`plyrisk.models.network.solve_network` [-].

    Returns
    -------
    Problem
    """
    N = mesh.nodes
    x = mesh.node_depth
    c0 = np.zeros((N, n))
    c1 = np.zeros((N, n))
    perf = np.zeros((N, n))
    share = np.zeros((N, n))
    share[0] = 1.0
    fixed = np.zeros(N, dtype=bool)
    fixed_value = np.zeros((N, n))
    cond: dict[str, list[Any]] = {"idx": [], "thickness": [], "conductivity": [],
                                  "conductivity_slope": [], "reference_temperature": []}
    contact: dict[str, list[Any]] = {"idx": [], "contact_resistance": []}
    gaps: list[tuple[int, dict[str, Any]]] = []
    arterial = np.full(n, 310.15)
    for part in mesh.parts:
        src = part.source
        if part.kind in ("solid", "skin"):
            if part.kind == "solid":
                assert isinstance(src, Solid)
                rho, c_ref = _row(src.density, n), _row(src.specific_heat, n)
                slope, t_ref = _row(src.specific_heat_slope, n), _row(src.reference_temperature, n)
                k, ks = _row(src.conductivity, n), _row(src.conductivity_slope, n)
                w = np.zeros(n)
            else:
                assert isinstance(src, dict)
                rho, c_ref = _row(src["density"], n), _row(src["specific_heat"], n)
                slope, t_ref = np.zeros(n), np.full(n, 293.15)
                k, ks = _row(src["conductivity"], n), np.zeros(n)
                w = _row(src["perfusion"], n)
            for j in range(part.first, part.last):
                dx = x[j + 1] - x[j]
                half = 0.5 * rho * dx
                for node in (j, j + 1):  # c(T) = (c_ref - slope T_ref) + slope T
                    c0[node] += half * (c_ref - slope * t_ref)
                    c1[node] += half * slope
                    perf[node] += 0.5 * w * dx
                cond["idx"].append(j)
                cond["thickness"].append(dx)
                cond["conductivity"].append(k)
                cond["conductivity_slope"].append(ks)
                cond["reference_temperature"].append(t_ref)
        elif part.kind == "contact":
            assert isinstance(src, Solid | SkinWearer | SensorWearer | PrescribedWearer)
            contact["idx"].append(part.first)
            contact["contact_resistance"].append(_row(src.contact_resistance, n))
        elif part.kind == "gap":
            assert isinstance(src, Gap)
            eps_a, eps_b = _gap_emissivities(part, mesh, layers, wearer)
            width = _row(src.width, n)
            gaps.append((part.first, {
                "inverse_width": 1.0 / width,
                "radiative_factor": effective_emissivity(eps_a, eps_b) * SIGMA,
                "aspect_ratio": _row(src.height, n) / width,
                "orientation": src.orientation,
            }))
        elif part.kind == "sensor":
            assert isinstance(src, SensorWearer)
            c0[part.first] += _row(src.heat_capacity, n)
        elif part.kind == "prescribed":
            assert isinstance(src, PrescribedWearer)
            fixed[part.first] = True
            fixed_value[part.first] = _row(src.temperature, n)
    c0_assembly = c0.copy()
    c1_assembly = c1.copy()
    c0_assembly[mesh.surface_node:] = 0.0
    c1_assembly[mesh.surface_node:] = 0.0
    if isinstance(wearer, SkinWearer):
        base = mesh.fixed_nodes[0]
        fixed[base] = True
        fixed_value[base] = _row(wearer.core_temperature, n)
        arterial = _row(wearer.arterial_temperature, n)
        # the assembly's half slice at a shared surface node counts for the assembly
        _assembly_share(mesh, layers, n, c0_assembly, c1_assembly)
    elif isinstance(wearer, SensorWearer):
        _assembly_share(mesh, layers, n, c0_assembly, c1_assembly)
    perf[fixed] = 0.0
    if layers and isinstance(layers[0], Solid) and layers[0].radiant_transmissivity is not None:
        share = _in_depth_shares(mesh, layers[0], n)
    exposed = layers[0] if layers else wearer
    assert not isinstance(exposed, Gap)  # the exposed layer is a solid (validated)
    emissivity = _row(exposed.emissivity_hot if isinstance(exposed, Solid) else exposed.emissivity,
                      n)
    # every link carries conduction parameters (zero conductance where it is a contact or a
    # gap, whose own laws overwrite it), so the conduction law runs on slices of T
    cond_arrays: dict[str, np.ndarray] = {}
    links = N - 1
    defaults = {"thickness": 1.0, "conductivity": 0.0, "conductivity_slope": 0.0,
                "reference_temperature": 0.0}
    for key, default in defaults.items():
        full = np.full((links, n), default)
        if cond["idx"]:
            full[np.asarray(cond["idx"], dtype=np.intp)] = np.stack(cond[key])
        cond_arrays[key] = full
    contact_arrays = {k: (np.asarray(v, dtype=np.intp) if k == "idx" else np.stack(v))
                      for k, v in contact.items() if len(contact["idx"])}
    return Problem(c0, c1, c0_assembly, c1_assembly, perf, arterial, share, emissivity, fixed,
                   fixed_value, cond_arrays, contact_arrays, tuple(gaps), mesh.surface_node,
                   radiation, bool(convection_enabled))


def _gap_emissivities(part: Part, mesh: Mesh, layers: Sequence[Solid | Gap],
                      wearer: Wearer) -> tuple[ArrayLike, ArrayLike]:
    i = next(j for j, layer in enumerate(layers) if layer is part.source)
    before = layers[i - 1]  # a gap lies between solids, or between a solid and the wearer
    after = layers[i + 1] if i + 1 < len(layers) else wearer
    assert isinstance(before, Solid) and not isinstance(after, Gap)
    eps_a = before.emissivity_cold
    eps_b = after.emissivity_hot if isinstance(after, Solid) else after.emissivity
    return eps_a, eps_b


def _assembly_share(mesh: Mesh, layers: Sequence[Solid | Gap], n: int, c0a: np.ndarray,
                    c1a: np.ndarray) -> None:
    """Give back the assembly's half slice at a surface node shared with the last solid."""
    last = [p for p in mesh.parts if p.kind == "solid"]
    if not last or last[-1].last != mesh.surface_node:
        return
    part = last[-1]
    src = part.source
    assert isinstance(src, Solid)
    j = part.last - 1
    dx = mesh.node_depth[j + 1] - mesh.node_depth[j]
    half = 0.5 * _row(src.density, n) * dx
    slope = _row(src.specific_heat_slope, n)
    c0a[part.last] = half * (_row(src.specific_heat, n) - slope * _row(src.reference_temperature,
                                                                          n))
    c1a[part.last] = half * slope


def _in_depth_shares(mesh: Mesh, layer: Solid, n: int) -> np.ndarray:
    """Beer–Lambert shares of the absorbed radiant flux in the exposed layer (Torvi & Dale 1999,
    Fire Technol 35:210-231): ``1 - tau`` absorbed along ``exp(-kappa x)``, ``kappa = -ln(tau)/L``,
    integrated exactly over each node's control volume; ``tau`` at the layer's cold face."""
    part = mesh.parts[0]
    x = mesh.node_depth
    L = _row(layer.thickness, n)
    tau = _row(layer.radiant_transmissivity, n)
    kappa = -np.log(tau) / L
    share = np.zeros((mesh.nodes, n))
    for node in range(part.first, part.last + 1):
        lo = x[node] if node == part.first else 0.5 * (x[node - 1] + x[node])
        hi = x[node] if node == part.last else 0.5 * (x[node] + x[node + 1])
        share[node] = np.exp(-kappa * lo) - np.exp(-kappa * hi)
    share[part.last] += tau
    return share


@dataclass(frozen=True)
class Fluxes:
    """Right-hand side of (T.1) at a state, its tridiagonal Jacobian and boundary terms.

    ``rhs`` (nodes, k) [W m-2]; ``sub, diag, sup`` its derivatives [W m-2 K-1];
    ``hot`` heat entering at the exposed side (face exchange + absorbed radiation),
    ``fixed`` heat flowing into fixed nodes, ``perfusion`` heat added by perfusion,
    ``wearer`` heat reaching the wearer's surface node, all (k,) [W m-2].
    """

    rhs: np.ndarray
    sub: np.ndarray
    diag: np.ndarray
    sup: np.ndarray
    hot: np.ndarray
    fixed: np.ndarray
    perfusion: np.ndarray
    wearer: np.ndarray


def fluxes(p: Problem, T: np.ndarray, face: dict[str, np.ndarray],
           absorbed: np.ndarray) -> Fluxes:
    """Evaluate (T.1) at temperatures ``T`` (nodes, k).

    Parameters
    ----------
    p
        The problem [-].
    T
        Node temperatures [K].
    face
        Exposed-face exchange: ``gas_temperature`` [K], ``convection_coefficient``
        [W m-2 K-1], ``surroundings_temperature`` [K], ``emissivity`` [-] (0 for none).
    absorbed
        Radiant (or prescribed) flux absorbed by the assembly, ``Q_rad`` [W m-2].

    Returns
    -------
    Fluxes
    """
    N, k = T.shape
    q = np.empty((N - 1, k))
    rhs = np.empty((N, k))
    sub = np.empty((N, k))
    diag = np.empty((N, k))
    sup = np.empty((N, k))
    psum = np.empty(k)
    c = p.cond
    assemble(T, c["thickness"], c["conductivity"], c["conductivity_slope"],
             c["reference_temperature"], p.perfusion, p.arterial, p.radiant_share,
             np.broadcast_to(np.asarray(absorbed, dtype=float), (k,)), q, rhs, sub, diag, sup,
             psum)
    others: list[tuple[Sequence[int] | np.ndarray, Sequence[np.ndarray]]] = []
    if p.contact:
        ic = p.contact["idx"]
        others.append((ic, contact_heat_flux(T[ic], T[ic + 1],
                                             contact_resistance=p.contact["contact_resistance"])))
    for i, g in p.gaps:
        others.append(([i], [x[None] for x in gap_kernel(
            T[i], T[i + 1], radiation=p.radiation, convection_enabled=p.convection_enabled,
            **g)]))
    for idx, (qo, qa, qb) in others:  # massless links with their own laws
        for m, j in enumerate(idx):
            q[j] = qo[m]
            rhs[j] -= qo[m]
            rhs[j + 1] += qo[m]
            diag[j] -= qa[m]
            diag[j + 1] += qb[m]
            sub[j + 1] = qa[m]
            sup[j] = -qb[m]
    q_face, dq_face = hot_environment_flux(T[0], incident_flux=0.0, **face)
    rhs[0] += q_face
    diag[0] += dq_face
    into_fixed = np.zeros(k)
    for node in np.flatnonzero(p.fixed):
        if node > 0:
            into_fixed = into_fixed + q[node - 1]
    wearer = q[p.surface - 1] if p.surface > 0 else q_face + absorbed
    return Fluxes(rhs, sub, diag, sup, q_face + absorbed, into_fixed, psum, wearer)


def node_sum(x: np.ndarray) -> np.ndarray:
    """Sum over nodes (axis 0), row by row, so that the result never depends on how many
    samples share the array (numpy's pairwise summation of a single column would differ in
    the last bit)."""
    total = x[0].copy()
    for row in x[1:]:
        total += row
    return total


def enthalpy(p: Problem, T: np.ndarray) -> np.ndarray:
    """``H_i(T)`` of every node [J m-2] (relative to 0 K of the linear form)."""
    return T * (p.c0 + 0.5 * p.c1 * T)


def capacity(p: Problem, T: np.ndarray) -> np.ndarray:
    """``dH_i/dT`` [J m-2 K-1]."""
    return p.c0 + p.c1 * T
