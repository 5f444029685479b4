"""Tolerance engine against closed forms of a linear model with independent normal inputs.

For Y = c + sum_i a_i X_i with X_i ~ normal(m_i, s_i) independent, Y is normal with mean
c + sum a_i m_i and variance sum a_i^2 s_i^2 (common practice), so every answer has a closed
form: P_q(Y) = mean + z_q sd and P(Y > L) = 1 - Phi((L - mean) / sd).

Sampling tolerances: the sample p-quantile of n independent draws has standard error
sd sqrt(p (1 - p)) / (phi(z_p) sqrt(n)), and an exceedance fraction sqrt(p (1 - p) / n)
(asymptotic normality of sample quantiles and proportions; common practice). Checks allow
four standard errors; the Latin hypercube only makes the error smaller.
"""

import math
from dataclasses import replace

import numpy as np
import pytest
from scipy import stats

from plyrisk.study.distributions import Bounds, make_distribution
from plyrisk.tolerances.allocation import VERIFICATION_SCALE
from plyrisk.tolerances.core import largest_meeting
from plyrisk.tolerances.study import (
    ToleranceProblem,
    ToleranceSettings,
    allocate,
    allowable_spreads,
    analyse_tolerances,
    shift_distribution,
    shift_nominal,
    verification_seed,
    verify,
    what_if,
)

# Source: scipy.stats.norm (reference library); z_0.95 = 1.6449, z_0.99 = 2.3263 in standard
# normal tables (common practice)
Z95 = stats.norm.ppf(0.95)
Z99 = stats.norm.ppf(0.99)
N = 20000

# Model coefficients (not check values): x1 dominant, x2 moderate, x3 negligible.
A = np.array([2.0, 1.0, 0.05])
M = np.array([10.0, 5.0, 3.0])
S = np.array([1.0, 0.5, 2.0])
C = 300.0
MU = C + A @ M
V = (A * S) ** 2


def sd_of(factors) -> float:
    return float(np.sqrt(np.sum(V * np.asarray(factors) ** 2)))


def quantile_se(p: float, sd: float, n: int = N) -> float:
    return sd * math.sqrt(p * (1 - p)) / (stats.norm.pdf(stats.norm.ppf(p)) * math.sqrt(n))


def problem(limit: float, *, offsets=(0.0,), a=A, m=M, s=S) -> ToleranceProblem:
    dists = tuple(make_distribution("normal", {"mean": mi, "sd": si})
                  for mi, si in zip(m, s, strict=True))
    off = np.asarray(offsets)[:, None]

    def model(x: np.ndarray) -> np.ndarray:
        return C + off + (x @ a)[None, :]

    return ToleranceProblem(tuple(f"x{i + 1}" for i in range(len(m))), dists, model, limit)


def settings(**kw) -> ToleranceSettings:
    kw.setdefault("samples", N)
    kw.setdefault("seed", 5)
    kw.setdefault("basis", "estimate")
    return ToleranceSettings(**kw)


# ----------------------------------------------------------------------------------------------
# What-if
# ----------------------------------------------------------------------------------------------


