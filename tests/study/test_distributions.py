"""Input distributions against scipy.stats and closed-form moments."""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats

from plyrisk.study.distributions import KINDS, Bounds, Distribution, make_distribution

POSITIVE = Bounds(0.0)
UNIT = Bounds(0.0, 1.0, upper_closed=True)
U = np.array([1e-12, 1e-6, 0.01, 0.1, 0.3, 0.5, 0.7, 0.9, 0.99, 1 - 1e-6, 1 - 1e-12])


# ---------------------------------------------------------------- parameters -> scipy.stats
def test_normal_matches_scipy():
    d = make_distribution("normal", {"mean": 2.0, "sd": 0.3})
    ref = stats.norm(loc=2.0, scale=0.3)  # Source: scipy.stats.norm (reference library)
    np.testing.assert_allclose(d.ppf(U), ref.ppf(U), rtol=1e-14)
    np.testing.assert_allclose(d.cdf([1.0, 2.0, 2.5]), ref.cdf([1.0, 2.0, 2.5]), rtol=1e-14)
    assert d.mean == pytest.approx(2.0, rel=1e-14)
    assert d.std == pytest.approx(0.3, rel=1e-14)
    assert d.median == pytest.approx(2.0, rel=1e-14)
    assert d.truncated_mass == 0.0
    assert (d.nominal, d.spread) == (2.0, 0.3)


def test_normal_truncated_at_physical_bound_matches_scipy_truncnorm():
    mean, sd = 1.0e-3, 0.5e-3
    d = make_distribution("normal", {"mean": mean, "sd": sd}, bounds=POSITIVE)
    # Source: scipy.stats.truncnorm / scipy.stats.norm (reference library)
    ref = stats.truncnorm((0.0 - mean) / sd, np.inf, loc=mean, scale=sd)
    assert d.truncated_mass == pytest.approx(stats.norm.cdf(0.0, mean, sd), rel=1e-12)
    assert d.mean == pytest.approx(ref.mean(), rel=1e-12)
    assert d.std == pytest.approx(ref.std(), rel=1e-12)
    assert d.median == pytest.approx(ref.median(), rel=1e-12)
    np.testing.assert_allclose(d.ppf(U), ref.ppf(U), rtol=1e-10)
    np.testing.assert_allclose(d.cdf([0.2e-3, 1e-3]), ref.cdf([0.2e-3, 1e-3]), rtol=1e-12)


def test_truncnormal_user_range_and_bounds():
    d = make_distribution("truncnormal", {"mean": 0.5, "sd": 1.0, "low": -1.0, "high": 2.0},
                          bounds=POSITIVE)
    # Source: scipy.stats.truncnorm / scipy.stats.norm (reference library)
    ref = stats.truncnorm(-0.5, 1.5, loc=0.5, scale=1.0)
    user_mass = stats.norm.cdf(2.0, 0.5) - stats.norm.cdf(-1.0, 0.5)
    cut = stats.norm.cdf(0.0, 0.5) - stats.norm.cdf(-1.0, 0.5)
    assert d.truncated_mass == pytest.approx(cut / user_mass, rel=1e-12)
    assert d.mean == pytest.approx(ref.mean(), rel=1e-12)
    assert d.std == pytest.approx(ref.std(), rel=1e-12)
    np.testing.assert_allclose(d.ppf(U), ref.ppf(U), rtol=1e-10)
    # User truncation alone is intended, not reported as cut by the bounds.
    plain = make_distribution("truncnormal", {"mean": 0.5, "sd": 1.0, "low": 0.1})
    assert plain.truncated_mass == 0.0
    assert plain.nominal == 0.5 and plain.spread == 1.0


def test_tolerance_symmetric_is_normal_three_sigma():
    d = make_distribution("tolerance", {"nominal": 2e-3, "tolerance": 0.3e-3}, bounds=POSITIVE)
    # Source: module convention (tolerance = 3 sd, common practice); scipy.stats.norm
    ref = stats.norm(2e-3, 0.1e-3)
    assert d.mean == pytest.approx(ref.mean(), rel=1e-12)
    assert d.std == pytest.approx(ref.std(), rel=1e-12)
    assert d.truncated_mass == pytest.approx(ref.cdf(0.0), rel=1e-10)
    np.testing.assert_allclose(d.ppf(U), ref.ppf(U), rtol=1e-12)
    assert (d.nominal, d.spread) == (2e-3, 0.3e-3)


