"""Morris screening of a study: ``method = "morris"`` on its own, and ``[screening]`` before a
Saltelli or PCE study (the inputs it marks safe are fixed at nominal, the rest analysed).

A Morris design samples a grid, not the input distributions, so a Morris study reports no
percentiles and no exceedance probability: only mu*, mu and sigma per input and output, the
ranking by mu* and which inputs are safe to fix at nominal
(:func:`plyrisk.analysis.morris.safe_to_fix`).
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np
import xarray as xr

from plyrisk.analysis.morris import MorrisIndices, morris_design, morris_indices, safe_to_fix
from plyrisk.analysis.study import AnalysisError, output_values
from plyrisk.cautions import cautions_text
from plyrisk.propagate.evaluate import Propagation, evaluate, scenario_count, unit_to_inputs
from plyrisk.results.dataset import library_versions

PRIMARY = "inner_surface_temperature"


@dataclass(frozen=True)
class MorrisAnalysis:
    """Morris measures of every output and exposure of a study.

    Attributes
    ----------
    indices
        Per exposure: output name → :class:`plyrisk.analysis.morris.MorrisIndices`.
    fixable
        Per parameter: safe to fix at nominal at every exposure (inner-surface temperature).
    outputs
        Outputs analysed, the inner-surface temperature first.
    threshold
        Share of the largest mu* used for ``fixable``.
    """

    indices: list[dict[str, MorrisIndices]]
    fixable: np.ndarray
    outputs: tuple[str, ...]
    threshold: float


def morris_analysis(study, propagation: Propagation, *, threshold: float | None = None,
                    levels: int | None = None) -> MorrisAnalysis:
    """mu*, mu and sigma of every output at every exposure, and the inputs safe to fix.

    Parameters
    ----------
    study
        The study (its ``analysis`` gives levels, bootstrap, confidence and seed).
    propagation
        Its propagation on a Morris design.
    threshold
        Share of the largest mu* below which an input is safe to fix; default
        ``analysis.screening_threshold``.
    levels
        Grid levels of the design; default ``analysis.levels``.

    Returns
    -------
    MorrisAnalysis
    """
    a = study.analysis
    threshold = a.screening_threshold if threshold is None else threshold
    levels = a.levels if levels is None else levels
    outputs = (PRIMARY, *[o for o in a.outputs if o != PRIMARY])
    names = [p.name for p in study.parameters]
    per_scenario = []
    fixable = np.ones(len(names), dtype=bool)
    for s in range(scenario_count(study)):
        here = {}
        for o in outputs:
            try:
                here[o] = morris_indices(output_values(propagation, o, s), propagation.design,
                                         names=names, levels=levels, n_bootstrap=max(
                                             a.bootstrap, 2), confidence=a.confidence,
                                         seed=a.seed)
            except ValueError as err:
                raise AnalysisError(f"Morris screening{_at(study, s)}: {err}") from None
        fixable &= safe_to_fix(here[PRIMARY], threshold=threshold)
        per_scenario.append(here)
    return MorrisAnalysis(per_scenario, fixable, outputs, threshold)


def _at(study, s: int) -> str:
    if study.scenarios is None:
        return ""
    return f" at {study.scenarios.quantity} = {study.scenarios.labels[s]}"


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

    study: object
    reduced: object
    analysis: MorrisAnalysis
    fixed: np.ndarray
    reasons: tuple[str, ...]
    runs: int


def screen_study(study, *, chunk_size: int | None = None, workers: int = 1) -> Screening:
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
        largest mu*.
    """
    settings = study.screening
    a = study.analysis
    d = len(study.parameters)
    design = morris_design(settings.trajectories, d, seed=a.seed, levels=settings.levels)
    inputs = unit_to_inputs(study.parameters, design.unit)
    outputs = evaluate(study, inputs, chunk_size=chunk_size, workers=workers)
    prop = Propagation(design=design, inputs=inputs, outputs=outputs)
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


def _share(value: float, scale: float) -> str:
    return f"{100 * value / scale:.3g} %" if scale > 0 else "n/a"


