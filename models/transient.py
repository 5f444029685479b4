"""The transient model of an assembly and its wearer: entry point, validation, chunking.

An assembly (solids and air gaps, hot side first) in front of a wearer (three-layer Pennes
skin, a copper-disc sensor, or a prescribed surface) starts in the steady state of the
pre-exposure conditions, is exposed for ``exposure_duration`` and cools down until the
horizon. The finite-volume grid is :mod:`plyrisk.models.mesh`, the equations
:mod:`plyrisk.models.transient_problem`, the time stepping :mod:`plyrisk.models.stepper`, and
the outputs are declared in :data:`plyrisk.models.transient_outputs.TRANSIENT_OUTPUTS`.

Results are engineering estimates: one-dimensional, no moisture, no melting or charring, no
compression; the published burn criteria scatter widely. They are no substitute for
certification testing by accredited laboratories.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import replace
from typing import Any

import numpy as np
from numpy.typing import ArrayLike

from plyrisk.models.burn import damage_parameters
from plyrisk.models.exposure import TransientExposure
from plyrisk.models.mesh import Mesh, MeshLayout, build_mesh, mesh_layout
from plyrisk.models.stack import Gap, Solid, StackError
from plyrisk.models.stepper import integrate, steady_state
from plyrisk.models.transient_drive import Drive
from plyrisk.models.transient_kernel import compiled_supported, integrate_compiled
from plyrisk.models.transient_outputs import (
    TRANSIENT_OUTPUTS,
    TransientSolution,
    empty_outputs,
)
from plyrisk.models.transient_problem import Problem, build_problem
from plyrisk.models.transient_tracking import BurnTracker, SensorTracker
from plyrisk.models.wearer import (
    PrescribedWearer,
    SensorWearer,
    SkinWearer,
    Wearer,
    check_wearer,
)

THIRD_DEGREE_RULES = ("basal", "dermis_base")
"""Third-degree burn: damage 1e4 at the basal depth, or damage 1 at the dermis base with the
Takata (1974) constants."""


def solve_transient(
    layers: Sequence[Solid | Gap],
    exposure: TransientExposure,
    wearer: SkinWearer | SensorWearer | PrescribedWearer,
    *,
    output_times: ArrayLike | None = None,
    damage_model: str = "henriques_1947",
    third_degree: str = "basal",
    temperature_tolerance: float = 0.05,
    first_step: float = 1e-3,
    max_step: float = 2.0,
    min_step: float = 1e-9,
    max_steps: int = 20000,
    refinement: int = 1,
    layout: MeshLayout | None = None,
    radiation: str = "exact",
    convection_enabled: bool = False,
    chunk_size: int = 4096,
    compiled: bool = True,
    threads: int = 1,
) -> TransientSolution:
    """Integrate the transient model of every sample from its initial steady state to the horizon.

    Parameters
    ----------
    layers
        Solids (with ``density`` and ``specific_heat``) and gaps, exposed side first; may be
        empty (bare skin or sensor). Numeric fields scalars or ``(n,)`` arrays. [-]
    exposure
        The exposure, cool-down and horizon [-].
    wearer
        :class:`~plyrisk.models.wearer.SkinWearer`,
        :class:`~plyrisk.models.wearer.SensorWearer` or
        :class:`~plyrisk.models.wearer.PrescribedWearer`; reached across the last gap when the
        stack ends with a gap, else in contact with the last solid. [-]
    output_times
        Times of the histories, in ``[0, horizon]``, increasing [s]; ``None`` for none.
    damage_model
        Damage parameter set at the basal depth (:data:`plyrisk.models.burn.DAMAGE_PARAMETER_SETS`)
        [-].
    third_degree
        One of :data:`THIRD_DEGREE_RULES` [-].
    temperature_tolerance
        Local error allowed per step at any node [K].
    first_step
        Step at the start and after each jump of the exposure [s].
    max_step
        Longest step [s].
    min_step
        A sample whose step falls below this fails (``converged`` False) [s].
    max_steps
        Step attempts before the remaining samples fail [-].
    refinement
        Split every grid slice into this many (grid-refinement studies) [-].
    layout
        Grid layout to use (e.g. ``solution.layout`` of a larger run, to reproduce one sample
        alone); by default built from all samples [-].
    radiation, convection_enabled
        Gap options as in :func:`plyrisk.models.network.solve_network` [-].
    chunk_size
        Samples stepped together [-]; results do not depend on it.
    compiled
        Integrate each sample in the compiled time loop of
        :mod:`plyrisk.models.transient_kernel` (numba; not with gap convection); ``False`` for
        the batched stepping of :mod:`plyrisk.models.stepper` (Python per step, the former
        path, kept as a reference). The two agree to rounding [-].
    threads
        Threads of the compiled loop, each integrating its own samples [-]; results do not
        depend on it.

    Returns
    -------
    TransientSolution

    Raises
    ------
    ValueError
        One line naming the element, the quantity and the bad value.

    Examples
    --------
    >>> from plyrisk.models.stack import Solid
    >>> from plyrisk.models.wearer import PrescribedWearer
    >>> fabric = Solid("fabric", thickness=1e-3, conductivity=0.05, density=300.0,
    ...                specific_heat=1300.0)
    >>> exposure = TransientExposure(incident_flux=20e3, gas_temperature=300.0,
    ...     convection_coefficient=0.0, exposure_duration=5.0, horizon=10.0)
    >>> sol = solve_transient([fabric], exposure, PrescribedWearer(temperature=306.15,
    ...     contact_resistance=0.01), output_times=[0.0, 5.0, 10.0])
    >>> bool(sol.converged[0]), sol.face_temperature.shape
    (True, (1, 3, 3))
    """
    layers = list(layers)
    _check_options(temperature_tolerance, first_step, max_step, min_step, max_steps,
                   refinement, chunk_size, third_degree)
    validate_transient_stack(layers, wearer)
    exposure.validate()
    n = _sample_count(layers, wearer, exposure)
    tout = _output_times(output_times, exposure.horizon)
    if layout is None:
        layout = mesh_layout(layers, wearer, exposure.horizon, refinement=int(refinement))
    mesh = build_mesh(layers, wearer, layout, n)
    problem = build_problem(mesh, layers, wearer, n, radiation=radiation,
                            convection_enabled=convection_enabled)
    drive = Drive(exposure, problem.emissivity, n)
    parameters = damage_parameters(damage_model)
    dermis_parameters = damage_parameters("takata_1974") if third_degree == "dermis_base" \
        else None
    out = empty_outputs(n, tout.size, len(mesh.face_nodes))
    opts = {"temperature_tolerance": float(temperature_tolerance),
            "first_step": float(first_step), "max_step": float(max_step),
            "min_step": float(min_step), "max_steps": int(max_steps), "output_times": tout}
    guess = _starting_guess(mesh, wearer, drive, n)
    with np.errstate(all="ignore"):
        for start in range(0, n, int(chunk_size)):
            idx = np.arange(start, min(start + int(chunk_size), n))
            p, d = problem.take(idx), drive.take(idx)
            held = _held(p, wearer, mesh, idx)
            start_guess = guess[:, idx].copy()
            # fixed nodes keep their starting value in the steady Newton solve: start them at
            # their prescribed temperature (the sensor's initial_temperature, the core)
            start_guess[held.fixed] = held.fixed_value[held.fixed]
            T0, ok = steady_state(held, d, start_guess, 1e-9)
            T0[:, ~ok] = start_guess[:, ~ok]
            burn = (BurnTracker(idx.size, parameters, third_degree, dermis_parameters)
                    if isinstance(wearer, SkinWearer) else None)
            sensor = None
            if isinstance(wearer, SensorWearer):
                from plyrisk.models.sensor import criterion_energy

                sensor = SensorTracker(idx.size, np.broadcast_to(wearer.heat_capacity,
                                       (n,))[idx].astype(float), T0[mesh.surface_node].copy(),
                                       criterion_energy)
            chunk: dict[str, np.ndarray] = {}
            if compiled and compiled_supported(p, d):
                integrate_compiled(p, d, mesh, T0, chunk, opts, burn, sensor,
                                   threads=threads)
            else:
                integrate(p, d, mesh, T0, chunk, opts, burn, sensor)
            chunk["initial_surface_temperature"] = T0[mesh.surface_node]
            chunk["converged"] = chunk["converged"] & ok
            for name, values in chunk.items():
                out[name][idx] = values
    bad = ~out["converged"]
    for spec in TRANSIENT_OUTPUTS:
        arr = out[spec.name]
        if arr.dtype.kind == "f":
            arr[bad] = np.nan
    return TransientSolution(
        **out, time=tout, face_names=mesh.face_names, layout=layout, damage_model=damage_model,
        third_degree=third_degree, wearer_kind=wearer.kind)


def validate_transient_stack(layers: Sequence[Solid | Gap], wearer: Wearer) -> None:
    """Check the layers and the wearer for the transient model.

    Parameters
    ----------
    layers
        Solids and gaps, exposed side first [-].
    wearer
        The wearer side [-].

    Raises
    ------
    plyrisk.models.stack.StackError
        (a ``ValueError``) naming the element, the quantity and the bad value.
    """
    for i, layer in enumerate(layers):
        try:
            if isinstance(layer, Solid):
                layer.validate_transient()
            elif isinstance(layer, Gap):
                layer.validate()
            else:
                raise StackError(f"element {i} is a {type(layer).__name__}, not a Solid or Gap")
        except StackError as err:
            err.index = i
            raise
    check_wearer(wearer)
    if layers and not isinstance(layers[0], Solid):
        raise StackError(f"layer {layers[0].name!r}: the first layer (the exposed face) must be "
                         "a solid, not a gap", index=0)
    for i, (a, b) in enumerate(zip(layers[:-1], layers[1:], strict=False)):
        if isinstance(a, Gap) and isinstance(b, Gap):
            raise StackError(f"layers {a.name!r} and {b.name!r}: two gaps in a row", index=i + 1)
        if isinstance(a, Solid) and a.contact_resistance is not None and not isinstance(b, Solid):
            raise StackError(f"layer {a.name!r}: contact_resistance needs a solid after it, but "
                             f"{b.name!r} is a gap", index=i, quantity="contact_resistance")
    if layers and isinstance(layers[-1], Solid) and layers[-1].contact_resistance is not None:
        raise StackError(f"layer {layers[-1].name!r}: contact_resistance of the last solid; give "
                         "the wearer's contact_resistance instead", index=len(layers) - 1,
                         quantity="contact_resistance")
    if not layers and isinstance(wearer, PrescribedWearer):
        raise StackError("wearer: a prescribed surface needs at least one layer in front of it")
    for layer in layers[1:]:
        if isinstance(layer, Solid) and layer.radiant_transmissivity is not None:
            raise StackError(f"layer {layer.name!r}: radiant_transmissivity is only used for the "
                             "exposed (first) layer; remove it here",
                             quantity="radiant_transmissivity")


def _check_options(tol: float, first_step: float, max_step: float, min_step: float,
                   max_steps: int, refinement: int, chunk_size: int, third_degree: str) -> None:
    for name, value in (("temperature_tolerance", tol), ("first_step", first_step),
                        ("max_step", max_step), ("min_step", min_step)):
        if not (np.isfinite(value) and value > 0):
            raise ValueError(f"solve_transient: {name} must be positive and finite, got "
                             f"{value!r}")
    for name, value in (("max_steps", max_steps), ("refinement", refinement),
                        ("chunk_size", chunk_size)):
        if int(value) < 1 or int(value) != value:
            raise ValueError(f"solve_transient: {name} must be a positive integer, got {value!r}")
    if third_degree not in THIRD_DEGREE_RULES:
        raise ValueError(f"solve_transient: third_degree {third_degree!r} is not one of "
                         f"{', '.join(THIRD_DEGREE_RULES)}")


def _output_times(output_times: ArrayLike | None, horizon: float) -> np.ndarray:
    if output_times is None:
        return np.zeros(0)
    t = np.asarray(output_times, dtype=float).ravel()
    if t.size and (np.any(~np.isfinite(t)) or t[0] < 0 or t[-1] > horizon):
        raise ValueError(f"solve_transient: output_times must lie in [0, {horizon!r}] s, got "
                         f"{float(t.min())!r} .. {float(t.max())!r} s")
    if np.any(np.diff(t) <= 0):
        i = int(np.argmax(np.diff(t) <= 0))
        raise ValueError(f"solve_transient: output_times must increase, got {t[i]!r} s followed "
                         f"by {t[i + 1]!r} s")
    return t


def _sample_count(layers: Sequence[Solid | Gap], wearer: Wearer,
                  exposure: TransientExposure) -> int:
    sizes = {exposure.sample_count()}
    values: list[tuple[str, str, Any]] = []
    for layer in layers:
        values += [(layer.name, k, v) for k, v in vars(layer).items() if k != "name"]
    if isinstance(wearer, SkinWearer):
        for sl in wearer.layers():
            values += [(sl["name"], k, v) for k, v in sl.items() if k != "name"]
        values += [("skin", "core_temperature", wearer.core_temperature),
                   ("skin", "emissivity", wearer.emissivity)]
    elif isinstance(wearer, SensorWearer):
        values += [("sensor", "heat_capacity", wearer.heat_capacity)]
    else:
        values += [("prescribed", "temperature", wearer.temperature)]
    for name, key, v in values:
        if isinstance(v, str) or v is None:
            continue
        shape = np.shape(v)
        if len(shape) > 1:
            raise StackError(f"{name}: {key} must be a scalar or a 1-D array of samples, got "
                             f"shape {shape}", quantity=key)
        if shape and shape[0] != 1:
            sizes.add(shape[0])
    sizes.discard(1)
    if len(sizes) > 1:
        raise StackError(f"inputs have different numbers of samples: {sorted(sizes)}")
    return sizes.pop() if sizes else 1


def _held(p: Problem, wearer: Wearer, mesh: Mesh, idx: np.ndarray) -> Problem:
    """The problem with the sensor held at its initial temperature (for the initial state)."""
    if not isinstance(wearer, SensorWearer) or wearer.sensor.initial_temperature is None:
        return p
    fixed = p.fixed.copy()
    fixed[mesh.surface_node] = True
    value = p.fixed_value.copy()
    n = p.fixed_value.shape[1]
    value[mesh.surface_node] = np.broadcast_to(
        np.asarray(wearer.sensor.initial_temperature, float), (n,)) if np.ndim(
        wearer.sensor.initial_temperature) == 0 else np.asarray(
        wearer.sensor.initial_temperature, float)[idx]
    return replace(p, fixed=fixed, fixed_value=value)


def _starting_guess(mesh: Mesh, wearer: Wearer, drive: Drive, n: int) -> np.ndarray:
    """A ramp from the ambient to the wearer's temperature, for the steady Newton solve."""
    amb = drive.rows["ambient"]
    if isinstance(wearer, SkinWearer):
        inner = np.broadcast_to(np.asarray(wearer.core_temperature, float), (n,))
    elif isinstance(wearer, PrescribedWearer):
        inner = np.broadcast_to(np.asarray(wearer.temperature, float), (n,))
    else:
        inner = amb
    frac = np.linspace(0.0, 1.0, mesh.nodes)[:, None]
    if isinstance(wearer, SkinWearer):
        frac = np.minimum(frac * mesh.nodes / max(mesh.surface_node + 1, 1), 1.0)
    return amb + (inner - amb) * frac