def test_tolerance_asymmetric_and_coverage():
    d = make_distribution("tolerance", {"nominal": 1.0, "upper": 0.3, "lower": 0.1})
    # Source: module convention: band [0.9, 1.3] = mean +- 3 sd
    assert d.mean == pytest.approx(1.1, rel=1e-14)
    assert d.std == pytest.approx(0.4 / 6, rel=1e-14)
    assert d.nominal == 1.0 and d.spread == pytest.approx(0.2)
    two = make_distribution("tolerance", {"nominal": 1.0, "tolerance": 0.2, "coverage": 2})
    # Source: module convention (sd = tolerance / coverage)
    assert two.std == pytest.approx(0.1, rel=1e-14)


def test_lognormal_median_gsd_matches_scipy():
    d = make_distribution("lognormal", {"median": 0.04, "gsd": 1.5}, bounds=POSITIVE)
    ref = stats.lognorm(s=math.log(1.5), scale=0.04)  # Source: scipy.stats.lognorm
    np.testing.assert_allclose(d.ppf(U), ref.ppf(U), rtol=1e-12)
    np.testing.assert_allclose(d.cdf([0.01, 0.04, 0.1]), ref.cdf([0.01, 0.04, 0.1]), rtol=1e-12)
    assert d.mean == pytest.approx(ref.mean(), rel=1e-12)
    assert d.std == pytest.approx(ref.std(), rel=1e-12)
    assert d.median == pytest.approx(0.04, rel=1e-12)
    assert d.truncated_mass == 0.0
    assert d.nominal == 0.04 and d.spread == pytest.approx(math.log(1.5))


def test_lognormal_mean_cv_conversion():
    d = make_distribution("lognormal", {"mean": 0.05, "cv": 0.4})
    # Source: lognormal moments, E = exp(mu + s^2/2), cv^2 = exp(s^2) - 1 (common practice)
    assert d.mean == pytest.approx(0.05, rel=1e-12)
    assert d.std == pytest.approx(0.4 * 0.05, rel=1e-12)
    assert d.spread == pytest.approx(math.sqrt(math.log(1 + 0.4**2)), rel=1e-14)
    assert d.nominal == pytest.approx(0.05 / math.sqrt(1 + 0.4**2), rel=1e-14)


def test_lognormal_truncated_moments_against_scipy_expect():
    d = make_distribution("lognormal", {"median": 1.0, "gsd": 2.0}, bounds=Bounds(0.5, 3.0))
    ref = stats.lognorm(s=math.log(2.0), scale=1.0)  # Source: scipy.stats.lognorm.expect
    m1 = ref.expect(lambda x: x, lb=0.5, ub=3.0, conditional=True)
    m2 = ref.expect(lambda x: x * x, lb=0.5, ub=3.0, conditional=True)
    assert d.mean == pytest.approx(m1, rel=1e-9)
    assert d.std == pytest.approx(math.sqrt(m2 - m1 * m1), rel=1e-7)
    assert d.truncated_mass == pytest.approx(ref.cdf(0.5) + ref.sf(3.0), rel=1e-12)
    inside = ref.cdf(3.0) - ref.cdf(0.5)
    np.testing.assert_allclose(d.cdf([0.7, 2.0]), (ref.cdf([0.7, 2.0]) - ref.cdf(0.5)) / inside,
                               rtol=1e-10)


def test_uniform_and_triangular_match_scipy():
    d = make_distribution("uniform", {"low": 0.2, "high": 0.6}, bounds=UNIT)
    ref = stats.uniform(0.2, 0.4)  # Source: scipy.stats.uniform
    np.testing.assert_allclose(d.ppf(U), ref.ppf(U), rtol=1e-14)
    assert (d.mean, d.std) == (pytest.approx(ref.mean()), pytest.approx(ref.std()))
    assert d.nominal == pytest.approx(0.4) and d.spread == pytest.approx(0.2)
    t = make_distribution("triangular", {"low": 1.0, "mode": 1.5, "high": 3.0})
    tref = stats.triang(c=0.25, loc=1.0, scale=2.0)  # Source: scipy.stats.triang
    np.testing.assert_allclose(t.ppf(U), tref.ppf(U), rtol=1e-14)
    assert t.mean == pytest.approx(tref.mean(), rel=1e-14)
    assert t.std == pytest.approx(tref.std(), rel=1e-14)
    assert t.nominal == 1.5 and t.spread == 1.0
    assert t.truncated_mass == 0.0


