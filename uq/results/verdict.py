"""The answer first: the study's criterion judged MET, NOT MET or UNDECIDED.

A study's *criterion* is one target of the target grammar (:mod:`plyrisk.study.targets`):
``[study] criterion`` when the config gives one, else the default — ``P95 <= limit`` for a
steady study (the 95th percentile of the limit output must not exceed the limit), and for a
transient study ``P(second_degree_burn) <= <acceptable_burn_probability>`` (skin) or
``P(sensor_criterion) <= ...`` (a copper-disc sensor).

Each exposure (scenario) is judged on the estimate's confidence interval, at the study's
confidence level:

==============  ==========================================================================
``MET``         the whole interval satisfies the bound (``upper <= bound`` for ``<=``,
                ``lower >= bound`` for a time that must be long enough)
``NOT MET``     the whole interval violates it (``lower > bound``; ``upper < bound``)
``UNDECIDED``   the interval straddles the bound, or the study cannot estimate the metric
                (a Morris screening has no distribution of the output; more samples or
                another method decide it)
==============  ==========================================================================

The overall verdict is the worst over the exposures (NOT MET, then UNDECIDED, then MET). The
verdict is computed from the results dataset alone (:func:`verdict_of`), so a report written
later from ``results.nc`` gives the same answer. It judges sampling uncertainty only: it is an
engineering estimate under the model's limits (see the cautions), not a certification.

Examples
--------
>>> import numpy as np, xarray as xr
>>> ds = xr.Dataset({"exceedance_probability": ((), 0.004),
...                  "exceedance_probability_lower": ((), 0.001),
...                  "exceedance_probability_upper": ((), 0.02)},
...                 attrs={"criterion": "P(exceed) <= 1 %", "limit": 317.15,
...                        "limit_output": "inner_surface_temperature", "confidence": 0.9})
>>> verdict_of(ds).overall
'UNDECIDED'
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np
import xarray as xr

from plyrisk.study.targets import EVENT_TIMES, Target, default_criterion, parse_target

if TYPE_CHECKING:  # pragma: no cover
    from plyrisk.study.definition import Study

MET, NOT_MET, UNDECIDED = "MET", "NOT MET", "UNDECIDED"
VERDICTS = (MET, NOT_MET, UNDECIDED)
"""The three verdicts."""

_WORSE = {MET: 0, UNDECIDED: 1, NOT_MET: 2}

VERDICT_MEANING = {
    MET: "the whole confidence interval satisfies the criterion",
    NOT_MET: "the whole confidence interval violates the criterion",
    UNDECIDED: "the confidence interval straddles the bound, or the study cannot estimate "
               "the criterion's metric",
}
"""One line on what each verdict means."""

WEARER_EVENTS = {"skin": "second_degree_burn", "sensor": "sensor_criterion"}
"""The event a transient study's default criterion is about, by wearer kind."""

DEFAULT_ACCEPTABLE = 0.05
"""Acceptable probability of the event when a transient dataset does not record one [-]."""


@dataclass(frozen=True)
class ScenarioVerdict:
    """The criterion judged at one exposure.

    Attributes
    ----------
    label
        The exposure as given in the config (``""`` for an unswept study).
    verdict
        ``"MET"``, ``"NOT MET"`` or ``"UNDECIDED"``.
    value, lower, upper
        Estimate of the metric and its confidence interval (SI: [K], [W m-2], [s], or a
        probability [-]); NaN where not available.
    reason
        Why, in one line.
    """

    label: str
    verdict: str
    value: float
    lower: float
    upper: float
    reason: str


