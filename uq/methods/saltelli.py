"""``method = "saltelli"``: Sobol' indices from a Saltelli design (per parameter and per layer).

The design is ``replicates`` (R, default 8) independently scrambled Sobol' sequences, each in
Saltelli's A, B, AB_j (and per-layer AB_g) blocks (:func:`plyrisk.design.sampling.sobol_design`;
replicated randomized quasi-Monte Carlo, Owen 1995; L'Ecuyer & Lemieux 2002). The estimators
are SALib's (Saltelli et al. 2010; Jansen 1999), applied to every replicate; each index is the
mean over the replicates and its interval the Student t interval with R - 1 degrees of freedom
on their spread, in memory and for stores analysed in passes alike
(:mod:`plyrisk.analysis.streaming`). The A and B rows are draws from the joint input
distribution, so percentiles and the exceedance probability come from them, pooled over the
replicates with intervals from the replicates' spread. (A design of one scrambled sequence,
``replicates = 1`` through the Python API only, keeps SALib's bootstrap, or a batch jackknife
above :data:`SALIB_BOOTSTRAP_ROWS` base rows and in passes.)
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import TYPE_CHECKING, Any

from plyrisk.methods.base import Method, VariableRecord

if TYPE_CHECKING:  # pragma: no cover
    import numpy as np

    from plyrisk.analysis.study import IndexResult, StudyAnalysis
    from plyrisk.study.definition import Study

SALIB_BOOTSTRAP_ROWS = 2**17
"""Largest base-row count whose Sobol' intervals come from SALib's bootstrap (it holds
N x resamples indices); larger designs use the batch jackknife of
:mod:`plyrisk.analysis.streaming`."""

INDEX_VARIABLES = ("sobol_first", "sobol_first_ci", "sobol_total", "sobol_total_ci",
                   "sobol_group_first", "sobol_group_first_ci", "sobol_group_total",
                   "sobol_group_total_ci", "parameter_rank", "index_converged", "group_rank",
                   "group_index_converged", "suggested_base_samples", "sobol_rows_dropped")
"""Dataset variables of the Saltelli indices (each carries ``method = "saltelli"``)."""


class Saltelli(Method):
    """Sobol' first-order and total indices from a Saltelli design."""

    name = "saltelli"
    independence = ("computes Sobol indices, which assume independent inputs (the AB blocks "
                    "swap one input at a time and break any dependence)")
    summary = "Sobol' indices (first-order, total; per parameter and per layer) from a " \
              "Saltelli design of a scrambled Sobol' sequence"
    designs = ("sobol",)
    sample_noun = "base samples"
    only_keys = ("replicates",)
    grows = True

    def describe(self, study: Study) -> str:
        return f"Sobol indices, {study.analysis.samples} base rows (Saltelli design)"

    def runs(self, study: Study, samples: int | None = None) -> int:
        """``N (d + G + 2)`` runs: A, B, one AB block per parameter and per layer group."""
        from plyrisk.propagate.evaluate import parameter_groups

        n = super().runs(study, samples)
        groups = [g for g in parameter_groups(study)[1] if len(g) > 1]
        return n * (len(study.parameters) + len(groups) + 2)

    def independent_samples(self, study: Study, evaluations: int) -> int:
        """The A and B rows: ``2 N``."""
        return 2 * int(study.analysis.samples)

    def notes(self, study: Study, base_samples: int) -> list[str]:
        r = int(study.analysis.replicates)
        if r > 1:
            return [f"intervals from {r} independently scrambled replicates of "
                    f"{base_samples // r} base samples each (Student t, {r - 1} degrees of "
                    "freedom; randomized quasi-Monte Carlo)"]
        if base_samples > SALIB_BOOTSTRAP_ROWS:
            return [f"{base_samples} base samples: Sobol index intervals from a batch "
                    "jackknife (plyrisk.analysis.streaming) rather than the bootstrap"]
        return []

    def scenario_indices(self, study: Study, scenario: int, *, source: Any, design: Any,
                         unit: np.ndarray, y: np.ndarray, probabilities: np.ndarray,
                         streamed: bool) -> IndexResult:
        from plyrisk.analysis.outputs import output_column
        from plyrisk.analysis.sobol import sobol_indices
        from plyrisk.analysis.streaming import sobol_jackknife
        from plyrisk.analysis.study import IndexResult, analysed_outputs, rank_indices
        from plyrisk.propagate.evaluate import parameter_groups

        a = study.analysis
        names = [p.name for p in study.parameters]
        if not names:
            return IndexResult()
        outputs = analysed_outputs(study)
        replicated = int(getattr(design, "replicates", 1)) > 1
        if streamed or (not replicated and design.base_samples > SALIB_BOOTSTRAP_ROWS):
            indices = {o: sobol_jackknife(source, o, scenario, study, confidence=a.confidence)
                       for o in outputs}
        else:
            group_names = parameter_groups(study)[0]
            indices = {o: sobol_indices(output_column(source, o, scenario), design, names=names,
                                        group_names=group_names, n_bootstrap=a.bootstrap,
                                        confidence=a.confidence, seed=a.seed)
                       for o in outputs}
        ranking, group_ranking = rank_indices(indices, a.index_ci_threshold)
        return IndexResult(indices, ranking, group_ranking)

    def dataset_variables(self, study: Study, analysis: StudyAnalysis,
                          outputs: Sequence[str]) -> dict[str, VariableRecord]:
        """Indices, their intervals, convergence flags and rankings (see docs/results.md)."""
        if not study.parameters:
            return {}
        return _index_variables(study, analysis, outputs)


