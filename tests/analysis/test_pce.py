"""PCE surrogate indices against analytic Sobol indices of published test functions."""

from math import comb

import numpy as np
import pytest

from plyrisk.analysis.pce import fit_pce, hyperbolic_basis, surrogate_indices, surrogate_quantiles
from plyrisk.design.sampling import latin_hypercube_design

TOL = 0.02  # accuracy demanded of the indices at the stated design size


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


G_A = np.array([0.0, 1.0, 4.5, 9.0, 99.0, 99.0, 99.0, 99.0])
"""Coefficients of the G-function as used by Saltelli & Sobol (1995)."""


def g_function(u, a=G_A):
    # Source: Saltelli & Sobol (1995), Reliab. Eng. Syst. Saf. 50, 225-239:
    # G = prod_i (|4 u_i - 2| + a_i) / (1 + a_i), u_i uniform on [0, 1].
    return np.prod((np.abs(4 * u - 2) + a) / (1 + a), axis=1)


def g_indices(a=G_A):
    # Source: Saltelli & Sobol (1995): V_i = (1/3) / (1 + a_i)^2, V = prod(1 + V_i) - 1;
    # total V_Ti = V_i prod_{j != i} (1 + V_j) (Saltelli et al. 2008, The Primer, sec. 4.9).
    vi = (1 / 3) / (1 + a) ** 2
    v = np.prod(1 + vi) - 1
    vt = np.array([vi[i] * np.prod(np.delete(1 + vi, i)) for i in range(a.size)])
    return vi / v, vt / v


def test_ishigami_indices_from_a_latin_hypercube():
    design = latin_hypercube_design(1500, 3, seed=5)
    x = -np.pi + 2 * np.pi * design.unit
    result = surrogate_indices(design.unit, ishigami(x), names=["x1", "x2", "x3"], order=9,
                               n_bootstrap=20, seed=1)
    first, total = ishigami_indices()
    assert result.q2 > 0.99
    np.testing.assert_allclose(result.first, first, atol=TOL)
    np.testing.assert_allclose(result.total, total, atol=TOL)


def test_ishigami_with_the_truncation_chosen_by_leave_one_out_error():
    # design size stated: 400 Latin-hypercube samples
    design = latin_hypercube_design(400, 3, seed=5)
    y = ishigami(-np.pi + 2 * np.pi * design.unit)
    result = surrogate_indices(design.unit, y, names=["x1", "x2", "x3"], n_bootstrap=20, seed=1)
    first, total = ishigami_indices()
    np.testing.assert_allclose(result.first, first, atol=TOL)
    np.testing.assert_allclose(result.total, total, atol=TOL)
    assert result.loo_error < 1e-3 and result.terms < 400 / 1.5
    assert np.all(result.total_ci < TOL)


def test_ishigami_from_100_samples_by_sparse_regression():
    # design size stated: 100 Latin-hypercube samples (a quarter of the test above); the
    # candidate sets least squares cannot fit have their terms selected by least-angle
    # regression. Check values: Ishigami & Homma 1990 (ishigami_indices above).
    design = latin_hypercube_design(100, 3, seed=5)
    y = ishigami(-np.pi + 2 * np.pi * design.unit)
    result = surrogate_indices(design.unit, y, names=["x1", "x2", "x3"], n_bootstrap=20, seed=1)
    first, total = ishigami_indices()
    np.testing.assert_allclose(result.first, first, atol=TOL)
    np.testing.assert_allclose(result.total, total, atol=TOL)
    assert result.fit.sparse and result.terms < 100 / 1.5 < result.candidates
    assert np.all(np.isfinite(result.total_ci)) and np.all(result.total_ci < TOL)


def test_g_function_indices_from_400_samples_by_sparse_regression():
    # design size stated: 400 Latin-hypercube samples, 8 inputs. Check values: Saltelli &
    # Sobol 1995 (g_indices above).
    design = latin_hypercube_design(400, 8, seed=5)
    result = surrogate_indices(design.unit, g_function(design.unit),
                               names=[f"x{i}" for i in range(8)], n_bootstrap=20, seed=1)
    first, total = g_indices()
    np.testing.assert_allclose(result.first, first, atol=TOL)
    np.testing.assert_allclose(result.total, total, atol=TOL)
    assert result.fit.sparse


def shifted_legendre(order, u):
    # Source: shifted Legendre polynomials P_n(2u - 1), orthonormal on [0, 1] with the factor
    # sqrt(2n + 1) (Abramowitz & Stegun 1964, Handbook of Mathematical Functions, ch. 22,
    # from memory).
    return np.sqrt(2 * order + 1) * {1: 2 * u - 1, 2: 6 * u**2 - 6 * u + 1,
                                     3: 20 * u**3 - 30 * u**2 + 12 * u - 1}[order]