@dataclass(frozen=True)
class Verdict:
    """The study's criterion and its verdict, per exposure and overall.

    Attributes
    ----------
    criterion
        The criterion in the target grammar, e.g. ``"P95 <= limit"``.
    default
        True when the config gave no criterion and the default was used.
    output
        What the criterion protects: the limit output of a steady study
        (``"inner_surface_temperature"``, ``"heat_flux"`` or a face name) or the event time of
        a transient one (``"time_to_second_degree_burn"``, ...).
    output_text
        The same in plain words.
    metric
        Short name of the judged metric, e.g. ``"P95"``, ``"P(exceed)"``.
    bound
        The bound (SI, or a probability) [-].
    units
        UDUNITS units of ``bound`` and the values (``"1"`` for a probability).
    display_unit
        Unit the values are shown in (``"%"`` for a probability).
    comparison
        ``"<="`` or ``">="``.
    confidence
        Level of the intervals the verdict rests on [-].
    scenarios
        One :class:`ScenarioVerdict` per exposure.
    """

    criterion: str
    default: bool
    output: str
    output_text: str
    metric: str
    bound: float
    units: str
    display_unit: str
    comparison: str
    confidence: float
    scenarios: tuple[ScenarioVerdict, ...]
    limit_shown: str = ""

    @property
    def overall(self) -> str:
        """The worst verdict over the exposures."""
        return max((s.verdict for s in self.scenarios), key=_WORSE.__getitem__,
                   default=UNDECIDED)

    def show(self, value: float) -> str:
        """A value of the metric in its display unit."""
        return show_value(value, self.units, self.display_unit)

    @property
    def criterion_text(self) -> str:
        """The criterion with its bound and output in words."""
        if self.metric == "P(exceed)":
            words = f"P({self.output_text} > {self.limit_shown})"
        elif self.metric.startswith("P("):
            words = f"P({self.output_text})"
        else:
            # "P5(time_to_second_degree_burn)" -> "P5 of the time to second-degree burn"
            words = f"{self.metric.split('(')[0]} of the {self.output_text}"
        return (f"{self.criterion}  ({words} {self.comparison} {self.show(self.bound)}"
                + ("; the default criterion" if self.default else "") + ")")

    def lines(self) -> list[str]:
        """The verdict block of the terminal summary and ``summary.txt``."""
        conf = f"{100 * self.confidence:g} %"
        out = [f"VERDICT: {self.overall}",
               f"  criterion: {self.criterion_text}",
               f"  {self.overall}: {VERDICT_MEANING[self.overall]} ({conf} confidence)"]
        for s in self.scenarios:
            where = f"  at {s.label}: " if s.label else "  "
            out.append(f"{where}{s.verdict}: {self.metric} = {self.show(s.value)} "
                       f"[{self.show(s.lower)}, {self.show(s.upper)}] vs "
                       f"{self.show(self.bound)}" + (f" ({s.reason})" if s.reason else ""))
        return out

    def to_dict(self) -> dict[str, Any]:
        """The verdict as JSON-ready data (``summary.json``)."""
        def num(x: float) -> float | str | None:  # +inf: a time beyond the horizon
            return float(x) if math.isfinite(x) else (
                "beyond_horizon" if x > 0 and self.units == "s" else None)

        return {"overall": self.overall, "criterion": self.criterion,
                "default_criterion": self.default, "criterion_text": self.criterion_text,
                "output": self.output, "output_text": self.output_text, "metric": self.metric,
                "comparison": self.comparison, "bound": num(self.bound), "units": self.units,
                "display_unit": self.display_unit, "limit": self.limit_shown,
                "confidence": self.confidence,
                "scenarios": [{"label": s.label, "verdict": s.verdict, "value": num(s.value),
                               "lower": num(s.lower), "upper": num(s.upper),
                               "reason": s.reason} for s in self.scenarios]}


def study_criterion(study: Study) -> str:
    """The criterion of a study: ``[study] criterion``, else the default of its kind.

    Parameters
    ----------
    study
        The parsed study.

    Returns
    -------
    str
    """
    if study.analysis.criterion:
        return study.analysis.criterion
    if study.transient is None:
        return default_criterion()
    kind = str(getattr(study.transient.wearer, "kind", "") or "")
    event = WEARER_EVENTS.get(kind)
    if event is None:
        return ""
    return default_criterion(transient_event=event,
                             acceptable=study.transient.acceptable_burn_probability)


def _dataset_criterion(ds: xr.Dataset) -> tuple[str, bool]:
    """The criterion recorded in a dataset, or the default of its kind (and whether it is)."""
    text = str(ds.attrs.get("criterion", "") or "")
    default = bool(int(ds.attrs.get("criterion_is_default", 0))) if text else True
    if text:
        return text, default
    if ds.attrs.get("study_kind") != "transient":
        return default_criterion(), True
    event = WEARER_EVENTS.get(str(ds.attrs.get("wearer_kind", "")))
    if event is None:
        return "", True
    acceptable = float(ds.attrs.get("acceptable_burn_probability", DEFAULT_ACCEPTABLE))
    return default_criterion(transient_event=event, acceptable=acceptable), True


