"""Analysis of a transient study: censored times to burn, P(burn), bands over time, indices.

A time to burn (or to the sensor's criterion) is ``+inf`` where the event does not occur by the
horizon. Every sample is followed to the same horizon, so the samples without the event are
exactly the largest ones: order statistics, and with them the percentiles and their
distribution-free intervals (:mod:`plyrisk.analysis.statistics`), are exact under this
censoring. A percentile (or an interval bound) whose rank falls among the samples without the
event is only known to lie beyond the horizon: it is kept as ``+inf`` and flagged
("> horizon"), never replaced by a number.

P(first-, second-, third-degree burn) within the horizon is a binomial proportion with a Wilson
(or Clopper-Pearson) interval, the transient analogue of the exceedance probability. Samples that
did not converge (``converged`` False, NaN outputs) are excluded from every statistic and
counted.

Indices are computed by the study's method (:meth:`plyrisk.methods.base.Method.transient_indices`)
on the *derived outputs* (:data:`plyrisk.analysis.outputs.DERIVED_OUTPUTS`), which are defined for
every converged sample: indices of a capped time or of a burn indicator mean something different
from those of the time itself, which is why each carries its rule.

Results are engineering estimates; the published burn criteria scatter widely and the transient
model has the limits listed in the cautions.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np

from plyrisk.analysis.outputs import WEARER_OUTPUTS, MemoryRows, output_column
from plyrisk.analysis.statistics import (
    QuantileEstimate,
    _order_statistic_ranks,
    exceedance_from_counts,
    quantiles,
)

if TYPE_CHECKING:  # pragma: no cover
    from plyrisk.methods.base import Method
    from plyrisk.propagate.evaluate import Propagation
    from plyrisk.study.definition import Study

__all__ = ["BAND_PROBABILITIES", "BurnProbability", "CensoredQuantiles", "ExposureLimit",
           "TemperatureBands", "TransientAnalysis", "TransientScenarioAnalysis",
           "analyse_transient", "burn_probability", "censored_quantiles", "exposure_limit",
           "is_transient", "temperature_bands", "transient_facts"]

BAND_PROBABILITIES = (0.01, 0.05, 0.5, 0.95, 0.99)
"""Percentiles of the temperature bands over time."""

EVENTS: dict[str, tuple[tuple[str, str], ...]] = {
    "skin": (("first_degree_burn", "time_to_first_degree_burn"),
             ("second_degree_burn", "time_to_second_degree_burn"),
             ("third_degree_burn", "time_to_third_degree_burn")),
    "sensor": (("sensor_criterion", "sensor_criterion_time"),),
    "prescribed": (),
}
"""Per wearer kind: (event name, per-sample time of the event) pairs."""

CONDITION_GROUPS = ("exposure", "wearer", "skin", "sensor", "hot_side", "cold_side")
"""Parameter groups that are conditions of the exposure or the wearer, not layers of the
assembly: never named the dominant *layer* (their influence is said beside it)."""

HEADLINE_EVENT = {"skin": "second_degree_burn", "sensor": "sensor_criterion"}
"""The event the headline and the exposure read-off are about, per wearer kind."""

PLAIN_OUTPUTS = {
    "skin": ("peak_basal_temperature", "peak_surface_temperature", "damage_at_end",
             "absorbed_energy", "stored_energy_at_exposure_end"),
    "sensor": ("peak_surface_temperature", "absorbed_energy", "stored_energy_at_exposure_end"),
    "prescribed": ("peak_surface_temperature", "absorbed_energy",
                   "stored_energy_at_exposure_end"),
}
"""Per wearer kind: scalar outputs with ordinary (uncensored) percentiles."""

BAND_HISTORIES = {"skin": ("basal_temperature", "surface_temperature"),
                  "sensor": ("surface_temperature",), "prescribed": ("surface_temperature",)}
"""Per wearer kind: histories with percentile bands over time; the first is the headline's."""


# ----------------------------------------------------------------------------------------------
# The study's transient facts
# ----------------------------------------------------------------------------------------------


def is_transient(study: Any) -> bool:
    """Whether a study runs the transient model (it has a ``transient`` setup)."""
    return getattr(study, "transient", None) is not None


