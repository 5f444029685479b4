"""Propagation: unit-hypercube design → input values → model evaluations, chunk by chunk.

Every sample is solved independently of every other (the network solver freezes each sample as
soon as it converges), so the outputs are bit-identical whatever the chunk size. Random numbers
come only from the design, which is drawn from the study seed.
"""

from __future__ import annotations

import sys
from collections.abc import Callable, Sequence
from contextlib import contextmanager
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from plyrisk.design.morris import morris_design
from plyrisk.design.sampling import Design, DesignPlan
from plyrisk.methods import get_method
from plyrisk.models.network import NETWORK_OUTPUTS, NetworkSolution, solve_network
from plyrisk.models.outputs import OutputSpec
from plyrisk.models.transient_outputs import TRANSIENT_OUTPUTS, TransientSolution
from plyrisk.propagate.compute import run_tasks
from plyrisk.study.definition import assemble

if TYPE_CHECKING:
    from plyrisk.study.definition import Study

def output_table(study: Study) -> tuple[OutputSpec, ...]:
    """The per-sample outputs a study's model produces (declared next to the model).

    Parameters
    ----------
    study
        The parsed study.

    Returns
    -------
    tuple of OutputSpec
        :data:`plyrisk.models.network.NETWORK_OUTPUTS` for the steady network,
        :data:`plyrisk.models.transient_outputs.TRANSIENT_OUTPUTS` for a transient study.
    """
    if study.transient is not None:
        return TRANSIENT_OUTPUTS
    return NETWORK_OUTPUTS


def solution_labels(solution: NetworkSolution | TransientSolution) -> dict:
    """The labels of :class:`Outputs` taken from one model solution.

    A transient solution has no network elements: its faces are the interfaces, the element
    labels are empty, ``inner_surface_index`` is -1 and ``time`` is its history grid [s].
    """
    if isinstance(solution, TransientSolution):
        return {"interface_names": tuple(solution.face_names), "element_names": (),
                "element_kinds": (), "element_layers": (), "inner_surface_index": -1,
                "time": np.asarray(solution.time, dtype=float)}
    return {"interface_names": solution.interface_names,
            "element_names": solution.element_names, "element_kinds": solution.element_kinds,
            "element_layers": solution.element_layers,
            "inner_surface_index": solution.inner_surface_index}


@dataclass(frozen=True)
class Outputs:
    """Model outputs for every scenario and sample.

    Attributes
    ----------
    fields
        Name → array of shape ``(n_scenarios, n_samples, ...)`` for each output of
        :func:`output_table`
        (units as in :class:`plyrisk.models.network.NetworkSolution` or
        :class:`plyrisk.models.transient_outputs.TransientSolution`).
    interface_names, element_names, element_kinds, element_layers
        Labels from the network solution; a transient study's ``interface_names`` are its
        face names (the ``face`` axis of ``face_temperature``) and its element labels are
        empty.
    inner_surface_index
        Column of ``interface_temperature`` that is the inner surface [-]; -1 for a transient
        study.
    time
        The history grid of a transient study (the ``time`` axis of its histories) [s];
        ``None`` for a steady study.
    """

    fields: dict[str, np.ndarray]
    interface_names: tuple[str, ...]
    element_names: tuple[str, ...]
    element_kinds: tuple[str, ...]
    element_layers: tuple[int, ...]
    inner_surface_index: int
    time: np.ndarray | None = None

    def __getitem__(self, name: str) -> np.ndarray:
        return self.fields[name]

    @property
    def nonconverged(self) -> np.ndarray:
        """Number of samples that did not converge, per scenario, shape ``(n_scenarios,)``."""
        return np.sum(~self.fields["converged"], axis=1)


@dataclass(frozen=True)
class Propagation:
    """A propagated study: the design, the input values and the outputs.

    Attributes
    ----------
    design
        The unit-hypercube design.
    inputs
        Input values, shape ``(n_samples, n_parameters)``, SI units of each parameter.
    outputs
        Model outputs for every scenario.
    """

    design: Design
    inputs: np.ndarray
    outputs: Outputs


def unit_to_inputs(parameters: Sequence, unit: np.ndarray) -> np.ndarray:
    """Map unit-hypercube columns through each parameter's inverse CDF.

    Parameters
    ----------
    parameters
        Uncertain parameters (each with a ``distribution``), one per column.
    unit
        Points in the open unit cube, shape ``(n, d)``.

    Returns
    -------
    numpy.ndarray
        Input values, shape ``(n, d)``, SI.
    """
    unit = np.asarray(unit, dtype=float)
    out = np.empty_like(unit)
    for j, p in enumerate(parameters):
        out[:, j] = p.distribution.ppf(unit[:, j])
    return out


