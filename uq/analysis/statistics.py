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

Replicated designs (R independently scrambled quasi-Monte Carlo designs: replicated randomized
QMC, Owen 1995, Springer LNS 106, 299-317; L'Ecuyer & Lemieux 2002, Modeling
Uncertainty, 419-474) are not independent draws row by row, but the replicates are independent
of each other. :func:`replicate_quantiles` and :func:`replicate_exceedance` pool every
replicate's values for the estimate and take the interval from the spread of the replicates
(Student t, R - 1 degrees of freedom):

* exceedance: the pooled fraction above the limit ± ``t s / sqrt(R)``, s the standard deviation
  of the R per-replicate fractions (clipped to [0, 1]);
* quantiles: the pooled sample quantile q; the interval is Woodruff's (1952, J. Am. Stat.
  Assoc. 47, 635-646): the per-replicate fractions F_r of values at or below q give a t interval
  [p - h, p + h] for the distribution function at q, mapped back through the pooled sample
  quantile function, [Q(p - h), Q(p + h)].

Where the replicate spread says nothing — no spread at all (e.g. no value above the limit in
any replicate), or fewer than :data:`MIN_TAIL_COUNT` pooled values on either side of the
estimate, too few for a normal approximation — the binomial interval of the pooled values is
given instead (Wilson; order statistics for quantiles) and the result records it.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from scipy import stats

__all__ = ["EXCEEDANCE_METHODS", "INTERVAL_ORDER_STATISTICS", "INTERVAL_REPLICATES",
           "INTERVAL_WOODRUFF", "MIN_TAIL_COUNT", "Exceedance", "QuantileEstimate", "exceedance",
           "exceedance_from_counts", "finite_only", "quantiles", "replicate_exceedance",
           "replicate_exceedance_from_counts", "replicate_quantiles", "woodruff_levels"]