@dataclass(frozen=True)
class TransientFacts:
    """What the analysis needs of a study's transient setup.

    Attributes
    ----------
    horizon
        End of the simulated time, shared by every sample [s].
    wearer_kind
        ``"skin"``, ``"sensor"`` or ``"prescribed"``.
    acceptable_burn_probability
        Largest acceptable P(headline event) for the exposure read-off; ``None`` for none.
    damage_model
        Damage parameter set at the basal depth.
    """

    horizon: float
    wearer_kind: str
    acceptable_burn_probability: float | None
    damage_model: str


def transient_facts(study: Any) -> TransientFacts:
    """The horizon, wearer kind, acceptable probability and damage model of a study."""
    t = study.transient
    kind = getattr(t, "wearer_kind", None) or getattr(getattr(t, "wearer", None), "kind", None)
    if kind not in EVENTS:
        raise ValueError(f"transient study: wearer kind {kind!r} is not one of "
                         f"{', '.join(EVENTS)}")
    acceptable = getattr(t, "acceptable_burn_probability", None)
    return TransientFacts(float(t.exposure.horizon), str(kind),
                          None if acceptable is None else float(acceptable),
                          str(getattr(t, "damage_model", "")))


# ----------------------------------------------------------------------------------------------
# Censored percentiles, P(burn), bands
# ----------------------------------------------------------------------------------------------


@dataclass(frozen=True, eq=False)
class CensoredQuantiles:
    """Percentiles of a time to an event that is ``+inf`` where the event does not occur.

    Attributes
    ----------
    probabilities
        Probability levels.
    estimate, lower, upper
        Percentile and its distribution-free confidence bounds [s]; ``+inf`` where beyond the
        horizon, NaN where the sample is too small for a bound.
    estimate_beyond, lower_beyond, upper_beyond
        Where the value is only known to exceed the horizon ("> horizon").
    confidence
        Confidence level of the bounds.
    n
        Converged samples used.
    events
        Samples in which the event occurred within the horizon.
    horizon
        The shared horizon [s].
    """

    probabilities: np.ndarray
    estimate: np.ndarray
    lower: np.ndarray
    upper: np.ndarray
    estimate_beyond: np.ndarray
    lower_beyond: np.ndarray
    upper_beyond: np.ndarray
    confidence: float
    n: int
    events: int
    horizon: float

    @property
    def no_event_fraction(self) -> float:
        """Share of the converged samples without the event by the horizon."""
        return (self.n - self.events) / self.n if self.n else math.nan