def model_objects(study: Study, values: np.ndarray | None = None, *, scenario: int | None = None):
    """Build the model's layers and boundaries for a block of samples.

    Parameters
    ----------
    study
        The parsed study (:class:`plyrisk.study.config.Study`).
    values
        Input values, shape ``(n, d)`` in the order of ``study.parameters`` (SI); ``None`` for
        the nominal stack. [SI]
    scenario
        Index of the swept exposure to apply, or ``None``.

    Returns
    -------
    layers, hot_side, cold_side
        For a transient study ``layers, exposure, wearer``.
    """
    columns = {} if values is None else {
        p.name: values[:, j] for j, p in enumerate(study.parameters)
    }
    return assemble(study, columns, scenario=scenario if study.scenarios is not None else None)


def _solve(study: Study, values: np.ndarray | None, scenario: int | None, threads: int = 1
           ) -> NetworkSolution | TransientSolution:
    if study.transient is not None:
        # imported here: the transient solver loads numba, which a steady study never needs
        from plyrisk.models.transient import solve_transient

        layers, exposure, wearer = model_objects(study, values, scenario=scenario)
        # the study's one grid layout: results do not depend on how samples are chunked
        return solve_transient(layers, exposure, wearer, radiation=study.model.radiation,
                               convection_enabled=study.model.convection, threads=threads,
                               **study.transient.solver_kwargs())
    layers, hot, cold = model_objects(study, values, scenario=scenario)
    # validate=False: the distributions keep every draw inside its physical bounds
    return solve_network(layers, hot, cold, validate=False, **study.model.solver_kwargs())


def scenario_count(study: Study) -> int:
    """Number of exposures evaluated: the sweep length, or 1."""
    return 1 if study.scenarios is None else len(study.scenarios.values)


def _evaluate_block(study: Study, block: np.ndarray, threads: int = 1
                    ) -> list[NetworkSolution | TransientSolution]:
    """Solve one chunk of samples for every scenario (runs on a worker too)."""
    scenarios = [None] if study.scenarios is None else range(scenario_count(study))
    return [_solve(study, block, scenario, threads) for scenario in scenarios]


def _evaluate_range(study: Study, threads: int, start: int, block: np.ndarray):
    """A task of :func:`evaluate`: the chunk's first row and its solutions."""
    return start, start + block.shape[0], _evaluate_block(study, block, threads)


def _transient_threads(study: Study, workers: int, scheduler: str | None) -> int:
    """Threads of the compiled transient loop standing in for local dask workers: a transient
    study on this machine runs its samples on ``workers`` threads in this process (no worker
    start-up, imports or result transfer per process); 1 otherwise."""
    local = scheduler is None and int(workers) > 1
    if study.transient is None or not local:
        return 1  # a steady study never loads numba
    from plyrisk.models.transient_kernel import AVAILABLE

    compiled = AVAILABLE and not study.model.convection
    return int(workers) if compiled else 1


def evaluate(
    study: Study,
    values: np.ndarray,
    *,
    chunk_size: int | None = None,
    progress: Callable[[int], None] | None = None,
    workers: int = 1,
    scheduler: str | None = None,
) -> Outputs:
    """Evaluate the model (the steady network, or the transient model of a transient study) for
    every sample and every scenario, in chunks of bounded memory.

    Parameters
    ----------
    study
        The parsed study.
    values
        Input values, shape ``(n, d)`` (SI). [SI]
    chunk_size
        Samples per chunk; default from the study. Results do not depend on it.
    progress
        Called with the number of samples finished after each chunk.
    workers
        Worker processes of a local dask cluster solving chunks in parallel; 1 solves in
        this process. A transient study solves in this process on that many threads of the
        compiled time loop instead. Results do not depend on it: every sample is solved
        independently.
    scheduler
        Address of an existing dask scheduler to solve the chunks on instead.

    Returns
    -------
    Outputs
    """
    values = np.asarray(values, dtype=float)
    n = values.shape[0]
    chunk = int(chunk_size or study.analysis.chunk_size)
    if chunk < 1:
        raise ValueError(f"chunk_size must be at least 1, got {chunk}")
    if int(workers) < 1:
        raise ValueError(f"workers must be at least 1, got {workers}")
    n_s = scenario_count(study)
    bounds = [(start, min(start + chunk, n)) for start in range(0, max(n, 1), chunk)]
    store: dict[str, np.ndarray] = {}
    meta: list = []
    names = [spec.name for spec in output_table(study)]

    def keep(result) -> None:
        start, stop, solutions = result
        if not meta:
            meta.append(solutions[0])
            for name in names:
                v = getattr(solutions[0], name)
                store[name] = np.empty((n_s, n, *v.shape[1:]), dtype=v.dtype)
        for s_index, sol in enumerate(solutions):
            for name in names:
                store[name][s_index, start:stop] = getattr(sol, name)
        if progress is not None:
            progress(stop - start)

    threads = _transient_threads(study, workers, scheduler)
    run_tasks(_evaluate_range, [(start, values[start:stop]) for start, stop in bounds], keep,
              shared=(study, threads), workers=1 if threads > 1 else workers,
              scheduler=scheduler)
    return Outputs(fields=store, **solution_labels(meta[0]))