EXCEEDANCE_METHODS = ("wilson", "clopper-pearson")
_SCIPY_CI = {"wilson": "wilson", "clopper-pearson": "exact"}
INTERVAL_ORDER_STATISTICS = "order-statistics"
"""Quantile interval: distribution-free order statistics (independent draws)."""
INTERVAL_WOODRUFF = "replicates-woodruff"
"""Quantile interval: Woodruff's, from the spread over independent replicates."""
INTERVAL_REPLICATES = "replicates"
"""Exceedance interval: Student t on the spread over independent replicates."""
MIN_TAIL_COUNT = 10
"""Fewest pooled values on each side of an estimate for a replicate interval [-]
(common practice: a normal approximation of a proportion p from n values needs n p and
n (1 - p) of at least about 10)."""


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
    interval : tuple of str
        Interval method per probability: ``"order-statistics"`` or ``"replicates-woodruff"``;
        empty means order statistics throughout.
    """

    probabilities: np.ndarray
    estimate: np.ndarray
    lower: np.ndarray
    upper: np.ndarray
    confidence: float
    n: int
    interval: tuple[str, ...] = ()

    @property
    def interval_methods(self) -> tuple[str, ...]:
        """The interval method of every probability [-]."""
        return self.interval or (INTERVAL_ORDER_STATISTICS,) * int(self.probabilities.size)


@lru_cache(maxsize=1024)
def _order_statistic_ranks(n: int, p: float, alpha: float) -> tuple[int, int]:
    """1-based ranks (l, u) of the interval; l = 0 or u = n + 1 where unavailable.

    l = #{k : F(k) <= alpha/2} and u = 1 + min{k : S(k) <= alpha/2} for K ~ Binomial(n, p),
    found from the binomial quantile and checked on a window around it (so the cost does not
    grow with n). Remembered per (n, p, alpha): a study asks for the same few ranks many times
    (every exposure, output and tolerance case with the same sample count).
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
        ``"wilson"`` (score interval, no continuity correction), ``"clopper-pearson"`` or
        ``"replicates"`` (Student t over independent replicates).
    note : str
        Why a replicated design's interval is binomial after all (empty otherwise).
    """

    limit: float
    probability: float
    lower: float
    upper: float
    confidence: float
    n: int
    count: int
    method: str
    note: str = ""


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


def _labels(y: np.ndarray, replicate: np.ndarray) -> tuple[np.ndarray, np.ndarray, int]:
    """Finite values, their replicate labels and the number of replicates R."""
    y = np.asarray(y, dtype=float)
    lab = np.asarray(replicate)
    if y.ndim != 1 or lab.shape != y.shape:
        raise ValueError(f"y and replicate must be one-dimensional and of one shape, got "
                         f"{y.shape} and {lab.shape}")
    if lab.size and (not np.issubdtype(lab.dtype, np.integer) or lab.min() < 0):
        raise ValueError("replicate must hold non-negative integer labels")
    reps = int(lab.max()) + 1 if lab.size else 0
    if reps < 2:
        raise ValueError(f"a replicate interval needs at least 2 replicates, got {reps}")
    ok = np.isfinite(y)
    if not ok.any():
        raise ValueError(f"y has no finite values ({y.size} non-finite)")
    return y[ok], lab[ok], reps


def _t_half(fractions: np.ndarray, confidence: float) -> float:
    r = fractions.size
    t = float(stats.t.ppf(0.5 + confidence / 2.0, r - 1))
    return t * float(np.std(fractions, ddof=1)) / math.sqrt(r)


def replicate_exceedance(y: np.ndarray, replicate: np.ndarray, limit: float, *,
                         confidence: float = 0.95) -> Exceedance:
    """Exceedance probability P(Y > limit) from independent replicates, with a t interval.

    Parameters
    ----------
    y : array_like
        Sample, shape (n,), non-finite values ignored [any].
    replicate : array_like of int
        Replicate label 0 ... R - 1 of every value, shape (n,) [-].
    limit : float
        Limit value [unit of y].
    confidence : float
        Two-sided confidence level in (0, 1) [-].

    Returns
    -------
    Exceedance
        The pooled fraction above the limit; ``method = "replicates"`` with the interval
        ``p ± t_(R-1) s / sqrt(R)`` clipped to [0, 1] (s: standard deviation of the R
        per-replicate fractions), or the Wilson interval of the pooled values with ``note``
        saying why where the replicate spread is degenerate.

    Notes
    -----
    Each replicate's fraction is an unbiased estimate of P(Y > limit); the replicates are
    independent, so their spread estimates the error of the pooled fraction (L'Ecuyer &
    Lemieux 2002, Modeling Uncertainty, 419-474) (R.2).

    Examples
    --------
    >>> import numpy as np
    >>> y = np.tile(np.linspace(0.0, 1.0, 100), 8) + np.repeat(np.arange(8) * 1e-3, 100)
    >>> e = replicate_exceedance(y, np.repeat(np.arange(8), 100), 0.8)
    >>> e.method, round(e.probability, 3), e.n, e.count
    ('replicates', 0.206, 800, 165)
    """
    limit = float(limit)
    if math.isnan(limit):
        raise ValueError("limit must be a number, got nan")
    values, lab, reps = _labels(y, replicate)
    return replicate_exceedance_from_counts(
        np.bincount(lab, weights=values > limit, minlength=reps).astype(np.int64),
        np.bincount(lab, minlength=reps), limit, confidence=confidence)


def replicate_exceedance_from_counts(above: np.ndarray, sizes: np.ndarray, limit: float, *,
                                     confidence: float = 0.95) -> Exceedance:
    """:func:`replicate_exceedance` from per-replicate counts (e.g. accumulated in passes).

    Parameters
    ----------
    above
        Values strictly above the limit in each replicate, shape (R,) [-].
    sizes
        Finite values in each replicate, shape (R,) [-].
    limit
        The limit [unit of the values].
    confidence
        Two-sided confidence level in (0, 1) [-].

    Returns
    -------
    Exceedance
    """
    confidence = _confidence(confidence)
    above, sizes = np.asarray(above, dtype=np.int64), np.asarray(sizes, dtype=np.int64)
    n, count = int(sizes.sum()), int(above.sum())
    if n == 0:
        raise ValueError("no finite values")
    note = ""
    if np.any(sizes == 0):
        note = "a replicate has no finite value"
    elif min(count, n - count) < MIN_TAIL_COUNT:
        note = (f"{min(count, n - count)} pooled values on the rarer side of the limit (fewer "
                f"than {MIN_TAIL_COUNT})")
    else:
        half = _t_half(above / sizes, confidence)                           # (R.2)
        if half > 0.0:
            p = count / n
            return Exceedance(limit, p, max(p - half, 0.0), min(p + half, 1.0), confidence,
                              n, count, INTERVAL_REPLICATES)
        note = "no spread between the replicates"
    e = exceedance_from_counts(count, n, limit, confidence=confidence)
    return Exceedance(e.limit, e.probability, e.lower, e.upper, e.confidence, e.n, e.count,
                      e.method, note=f"binomial interval: {note}")


def replicate_quantiles(y: np.ndarray, replicate: np.ndarray,
                        probabilities: Sequence[float] | np.ndarray = (0.05, 0.5, 0.95), *,
                        confidence: float = 0.90) -> QuantileEstimate:
    """Pooled sample quantiles with Woodruff intervals from independent replicates.

    Parameters
    ----------
    y : array_like
        Sample, shape (n,), non-finite values ignored [any].
    replicate : array_like of int
        Replicate label 0 ... R - 1 of every value, shape (n,) [-].
    probabilities : sequence of float
        Probability levels in (0, 1) [-].
    confidence : float
        Two-sided confidence level in (0, 1) [-].

    Returns
    -------
    QuantileEstimate
        Estimates as :func:`quantiles` gives them on the pooled values; ``interval`` says per
        probability whether the bounds are Woodruff's (``"replicates-woodruff"``) or, where
        the replicates say nothing (no spread, a replicate without values, or fewer than
        :data:`MIN_TAIL_COUNT` pooled values on a side), the order statistics of
        :func:`quantiles` (``"order-statistics"``).

    Notes
    -----
    With q the pooled p-quantile and F_r the fraction of replicate r's values at or below q,
    h = t_(R-1) s_F / sqrt(R) is the half-width of a t interval for F(q), and the interval of
    the quantile is [Q(p - h), Q(p + h)] with Q the pooled sample quantile function
    (Woodruff 1952, J. Am. Stat. Assoc. 47, 635-646; Sitter & Wu 2001, Biometrika 88,
    1198-1202, for its coverage) (R.3). A bound whose level leaves (0, 1) is NaN.

    Examples
    --------
    >>> import numpy as np
    >>> rng = np.random.default_rng(1)
    >>> q = replicate_quantiles(rng.normal(size=4000), np.repeat(np.arange(8), 500), [0.5])
    >>> q.interval, bool(q.lower[0] < q.estimate[0] < q.upper[0])
    (('replicates-woodruff',), True)
    """
    confidence = _confidence(confidence)
    p = np.atleast_1d(np.asarray(probabilities, dtype=float))
    if p.ndim != 1 or p.size == 0 or not np.all((p > 0.0) & (p < 1.0)):
        raise ValueError(f"probabilities must lie in (0, 1), got {probabilities!r}")
    values, lab, reps = _labels(y, replicate)
    plain = quantiles(values, p, confidence=confidence)
    order = np.argsort(values, kind="stable")
    pooled, lab_sorted = values[order], lab[order]
    sizes = np.bincount(lab, minlength=reps)
    below = np.array([np.bincount(lab_sorted[:int(np.searchsorted(pooled, q, side="right"))],
                                  minlength=reps) for q in plain.estimate])
    levels, woodruff = woodruff_levels(p, below, sizes, confidence)
    lower, upper = plain.lower.copy(), plain.upper.copy()
    for i in np.flatnonzero(woodruff):
        lo, hi = levels[i]
        lower[i] = np.quantile(pooled, lo) if lo > 0.0 else np.nan
        upper[i] = np.quantile(pooled, hi) if hi < 1.0 else np.nan
    methods = tuple(INTERVAL_WOODRUFF if w else INTERVAL_ORDER_STATISTICS for w in woodruff)
    for arr in (lower, upper):
        arr.setflags(write=False)
    return QuantileEstimate(plain.probabilities, plain.estimate, lower, upper, confidence,
                            plain.n, methods)


def woodruff_levels(probabilities: np.ndarray, below: np.ndarray, sizes: np.ndarray,
                    confidence: float) -> tuple[np.ndarray, np.ndarray]:
    """The levels [p - h, p + h] of Woodruff's quantile interval, and where it applies.

    Parameters
    ----------
    probabilities
        Probability levels p, shape (k,) [-].
    below
        Values at or below the pooled p-quantile in each replicate, shape (k, R) [-].
    sizes
        Finite values in each replicate, shape (R,) [-].
    confidence
        Two-sided confidence level in (0, 1) [-].

    Returns
    -------
    levels, applies
        Shape (k, 2) levels (eq. R.3) and a boolean per probability: False where the pooled
        values on a side are fewer than :data:`MIN_TAIL_COUNT`, a replicate is empty or the
        replicates do not spread (the order-statistic interval is kept there).
    """
    p = np.asarray(probabilities, dtype=float)
    below, sizes = np.asarray(below), np.asarray(sizes)
    n, pooled_below = int(sizes.sum()), below.sum(axis=1)
    levels = np.full((p.size, 2), np.nan)
    applies = np.zeros(p.size, dtype=bool)
    if np.any(sizes == 0):
        return levels, applies
    for i, pi in enumerate(p):
        if min(int(pooled_below[i]), n - int(pooled_below[i])) < MIN_TAIL_COUNT:
            continue
        half = _t_half(below[i] / sizes, confidence)                        # (R.3)
        if half > 0.0:
            levels[i] = pi - half, pi + half
            applies[i] = True
    return levels, applies