def test_what_if_against_closed_form():
    sd = sd_of([1, 1, 1])
    wi = what_if(problem(MU + 1.0), settings())
    base = wi.baseline
    se = quantile_se(0.95, sd)
    assert base.quantile[0] == pytest.approx(MU + Z95 * sd, abs=4 * se)
    assert base.quantile_lower[0] < base.quantile[0] < base.quantile_upper[0]
    # exceedance of MU + 1: 1 - Phi(1 / sd)
    p = stats.norm.sf(1.0 / sd)
    assert base.exceedance[0] == pytest.approx(p, abs=4 * math.sqrt(p * (1 - p) / N))
    half = 0.5 * (base.quantile_upper[0] - base.quantile_lower[0])
    for i, row in enumerate(wi.rows):
        f_half = np.ones(3)
        f_half[i] = 0.5
        exact_change = Z95 * (sd_of(f_half) - sd)
        assert row.halved.quantile[0] - base.quantile[0] == pytest.approx(exact_change,
                                                                          abs=4 * se)
        # Source: first-order Sobol index of a linear model with independent inputs,
        # a_i^2 s_i^2 / Var(Y) (Saltelli et al. 2008, Global Sensitivity Analysis: The Primer,
        # sec. 1.2) (from memory); sample variances are good to about sqrt(2/n) = 1 %
        assert row.variance_share == pytest.approx(V[i] / sd**2, abs=0.01)
        assert row.contribution == pytest.approx(V[i], rel=4 * math.sqrt(2 / N))
        # the drop Var(Y) - Var(Y_0) also carries the sample covariances 2 a_i a_j
        # cov(X_i, X_j), each of standard error about sqrt(V_i V_j / n) (common practice)
        noise = 2.0 * math.sqrt(V[i] * (V.sum() - V[i]) / N)
        assert row.variance_drop == pytest.approx(V[i], abs=4 * noise + 4 * math.sqrt(2 / N)
                                                  * V[i])
    x1, x3 = wi.rows[0], wi.rows[2]
    # tightening the dominant parameter lowers P95 more than tightening a negligible one
    assert x1.halved.quantile[0] < x3.halved.quantile[0] < base.quantile[0] + 1e-9
    # holding the non-influential parameter at nominal moves P95 by less than its CI
    assert abs(x3.nominal.quantile[0] - base.quantile[0]) < half


def test_same_seed_is_bit_identical_and_new_seed_differs():
    prob, st = problem(MU + 3.0), settings(samples=512)
    a, b = what_if(prob, st), what_if(prob, st)
    np.testing.assert_array_equal(a.baseline.quantile, b.baseline.quantile)
    np.testing.assert_array_equal(a.rows[1].nominal.variance, b.rows[1].nominal.variance)
    c = what_if(prob, replace(st, seed=6))
    assert c.baseline.quantile[0] != a.baseline.quantile[0]


# ----------------------------------------------------------------------------------------------
# Allowable spread
# ----------------------------------------------------------------------------------------------


def test_allowable_spread_quantile_target_matches_closed_form():
    f_exact = 0.7
    limit = MU + Z95 * sd_of([f_exact, 1, 1])
    out = allowable_spreads(problem(limit), settings())
    x1 = out[0]
    assert x1.status == "limited" and x1.monotone and not x1.bounded
    sd = sd_of([x1.factor, 1, 1])
    # the closed-form P95 at the factor found meets the limit within the sampling error
    assert MU + Z95 * sd == pytest.approx(limit, abs=4 * quantile_se(0.95, sd))
    slope = Z95 * V[0] * f_exact / sd      # dP95/df
    assert x1.factor == pytest.approx(f_exact, abs=4 * quantile_se(0.95, sd) / slope)
    assert x1.spread == pytest.approx(S[0] * x1.factor, rel=1e-12)
    # x2 and x3 alone cannot compensate for x1 at its current spread
    assert [a.status for a in out[1:]] == ["none", "none"]
    assert all(math.isnan(a.factor) for a in out[1:])


def test_allowable_spread_exceedance_target_matches_closed_form():
    f_exact = 0.6
    limit = MU + Z99 * sd_of([f_exact, 1, 1])
    out = allowable_spreads(problem(limit), settings(target="P(exceed) <= 1 %"))
    x1 = out[0]
    assert x1.status == "limited"
    p_exact = stats.norm.sf((limit - MU) / sd_of([x1.factor, 1, 1]))
    assert p_exact == pytest.approx(0.01, abs=4 * math.sqrt(0.01 * 0.99 / N))


def test_allowable_any_spread_up_to_max_factor_and_bounds_cap():
    # Target met even at 3x every spread: "met at any spread" up to max_factor.
    limit = MU + Z95 * sd_of([3, 3, 3]) + 1.0
    out = allowable_spreads(problem(limit), settings(samples=2048, max_factor=3.0))
    assert all(a.status == "any" and a.factor == 3.0 and not a.bounded for a in out)
    # A uniform [0.5, 1.5] of a positive quantity cannot widen past factor 2 (low reaches 0).
    u = make_distribution("uniform", {"low": 0.5, "high": 1.5}, bounds=Bounds(0.0))
    prob = ToleranceProblem(("u",), (u,), lambda x: x[:, 0], limit=10.0)
    (a,) = allowable_spreads(prob, settings(samples=256))
    assert a.status == "any" and a.bounded
    assert a.cap == pytest.approx(2.0, abs=1e-4)  # half-width 0.5 * f < 1