def nominal_solution(study: Study, *, scenario: int | None = None
                     ) -> NetworkSolution | TransientSolution:
    """Solve the nominal stack (every uncertain value at its distribution's nominal)."""
    return _solve(study, None, scenario)


def study_plan(study: Study) -> DesignPlan:
    """The design of a study as a :class:`plyrisk.design.sampling.DesignPlan` (per-layer groups for
    Sobol').

    Parameters
    ----------
    study
        The parsed study; overrides of the sample count or seed belong in its ``analysis``
        (see :func:`plyrisk.pipeline.run.run_study`), so that the design and the analysis agree.

    Returns
    -------
    DesignPlan

    Raises
    ------
    ValueError
        For Morris trajectories, which are built whole (:func:`study_design`).
    """
    a = study.analysis
    if a.design == "morris":
        raise ValueError("Morris trajectories are built whole; they have no design plan")
    if get_method(a.method).builds_design:
        raise ValueError(f"method {a.method!r} builds its design whole; it has no design plan")
    kind = get_method(a.method).design_kind(study)
    groups = parameter_groups(study)[1]
    return DesignPlan(
        kind,
        int(a.samples),
        len(study.parameters),
        int(a.seed),
        groups=tuple(groups) if kind == "sobol" else (),
        optimization=a.lhs_optimization if kind == "lhs" else None,
        replicates=int(a.replicates) if kind == "sobol" else 1,
    )


def study_design(study: Study) -> Design:
    """The whole unit-hypercube design of a study (see :func:`study_plan`)."""
    a = study.analysis
    own = get_method(a.method).make_design(study)
    if own is not None:
        return own
    if a.design == "morris":
        return morris_design(int(a.samples), len(study.parameters), seed=int(a.seed),
                             levels=int(a.levels))
    return study_plan(study).design()


def parameter_groups(study: Study) -> tuple[list[str], list[tuple[int, ...]]]:
    """Group names (layers, ``hot_side``, ``cold_side``) and the parameter indices in each."""
    names: list[str] = []
    members: dict[str, list[int]] = {}
    for j, p in enumerate(study.parameters):
        if p.group not in members:
            names.append(p.group)
            members[p.group] = []
        members[p.group].append(j)
    return names, [tuple(members[g]) for g in names]


def propagate(
    study: Study,
    *,
    chunk_size: int | None = None,
    quiet: bool = False,
    workers: int = 1,
    scheduler: str | None = None,
) -> Propagation:
    """Draw the design, map it to inputs and evaluate the model.

    Parameters
    ----------
    study
        The parsed study (sample count and seed from its ``analysis``).
    chunk_size
        Samples per chunk overriding the config.
    quiet
        Suppress the progress bar (it is shown only on a terminal anyway).
    workers
        Worker processes of a local dask cluster; results do not depend on it.
    scheduler
        Address of an existing dask scheduler; results do not depend on it.

    Returns
    -------
    Propagation
    """
    design = study_design(study)
    inputs = unit_to_inputs(study.parameters, design.unit)
    with progress_bar(len(inputs), quiet=quiet) as bar:
        outputs = evaluate(study, inputs, chunk_size=chunk_size, progress=bar,
                           workers=workers, scheduler=scheduler)
    return Propagation(design=design, inputs=inputs, outputs=outputs)


@contextmanager
def progress_bar(total: int, *, quiet: bool = False, what: str = "solving"):
    """A progress callback (samples done) drawing a bar on a terminal, or ``None``.

    Parameters
    ----------
    total
        Samples to solve.
    quiet
        No bar.
    what
        Label of the bar.
    """
    if quiet or not sys.stderr.isatty():
        yield None
        return
    from tqdm import tqdm

    bar = tqdm(total=total, unit="sample", desc=what, file=sys.stderr)
    try:
        yield bar.update
    finally:
        bar.close()
