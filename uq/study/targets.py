"""The target grammar of tolerance studies: what the inner-surface temperature must satisfy.

A target is one line of text, parsed by :func:`parse_target` into a :class:`Target`:

=============================  ==============================================================
``P95 <= limit``               the 95th percentile must not exceed the study limit
                               (the default criterion of a steady study)
``P99 <= 44 degC``             the 99th percentile must not exceed 44 degC (any temperature
                               unit pint knows: ``K``, ``degC``, ``degF``)
``P97.5 <= 317 K``             any percentile level strictly between 0 and 100
``P(exceed) <= 1 %``           the probability of exceeding the study limit must not exceed 1 %
``P(exceed) <= 0.01``          the same as a fraction (a bare number must lie in (0, 1))
=============================  ==============================================================

The percentile and exceedance forms are about the study's *limit output* (``[study]
limit_output``: the inner-surface temperature by default, or the heat flux, or a face
temperature); a bound given as a number carries that output's unit (``P95 <= 2.5 kW/m^2`` for
the heat flux).

Transient studies (time to burn, :mod:`plyrisk.analysis.transient`) take two more forms:

======================================  =====================================================
``P(second_degree_burn) <= 5 %``        probability of the event within the horizon
                                        (``first_degree_burn``, ``second_degree_burn``,
                                        ``third_degree_burn``, ``sensor_criterion``)
``P5(time_to_second_degree_burn) >= 12 s``  the 5th percentile of the time to the event must
                                        be at least 12 s (``time_to_first_degree_burn``,
                                        ``time_to_second_degree_burn``,
                                        ``time_to_third_degree_burn``, ``sensor_criterion_time``;
                                        any time unit pint knows)
======================================  =====================================================

A time target needs its bound below the horizon: beyond it the time is only known to exceed the
horizon. The tolerance engine judges both on the time to the event capped at the horizon and
negated (:func:`plyrisk.tolerances.study.problem_from_study`), so that "a burn is worse" stays
"larger is worse": ``P5(t) >= 12 s`` is ``P95(-t) <= -12 s``, and P(burn within the horizon)
is the probability that ``-t`` exceeds ``-horizon``.

``P`` and the words ``limit`` and ``exceed`` may be written in any case; spaces are optional
except inside the temperature (``"44 degC"``). Only ``<=`` is accepted. "Exceed" always means
strictly above the study's limit (``[study] limit``). Where a study sweeps exposures the target
must hold at every exposure (see :mod:`plyrisk.tolerances.study`).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

from plyrisk.study.units import HEAT_FLUX, TEMPERATURE, QuantitySpec, UnitError, parse_value

__all__ = ["EVENT_TIMES", "TARGET_FORMS", "Target", "default_criterion", "limit_quantity",
           "parse_target"]

TARGET_FORMS = ("P95 <= limit", "P99 <= 44 degC", "P(exceed) <= 1 %", "P(exceed) <= 0.01",
                "P(second_degree_burn) <= 5 %", "P5(time_to_second_degree_burn) >= 12 s")
"""Examples of every valid form, quoted in error messages."""

EVENT_TIMES = {"first_degree_burn": "time_to_first_degree_burn",
               "second_degree_burn": "time_to_second_degree_burn",
               "third_degree_burn": "time_to_third_degree_burn",
               "sensor_criterion": "sensor_criterion_time"}
"""Events of a transient study and the per-sample time of each."""

_DURATION = QuantitySpec("a time", "s", "12 s", lower=0.0)
_EVENT = re.compile(r"^p\s*\(\s*([a-z_]+)\s*\)\s*<=\s*(.+?)$", re.IGNORECASE)
_TIME = re.compile(r"^p\s*(\d+(?:\.\d*)?|\.\d+)\s*\(\s*([a-z_]+)\s*\)\s*>=\s*(.+?)$",
                   re.IGNORECASE)

_QUANTILE = re.compile(r"^p\s*(\d+(?:\.\d*)?|\.\d+)\s*<=\s*(.+?)$", re.IGNORECASE)
_EXCEED = re.compile(r"^p\s*\(\s*exceed\s*\)\s*<=\s*(.+?)$", re.IGNORECASE)
_NUMBER = re.compile(r"^([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(%?)$")


@dataclass(frozen=True)
class Target:
    """A parsed target: a quantile bound or an exceedance-probability bound.

    Parameters
    ----------
    kind
        ``"quantile"`` (``P<q> <= T``) or ``"exceedance"`` (``P(exceed) <= p``).
    probability
        Quantile level in (0, 1) for a quantile target; ``nan`` for an exceedance target.
    threshold
        The bound: a temperature [K] for a quantile target (``nan`` when it is the study
        limit), a probability in (0, 1) for an exceedance target.
    text
        The target as written, whitespace normalised.
    output
        What the target is about: ``"inner_surface_temperature"`` (steady), or for a
        transient study the event time (``time_to_second_degree_burn``, ...).
    direction
        ``"<="`` (steady and event probabilities) or ``">="`` (a time that must be long
        enough).

    Notes
    -----
    For a time target the threshold is a time [s] and :meth:`bound`, :attr:`engine_probability`
    are in the engine's negated form (see the module docstring).
    """

    kind: str
    probability: float
    threshold: float
    text: str
    output: str = "inner_surface_temperature"
    direction: str = "<="

    @property
    def transient(self) -> bool:
        """Whether the target is about a transient study's event time."""
        return self.output in EVENT_TIMES.values()

    @property
    def engine_probability(self) -> float:
        """Quantile level the engine evaluates: ``1 - p`` for a ``>=`` target."""
        return 1.0 - self.probability if self.direction == ">=" else self.probability

    @property
    def uses_limit(self) -> bool:
        """True when the bound is (or refers to) the study's limit."""
        return self.kind == "exceedance" or math.isnan(self.threshold)

    def bound(self, limit: float) -> float:
        """The numeric bound the metric is compared with.

        Parameters
        ----------
        limit
            The study's inner-surface temperature limit [K].

        Returns
        -------
        float
            [K] for a quantile target, a probability for an exceedance target.
        """
        if self.kind == "quantile" and math.isnan(self.threshold):
            return float(limit)
        if self.kind == "quantile" and self.direction == ">=":
            return -self.threshold
        return self.threshold

    @property
    def label(self) -> str:
        """Short name of the metric, e.g. ``"P95"`` or ``"P(exceed)"``."""
        if self.kind == "exceedance":
            return f"P({self.event})" if self.transient else "P(exceed)"
        if self.transient:
            return f"P{100.0 * self.probability:.10g}({self.output})"
        return f"P{100.0 * self.probability:.10g}"

    @property
    def event(self) -> str:
        """The event of a transient target (e.g. ``"second_degree_burn"``), else ``""``."""
        return next((e for e, t in EVENT_TIMES.items() if t == self.output), "")


