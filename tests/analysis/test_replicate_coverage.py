"""Honest intervals on replicated (randomized quasi-Monte Carlo) Saltelli designs.

Over SEEDS independent studies of cases with exact answers, each kind of interval (first-order
index, total index, percentile, exceedance probability) must cover the truth about as often as
its nominal level says: within the two-sided 99.9 % binomial acceptance region of SEEDS trials
at the nominal level — neither far below (overconfident) nor far above (too wide, as the
row-bootstrap intervals were: 639 of 640 at a nominal 90 %). The median ratio |error| /
half-width must lie in [0.3, 1] (a t interval with 7 degrees of freedom that is exactly right
gives about 0.38; the row bootstrap gave 0.06). The coverage table is printed in the test output.

Cases (exact answers):
* Ishigami function, a = 7, b = 0.1 — Source: Ishigami & Homma (1990), Proc. ISUMA '90,
  398-403; closed-form indices Sobol' & Levitan (1999), Comput. Phys. Commun. 117, 52-61
  (checked against Saltelli et al. 2008 in tests/analysis/test_sobol.py).
* Sobol' G-function, a = (0, 1, 4.5, 9, 99, 99, 99, 99) — Source: Saltelli & Sobol' (1995),
  Reliab. Eng. Syst. Saf. 50, 225-239: V_i = 1 / (3 (1 + a_i)^2), V = prod(1 + V_i) - 1,
  S_i = V_i / V, ST_i = V_i prod_{j != i}(1 + V_j) / V (also Saltelli et al. 2010, Comput. Phys.
  Commun. 181, 259-270); the a values as used there (from memory).
* Linear function of independent normal inputs — Source: Saltelli et al. (2008), Global
  Sensitivity Analysis: The Primer: S_i = ST_i = c_i^2 s_i^2 / sum c_j^2 s_j^2; the output is
  normal with mean sum c_i m_i and variance sum c_i^2 s_i^2, so its quantiles and exceedance
  probabilities are exact (normal distribution).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from plyrisk.analysis.sobol import sobol_indices
from plyrisk.analysis.statistics import replicate_exceedance, replicate_quantiles
from plyrisk.design.sampling import sobol_design
from tests.analysis.test_sobol import ishigami, ishigami_indices

pytestmark = pytest.mark.slow   # about 15 s: 360 studies of 8 scrambled replicates each

SEEDS = 120
"""Independent studies per case (at least 100)."""
BASE = 256
"""Base rows N of each study: R = 8 replicates of 32 [-]."""
REPLICATES = 8
CONFIDENCE = 0.90

G_A = np.array([0.0, 1.0, 4.5, 9.0, 99.0, 99.0, 99.0, 99.0])
LIN_COEF = np.array([1.0, 2.0, 3.0, 0.5])
LIN_MEAN = np.array([0.0, 10.0, 20.0, 30.0])
LIN_SD = np.array([1.0, 0.8, 0.3, 2.0])
PROBABILITIES = np.array([0.05, 0.5, 0.95])
LIMIT_Z = 1.0   # exceedance of mean + 1 sd: probability 1 - Phi(1) = 0.1587


def g_function(u: np.ndarray) -> np.ndarray:
    # Source: Saltelli & Sobol' (1995), Reliab. Eng. Syst. Saf. 50, 225-239
    return np.prod((np.abs(4.0 * u - 2.0) + G_A) / (1.0 + G_A), axis=1)


def g_indices() -> tuple[np.ndarray, np.ndarray]:
    # Source: Saltelli & Sobol' (1995); closed form V_i = 1 / (3 (1 + a_i)^2)
    v = 1.0 / (3.0 * (1.0 + G_A) ** 2)
    total_var = np.prod(1.0 + v) - 1.0
    return v / total_var, v * np.prod(1.0 + v) / (1.0 + v) / total_var


def acceptance(nominal: float, trials: int) -> tuple[float, float]:
    """Two-sided 99.9 % binomial acceptance region of the coverage fraction."""
    lo = stats.binom.ppf(0.0005, trials, nominal) / trials
    hi = stats.binom.isf(0.0005, trials, nominal) / trials
    return float(lo), float(hi)


def _record(table: dict, kind: str, case: str, err: np.ndarray, half: np.ndarray) -> None:
    table.setdefault(kind, []).append((case, np.abs(err) <= half, np.abs(err) / half))


@pytest.fixture(scope="module")
def coverage() -> dict:
    """Covered (bool) and |error| / half-width per kind, case, seed and index."""
    table: dict = {}
    s1_i, st_i = ishigami_indices()
    s1_g, st_g = g_indices()
    share = LIN_COEF**2 * LIN_SD**2 / np.sum(LIN_COEF**2 * LIN_SD**2)
    mean, sd = LIN_COEF @ LIN_MEAN, math.sqrt(np.sum(LIN_COEF**2 * LIN_SD**2))
    q_true = mean + sd * stats.norm.ppf(PROBABILITIES)
    p_true = float(stats.norm.sf(LIMIT_Z))
    runs = {name: ([], []) for name in ("ishigami", "g-function", "linear")}
    quant, exc = [], []
    for seed in range(SEEDS):
        for name, d in (("ishigami", 3), ("g-function", 8), ("linear", 4)):
            design = sobol_design(BASE, d, seed=seed, replicates=REPLICATES)
            if name == "ishigami":
                y = ishigami(math.pi * (2.0 * design.unit - 1.0))
            elif name == "g-function":
                y = g_function(design.unit)
            else:
                y = (LIN_MEAN + LIN_SD * stats.norm.ppf(design.unit)) @ LIN_COEF
                rows = design.independent_rows()
                label = design.replicate_of_rows()[rows]
                q = replicate_quantiles(y[rows], label, PROBABILITIES, confidence=CONFIDENCE)
                quant.append(q)
                exc.append(replicate_exceedance(y[rows], label, mean + LIMIT_Z * sd,
                                                confidence=CONFIDENCE))
            ind, _ = sobol_indices(y, design, names=[f"x{i}" for i in range(d)],
                                   confidence=CONFIDENCE, seed=0)
            runs[name][0].append(ind)
    for name, truth in (("ishigami", (s1_i, st_i)), ("g-function", (s1_g, st_g)),
                        ("linear", (share, share))):
        ind = runs[name][0]
        for kind, attr, exact in (("first-order index", "first", truth[0]),
                                  ("total index", "total", truth[1])):
            est = np.array([getattr(i, attr) for i in ind])
            half = np.array([getattr(i, f"{attr}_ci") for i in ind])
            _record(table, kind, name, est - exact, half)
    est = np.array([q.estimate for q in quant])
    lower, upper = np.array([q.lower for q in quant]), np.array([q.upper for q in quant])
    assert {m for q in quant for m in q.interval} == {"replicates-woodruff"}
    covered = (lower <= q_true) & (q_true <= upper)
    side = np.where(est > q_true, est - lower, upper - est)   # the half facing the truth
    table["percentile"] = [("linear", covered, np.abs(est - q_true) / side)]
    assert {e.method for e in exc} == {"replicates"}
    p = np.array([e.probability for e in exc])
    lo, hi = np.array([e.lower for e in exc]), np.array([e.upper for e in exc])
    side = np.where(p > p_true, p - lo, hi - p)
    table["exceedance probability"] = [("linear", ((lo <= p_true) & (p_true <= hi))[:, None],
                                        (np.abs(p - p_true) / side)[:, None])]
    return table


KINDS = ("first-order index", "total index", "percentile", "exceedance probability")


def test_print_the_coverage_table(coverage, capsys):
    lo, hi = acceptance(CONFIDENCE, SEEDS)
    with capsys.disabled():
        print(f"\nreplicate intervals at {CONFIDENCE:.0%}, {SEEDS} seeds, N = {BASE} "
              f"({REPLICATES} replicates); acceptance region {lo:.3f}-{hi:.3f}")
        for kind in KINDS:
            for case, covered, ratio in coverage[kind]:
                print(f"  {kind:>22} {case:>10}: coverage per index "
                      + " ".join(f"{c:.3f}" for c in covered.mean(axis=0))
                      + f"; pooled {covered.mean():.3f}; median |error|/half-width "
                      f"{np.median(ratio):.2f}")


@pytest.mark.parametrize("kind", KINDS)
def test_coverage_is_the_nominal_level(coverage, kind):
    lo, hi = acceptance(CONFIDENCE, SEEDS)
    for case, covered, _ in coverage[kind]:
        per_index = covered.mean(axis=0)
        assert np.all((per_index >= lo) & (per_index <= hi)), (kind, case, per_index)
        assert lo <= covered.mean() <= hi, (kind, case, covered.mean())


@pytest.mark.parametrize("kind", KINDS)
def test_half_widths_match_the_actual_error(coverage, kind):
    for case, _, ratio in coverage[kind]:
        assert 0.3 <= np.median(ratio) <= 1.0, (kind, case, np.median(ratio))


def test_g_function_closed_form_sums():
    s1, st = g_indices()
    # Source: Saltelli & Sobol' (1995): first-order shares sum below 1 (interactions), totals
    # above; S_1 of the G-function with these a is 0.716 (from memory)
    assert s1.sum() < 1.0 < st.sum()
    assert s1[0] == pytest.approx(0.716, abs=5e-4)