def test_scenarios_use_the_worst_exposure():
    f_exact = 0.7
    worst_offset = 1.5
    limit = MU + worst_offset + Z95 * sd_of([f_exact, 1, 1])
    prob = problem(limit, offsets=(0.0, worst_offset, -2.0))
    out = allowable_spreads(prob, settings())
    sd = sd_of([out[0].factor, 1, 1])
    assert MU + worst_offset + Z95 * sd == pytest.approx(limit, abs=4 * quantile_se(0.95, sd))
    assert what_if(prob, settings(samples=1024)).baseline.scenario == 1


def test_search_flags_a_non_monotone_metric():
    # met on [0, 1], fails on (1, 2], met again beyond: the answer is the first interval
    status, x, mono = largest_meeting(lambda f: f <= 1.0 or f > 2.0, [0, 0.5, 1.5, 2.5, 3.0],
                                       1e-6)
    assert status == "limited" and x == pytest.approx(1.0, abs=1e-5) and not mono


# ----------------------------------------------------------------------------------------------
# Allocation and verification
# ----------------------------------------------------------------------------------------------


def test_allocation_matches_lagrange_closed_form():
    # Minimise sum w_i / f_i s.t. sum V_i f_i^2 = B: f_i = s (w_i / V_i)^(1/3) (Lagrange
    # condition w_i / f_i^2 = 2 lambda V_i f_i; common practice).
    a, s, w = np.ones(3), np.array([1.0, 2.0, 0.5]), {"x1": 1.0, "x2": 2.0, "x3": 0.5}
    v = (a * s) ** 2
    ratio = np.cbrt(np.array(list(w.values())) / v)
    limit = C + a @ M + Z95 * float(np.sqrt(np.sum(v * (0.8 * ratio) ** 2)))
    prob = problem(limit, a=a, s=s)
    alloc = allocate(prob, settings(cost=w, allow_loosening=True))
    assert alloc.status == "met"
    f = alloc.factors
    np.testing.assert_allclose(f / f[0], ratio / ratio[0], rtol=0.03)
    # a sample variance has relative standard error sqrt(2 / n) = 1 % (common practice)
    np.testing.assert_allclose(alloc.contributions, v, rtol=4 * math.sqrt(2 / N))
    sd = float(np.sqrt(np.sum(v * f**2)))
    assert C + a @ M + Z95 * sd == pytest.approx(limit, abs=4 * quantile_se(0.95, sd))
    assert alloc.cost == pytest.approx(sum(wi / fi for wi, fi in zip(w.values(), f, strict=True)))


def test_allocation_verified_with_a_new_seed():
    limit = MU + Z95 * sd_of([0.6, 1, 1])
    st = settings(basis="bound", samples=4096)
    alloc = allocate(problem(limit), st)
    assert alloc.status == "met"
    assert np.all(alloc.factors <= 1.0)            # no loosening by default
    assert alloc.factors[2] == 1.0                 # the negligible parameter keeps its spread
    ver = alloc.verification
    assert ver.seed == verification_seed(st.seed) != st.seed
    assert ver.met and ver.met_estimate
    assert ver.lower <= ver.value <= ver.upper <= limit
    # not wastefully tight: the search sized the allocation on an interval about twice as wide
    # as the verification's (a design VERIFICATION_SCALE = 4 times smaller), so the margin left
    # is about twice the verification's half-width (common practice: CI width ~ 1/sqrt(n))
    assert limit - ver.value <= 3.0 * (ver.upper - ver.value)
    sd = sd_of(alloc.factors)
    assert MU + Z95 * sd <= limit                  # the closed form agrees
    again = verify(problem(limit), st, alloc.factors, seed=ver.seed)
    assert again.value == ver.value                # reproducible


def test_allocation_keep_infeasible_and_caps():
    limit = MU + Z95 * sd_of([0.6, 1, 1])
    kept = allocate(problem(limit), settings(samples=2048, keep=("x2",)))
    assert kept.factors[1] == 1.0 and kept.kept == ("x2",)
    # below the nominal output no tolerance can help
    assert allocate(problem(MU - 1.0), settings(samples=512)).status == "infeasible"
    # met at the current spreads: without loosening the allocation keeps them
    caps = allocate(problem(MU + 10.0), settings(samples=512))
    assert caps.status == "caps" and np.all(caps.factors == 1.0)
    with pytest.raises(ValueError, match=r"unknown parameter\(s\) \['x9'\]; valid: x1, x2, x3"):
        allocate(problem(MU), settings(samples=64, cost={"x9": 2.0}))


