"""Percentile and exceedance intervals against binomial theory, scipy.stats and published values."""

import math

import numpy as np
import pytest
from scipy import stats

from plyrisk.analysis.statistics import exceedance, finite_only, quantiles


def test_estimates_match_numpy_and_nan_is_ignored():
    y = np.random.default_rng(1).normal(size=500)
    y_nan = np.concatenate([y, [np.nan, np.inf]])
    q = quantiles(y_nan, (0.05, 0.5, 0.95))
    # Source: numpy.quantile, default linear method (reference library)
    np.testing.assert_array_equal(q.estimate, np.quantile(y, [0.05, 0.5, 0.95]))
    assert q.n == 500 and q.confidence == 0.90
    assert np.all(q.lower <= q.estimate) and np.all(q.estimate <= q.upper)
    values, dropped = finite_only(y_nan)
    assert values.size == 500 and dropped == 2


def test_median_interval_ranks_n10():
    # Source: binomial (sign-test) interval for the median, n = 10, 95 %: (x_(2), x_(9)),
    # coverage 1 - 2 * 11/1024 = 0.9785 (David & Nagaraja 2003, Order Statistics, sec. 7.1)
    # (from memory)
    y = np.arange(1.0, 11.0)
    q = quantiles(y, (0.5,), confidence=0.95)
    assert (q.lower[0], q.upper[0]) == (2.0, 9.0)


def test_wilks_59_run_rule():
    # Source: Wilks (1941), Ann. Math. Statist. 12, 91-96: the largest of 59 values is a
    # one-sided 95 %/95 % upper tolerance bound (0.95**59 = 0.0485 < 0.05); 58 values are not
    # enough. A two-sided 90 % interval puts 5 % in each tail.
    y = np.random.default_rng(2).normal(size=59)
    q = quantiles(y, (0.95,), confidence=0.90)
    assert q.upper[0] == y.max()
    q58 = quantiles(y[:58], (0.95,), confidence=0.90)
    assert math.isnan(q58.upper[0]) and not math.isnan(q58.lower[0])


def test_quantile_interval_coverage():
    """Repeated seeded studies: the 90 % interval of the 95th percentile covers the truth."""
    n, studies, p, conf = 200, 400, 0.95, 0.90
    dist = stats.lognorm(s=0.5, scale=40.0)
    truth = dist.ppf(p)  # Source: scipy.stats.lognorm (reference library)
    samples = dist.rvs(size=(studies, n), random_state=np.random.default_rng(2024))
    hits = 0
    for row in samples:
        q = quantiles(row, (p,), confidence=conf)
        hits += bool(q.lower[0] <= truth <= q.upper[0])
    rate = hits / studies
    # Exact coverage of the order-statistic interval from its ranks. Source: binomial
    # distribution of the count below the quantile (scipy.stats.binom).
    k = np.arange(n + 1)
    lo = int(np.count_nonzero(stats.binom.cdf(k, n, p) <= (1 - conf) / 2))
    hi = int(np.argmax(stats.binom.sf(k, n, p) <= (1 - conf) / 2)) + 1
    exact = stats.binom.cdf(hi - 1, n, p) - stats.binom.cdf(lo - 1, n, p)
    se = math.sqrt(conf * (1 - conf) / studies)
    assert conf <= exact < conf + 0.05       # conservative but not absurdly so
    assert rate >= conf - 3 * se
    assert abs(rate - exact) <= 3 * math.sqrt(exact * (1 - exact) / studies)


def test_too_few_values_gives_nan_bounds():
    # Source: binomial tails, (1 - 0.05)**3 = 0.857 > 0.05, so no order statistic of 3 values
    # is a 95 % lower bound of the 5th percentile; the upper side exists (P(K >= 2) = 0.007).
    q = quantiles([1.0, 2.0, 3.0], (0.05, 0.95), confidence=0.9)
    assert math.isnan(q.lower[0]) and q.upper[0] == 2.0
    assert q.lower[1] == 2.0 and math.isnan(q.upper[1])
    assert np.all(np.isfinite(q.estimate)) and q.n == 3


