"""``method = "shapley"``: Shapley effects per parameter and per layer, correct for correlated
inputs (a ``[correlations]`` section) and for independent ones.

The design (:meth:`Shapley.make_design`, built whole once, so results do not depend on chunks
or workers) is ``samples`` joint draws (a Latin hypercube, scrambled Sobol' points or random
points through the Gaussian copula of :mod:`plyrisk.design.copula`; Iman–Conover reordering
for a Latin hypercube on request) followed by ``permutations x (d - 1) x 3`` conditional draws
(:func:`plyrisk.design.copula.shapley_rows`) and, for d >= 2, the ``(1 + 2 d) samples`` rows of
the Rosenblatt blocks (:func:`plyrisk.design.copula.rosenblatt_rows`). Percentiles and the
exceedance probability come from the joint draws; the effects and the four indices of
dependent inputs from all rows (:mod:`plyrisk.analysis.shapley`; Song, Nelson & Staum 2016,
doi:10.1137/15M1048070; Mara, Tarantola & Annoni 2015, doi:10.1016/j.envsoft.2015.07.010),
with bootstrap intervals.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import TYPE_CHECKING, Any

from plyrisk.methods.base import Method, VariableRecord

if TYPE_CHECKING:  # pragma: no cover
    import numpy as np

    from plyrisk.analysis.study import IndexResult, StudyAnalysis
    from plyrisk.design.sampling import Design
    from plyrisk.study.definition import Study

INDEX_VARIABLES = ("shapley_effect", "shapley_effect_ci", "shapley_group_effect",
                   "shapley_group_effect_ci", "shapley_rank", "shapley_group_rank",
                   "shapley_converged", "shapley_group_converged", "shapley_permutations_used",
                   "shapley_output_variance", "full_first_index", "full_first_index_ci",
                   "independent_total_index", "independent_total_index_ci",
                   "independent_first_index", "independent_first_index_ci",
                   "full_total_index", "full_total_index_ci", "dependent_index_rows_used")
"""Dataset variables of the Shapley effects (each carries ``method = "shapley"``)."""

HOW_TO_READ = (
    "How to read Shapley effects: each input's Shapley effect is its share of the variance of "
    "the output, averaged over every order in which the inputs could be learned (Owen 2014; "
    "Song, Nelson & Staum 2016). The effects themselves are never negative and add up to one, "
    "also when inputs are correlated, so they rank inputs on one scale (their estimates add up "
    "to one too, but a small effect can be estimated slightly below zero: see the end of this "
    "paragraph). A correlated pair shares the "
    "variance it explains jointly: an input with no influence of its own still receives a "
    "share when it is correlated with an influential one, because knowing it tells you about "
    "the other. So a large effect says 'pinning this input down would narrow the output', "
    "not 'this input acts on the output'; to find what acts physically, look at the input's "
    "partner in [correlations]. A layer's effect is the sum of its parameters' effects. "
    "Beside the effects stand four indices for dependent inputs (Mara, Tarantola & Annoni "
    "2015), each a share of the variance on its own scale (they do not add up to one): the "
    "'full' first-order and total indices count what the input explains together with what "
    "its correlated partners carry, the 'independent' ones only the input's own part, with "
    "what it shares with its partners removed. A full index well above the independent one "
    "says the input matters largely through its correlations; a total index above the "
    "first-order one says it acts through interactions; an independent total index near zero "
    "says the input adds nothing once its partners are known. Without correlations full and "
    "independent indices are the Sobol indices. The intervals are bootstrap intervals (over "
    "permutations and joint draws, or over the rows of the pick-and-freeze blocks); an effect "
    "is settled when its half-width is within the study's index_ci_threshold, and an estimate "
    "slightly below zero is the estimator's noise around a small effect or index (read it as "
    "0 within its interval).")
"""The paragraph the summary and the report show with Shapley effects."""


class Shapley(Method):
    """Shapley effects from random permutations with conditional draws."""

    name = "shapley"
    summary = "Shapley effects (per parameter and per layer) from random permutations with " \
              "exact conditional draws; correct for correlated inputs ([correlations])"
    designs = ("lhs", "sobol", "random")
    sample_noun = "joint samples"
    only_keys = ("design", "permutations")
    stores = False
    allows_screening = False
    no_screening = ("takes no screening stage: the Morris screening moves one input at a time "
                    "along independent grids, which ignores the dependence between inputs that "
                    "Shapley effects account for; the effects rank every input themselves")
    handles_dependence = True
    builds_design = True
    independence = "handles dependent inputs"

    def permutations(self, study: Study) -> int:
        """Random permutations m: ``[study] permutations``, by default ``samples``."""
        a = study.analysis
        return int(a.permutations or a.samples)

    def describe(self, study: Study) -> str:
        a = study.analysis
        corr = ("correlated inputs (Gaussian copula)" if study.correlations is not None
                else "independent inputs")
        return (f"Shapley effects, {a.samples} joint samples ({a.design}) + "
                f"{self.permutations(study)} random permutations; {corr}")

    def runs(self, study: Study, samples: int | None = None) -> int:
        """``N + m (d - 1) 3 + (1 + 2 d) N`` runs: the joint draws, the conditional draws and
        the Rosenblatt blocks (the last for d >= 2)."""
        from plyrisk.design.copula import shapley_layout

        n = int(samples if samples is not None else study.analysis.samples)
        return shapley_layout(n, self.permutations(study), len(study.parameters)).n_rows

    def independent_samples(self, study: Study, evaluations: int) -> int:
        """The joint draws."""
        return int(study.analysis.samples)

    def notes(self, study: Study, base_samples: int) -> list[str]:
        c = study.correlations
        out = [f"method = shapley: percentiles and exceedance from {study.analysis.samples} "
               f"joint draws; Shapley effects from {self.permutations(study)} random "
               "permutations with 3 conditional draws per step (Song, Nelson & Staum 2016); "
               "the full and independent first-order and total indices from the joint draws and "
               f"1 + 2 d = {1 + 2 * len(study.parameters)} more blocks of "
               f"{study.analysis.samples} rows (Rosenblatt transforms in the Gaussian copula; "
               "Mara, Tarantola & Annoni 2015)"]
        if c is not None:
            pairs = "; ".join(f"{a} with {b} {v:+.2f}" for a, b, v in c.pairs()) or "all zero"
            # the copula itself is stated once, by the report's assumptions and the note above
            out.append(f"rank correlations of [correlations]: {pairs}"
                       + ("; the Latin hypercube reordered by Iman-Conover"
                          if c.lhs_reordering == "iman-conover"
                          and study.analysis.design == "lhs" else ""))
            if c.repair_note:
                out.append(c.repair_note)
        return out

    def make_design(self, study: Study) -> Design:
        """Joint draws (through the copula), the conditional draws (block 2) and the
        Rosenblatt blocks (block 3), built whole."""
        import numpy as np

        from plyrisk.design.copula import joint_design, rosenblatt_rows, shapley_rows
        from plyrisk.design.sampling import Design

        a = study.analysis
        names = study.parameter_names
        c = study.correlations
        joint = joint_design(a.design, int(a.samples), names, seed=int(a.seed), correlations=c,
                             optimization=a.lhs_optimization)
        linear = np.eye(len(names)) if c is None else c.full_linear(names)
        unit = shapley_rows(joint, linear, permutations=self.permutations(study),
                            seed=int(a.seed))
        n_cond = unit.shape[0]
        if len(names) >= 2:
            unit = np.vstack([unit, rosenblatt_rows(joint, linear, seed=int(a.seed))])
        block = np.zeros(unit.shape[0], dtype=np.int64)
        block[joint.shape[0]:] = 2
        block[n_cond:] = 3
        unit.setflags(write=False)
        block.setflags(write=False)
        return Design(unit, block, "shapley", int(a.samples), ())

    def scenario_indices(self, study: Study, scenario: int, *, source: Any, design: Any,
                         unit: np.ndarray, y: np.ndarray, probabilities: np.ndarray,
                         streamed: bool) -> IndexResult:
        from plyrisk.analysis.outputs import output_column
        from plyrisk.analysis.shapley import rank_effects, shapley_effects
        from plyrisk.analysis.study import IndexResult, analysed_outputs
        from plyrisk.design.copula import INNER_SAMPLES, shapley_layout, shapley_permutations
        from plyrisk.propagate.evaluate import parameter_groups

        a = study.analysis
        names = list(study.parameter_names)
        if not names:
            return IndexResult()
        perms = shapley_permutations(self.permutations(study), len(names), seed=int(a.seed))
        group_names, groups = parameter_groups(study)
        n = int(a.samples)
        layout = shapley_layout(n, self.permutations(study), len(names))
        stop = n + layout.conditional
        effects, ranking, group_ranking = {}, {}, {}
        for o in analysed_outputs(study):
            column = output_column(source, o, scenario)
            ind, grp = shapley_effects(column[:n], column[n:stop], perms, names=names,
                                       inner=INNER_SAMPLES, groups=groups,
                                       group_names=group_names, confidence=a.confidence,
                                       n_bootstrap=a.bootstrap, seed=int(a.seed),
                                       y_rosenblatt=(column[stop:stop + layout.rosenblatt]
                                                     if layout.rosenblatt else None))
            effects[o] = (ind, grp)
            ranking[o] = rank_effects(ind, ci_threshold=a.index_ci_threshold)
            if grp is not None:
                group_ranking[o] = rank_effects(grp, ci_threshold=a.index_ci_threshold)
        return IndexResult({}, ranking, group_ranking, shapley=effects)

    def transient_variables(self, study: Study, analysis: Any,
                            outputs: Sequence[str]) -> dict[str, VariableRecord]:
        """The same variables as a steady study's, over the derived outputs."""
        return self.dataset_variables(study, analysis, outputs)

    def dataset_variables(self, study: Study, analysis: StudyAnalysis,
                          outputs: Sequence[str]) -> dict[str, VariableRecord]:
        """Shapley effects, their intervals, ranks and convergence flags (docs/results.md)."""
        import numpy as np

        if not study.parameters:
            return {}
        a = study.analysis
        sa = analysis.scenarios
        n_p, n_g, n_o, n_s = (len(study.parameters), len(analysis.group_names), len(outputs),
                              len(sa))
        thr = a.index_ci_threshold
        interval = {"confidence": a.confidence, "interval_method": "bootstrap",
                    "interval": f"bootstrap percentile interval over permutations and joint "
                                f"draws ({a.bootstrap} resamples)"}

        def table(which: int, attr: str, size: int) -> np.ndarray:
            arr = np.full((n_s, n_o, size), np.nan)
            for s, sc in enumerate(sa):
                for k, o in enumerate(outputs):
                    eff = sc.shapley.get(o, (None, None))[which]
                    if eff is not None and getattr(eff, attr) is not None:
                        arr[s, k] = getattr(eff, attr)
            return arr

        def ranks(which: int, size: int, names: Sequence[str]) -> np.ndarray:
            out = np.zeros((n_s, n_o, size), dtype=np.int32)
            for s, sc in enumerate(sa):
                for k, o in enumerate(outputs):
                    ranked = (sc.ranking if which == 0 else sc.group_ranking).get(o, [])
                    for r, item in enumerate(ranked, start=1):
                        out[s, k, list(names).index(item.name)] = r
            return out

        pnames = list(study.parameter_names)
        gnames = list(analysis.group_names)
        data: dict[str, VariableRecord] = {}
        dims = ("output",)
        for which, dim, size, prefix, who in ((0, "parameter", n_p, "shapley", "parameter"),
                                              (1, "group", n_g, "shapley_group", "layer")):
            eff = table(which, "effect", size)
            half = table(which, "effect_ci", size)
            data[f"{prefix}_effect"] = ((*dims, dim), eff, "1",
                                        f"Shapley effect per {who} (share of the output "
                                        "variance; sums to one)", {})
            data[f"{prefix}_effect_ci"] = ((*dims, dim), half, "1",
                                           "half-width of the Shapley effect's interval",
                                           dict(interval))
            data[f"{prefix}_converged"] = ((*dims, dim), np.asarray(half <= thr), "1",
                                           "Shapley effect interval half-width at most the "
                                           "threshold", {"threshold": thr})
            data[f"{prefix}_rank"] = ((*dims, dim),
                                      ranks(which, size, pnames if which == 0 else gnames),
                                      "1", f"rank of each {who} by Shapley effect (1 = most "
                                      "influential)", {})
        rows_interval = {"confidence": a.confidence, "interval_method": "bootstrap",
                         "interval": f"bootstrap percentile interval over the rows of the "
                                     f"joint and Rosenblatt blocks ({a.bootstrap} resamples)"}
        for attr, name, what, how in (
                ("full_first", "full_first_index", "'full' first-order index Var(E[Y|X_i]) / "
                 "Var(Y): what the parameter explains, through its correlated partners too",
                 rows_interval),
                ("independent_first", "independent_first_index", "'independent' first-order "
                 "index Var(E[Y|e_i]) / Var(Y), e_i the part of the parameter independent of "
                 "the others: what it explains on its own", rows_interval),
                ("full_total", "full_total_index", "'full' total index E[Var(Y|r_-i)] / Var(Y), "
                 "r_-i the part of the others independent of the parameter: everything it is "
                 "involved in, through its correlated partners and interactions", rows_interval),
                ("independent_total", "independent_total_index", "'independent' total index "
                 "E[Var(Y|X_-i)] / Var(Y): what the parameter adds beyond everything "
                 "correlated with it", rows_interval)):
            data[name] = (("output", "parameter"), table(0, attr, n_p), "1", what, {})
            data[f"{name}_ci"] = (("output", "parameter"), table(0, f"{attr}_ci", n_p), "1",
                                  f"half-width of the {name.replace('_', ' ')}'s interval",
                                  dict(how))
        rows_used = np.zeros((n_s, n_o), dtype=np.int64)
        for s, sc in enumerate(sa):
            for k, o in enumerate(outputs):
                eff = sc.shapley.get(o, (None, None))[0]
                if eff is not None:
                    rows_used[s, k] = eff.rosenblatt_used
        data["dependent_index_rows_used"] = (
            ("output",), rows_used, "1", "rows j of the joint and Rosenblatt blocks behind the "
            "independent first-order and full total indices (a row with a non-converged run "
            "in any block dropped whole)", {})
        used = np.zeros((n_s, n_o), dtype=np.int64)
        var = np.full((n_s, n_o), np.nan)
        for s, sc in enumerate(sa):
            for k, o in enumerate(outputs):
                eff = sc.shapley.get(o, (None, None))[0]
                if eff is not None:
                    used[s, k] = eff.permutations_used
                    var[s, k] = eff.variance
        data["shapley_permutations_used"] = ((*dims,), used, "1", "random permutations behind "
                                             "the Shapley effects (those with a non-converged "
                                             "conditional draw dropped)", {})
        data["shapley_output_variance"] = ((*dims,), var, "", "variance of the output "
                                           "from the joint draws, in the output's SI unit "
                                           "squared (K2 for temperatures, W2 m-4 for "
                                           "heat_flux, s2 for times; 1 for a burn indicator "
                                           "and a log10 damage)", {})
        if study.correlations is not None:
            rank = study.correlations.full_rank(pnames)
            data["input_rank_correlation"] = (
                ("parameter", "other_parameter"), np.broadcast_to(rank, (n_s, n_p, n_p)), "1",
                "Spearman rank correlation of the inputs as configured ([correlations]; columns "
                "follow the parameter coordinate)", {"copula": "gaussian"})
        for name in INDEX_VARIABLES:
            data[name][4]["method"] = "shapley"
        return data


METHOD = Shapley()
