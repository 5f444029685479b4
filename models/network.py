"""Vectorized steady solve of the layer network, hot (exposed) side → cold (wearer) side.

The unknowns are the face temperatures ``T_0 … T_M`` between the ``M`` elements of the network
(solids, contact resistances, gaps). Each unknown face has an energy balance

``F_j = q_{j-1}(T_{j-1}, T_j) - q_j(T_j, T_{j+1}) = 0``                                (N.1)

with ``q_{-1}`` the net flux delivered by the hot-side boundary and ``q_M`` the flux taken by the
cold-side boundary; faces held at a prescribed temperature have ``F_j = T_j - T_fixed``. The
Jacobian of (N.1) is tridiagonal, so each Newton step is one Thomas sweep, vectorized over all
samples. Steps are damped so that no face temperature changes by more than half its value in
one iteration (N.3); the start is the series network with every element linearized (N.4). A
sample is converged when its Newton step, or the a posteriori bound on the error left after
that step (N.2), is below the tolerance; it is then frozen, so every
sample's result is independent of which other samples share its chunk.
"""

from __future__ import annotations

import warnings
from collections.abc import Sequence
from dataclasses import dataclass, fields, replace
from typing import Any, cast

import numpy as np
from numpy.typing import ArrayLike
from scipy.constants import Stefan_Boltzmann as SIGMA

from plyrisk.models import air, convection
from plyrisk.models.boundary import (
    ColdEnvironment,
    ColdSide,
    ColdSurface,
    HotEnvironment,
    HotFlux,
    HotSide,
    HotTemperature,
    cold_environment_flux,
    hot_environment_flux,
)
from plyrisk.models.elements import (
    RADIATION_MODES,
    contact_heat_flux,
    effective_emissivity,
    gap_heat_flow_parts,
    gap_kernel,
    solid_heat_flux,
)
from plyrisk.models.outputs import OutputSpec
from plyrisk.models.stack import Element, Gap, Solid, StackError, validate_stack

DEFAULT_CHUNK_SIZE = 8192
"""Samples solved together; small enough for the working arrays to stay in cache."""


NETWORK_OUTPUTS: tuple[OutputSpec, ...] = (
    OutputSpec("inner_surface_temperature", (), "K", "inner-surface temperature"),
    OutputSpec("heat_flux", (), "W m-2", "heat flux through the assembly"),
    OutputSpec("interface_temperature", ("interface",), "K", "face temperature"),
    OutputSpec("layer_temperature_drop", ("layer",), "K",
               "temperature drop across each element"),
    OutputSpec("layer_resistance", ("layer",), "m2 K W-1",
               "effective thermal resistance of each element"),
    OutputSpec("radiative_share", ("layer",), "1",
               "fraction of each gap's heat flow carried by radiation"),
    OutputSpec("rayleigh_number", ("layer",), "1", "Rayleigh number of each gap"),
    OutputSpec("convection_onset", ("layer",), "1", "gap past the onset of natural convection",
               "bool"),
    OutputSpec("converged", (), "1", "sample converged to a physically valid solution", "bool"),
    OutputSpec("iterations", (), "1", "Newton iterations", "i4"),
    OutputSpec("air_range_exceeded", (), "1", "a gap's mean temperature was outside 250-1500 K",
               "bool"),
)
"""The per-sample outputs of :class:`NetworkSolution` (its array fields), declared once: the
engine derives the propagation's fields, the store and the dataset variables from this table."""