def verdict_of(ds: xr.Dataset) -> Verdict:
    """Judge the study's criterion on a results dataset (steady or transient, any method).

    Parameters
    ----------
    ds
        A results dataset (:func:`plyrisk.results.dataset.to_dataset`, or read from
        ``results.nc``).

    Returns
    -------
    Verdict
    """
    text, default = _dataset_criterion(ds)
    transient = ds.attrs.get("study_kind") == "transient"
    confidence = float(ds.attrs.get("confidence", math.nan))
    labels = _labels(ds)
    if not text:  # a prescribed wearer surface: no event to judge
        return Verdict("(none)", True, "", "no burn event (prescribed wearer surface)", "-",
                       math.nan, "1", "%", "<=", confidence,
                       tuple(ScenarioVerdict(lb, UNDECIDED, math.nan, math.nan, math.nan,
                                             "a prescribed wearer surface has no burn event; "
                                             "give [study] criterion on an event")
                             for lb in labels))
    limit_output = str(ds.attrs.get("limit_output", "inner_surface_temperature"))
    target = parse_target(text, output=limit_output)
    if transient:
        return _transient(ds, target, default, confidence, labels)
    return _steady(ds, target, default, confidence, labels, limit_output)


def _labels(ds: xr.Dataset) -> list[str]:
    from plyrisk.results.dataset import is_swept, scenario_labels

    if not is_swept(ds):
        return [""] * ds.sizes.get("scenario", 1)
    quantity = str(ds.attrs.get("scenario_quantity", "exposure"))
    return [f"{quantity} = {v}" for v in scenario_labels(ds)]


def _per(x: xr.DataArray | None, n: int) -> np.ndarray:
    if x is None:
        return np.full(n, np.nan)
    return np.broadcast_to(np.atleast_1d(np.asarray(x.values, dtype=float)), (n,))


def _judge(value: float, lower: float, upper: float, bound: float, comparison: str,
           missing: str) -> tuple[str, str]:
    if not math.isfinite(bound) or (math.isnan(lower) and math.isnan(upper)):
        return UNDECIDED, missing
    if comparison == "<=":
        met, not_met = upper <= bound, lower > bound
    else:
        met, not_met = lower >= bound, upper < bound
    if met:
        return MET, ""
    if not_met:
        return NOT_MET, ""
    return UNDECIDED, "the confidence interval straddles the bound; more samples narrow it"


def _quantile_at(var: xr.DataArray, level: float) -> xr.DataArray | None:
    q = np.asarray(var["quantile"].values, dtype=float)
    hit = np.flatnonzero(np.isclose(q, level, rtol=0.0, atol=1e-9))
    return None if hit.size == 0 else var.isel(quantile=int(hit[0]))


def _steady(ds: xr.Dataset, target: Target, default: bool, confidence: float,
            labels: list[str], limit_output: str) -> Verdict:
    n = len(labels)
    limit = float(ds.attrs.get("limit", math.nan))
    units = str(ds.attrs.get("limit_units", "K"))
    words = str(ds.attrs.get("limit_output_long_name", "inner-surface temperature"))
    shown = str(ds.attrs.get("limit_output_display_unit")
                or ds.attrs.get("limit_display_unit") or units)
    if target.kind == "exceedance":
        parts = [ds.get(f"exceedance_probability{s}") for s in ("", "_lower", "_upper")]
        why = "no exceedance probability: a Morris screening gives no distribution of the output"
        metric_units, metric_shown = "1", "%"
        bound = target.bound(limit)
    else:
        name = f"{limit_output}_quantile"
        pick: list[xr.DataArray | None] = []
        for sfx in ("", "_lower", "_upper"):
            var = ds.get(f"{name}{sfx}")
            if var is None and f"interface_temperature_quantile{sfx}" in ds and \
                    limit_output in list(ds["interface"].values):
                var = ds[f"interface_temperature_quantile{sfx}"].sel(interface=limit_output)
            pick.append(None if var is None else _quantile_at(var, target.probability))
        parts = pick
        why = ("no percentiles: a Morris screening gives no distribution of the output"
               if all(p is None for p in parts) and ds.attrs.get("method") == "morris" else
               f"the percentile {target.label} was not computed")
        metric_units, metric_shown = units, shown
        bound = target.bound(limit)
    value, lower, upper = (_per(p, n) for p in parts)
    scen = []
    for k, lb in enumerate(labels):
        v, reason = _judge(value[k], lower[k], upper[k], bound, "<=", why)
        scen.append(ScenarioVerdict(lb, v, float(value[k]), float(lower[k]), float(upper[k]),
                                    reason))
    return Verdict(target.text, default, limit_output, words, target.label, bound, metric_units,
                   metric_shown, "<=", confidence, tuple(scen), show_value(limit, units, shown))