def interval_description(indices: Any, bootstrap: int) -> str:
    """One line saying how the Sobol index intervals were obtained [-]."""
    kind = getattr(indices, "interval", "bootstrap")
    if kind == "replicates":
        r = int(indices.replicates)
        return (f"Student t on the spread of {r} independently scrambled replicates of the "
                f"Saltelli design ({r - 1} degrees of freedom; randomized quasi-Monte Carlo)")
    if kind == "jackknife":
        return "delete-one-batch jackknife over 64 batches of base rows"
    return f"SALib's bootstrap over base rows ({bootstrap} resamples)"


def _index_variables(study: Study, analysis: StudyAnalysis,
                     outputs: Sequence[str]) -> dict[str, VariableRecord]:
    import numpy as np

    a = study.analysis
    sa = analysis.scenarios
    params = study.parameters
    group_names = analysis.group_names
    n_p, n_g, n_o = len(params), len(group_names), len(outputs)
    thr = a.index_ci_threshold
    dims = ("output",)
    data: dict[str, VariableRecord] = {}

    def table(which: int, attr: str, size: int) -> np.ndarray:
        arr = np.full((len(sa), n_o, size), np.nan)
        for s, sc in enumerate(sa):
            for k, o in enumerate(outputs):
                ind = sc.indices[o][which]
                if ind is not None:
                    arr[s, k] = getattr(ind, attr)
        return arr

    sample = sa[0].indices[outputs[0]][0]
    interval = {"confidence": a.confidence,
                "interval_method": getattr(sample, "interval", "bootstrap"),
                "interval": interval_description(sample, a.bootstrap)}
    for which, dim, size, prefix in ((0, "parameter", n_p, "sobol"),
                                     (1, "group", n_g, "sobol_group")):
        who = "parameter" if which == 0 else "layer group"
        for kind in ("first", "total"):
            half = table(which, f"{kind}_ci", size)
            data[f"{prefix}_{kind}_converged"] = (
                (*dims, dim), np.asarray(half <= thr), "1",
                f"{kind}-order index interval half-width at most the threshold" if kind ==
                "first" else "total index interval half-width at most the threshold",
                {"threshold": thr, "method": "saltelli"})
        negative = table(which, "first", size) < 0
        data[f"{prefix}_first_negative"] = (
            (*dims, dim), np.asarray(negative), "1",
            "first-order estimate below zero (estimator noise around a small index; shown as "
            "estimated, not clipped)", {"method": "saltelli"})
        data[f"{prefix}_first"] = ((*dims, dim), table(which, "first", size), "1",
                                   f"first-order Sobol index per {who}", {})
        data[f"{prefix}_first_ci"] = ((*dims, dim), table(which, "first_ci", size), "1",
                                      "half-width of the first-order index's confidence "
                                      "interval", dict(interval))
        data[f"{prefix}_total"] = ((*dims, dim), table(which, "total", size), "1",
                                   f"total Sobol index per {who}", {})
        data[f"{prefix}_total_ci"] = ((*dims, dim), table(which, "total_ci", size), "1",
                                      "half-width of the total index's confidence interval",
                                      dict(interval))
    rank_p = np.zeros((len(sa), n_o, n_p), dtype=np.int32)
    conv_p = np.zeros((len(sa), n_o, n_p), dtype=bool)
    rank_g = np.zeros((len(sa), n_o, n_g), dtype=np.int32)
    conv_g = np.zeros((len(sa), n_o, n_g), dtype=bool)
    suggested = np.zeros((len(sa), n_o), dtype=np.int64)
    dropped = np.zeros((len(sa), n_o), dtype=np.int64)
    names = [p.name for p in params]
    for s, sc in enumerate(sa):
        for k, o in enumerate(outputs):
            for r, item in enumerate(sc.ranking[o], start=1):
                j = names.index(item.name)
                rank_p[s, k, j] = r
                conv_p[s, k, j] = item.converged
                if item.suggested_base_samples:
                    suggested[s, k] = max(suggested[s, k], item.suggested_base_samples)
            for r, item in enumerate(sc.group_ranking.get(o, []), start=1):
                j = list(group_names).index(item.name)
                rank_g[s, k, j] = r
                conv_g[s, k, j] = item.converged
            dropped[s, k] = sc.indices[o][0].dropped_rows
    data["parameter_rank"] = ((*dims, "parameter"), rank_p, "1",
                              "rank of each parameter by total index (1 = most influential)", {})
    data["index_converged"] = ((*dims, "parameter"), conv_p, "1",
                               "both index intervals narrower than the threshold",
                               {"threshold": a.index_ci_threshold})
    data["group_rank"] = ((*dims, "group"), rank_g, "1",
                          "rank of each layer group by total index (1 = most influential)", {})
    data["group_index_converged"] = ((*dims, "group"), conv_g, "1",
                                     "both group-index intervals narrower than the threshold",
                                     {"threshold": a.index_ci_threshold})
    data["suggested_base_samples"] = ((*dims,), suggested, "1",
                                      "base samples suggested to converge every index "
                                      "(0 = already converged)", {})
    data["sobol_rows_dropped"] = ((*dims,), dropped, "1",
                                  "base rows dropped from the Sobol estimators because an "
                                  "evaluation in them did not converge", {})
    for name in INDEX_VARIABLES:
        data[name][4]["method"] = "saltelli"
        if name.startswith("sobol_"):
            data[name][4]["estimator"] = "saltelli"
    for name in ("sobol_first_converged", "sobol_total_converged",
                 "sobol_group_first_converged", "sobol_group_total_converged",
                 "sobol_first_negative", "sobol_group_first_negative"):
        data[name][4]["estimator"] = "saltelli"
    return data


METHOD = Saltelli()