def censored_quantiles(times: Any, probabilities: Sequence[float] | np.ndarray, *,
                       horizon: float,
                       confidence: float = 0.90) -> CensoredQuantiles:
    """Percentiles of event times with ``+inf`` for "no event by the horizon".

    Order statistics of the sorted sample with the ``+inf`` values last: the point estimate
    interpolates linearly between neighbouring order statistics (numpy's default, as
    :func:`plyrisk.analysis.statistics.quantiles`) and is ``+inf`` when it needs a ``+inf``
    neighbour with a non-zero weight; the bounds are the order statistics of
    :func:`plyrisk.analysis.statistics.quantiles`, ``+inf`` where their rank falls among the
    samples without the event.

    Parameters
    ----------
    times
        Time of the event per sample, ``+inf`` where it does not occur, NaN where the sample did
        not converge (excluded) [s].
    probabilities
        Levels in (0, 1).
    horizon
        The horizon every sample was followed to; finite times must not exceed it [s].
    confidence
        Two-sided confidence level of the bounds.

    Returns
    -------
    CensoredQuantiles

    Raises
    ------
    ValueError
        When a finite time exceeds the horizon or no sample converged.

    Examples
    --------
    >>> q = censored_quantiles([3.0, 4.0, 5.0, float("inf")], [0.25, 0.9], horizon=30.0)
    >>> q.estimate.tolist(), q.estimate_beyond.tolist()
    ([3.75, inf], [False, True])
    """
    t = np.asarray(times, dtype=float).ravel()
    t = t[~np.isnan(t)]
    if t.size == 0:
        raise ValueError("censored_quantiles: no converged sample")
    finite = t[np.isfinite(t)]
    if np.any(finite > horizon * (1 + 1e-12)) or np.any(t == -np.inf) or np.any(finite < 0):
        bad = float(np.max(finite)) if finite.size else float("-inf")
        raise ValueError(f"censored_quantiles: times must lie in [0, horizon = {horizon!r} s] "
                         f"or be +inf, got {bad!r} s")
    p = np.atleast_1d(np.asarray(probabilities, dtype=float))
    if p.ndim != 1 or p.size == 0 or not np.all((p > 0.0) & (p < 1.0)):
        raise ValueError(f"probabilities must lie in (0, 1), got {probabilities!r}")
    if not 0.0 < confidence < 1.0:
        raise ValueError(f"confidence must lie in (0, 1), got {confidence}")
    v = np.sort(t)
    n = v.size
    est = np.empty(p.size)
    lower = np.full(p.size, np.nan)
    upper = np.full(p.size, np.nan)
    for i, pi in enumerate(p):
        h = (n - 1) * pi
        lo, hi = int(math.floor(h)), int(math.ceil(h))
        frac = h - lo
        if frac == 0.0 or not np.isfinite(v[hi]):
            est[i] = v[lo] if frac == 0.0 else np.inf
        else:
            est[i] = v[lo] + frac * (v[hi] - v[lo])
        rl, ru = _order_statistic_ranks(n, float(pi), 1.0 - confidence)
        if rl >= 1:
            lower[i] = v[rl - 1]
        if ru <= n:
            upper[i] = v[ru - 1]
    arrays = (p, est, lower, upper, np.isposinf(est), np.isposinf(lower), np.isposinf(upper))
    for a in arrays:
        a.setflags(write=False)
    return CensoredQuantiles(*arrays, float(confidence), int(n), int(finite.size),
                             float(horizon))


@dataclass(frozen=True)
class BurnProbability:
    """Probability that an event occurs within the horizon, with a binomial interval.

    Attributes
    ----------
    event
        E.g. ``"second_degree_burn"`` or ``"sensor_criterion"``.
    probability, lower, upper
        Share of converged samples with the event, and its confidence bounds.
    confidence
        Confidence level.
    n
        Converged samples.
    count
        Samples with the event.
    method
        ``"wilson"`` or ``"clopper-pearson"``.
    """

    event: str
    probability: float
    lower: float
    upper: float
    confidence: float
    n: int
    count: int
    method: str


def burn_probability(times: np.ndarray, event: str, *, horizon: float,
                     confidence: float = 0.90, method: str = "wilson") -> BurnProbability:
    """P(event within the horizon) from event times (``+inf`` = none, NaN = not converged).

    Parameters
    ----------
    times
        Event time per sample [s].
    event
        Name of the event.
    horizon
        The horizon [s].
    confidence
        Two-sided confidence level.
    method
        ``"wilson"`` or ``"clopper-pearson"`` (:func:`plyrisk.analysis.statistics.exceedance`)
       .

    Returns
    -------
    BurnProbability

    Examples
    --------
    >>> b = burn_probability([1.0, float("inf"), 7.0, float("inf")], "x", horizon=10.0)
    >>> b.probability, b.count, b.n
    (0.5, 2, 4)
    """
    t = np.asarray(times, dtype=float).ravel()
    t = t[~np.isnan(t)]
    if t.size == 0:
        raise ValueError(f"burn_probability: no converged sample for {event}")
    count = int(np.count_nonzero(t <= horizon))
    e = exceedance_from_counts(count, int(t.size), horizon, confidence=confidence,
                               method=method)
    return BurnProbability(event, e.probability, e.lower, e.upper, e.confidence, e.n, e.count,
                           e.method)


@dataclass(frozen=True, eq=False)
class TemperatureBands:
    """Percentiles over time of a temperature history, taken time by time.

    Attributes
    ----------
    history
        ``"basal_temperature"`` or ``"surface_temperature"``.
    time
        Output times [s].
    probabilities
        Levels.
    values
        Shape ``(len(probabilities), len(time))`` [K].
    n
        Converged samples used.
    """

    history: str
    time: np.ndarray
    probabilities: np.ndarray
    values: np.ndarray
    n: int


