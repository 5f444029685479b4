"""Analysis of a propagated study: percentile bands, exceedance of the limit, Sobol indices and
the ranking of parameters and layers.

Intervals follow the design: on a replicated Saltelli design (R independently scrambled
replicates) percentiles and the exceedance probability are pooled over every replicate's A and
B rows with intervals from the spread of the replicates
(:func:`plyrisk.analysis.statistics.replicate_quantiles`, ``replicate_exceedance``); on other
designs the values are independent draws and the intervals binomial (order statistics, Wilson).

Non-converged samples (flagged by the solver, NaN outputs) never enter a statistic unnoticed:
percentiles and the exceedance probability use the converged samples only and report how many
were left out; the Sobol estimators drop every base row in which any evaluation failed (so the
estimator structure stays intact) and report the count.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import TYPE_CHECKING

import numpy as np
from scipy import stats

from plyrisk.analysis.outputs import MemoryRows, output_column
from plyrisk.analysis.sobol import RankedIndex, SobolIndices, rank
from plyrisk.analysis.statistics import (
    Exceedance,
    QuantileEstimate,
    exceedance,
    quantiles,
    replicate_exceedance,
    replicate_quantiles,
)
from plyrisk.errors import AnalysisError
from plyrisk.methods import get_method
from plyrisk.propagate.evaluate import Propagation, parameter_groups

if TYPE_CHECKING:  # pragma: no cover
    from plyrisk.analysis.pce import SurrogateIndices  # chaospy: loaded by method = pce only
    from plyrisk.methods.base import Method
    from plyrisk.study.definition import Study

SALIB_BOOTSTRAP_ROWS = 2**17
"""Largest base-row count whose Sobol' intervals come from SALib's bootstrap (it holds
N x resamples indices); larger designs use the batch jackknife of :mod:`plyrisk.analysis.streaming`
[-]."""

BAND_PROBABILITIES = (0.01, 0.05, 0.5, 0.95, 0.99)
"""Quantiles always computed, for the 5–95 % and 1–99 % bands of the profile figure [-]."""


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
        Probability that the limit output (``[study] limit_output``, by default the
        inner-surface temperature) exceeds the limit, with its interval.
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
    shapley
        Output name → (per-parameter, per-layer)
        :class:`plyrisk.analysis.shapley.ShapleyEffects` (``method = "shapley"``), else empty.
    limit_quantiles
        Quantiles of the limit output with confidence intervals (SI), when it is not the
        inner-surface temperature (else ``None``: ``inner_quantiles`` are its quantiles).
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
    shapley: dict[str, tuple] = field(default_factory=dict)
    limit_quantiles: QuantileEstimate | None = None

    @property
    def criterion_quantiles(self) -> QuantileEstimate:
        """Quantiles of the limit output (SI)."""
        return self.inner_quantiles if self.limit_quantiles is None else self.limit_quantiles


@dataclass(frozen=True)
class StudyAnalysis:
    """Statistics of every exposure of a study, plus what the design could and could not give."""

    scenarios: list[ScenarioAnalysis]
    probabilities: np.ndarray
    outputs: tuple[str, ...]
    group_names: tuple[str, ...]
    notes: list[str] = field(default_factory=list)


@dataclass(frozen=True)
class IndexResult:
    """Sensitivity indices of one exposure, as a method computes them.

    Attributes
    ----------
    indices
        Output name → (per-parameter, per-group or ``None``) Sobol indices.
    ranking, group_ranking
        Output name → parameters (groups) ranked.
    surrogate, surrogate_groups
        Surrogate indices of the inner-surface temperature, per parameter and per group.
    surrogate_quantiles
        Quantiles from the surrogate when its error allows them [K].
    surrogate_quantile_status
        Why the surrogate's quantiles were computed or refused.
    quality
        Output → one line on the surrogate fit behind its indices (transient studies).
    screening
        Output → Morris measures (``method = "morris"`` on a transient study).
    shapley
        Output → (per-parameter, per-layer) Shapley effects (``method = "shapley"``).
    """

    indices: dict[str, tuple[SobolIndices, SobolIndices | None]] = field(default_factory=dict)
    ranking: dict[str, list[RankedIndex]] = field(default_factory=dict)
    group_ranking: dict[str, list[RankedIndex]] = field(default_factory=dict)
    surrogate: SurrogateIndices | None = None
    surrogate_groups: SurrogateIndices | None = None
    surrogate_quantiles: np.ndarray | None = None
    surrogate_quantile_status: str = ""
    quality: dict[str, str] = field(default_factory=dict)
    screening: dict[str, object] = field(default_factory=dict)
    shapley: dict[str, tuple] = field(default_factory=dict)


def analysis_for(study: Study):
    """The analysis function of a study's kind: :func:`analyse` (steady) or
    :func:`plyrisk.analysis.transient.analyse_transient` (a study with a transient setup)."""
    from plyrisk.analysis.transient import analyse_transient, is_transient

    return analyse_transient if is_transient(study) else analyse


def analysed_outputs(study: Study) -> tuple[str, ...]:
    """The outputs indices are computed for: the inner-surface temperature first (steady), or
    the derived outputs of a transient study (:func:`plyrisk.analysis.transient.transient_outputs`).
    """
    from plyrisk.analysis.transient import is_transient, transient_outputs

    if is_transient(study):
        return transient_outputs(study)
    extra = [o for o in study.analysis.outputs if o != "inner_surface_temperature"]
    limit_output = getattr(study.analysis, "limit_output", "inner_surface_temperature")
    if limit_output not in ("inner_surface_temperature", *extra):
        extra.append(limit_output)
    return ("inner_surface_temperature", *extra)


def analysis_probabilities(study: Study) -> np.ndarray:
    """Quantile levels: the study's percentiles, the figure bands and the level of a
    percentile criterion (``[study] criterion``) [-]."""
    from plyrisk.study.targets import parse_target

    levels = set(study.analysis.percentiles) | set(BAND_PROBABILITIES)
    if study.analysis.criterion:
        target = parse_target(study.analysis.criterion, output=study.analysis.limit_output)
        if target.kind == "quantile":
            levels.add(round(float(target.probability), 12))
    return np.array(sorted(levels))


def analyse(study: Study, propagation: Propagation, *,
            method: Method | None = None) -> StudyAnalysis:
    """Percentiles, exceedance, sensitivity indices and rankings for every scenario.

    Parameters
    ----------
    study
        The parsed study.
    propagation
        Its propagation.
    method
        The analysis method (:data:`plyrisk.methods.METHODS`), which computes the indices;
        default: the study's.

    Returns
    -------
    StudyAnalysis
    """
    a = study.analysis
    method = method or get_method(a.method)
    probabilities = analysis_probabilities(study)
    outputs = analysed_outputs(study)
    group_names, _ = parameter_groups(study)
    design = propagation.design
    rows = design.independent_rows()
    source = MemoryRows(propagation)
    notes = method.notes(study, design.base_samples)
    label = design.replicate_of_rows()[rows] if design.replicates > 1 else None

    def quantile(values: np.ndarray) -> QuantileEstimate:
        if label is None:
            return quantiles(values, probabilities, confidence=a.confidence)
        return replicate_quantiles(values, label, probabilities, confidence=a.confidence)

    result = []
    n_s = propagation.outputs["converged"].shape[0]
    for s in range(n_s):
        y = output_column(source, "inner_surface_temperature", s)
        if not np.any(np.isfinite(y[rows])):
            raise AnalysisError(
                f"no sample converged{scenario_text(study, s)}: the solver gave up on all "
                f"{y.size} samples; raise [model] max_iterations or check the inputs"
            )
        inner_q = quantile(y[rows])
        faces = propagation.outputs["interface_temperature"][s][rows]
        face_q = [quantile(faces[:, i]) for i in range(faces.shape[1])]
        if a.limit_output == "inner_surface_temperature":
            y_lim, lim_q = y, None
        else:
            y_lim = output_column(source, a.limit_output, s)
            lim_q = quantile(y_lim[rows])
        exc = (exceedance(y_lim[rows], a.limit, confidence=a.confidence) if label is None else
               replicate_exceedance(y_lim[rows], label, a.limit, confidence=a.confidence))
        ix = method.scenario_indices(study, s, source=source, design=design,
                                     unit=design.unit[rows], y=y[rows],
                                     probabilities=probabilities, streamed=False)
        result.append(
            ScenarioAnalysis(
                inner_quantiles=inner_q,
                interface_quantiles=face_q,
                exceedance=exc,
                indices=ix.indices,
                ranking=ix.ranking,
                group_ranking=ix.group_ranking,
                rank_correlation=rank_correlation(propagation.inputs[rows], y[rows]),
                nonconverged=int(np.sum(~propagation.outputs["converged"][s])),
                surrogate=ix.surrogate,
                surrogate_groups=ix.surrogate_groups,
                surrogate_quantiles=ix.surrogate_quantiles,
                surrogate_quantile_status=ix.surrogate_quantile_status,
                shapley=ix.shapley,
                onset_samples=int(np.sum(np.any(
                    propagation.outputs["convection_onset"][s], axis=1))),
                air_range_samples=int(np.sum(propagation.outputs["air_range_exceeded"][s])),
                limit_quantiles=lim_q,
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


def scenario_text(study: Study, s: int) -> str:
    """' at <swept quantity> = <label>' for a swept study, else ''."""
    if study.scenarios is None:
        return ""
    return f" at {study.scenarios.quantity} = {study.scenarios.labels[s]}"


def rank_correlation(inputs: np.ndarray, y: np.ndarray) -> np.ndarray:
    """Spearman rank correlation of each input column with ``y`` (NaN where undefined) [-]."""
    ok = np.isfinite(y)
    d = inputs.shape[1]
    if d == 0 or ok.sum() < 3 or np.ptp(y[ok]) == 0:
        return np.full(d, np.nan)
    out = np.empty(d)
    for j in range(d):
        x = inputs[ok, j]
        out[j] = np.nan if np.ptp(x) == 0 else stats.spearmanr(x, y[ok]).statistic
    return out
