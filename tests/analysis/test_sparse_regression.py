"""Least-angle regression path and the leave-one-out error of its least-squares refits."""

import numpy as np
import pytest
from scipy.linalg import hadamard

from plyrisk.analysis.pce import design_matrix, hyperbolic_basis
from plyrisk.analysis.sparse_regression import lars_path
from plyrisk.design.sampling import latin_hypercube_design


def test_orthogonal_design_enters_in_order_of_correlation():
    # Source: for orthogonal columns LARS enters them in decreasing order of |x_j^T y| (its
    # steps coincide with the lasso's soft thresholding; Efron et al. 2004, Ann. Statist. 32,
    # 407-499, from memory).
    phi = hadamard(16).astype(float)  # column 0 constant, the others orthogonal and centred
    columns = [5, 2, 9, 12, 1, 7]
    beta = [3.0, -2.5, 2.0, -1.5, 1.0, 0.5]
    y = 4.0 + phi[:, columns] @ beta
    path = lars_path(phi, y, max_terms=16)
    assert list(path.entered[:6]) == columns
    assert path.loo_error[5] < 1e-25  # the six terms fit exactly


def test_leave_one_out_errors_equal_refitting_without_each_sample():
    # Source: for least squares the leave-one-out residual is the residual over (1 - h_ii)
    # (the PRESS identity, Allen 1974, Technometrics 16, 125-127, from memory); checked here
    # against refitting without each sample.
    unit = latin_hypercube_design(40, 3, seed=3).unit
    alphas = hyperbolic_basis(3, 3)
    phi = design_matrix(unit, alphas)
    y = np.exp(unit[:, 0]) * np.sin(3 * unit[:, 1]) + unit[:, 2] ** 2
    path = lars_path(phi, y, max_terms=25, patience_steps=100)
    assert path.entered.size == 19 and 0 not in path.entered
    n = y.size
    for k in (0, 4, 11, 18):
        cols = np.concatenate([[0], path.entered[:k + 1]])
        a = phi[:, cols]
        press = np.empty(n)
        for i in range(n):
            keep = np.arange(n) != i
            coef = np.linalg.lstsq(a[keep], y[keep], rcond=None)[0]
            press[i] = y[i] - a[i] @ coef
        loo = np.mean(press**2) / np.var(y)
        corrected = loo * n / (n - cols.size) * (1 + np.trace(np.linalg.inv(a.T @ a)))
        assert path.loo_error[k] == pytest.approx(loo, rel=1e-9)
        assert path.corrected_loo_error[k] == pytest.approx(corrected, rel=1e-9)


def test_path_stops_at_the_term_cap_and_early():
    unit = latin_hypercube_design(60, 4, seed=1).unit
    phi = design_matrix(unit, hyperbolic_basis(4, 4))
    y = unit[:, 0] + 0.1 * np.random.default_rng(2).standard_normal(60)
    assert lars_path(phi, y, max_terms=6).entered.size == 5
    # a linear trend plus noise: the error stops falling after a few terms
    early = lars_path(phi, y, max_terms=40, patience_steps=5, patience_fraction=0.0)
    best = int(np.argmin(early.corrected_loo_error))
    assert early.entered.size == best + 1 + 5


def test_bad_shapes_are_rejected():
    with pytest.raises(ValueError, match=r"y must have shape \(4,\)"):
        lars_path(np.ones((4, 2)), np.ones(3), max_terms=2)
    empty = lars_path(np.ones((4, 2)), np.arange(4.0), max_terms=3)  # only constant columns
    assert empty.entered.size == 0