def screening_lines(screening: Screening) -> list[str]:
    """Summary lines: what the screening fixed and why."""
    s = screening.study.screening
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
    names = np.array([p.name for p in screening.study.parameters], dtype=str)
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
        "screening_fixed": xr.Variable(dims, screening.fixed, {
            "units": "1", "long_name": "input fixed at its nominal by the screening",
            "threshold": screening.study.screening.threshold, **attrs}),
        "screening_reason": xr.Variable(dims, np.array(screening.reasons, dtype=str), {
            "units": "1", "long_name": "why the screening kept or fixed the input", **attrs}),
        "screening_nominal": xr.Variable(dims, np.array(
            [p.distribution.nominal for p in screening.study.parameters]), {
            "units": "SI", "long_name": "nominal value of each screened input (the value a "
            "fixed input takes)", **attrs}),
    }
    out = ds.assign(new).assign_coords(screened_parameter=xr.Variable(
        dims, names, {"units": "1", "long_name": "uncertain input of the config, screened"}))
    s = screening.study.screening
    out.attrs.update({"screening_trajectories": int(s.trajectories),
                      "screening_levels": int(s.levels),
                      "screening_threshold": float(s.threshold),
                      "screening_runs": int(screening.runs),
                      "screening_fixed": ", ".join(names[screening.fixed]) or "none"})
    return out


# ----------------------------------------------------------------------------------------------
# method = "morris": dataset and summary
# ----------------------------------------------------------------------------------------------


def morris_dataset(study, propagation: Propagation, analysis: MorrisAnalysis) -> xr.Dataset:
    """The results dataset of a Morris study: samples and Morris measures.

    Parameters
    ----------
    study
        The study.
    propagation
        Its propagation.
    analysis
        Its Morris measures.

    Returns
    -------
    xarray.Dataset
        No percentile or exceedance variables (a Morris design does not sample the input
        distributions).
    """
    swept = study.scenarios is not None
    sd = ("scenario",) if swept else ()
    out = propagation.outputs
    a = study.analysis
    names = [p.name for p in study.parameters]

    def per(x):
        x = np.asarray(x)
        return x if swept else x[0]

    def var(dims, data, units, long_name, **attrs):
        return xr.Variable(dims, data, {"units": units, "long_name": long_name, **attrs})

    def measure(attr):
        return per([[getattr(h[o], attr) for o in analysis.outputs] for h in analysis.indices])

    n = propagation.inputs.shape[0]
    coords = {
        "sample": var(("sample",), np.arange(n), "1", "sample index"),
        "parameter": var(("parameter",), np.array(names, dtype=str), "1", "uncertain parameter"),
        "parameter_group": var(("parameter",), np.array([p.group for p in study.parameters],
                                                        dtype=str), "1", "layer of each "
                               "parameter"),
        "parameter_nominal": var(("parameter",), np.array(
            [p.distribution.nominal for p in study.parameters]), "SI", "nominal value"),
        "output": var(("output",), np.array(analysis.outputs, dtype=str), "1",
                      "model output the measures refer to"),
    }
    if swept:
        coords["scenario"] = var(("scenario",), np.asarray(study.scenarios.values), "SI",
                                 f"swept hot-side {study.scenarios.quantity}")
        coords["scenario_label"] = var(("scenario",), np.array(study.scenarios.labels,
                                                               dtype=str), "1",
                                       "swept exposure as given in the config")
    units = {PRIMARY: "K", "heat_flux": "W m-2"}
    unit = [units.get(o, "K") for o in analysis.outputs]
    m = {"method": "morris", "output_units": ", ".join(unit)}
    conv = per([[h[o].converged(a.index_ci_threshold) for o in analysis.outputs]
                for h in analysis.indices])
    rank = np.zeros_like(conv, dtype=np.int32)
    for idx in np.ndindex(conv.shape[:-1]):
        h = analysis.indices[idx[0] if swept else 0][analysis.outputs[idx[-1]]]
        rank[idx][h.order()] = np.arange(1, len(names) + 1)
    dims = (*sd, "output", "parameter")
    data = {
        "input": var(("sample", "parameter"), propagation.inputs, "SI",
                     "input value of each parameter"),
        "inner_surface_temperature": var((*sd, "sample"), per(out[PRIMARY]), "K",
                                         "inner-surface temperature"),
        "heat_flux": var((*sd, "sample"), per(out["heat_flux"]), "W m-2",
                         "heat flux through the assembly"),
        "converged": var((*sd, "sample"), per(out["converged"]), "1",
                         "sample converged to a physically valid solution"),
        "morris_mu_star": var(dims, measure("mu_star"), "output units", "Morris mu*: mean "
                              "absolute elementary effect per grid step", **m),
        "morris_mu_star_ci": var(dims, measure("mu_star_ci"), "output units",
                                 "half-width of the bootstrap interval of mu*",
                                 confidence=a.confidence, **m),
        "morris_mu": var(dims, measure("mu"), "output units", "Morris mu: mean elementary "
                         "effect (signed)", **m),
        "morris_sigma": var(dims, measure("sigma"), "output units", "Morris sigma: standard "
                            "deviation of the elementary effects (non-linearity, "
                            "interactions)", **m),
        "morris_mu_star_converged": var(dims, conv, "1", "mu* interval half-width at most "
                                        "index_ci_threshold times the largest mu*",
                                        threshold=a.index_ci_threshold, **m),
        "morris_rank": var(dims, rank, "1", "rank by mu* (1 = most influential)", **m),
        "morris_safe_to_fix": var(("parameter",), analysis.fixable, "1", "safe to fix at "
                                  "nominal: mu* upper bound and sigma of the inner-surface "
                                  "temperature below the threshold share of the largest mu* at "
                                  "every exposure", threshold=analysis.threshold, **m),
        "morris_trajectories_dropped": var((*sd, "output"), measure("dropped_trajectories"),
                                           "1", "trajectories left out because a run in them "
                                           "did not converge", **m),
    }
    attrs = {"title": study.title, "config_source": str(study.source),
             "config_text": study.text, "seed": int(a.seed), "method": "morris",
             "design": "morris", "base_samples": int(propagation.design.base_samples),
             "levels": int(a.levels), "evaluations": int(n), "parameters": len(names),
             "confidence": float(a.confidence), "bootstrap": int(a.bootstrap),
             "index_ci_threshold": float(a.index_ci_threshold),
             "screening_threshold": float(analysis.threshold),
             "notes": "method = morris: screening only; no percentiles or exceedance (a Morris "
                      "design samples a grid, not the input distributions)",
             "cautions": cautions_text(), "Conventions": "CF-1.10"}
    attrs.update({f"version_{k}": v for k, v in library_versions().items()})
    return xr.Dataset(data, coords, attrs)