# ----------------------------------------------------------------------------------------------
# Nominal shift
# ----------------------------------------------------------------------------------------------


def test_nominal_shift_matches_closed_form():
    sd = sd_of([1, 1, 1])
    required = 9.0
    limit = MU + A[0] * (required - M[0]) + Z95 * sd     # x1 must drop from 10 to 9
    out = shift_nominal(problem(limit), settings(), "x1")
    assert out.status == "shift" and out.monotone
    assert out.required == pytest.approx(required, abs=4 * quantile_se(0.95, sd) / A[0])
    assert out.met_to == out.required and out.met_from == out.low == 5.0
    met = shift_nominal(problem(limit + 5.0), settings(samples=2048), "x1")
    assert met.status == "met" and met.required == met.current == 10.0
    far = shift_nominal(problem(MU - 100.0), settings(samples=512, nominal_range=(8.0, 12.0)),
                        "x1")
    assert far.status == "not reachable" and math.isnan(far.required)
    with pytest.raises(ValueError, match=r"must contain the current nominal"):
        shift_nominal(problem(MU), settings(samples=64, nominal_range=(11.0, 12.0)), "x1")
    with pytest.raises(ValueError, match=r"unknown parameter 'x7'; valid: x1, x2, x3"):
        shift_nominal(problem(MU), settings(samples=64), "x7")


@pytest.mark.parametrize(("kind", "params"), [
    ("normal", {"mean": 2.0, "sd": 0.2}),
    ("truncnormal", {"mean": 2.0, "sd": 0.2, "low": 1.7, "high": 2.6}),
    ("tolerance", {"nominal": 2.0, "upper": 0.3, "lower": 0.2}),
    ("uniform", {"low": 1.5, "high": 2.5}),
    ("triangular", {"low": 1.5, "mode": 2.0, "high": 2.2}),
    ("beta", {"a": 2.0, "b": 3.0, "low": 1.0, "high": 3.0}),
])
def test_shift_translates_location_families(kind, params):
    d = make_distribution(kind, params, bounds=Bounds(0.0))
    moved = shift_distribution(d, d.nominal + 0.5)
    u = np.array([0.01, 0.3, 0.5, 0.9])
    # a location family: the quantile function moves by the shift (common practice)
    np.testing.assert_allclose(moved.ppf(u), d.ppf(u) + 0.5, rtol=1e-12, atol=1e-12)
    assert moved.nominal == pytest.approx(d.nominal + 0.5) and moved.spread == pytest.approx(
        d.spread)


def test_shift_scales_a_lognormal_and_keeps_bounds():
    d = make_distribution("lognormal", {"mean": 2.0, "cv": 0.3}, bounds=Bounds(0.0))
    moved = shift_distribution(d, 2.0 * d.nominal)
    u = np.array([0.05, 0.5, 0.95])
    # median scaled at fixed gsd: every quantile scales by the same ratio (common practice)
    np.testing.assert_allclose(moved.ppf(u), 2.0 * d.ppf(u), rtol=1e-12)
    u01 = make_distribution("uniform", {"low": 0.2, "high": 0.9},
                            bounds=Bounds(0.0, 1.0, upper_closed=True))
    with pytest.raises(ValueError, match="crosses the physical bounds"):
        shift_distribution(u01, 0.9)


# ----------------------------------------------------------------------------------------------
# Settings, the whole report
# ----------------------------------------------------------------------------------------------