@dataclass(frozen=True)
class NetworkSolution:
    """Steady solution of the network for ``n`` samples.

    The array fields are the per-sample outputs declared in :data:`NETWORK_OUTPUTS` (name,
    dimensions after the sample axis, units, meaning): e.g. ``interface_temperature`` has shape
    ``(n, M + 1)`` [K], face temperatures hot → cold, and ``layer_resistance`` ``(n, M)``
    [m2 K W-1], the effective resistance ``(T_a - T_b) / q`` of each element. Gap-only outputs
    are NaN for other elements.

    Attributes
    ----------
    interface_names, element_names, element_kinds, element_layers
        Labels of the faces and elements; ``element_layers`` gives the index in the input stack
        of the layer each element belongs to (a contact belongs to the solid before it).
    inner_surface_index
        Column of ``interface_temperature`` holding the inner-surface temperature.

    Samples that did not converge carry NaN in every numeric output.
    """

    interface_temperature: np.ndarray
    heat_flux: np.ndarray
    inner_surface_temperature: np.ndarray
    layer_resistance: np.ndarray
    layer_temperature_drop: np.ndarray
    radiative_share: np.ndarray
    rayleigh_number: np.ndarray
    convection_onset: np.ndarray
    converged: np.ndarray
    iterations: np.ndarray
    air_range_exceeded: np.ndarray
    interface_names: tuple[str, ...]
    element_names: tuple[str, ...]
    element_kinds: tuple[str, ...]
    element_layers: tuple[int, ...]
    inner_surface_index: int


@dataclass(frozen=True)
class _Element:
    kind: str
    name: str
    layer: int
    params: dict


def _build_elements(layers: Sequence[Element], cold_side: ColdSide) -> list[_Element]:
    """Flatten the stack into network elements, resolving the emissivities that face each gap."""
    elements: list[_Element] = []
    for i, layer in enumerate(layers):
        if isinstance(layer, Solid):
            elements.append(
                _Element(
                    "solid",
                    layer.name,
                    i,
                    {
                        "thickness": layer.thickness,
                        "conductivity": layer.conductivity,
                        "conductivity_slope": layer.conductivity_slope,
                        "reference_temperature": layer.reference_temperature,
                    },
                )
            )
            if layer.contact_resistance is not None:
                elements.append(
                    _Element(
                        "contact",
                        f"{layer.name} contact",
                        i,
                        {"contact_resistance": layer.contact_resistance},
                    )
                )
        elif isinstance(layer, Gap):
            # a validated stack: a gap lies between solids, or ends at a surface cold side
            before = cast(Solid, layers[i - 1])
            after = cast(Solid, layers[i + 1]) if i + 1 < len(layers) else None
            eps_b = (after.emissivity_hot if after is not None
                     else cast(ColdSurface, cold_side).emissivity)
            elements.append(
                _Element(
                    "gap",
                    layer.name,
                    i,
                    {
                        "gap_width": layer.width,
                        "emissivity_hot_face": before.emissivity_cold,
                        "emissivity_cold_face": eps_b,
                        "orientation": layer.orientation,
                        "gap_height": layer.height,
                    },
                )
            )
        else:  # pragma: no cover - validate_stack rejects other types
            raise StackError(f"element {i} is not a Solid or a Gap", index=i)
    return elements


def interface_names(layers: Sequence[Element], cold_side: ColdSide) -> tuple[str, ...]:
    """Names of the faces of the network, hot (exposed) side first, as in ``NetworkSolution``.

    Parameters
    ----------
    layers
        Solids and gaps, hot side first.
    cold_side
        The cold-side boundary (a :class:`~plyrisk.models.boundary.ColdSurface` adds the skin
        face).

    Returns
    -------
    tuple of str
    """
    return _interface_names(_build_elements(list(layers), cold_side), cold_side)


def _interface_names(elements: list[_Element], cold_side: ColdSide) -> tuple[str, ...]:
    names = ["exposed face"]
    for a, b in zip(elements[:-1], elements[1:], strict=True):
        if b.kind == "contact":
            names.append(f"{a.name} cold face")
        elif a.kind == "contact":
            names.append(f"{b.name} hot face")
        else:
            names.append(f"{a.name} | {b.name}")
    names.append("skin surface" if isinstance(cold_side, ColdSurface) else "inner face")
    return tuple(names)


def _gap_constants(el: _Element) -> dict:
    p = el.params
    width = np.asarray(p["gap_width"], dtype=float)
    return {
        "inverse_width": 1.0 / width,
        "radiative_factor": effective_emissivity(
            p["emissivity_hot_face"], p["emissivity_cold_face"]
        )
        * SIGMA,
        "aspect_ratio": np.asarray(p["gap_height"]) / width,
        "orientation": p["orientation"],
    }


