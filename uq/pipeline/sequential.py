"""Sequential growth of a Saltelli study until every index interval is narrow enough.

Doubling the base samples N extends the same scrambled Sobol' sequences: every one of the R
independently scrambled replicates doubles its base rows together, so the design of 2N base
rows is the design of N base rows followed by the design of base rows [N, 2N)
(:func:`plyrisk.design.sampling.sobol_design` with ``start``; the Saltelli rows are grouped per
base row and the base rows interleave the replicates),
so the model runs already made are all reused and only the new rows are evaluated (with
:func:`plyrisk.propagate.evaluate.evaluate`). After each step the study is analysed as if it had
been run
at that N from the start — the results are bit-identical to such a run — and the growth stops
when every index interval (first and total, per parameter and per layer, every output and
exposure; Student t intervals on the spread of the replicates) has a half-width at most
``index_ci_threshold``, or when the next doubling would pass the run budget.

A transient study is judged on its first two derived outputs (:func:`judged_outputs`: for skin
the time to second-degree burn capped at the horizon and the burn indicator; for a sensor the
capped criterion time and the criterion indicator), whose rules
(:data:`plyrisk.analysis.outputs.DERIVED_OUTPUTS`) say what their indices mean. An output with
no spread at an exposure (no sample burns, or every one does) has no indices there and is left
out; any other index without an estimate (a replicate with no spread of a 0/1 outcome at a small
N) counts as wider than the target, so the growth goes on.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from typing import TYPE_CHECKING

import numpy as np
import xarray as xr

from plyrisk.analysis.study import StudyAnalysis
from plyrisk.design.sampling import Design, sobol_design
from plyrisk.methods import get_method
from plyrisk.pipeline.options import (
    DEFAULT_MAX_RUNS,
    MEMORY_SHARE,
    OptionError,
    check_memory,
    memory_estimate,
)
from plyrisk.propagate.evaluate import (
    Outputs,
    Propagation,
    evaluate,
    parameter_groups,
    scenario_count,
    unit_to_inputs,
)

if TYPE_CHECKING:  # pragma: no cover - for type checkers only
    from plyrisk.study.definition import Study


@dataclass(frozen=True)
class GrowthStep:
    """One step of the growth.

    Attributes
    ----------
    base_samples
        N of the step.
    runs
        Model runs so far, every exposure.
    widest
        Largest index half-width over every index, output and exposure.
    unconverged
        Indices whose half-width is above the target.
    total, total_ci
        Total Sobol index of the path output (:attr:`Growth.path_output`) per exposure and
        parameter, and its half-width, at this step (shape ``(n_scenarios, n_parameters)``;
        empty when unknown): the path the convergence figure of the report draws.
    """

    base_samples: int
    runs: int
    widest: float
    unconverged: int
    total: np.ndarray = field(default_factory=lambda: np.zeros((0, 0)))
    total_ci: np.ndarray = field(default_factory=lambda: np.zeros((0, 0)))


@dataclass(frozen=True)
class Growth:
    """The outcome of a growth: the final study, propagation and analysis, and its path.

    Attributes
    ----------
    study, propagation, analysis
        At the last step (``study.analysis.samples`` is its N).
    steps
        Every step, first to last.
    converged
        Every interval met the target.
    reason
        Why the growth stopped.
    target, max_runs
        The half-width target and the run budget.
    outputs
        The outputs judged (:func:`judged_outputs`; empty: every analysed output).
    path_output
        The output whose total indices each step records (the convergence figure).
    """

    study: Study
    propagation: Propagation
    analysis: StudyAnalysis
    steps: tuple[GrowthStep, ...]
    converged: bool
    reason: str
    target: float
    max_runs: int
    outputs: tuple[str, ...] = ()
    path_output: str = "inner_surface_temperature"


JUDGED_TRANSIENT_OUTPUTS = 2
"""Leading derived outputs of a transient study whose intervals the growth judges [-]."""


def judged_outputs(study: Study) -> tuple[str, ...]:
    """The outputs whose index intervals decide the growth; empty = every analysed output.

    A steady study is judged on every analysed output. A transient study on the first
    :data:`JUDGED_TRANSIENT_OUTPUTS` derived outputs of its wearer
    (:data:`plyrisk.analysis.outputs.WEARER_OUTPUTS`): skin, the capped time to second-degree
    burn and the burn indicator; sensor, the capped criterion time and the criterion
    indicator; a prescribed surface, the absorbed and the stored energy.

    Examples
    --------
    >>> from types import SimpleNamespace
    >>> judged_outputs(SimpleNamespace(transient=None))
    ()
    """
    if getattr(study, "transient", None) is None:
        return ()
    from plyrisk.analysis.outputs import WEARER_OUTPUTS
    from plyrisk.analysis.transient import transient_facts

    return WEARER_OUTPUTS[transient_facts(study).wearer_kind][:JUDGED_TRANSIENT_OUTPUTS]


def interval_widths(analysis, target: float, *,
                    outputs: tuple[str, ...] = ()) -> tuple[float, int]:
    """The widest index half-width and the number of indices wider than ``target``.

    Parameters
    ----------
    analysis
        A Saltelli analysis (steady or transient).
    target
        Half-width target.
    outputs
        The outputs judged (:func:`judged_outputs`); empty: every output with indices.

    Returns
    -------
    widest, unconverged
        Every output: NaN half-widths (a constant output has no indices) are left out.
        Named outputs: an output constant at an exposure (``constant_outputs``) is left out
        there; any other NaN half-width (no estimate yet) counts as unconverged and the widest
        is taken over the finite ones (NaN when there is none yet).
    """
    halves, missing = [], 0
    for sc in analysis.scenarios:
        if outputs:
            constant = set(getattr(sc, "constant_outputs", ()))
            pairs = [sc.indices.get(o, (None, None)) for o in outputs if o not in constant]
        else:
            pairs = list(sc.indices.values())
        for per, grouped in pairs:
            for ind in (per, grouped):
                if ind is not None:
                    for h in (np.asarray(ind.first_ci, float), np.asarray(ind.total_ci, float)):
                        halves.append(h)
                        if outputs:
                            missing += int(np.sum(~np.isfinite(h)))
    h = np.concatenate(halves) if halves else np.zeros(0)
    h = h[np.isfinite(h)]
    widest = float(h.max()) if h.size else (math.nan if missing else 0.0)
    return widest, int(np.sum(h > target)) + missing


PATH_OUTPUT = "inner_surface_temperature"
"""Output whose total indices the growth path of a steady study records (a transient study:
its first judged output, :func:`judged_outputs`)."""


def total_path(analysis, output: str = PATH_OUTPUT) -> tuple[np.ndarray, np.ndarray]:
    """Total Sobol indices of ``output`` and their half-widths, per exposure and parameter
    (NaN where there are none)."""
    totals, halves = [], []
    n_p = 0
    for sc in analysis.scenarios:
        for per, _ in sc.indices.values():
            if per is not None:
                n_p = np.asarray(per.total).size
                break
    for sc in analysis.scenarios:
        per = sc.indices.get(output, (None, None))[0]
        if per is None and n_p and output in getattr(sc, "constant_outputs", ()):
            totals.append(np.full(n_p, np.nan))  # no spread at this exposure: no indices
            halves.append(np.full(n_p, np.nan))
            continue
        if per is None:
            return np.zeros((0, 0)), np.zeros((0, 0))
        totals.append(np.asarray(per.total, dtype=float))
        halves.append(np.asarray(per.total_ci, dtype=float))
    return np.array(totals), np.array(halves)


def _join(first: Outputs, second: Outputs) -> Outputs:
    fields = {k: np.concatenate([first[k], second[k]], axis=1) for k in first.fields}
    return replace(first, fields=fields)


def _stack(first: Design, second: Design) -> Design:
    unit = np.vstack([first.unit, second.unit])
    block = np.concatenate([first.block, second.block])
    unit.setflags(write=False)
    block.setflags(write=False)
    return Design(unit, block, "sobol", first.base_samples + second.base_samples, first.groups,
                  first.replicates)


def grow_until_converged(study: Study, *, max_runs: int | None = None,
                         chunk_size: int | None = None, workers: int = 1) -> Growth:
    """Double a Saltelli study's base samples until its index intervals are narrow enough.

    Parameters
    ----------
    study
        A ``method = "saltelli"`` study, steady or transient; ``analysis.samples`` is the first
        N and ``analysis.index_ci_threshold`` the target half-width (a transient study is
        judged on :func:`judged_outputs`).
    max_runs
        Budget of model runs, every exposure counted; a doubling that would pass it, or that
        would not fit in this machine's memory, is not started.
    chunk_size
        Samples per evaluation chunk.
    workers
        Worker processes of a local dask cluster; results do not depend on it.

    Returns
    -------
    Growth
    """
    a = study.analysis
    if not get_method(a.method).grows:
        raise ValueError(f"sequential growth needs method = 'saltelli', got {a.method!r}")
    budget = DEFAULT_MAX_RUNS if max_runs is None else int(max_runs)
    d = len(study.parameters)
    groups = parameter_groups(study)[1]
    n_s = scenario_count(study)
    n = int(a.samples)
    method = get_method(a.method)
    judged = judged_outputs(study)
    path = judged[0] if judged else PATH_OUTPUT
    design = sobol_design(n, d, seed=a.seed, groups=groups, replicates=a.replicates)
    if design.n_rows * n_s > budget:
        raise ValueError(f"the first step (N = {n}) needs {design.n_rows * n_s} model runs, "
                         f"above the budget of {budget}")
    inputs = unit_to_inputs(study.parameters, design.unit)
    outputs = evaluate(study, inputs, chunk_size=chunk_size, workers=workers)
    steps: list[GrowthStep] = []
    while True:
        current = replace(study, analysis=replace(a, samples=n))
        prop = Propagation(design=design, inputs=inputs, outputs=outputs)
        analysis = method.analyse(current, prop)
        widest, wide = interval_widths(analysis, a.index_ci_threshold, outputs=judged)
        runs = design.n_rows * n_s
        steps.append(GrowthStep(n, runs, widest, wide, *total_path(analysis, path)))
        if wide == 0:
            reason = (f"every index interval is at most ±{a.index_ci_threshold:g} at N = {n}")
            return Growth(current, prop, analysis, tuple(steps), True, reason,
                          a.index_ci_threshold, budget, judged, path)
        if 2 * runs > budget:
            reason = (f"budget reached: doubling to N = {2 * n} would need {2 * runs} model "
                      f"runs, above --max-runs {budget}; {wide} index interval(s) still wider "
                      f"than ±{a.index_ci_threshold:g}")
            return Growth(current, prop, analysis, tuple(steps), False, reason,
                          a.index_ci_threshold, budget, judged, path)
        if not _fits(study, 2 * n):  # a transient study: checked step by step
            reason = (f"memory reached: doubling to N = {2 * n} would need about "
                      f"{memory_estimate(study, 2 * n) / 2**30:.1f} GiB, more than "
                      f"{100 * MEMORY_SHARE:g} % of this machine's memory; {wide} index "
                      f"interval(s) still wider than ±{a.index_ci_threshold:g}")
            return Growth(current, prop, analysis, tuple(steps), False, reason,
                          a.index_ci_threshold, budget, judged, path)
        extra = sobol_design(n, d, seed=a.seed, groups=groups, start=n,
                             replicates=a.replicates)
        extra_inputs = unit_to_inputs(study.parameters, extra.unit)
        extra_outputs = evaluate(study, extra_inputs, chunk_size=chunk_size, workers=workers)
        design = _stack(design, extra)
        inputs = np.vstack([inputs, extra_inputs])
        outputs = _join(outputs, extra_outputs)
        n *= 2


def _fits(study: Study, samples: int) -> bool:
    """Whether a step of ``samples`` base rows fits in this machine's memory
    (:func:`plyrisk.pipeline.options.check_memory`)."""
    try:
        check_memory(study, samples)
    except OptionError:
        return False
    return True


def growth_lines(growth: Growth) -> list[str]:
    """Summary lines: the path of interval widths and why the growth stopped."""
    lines = [f"sequential growth (--until-converged: target half-width ±{growth.target:g}, "
             f"budget {growth.max_runs} model runs; earlier runs reused at every doubling):"]
    if growth.outputs:
        from plyrisk.analysis.outputs import DERIVED_OUTPUTS

        lines.append("  judged on the indices of " + " and ".join(growth.outputs)
                     + " (an output with no spread at an exposure has no indices there; an "
                     "index without an estimate counts as too wide)")
        lines += [f"  {o}: {DERIVED_OUTPUTS[o].rule}" for o in growth.outputs
                  if o in DERIVED_OUTPUTS]
    for step in growth.steps:
        widest = (f"{step.widest:.4f}" if np.isfinite(step.widest)
                  else "n/a (no index estimated yet)")
        lines.append(f"  N = {step.base_samples:>7}: {step.runs:>9} model runs, widest "
                     f"half-width {widest}, {step.unconverged} wider than the target")
    lines.append(("  converged: " if growth.converged else "  NOT converged: ") + growth.reason)
    return lines


def add_growth(ds: xr.Dataset, growth: Growth) -> xr.Dataset:
    """The growth path as ``growth_*`` variables of a results dataset.

    Parameters
    ----------
    ds
        The dataset of the final step.
    growth
        The growth.
    """
    dims = ("growth_step",)

    def var(values, dtype, long_name):
        return xr.Variable(dims, np.array(values, dtype=dtype),
                           {"units": "1", "long_name": long_name, "method": "saltelli"})

    steps = growth.steps
    new = {
        "growth_base_samples": var([s.base_samples for s in steps], np.int64,
                                   "base samples N of each growth step"),
        "growth_runs": var([s.runs for s in steps], np.int64,
                           "model runs made up to each growth step (every exposure)"),
        "growth_widest_half_width": var([s.widest for s in steps], float,
                                        "widest index interval half-width at each step"),
        "growth_unconverged": var([s.unconverged for s in steps], np.int64,
                                  "indices wider than the target at each step"),
    }
    if steps and all(st.total.size and st.total.shape == steps[0].total.shape for st in steps):
        total = np.stack([st.total for st in steps])
        half = np.stack([st.total_ci for st in steps])
        tdims: tuple[str, ...] = ("growth_step", "scenario", "parameter")
        if "scenario" not in ds.dims:
            total, half, tdims = total[:, 0], half[:, 0], ("growth_step", "parameter")
        of = ("the inner-surface temperature" if growth.path_output == PATH_OUTPUT
              else growth.path_output)
        for name, values, what in (
                ("growth_sobol_total", total, f"total Sobol index of {of} at each growth "
                 "step"),
                ("growth_sobol_total_ci", half, "half-width of that index's interval at each "
                 "growth step")):
            new[name] = xr.Variable(tdims, values, {"units": "1", "long_name": what,
                                                     "method": "saltelli"})
    out = ds.assign(new)
    out.attrs.update({"growth_converged": int(growth.converged), "growth_reason": growth.reason,
                      "growth_target": float(growth.target),
                      "growth_max_runs": int(growth.max_runs),
                      "growth_output": growth.path_output})
    if growth.outputs:
        out.attrs["growth_judged_outputs"] = ", ".join(growth.outputs)
    return out
