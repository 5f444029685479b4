"""``method = "morris"``: Morris elementary-effects screening as a study of its own.

A Morris design samples a grid, not the input distributions, so a Morris study reports no
percentiles and no exceedance probability: only mu*, mu and sigma per input and output, the
ranking by mu* and which inputs are safe to fix at nominal
(:func:`plyrisk.analysis.morris.safe_to_fix`). The same measures serve ``[screening]`` before a
Saltelli or PCE study (:mod:`plyrisk.pipeline.screening`).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

from plyrisk.methods.base import Method

if TYPE_CHECKING:  # pragma: no cover
    import numpy as np
    import xarray as xr

    from plyrisk.analysis.morris import MorrisIndices
    from plyrisk.propagate.evaluate import Propagation
    from plyrisk.study.definition import Study

PRIMARY = "inner_surface_temperature"


class Morris(Method):
    """Morris screening: mu*, mu, sigma and the inputs safe to fix."""

    name = "morris"
    independence = "moves one input at a time along independent grids, which ignores dependence"
    summary = "Morris elementary-effects screening: which inputs matter, which are safe to " \
              "fix (no percentiles)"
    designs = ("morris",)
    sample_noun = "trajectories"
    only_keys = ("levels", "screening_threshold")
    stores = False
    allows_screening = False
    no_screening = "is a screening already"
    writes_report = False
    samples_distributions = False

    def describe(self, study: Study) -> str:
        a = study.analysis
        return f"Morris screening, {a.samples} trajectories of {a.levels} levels"

    def runs(self, study: Study, samples: int | None = None) -> int:
        """``r (d + 1)`` runs: one trajectory of d + 1 points per ``samples``."""
        return super().runs(study, samples) * (len(study.parameters) + 1)

    def analyse(self, study: Study, propagation: Propagation) -> Any:
        from plyrisk.analysis.transient import is_transient

        if is_transient(study):  # the transient analysis, its indices from transient_indices
            return super().analyse(study, propagation)
        return morris_analysis(study, propagation)

    def transient_indices(self, study: Study, scenario: int, *, source: Any, design: Any,
                          probabilities: np.ndarray) -> Any:
        """Morris measures of every derived output of one exposure of a transient study."""
        from plyrisk.analysis.morris import morris_indices
        from plyrisk.analysis.outputs import output_column
        from plyrisk.analysis.study import AnalysisError, IndexResult, analysed_outputs

        a = study.analysis
        names = [p.name for p in study.parameters]
        screening = {}
        for o in analysed_outputs(study):
            try:
                screening[o] = morris_indices(output_column(source, o, scenario), design,
                                              names=names, levels=a.levels,
                                              n_bootstrap=max(a.bootstrap, 2),
                                              confidence=a.confidence, seed=a.seed)
            except ValueError as err:
                raise AnalysisError(f"Morris screening of {o}{_at(study, scenario)}: "
                                    f"{err}") from None
        return IndexResult(screening=screening)

    def dataset(self, study: Study, propagation: Propagation, analysis: Any) -> xr.Dataset:
        from plyrisk.analysis.transient import is_transient

        if is_transient(study):
            return super().dataset(study, propagation, analysis)
        return morris_dataset(study, propagation, analysis)

    def summary_lines(self, result: Any, *, top: int) -> list[str] | None:
        from plyrisk.analysis.transient import is_transient

        if is_transient(result.study):
            return None
        return morris_lines(result.study, result.propagation, result.analysis, top=top)


@dataclass(frozen=True)
class MorrisAnalysis:
    """Morris measures of every output and exposure of a study.

    Attributes
    ----------
    indices
        Per exposure: output name → :class:`plyrisk.analysis.morris.MorrisIndices` [-].
    fixable
        Per parameter: safe to fix at nominal at every exposure (inner-surface temperature) [-].
    outputs
        Outputs analysed, the inner-surface temperature first [-].
    threshold
        Share of the largest mu* used for ``fixable`` [-].
    """

    indices: list[dict[str, MorrisIndices]]
    fixable: np.ndarray
    outputs: tuple[str, ...]
    threshold: float


def morris_analysis(study: Study, propagation: Propagation, *, threshold: float | None = None,
                    levels: int | None = None) -> MorrisAnalysis:
    """mu*, mu and sigma of every output at every exposure, and the inputs safe to fix.

    Parameters
    ----------
    study
        The study (its ``analysis`` gives levels, bootstrap, confidence and seed) [-].
    propagation
        Its propagation on a Morris design [-].
    threshold
        Share of the largest mu* below which an input is safe to fix; default
        ``analysis.screening_threshold`` [-].
    levels
        Grid levels of the design; default ``analysis.levels`` [-].

    Returns
    -------
    MorrisAnalysis
    """
    import numpy as np

    from plyrisk.analysis.morris import morris_indices, safe_to_fix
    from plyrisk.analysis.outputs import output_values
    from plyrisk.analysis.study import AnalysisError
    from plyrisk.propagate.evaluate import scenario_count

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


def _at(study: Study, s: int) -> str:
    if study.scenarios is None:
        return ""
    return f" at {study.scenarios.quantity} = {study.scenarios.labels[s]}"




def morris_dataset(study: Study, propagation: Propagation, analysis: MorrisAnalysis) -> xr.Dataset:
    """The results dataset of a Morris study: samples and Morris measures.

    Parameters
    ----------
    study
        The study [-].
    propagation
        Its propagation [-].
    analysis
        Its Morris measures [-].

    Returns
    -------
    xarray.Dataset
        No percentile or exceedance variables (a Morris design does not sample the input
        distributions).
    """
    import numpy as np
    import xarray as xr

    from plyrisk.cautions import cautions_text
    from plyrisk.provenance import library_versions
    from plyrisk.results.dataset import (
        MORRIS_UNITS,
        _si_of_hot,
        limit_output_spec,
        limit_output_text,
        per_parameter_variable,
        scenario_coordinates,
    )

    sd = ("scenario",)  # always: length 1 for an unswept study
    out = propagation.outputs
    a = study.analysis
    names = [p.name for p in study.parameters]

    def per(x):
        return np.asarray(x)

    def var(dims, data, units, long_name, **attrs):
        if units == "output units":  # CF: one unit per variable; these differ per output
            return xr.Variable(dims, data, {"long_name": long_name, "comment": MORRIS_UNITS,
                                            **attrs})
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
        "parameter_nominal": per_parameter_variable(("parameter",), np.array(
            [p.distribution.nominal for p in study.parameters]), "nominal value"),
        "output": var(("output",), np.array(analysis.outputs, dtype=str), "1",
                      "model output the measures refer to"),
    }
    sc = study.scenarios
    coords.update(scenario_coordinates(sc, None if sc is None else _si_of_hot(sc.quantity),
                                       "swept hot-side"))
    units = {PRIMARY: "K", "heat_flux": "W m-2"}
    unit = [units.get(o, "K") for o in analysis.outputs]
    m = {"method": "morris", "output_units": ", ".join(unit)}
    conv = per([[h[o].converged(a.index_ci_threshold) for o in analysis.outputs]
                for h in analysis.indices])
    rank = np.zeros_like(conv, dtype=np.int32)
    for idx in np.ndindex(conv.shape[:-1]):
        h = analysis.indices[idx[0]][analysis.outputs[idx[-1]]]
        rank[idx][h.order()] = np.arange(1, len(names) + 1)
    dims = (*sd, "output", "parameter")
    data = {
        "input": per_parameter_variable(("sample", "parameter"), propagation.inputs,
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
             "cautions": cautions_text(), "Conventions": "CF-1.10",
             "limit": float(a.limit), "limit_units": limit_output_spec(study).units,
             "limit_display_unit": study.limit_unit, "limit_output": a.limit_output,
             "limit_output_long_name": limit_output_text(study),
             "limit_output_display_unit": study.limit_output_unit or study.limit_unit}
    if sc is not None:
        attrs["scenario_quantity"] = sc.quantity
        attrs["scenario_display_unit"] = sc.unit
    attrs.update({f"version_{k}": v for k, v in library_versions().items()})
    return xr.Dataset(data, coords, attrs)


def morris_lines(study: Study, propagation: Propagation, analysis: MorrisAnalysis, *,
                 top: int) -> list[str]:
    """Summary lines of a Morris study (every exposure; the inner-surface temperature) [-]."""

    from plyrisk.propagate.evaluate import scenario_count

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


METHOD = Morris()