def temperature_bands(history: np.ndarray, time: np.ndarray, name: str,
                      probabilities: Sequence[float] = BAND_PROBABILITIES) -> TemperatureBands:
    """Percentile bands of a history ``(samples, time)``; rows with NaN are excluded [K].

    Parameters
    ----------
    history
        Temperature per sample and output time [K].
    time
        Output times [s].
    name
        Name of the history.
    probabilities
        Levels in (0, 1).

    Returns
    -------
    TemperatureBands
        The bands are percentiles of each time taken separately, not the history of any one
        sample.
    """
    h = np.asarray(history, dtype=float)
    ok = np.all(np.isfinite(h), axis=1) if h.ndim == 2 and h.shape[1] else np.zeros(0, bool)
    p = np.asarray(probabilities, dtype=float)
    if h.ndim != 2 or h.shape[1] == 0 or not ok.any():
        return TemperatureBands(name, np.asarray(time, float), p,
                                np.full((p.size, h.shape[1] if h.ndim == 2 else 0), np.nan), 0)
    return TemperatureBands(name, np.asarray(time, float), p,
                            np.quantile(h[ok], p, axis=0), int(ok.sum()))


# ----------------------------------------------------------------------------------------------
# The exposure read-off of a sweep
# ----------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class ExposureLimit:
    """Largest swept exposure for which P(event) stays at or below the acceptable probability.

    Attributes
    ----------
    status
        ``"crosses"`` (read off between two levels), ``"below"`` (acceptable over the whole
        sweep: the limit lies beyond it), ``"above"`` (not acceptable even at the lowest level)
        or ``"unavailable"``.
    value
        The exposure at which the estimated P reaches the acceptable probability, by linear
        interpolation between the last acceptable level and the next; NaN unless ``"crosses"``
        [unit of the sweep].
    cautious_value
        The same read-off for the upper confidence bound of P; NaN when it does not cross
        inside the sweep [unit of the sweep].
    cautious_status
        Status of the upper-bound read-off.
    acceptable
        The acceptable probability.
    """

    status: str
    value: float
    cautious_value: float
    cautious_status: str
    acceptable: float


def _last_acceptable(x: np.ndarray, p: np.ndarray, acceptable: float) -> tuple[str, float]:
    ok = np.isfinite(p)
    x, p = x[ok], p[ok]
    if x.size == 0:
        return "unavailable", math.nan
    over = p > acceptable
    if not over.any():
        return "below", math.nan
    if over[0]:
        return "above", math.nan
    i = int(np.argmax(over))
    x0, x1, p0, p1 = x[i - 1], x[i], p[i - 1], p[i]
    return "crosses", float(x0 + (acceptable - p0) * (x1 - x0) / (p1 - p0))


def exposure_limit(levels: Sequence[float] | np.ndarray, probability: Sequence[float],
                   upper: Sequence[float], acceptable: float) -> ExposureLimit:
    """Read off the largest exposure level whose P(event) stays at or below ``acceptable``.

    Parameters
    ----------
    levels
        Swept exposure levels (duration or flux), any order [unit of the sweep].
    probability
        Estimated P(event) per level.
    upper
        Upper confidence bound of P per level.
    acceptable
        The acceptable probability, in (0, 1).

    Returns
    -------
    ExposureLimit

    Examples
    --------
    >>> lim = exposure_limit([4, 6, 8], [0.0, 0.02, 0.2], [0.01, 0.06, 0.3], 0.05)
    >>> round(lim.value, 3), lim.status, round(lim.cautious_value, 3)
    (6.333, 'crosses', 5.6)
    """
    x = np.asarray(levels, dtype=float)
    order = np.argsort(x, kind="stable")
    x = x[order]
    p = np.asarray(probability, dtype=float)[order]
    u = np.asarray(upper, dtype=float)[order]
    status, value = _last_acceptable(x, p, float(acceptable))
    c_status, c_value = _last_acceptable(x, u, float(acceptable))
    return ExposureLimit(status, value, c_value, c_status, float(acceptable))


# ----------------------------------------------------------------------------------------------
# The analysis of a propagated transient study
# ----------------------------------------------------------------------------------------------


