"""``method = "pce"``: a polynomial-chaos surrogate fitted to Latin-hypercube, Sobol' or random
samples; Sobol' indices from its coefficients, percentiles from it when its error allows.

The samples are draws from the joint input distribution, so percentiles and the exceedance
probability come straight from them; the indices are those of the surrogate
(:mod:`plyrisk.analysis.pce`): trust them only when its leave-one-out error is small. Its own
percentiles are given only when that error (and, for terms selected by least-angle regression,
the cross-validation error) is at most ``pce_max_loo_error``.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

from plyrisk.methods.base import Method, VariableRecord

if TYPE_CHECKING:  # pragma: no cover
    import numpy as np

    from plyrisk.analysis.pce import SurrogateIndices
    from plyrisk.analysis.study import IndexResult, StudyAnalysis
    from plyrisk.study.definition import Analysis, Study


class PolynomialChaos(Method):
    """Sobol' indices from a polynomial-chaos surrogate of the inner-surface temperature."""

    name = "pce"
    independence = ("fits a polynomial chaos in independent inputs, whose Sobol indices assume "
                    "independence")
    summary = "polynomial-chaos surrogate fitted to Latin-hypercube, Sobol' or random " \
              "samples: indices from its coefficients (far fewer runs than saltelli)"
    designs = ("lhs", "sobol", "random")
    only_keys = ("design", "pce_max_loo_error")
    fits_surrogate = True

    def describe(self, study: Study) -> str:
        a = study.analysis
        designs = {"lhs": f"Latin hypercube, {a.samples} samples"
                   + (f", {a.lhs_optimization} optimization" if a.lhs_optimization else ""),
                   "random": f"plain Monte Carlo, {a.samples} samples",
                   "sobol": f"scrambled Sobol' sequence, {a.samples} samples"}
        return f"polynomial-chaos surrogate on a {designs.get(a.design, a.design)}"

    def design_kind(self, study: Study) -> str:
        """Points of a scrambled Sobol' sequence for ``design = "sobol"`` (no Saltelli blocks)."""
        design = study.analysis.design
        return "sobol-sequence" if design == "sobol" else design

    def notes(self, study: Study, base_samples: int) -> list[str]:
        return [f"method = pce ({study.analysis.design} design): percentiles and exceedance "
                "come straight from the samples; the Sobol indices shown are from a "
                "polynomial-chaos surrogate fitted to them: trust them only when its "
                "leave-one-out error is small (Q2 close to 1); rank correlations are a "
                "screening measure only."]

    def scenario_indices(self, study: Study, scenario: int, *, source: Any, design: Any,
                         unit: np.ndarray, y: np.ndarray, probabilities: np.ndarray,
                         streamed: bool) -> IndexResult:
        from plyrisk.analysis.study import IndexResult

        if not study.parameters:
            return IndexResult()
        fit = fit_surrogate(study, unit, y, probabilities)
        return IndexResult({}, fit.ranking, fit.group_ranking, fit.indices, fit.groups,
                           fit.quantiles, fit.status)

    def transient_indices(self, study: Study, scenario: int, *, source: Any, design: Any,
                          probabilities: np.ndarray) -> IndexResult:
        """One surrogate per derived output of a transient study, with its fit quality."""
        from plyrisk.analysis.outputs import output_column
        from plyrisk.analysis.study import IndexResult, analysed_outputs

        if not study.parameters:
            return IndexResult()
        rows = design.independent_rows()
        unit = design.unit[rows]
        indices, ranking, groups, quality = {}, {}, {}, {}
        for o in analysed_outputs(study):
            fit = fit_surrogate(study, unit, output_column(source, o, scenario)[rows],
                                probabilities, key=o, quantiles=False)
            if fit.indices is None:
                quality[o] = fit.status
                continue
            indices[o] = (fit.indices, fit.groups)
            ranking.update(fit.ranking)
            groups.update(fit.group_ranking)
            quality[o] = (f"polynomial-chaos surrogate, order {fit.indices.order}, "
                          f"{fit.indices.terms} terms, Q2 = {fit.indices.q2:.3f}")
        return IndexResult(indices, ranking, groups, quality=quality)

    def dataset_variables(self, study: Study, analysis: StudyAnalysis,
                          outputs: Sequence[str]) -> dict[str, VariableRecord]:
        """Surrogate indices, their intervals and the fit's quality (see docs/results.md)."""
        if not any(sc.surrogate is not None for sc in analysis.scenarios):
            return {}
        return _surrogate_variables(study, analysis, tuple(outputs))


