"""The results dataset of a transient study (``results.nc``): histories, times to burn, P(burn).

Built by :func:`transient_dataset`, which :func:`plyrisk.results.dataset.to_dataset` calls for a
study with a transient setup. Everything is SI; every variable carries ``units`` and
``long_name``. Times to an event keep ``+inf`` where the event does not occur by the horizon
(attribute ``censoring``); percentiles that fall beyond the horizon are ``+inf`` with a flag.
Every variable is listed in ``docs/results.md``.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import numpy as np
import xarray as xr

from plyrisk.analysis.outputs import DERIVED_OUTPUTS, output_column
from plyrisk.analysis.outputs import MemoryRows as _Rows
from plyrisk.analysis.transient import BAND_PROBABILITIES, EVENTS, TransientAnalysis
from plyrisk.cautions import cautions_text
from plyrisk.methods import get_method
from plyrisk.models.transient_outputs import TRANSIENT_OUTPUTS
from plyrisk.propagate.evaluate import Propagation
from plyrisk.provenance import library_versions
from plyrisk.results.dataset import MORRIS_UNITS, per_parameter_variable

if TYPE_CHECKING:  # pragma: no cover
    from plyrisk.methods.base import Method
    from plyrisk.study.definition import Study

CENSORING = ("times to an event (burn, sensor criterion) are +inf where the event does not "
             "occur by the horizon; every sample is followed to the same horizon, so "
             "percentiles are exact order statistics; a percentile or bound whose rank falls "
             "among the samples without the event is +inf and flagged (*_beyond_horizon), "
             "reported as '> horizon'")
"""The censoring rule, stored in the attributes and said in the report."""

EVENT_LONG = {"first_degree_burn": "first-degree burn (damage 0.53 at the basal depth)",
              "second_degree_burn": "second-degree burn (damage 1 at the basal depth)",
              "third_degree_burn": "third-degree burn",
              "sensor_criterion": "sensor reaching the second-degree criterion"}
"""Descriptions of the events."""


def _var(dims, data, units: str, long_name: str, **attrs) -> xr.Variable:
    return xr.Variable(dims, data, attrs={"units": units, "long_name": long_name, **attrs})


def transient_dataset(study: Study, propagation: Propagation, analysis: TransientAnalysis, *,
                      method: Method | None = None) -> xr.Dataset:
    """Assemble the results dataset of a transient study.

    Parameters
    ----------
    study
        The transient study.
    propagation
        Its propagation (transient outputs, ``outputs.time``).
    analysis
        Its :class:`~plyrisk.analysis.transient.TransientAnalysis`.
    method
        The analysis method (recorded in the attributes).

    Returns
    -------
    xarray.Dataset
    """
    sd = ("scenario",)  # always: length 1 for an unswept study

    def per(x: Any) -> np.ndarray:
        return np.asarray(x)

    data: dict[str, xr.Variable] = {}
    data.update(_sample_variables(study, propagation, analysis, sd, per))
    if analysis.statistics:
        data.update(_statistics_variables(study, analysis, sd, per))
    data.update(_index_variables(study, analysis, sd, per))
    for name, (dims, values, units, long_name, extra) in (method or get_method(
            study.analysis.method)).transient_variables(study, analysis,
                                                        list(analysis.outputs)).items():
        data[name] = _var((*sd, *dims), per(values), units, long_name, **extra)
    coords = _coordinates(study, propagation, analysis)
    return xr.Dataset(data, coords, _attributes(study, propagation, analysis, method))


def _coordinates(study, propagation, analysis: TransientAnalysis) -> dict[str, xr.Variable]:
    from plyrisk.results.dataset import _describe, _si_unit, scenario_coordinates

    params = study.parameters
    out = propagation.outputs
    n = propagation.inputs.shape[0]
    kind = analysis.facts.wearer_kind
    coords = {
        "sample": _var(("sample",), np.arange(n), "1", "sample index"),
        "sample_block": _var(("sample",), propagation.design.block.astype(np.int16), "1",
                             "design block of each sample (0 = A, 1 = B, 2+j = A with column "
                             "j from B, 2+d+g = A with group g from B)"),
        "parameter": _var(("parameter",), np.array([p.name for p in params], dtype=str), "1",
                          "uncertain parameter"),
        "parameter_group": _var(("parameter",), np.array([p.group for p in params], dtype=str),
                                "1", "layer (or exposure, wearer) each parameter belongs to"),
        "parameter_unit": _var(("parameter",), np.array([p.unit for p in params], dtype=str),
                               "1", "unit the parameter was given in"),
        "parameter_si_unit": _var(("parameter",), np.array([_si_unit(p) for p in params],
                                                           dtype=str), "1",
                                  "SI unit of the parameter's values in this dataset"),
        "parameter_distribution": _var(("parameter",), np.array([_describe(p) for p in params],
                                                                dtype=str), "1",
                                       "input distribution (SI parameters)"),
        "parameter_nominal": per_parameter_variable(("parameter",), np.array(
            [p.distribution.nominal for p in params], dtype=float),
            "nominal value of each parameter"),
        "group": _var(("group",), np.array(analysis.group_names, dtype=str), "1",
                      "layer (or exposure, wearer) group of parameters"),
        "output": _var(("output",), np.array(analysis.outputs, dtype=str), "1",
                       "derived output the indices refer to (rule: its variable's 'rule')"),
        "quantile": _var(("quantile",), np.asarray(analysis.probabilities, float), "1",
                         "cumulative probability of the percentile"),
        "band_quantile": _var(("band_quantile",), np.asarray(BAND_PROBABILITIES, float), "1",
                              "cumulative probability of the bands over time"),
        "time": _var(("time",), np.asarray(getattr(out, "time", np.zeros(0)), float), "s",
                     "time from the start of the exposure (history output grid)"),
        "face": _var(("face",), np.array(out.interface_names, dtype=str), "1",
                     "assembly face (exposed face first) and the wearer's surface"),
        "event": _var(("event",), np.array([e for e, _ in EVENTS[kind]], dtype=str), "1",
                      "event whose time and probability are given"),
    }
    sc = study.scenarios
    coords.update(scenario_coordinates(sc, None if sc is None else _si_unit_of(sc.quantity)))
    return coords


def _si_unit_of(quantity: str) -> str:
    from plyrisk.results.dataset import _SI_UNITS

    return {"exposure_duration": "s", **_SI_UNITS}.get(quantity, "SI")


def _sample_variables(study, propagation, analysis, sd, per) -> dict[str, xr.Variable]:
    f = propagation.outputs.fields
    data = {"input": per_parameter_variable(("sample", "parameter"), propagation.inputs,
                                    "input value of each parameter")}
    for spec in TRANSIENT_OUTPUTS:
        if spec.name not in f:
            continue
        values = per(f[spec.name])
        dims = ("sample", *(d for d in spec.dims if d != "sample"))
        if getattr(spec, "dtype", "") == "i4":
            values = values.astype(np.int32)
        if "time" in spec.dims:  # histories: float32 (about 1e-5 K), half the file and write
            values = np.asarray(values, dtype=np.float32)
        extra = {"censoring": "+inf where not reached by the horizon"} if spec.name.startswith(
            ("time_to_", "sensor_criterion_time")) else {}
        data[spec.name] = _var((*sd, *dims), values, spec.units, spec.long_name, **extra)
    source = _Rows(propagation, horizon=analysis.facts.horizon)
    n_s = f["converged"].shape[0]
    for name in analysis.outputs:
        if name in data and name in DERIVED_OUTPUTS:  # an output of the model used as it is
            data[name].attrs["rule"] = DERIVED_OUTPUTS[name].rule
        if name in data or name not in DERIVED_OUTPUTS:
            continue
        d = DERIVED_OUTPUTS[name]
        data[name] = _var((*sd, "sample"), per([output_column(source, name, s)
                                                for s in range(n_s)]),
                          d.units, d.long_name, rule=d.rule, derived_from=d.source)
    return data


def _statistics_variables(study, analysis: TransientAnalysis, sd, per) -> dict[str, xr.Variable]:
    a = study.analysis
    sa = analysis.scenarios
    events = [e for e, _ in EVENTS[analysis.facts.wearer_kind]]
    data: dict[str, xr.Variable] = {}
    conf = {"confidence": float(a.confidence)}
    if events:
        for part, long in (("estimate", "percentile"), ("lower", "lower confidence bound of "
                           "the percentile"), ("upper", "upper confidence bound of the "
                           "percentile")):
            sfx = "" if part == "estimate" else f"_{part}"
            data[f"event_time_quantile{sfx}"] = _var(
                (*sd, "event", "quantile"),
                per([[getattr(sc.times[e], part) for e in events] for sc in sa]), "s",
                f"{long} of the time to each event (+inf: beyond the horizon)", **conf,
                censoring=CENSORING)
            data[f"event_time_quantile{sfx}_beyond_horizon"] = _var(
                (*sd, "event", "quantile"),
                per([[getattr(sc.times[e], f"{part}_beyond") for e in events] for sc in sa]),
                "1", f"the {long} of the time to the event lies beyond the horizon "
                "(reported as '> horizon')")
        for part, long in (("probability", "probability"), ("lower", "lower confidence bound "
                           "of the probability"), ("upper", "upper confidence bound of the "
                           "probability")):
            sfx = "" if part == "probability" else f"_{part}"
            data[f"event_probability{sfx}"] = _var(
                (*sd, "event"), per([[getattr(sc.burn[e], part) for e in events] for sc in sa]),
                "1", f"{long} that the event occurs within the horizon", **conf,
                method=sa[0].burn[events[0]].method, horizon=analysis.facts.horizon)
        data["event_count"] = _var((*sd, "event"), per([[sc.burn[e].count for e in events]
                                                       for sc in sa]), "1",
                                   "converged independent samples with the event within the "
                                   "horizon")
        data["samples_used"] = _var(sd, per([sc.burn[events[0]].n for sc in sa]), "1",
                                    "converged independent samples behind the percentiles and "
                                    "probabilities")
    names = sorted({k for sc in sa for k in sc.quantiles}, key=lambda k: list(
        sa[0].quantiles).index(k) if k in sa[0].quantiles else 99)
    specs = {o.name: o for o in TRANSIENT_OUTPUTS}
    for name in names:
        spec = specs[name]
        for part, long in (("estimate", "percentile"), ("lower", "lower confidence bound of the "
                           "percentile"), ("upper", "upper confidence bound of the percentile")):
            sfx = "" if part == "estimate" else f"_{part}"
            data[f"{name}_quantile{sfx}"] = _var(
                (*sd, "quantile"), per([_q(sc.quantiles.get(name), part, analysis)
                                        for sc in sa]), spec.units,
                f"{long} of the {spec.long_name}", **conf)
    if analysis.facts.wearer_kind == "sensor" and sa[0].exposure_energy is not None:
        for part, long in (("estimate", "percentile"), ("lower", "lower confidence bound of "
                           "the percentile"), ("upper", "upper confidence bound of the "
                           "percentile")):
            sfx = "" if part == "estimate" else f"_{part}"
            data[f"exposure_energy_at_criterion_quantile{sfx}"] = _var(
                (*sd, "quantile"), per([getattr(sc.exposure_energy, part) for sc in sa]),
                "J m-2", f"{long} of the exposure energy when the sensor reaches the criterion "
                "(the rating; +inf where not reached)", **conf,
                censoring="samples that do not reach the criterion are placed above all that "
                "do (exact when every sample sees the same exposure energy)")
    for name in ("basal_temperature", "surface_temperature"):
        if all(name in sc.bands for sc in sa):
            data[f"{name}_band"] = _var(
                (*sd, "band_quantile", "time"), per([sc.bands[name].values for sc in sa]), "K",
                f"percentile over the samples of the {name.replace('_', ' ')} at each time "
                "(each time taken separately)")
    data["nonconverged_count"] = _var(sd, per([sc.nonconverged for sc in sa]), "1",
                                      "samples that did not converge (excluded from every "
                                      "statistic)")
    if analysis.limit is not None:
        lim = analysis.limit
        unit = _si_unit_of(study.scenarios.quantity)
        data["longest_acceptable_exposure"] = _var(
            (), lim.value, unit, f"largest swept {study.scenarios.quantity} at which the "
            "estimated P(second-degree burn) stays at or below the acceptable probability "
            "(linear interpolation between swept levels)", status=lim.status,
            acceptable_probability=lim.acceptable)
        data["longest_acceptable_exposure_cautious"] = _var(
            (), lim.cautious_value, unit, "the same read-off for the upper confidence bound of "
            "P(second-degree burn)", status=lim.cautious_status,
            acceptable_probability=lim.acceptable, **conf)
    return data


def _q(q, part: str, analysis) -> np.ndarray:
    if q is None:
        return np.full(len(analysis.probabilities), np.nan)
    return np.asarray(getattr(q, part))


def _index_variables(study, analysis: TransientAnalysis, sd, per) -> dict[str, xr.Variable]:
    sa = analysis.scenarios
    outputs = list(analysis.outputs)
    n_p, n_g, n_o = len(study.parameters), len(analysis.group_names), len(outputs)
    a = study.analysis
    data: dict[str, xr.Variable] = {}
    rules = "; ".join(f"{o}: {DERIVED_OUTPUTS[o].rule}" for o in outputs if o in
                      DERIVED_OUTPUTS)
    have_sobol = any(sc.indices for sc in sa)
    if have_sobol:
        pce = any(sc.surrogate_quality for sc in sa)
        estimator = "pce" if pce else "saltelli"
        described = ("polynomial-chaos surrogate" if pce
                     else "Saltelli design (SALib estimators)")
        for which, dim, size, prefix, who in ((0, "parameter", n_p, "sobol", "parameter"),
                                              (1, "group", n_g, "sobol_group", "layer group")):
            for kind in ("first", "total"):
                for sfx in ("", "_ci"):
                    arr = np.full((len(sa), n_o, size), np.nan)
                    for s, sc in enumerate(sa):
                        for k, o in enumerate(outputs):
                            pair = sc.indices.get(o)
                            ind = None if pair is None else pair[which]
                            if ind is not None:
                                arr[s, k] = getattr(ind, f"{kind}{sfx}")
                    long = (f"{'first-order' if kind == 'first' else 'total'} Sobol index per "
                            f"{who} of each derived output" if not sfx else
                            f"half-width of the confidence interval of the {kind} index per "
                            f"{who}")
                    data[f"{prefix}_{kind}{sfx}"] = _var(
                        (*sd, "output", dim), per(arr), "1", long, estimator=estimator,
                        estimator_description=described, rules=rules,
                        **({"confidence": float(a.confidence)} if sfx else {}))
        if any(sc.surrogate_quality for sc in sa):
            data["surrogate_fit"] = _var(
                (*sd, "output"), per([[sc.surrogate_quality.get(o, "") for o in outputs]
                                      for sc in sa]).astype(str), "1",
                "the polynomial-chaos surrogate behind each output's indices (trust them only "
                "when Q2 is close to 1)")
    if any(sc.screening for sc in sa):
        for attr, long in (("mu_star", "Morris mu*: mean absolute elementary effect per grid "
                            "step"), ("mu_star_ci", "half-width of the bootstrap interval of "
                            "mu*"), ("mu", "Morris mu: mean elementary effect"),
                           ("sigma", "Morris sigma: standard deviation of the elementary "
                            "effects")):
            arr = np.full((len(sa), n_o, n_p), np.nan)
            for s, sc in enumerate(sa):
                for k, o in enumerate(outputs):
                    m = sc.screening.get(o)
                    if m is not None:
                        arr[s, k] = getattr(m, attr)
            data[f"morris_{attr}"] = xr.Variable(
                (*sd, "output", "parameter"), per(arr),
                {"long_name": long, "rules": rules, "comment": MORRIS_UNITS})
    return data


def _attributes(study, propagation, analysis: TransientAnalysis, method) -> dict[str, Any]:
    a = study.analysis
    f = analysis.facts
    attrs = {
        "study_kind": "transient",
        "title": study.title,
        "config_source": str(study.source),
        "config_text": study.text,
        "seed": int(a.seed),
        "method": a.method,
        "design": a.design,
        "base_samples": int(propagation.design.base_samples),
        "evaluations": int(propagation.inputs.shape[0]),
        "parameters": len(study.parameters),
        "confidence": float(a.confidence),
        "percentiles": np.asarray(a.percentiles, dtype=float),
        "index_ci_threshold": float(a.index_ci_threshold),
        "horizon": f.horizon,
        "horizon_units": "s",
        "wearer_kind": f.wearer_kind,
        "damage_model": f.damage_model,
        "censoring": CENSORING,
        "derived_output_rules": "\n".join(f"{o}: {DERIVED_OUTPUTS[o].rule}"
                                          for o in analysis.outputs if o in DERIVED_OUTPUTS),
        "statistics": int(analysis.statistics),
        "notes": "\n".join(analysis.notes),
        "cautions": cautions_text(transient=True),
        "Conventions": "CF-1.10",
    }
    exposure = study.transient.exposure
    for name in ("incident_flux", "exposure_duration", "gas_temperature",
                 "convection_coefficient"):
        v = getattr(exposure, name, None)
        if v is not None and np.ndim(v) == 0 and not hasattr(v, "times"):
            attrs[f"exposure_{name}" if not name.startswith("exposure") else name] = float(v)
    attrs["limit_display_unit"] = str(getattr(study, "limit_unit", "") or "degC")
    wearer = getattr(study.transient, "wearer", None)
    cap = getattr(wearer, "heat_capacity", None) if f.wearer_kind == "sensor" else None
    if cap is not None and np.ndim(cap) == 0:
        attrs["sensor_heat_capacity_per_area"] = float(cap)
    if f.acceptable_burn_probability is not None:
        attrs["acceptable_burn_probability"] = f.acceptable_burn_probability
    if study.scenarios is not None:
        attrs["scenario_quantity"] = study.scenarios.quantity
        attrs["scenario_display_unit"] = study.scenarios.unit
    attrs.update({f"version_{k}": v for k, v in library_versions().items()})
    return attrs