def test_beta_mean_sd_and_shape_parameters():
    d = make_distribution("beta", {"mean": 0.85, "sd": 0.05}, bounds=UNIT)
    # Source: beta moments, a = m nu, b = (1 - m) nu, nu = m(1-m)/s^2 - 1 (common practice)
    nu = 0.85 * 0.15 / 0.05**2 - 1
    ref = stats.beta(0.85 * nu, 0.15 * nu)
    assert d.mean == pytest.approx(0.85, rel=1e-12)
    assert d.std == pytest.approx(0.05, rel=1e-12)
    np.testing.assert_allclose(d.ppf(U), ref.ppf(U), rtol=1e-10)
    scaled = make_distribution("beta", {"a": 2.0, "b": 5.0, "low": 10.0, "high": 20.0})
    sref = stats.beta(2.0, 5.0, loc=10.0, scale=10.0)  # Source: scipy.stats.beta
    assert scaled.mean == pytest.approx(sref.mean(), rel=1e-12)
    assert scaled.std == pytest.approx(sref.std(), rel=1e-12)
    assert scaled.nominal == pytest.approx(sref.mean()) and scaled.spread == pytest.approx(
        sref.std())


def test_fixed():
    d = make_distribution("fixed", {"value": 1.0}, bounds=UNIT)  # emissivity 1 is allowed
    np.testing.assert_array_equal(d.ppf(U), np.ones_like(U))
    assert (d.mean, d.std, d.median, d.spread, d.truncated_mass) == (1.0, 0.0, 1.0, 0.0, 0.0)
    np.testing.assert_array_equal(d.cdf([0.5, 1.0]), [0.0, 1.0])


def test_interval_is_central():
    d = make_distribution("normal", {"mean": 10.0, "sd": 2.0})
    z = stats.norm.ppf(0.95)  # Source: scipy.stats.norm
    assert d.interval() == (pytest.approx(10 - 2 * z), pytest.approx(10 + 2 * z))
    assert d.interval(0.5) == pytest.approx(stats.norm(10, 2).interval(0.5))


# ---------------------------------------------------------------- tails and open bounds
def test_ppf_accurate_in_far_upper_truncation_tail():
    d = make_distribution("truncnormal", {"mean": 0.0, "sd": 1.0, "low": 6.0})
    u = np.array([1e-10, 0.5, 1 - 1e-10])
    # Source: scipy.stats.norm.isf/sf (survival-function form of the truncated quantile)
    expected = stats.norm.isf(stats.norm.sf(6.0) * (1.0 - u))
    np.testing.assert_allclose(d.ppf(u), expected, rtol=1e-8)


def test_ppf_never_returns_an_open_bound():
    d = make_distribution("normal", {"mean": 1e-3, "sd": 0.5e-3}, bounds=POSITIVE)
    x = d.ppf(np.array([1e-300, 1e-200, 1e-20]))
    assert np.all(x > 0.0)
    tail = make_distribution("truncnormal", {"mean": 0.0, "sd": 1.0, "low": 5.0},
                             bounds=Bounds(-1.0, 5.0 + 1e-9))
    assert np.all(tail.ppf(np.array([1e-12, 0.5, 1 - 1e-12])) < 5.0 + 1e-9)


DISTS = [
    make_distribution("normal", {"mean": 1e-3, "sd": 0.6e-3}, bounds=POSITIVE),
    make_distribution("truncnormal", {"mean": 0.9, "sd": 0.1, "low": 0.6}, bounds=UNIT),
    make_distribution("tolerance", {"nominal": 0.95, "upper": 0.05, "lower": 0.1}, bounds=UNIT),
    make_distribution("lognormal", {"mean": 0.03, "cv": 1.5}, bounds=Bounds(0.0, 0.1)),
    make_distribution("uniform", {"low": 0.0, "high": 2e-3}, bounds=POSITIVE),
    make_distribution("triangular", {"low": 0.0, "mode": 0.0, "high": 1.0}, bounds=UNIT),
    make_distribution("beta", {"a": 0.5, "b": 0.5}, bounds=UNIT),
    make_distribution("fixed", {"value": 0.3}, bounds=UNIT),
]


@settings(max_examples=60, deadline=None)
@given(st.lists(st.floats(min_value=5e-324, max_value=1.0, exclude_max=True), min_size=1,
                max_size=40))