def test_a_sparse_polynomial_is_recovered_exactly_from_fewer_samples_than_terms():
    # 5 terms of the 84 of the total-degree-3 set in 6 inputs, fitted from 50 samples: least
    # squares cannot fit the set, least-angle regression finds the 5 terms.
    design = latin_hypercube_design(50, 6, seed=1)
    u = design.unit
    y = (3.0 + 2.0 * shifted_legendre(1, u[:, 0]) - 1.5 * shifted_legendre(2, u[:, 3])
         + 0.8 * shifted_legendre(1, u[:, 0]) * shifted_legendre(1, u[:, 5])
         + 0.5 * shifted_legendre(3, u[:, 4]))
    result = surrogate_indices(u, y, names=[f"x{i}" for i in range(6)], n_bootstrap=10, seed=2)
    fit = result.fit
    terms = {(0, 0, 0, 0, 0, 0): 3.0, (1, 0, 0, 0, 0, 0): 2.0, (0, 0, 0, 2, 0, 0): -1.5,
             (1, 0, 0, 0, 0, 1): 0.8, (0, 0, 0, 0, 3, 0): 0.5}
    assert {tuple(int(i) for i in a): c for a, c in zip(fit.alphas, fit.coef, strict=True)} \
        == pytest.approx(terms, abs=1e-10)
    assert fit.candidates == comb(6 + 3, 3) and fit.loo_error < 1e-20
    assert fit.cross_validation_error < 1e-20  # every fold finds the same 5 terms
    # Source: with orthonormal terms the variance is the sum of the squared coefficients and
    # each index sums the terms of its inputs (Sudret 2008, Reliab. Eng. Syst. Saf. 93, 964).
    v = 2.0**2 + 1.5**2 + 0.8**2 + 0.5**2
    np.testing.assert_allclose(result.first, np.array([4.0, 0, 0, 2.25, 0.25, 0]) / v,
                               atol=1e-10)
    np.testing.assert_allclose(result.total, np.array([4.64, 0, 0, 2.25, 0.25, 0.64]) / v,
                               atol=1e-10)
    assert np.all(result.total_ci < 1e-8)  # an exact fit: every resample refits it exactly


def test_without_sparse_regression_only_full_sets_are_fitted():
    design = latin_hypercube_design(100, 3, seed=5)
    y = ishigami(-np.pi + 2 * np.pi * design.unit)
    fit = fit_pce(design.unit, y, sparse=False)
    assert not fit.sparse and len(fit.alphas) <= 100 / 1.5
    again = fit_pce(design.unit, y)
    assert again.sparse and again.corrected_loo_error < fit.corrected_loo_error
    same = fit_pce(design.unit, y)  # deterministic: no random draw in the fit
    np.testing.assert_array_equal(same.coef, again.coef)
    np.testing.assert_array_equal(same.alphas, again.alphas)


def test_cross_validation_of_a_selection_and_the_percentile_gate():
    # The leave-one-out error of selected terms is computed after the selection saw every
    # sample; the cross-validation error selects anew without each fold. The check is the
    # gate's logic: the larger of the two must be below the threshold.
    from types import SimpleNamespace

    from plyrisk.methods.pce import _surrogate_percentiles

    design = latin_hypercube_design(100, 3, seed=5)
    y = ishigami(-np.pi + 2 * np.pi * design.unit)
    result = surrogate_indices(design.unit, y, names=["x1", "x2", "x3"], n_bootstrap=5, seed=1)
    full = fit_pce(design.unit, y, sparse=False)
    assert full.cross_validation_error == full.loo_error
    cv, loo = result.cross_validation_error, result.loo_error
    assert np.isfinite(cv) and result.largest_error == max(cv, loo)
    between = SimpleNamespace(pce_max_loo_error=(min(cv, loo) + max(cv, loo)) / 2, seed=1)
    q, status = _surrogate_percentiles(result, np.array([0.5]), between)
    assert q is None and status.startswith("refused") and "cross-validation error" in status
    above = SimpleNamespace(pce_max_loo_error=2 * max(cv, loo), seed=1)
    q, status = _surrogate_percentiles(result, np.array([0.5]), above)
    assert q is not None and status.startswith("computed")


def test_g_function_indices():
    # design size stated: 1024 Latin-hypercube samples, 8 inputs
    design = latin_hypercube_design(1024, 8, seed=5)
    names = [f"x{i}" for i in range(8)]
    result = surrogate_indices(design.unit, g_function(design.unit), names=names,
                               n_bootstrap=20, seed=1)
    first, total = g_indices()
    np.testing.assert_allclose(result.first, first, atol=TOL)
    np.testing.assert_allclose(result.total, total, atol=TOL)
    assert result.q_norm < 1.0  # the hyperbolic truncation was the better basis


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