@dataclass(frozen=True, eq=False)
class TransientScenarioAnalysis:
    """Statistics of one exposure of a transient study.

    Attributes
    ----------
    times
        Event name → percentiles of its time (censored at the horizon); empty for a method whose
        design does not sample the input distributions (Morris).
    burn
        Event name → P(event within the horizon) with its interval.
    quantiles
        Scalar output → ordinary percentiles (peak temperatures, energies, damage).
    exposure_energy
        Percentiles of the exposure energy at the sensor's criterion (``+inf`` where the
        criterion is not reached; sensor studies), else ``None`` [J m-2].
    bands
        History name → percentile bands over time.
    indices, ranking, group_ranking
        Derived output → (per-parameter, per-group) indices and their rankings, from the method.
    surrogate_quality
        Derived output → one line on the surrogate's fit (``method = "pce"``).
    screening
        Derived output → Morris measures (``method = "morris"``).
    shapley
        Derived output → (per-parameter, per-layer)
        :class:`plyrisk.analysis.shapley.ShapleyEffects` (``method = "shapley"``); the rankings
        are then by Shapley effect.
    nonconverged
        Samples that did not converge (excluded from every statistic).
    constant_outputs
        Derived outputs with no spread in this exposure (no indices: e.g. no sample burns).
    """

    times: dict[str, CensoredQuantiles]
    burn: dict[str, BurnProbability]
    quantiles: dict[str, QuantileEstimate]
    exposure_energy: CensoredQuantiles | None
    bands: dict[str, TemperatureBands]
    indices: dict[str, tuple[Any, Any]] = field(default_factory=dict)
    ranking: dict[str, list] = field(default_factory=dict)
    group_ranking: dict[str, list] = field(default_factory=dict)
    surrogate_quality: dict[str, str] = field(default_factory=dict)
    screening: dict[str, Any] = field(default_factory=dict)
    nonconverged: int = 0
    constant_outputs: tuple[str, ...] = ()
    shapley: dict[str, tuple[Any, Any]] = field(default_factory=dict)


@dataclass(frozen=True, eq=False)
class TransientAnalysis:
    """Statistics of every exposure of a transient study.

    Attributes
    ----------
    scenarios
        One :class:`TransientScenarioAnalysis` per exposure.
    probabilities
        Percentile levels of the times and outputs.
    outputs
        Derived outputs with indices, the headline one first.
    group_names
        Parameter groups (layers) of the grouped indices.
    facts
        Horizon, wearer kind, acceptable probability, damage model.
    statistics
        Whether the design samples the input distributions (False for Morris: no percentiles or
        probabilities).
    limit
        The exposure read-off of a sweep, else ``None``.
    notes
        Notes for the summary and the dataset.
    """

    scenarios: list[TransientScenarioAnalysis]
    probabilities: np.ndarray
    outputs: tuple[str, ...]
    group_names: tuple[str, ...]
    facts: TransientFacts
    statistics: bool = True
    limit: ExposureLimit | None = None
    notes: list[str] = field(default_factory=list)


def transient_outputs(study: Study) -> tuple[str, ...]:
    """The derived outputs a transient study computes indices for, the headline one first.

    The wearer's :data:`plyrisk.analysis.outputs.WEARER_OUTPUTS`, then any other output named in
    ``[study] outputs``.
    """
    kind = transient_facts(study).wearer_kind
    base = WEARER_OUTPUTS[kind]
    extra = [o for o in study.analysis.outputs if o not in base]
    return (*base, *extra)