def test_ppf_monotone_and_inside_bounds(values):
    u = np.sort(np.array(values))
    for d in DISTS:
        x = d.ppf(u)
        assert np.all(np.diff(x) >= 0.0), d.kind
        assert all(d.bounds.contains(float(v)) for v in x), d.kind


@settings(max_examples=60, deadline=None)
@given(st.floats(min_value=1e-6, max_value=1 - 1e-6))
def test_cdf_inverts_ppf(u):
    for d in DISTS[:-1]:  # fixed has a step cdf
        assert float(d.cdf(d.ppf(u))) == pytest.approx(u, rel=1e-7, abs=1e-12), d.kind


# ---------------------------------------------------------------- with_spread
def test_with_spread_per_kind():
    n = make_distribution("normal", {"mean": 1.0, "sd": 0.2}, bounds=POSITIVE).with_spread(0.5)
    assert n.params == {"mean": 1.0, "sd": 0.1}
    tol = make_distribution("tolerance", {"nominal": 1.0, "upper": 0.3, "lower": 0.1})
    half = tol.with_spread(0.5)
    assert half.params == {"nominal": 1.0, "upper": 0.15, "lower": 0.05}
    assert half.nominal == 1.0 and half.spread == pytest.approx(0.1)
    tri = make_distribution("triangular", {"low": 1.0, "mode": 1.5, "high": 3.0}).with_spread(2)
    assert tri.params == {"low": 0.5, "mode": 1.5, "high": 4.5}
    logn = make_distribution("lognormal", {"mean": 0.05, "cv": 0.4})
    ln2 = logn.with_spread(2.0)
    assert ln2.nominal == pytest.approx(logn.nominal) and ln2.spread == pytest.approx(
        2 * logn.spread)
    beta = make_distribution("beta", {"a": 8.0, "b": 2.0}, bounds=UNIT).with_spread(0.5)
    assert beta.mean == pytest.approx(0.8) and beta.std == pytest.approx(
        0.5 * math.sqrt(16 / (100 * 11)))  # Source: beta variance ab/((a+b)^2 (a+b+1))
    uni = make_distribution("uniform", {"low": 0.2, "high": 0.6}).with_spread(0.5)
    assert uni.params == {"low": pytest.approx(0.3), "high": pytest.approx(0.5)}


def test_with_spread_zero_gives_fixed_at_nominal():
    tol = make_distribution("tolerance", {"nominal": 1.0, "upper": 0.3, "lower": 0.1})
    fixed = tol.with_spread(0.0)
    assert fixed.kind == "fixed" and fixed.params == {"value": 1.0}
    assert tol.with_spread(1.0) is tol


def test_with_spread_errors():
    d = make_distribution("uniform", {"low": 0.2, "high": 0.6}, bounds=UNIT)
    with pytest.raises(ValueError, match="crosses the physical bounds"):
        d.with_spread(3.0)
    with pytest.raises(ValueError, match="spread factor must be finite and >= 0, got -1"):
        d.with_spread(-1.0)
    beta = make_distribution("beta", {"mean": 0.9, "sd": 0.1}, bounds=UNIT)
    with pytest.raises(ValueError, match="is impossible"):
        beta.with_spread(4.0)


