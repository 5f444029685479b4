"""Analysis of a propagated study: percentile bands, exceedance of the limit, Sobol indices and
the ranking of parameters and layers.

Non-converged samples (flagged by the solver, NaN outputs) never enter a statistic unnoticed:
percentiles and the exceedance probability use the converged samples only and report how many
were left out; the Sobol estimators drop every base row in which any evaluation failed (so the
estimator structure stays intact) and report the count.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from scipy import stats

from plyrisk.analysis.pce import CV_FOLDS, SurrogateIndices, surrogate_indices, surrogate_quantiles
from plyrisk.analysis.sobol import RankedIndex, SobolIndices, rank, sobol_indices
from plyrisk.analysis.statistics import Exceedance, QuantileEstimate, exceedance, quantiles
from plyrisk.errors import PlyriskError
from plyrisk.propagate.evaluate import Propagation, parameter_groups

SALIB_BOOTSTRAP_ROWS = 2**17
"""Largest base-row count whose Sobol' intervals come from SALib's bootstrap (it holds
N x resamples indices); larger designs use the batch jackknife of :mod:`plyrisk.analysis.streaming`
[-]."""

BAND_PROBABILITIES = (0.01, 0.05, 0.5, 0.95, 0.99)
"""Quantiles always computed, for the 5–95 % and 1–99 % bands of the profile figure [-]."""


class AnalysisError(PlyriskError, ValueError):
    """A study whose results cannot be analysed (e.g. no sample converged); one-line message."""


@dataclass(frozen=True)
class ScenarioAnalysis:
    """Statistics of one exposure.

    Attributes
    ----------
    inner_quantiles
        Quantiles of the inner-surface temperature with confidence intervals [K].
    interface_quantiles
        Quantiles of every face temperature, one :class:`QuantileEstimate` per face [K].
    exceedance
        Probability that the inner-surface temperature exceeds the limit, with its interval.
    indices
        Output name → (per-parameter, per-group) Sobol indices; empty unless ``method = saltelli``.
    ranking
        Output name → parameters ranked by total index.
    group_ranking
        Output name → groups (layers) ranked by total index.
    rank_correlation
        Spearman rank correlation of each input with the inner-surface temperature [-]
        (screening measure for designs without Sobol indices; computed for every design).
    nonconverged
        Samples that did not converge [-].
    surrogate, surrogate_groups
        Sobol indices of the inner-surface temperature from a polynomial-chaos surrogate,
        per parameter and per group, for designs without a Saltelli structure (else ``None``).
    onset_samples
        Samples with a gap past the onset of natural convection [-].
    air_range_samples
        Samples with a gap mean temperature outside the air-property range [-].
    surrogate_quantiles
        Quantiles of the inner-surface temperature from the surrogate, at the study's
        probabilities, when its leave-one-out error (and, for selected terms, its
        cross-validation error) is at most ``pce_max_loo_error`` (else ``None``) [K].
    surrogate_quantile_status
        Why the surrogate's quantiles were computed or refused [-].
    """

    inner_quantiles: QuantileEstimate
    interface_quantiles: list[QuantileEstimate]
    exceedance: Exceedance
    indices: dict[str, tuple[SobolIndices, SobolIndices | None]]
    ranking: dict[str, list[RankedIndex]]
    group_ranking: dict[str, list[RankedIndex]]
    rank_correlation: np.ndarray
    nonconverged: int
    surrogate: SurrogateIndices | None = None
    surrogate_groups: SurrogateIndices | None = None
    onset_samples: int = 0
    air_range_samples: int = 0
    surrogate_quantiles: np.ndarray | None = None
    surrogate_quantile_status: str = ""


@dataclass(frozen=True)
class StudyAnalysis:
    """Statistics of every exposure of a study, plus what the design could and could not give."""

    scenarios: list[ScenarioAnalysis]
    probabilities: np.ndarray
    outputs: tuple[str, ...]
    group_names: tuple[str, ...]
    notes: list[str] = field(default_factory=list)


def output_values(propagation: Propagation, output: str, scenario: int) -> np.ndarray:
    """One scalar output per sample: ``inner_surface_temperature``, ``heat_flux`` or a face name.

    Parameters
    ----------
    propagation
        The propagated study. [-]
    output
        Output name [-].
    scenario
        Scenario index [-].

    Returns
    -------
    numpy.ndarray
        Shape ``(n_samples,)``, SI.
    """
    out = propagation.outputs
    if output in ("inner_surface_temperature", "heat_flux"):
        return out[output][scenario]
    if output in out.interface_names:
        return out["interface_temperature"][scenario][:, out.interface_names.index(output)]
    raise ValueError(
        f"output {output!r} is not one of inner_surface_temperature, heat_flux, "
        + ", ".join(out.interface_names)
    )


def output_column(reader, output: str, scenario: int, start: int, stop: int) -> np.ndarray:
    """Rows ``[start, stop)`` of one scalar output of a store
    (:class:`plyrisk.propagate.store.StoreReader`).

    Parameters
    ----------
    reader
        The store [-].
    output
        ``inner_surface_temperature``, ``heat_flux`` or a face name [-].
    scenario
        Scenario index [-].
    start, stop
        Row range [-].

    Returns
    -------
    numpy.ndarray
        Shape ``(stop - start,)``, SI.
    """
    if output in ("inner_surface_temperature", "heat_flux"):
        return reader.read(output, start, stop)[scenario]
    faces = list(reader.group.attrs["interface_names"])
    if output in faces:
        return reader.read("interface_temperature", start, stop)[scenario][:, faces.index(output)]
    raise ValueError(f"output {output!r} is not one of inner_surface_temperature, heat_flux, "
                     + ", ".join(faces))


def analyse(study, propagation: Propagation) -> StudyAnalysis:
    """Percentiles, exceedance, Sobol indices and rankings for every scenario.

    Parameters
    ----------
    study
        The parsed study (:class:`plyrisk.study.config.Study`). [-]
    propagation
        Its propagation. [-]

    Returns
    -------
    StudyAnalysis
    """
    a = study.analysis
    probabilities = np.array(sorted(set(a.percentiles) | set(BAND_PROBABILITIES)))
    extra = [o for o in a.outputs if o != "inner_surface_temperature"]
    outputs = ("inner_surface_temperature", *extra)
    group_names, _ = parameter_groups(study)
    design = propagation.design
    rows = design.independent_rows()
    names = [p.name for p in study.parameters]
    notes: list[str] = []
    if a.method == "pce":
        notes.append(
            f"method = pce ({a.design} design): percentiles and exceedance come straight from "
            "the samples; the Sobol indices shown are from a polynomial-chaos surrogate fitted "
            "to them: trust them only when its leave-one-out error is small (Q2 close to 1); "
            "rank correlations are a screening measure only."
        )
    if a.method == "saltelli" and design.base_samples > SALIB_BOOTSTRAP_ROWS:
        notes.append(f"{design.base_samples} base samples: Sobol index intervals from a "
                     "batch jackknife (plyrisk.analysis.streaming) rather than the bootstrap")
    result = []
    n_s = propagation.outputs["converged"].shape[0]
    for s in range(n_s):
        y = output_values(propagation, "inner_surface_temperature", s)
        if not np.any(np.isfinite(y[rows])):
            raise AnalysisError(
                f"no sample converged{_scenario_text(study, s)}: the solver gave up on all "
                f"{y.size} samples; raise [model] max_iterations or check the inputs"
            )
        inner_q = quantiles(y[rows], probabilities, confidence=a.confidence)
        faces = propagation.outputs["interface_temperature"][s][rows]
        face_q = [
            quantiles(faces[:, i], probabilities, confidence=a.confidence)
            for i in range(faces.shape[1])
        ]
        exc = exceedance(y[rows], a.limit, confidence=a.confidence)
        indices: dict[str, tuple[SobolIndices, SobolIndices | None]] = {}
        if a.method == "saltelli" and names and design.base_samples > SALIB_BOOTSTRAP_ROWS:
            from plyrisk.analysis.streaming import MemoryRows, sobol_jackknife

            indices = {o: sobol_jackknife(MemoryRows(propagation), o, s, study,
                                          confidence=a.confidence) for o in outputs}
        elif a.method == "saltelli" and names:
            indices = {o: sobol_indices(output_values(propagation, o, s), design, names=names,
                                        group_names=group_names, n_bootstrap=a.bootstrap,
                                        confidence=a.confidence, seed=a.seed)
                       for o in outputs}
        ranking, group_ranking = rank_indices(indices, a.index_ci_threshold)
        pce = SurrogateResult()
        if a.method == "pce" and names:
            pce = fit_surrogate(study, design.unit[rows], y[rows], probabilities)
            ranking.update(pce.ranking)
            group_ranking.update(pce.group_ranking)
        result.append(
            ScenarioAnalysis(
                inner_quantiles=inner_q,
                interface_quantiles=face_q,
                exceedance=exc,
                indices=indices,
                ranking=ranking,
                group_ranking=group_ranking,
                rank_correlation=_rank_correlation(propagation.inputs[rows], y[rows]),
                nonconverged=int(np.sum(~propagation.outputs["converged"][s])),
                surrogate=pce.indices,
                surrogate_groups=pce.groups,
                surrogate_quantiles=pce.quantiles,
                surrogate_quantile_status=pce.status,
                onset_samples=int(np.sum(np.any(
                    propagation.outputs["convection_onset"][s], axis=1))),
                air_range_samples=int(np.sum(propagation.outputs["air_range_exceeded"][s])),
            )
        )
    return StudyAnalysis(result, probabilities, outputs, tuple(group_names), notes)


def rank_indices(indices: dict, ci_threshold: float) -> tuple[dict, dict]:
    """Rankings per output of ``{output: (per-parameter, per-group or None)}`` indices.

    Parameters
    ----------
    indices
        Sobol indices per output [-].
    ci_threshold
        Half-width above which an index is unconverged [-].

    Returns
    -------
    ranking, group_ranking
        Output name → ranked parameters, and → ranked groups (outputs with groups only).
    """
    ranking = {o: rank(ind, ci_threshold=ci_threshold) for o, (ind, _) in indices.items()}
    groups = {o: rank(grp, ci_threshold=ci_threshold) for o, (_, grp) in indices.items()
              if grp is not None}
    return ranking, groups


@dataclass(frozen=True)
class SurrogateResult:
    """Polynomial-chaos indices of the inner-surface temperature, gated percentiles, rankings."""

    indices: SurrogateIndices | None = None
    groups: SurrogateIndices | None = None
    quantiles: np.ndarray | None = None
    status: str = ""
    ranking: dict = field(default_factory=dict)
    group_ranking: dict = field(default_factory=dict)


def fit_surrogate(study, unit: np.ndarray, y: np.ndarray,
                  probabilities: np.ndarray) -> SurrogateResult:
    """Fit the PCE of one exposure; indices per parameter and group, gated percentiles.

    Parameters
    ----------
    study
        The parsed study [-].
    unit
        Independent design rows in the unit hypercube, ``(n, d)`` [-].
    y
        Inner-surface temperature of those rows [K].
    probabilities
        Quantile levels [-].

    Returns
    -------
    SurrogateResult
    """
    a = study.analysis
    names = [p.name for p in study.parameters]
    group_names, groups = parameter_groups(study)
    per = surrogate_indices(unit, y, names=names, n_bootstrap=a.bootstrap,
                            confidence=a.confidence, seed=a.seed)
    if per is None:
        return SurrogateResult(status="refused: no surrogate could be fitted (too few "
                               "converged samples or a constant output)")
    grouped = surrogate_indices(unit, y, names=group_names, groups=groups,
                                n_bootstrap=a.bootstrap, confidence=a.confidence,
                                seed=a.seed, fit=per.fit)
    q, status = _surrogate_percentiles(per, probabilities, a)
    key = "inner_surface_temperature"
    return SurrogateResult(per, grouped, q, status,
                           {key: rank(per, ci_threshold=a.index_ci_threshold)},
                           {key: rank(grouped, ci_threshold=a.index_ci_threshold)})


def _surrogate_percentiles(surrogate: SurrogateIndices, probabilities: np.ndarray,
                           a) -> tuple[np.ndarray | None, str]:
    """Percentiles from the surrogate, only when its error is small enough.

    The error is the leave-one-out error, and for terms selected by least-angle regression the
    larger of it and the cross-validation error (the leave-one-out error of a selection is
    optimistic; :mod:`plyrisk.analysis.pce`).
    """
    err, limit = surrogate.largest_error, a.pce_max_loo_error
    what = f"leave-one-out error {surrogate.loo_error:.2g}"
    if surrogate.candidates > surrogate.terms:  # terms selected: leave-one-out is optimistic
        what = (f"error {err:.2g} (the larger of its {what} and its {CV_FOLDS}-fold "
                f"cross-validation error {surrogate.cross_validation_error:.2g}, terms "
                "selected anew in each fold)")
    if not err <= limit:
        return None, (f"refused: the surrogate's {what} is above pce_max_loo_error = "
                      f"{limit:g}; the percentiles from the samples stand")
    q = surrogate_quantiles(surrogate.fit, probabilities, seed=a.seed)
    return q, (f"computed: the surrogate's {what} <= pce_max_loo_error = {limit:g}; no "
               "interval (the surrogate's own error is not bounded)")


def _scenario_text(study, s: int) -> str:
    if study.scenarios is None:
        return ""
    return f" at {study.scenarios.quantity} = {study.scenarios.labels[s]}"


def _rank_correlation(inputs: np.ndarray, y: np.ndarray) -> np.ndarray:
    ok = np.isfinite(y)
    d = inputs.shape[1]
    if d == 0 or ok.sum() < 3 or np.ptp(y[ok]) == 0:
        return np.full(d, np.nan)
    out = np.empty(d)
    for j in range(d):
        x = inputs[ok, j]
        out[j] = np.nan if np.ptp(x) == 0 else stats.spearmanr(x, y[ok]).statistic
    return out