def _bad(text: str, why: str) -> ValueError:
    forms = ", ".join(repr(f) for f in TARGET_FORMS)
    return ValueError(f"bad target {text!r}: {why}; valid forms: {forms}")


def limit_quantity(output: str) -> QuantitySpec:
    """The quantity of a limit output: a heat flux for ``"heat_flux"``, else a temperature."""
    return HEAT_FLUX if output == "heat_flux" else TEMPERATURE


def default_criterion(*, transient_event: str | None = None,
                      acceptable: float | None = None) -> str:
    """The criterion of a study whose config gives none.

    Parameters
    ----------
    transient_event
        For a transient study, the event judged (``"second_degree_burn"`` for skin,
        ``"sensor_criterion"`` for a sensor); ``None`` for a steady study.
    acceptable
        The acceptable probability of that event (transient) [-].

    Returns
    -------
    str
        ``"P95 <= limit"`` (steady) or ``"P(<event>) <= <acceptable> %"``.

    Examples
    --------
    >>> default_criterion()
    'P95 <= limit'
    >>> default_criterion(transient_event="second_degree_burn", acceptable=0.05)
    'P(second_degree_burn) <= 5 %'
    """
    if transient_event is None:
        return "P95 <= limit"
    return f"P({transient_event}) <= {100.0 * float(acceptable or 0.05):.6g} %"