def morris_lines(study, propagation: Propagation, analysis: MorrisAnalysis, *,
                 top: int) -> list[str]:
    """Summary lines of a Morris study (every exposure; the inner-surface temperature)."""
    a = study.analysis
    lines = [f"method: morris, {propagation.design.base_samples} trajectories of {a.levels} "
             f"levels, {len(study.parameters)} uncertain parameters, "
             f"{propagation.inputs.shape[0]} model evaluations"
             + (f" per exposure × {scenario_count(study)} exposures" if study.scenarios
                else "") + f"; seed {a.seed}",
             "screening only: no percentiles or exceedance (a Morris design samples a grid, "
             "not the input distributions); use method = \"saltelli\" or \"pce\" for those"]
    for s, here in enumerate(analysis.indices):
        m = here[PRIMARY]
        conv = m.converged(a.index_ci_threshold)
        lines.append("")
        if study.scenarios is not None:
            lines.append(f"exposure {s + 1}: {study.scenarios.quantity} = "
                         f"{study.scenarios.labels[s]}")
        lines.append(f"inputs ranked by Morris mu* of the inner-surface temperature (K per grid "
                     f"step; ± bootstrap half-width, ok = at most {a.index_ci_threshold:g} × "
                     "the largest mu*; sigma):")
        for r, j in enumerate(m.order()[:max(top, len(m.names))], start=1):
            flag = "ok" if conv[j] else "WIDE"
            safe = "   safe to fix at nominal" if analysis.fixable[j] else ""
            lines.append(f"  {r}. {m.names[j]:<32} mu* {m.mu_star[j]:8.3g} ± "
                         f"{m.mu_star_ci[j]:.2g} {flag:<4}  sigma {m.sigma[j]:8.3g}{safe}")
        if m.dropped_trajectories:
            lines.append(f"  {m.dropped_trajectories} trajectories left out: a run in them did "
                         "not converge")
    n_fix = int(analysis.fixable.sum())
    lines.append("")
    lines.append(f"{n_fix} of {analysis.fixable.size} inputs are safe to fix at nominal (mu* "
                 f"upper bound and sigma below {analysis.threshold:g} × the largest mu* at every "
                 "exposure); add [screening] to a saltelli or pce study to fix them "
                 "automatically")
    return lines