@pytest.mark.parametrize(("kwargs", "match"), [
    ({"probabilities": (0.0, 0.5)}, r"probabilities must lie in \(0, 1\)"),
    ({"probabilities": (0.5, 1.2)}, r"probabilities must lie in \(0, 1\)"),
    ({"confidence": 1.0}, r"confidence must lie in \(0, 1\), got 1.0"),
    ({"confidence": 0.0}, r"confidence must lie in \(0, 1\), got 0.0"),
])
def test_quantile_validators(kwargs, match):
    with pytest.raises(ValueError, match=match):
        quantiles(np.arange(10.0), **kwargs)


def test_empty_and_shape_validators():
    with pytest.raises(ValueError, match=r"y has no finite values \(2 non-finite\)"):
        quantiles([np.nan, np.nan])
    with pytest.raises(ValueError, match=r"y must be one-dimensional, got shape \(2, 2\)"):
        exceedance(np.zeros((2, 2)), 1.0)


@pytest.mark.parametrize(("count", "n"), [(0, 20), (1, 29), (15, 148), (81, 263), (40, 40)])
@pytest.mark.parametrize(("method", "scipy_method"),
                         [("wilson", "wilson"), ("clopper-pearson", "exact")])
def test_exceedance_matches_scipy_binomtest(count, n, method, scipy_method):
    y = np.r_[np.full(count, 2.0), np.full(n - count, 0.5)]
    e = exceedance(y, 1.0, confidence=0.95, method=method)
    # Source: scipy.stats.binomtest(...).proportion_ci (reference library)
    ref = stats.binomtest(count, n).proportion_ci(confidence_level=0.95, method=scipy_method)
    assert (e.count, e.n, e.probability) == (count, n, count / n)
    assert e.lower == pytest.approx(ref.low, abs=1e-14)
    assert e.upper == pytest.approx(ref.high, abs=1e-14)
    assert e.method == method and e.limit == 1.0 and e.confidence == 0.95


@pytest.mark.parametrize(("count", "n", "wilson", "exact"), [
    # Source: Newcombe (1998), Statistics in Medicine 17, 857-872, Table II, 95 % intervals,
    # 4 decimals: method 3 (score, no continuity correction) and method 5 (exact)
    # (from memory)
    (81, 263, (0.2553, 0.3662), (0.2527, 0.3676)),
    (15, 148, (0.0624, 0.1605), (0.0578, 0.1617)),
    (0, 20, (0.0, 0.1611), (0.0, 0.1684)),
    (1, 29, (0.0061, 0.1718), (0.0009, 0.1776)),
])
def test_exceedance_published_values(count, n, wilson, exact):
    y = np.r_[np.ones(count), np.zeros(n - count)]
    w = exceedance(y, 0.5, method="wilson")
    c = exceedance(y, 0.5, method="clopper-pearson")
    assert (w.lower, w.upper) == (pytest.approx(wilson[0], abs=5e-5),
                                  pytest.approx(wilson[1], abs=5e-5))
    assert (c.lower, c.upper) == (pytest.approx(exact[0], abs=5e-5),
                                  pytest.approx(exact[1], abs=5e-5))


def test_exceedance_is_strict_and_ignores_nan():
    e = exceedance([1.0, 2.0, 3.0, np.nan], 2.0)
    assert (e.count, e.n) == (1, 3)


@pytest.mark.parametrize(("kwargs", "match"), [
    ({"method": "wald"}, "unknown exceedance interval method 'wald'; valid: wilson, "
                         "clopper-pearson"),
    ({"confidence": 95}, r"confidence must lie in \(0, 1\), got 95"),
    ({"limit": float("nan")}, "limit must be a number, got nan"),
])
def test_exceedance_validators(kwargs, match):
    with pytest.raises(ValueError, match=match):
        exceedance(np.arange(5.0), **{"limit": 1.0, **kwargs})