def _element_flux(el: _Element, ta: np.ndarray, tb: np.ndarray, *, radiation: str,
                  convection_enabled: bool, gap: dict[str, Any] | None = None,
                  ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    if el.kind == "solid":
        return solid_heat_flux(ta, tb, **el.params)
    if el.kind == "contact":
        return contact_heat_flux(ta, tb, **el.params)
    return gap_kernel(ta, tb, radiation=radiation, convection_enabled=convection_enabled,
                      **cast(dict[str, Any], gap))


def _sample_count(*objects: Any) -> int:
    n = 1
    for obj in objects:
        for f in fields(obj):
            v = getattr(obj, f.name)
            if isinstance(v, str) or v is None:
                continue
            shape = np.shape(v)
            if len(shape) > 1:
                raise StackError(
                    f"{getattr(obj, 'name', type(obj).__name__)}: {f.name} must be a scalar or a "
                    f"1-D array of samples, got shape {shape}",
                    quantity=f.name,
                )
            if shape:
                if n not in (1, shape[0]) and shape[0] != 1:
                    raise StackError(
                        f"{getattr(obj, 'name', type(obj).__name__)}: {f.name} has {shape[0]} "
                        f"samples where others have {n}",
                        quantity=f.name,
                    )
                n = max(n, shape[0])
    return n


def _slice(obj: Any, sl: slice, n: int) -> Any:
    changes = {}
    for f in fields(obj):
        v = getattr(obj, f.name)
        if not isinstance(v, str) and np.ndim(v) == 1 and np.shape(v)[0] == n:
            changes[f.name] = np.asarray(v, dtype=float)[sl]
    return replace(obj, **changes) if changes else obj


def solve_network(
    layers: Sequence[Element],
    hot_side: HotSide,
    cold_side: ColdSide,
    *,
    radiation: str = "exact",
    convection_enabled: bool = False,
    tolerance: float = 1e-6,
    max_iterations: int = 100,
    chunk_size: int = DEFAULT_CHUNK_SIZE,
    validate: bool = True,
) -> NetworkSolution:
    """Solve the steady layer network for every sample.

    Parameters
    ----------
    layers
        Solids and gaps, hot (exposed) side first; numeric fields scalars or ``(n,)`` arrays.
    hot_side
        Boundary condition of the exposed face (:class:`plyrisk.models.boundary.HotFlux`,
        :class:`~plyrisk.models.boundary.HotTemperature` or
        :class:`~plyrisk.models.boundary.HotEnvironment`).
    cold_side
        Boundary condition on the wearer side (:class:`plyrisk.models.boundary.ColdTemperature`,
        :class:`~plyrisk.models.boundary.ColdSurface` or
        :class:`~plyrisk.models.boundary.ColdEnvironment`).
    radiation
        Gap radiation: ``"exact"`` (``sigma (T1^4 - T2^4)``) or ``"linearized"``.
    convection_enabled
        Apply natural-convection correlations in gaps.
    tolerance
        Convergence: largest Newton step of any face temperature [K].
    max_iterations
        Newton iterations before a sample is declared not converged.
    chunk_size
        Samples solved together; the result does not depend on it.
    validate
        Check every element, boundary and the arrangement first.

    Returns
    -------
    NetworkSolution

    Raises
    ------
    plyrisk.models.stack.StackError
        (a ``ValueError``) naming the layer, the quantity and the bad value.
    ValueError
        For an unknown ``radiation`` mode or a non-positive ``tolerance``.

    Examples
    --------
    One fabric between two prescribed face temperatures conducts by Fourier's law,
    ``q = k (T_hot - T_cold) / L``; here two samples of its conductivity:

    >>> from plyrisk.models.boundary import ColdTemperature, HotTemperature
    >>> from plyrisk.models.network import solve_network
    >>> from plyrisk.models.stack import Gap, Solid
    >>> fabric = Solid("fabric", thickness=1e-3, conductivity=[0.04, 0.05])
    >>> solution = solve_network([fabric], HotTemperature(343.15), ColdTemperature(303.15))
    >>> solution.heat_flux.round(3)
    array([1600., 2000.])
    >>> solution.converged
    array([ True,  True])

    A shell, an air gap and a liner; the gap passes heat by conduction and radiation:

    >>> layers = [Solid("shell", thickness=1e-3, conductivity=0.05), Gap("air", width=3e-3),
    ...           Solid("liner", thickness=2e-3, conductivity=0.04)]
    >>> solution = solve_network(layers, HotTemperature(343.15), ColdTemperature(303.15))
    >>> solution.interface_names
    ('exposed face', 'shell | air', 'air | liner', 'inner face')
    >>> (solution.interface_temperature - 273.15).round(1)
    array([[70. , 64. , 45.1, 30. ]])
    >>> solution.radiative_share.round(2)
    array([[ nan, 0.41,  nan]])
    """
    if radiation not in RADIATION_MODES:
        raise ValueError(f"radiation {radiation!r} is not one of {', '.join(RADIATION_MODES)}")
    if not tolerance > 0:
        raise ValueError(f"tolerance must be positive, got {tolerance!r}")
    if int(max_iterations) < 1:
        raise ValueError(f"max_iterations must be at least 1, got {max_iterations!r}")
    if int(chunk_size) < 1:
        raise ValueError(f"chunk_size must be at least 1, got {chunk_size!r}")
    layers = list(layers)
    if validate:
        validate_stack(layers, hot_side, cold_side)
    n = _sample_count(*layers, hot_side, cold_side)
    elements = _build_elements(layers, cold_side)
    m = len(elements)
    out = {  # every chunk writes its rows straight into these
        "interface_temperature": np.empty((n, m + 1)),
        "heat_flux": np.empty(n),
        "inner_surface_temperature": np.empty(n),
        "layer_resistance": np.empty((n, m)),
        "layer_temperature_drop": np.empty((n, m)),
        "radiative_share": np.empty((n, m)),
        "rayleigh_number": np.empty((n, m)),
        "convection_onset": np.empty((n, m), dtype=bool),
        "converged": np.empty(n, dtype=bool),
        "iterations": np.empty(n, dtype=np.int64),
        "air_range_exceeded": np.empty(n, dtype=bool),
    }
    inner = m
    for start in range(0, n, int(chunk_size)):
        sl = slice(start, min(start + int(chunk_size), n))
        inner = _solve_chunk(
            [_slice(layer, sl, n) for layer in layers],
            _slice(hot_side, sl, n),
            _slice(cold_side, sl, n),
            sl.stop - sl.start,
            {name: array[sl] for name, array in out.items()},
            radiation=radiation,
            convection_enabled=convection_enabled,
            tolerance=float(tolerance),
            max_iterations=int(max_iterations),
        )
    solution = NetworkSolution(
        **out,
        interface_names=_interface_names(elements, cold_side),
        element_names=tuple(el.name for el in elements),
        element_kinds=tuple(el.kind for el in elements),
        element_layers=tuple(el.layer for el in elements),
        inner_surface_index=inner,
    )
    if np.any(solution.air_range_exceeded):
        warnings.warn(
            "gap mean temperatures outside 250–1500 K in some samples: air properties are "
            "extrapolated there (see NetworkSolution.air_range_exceeded)",
            RuntimeWarning,
            stacklevel=2,
        )
    return solution


def _full(value: ArrayLike, n: int) -> np.ndarray:
    return np.broadcast_to(np.asarray(value, dtype=float), (n,)).copy()


@dataclass(frozen=True)
class _Boundaries:
    """The boundary data of one chunk, in the form the residual needs."""

    hot_fixed: bool
    cold_fixed: bool
    hot_flux: Any          # HotFlux: the imposed flux [W m-2]; else None
    hot_kw: dict[str, Any] | None   # HotEnvironment: keywords of hot_environment_flux
    cold_kw: dict[str, Any] | None  # ColdEnvironment: keywords of cold_environment_flux
    t_cold: np.ndarray     # reference cold-side temperature of the starting field [K]


def _boundaries(layers: list[Element], hot_side: HotSide, cold_side: ColdSide,
                n: int) -> _Boundaries:
    """Boundary data and the reference (cold) temperature for the starting field."""
    cold_kw = None
    if isinstance(cold_side, ColdEnvironment):
        t_cold = _full(cold_side.ambient_temperature, n)
        cold_surround = (
            cold_side.surroundings_temperature
            if cold_side.surroundings_temperature is not None
            else cold_side.ambient_temperature
        )
        cold_kw = {
            "ambient_temperature": cold_side.ambient_temperature,
            "convection_coefficient": cold_side.convection_coefficient,
            "surroundings_temperature": cold_surround,
            "emissivity": cast(Solid, layers[-1]).emissivity_cold,
        }
    else:
        t_cold = _full(cold_side.temperature, n)
    hot_kw = None
    if isinstance(hot_side, HotEnvironment):
        hot_kw = {
            "incident_flux": hot_side.incident_flux,
            "gas_temperature": hot_side.gas_temperature,
            "convection_coefficient": hot_side.convection_coefficient,
            "surroundings_temperature": (
                hot_side.surroundings_temperature
                if hot_side.surroundings_temperature is not None
                else hot_side.gas_temperature
            ),
            "emissivity": cast(Solid, layers[0]).emissivity_hot,
        }
    return _Boundaries(
        hot_fixed=isinstance(hot_side, HotTemperature),
        cold_fixed=not isinstance(cold_side, ColdEnvironment),
        hot_flux=hot_side.heat_flux if isinstance(hot_side, HotFlux) else None,
        hot_kw=hot_kw, cold_kw=cold_kw, t_cold=t_cold,
    )


def _solve_chunk(
    layers: list[Element],
    hot_side: HotSide,
    cold_side: ColdSide,
    n: int,
    out: dict[str, np.ndarray],
    *,
    radiation: str,
    convection_enabled: bool,
    tolerance: float,
    max_iterations: int,
) -> int:
    """Solve one chunk of samples; write its rows into ``out``; return the inner-face index."""
    elements = _build_elements(layers, cold_side)
    bc = _boundaries(layers, hot_side, cold_side, n)
    kw = {"radiation": radiation, "convection_enabled": convection_enabled}

    # Starting field (N.4): the series network with radiation linearized at a mean temperature.
    gaps = [_gap_constants(el) if el.kind == "gap" else None for el in elements]
    t = _starting_field(
        elements, gaps, n,
        t_hot=_full(cast(HotTemperature, hot_side).temperature, n) if bc.hot_fixed else None,
        heat_flux=_full(bc.hot_flux, n) if bc.hot_flux is not None else None,
        hot_kw=bc.hot_kw,
        t_cold=bc.t_cold,
        cold_kw=bc.cold_kw,
    )
    with np.errstate(all="ignore"):
        converged, iterations = _newton(elements, gaps, t, bc, kw, tolerance=tolerance,
                                        max_iterations=max_iterations)
        details = _solution_details(elements, gaps, t, converged, kw)
    inner = len(elements) - 1 if isinstance(cold_side, ColdSurface) else len(elements)
    valid = details["valid"]

    def put(name: str, x: np.ndarray) -> None:  # (m, n) or (n,) working array → (n, ...) rows
        dst = out[name]
        dst[...] = x.T
        dst[~valid] = np.nan

    put("interface_temperature", t)
    put("heat_flux", details["q"][0])
    put("inner_surface_temperature", t[inner])
    put("layer_resistance", details["resistance"])
    put("layer_temperature_drop", details["drop"])
    put("radiative_share", details["radiative_share"])
    put("rayleigh_number", details["rayleigh"])
    out["convection_onset"][...] = details["onset"].T & valid[:, None]
    out["converged"][...] = valid
    out["iterations"][...] = iterations
    out["air_range_exceeded"][...] = details["range_out"] & valid
    return inner


def _newton(elements: list[_Element], gaps: list, t: np.ndarray, bc: _Boundaries, kw: dict, *,
            tolerance: float, max_iterations: int) -> tuple[np.ndarray, np.ndarray]:
    """Damped Newton iterations on the face temperatures ``t`` (updated in place), (N.1)–(N.3).

    Each sample is frozen as soon as it converges, so its result does not depend on the others
    in the chunk. Returns the converged flags and the iterations used per sample.
    """
    nodes, n = t.shape
    active = np.ones(n, dtype=bool)
    converged = np.zeros(n, dtype=bool)
    iterations = np.zeros(n, dtype=np.int64)
    previous = np.full(n, np.nan)  # no previous step yet: (N.2) needs two
    a = np.zeros((nodes, n))  # sub-diagonal   dF_j/dT_{j-1}
    b = np.empty((nodes, n))  # diagonal       dF_j/dT_j
    c = np.zeros((nodes, n))  # super-diagonal dF_j/dT_{j+1}
    f = np.empty((nodes, n))  # minus the residual, -F_j
    hot_kw: dict[str, Any] = bc.hot_kw or {}    # used for a HotEnvironment only
    cold_kw: dict[str, Any] = bc.cold_kw or {}  # used for a ColdEnvironment only
    for _ in range(max_iterations):
        f[0] = 0.0
        b[0] = 0.0
        for j, el in enumerate(elements):  # (N.1), element j joins faces j and j+1
            q, dqa, dqb = _element_flux(el, t[j], t[j + 1], gap=gaps[j], **kw)
            f[j] += q
            b[j] -= dqa
            c[j] = -dqb
            f[j + 1] = -q
            a[j + 1] = dqa
            b[j + 1] = dqb
        if bc.hot_fixed:
            f[0], b[0], c[0] = 0.0, 1.0, 0.0
        elif bc.hot_flux is not None:
            f[0] -= bc.hot_flux
        else:
            q_in, dq_in = hot_environment_flux(t[0], **hot_kw)
            f[0] -= q_in
            b[0] += dq_in
        if bc.cold_fixed:
            f[-1], a[-1], b[-1] = 0.0, 0.0, 1.0
        else:
            q_out, dq_out = cold_environment_flux(t[-1], **cold_kw)
            f[-1] += q_out
            b[-1] -= dq_out
        step = _thomas(a, b, c, f)
        abs_step = np.abs(step)
        size = np.max(abs_step, axis=0)
        # (N.2) a posteriori error after this step for a contracting iteration,
        # e <= |s_k| rho / (1 - rho), rho = |s_k| / |s_k-1|; exact steps below tol also pass
        rho = size / previous
        estimate = np.where(rho < 0.5, size * rho / (1.0 - rho), np.inf)
        done = active & ((size <= tolerance) | (estimate <= tolerance))
        previous = size
        # (N.3) damping: no face changes by more than half its temperature in one step
        ratio = np.max(abs_step / t, axis=0)
        move = np.where(ratio > 0.5, 0.5 / ratio, 1.0)
        bad = active & ~np.isfinite(size)
        move[~active | bad] = 0.0
        t += step * move
        iterations += active
        converged |= done
        active &= ~done & ~bad
        if not active.any():
            break
    return converged, iterations


def _solution_details(elements: list[_Element], gaps: list, t: np.ndarray,
                      converged: np.ndarray, kw: dict) -> dict[str, np.ndarray]:
    """Fluxes, resistances, gap details and validity at the solution ``t``."""
    radiation, convection_enabled = kw["radiation"], kw["convection_enabled"]
    m, n = len(elements), t.shape[1]
    q_el = np.empty((m, n))
    drop = t[:-1] - t[1:]
    resistance = np.empty((m, n))
    rad_share = np.full((m, n), np.nan)
    rayleigh = np.full((m, n), np.nan)
    onset = np.zeros((m, n), dtype=bool)
    range_out = np.zeros(n, dtype=bool)
    lo, hi = air.VALID_RANGE
    valid = converged & np.all(np.isfinite(t), axis=0) & np.all(t > 0, axis=0)
    for j, el in enumerate(elements):
        ta, tb = t[j], t[j + 1]
        if el.kind == "gap":
            parts = gap_heat_flow_parts(ta, tb, radiation=radiation, convection_enabled=(
                convection_enabled), **el.params)
            q = parts.total
        else:
            q = _element_flux(el, ta, tb, **kw)[0]
        q_el[j] = q
        resistance[j] = drop[j] / q
        flat = np.abs(drop[j]) <= 1e-12 * ta  # no drop: the resistance is 1 / (dq/dTa)
        if flat.any():
            dqa = _element_flux(el, ta, tb, gap=gaps[j], **kw)[1]
            resistance[j][flat] = 1.0 / dqa[flat]
        if el.kind == "solid":
            p = el.params
            for face in (ta, tb):  # k(T) must stay positive across the slab
                k_face = p["conductivity"] + p["conductivity_slope"] * (
                    face - p["reference_temperature"]
                )
                valid &= k_face > 0
        if el.kind == "gap":
            rad_share[j] = parts.radiation / parts.total
            rayleigh[j] = parts.rayleigh
            onset[j] = parts.onset
            tm = 0.5 * (ta + tb)
            range_out |= (tm < lo) | (tm > hi)
            if convection_enabled:
                matters = valid & (parts.nusselt > 1.0 + convection.VERTICAL_ONSET_EXCESS)
                convection.warn_outside_range(
                    parts.rayleigh[matters],
                    orientation=el.params["orientation"],
                    aspect_ratio=np.broadcast_to(
                        np.asarray(el.params["gap_height"]) / el.params["gap_width"], (n,)
                    )[matters],
                )
    return {"q": q_el, "drop": drop, "resistance": resistance, "radiative_share": rad_share,
            "rayleigh": rayleigh, "onset": onset, "range_out": range_out, "valid": valid}


PASSES = 2
"""Passes of the linearized network that give the Newton start (N.4)."""


def _starting_field(
    elements: list[_Element],
    gaps: list,
    n: int,
    *,
    t_hot: np.ndarray | None,
    heat_flux: np.ndarray | None,
    hot_kw: dict[str, Any] | None,
    t_cold: np.ndarray,
    cold_kw: dict[str, Any] | None,
) -> np.ndarray:
    """Face temperatures of the network with every element linearized (N.4).

    Solids at their conductivity at the element's mean temperature, gaps as still-air
    conduction plus linearized radiation ``4 eps_eff sigma T_m^3``, a cold environment as
    ``h + 4 eps sigma T_a^3``; the hot-side balance is solved for the exposed face, then the faces
    follow the series resistances. The element temperatures come from a ramp, then from the
    previous pass (``PASSES`` in all). Only a start for the Newton iteration: it need not be
    accurate, only close.

    Parameters
    ----------
    elements
        Network elements, hot side first.
    gaps
        Per element, the precomputed gap constants or ``None``.
    n
        Samples in the chunk.
    t_hot
        Prescribed exposed-face temperature, or ``None`` [K].
    heat_flux
        Prescribed net flux into the exposed face, or ``None`` [W m-2].
    hot_kw
        Keyword arguments of :func:`plyrisk.models.boundary.hot_environment_flux`, or ``None``.
    t_cold
        Cold-side (or ambient) temperature [K].
    cold_kw
        Keyword arguments of :func:`plyrisk.models.boundary.cold_environment_flux`, or ``None`` for
        a
        prescribed cold face.

    Returns
    -------
    numpy.ndarray
        Starting face temperatures, shape ``(M + 1, n)`` [K].
    """
    if t_hot is not None:
        t0 = t_hot
    elif hot_kw is not None:
        t0 = np.maximum(t_cold, np.asarray(hot_kw["gas_temperature"], dtype=float)) + 50.0
    else:
        t0 = t_cold + 50.0
    resist = np.empty((len(elements), n))
    # faces of the previous pass: a linear ramp at first, then the linearized network itself
    faces = t0 + (t_cold - t0) * np.linspace(0.0, 1.0, len(elements) + 1)[:, None]
    first = True
    for _ in range(PASSES):
        for j, (el, gap) in enumerate(zip(elements, gaps, strict=True)):
            p = el.params
            tm = 0.5 * (faces[j] + faces[j + 1])
            if el.kind == "solid":
                k = p["conductivity"] + p["conductivity_slope"] * (tm - p["reference_temperature"])
                resist[j] = np.asarray(p["thickness"]) / np.maximum(k, 0.1 * p["conductivity"])
            elif el.kind == "contact":
                resist[j] = p["contact_resistance"]
            else:
                h = air.thermal_conductivity(tm, check_range=False) * gap["inverse_width"]
                resist[j] = 1.0 / (h + 4.0 * gap["radiative_factor"] * tm**3)
        r_total = resist.sum(axis=0)
        if cold_kw is not None:
            ta = np.asarray(cold_kw["ambient_temperature"], dtype=float)
            r_total = r_total + 1.0 / (
                cold_kw["convection_coefficient"]
                + 4.0 * np.asarray(cold_kw["emissivity"]) * SIGMA * ta**3
            )
        if t_hot is not None:
            q = (t0 - t_cold) / r_total
        elif heat_flux is not None:
            q = heat_flux
            t0 = t_cold + q * r_total
        else:  # q_in(T0) = (T0 - T_cold) / R, a few Newton steps (B.1); fewer once close
            for _ in range(4 if first else 2):
                q_in, dq_in = hot_environment_flux(t0, **cast(dict[str, Any], hot_kw))
                f = q_in - (t0 - t_cold) / r_total
                t0 = np.maximum(t0 - f / (dq_in - 1.0 / r_total), 0.5 * t0)
            q = (t0 - t_cold) / r_total
        faces = np.empty((len(elements) + 1, n))
        faces[0] = t0
        for j in range(len(elements)):
            faces[j + 1] = faces[j] - q * resist[j]
        first = False
    t = faces
    if cold_kw is None:
        t[-1] = t_cold  # a prescribed cold face exactly
    return np.maximum(t, 0.5 * np.minimum(t0, t_cold))


def tridiagonal_solve(
    a: np.ndarray, b: np.ndarray, c: np.ndarray, d: np.ndarray
) -> np.ndarray:
    """Solve one tridiagonal system per column (the Thomas sweep shared by the solvers).

    Parameters
    ----------
    a, b, c, d
        Sub-diagonal, diagonal, super-diagonal and right-hand side, shape ``(nodes, n)``.

    Returns
    -------
    numpy.ndarray
        Solution, shape ``(nodes, n)``.
    """
    return _thomas(a, b, c, d)


def _thomas(a: np.ndarray, b: np.ndarray, c: np.ndarray, d: np.ndarray) -> np.ndarray:
    """Solve tridiagonal systems, one per column: ``a_j x_{j-1} + b_j x_j + c_j x_{j+1} = d_j``.

    Parameters
    ----------
    a, b, c, d
        Sub-diagonal, diagonal, super-diagonal and right-hand side, shape ``(nodes, n)``.

    Returns
    -------
    numpy.ndarray
        Solution, shape ``(nodes, n)``.
    """
    nodes = b.shape[0]
    cp = np.empty_like(b)
    dp = np.empty_like(b)
    denom = np.empty_like(b[0])
    np.divide(c[0], b[0], out=cp[0])
    np.divide(d[0], b[0], out=dp[0])
    for j in range(1, nodes):
        np.multiply(a[j], cp[j - 1], out=denom)
        np.subtract(b[j], denom, out=denom)
        np.divide(c[j], denom, out=cp[j])
        np.multiply(a[j], dp[j - 1], out=dp[j])
        np.subtract(d[j], dp[j], out=dp[j])
        np.divide(dp[j], denom, out=dp[j])
    x = dp  # back substitution in place: x_j = dp_j - cp_j x_{j+1}
    for j in range(nodes - 2, -1, -1):
        np.multiply(cp[j], x[j + 1], out=cp[j])
        np.subtract(x[j], cp[j], out=x[j])
    return x
