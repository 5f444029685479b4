"""The Gaussian copula in the unit cube: achieved rank correlations for every marginal kind
(with truncation), row-wise invariance, Iman–Conover, and the conditional draws."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import special, stats

from plyrisk.design.copula import (
    correlate,
    iman_conover,
    rosenblatt_rows,
    shapley_permutations,
    shapley_rows,
)
from plyrisk.design.sampling import latin_hypercube_design, random_design, sobol_sequence_design
from plyrisk.study.correlations import linear_from_rank
from plyrisk.study.distributions import Bounds, make_distribution

POS = Bounds(lower=0.0)
UNIT = Bounds(lower=0.0, upper=1.0, upper_closed=True)
MARGINALS = [  # every kind; the first four are cut by their physical bounds
    make_distribution("normal", {"mean": 0.9, "sd": 0.1}, bounds=UNIT),
    make_distribution("truncnormal", {"mean": 1e-3, "sd": 6e-4, "high": 2e-3}, bounds=POS),
    make_distribution("tolerance", {"nominal": 0.5e-3, "tolerance": 0.45e-3, "coverage": 1.0},
                      bounds=POS),
    make_distribution("lognormal", {"median": 0.5, "gsd": 2.0}, bounds=UNIT),
    make_distribution("uniform", {"low": 0.04, "high": 0.06}, bounds=POS),
    make_distribution("triangular", {"low": 1.0, "mode": 1.5, "high": 3.0}, bounds=POS),
    make_distribution("beta", {"a": 2.0, "b": 5.0}, bounds=UNIT),
]
RANK = np.array([  # a consistent set of targets, positive and negative, strong and weak
    [1.0, 0.6, -0.3, 0.0, 0.2, 0.0, 0.0],
    [0.6, 1.0, 0.0, 0.4, 0.0, 0.0, 0.0],
    [-0.3, 0.0, 1.0, 0.0, 0.0, -0.7, 0.0],
    [0.0, 0.4, 0.0, 1.0, 0.0, 0.0, 0.5],
    [0.2, 0.0, 0.0, 0.0, 1.0, 0.0, 0.0],
    [0.0, 0.0, -0.7, 0.0, 0.0, 1.0, 0.3],
    [0.0, 0.0, 0.0, 0.5, 0.0, 0.3, 1.0],
])


def linear() -> np.ndarray:
    r = linear_from_rank(RANK)
    np.fill_diagonal(r, 1.0)
    return r


def inputs(unit: np.ndarray) -> np.ndarray:
    return np.column_stack([d.ppf(unit[:, j]) for j, d in enumerate(MARGINALS)])


def spearman(x: np.ndarray) -> np.ndarray:
    return stats.spearmanr(x).statistic


def test_every_marginal_kind_is_truncated():
    assert all(d.truncated_mass > 1e-3 for d in MARGINALS[:4])


@pytest.mark.parametrize("design", ["random", "sobol", "lhs"])
def test_achieved_rank_correlations_match_the_targets(design):
    # Source: Kruskal 1958, doi:10.2307/2281954 — a Gaussian copula of linear correlation
    # 2 sin(pi rho_s / 6) has rank correlation rho_s exactly, through any monotone marginal;
    # the standard error of a Spearman estimate from 1e5 draws is below 0.004.
    n = 100_000 if design != "sobol" else 2**17
    unit = {"random": lambda: random_design(n, 7, seed=5).unit,
            "sobol": lambda: sobol_sequence_design(n, 7, seed=5).unit,
            "lhs": lambda: latin_hypercube_design(n, 7, seed=5).unit}[design]()
    x = inputs(correlate(unit, linear()))
    assert np.max(np.abs(spearman(x) - RANK)) < 0.01
    for j, d in enumerate(MARGINALS):  # marginals unchanged, inside their bounds
        assert np.all((x[:, j] > d.bounds.lower) & (x[:, j] <= d.bounds.upper))
        assert stats.kstest(x[:, j], d.cdf).statistic < 0.01


def test_iman_conover_keeps_the_latin_hypercube_strata():
    n = 100_000
    unit = latin_hypercube_design(n, 7, seed=2).unit
    out = iman_conover(unit, linear(), seed=2)
    # Source: Iman & Conover 1982, doi:10.1080/03610918208812265 — the columns are reordered,
    # not changed, so every stratum of the Latin hypercube keeps exactly one point.
    for j in range(7):
        assert np.array_equal(np.sort(out[:, j]), np.sort(unit[:, j]))
        assert np.array_equal(np.sort(np.floor(out[:, j] * n)), np.arange(n))
    assert np.max(np.abs(spearman(inputs(out)) - RANK)) < 0.01


def test_the_copula_is_row_by_row_so_chunks_do_not_matter():
    unit = random_design(1000, 7, seed=3).unit
    whole = correlate(unit, linear())
    pieces = np.vstack([correlate(unit[a:a + 137], linear()) for a in range(0, 1000, 137)])
    assert np.array_equal(whole, pieces)


def test_uncorrelated_columns_are_left_bit_identical():
    unit = random_design(100, 3, seed=3).unit
    r = np.array([[1.0, 0.5], [0.5, 1.0]])
    out = correlate(unit, r, columns=np.array([0, 2]))
    assert np.array_equal(out[:, 1], unit[:, 1])
    assert not np.array_equal(out[:, 0], unit[:, 0])


def test_conditional_draws_follow_the_conditional_normal():
    # Source: Anderson 2003, An Introduction to Multivariate Statistical Analysis, thm 2.5.1:
    # for standard normal scores with correlation rho, z_a | z_b ~ N(rho z_b, 1 - rho^2).
    rho = 0.8
    r = np.array([[1.0, rho], [rho, 1.0]])
    m = 40_000
    joint = random_design(16, 2, seed=1).unit
    rows = shapley_rows(joint, r, permutations=m, seed=4)[16:]
    z = special.ndtri(rows).reshape(m, 3, 2)          # (permutation, inner draw, column)
    first = shapley_permutations(m, 2, seed=4)[:, 0]  # the input drawn conditionally
    k = np.arange(m)
    drawn, kept = z[k, :, first], z[k, :, 1 - first]
    assert np.all(kept == kept[:, :1])                # the outer draw is shared
    resid = drawn - rho * kept
    assert np.var(resid) == pytest.approx(1 - rho**2, rel=0.02)
    assert abs(np.corrcoef(resid.ravel(), kept.ravel())[0, 1]) < 0.01
    # every conditional row is also a draw from the joint distribution
    assert stats.spearmanr(rows[:, 0], rows[:, 1]).statistic == pytest.approx(
        6 / np.pi * np.arcsin(rho / 2), abs=0.01)


def test_rosenblatt_blocks_share_exactly_what_the_indices_freeze():
    # Source: Anderson 2003, An Introduction to Multivariate Statistical Analysis, thm 2.5.1
    # (conditional normal); eq. K.3: C_i keeps A's other scores and B's innovation of z_i,
    # D_i keeps A's part of the other scores independent of z_i and B's z_i.
    r = np.array([[1.0, 0.6, 0.2], [0.6, 1.0, -0.3], [0.2, -0.3, 1.0]])
    n, d = 20_000, 3
    lower = np.linalg.cholesky(r)
    a = special.ndtr(special.ndtri(random_design(n, d, seed=2).unit) @ lower.T)
    rows = rosenblatt_rows(a, r, seed=6)
    assert rows.shape == ((1 + 2 * d) * n, d)
    blocks = rows.reshape(1 + 2 * d, n, d)
    z_a, z = special.ndtri(a), special.ndtri(blocks)
    for i in range(d):
        rest = [k for k in range(d) if k != i]
        g = np.linalg.solve(r[np.ix_(rest, rest)], r[rest, i])
        c, t = z[1 + i], z[1 + d + i]
        assert np.array_equal(blocks[1 + i][:, rest], a[:, rest])        # A's other inputs
        assert np.allclose(c[:, i] - c[:, rest] @ g, z[0][:, i] - z[0][:, rest] @ g,
                           atol=1e-8)                                    # B's innovation
        assert np.array_equal(blocks[1 + d + i][:, i], blocks[0][:, i])  # B's X_i
        assert np.allclose(t[:, rest] - np.outer(t[:, i], r[rest, i]),
                           z_a[:, rest] - np.outer(z_a[:, i], r[rest, i]), atol=1e-8)
        # every block is a draw of the joint distribution
        assert np.allclose(np.corrcoef(z[1 + i], rowvar=False), r, atol=0.03)
        assert np.allclose(np.corrcoef(t, rowvar=False), r, atol=0.03)
    assert np.allclose(np.corrcoef(z[0], rowvar=False), r, atol=0.03)
    # row j of every block depends on row j of A and the seed only (not on N)
    head = rosenblatt_rows(a[:10], r, seed=6).reshape(1 + 2 * d, 10, d)
    assert np.array_equal(head, blocks[:, :10])
