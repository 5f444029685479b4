"""Morris screening of a study: ``method = "morris"`` on its own, and ``[screening]`` before a
Saltelli or PCE study (the inputs it marks safe are fixed at nominal, the rest analysed).

A Morris design samples a grid, not the input distributions, so a Morris study reports no
percentiles and no exceedance probability: only mu*, mu and sigma per input and output, the
ranking by mu* and which inputs are safe to fix at nominal
(:func:`plyrisk.analysis.morris.safe_to_fix`).
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import TYPE_CHECKING

import numpy as np
import xarray as xr

from plyrisk.design.morris import morris_design
from plyrisk.methods.morris import MorrisAnalysis, morris_analysis
from plyrisk.propagate.evaluate import Propagation, evaluate, scenario_count, unit_to_inputs

if TYPE_CHECKING:  # pragma: no cover - for type checkers only
    from plyrisk.study.definition import Study

PRIMARY = "inner_surface_temperature"


# ----------------------------------------------------------------------------------------------
# [screening]: Morris first, then the study's method on what is kept
# ----------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Screening:
    """The outcome of ``[screening]``.

    Attributes
    ----------
    study
        The study as configured (every uncertain input).
    reduced
        The study with the fixed inputs removed from ``parameters`` (they take their nominal).
    analysis
        The Morris measures of the screening run.
    fixed
        Per parameter of ``study``: fixed at nominal.
    reasons
        Per parameter: why it was kept or fixed.
    runs
        Model runs of the screening (all exposures).
    """

    study: Study
    reduced: Study
    analysis: MorrisAnalysis
    fixed: np.ndarray
    reasons: tuple[str, ...]
    runs: int


def screen_study(study: Study, *, chunk_size: int | None = None, workers: int = 1) -> Screening:
    """Run the ``[screening]`` of a study and return the reduced study.

    Parameters
    ----------
    study
        A study with ``screening`` settings.
    chunk_size
        Samples per evaluation chunk.
    workers
        Worker processes of a local dask cluster; results do not depend on it.

    Returns
    -------
    Screening
        At least one input is kept: those listed in ``keep`` and, always, the one with the
        largest mu*. A transient study is judged on the outputs of
        :func:`plyrisk.pipeline.sequential.judged_outputs` (skin: the capped time to
        second-degree burn and the burn indicator), see :func:`_screen_transient`.
    """
    settings = study.screening
    if settings is None:
        raise ValueError("the study has no [screening] section")
    a = study.analysis
    d = len(study.parameters)
    design = morris_design(settings.trajectories, d, seed=a.seed, levels=settings.levels)
    inputs = unit_to_inputs(study.parameters, design.unit)
    outputs = evaluate(study, inputs, chunk_size=chunk_size, workers=workers)
    prop = Propagation(design=design, inputs=inputs, outputs=outputs)
    if study.transient is not None:
        return _screen_transient(study, prop)
    morris_study = replace(study, analysis=replace(a, outputs=()))
    analysis = morris_analysis(morris_study, prop, threshold=settings.threshold,
                               levels=settings.levels)
    fixed = analysis.fixable.copy()
    names = [p.name for p in study.parameters]
    top = np.zeros(d, dtype=bool)
    for here in analysis.indices:
        top[int(np.argmax(here[PRIMARY].mu_star))] = True
    reasons = []
    worst_mu = np.max([h[PRIMARY].mu_star + h[PRIMARY].mu_star_ci for h in analysis.indices],
                      axis=0)
    worst_sigma = np.max([h[PRIMARY].sigma for h in analysis.indices], axis=0)
    scale = np.max([np.max(h[PRIMARY].mu_star) for h in analysis.indices])
    for j, name in enumerate(names):
        share = (f"mu* upper bound {_share(worst_mu[j], scale)} and sigma "
                 f"{_share(worst_sigma[j], scale)} of the largest mu*")
        if name in settings.keep:
            fixed[j] = False
            reasons.append(f"kept: listed in screening.keep ({share})")
        elif fixed[j] and top[j]:
            fixed[j] = False
            reasons.append(f"kept: the most influential input ({share})")
        elif fixed[j]:
            reasons.append(f"fixed at nominal: {share}, both below the threshold "
                           f"{100 * settings.threshold:g} % at every exposure")
        else:
            reasons.append(f"kept: {share}; threshold {100 * settings.threshold:g} %")
    kept = tuple(p for p, f in zip(study.parameters, fixed, strict=True) if not f)
    reduced = replace(study, parameters=kept, screening=None)
    runs = design.n_rows * scenario_count(study)
    return Screening(study, reduced, analysis, fixed, tuple(reasons), runs)


def _screen_transient(study: Study, prop: Propagation) -> Screening:
    """The decisions of a ``[screening]`` of a transient study, from its Morris runs.

    Each judged output (:func:`plyrisk.pipeline.sequential.judged_outputs`) is derived by its
    rule (:data:`plyrisk.analysis.outputs.DERIVED_OUTPUTS`: a time capped at the horizon, a
    0/1 event indicator). An input is fixed only when, for every judged output at every
    exposure where that output varies, the upper end of its mu* interval and its sigma are both
    below the threshold share of the largest mu*; the input with the largest mu* of each such
    output and exposure is always kept. When no judged output varies in any screening run (no
    run burns, or every one does) nothing can be learned and nothing is fixed.
    """
    from plyrisk.analysis.morris import morris_indices, safe_to_fix
    from plyrisk.analysis.outputs import MemoryRows, output_column
    from plyrisk.analysis.study import AnalysisError, scenario_text
    from plyrisk.analysis.transient import transient_facts
    from plyrisk.pipeline.sequential import judged_outputs

    settings = study.screening
    assert settings is not None, "a screening is made from a study with [screening]"
    a = study.analysis
    judged = judged_outputs(study)
    source = MemoryRows(prop, horizon=transient_facts(study).horizon)
    names = [p.name for p in study.parameters]
    d = len(names)
    per_scenario = []
    for s in range(scenario_count(study)):
        here = {}
        for o in judged:
            try:
                here[o] = morris_indices(output_column(source, o, s), prop.design, names=names,
                                         levels=settings.levels,
                                         n_bootstrap=max(a.bootstrap, 2),
                                         confidence=a.confidence, seed=a.seed)
            except ValueError as err:
                raise AnalysisError(f"screening: Morris measures of {o}"
                                    f"{scenario_text(study, s)}: {err}") from None
        per_scenario.append(here)
    varying = [(s, o) for s, here in enumerate(per_scenario) for o in judged
               if not here[o].constant_output]
    safe = np.ones(d, dtype=bool) if varying else np.zeros(d, dtype=bool)
    top = np.zeros(d, dtype=bool)
    for s, o in varying:
        m = per_scenario[s][o]
        safe &= safe_to_fix(m, threshold=settings.threshold)
        top[int(np.argmax(m.mu_star))] = True
    shares: list[tuple[str, np.ndarray, np.ndarray, float]] = []
    for o in judged:
        pairs = [per_scenario[s][o] for s, oo in varying if oo == o]
        if not pairs:
            continue
        scale = max(float(np.max(m.mu_star)) for m in pairs)
        shares.append((o, np.max([m.mu_star + m.mu_star_ci for m in pairs], axis=0),
                       np.max([m.sigma for m in pairs], axis=0), scale))
    fixed = safe.copy()
    reasons = []
    limit = f"{100 * settings.threshold:g} %"
    for j, name in enumerate(names):
        share = "; ".join(f"{o}: mu* upper bound {_share(mu[j], sc)} and sigma "
                          f"{_share(sg[j], sc)} of the largest mu*"
                          for o, mu, sg, sc in shares)
        if name in settings.keep:
            fixed[j] = False
            reasons.append(f"kept: listed in screening.keep ({share or 'no spread'})")
        elif not varying:
            reasons.append(f"kept: {' and '.join(judged)} did not vary in any screening run "
                           "(no run reaches the event, or every one does), so nothing can be "
                           "fixed")
        elif fixed[j] and top[j]:
            fixed[j] = False
            reasons.append(f"kept: the most influential input ({share})")
        elif fixed[j]:
            reasons.append(f"fixed at nominal: {share}, all below the threshold {limit} at "
                           "every exposure where the output varies")
        else:
            reasons.append(f"kept: {share}; threshold {limit}")
    kept = tuple(p for p, f in zip(study.parameters, fixed, strict=True) if not f)
    reduced = replace(study, parameters=kept, screening=None)
    runs = prop.design.n_rows * scenario_count(study)
    analysis = MorrisAnalysis(per_scenario, safe, judged, settings.threshold)
    return Screening(study, reduced, analysis, fixed, tuple(reasons), runs)


def _share(value: float, scale: float) -> str:
    return f"{100 * value / scale:.3g} %" if scale > 0 else "n/a"


def screening_lines(screening: Screening) -> list[str]:
    """Summary lines: what the screening fixed and why."""
    s = screening.study.screening
    assert s is not None, "a screening is made from a study with [screening]"
    n_fixed = int(screening.fixed.sum())
    lines = [f"screening (Morris, {s.trajectories} trajectories of {s.levels} levels, "
             f"{screening.runs} model runs): {n_fixed} of {screening.fixed.size} inputs fixed "
             "at nominal, the study below analyses the rest"]
    for p, fixed, why in zip(screening.study.parameters, screening.fixed, screening.reasons,
                             strict=True):
        if fixed:
            lines.append(f"  fixed: {p.name} = {p.format(p.distribution.nominal)} ({why})")
    return lines


def add_screening(ds: xr.Dataset, screening: Screening) -> xr.Dataset:
    """The screening's measures and decisions as ``screening_*`` variables of a dataset.

    Parameters
    ----------
    ds
        The results dataset of the reduced study.
    screening
        The screening.

    Returns
    -------
    xarray.Dataset
        With dimension ``screened_parameter`` (every uncertain input of the config).
    """
    if screening.study.transient is not None:
        return _add_transient_screening(ds, screening)
    names = np.array([p.name for p in screening.study.parameters], dtype=np.str_)
    settings = screening.study.screening
    assert settings is not None, "a screening is made from a study with [screening]"
    dims = ("screened_parameter",)
    ind = screening.analysis.indices
    swept = "scenario" in ds.dims
    sd = ("scenario",) if swept else ()

    def stack(attr):
        arr = np.array([getattr(h[PRIMARY], attr) for h in ind])
        return arr if swept else arr[0]

    attrs = {"method": "morris", "output": PRIMARY}
    new = {
        "screening_mu_star": xr.Variable((*sd, *dims), stack("mu_star"), {
            "units": "K", "long_name": "Morris mu* of the inner-surface temperature (mean "
            "absolute elementary effect per grid step)", **attrs}),
        "screening_mu_star_ci": xr.Variable((*sd, *dims), stack("mu_star_ci"), {
            "units": "K", "long_name": "half-width of the bootstrap interval of mu*",
            "confidence": ind[0][PRIMARY].confidence, **attrs}),
        "screening_sigma": xr.Variable((*sd, *dims), stack("sigma"), {
            "units": "K", "long_name": "Morris sigma of the inner-surface temperature "
            "(standard deviation of the elementary effects)", **attrs}),
        **_decision_variables(screening, attrs, " (see parameter_si_unit for the inputs kept)"),
    }
    out = ds.assign(new).assign_coords(screened_parameter=xr.Variable(
        dims, names, {"units": "1", "long_name": "uncertain input of the config, screened"}))
    s = settings
    out.attrs.update({"screening_trajectories": int(s.trajectories),
                      "screening_levels": int(s.levels),
                      "screening_threshold": float(s.threshold),
                      "screening_runs": int(screening.runs),
                      "screening_fixed": ", ".join(names[screening.fixed]) or "none"})
    return out


def _decision_variables(screening: Screening, attrs: dict, units_note: str
                        ) -> dict[str, xr.Variable]:
    """The screening's decision per input (fixed, why, the nominal a fixed input takes), for
    steady and transient studies alike."""
    settings = screening.study.screening
    assert settings is not None, "a screening is made from a study with [screening]"
    dims = ("screened_parameter",)
    return {
        "screening_fixed": xr.Variable(dims, screening.fixed, {
            "units": "1", "long_name": "input fixed at its nominal by the screening",
            "threshold": settings.threshold, **attrs}),
        "screening_reason": xr.Variable(dims, np.array(screening.reasons, dtype=str), {
            "units": "1", "long_name": "why the screening kept or fixed the input", **attrs}),
        "screening_nominal": xr.Variable(dims, np.array(
            [p.distribution.nominal for p in screening.study.parameters]), {
            "long_name": "nominal value of each screened input (the value a fixed input "
            "takes)", "comment": "units differ per input: each is in the SI unit of its "
            f"quantity{units_note}", **attrs}),
    }


def _add_transient_screening(ds: xr.Dataset, screening: Screening) -> xr.Dataset:
    """:func:`add_screening` for a transient study: the measures of every judged output, along
    the dimension ``screening_output``."""
    from plyrisk.analysis.outputs import DERIVED_OUTPUTS

    study = screening.study
    settings = study.screening
    assert settings is not None, "a screening is made from a study with [screening]"
    names = np.array([p.name for p in study.parameters], dtype=np.str_)
    outputs = tuple(screening.analysis.outputs)
    ind = screening.analysis.indices
    swept = "scenario" in ds.dims
    sd = ("scenario",) if swept else ()
    dims = ("screened_parameter",)
    mdims = (*sd, "screening_output", *dims)
    units = ", ".join(f"{o}: {DERIVED_OUTPUTS[o].units}" for o in outputs)

    def stack(attr):
        arr = np.array([[getattr(h[o], attr) for o in outputs] for h in ind])
        return arr if swept else arr[0]

    attrs = {"method": "morris", "output": ", ".join(outputs)}
    comment = (f"units of the output along screening_output ({units}) per grid step; see "
               "screening_output_rule for how each output is derived")
    new = {
        "screening_mu_star": xr.Variable(mdims, stack("mu_star"), {
            "long_name": "Morris mu* of each judged output (mean absolute elementary effect "
            "per grid step)", "comment": comment, **attrs}),
        "screening_mu_star_ci": xr.Variable(mdims, stack("mu_star_ci"), {
            "long_name": "half-width of the bootstrap interval of mu*", "comment": comment,
            "confidence": ind[0][outputs[0]].confidence, **attrs}),
        "screening_sigma": xr.Variable(mdims, stack("sigma"), {
            "long_name": "Morris sigma of each judged output (standard deviation of the "
            "elementary effects)", "comment": comment, **attrs}),
        "screening_output_constant": xr.Variable((*sd, "screening_output"), np.array(
            [[h[o].constant_output for o in outputs] for h in ind]) if swept else np.array(
            [ind[0][o].constant_output for o in outputs]), {
            "units": "1", "long_name": "the output did not vary in the screening runs (left "
            "out of the decision at that exposure)", **attrs}),
        **_decision_variables(screening, attrs, ""),
    }
    out = ds.assign(new).assign_coords(
        screened_parameter=xr.Variable(dims, names, {
            "units": "1", "long_name": "uncertain input of the config, screened"}),
        screening_output=xr.Variable(("screening_output",), np.array(outputs, dtype=np.str_), {
            "units": "1", "long_name": "derived output the screening judged"}),
        screening_output_rule=xr.Variable(("screening_output",), np.array(
            [DERIVED_OUTPUTS[o].rule for o in outputs], dtype=np.str_), {
            "units": "1", "long_name": "how the judged output is derived"}))
    out.attrs.update({"screening_trajectories": int(settings.trajectories),
                      "screening_levels": int(settings.levels),
                      "screening_threshold": float(settings.threshold),
                      "screening_runs": int(screening.runs),
                      "screening_fixed": ", ".join(names[screening.fixed]) or "none",
                      "screening_outputs": ", ".join(outputs)})
    return out