@pytest.mark.parametrize(("kw", "match"), [
    ({"design": "sobol"}, r"unknown design 'sobol'; valid: lhs, random"),
    ({"basis": "mean"}, r"unknown basis 'mean'; valid: bound, estimate"),
    ({"max_factor": 0.5}, r"max_factor must be a finite number >= 1, got 0.5"),
    ({"samples": 1}, r"samples must be a whole number >= 2, got 1"),
    ({"cost": {"x1": -1.0}}, r"cost weight of 'x1' must be a positive number, got -1.0"),
    ({"target": "P95 < limit"}, r"bad target 'P95 < limit'"),
    ({"confidence": 1.5}, r"confidence must lie in \(0, 1\), got 1.5"),
    ({"nominal_range": (2.0, 1.0)}, r"nominal_range needs low < high"),
])
def test_settings_validation(kw, match):
    with pytest.raises(ValueError, match=match):
        ToleranceSettings(**kw)


def test_seed_is_required():
    with pytest.raises(ValueError, match="settings.seed is None"):
        what_if(problem(MU), ToleranceSettings(samples=16))


def test_problem_validation():
    d = make_distribution("normal", {"mean": 0.0, "sd": 1.0})
    with pytest.raises(ValueError, match="one distribution per name"):
        ToleranceProblem(("a", "b"), (d,), lambda x: x[:, 0], 1.0)
    with pytest.raises(ValueError, match="names must be unique"):
        ToleranceProblem(("a", "a"), (d, d), lambda x: x[:, 0], 1.0)
    bad = ToleranceProblem(("a",), (d,), lambda x: x[:3, 0], 1.0)
    with pytest.raises(ValueError, match=r"evaluate must return shape \(n_scenarios, 16\)"):
        what_if(bad, settings(samples=16))


def test_report_runs_everything_and_counts_failed_samples():
    def model(x: np.ndarray) -> np.ndarray:
        y = C + x @ A
        y[:3] = np.nan                          # three failed evaluations
        return y

    prob = replace(problem(MU + Z95 * sd_of([0.6, 1, 1])), evaluate=model)
    rep = analyse_tolerances(prob, settings(samples=1024, basis="bound", nominal_shift="x1"))
    assert rep.whatif.baseline.nonconverged.tolist() == [3]
    assert rep.allocation.status == "met" and rep.allocation.verification.met
    assert rep.nominal_shift is not None and rep.nominal_shift.status == "shift"
    assert rep.nominal_shift.required < 10.0
    assert rep.runs > 1 + 2 * 3


# ----------------------------------------------------------------------------------------------
# A real study
# ----------------------------------------------------------------------------------------------


def test_small_study_allocation_meets_target_in_an_independent_run():
    from plyrisk.study.config import load_study
    from plyrisk.tolerances.study import problem_from_study, run_tolerances, settings_for_study

    study = load_study("configs/small_demo.toml")
    st = settings_for_study(study, target="P95 <= 42 degC", samples=256)
    assert st.seed == study.analysis.seed and st.confidence == study.analysis.confidence
    prob = problem_from_study(study)
    assert prob.names == study.parameter_names and prob.limit == study.analysis.limit
    rep = run_tolerances(study, target="P95 <= 42 degC", samples=256)
    alloc = rep.allocation
    assert rep.whatif.baseline.score > rep.bound            # tightening is needed
    assert alloc.status == "met" and np.all(alloc.factors <= 1.0)
    ver = alloc.verification
    assert ver.seed != st.seed and ver.samples == VERIFICATION_SCALE * 256
    assert ver.met and ver.value <= rep.bound
    assert rep.whatif.baseline.nonconverged.sum() == 0


def test_steady_model_solves_a_design_once(small_demo):
    from plyrisk.propagate.evaluate import evaluate
    from plyrisk.tolerances.study import problem_from_study

    calls = []

    def counting(study, values):
        calls.append(values.shape)
        return evaluate(study, values)

    problem = problem_from_study(small_demo, evaluate=counting)
    rng = np.random.default_rng(3)
    unit = rng.random((32, len(small_demo.parameters)))
    values = np.column_stack([p.distribution.ppf(unit[:, j])
                              for j, p in enumerate(small_demo.parameters)])
    first = problem.evaluate(values)
    first[...] = 0.0                      # the caller's copy: the kept outputs are unchanged
    again = problem.evaluate(values.copy())
    other = problem.evaluate(values[:16])
    assert calls == [values.shape, (16, values.shape[1])]
    direct = evaluate(small_demo, values)
    expected = np.where(direct["converged"], direct["inner_surface_temperature"], np.nan)
    np.testing.assert_array_equal(again, expected)
    assert other.shape[-1] == 16
