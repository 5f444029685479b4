"""Percentiles and exceedance probabilities of sampled outputs, with confidence intervals.

Both assume the values are independent draws from the output distribution (use
:meth:`plyrisk.design.sampling.Design.independent_rows`). Non-finite values (non-converged samples)
are
left out and the number of values used is reported as ``n``.

Quantile intervals are distribution-free (order statistics): with K ~ Binomial(n, p) the
number of values below the true p-quantile, the interval [x_(l), x_(u)] (1-based order
statistics) covers it with probability P(l <= K <= u - 1). l is the largest index with
P(K <= l - 1) <= alpha/2 and u the smallest with P(K >= u) <= alpha/2, alpha = 1 - confidence,
so each tail holds at most alpha/2 and coverage is at least the confidence level (the
interval is conservative because K is discrete). When n is too small for a side (e.g.
(1 - p)**n > alpha/2 for the lower side), that bound is NaN rather than a fake interval.
Point estimates use numpy's default (linear interpolation) quantile.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy import stats

__all__ = ["EXCEEDANCE_METHODS", "Exceedance", "QuantileEstimate", "exceedance",
           "exceedance_from_counts", "finite_only", "quantiles"]

EXCEEDANCE_METHODS = ("wilson", "clopper-pearson")
_SCIPY_CI = {"wilson": "wilson", "clopper-pearson": "exact"}


def finite_only(y: np.ndarray) -> tuple[np.ndarray, int]:
    """The finite values of a 1-D sample and how many were left out.

    Parameters
    ----------
    y : array_like
        Sample, shape (n,) [any].

    Returns
    -------
    tuple
        (finite values as a float array [same unit as y], number of non-finite values [-]).
    """
    y = np.asarray(y, dtype=float)
    if y.ndim != 1:
        raise ValueError(f"y must be one-dimensional, got shape {y.shape}")
    ok = np.isfinite(y)
    return y[ok], int(y.size - ok.sum())


def _confidence(confidence: float) -> float:
    confidence = float(confidence)
    if not 0.0 < confidence < 1.0:
        raise ValueError(f"confidence must lie in (0, 1), got {confidence}")
    return confidence


def _nonempty(y: np.ndarray) -> np.ndarray:
    values, dropped = finite_only(y)
    if values.size == 0:
        raise ValueError(f"y has no finite values ({dropped} non-finite)")
    return values


@dataclass(frozen=True, eq=False)
class QuantileEstimate:
    """Quantiles with distribution-free confidence intervals.

    Attributes
    ----------
    probabilities : numpy.ndarray
        Probability levels [-].
    estimate, lower, upper : numpy.ndarray
        Quantile estimates and confidence bounds [unit of y]; NaN bounds where n is too small.
    confidence : float
        Confidence level of the intervals [-].
    n : int
        Number of finite values used [-].
    """

    probabilities: np.ndarray
    estimate: np.ndarray
    lower: np.ndarray
    upper: np.ndarray
    confidence: float
    n: int


def _order_statistic_ranks(n: int, p: float, alpha: float) -> tuple[int, int]:
    """1-based ranks (l, u) of the interval; l = 0 or u = n + 1 where unavailable.

    l = #{k : F(k) <= alpha/2} and u = 1 + min{k : S(k) <= alpha/2} for K ~ Binomial(n, p),
    found from the binomial quantile and checked on a window around it (so the cost does not
    grow with n).
    """
    a = 0.5 * alpha
    guess = int(stats.binom.ppf(a, n, p))
    k = np.arange(max(guess - 3, 0), min(guess + 4, n) + 1)
    below = k[stats.binom.cdf(k, n, p) <= a]
    lower = int(below.max()) + 1 if below.size else 0
    guess = int(stats.binom.isf(a, n, p))
    k = np.arange(max(guess - 3, 0), min(guess + 4, n) + 1)
    upper = int(k[stats.binom.sf(k, n, p) <= a].min()) + 1   # sf(n) = 0 always
    return lower, upper


def quantiles(y: np.ndarray, probabilities: Sequence[float] | np.ndarray = (0.05, 0.5, 0.95), *,
              confidence: float = 0.90) -> QuantileEstimate:
    """Sample quantiles with order-statistic confidence intervals.

    Parameters
    ----------
    y : array_like
        Sample, shape (n,), non-finite values ignored [any].
    probabilities : sequence of float
        Probability levels in (0, 1).
    confidence : float
        Two-sided confidence level in (0, 1).

    Returns
    -------
    QuantileEstimate

    Examples
    --------
    The values 1, 2, ..., 100: the median is 50.5 and, at 90 % confidence, lies between the 42nd
    and the 59th value; non-finite values are left out, and too few values give NaN bounds:

    >>> import numpy as np
    >>> from plyrisk.analysis.statistics import quantiles
    >>> q = quantiles(np.arange(1.0, 101.0), (0.05, 0.5, 0.95))
    >>> q.n, q.estimate.round(2), q.lower, q.upper
    (100, array([ 5.95, 50.5 , 95.05]), array([ 2., 42., 91.]), array([10., 59., 99.]))
    >>> q = quantiles(np.array([1.0, np.nan, 3.0, 2.0]), (0.5,))
    >>> q.n, q.estimate, q.lower, q.upper
    (3, array([2.]), array([nan]), array([nan]))
    """
    confidence = _confidence(confidence)
    p = np.atleast_1d(np.asarray(probabilities, dtype=float))
    if p.ndim != 1 or p.size == 0 or not np.all((p > 0.0) & (p < 1.0)):
        raise ValueError(f"probabilities must lie in (0, 1), got {probabilities!r}")
    values = np.sort(_nonempty(y))
    n = values.size
    lower = np.full(p.size, np.nan)
    upper = np.full(p.size, np.nan)
    for i, pi in enumerate(p):
        lo, hi = _order_statistic_ranks(n, float(pi), 1.0 - confidence)
        if lo >= 1:
            lower[i] = values[lo - 1]
        if hi <= n:
            upper[i] = values[hi - 1]
    estimate = np.quantile(values, p)
    for arr in (p, estimate, lower, upper):
        arr.setflags(write=False)
    return QuantileEstimate(p, estimate, lower, upper, confidence, n)


@dataclass(frozen=True)
class Exceedance:
    """Probability that an output exceeds a limit, with a binomial confidence interval.

    Attributes
    ----------
    limit : float
        The limit [unit of y].
    probability : float
        Fraction of values strictly above the limit [-].
    lower, upper : float
        Confidence bounds of the probability [-].
    confidence : float
        Confidence level [-].
    n : int
        Number of finite values used [-].
    count : int
        Number of values above the limit [-].
    method : str
        ``"wilson"`` (score interval, no continuity correction) or ``"clopper-pearson"``.
    """

    limit: float
    probability: float
    lower: float
    upper: float
    confidence: float
    n: int
    count: int
    method: str


def exceedance(y: np.ndarray, limit: float, *, confidence: float = 0.95,
               method: str = "wilson") -> Exceedance:
    """Exceedance probability P(Y > limit) with a binomial confidence interval.

    Parameters
    ----------
    y : array_like
        Sample, shape (n,), non-finite values ignored [any].
    limit : float
        Limit value [unit of y].
    confidence : float
        Two-sided confidence level in (0, 1) [-].
    method : {"wilson", "clopper-pearson"}
        Interval method (``scipy.stats.binomtest(...).proportion_ci``). [-]

    Returns
    -------
    Exceedance
    """
    limit = float(limit)
    if math.isnan(limit):
        raise ValueError("limit must be a number, got nan")
    values = _nonempty(y)
    return exceedance_from_counts(int(np.count_nonzero(values > limit)), int(values.size),
                                  limit, confidence=confidence, method=method)


def exceedance_from_counts(count: int, n: int, limit: float, *, confidence: float = 0.95,
                           method: str = "wilson") -> Exceedance:
    """Exceedance probability from the count of values above the limit out of ``n``.

    Parameters
    ----------
    count
        Values strictly above the limit [-].
    n
        Finite values [-], at least 1.
    limit
        The limit [unit of the values].
    confidence
        Two-sided confidence level in (0, 1) [-].
    method : {"wilson", "clopper-pearson"}
        Interval method. [-]

    Returns
    -------
    Exceedance
    """
    if method not in EXCEEDANCE_METHODS:
        raise ValueError(f"unknown exceedance interval method {method!r}; valid: "
                         f"{', '.join(EXCEEDANCE_METHODS)}")
    confidence = _confidence(confidence)
    ci = stats.binomtest(count, n).proportion_ci(confidence_level=confidence,
                                                  method=_SCIPY_CI[method])
    return Exceedance(float(limit), count / n, float(ci.low), float(ci.high), confidence, n,
                      count, method)
