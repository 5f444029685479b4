"""PCE surrogate indices against analytic Sobol indices of published test functions."""

import numpy as np
import pytest

from uq.sampling import latin_hypercube_design
from uq.surrogate import choose_order, surrogate_indices


def ishigami(x, a=7.0, b=0.1):
    return np.sin(x[:, 0]) + a * np.sin(x[:, 1]) ** 2 + b * x[:, 2] ** 4 * np.sin(x[:, 0])


def ishigami_indices(a=7.0, b=0.1):
    # Source: closed-form partial variances of the Ishigami function (Ishigami & Homma 1990;
    # as given in Saltelli et al. 2008, Global Sensitivity Analysis: The Primer, sec. 4.9).
    v1 = 0.5 * (1 + b * np.pi**4 / 5) ** 2
    v2 = a**2 / 8
    v13 = b**2 * np.pi**8 * (1 / 18 - 1 / 50)
    v = v1 + v2 + v13
    return np.array([v1, v2, 0.0]) / v, np.array([v1 + v13, v2, v13]) / v


def test_ishigami_indices_from_a_latin_hypercube():
    design = latin_hypercube_design(1500, 3, seed=5)
    x = -np.pi + 2 * np.pi * design.unit
    result = surrogate_indices(design.unit, ishigami(x), names=["x1", "x2", "x3"], order=9,
                               n_bootstrap=20, seed=1)
    first, total = ishigami_indices()
    assert result.q2 > 0.99
    np.testing.assert_allclose(result.first, first, atol=0.02)
    np.testing.assert_allclose(result.total, total, atol=0.02)


def test_linear_model_indices_and_groups():
    # Source: for Y = sum a_i X_i with independent inputs, S_i = S_Ti = a_i^2 var_i / var(Y)
    # (common practice; Saltelli et al. 2008).
    a = np.array([1.0, 2.0, 0.5, 0.0])
    design = latin_hypercube_design(400, 4, seed=2)
    y = design.unit @ a  # uniform(0, 1) inputs, equal variances
    share = a**2 / np.sum(a**2)
    per = surrogate_indices(design.unit, y, names=list("abcd"), order=1, n_bootstrap=10,
                            seed=3)
    np.testing.assert_allclose(per.first, share, atol=1e-9)
    np.testing.assert_allclose(per.total, share, atol=1e-9)
    grouped = surrogate_indices(design.unit, y, names=["ab", "cd"], groups=[(0, 1), (2, 3)],
                                order=1, n_bootstrap=10, seed=3)
    np.testing.assert_allclose(grouped.total, [share[:2].sum(), share[2:].sum()], atol=1e-9)


def test_order_follows_the_sample_count():
    assert choose_order(10, 5) == 0
    assert choose_order(3 * 6, 5) == 1  # 6 terms at order 1 with 5 inputs
    assert choose_order(10_000, 3) == 5


def test_bad_confidence_is_rejected():
    with pytest.raises(ValueError, match="confidence must be in"):
        surrogate_indices(np.zeros((5, 1)), np.zeros(5), names=["x"], confidence=1.5, seed=0)


def test_too_few_samples_gives_none():
    assert surrogate_indices(np.random.default_rng(0).random((4, 3)), np.arange(4.0),
                             names=["a", "b", "c"], seed=0) is None