def _transient(ds: xr.Dataset, target: Target, default: bool, confidence: float,
               labels: list[str]) -> Verdict:
    n = len(labels)
    event = target.event
    events = list(np.asarray(ds["event"].values)) if "event" in ds.coords else []
    missing = ("no probabilities or times: a Morris screening gives no distribution of the "
               "output" if ds.attrs.get("method") == "morris" and "event_probability" not in ds
               else f"the study computes no {event!r} event (events: "
               f"{', '.join(map(str, events)) or 'none'})")
    if target.kind == "exceedance":
        parts: list[xr.DataArray | None] = [None, None, None]
        if event in events:
            parts = [ds[f"event_probability{s}"].sel(event=event) if f"event_probability{s}"
                     in ds else None for s in ("", "_lower", "_upper")]
        value, lower, upper = (_per(p, n) for p in parts)
        bound, units, shown, comparison = target.threshold, "1", "%", "<="
        what = f"{event.replace('_', '-', 1).replace('_', ' ')} within the horizon"
    else:
        parts = [None, None, None]
        if event in events:
            for i, sfx in enumerate(("", "_lower", "_upper")):
                var = ds.get(f"event_time_quantile{sfx}")
                if var is not None:
                    parts[i] = _quantile_at(var.sel(event=event), target.probability)
            if parts[0] is None:
                missing = f"the percentile {target.label} was not computed"
        value, lower, upper = (_per(p, n) for p in parts)
        bound, units, shown, comparison = target.threshold, "s", "s", ">="
        what = (f"time to {event.replace('_', '-', 1).replace('_', ' ')}"
                if event in EVENT_TIMES else target.output.replace("_", " "))
    scen = []
    for k, lb in enumerate(labels):
        v, reason = _judge(value[k], lower[k], upper[k], bound, comparison, missing)
        scen.append(ScenarioVerdict(lb, v, float(value[k]), float(lower[k]), float(upper[k]),
                                    reason))
    return Verdict(target.text, default, target.output, what, target.label, bound, units, shown,
                   comparison, confidence, tuple(scen))


def show_value(value: float, units: str, display: str) -> str:
    """A value of a criterion's metric (SI ``units``) shown in the ``display`` unit."""
    if math.isnan(value):
        return "n/a"
    if units == "1":
        return f"{100.0 * value:.3g} %"
    if math.isinf(value):
        return "beyond the horizon" if value > 0 else "-inf"
    if units == "s":
        return f"{value:.3g} s"
    from plyrisk.study.units import HEAT_FLUX, TEMPERATURE, from_si

    spec = TEMPERATURE if units == "K" else HEAT_FLUX if units == "W m-2" else None
    if spec is None or not display:
        return f"{value:.4g} {units}"
    try:
        return f"{float(from_si(value, display, spec)):.4g} {display}"
    except Exception:  # an odd display unit in an old file: show SI
        return f"{value:.4g} {units}"


def add_verdict(ds: xr.Dataset, criterion: str | None = None, *,
                default: bool = False) -> xr.Dataset:
    """A copy of ``ds`` with the criterion and its verdict recorded.

    Attributes ``criterion``, ``criterion_is_default``, ``criterion_output`` and ``verdict``
    (overall); variables ``verdict`` (per exposure, text), ``criterion_value``,
    ``criterion_lower``, ``criterion_upper`` and the scalar ``criterion_bound``.

    Parameters
    ----------
    ds
        A results dataset.
    criterion
        The study's criterion (:func:`study_criterion`); ``None`` keeps the dataset's, or the
        default of its kind.
    default
        Whether ``criterion`` is the default one (the config gave none).

    Returns
    -------
    xarray.Dataset
    """
    out = ds.copy()
    if criterion is not None:
        out.attrs["criterion"] = criterion
        out.attrs["criterion_is_default"] = int(default)
    v = verdict_of(out)
    out.attrs["criterion"] = v.criterion if v.output else ""
    out.attrs["criterion_is_default"] = int(v.default)
    out.attrs["criterion_output"] = v.output
    out.attrs["verdict"] = v.overall
    sd = ("scenario",) if "scenario" in out.dims else ()  # none only in files before 0.2

    def per(values: list[Any]) -> np.ndarray:
        arr = np.asarray(values)
        return arr if sd else arr[0]

    common = {"criterion": v.criterion, "output": v.output}
    out["verdict"] = (sd, per([s.verdict for s in v.scenarios]).astype(str), {"units": "1",
        "long_name": "verdict of the study's criterion: MET, NOT MET or UNDECIDED (the "
                     "confidence interval straddles the bound)", **common})
    for name, attr, long in (("criterion_value", "value", "estimate"),
                             ("criterion_lower", "lower", "lower confidence bound"),
                             ("criterion_upper", "upper", "upper confidence bound")):
        out[name] = (sd, per([getattr(s, attr) for s in v.scenarios]).astype(float), {
            "units": v.units, "long_name": f"{long} of {v.metric} of the {v.output_text}",
            **common})
    out["criterion_bound"] = ((), float(v.bound), {
        "units": v.units, "long_name": f"bound of the criterion ({v.comparison})", **common})
    return out