# ---------------------------------------------------------------- validators
@pytest.mark.parametrize(("kind", "params", "bounds", "match"), [
    ("gauss", {"mean": 1, "sd": 1}, Bounds(), "unknown distribution 'gauss'; valid: normal, "),
    ("normal", {"mean": 1}, Bounds(), r"normal takes \{mean, sd\}; got \{mean\}"),
    ("normal", {"mean": 1, "sd": 1, "cv": 2}, Bounds(), r"got \{cv, mean, sd\}"),
    ("lognormal", {"mean": 1, "gsd": 2}, Bounds(),
     r"lognormal takes \{median, gsd\} or \{mean, cv\}; got \{gsd, mean\}"),
    ("normal", {"mean": 1, "sd": -0.1}, Bounds(), "sd must be positive, got -0.1"),
    ("normal", {"mean": 1, "sd": "x"}, Bounds(), "parameter 'sd' must be a number, got 'x'"),
    ("normal", {"mean": float("nan"), "sd": 1}, Bounds(), "'mean' must be finite, got nan"),
    ("normal", {"mean": -1e-3, "sd": 1e-4}, POSITIVE,
     r"mean=-0.001 lies outside the physical bounds \(0, inf\)"),
    ("truncnormal", {"mean": 1, "sd": 1, "low": 2, "high": 1}, Bounds(),
     "low must be below high, got low=2 high=1"),
    ("truncnormal", {"mean": 0.5, "sd": 0.1, "low": 2}, UNIT, "entirely outside"),
    ("truncnormal", {"mean": 0.5, "sd": 1e-3, "low": 0.99}, UNIT, "entirely outside"),
    ("lognormal", {"median": 1, "gsd": 1.0}, Bounds(), "gsd must be greater than 1, got 1"),
    ("lognormal", {"mean": 1, "cv": 0}, Bounds(), "cv must be positive, got 0"),
    ("lognormal", {"median": 1, "gsd": 2}, Bounds(2, 5), "median=1 lies outside"),
    ("uniform", {"low": 2, "high": 1}, Bounds(), "low must be below high, got low=2 high=1"),
    ("uniform", {"low": -0.1, "high": 0.5}, UNIT, r"support \[-0.1, 0.5\] crosses"),
    ("triangular", {"low": 0, "mode": 2, "high": 1}, Bounds(),
     r"mode must lie in \[low, high\]=\[0, 1\], got mode=2"),
    ("triangular", {"low": 0.5, "mode": 0.9, "high": 1.2}, UNIT, "crosses the physical"),
    ("beta", {"mean": 0.5, "sd": 0.6}, Bounds(), "beta mean=0.5, sd=0.6 is impossible"),
    ("beta", {"mean": 1.5, "sd": 0.1}, Bounds(), "mean must lie strictly between low and high"),
    ("beta", {"a": 0, "b": 1}, Bounds(), "a must be positive, got 0"),
    ("beta", {"a": 1, "b": 1, "low": -1, "high": 1}, UNIT, "crosses the physical bounds"),
    ("tolerance", {"nominal": 1e-3, "tolerance": 2e-3}, POSITIVE,
     "tolerance larger than the nominal"),
    ("tolerance", {"nominal": 1e-3, "upper": 1e-4, "lower": 1e-3}, POSITIVE,
     "tolerance larger than the nominal"),
    ("tolerance", {"nominal": 1, "tolerance": 0}, Bounds(), "tolerance must be positive, got 0"),
    ("tolerance", {"nominal": 1, "upper": 0.1, "lower": -0.1}, Bounds(),
     "lower must be positive, got -0.1"),
    ("tolerance", {"nominal": 1, "tolerance": 0.1, "coverage": 0}, Bounds(),
     "coverage must be positive, got 0"),
    ("fixed", {"value": 0.0}, POSITIVE, r"value=0 lies outside the physical bounds \(0, inf\)"),
    ("fixed", {"value": 1.0}, Bounds(0.0, 1.0), r"outside the physical bounds \(0, 1\)"),
])
def test_validators(kind, params, bounds, match):
    with pytest.raises(ValueError, match=match):
        make_distribution(kind, params, bounds=bounds)


def test_bounds_and_ppf_validators():
    with pytest.raises(ValueError, match="bounds need lower < upper, got lower=1.0 upper=0.0"):
        Bounds(1.0, 0.0)
    assert Bounds(0.0, upper_closed=True, lower_closed=True) == Bounds(0.0, lower_closed=True)
    d = make_distribution("normal", {"mean": 0, "sd": 1})
    with pytest.raises(ValueError, match=r"open interval \(0, 1\)"):
        d.ppf(np.array([0.0, 0.5]))
    with pytest.raises(ValueError, match=r"coverage must lie in \(0, 1\), got 1.5"):
        d.interval(1.5)
    with pytest.raises(ValueError, match="parameters must be a mapping"):
        make_distribution("normal", [1, 2])  # type: ignore[arg-type]


def test_every_kind_is_constructible_and_documented():
    examples = {
        "normal": {"mean": 1, "sd": 1}, "truncnormal": {"mean": 1, "sd": 1},
        "lognormal": {"median": 1, "gsd": 2}, "uniform": {"low": 0, "high": 1},
        "triangular": {"low": 0, "mode": 0.5, "high": 1}, "beta": {"a": 2, "b": 2},
        "tolerance": {"nominal": 1, "tolerance": 0.1}, "fixed": {"value": 1},
    }
    assert set(examples) == set(KINDS)
    for kind, params in examples.items():
        d = make_distribution(kind, params)
        assert isinstance(d, Distribution) and d.kind == kind
        assert math.isfinite(d.mean) and d.std >= 0.0