def test_hyperbolic_basis_sizes():
    # Source: the total-degree set of order p in d inputs has C(d + p, p) terms; the q-norm
    # set keeps alpha with (sum alpha_i^q)^(1/q) <= p (Blatman & Sudret 2011, J. Comput. Phys.
    # 230, 2345-2367, eq. 23).
    assert len(hyperbolic_basis(3, 5)) == comb(8, 3)
    assert len(hyperbolic_basis(4, 15)) == comb(19, 4)
    basis = hyperbolic_basis(2, 2, 0.5)
    assert {tuple(a) for a in basis} == {(0, 0), (1, 0), (0, 1), (2, 0), (0, 2)}  # no (1, 1)
    assert tuple(basis[0]) == (0, 0) and list(basis.sum(axis=1)) == [0, 1, 1, 2, 2]
    assert hyperbolic_basis(6, 20, max_terms=100) is None
    with pytest.raises(ValueError, match="q_norm must lie in"):
        hyperbolic_basis(2, 2, 1.5)


def test_percentiles_from_the_surrogate():
    # Source: the sum of two independent uniform(0, 1) variables has the triangular
    # distribution on [0, 2] (Irwin-Hall, n = 2): quantile 2 - sqrt(2 (1 - p)) for p >= 1/2.
    design = latin_hypercube_design(64, 2, seed=4)
    fit = fit_pce(design.unit, design.unit.sum(axis=1))
    assert fit.loo_error < 1e-12
    q = surrogate_quantiles(fit, [0.5, 0.95], seed=1)
    np.testing.assert_allclose(q, [1.0, 2 - np.sqrt(0.1)], atol=2e-3)


def test_bad_confidence_is_rejected():
    with pytest.raises(ValueError, match="confidence must be in"):
        surrogate_indices(np.zeros((5, 1)), np.zeros(5), names=["x"], confidence=1.5, seed=0)


def test_too_few_samples_gives_none():
    assert surrogate_indices(np.random.default_rng(0).random((2, 3)), np.arange(2.0),
                             names=["a", "b", "c"], seed=0) is None
    assert fit_pce(np.zeros((10, 0)), np.arange(10.0)) is None


def test_pce_and_saltelli_agree_on_a_demo_stack_within_their_intervals(tmp_path):
    # Both estimate the same Sobol indices of the same physical model; the check is their
    # mutual consistency (common practice: two estimators agree within their combined
    # intervals), no value of the invented demo is a check value.
    from pathlib import Path

    import xarray as xr

    from plyrisk.pipeline.run import run_study
    from plyrisk.results.dataset import read_results
    from plyrisk.study.config import load_study

    demo = load_study(Path(__file__).resolve().parents[2] / "configs" / "small_demo.toml")
    saltelli = run_study(demo, samples=1024, quiet=True).analysis.scenarios[0]
    pce_run = run_study(demo, method="pce", samples=256, out_dir=tmp_path, quiet=True)
    pce = pce_run.analysis.scenarios[0]
    ref, grp = saltelli.indices["inner_surface_temperature"]
    for mine, theirs in ((pce.surrogate, ref), (pce.surrogate_groups, grp)):
        assert mine.names == theirs.names
        for k in ("first", "total"):
            gap = np.abs(getattr(mine, k) - getattr(theirs, k))
            allowed = getattr(mine, f"{k}_ci") + getattr(theirs, f"{k}_ci")
            assert np.all(gap <= allowed), (k, gap, allowed)
    ds = pce_run.dataset
    assert ds.attrs["method"] == "pce" and ds.attrs["design"] == "lhs"
    for name in ("sobol_first", "sobol_total_ci", "sobol_first_converged", "pce_loo_error",
                 "pce_quantile", "pce_quantile_status", "sobol_group_total"):
        assert ds[name].attrs["method"] == "pce", name
    for name in ("sobol_first", "sobol_total", "sobol_group_total_ci"):  # the one schema
        assert ds[name].attrs["estimator"] == "pce", name
        assert ds[name].dims[:2] == ("scenario", "output"), name
    ds = ds.isel(scenario=0)  # unswept: its one scenario
    np.testing.assert_array_equal(
        ds["sobol_total"].sel(output="inner_surface_temperature").values, pce.surrogate.total)
    assert ds["pce_loo_error"].item() == pytest.approx(pce.surrogate.loo_error)
    xr.testing.assert_identical(read_results(pce_run.path), pce_run.dataset)