def parse_target(text: str, *, output: str = "inner_surface_temperature") -> Target:
    """Parse a target string (grammar in the module docstring).

    Parameters
    ----------
    text
        E.g. ``"P95 <= limit"`` or ``"P(exceed) <= 1 %"``.
    output
        The study's limit output, which the percentile and exceedance forms are about; it fixes
        the unit of a numeric bound (:func:`limit_quantity`).

    Returns
    -------
    Target

    Raises
    ------
    ValueError
        One line naming the text, what is wrong and the valid forms.

    Examples
    --------
    >>> from plyrisk.study.targets import parse_target
    >>> parse_target("P95 <= limit")  # doctest: +ELLIPSIS
    Target(kind='quantile', probability=0.95, threshold=nan, text='P95 <= limit', ...)
    >>> target = parse_target("P99  <=  45 degC")
    >>> target.label, round(target.threshold, 6), target.text
    ('P99', 318.15, 'P99 <= 45 degC')
    >>> parse_target("P(exceed) <= 1 %").threshold
    0.01
    >>> parse_target("P95 < limit")
    Traceback (most recent call last):
    ...
    ValueError: bad target 'P95 < limit': expected '<=' between the metric and its bound ...
    >>> t = parse_target("P5(time_to_second_degree_burn) >= 12 s")
    >>> t.label, t.threshold, t.engine_probability, t.bound(float("nan"))
    ('P5(time_to_second_degree_burn)', 12.0, 0.95, -12.0)
    """
    if not isinstance(text, str):
        raise _bad(str(text), f"expected a string, got {type(text).__name__}")
    clean = " ".join(text.split())
    if not clean:
        raise _bad(text, "empty")
    m = _EXCEED.match(clean)
    if m:
        return Target("exceedance", math.nan, _probability(clean, m.group(1)), clean, output)
    m = _EVENT.match(clean)
    if m:
        event = m.group(1).lower()
        if event not in EVENT_TIMES:
            raise _bad(text, f"unknown event {m.group(1)!r}; valid: exceed, "
                       + ", ".join(EVENT_TIMES))
        return Target("exceedance", math.nan, _probability(clean, m.group(2)), clean,
                      EVENT_TIMES[event], "<=")
    m = _TIME.match(clean)
    if m:
        level, output, bound = float(m.group(1)), m.group(2).lower(), m.group(3).strip()
        if output not in EVENT_TIMES.values():
            raise _bad(text, f"unknown time {m.group(2)!r}; valid: "
                       + ", ".join(EVENT_TIMES.values()))
        if not 0.0 < level < 100.0:
            raise _bad(text, f"percentile level {m.group(1)} must lie strictly between 0 and 100")
        try:
            seconds = parse_value(bound, _DURATION).si
        except UnitError as err:
            raise _bad(text, f"bound {bound!r} is not a time ({err})") from None
        if not seconds > 0.0:
            raise _bad(text, f"time {bound!r} must be positive")
        return Target("quantile", level / 100.0, float(seconds), clean, output, ">=")
    m = _QUANTILE.match(clean)
    if m:
        level = float(m.group(1))
        if not 0.0 < level < 100.0:
            raise _bad(text, f"percentile level {m.group(1)} must lie strictly between 0 and 100")
        bound = m.group(2).strip()
        spec = limit_quantity(output)
        if bound.lower() == "limit":
            threshold = math.nan
        else:
            try:
                threshold = parse_value(bound, spec).si
            except UnitError as err:
                raise _bad(text, f"bound {bound!r} is not 'limit' or {spec.what} ({err})"
                           ) from None
            if spec is TEMPERATURE and not threshold > 0.0:
                raise _bad(text, f"temperature {bound!r} is not above absolute zero")
        return Target("quantile", level / 100.0, threshold, clean, output)
    if "<=" not in clean:
        raise _bad(text, "expected '<=' between the metric and its bound ('>=' only for the "
                   "time to an event, e.g. P5(time_to_second_degree_burn) >= 12 s)")
    raise _bad(text, "the metric must be P<percentile> (e.g. P95) or P(exceed)")


def _probability(text: str, raw: str) -> float:
    m = _NUMBER.match(raw.strip())
    if m is None:
        raise _bad(text, f"probability {raw!r} must be a number, or a number followed by '%'")
    value = float(m.group(1))
    if m.group(2):
        if not 0.0 < value < 100.0:
            raise _bad(text, f"probability {raw!r} must lie strictly between 0 % and 100 %")
        return value / 100.0
    if not 0.0 < value < 1.0:
        raise _bad(text, f"probability {raw!r} must lie strictly between 0 and 1 (or be "
                   "given in %)")
    return value
