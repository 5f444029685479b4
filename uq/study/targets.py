"""The target grammar of tolerance studies: what the inner-surface temperature must satisfy.

A target is one line of text, parsed by :func:`parse_target` into a :class:`Target`:

=============================  ==============================================================
``P95 <= limit``               the 95th percentile must not exceed the study limit
``P99 <= 44 degC``             the 99th percentile must not exceed 44 degC (any temperature
                               unit pint knows: ``K``, ``degC``, ``degF``)
``P97.5 <= 317 K``             any percentile level strictly between 0 and 100
``P(exceed) <= 1 %``           the probability of exceeding the study limit must not exceed 1 %
``P(exceed) <= 0.01``          the same as a fraction (a bare number must lie in (0, 1))
=============================  ==============================================================

``P`` and the words ``limit`` and ``exceed`` may be written in any case; spaces are optional
except inside the temperature (``"44 degC"``). Only ``<=`` is accepted. "Exceed" always means
strictly above the study's limit (``[study] limit``). Where a study sweeps exposures the target
must hold at every exposure (see :mod:`plyrisk.tolerances.study`).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

from plyrisk.study.units import TEMPERATURE, UnitError, parse_value

__all__ = ["TARGET_FORMS", "Target", "parse_target"]

TARGET_FORMS = ("P95 <= limit", "P99 <= 44 degC", "P(exceed) <= 1 %", "P(exceed) <= 0.01")
"""Examples of every valid form, quoted in error messages."""

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
    """

    kind: str
    probability: float
    threshold: float
    text: str

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
        return self.threshold

    @property
    def label(self) -> str:
        """Short name of the metric, e.g. ``"P95"`` or ``"P(exceed)"``."""
        if self.kind == "exceedance":
            return "P(exceed)"
        return f"P{100.0 * self.probability:.10g}"


def _bad(text: str, why: str) -> ValueError:
    forms = ", ".join(repr(f) for f in TARGET_FORMS)
    return ValueError(f"bad target {text!r}: {why}; valid forms: {forms}")


def parse_target(text: str) -> Target:
    """Parse a target string (grammar in the module docstring).

    Parameters
    ----------
    text
        E.g. ``"P95 <= limit"`` or ``"P(exceed) <= 1 %"``.

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
    >>> parse_target("P95 <= limit")
    Target(kind='quantile', probability=0.95, threshold=nan, text='P95 <= limit')
    >>> target = parse_target("P99  <=  45 degC")
    >>> target.label, round(target.threshold, 6), target.text
    ('P99', 318.15, 'P99 <= 45 degC')
    >>> parse_target("P(exceed) <= 1 %").threshold
    0.01
    >>> parse_target("P95 < limit")
    Traceback (most recent call last):
    ...
    ValueError: bad target 'P95 < limit': expected '<=' between the metric and its bound; ...
    """
    if not isinstance(text, str):
        raise _bad(str(text), f"expected a string, got {type(text).__name__}")
    clean = " ".join(text.split())
    if not clean:
        raise _bad(text, "empty")
    m = _EXCEED.match(clean)
    if m:
        return Target("exceedance", math.nan, _probability(clean, m.group(1)), clean)
    m = _QUANTILE.match(clean)
    if m:
        level = float(m.group(1))
        if not 0.0 < level < 100.0:
            raise _bad(text, f"percentile level {m.group(1)} must lie strictly between 0 and 100")
        bound = m.group(2).strip()
        if bound.lower() == "limit":
            threshold = math.nan
        else:
            try:
                threshold = parse_value(bound, TEMPERATURE).si
            except UnitError as err:
                raise _bad(text, f"bound {bound!r} is not 'limit' or a temperature ({err})"
                           ) from None
            if not threshold > 0.0:
                raise _bad(text, f"temperature {bound!r} is not above absolute zero")
        return Target("quantile", level / 100.0, threshold, clean)
    if "<=" not in clean:
        raise _bad(text, "expected '<=' between the metric and its bound")
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