@dataclass(frozen=True)
class SurrogateResult:
    """Polynomial-chaos indices of the inner-surface temperature, gated percentiles, rankings."""

    indices: SurrogateIndices | None = None
    groups: SurrogateIndices | None = None
    quantiles: np.ndarray | None = None
    status: str = ""
    ranking: dict[str, Any] = field(default_factory=dict)
    group_ranking: dict[str, Any] = field(default_factory=dict)


def fit_surrogate(study: Study, unit: np.ndarray, y: np.ndarray,
                  probabilities: np.ndarray, *, key: str = "inner_surface_temperature",
                  quantiles: bool = True) -> SurrogateResult:
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
    key
        Name of the output ``y`` (the key of the rankings).
    quantiles
        Also compute the surrogate's gated percentiles.

    Returns
    -------
    SurrogateResult
    """

    from plyrisk.analysis.pce import surrogate_indices
    from plyrisk.analysis.sobol import rank
    from plyrisk.propagate.evaluate import parameter_groups

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
    q, status = (_surrogate_percentiles(per, probabilities, a) if quantiles
                 else (None, "not computed"))
    return SurrogateResult(per, grouped, q, status,
                           {key: rank(per, ci_threshold=a.index_ci_threshold)},
                           {key: rank(grouped, ci_threshold=a.index_ci_threshold)})


def _surrogate_percentiles(surrogate: SurrogateIndices, probabilities: np.ndarray,
                           a: Analysis) -> tuple[np.ndarray | None, str]:
    """Percentiles from the surrogate, only when its error is small enough.

    The error is the leave-one-out error, and for terms selected by least-angle regression the
    larger of it and the cross-validation error (the leave-one-out error of a selection is
    optimistic; :mod:`plyrisk.analysis.pce`).
    """

    from plyrisk.analysis.pce import CV_FOLDS, surrogate_quantiles

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




def _surrogate_variables(study: Study, analysis: StudyAnalysis,
                         outputs: tuple[str, ...] = ("inner_surface_temperature",),
                         ) -> dict[str, VariableRecord]:
    """The surrogate's indices under the names every method shares (``sobol_*`` over
    ``output`` with ``estimator = "pce"``; only the inner-surface temperature has a surrogate,
    the other outputs are NaN), and the fit's own ``pce_*`` diagnostics."""
    import numpy as np

    a = study.analysis
    sa = analysis.scenarios
    n_p, n_g = len(study.parameters), len(analysis.group_names)
    sd: tuple[str, ...] = ()
    data: dict[str, VariableRecord] = {}

    def per(x: Any) -> np.ndarray:
        return np.asarray(x)

    def _var(dims: tuple[str, ...], values: Any, units: str, long_name: str,
             **attrs: Any) -> VariableRecord:
        return (dims, values, units, long_name, attrs)

    k_inner = list(outputs).index("inner_surface_temperature")

    def table(which: str, attr: str, size: int):
        arr = np.full((len(sa), len(outputs), size), np.nan)
        for s, sc in enumerate(sa):
            ind = getattr(sc, which)
            if ind is not None:
                arr[s, k_inner] = getattr(ind, attr)
        return per(arr)

    est = {"method": "pce", "estimator": "pce"}
    for which, dim, size, prefix, who in (("surrogate", "parameter", n_p, "sobol", "parameter"),
                                          ("surrogate_groups", "group", n_g, "sobol_group",
                                           "layer group")):
        dims = (*sd, "output", dim)
        for attr, long in (("first", "first-order Sobol index"), ("total", "total Sobol index")):
            data[f"{prefix}_{attr}"] = _var(
                dims, table(which, attr, size), "1",
                f"{long} per {who}, from a polynomial-chaos surrogate (of the inner-surface "
                "temperature only; NaN for the other outputs)", **est,
            )
            data[f"{prefix}_{attr}_ci"] = _var(
                dims, table(which, f"{attr}_ci", size), "1",
                f"half-width of the bootstrap interval of the surrogate {long}",
                confidence=a.confidence, interval_method="bootstrap",
                interval=f"bootstrap over the samples ({a.bootstrap} resamples)", **est,
            )
        for attr in ("first", "total"):
            half = table(which, f"{attr}_ci", size)
            data[f"{prefix}_{attr}_converged"] = _var(
                dims, np.asarray(half <= a.index_ci_threshold),
                "1", f"surrogate {attr}-order index interval half-width at most the threshold"
                if attr == "first" else "surrogate total index interval half-width at most "
                "the threshold", threshold=a.index_ci_threshold, **est)

    def scalar(attr: str, missing):
        return per(np.array([getattr(sc.surrogate, attr) if sc.surrogate else missing
                             for sc in sa]))

    data["pce_q2"] = _var(sd, scalar("q2", np.nan), "1", "leave-one-out coefficient of "
                          "determination of the polynomial-chaos surrogate (1 = perfect)",
                          method="pce")
    data["pce_order"] = _var(sd, scalar("order", 0), "1",
                             "total order of the polynomial-chaos surrogate's truncation",
                             method="pce")
    data["pce_loo_error"] = _var(sd, scalar("loo_error", np.nan), "1",
                                 "relative leave-one-out error of the polynomial-chaos "
                                 "surrogate (1 - Q2)", method="pce",
                                 max_error_for_percentiles=a.pce_max_loo_error)
    data["pce_cross_validation_error"] = _var(
        sd, scalar("cross_validation_error", np.nan), "1",
        "relative cross-validation error of the polynomial-chaos surrogate, its terms selected "
        "anew in each fold (equal to pce_loo_error for a fit in full)", method="pce")
    data["pce_q_norm"] = _var(sd, scalar("q_norm", np.nan), "1",
                              "q-norm of the surrogate's hyperbolic truncation (1 = total "
                              "degree)", method="pce")
    data["pce_terms"] = _var(sd, scalar("terms", 0), "1",
                             "terms of the polynomial-chaos expansion", method="pce")
    data["pce_candidate_terms"] = _var(sd, scalar("candidates", 0), "1",
                                       "terms of the truncation the expansion's terms were "
                                       "selected from (more than pce_terms when selected by "
                                       "least-angle regression)", method="pce")
    data["pce_samples"] = _var(sd, scalar("samples", 0), "1",
                               "converged samples the surrogate was fitted to", method="pce")
    probs = len(sa[0].inner_quantiles.probabilities)
    quant = np.full((len(sa), probs), np.nan)
    for s, sc in enumerate(sa):
        if sc.surrogate_quantiles is not None:
            quant[s] = sc.surrogate_quantiles
    data["pce_quantile"] = _var(
        (*sd, "quantile"), per(quant), "K", "quantile of the inner-surface temperature from "
        "the polynomial-chaos surrogate (NaN where refused; see pce_quantile_status)",
        method="pce", max_loo_error=a.pce_max_loo_error)
    data["pce_quantile_status"] = _var(
        sd, per(np.array([sc.surrogate_quantile_status for sc in sa], dtype=str)), "1",
        "why the surrogate's quantiles were computed or refused", method="pce")
    return data


METHOD = PolynomialChaos()