def analyse_transient(study: Study, propagation: Propagation, *,
                      method: Method | None = None) -> TransientAnalysis:
    """Censored percentiles, P(burn), bands and the method's indices for every exposure.

    Parameters
    ----------
    study
        A transient study (``study.transient`` set).
    propagation
        Its propagation (outputs of :data:`plyrisk.models.transient_outputs.TRANSIENT_OUTPUTS`,
        ``outputs.time``).
    method
        The analysis method (default: the study's); it computes the indices
        (:meth:`plyrisk.methods.base.Method.transient_indices`).

    Returns
    -------
    TransientAnalysis
    """
    from plyrisk.analysis.study import AnalysisError, analysis_probabilities, scenario_text
    from plyrisk.methods import get_method
    from plyrisk.propagate.evaluate import parameter_groups

    a = study.analysis
    method = method or get_method(a.method)
    facts = transient_facts(study)
    probabilities = analysis_probabilities(study)
    outputs = transient_outputs(study)
    group_names, _ = parameter_groups(study)
    design = propagation.design
    rows = design.independent_rows()
    source = MemoryRows(propagation, horizon=facts.horizon)
    out = propagation.outputs
    time = np.asarray(getattr(out, "time", np.zeros(0)), dtype=float)
    statistics = bool(getattr(method, "samples_distributions", True))
    notes = list(method.notes(study, design.base_samples))
    result = []
    n_s = out["converged"].shape[0]
    for s in range(n_s):
        conv = np.asarray(out["converged"][s], dtype=bool)
        if not conv[rows].any():
            raise AnalysisError(f"no sample converged{scenario_text(study, s)}: the transient "
                                f"solve failed on all {conv.size} samples; loosen the step "
                                "options or check the inputs")
        times, burn, plain, bands = {}, {}, {}, {}
        energy = None
        if statistics:
            for event, name in EVENTS[facts.wearer_kind]:
                t = np.asarray(out[name][s][rows], dtype=float)
                times[event] = censored_quantiles(t, probabilities, horizon=facts.horizon,
                                                  confidence=a.confidence)
                burn[event] = burn_probability(t, event, horizon=facts.horizon,
                                               confidence=a.confidence)
            for name in PLAIN_OUTPUTS[facts.wearer_kind]:
                y = np.asarray(out[name][s][rows], dtype=float)
                if np.isfinite(y).any():
                    plain[name] = quantiles(y, probabilities, confidence=a.confidence)
            if facts.wearer_kind == "sensor":
                e = np.asarray(out["exposure_energy_at_criterion"][s][rows], dtype=float)
                reached = np.asarray(out["sensor_criterion_time"][s][rows], dtype=float)
                e = np.where(np.isnan(reached), np.nan, np.where(np.isinf(reached), np.inf, e))
                top = float(np.nanmax(np.where(np.isfinite(e), e, np.nan))) if np.isfinite(
                    e).any() else 0.0
                energy = censored_quantiles(e, probabilities, horizon=max(top, 1.0),
                                            confidence=a.confidence)
            for name in BAND_HISTORIES[facts.wearer_kind]:
                if name in out.fields and time.size:
                    bands[name] = temperature_bands(out[name][s][rows], time, name)
        ix = method.transient_indices(study, s, source=source, design=design,
                                      probabilities=probabilities)
        constant = tuple(o for o in outputs if _constant(output_column(source, o, s)))
        result.append(TransientScenarioAnalysis(
            times, burn, plain, energy, bands, ix.indices, ix.ranking, ix.group_ranking,
            dict(getattr(ix, "quality", {}) or {}), dict(getattr(ix, "screening", {}) or {}),
            int(np.sum(~conv)), constant, dict(getattr(ix, "shapley", {}) or {})))
    limit = None
    headline = HEADLINE_EVENT.get(facts.wearer_kind)
    if (statistics and study.scenarios is not None and headline is not None
            and facts.acceptable_burn_probability is not None):
        limit = exposure_limit(np.asarray(study.scenarios.values, dtype=float),
                               [sc.burn[headline].probability for sc in result],
                               [sc.burn[headline].upper for sc in result],
                               facts.acceptable_burn_probability)
    for sc_i, sc in enumerate(result):
        if sc.constant_outputs:
            notes.append(f"no indices for {', '.join(sc.constant_outputs)}"
                         f"{scenario_text(study, sc_i)}: the output is the same in every "
                         "converged sample (e.g. no sample burns, or every one does)")
    return TransientAnalysis(result, probabilities, outputs, tuple(group_names), facts,
                             statistics, limit, notes)


def _constant(y: np.ndarray) -> bool:
    v = y[np.isfinite(y)]
    return v.size == 0 or bool(np.ptp(v) <= 8 * np.finfo(float).eps * max(np.max(np.abs(v)),
                                                                          1e-300))
