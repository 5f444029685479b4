"""Sobol' indices against analytic results of published test functions and against SALib."""

import math

import numpy as np
import pytest
from SALib.analyze import sobol as salib_analyze

from plyrisk.analysis.sobol import RankedIndex, SobolIndices, _salib_seed, rank, sobol_indices
from plyrisk.design.sampling import latin_hypercube_design, sobol_design
from plyrisk.study.distributions import make_distribution

TOL = 0.02  # accuracy demanded of the estimators at the stated N


def ishigami(x, a=7.0, b=0.1):
    # Source: Ishigami & Homma (1990), Proc. ISUMA '90, 398-403
    return np.sin(x[:, 0]) + a * np.sin(x[:, 1]) ** 2 + b * x[:, 2] ** 4 * np.sin(x[:, 0])


def ishigami_indices(a=7.0, b=0.1):
    """Closed-form S1 and ST. Source: Sobol' & Levitan (1999), Comput. Phys. Commun. 117, 52-61;
    Saltelli et al. (2008), Global Sensitivity Analysis: The Primer."""
    pi4, pi8 = math.pi**4, math.pi**8
    v1 = 0.5 * (1 + b * pi4 / 5) ** 2
    v2 = a * a / 8
    v13 = 8 * b * b * pi8 / 225
    v = v1 + v2 + v13
    return np.array([v1, v2, 0.0]) / v, np.array([v1 + v13, v2, v13]) / v


def test_ishigami_closed_forms_reproduce_printed_values():
    s1, st = ishigami_indices()
    # Source: Saltelli et al. (2008), Global Sensitivity Analysis: The Primer (4 decimals)
    np.testing.assert_allclose(s1, [0.3139, 0.4424, 0.0], atol=5e-5)
    np.testing.assert_allclose(st, [0.5576, 0.4424, 0.2437], atol=5e-5)


def _uniform_inputs(design):
    u = make_distribution("uniform", {"low": -math.pi, "high": math.pi})
    return u.ppf(design.unit)


def test_ishigami_indices_within_tolerance():
    design = sobol_design(2**13, 3, seed=2024)
    y = ishigami(_uniform_inputs(design))
    ind, grouped = sobol_indices(y, design, names=("x1", "x2", "x3"), seed=1)
    s1, st = ishigami_indices()
    np.testing.assert_allclose(ind.first, s1, atol=TOL)
    np.testing.assert_allclose(ind.total, st, atol=TOL)
    assert grouped is None
    assert ind.names == ("x1", "x2", "x3") and ind.confidence == 0.95
    assert (ind.base_samples_used, ind.dropped_rows, ind.constant_output) == (2**13, 0, False)
    assert np.all(ind.first_ci > 0) and np.all(ind.total_ci > 0)


COEF = np.array([1.0, 2.0, 3.0, 0.5])
SD = np.array([1.0, 0.8, 0.3, 2.0])


def _linear(design):
    x = np.column_stack([
        make_distribution("normal", {"mean": 10.0 * i, "sd": s}).ppf(design.unit[:, i])
        for i, s in enumerate(SD)])
    return x @ COEF


def test_linear_model_indices_and_groups():
    # Source: additive linear model, S_i = ST_i = a_i^2 s_i^2 / sum_j a_j^2 s_j^2
    # (Saltelli et al. 2008, Global Sensitivity Analysis: The Primer); group indices of an
    # additive model are sums of member indices (same source).
    share = COEF**2 * SD**2 / np.sum(COEF**2 * SD**2)
    groups = [(0, 1), (2,)]  # parameter 3 in no group
    design = sobol_design(2**12, 4, seed=77, groups=groups)
    ind, grp = sobol_indices(_linear(design), design, names=list("abcd"),
                             group_names=("layer1", "layer2"), seed=3)
    np.testing.assert_allclose(ind.first, share, atol=TOL)
    np.testing.assert_allclose(ind.total, share, atol=TOL)
    assert grp is not None and grp.names == ("layer1", "layer2")
    expected = [share[0] + share[1], share[2]]
    np.testing.assert_allclose(grp.first, expected, atol=TOL)
    np.testing.assert_allclose(grp.total, expected, atol=TOL)
    # A singleton group reuses the parameter's own block: same estimate up to the centring of
    # a different set of rows inside SALib (rounding level).
    assert grp.first[1] == pytest.approx(ind.first[2], abs=1e-6)
    assert grp.total[1] == pytest.approx(ind.total[2], abs=1e-6)


def test_default_group_names_join_members():
    design = sobol_design(64, 3, seed=1, groups=[(0, 2)])
    _, grp = sobol_indices(_uniform_inputs(design)[:, 0] + design.unit[:, 2], design,
                           names=("k", "L", "eps"), seed=0)
    assert grp is not None and grp.names == ("k+eps",)


def test_matches_salib_directly():
    from SALib.sample import sobol as salib_sample

    problem = {"num_vars": 3, "names": ["a", "b", "c"], "bounds": [[-math.pi, math.pi]] * 3}
    x = salib_sample.sample(problem, 512, calc_second_order=False, seed=5)
    y = ishigami(x)
    # Source: SALib.analyze.sobol.analyze (reference library)
    ref = salib_analyze.analyze(problem, y, calc_second_order=False, num_resamples=100,
                                conf_level=0.9, seed=_salib_seed(4))
    design = sobol_design(512, 3, seed=5)
    ind, _ = sobol_indices(y, design, names="abc", n_bootstrap=100, confidence=0.9, seed=4)
    # the same estimators and the same resamples, summed in another order: rounding apart
    for ours, key in ((ind.first, "S1"), (ind.total, "ST")):
        np.testing.assert_allclose(ours, ref[key], rtol=0, atol=1e-12)
    for ours, key in ((ind.first_ci, "S1_conf"), (ind.total_ci, "ST_conf")):
        np.testing.assert_allclose(ours, ref[key], rtol=0, atol=1e-10)


def test_non_finite_rows_dropped_whole():
    design = sobol_design(256, 3, seed=6)
    y = ishigami(_uniform_inputs(design))
    step = 5
    bad_base = [3, 50, 51, 200]
    y_bad = y.copy()
    y_bad[3 * step + 0] = np.nan       # an A row
    y_bad[50 * step + 2] = np.inf      # an AB row
    y_bad[51 * step + 4] = np.nan      # a B row
    y_bad[200 * step + 1] = -np.inf
    ind, _ = sobol_indices(y_bad, design, names="abc", seed=9)
    assert (ind.base_samples_used, ind.dropped_rows) == (252, 4)
    keep = np.setdiff1d(np.arange(256), bad_base)
    sub = y.reshape(256, step)[keep].reshape(-1)
    # Source: SALib.analyze.sobol.analyze on the same rows (reference library)
    ref = salib_analyze.analyze({"num_vars": 3, "names": list("abc")}, sub,
                                calc_second_order=False, num_resamples=200, seed=_salib_seed(9))
    np.testing.assert_allclose(ind.first, ref["S1"], rtol=0, atol=1e-12)
    np.testing.assert_allclose(ind.total_ci, ref["ST_conf"], rtol=0, atol=1e-10)


def test_constant_output_gives_nan_and_flag():
    design = sobol_design(64, 2, seed=0, groups=[(0, 1)])
    ind, grp = sobol_indices(np.full(design.n_rows, 310.15), design, names="ab", seed=0)
    assert ind.constant_output and grp is not None and grp.constant_output
    assert np.all(np.isnan(ind.first)) and np.all(np.isnan(ind.total_ci))


def test_seed_reproducible_including_zero():
    design = sobol_design(128, 3, seed=1)
    y = ishigami(_uniform_inputs(design))
    a, _ = sobol_indices(y, design, names="abc", seed=0)
    b, _ = sobol_indices(y, design, names="abc", seed=0)
    c, _ = sobol_indices(y, design, names="abc", seed=1)
    np.testing.assert_array_equal(a.first_ci, b.first_ci)
    assert not np.array_equal(a.first_ci, c.first_ci)


@pytest.mark.parametrize(("kwargs", "match"), [
    ({"names": "ab"}, r"names must give one name per parameter \(3\), got 2"),
    ({"names": "abc", "group_names": ("g",)}, r"one name per group \(0\), got 1"),
    ({"names": "abc", "n_bootstrap": 1}, "n_bootstrap must be an integer >= 2, got 1"),
    ({"names": "abc", "confidence": 1.0}, r"confidence must lie in \(0, 1\), got 1.0"),
    ({"names": "abc", "seed": -2}, "seed must be a non-negative integer, got -2"),
])
def test_validators(kwargs, match):
    design = sobol_design(16, 3, seed=0)
    y = ishigami(_uniform_inputs(design))
    with pytest.raises(ValueError, match=match):
        sobol_indices(y, design, **{"seed": 0, **kwargs})


def test_validators_design_and_shape():
    lhs = latin_hypercube_design(16, 3, seed=0)
    with pytest.raises(ValueError, match="need a 'sobol' design, got method 'lhs'"):
        sobol_indices(np.zeros(16), lhs, names="abc", seed=0)
    design = sobol_design(16, 3, seed=0)
    with pytest.raises(ValueError, match=r"one value per design row, shape \(80,\)"):
        sobol_indices(np.zeros(79), design, names="abc", seed=0)
    with pytest.raises(ValueError, match="only 1 of 16 base rows have finite outputs"):
        y = np.full(80, np.nan)
        y[:5] = 1.0
        sobol_indices(y, design, names="abc", seed=0)


def _indices(total, total_ci, first_ci, used=1024, dropped=0):
    n = len(total)
    return SobolIndices(tuple("abcd"[:n]), np.full(n, 0.1), np.array(first_ci, float),
                        np.array(total, float), np.array(total_ci, float), 0.95, used, dropped)


def test_rank_orders_and_flags():
    ranked = rank(_indices([0.2, 0.7, np.nan, 0.1], [0.01, 0.1, np.nan, 0.02],
                           [0.01, 0.02, np.nan, 0.06]), ci_threshold=0.05)
    assert [r.name for r in ranked] == ["b", "a", "d", "c"]
    by = {r.name: r for r in ranked}
    assert by["a"] == RankedIndex("a", 0.1, 0.01, 0.2, 0.01, True, None)
    # (0.1 / 0.05)^2 * 1024 = 4096, already a power of 2
    assert not by["b"].converged and by["b"].suggested_base_samples == 4096
    # (0.06 / 0.05)^2 * 1024 = 1474.6 -> 2048
    assert not by["d"].converged and by["d"].suggested_base_samples == 2048
    assert not by["c"].converged and by["c"].suggested_base_samples is None


def test_rank_counts_dropped_rows_in_suggestion():
    ranked = rank(_indices([0.5], [0.1], [0.0], used=1000, dropped=24), ci_threshold=0.05)
    assert ranked[0].suggested_base_samples == 4096
    with pytest.raises(ValueError, match="ci_threshold must be positive, got 0"):
        rank(_indices([0.5], [0.1], [0.0]), ci_threshold=0.0)


def test_an_index_outside_zero_one_beyond_its_interval_is_not_resolved():
    # Source: Saltelli et al. (2008), Global Sensitivity Analysis, sec. 4.2 — first-order and
    # total Sobol indices are variance shares in [0, 1]
    from plyrisk.analysis.sobol import RankedIndex, not_resolved
    from plyrisk.text.indices import ranked_line

    assert not_resolved(1.615, 0.054)        # the 50-layer case: 1.615 ± 0.054
    assert not not_resolved(1.03, 0.05)      # above 1 within its interval: noise, WIDE at most
    assert not_resolved(-0.3, 0.1) and not not_resolved(-0.03, 0.05)
    item = RankedIndex("layer 7.conductivity", 0.2, 0.05, 1.615, 0.054, False, 0, True, False)
    line = ranked_line(1, item)
    assert "1.615 ± 0.054 not resolved: more samples" in line
    assert "WIDE" not in line.split("first")[0]


def test_grouped_bootstrap_matches_salib_groups():
    design = sobol_design(256, 4, seed=8, groups=[(0, 1), (2,)])  # d in no group
    y = ishigami(_uniform_inputs(design)) + 0.3 * _uniform_inputs(design)[:, 3]
    _, grp = sobol_indices(y, design, names="abcd", group_names=("ab", "c"), seed=11,
                           n_bootstrap=150)
    # SALib's grouped analysis of the same rows: columns A, AB_(a,b), AB_c, AB_d, B in the
    # order of first appearance of the labels (g0, g1, p3)
    step = design.n_rows // 256
    codes = [int(c) for c in design.block[:step]]
    cols = [codes.index(k) for k in (0, 2 + 4, 2 + 2, 2 + 3, 1)]
    sub = y.reshape(256, step)[:, cols].reshape(-1)
    # Source: SALib.analyze.sobol.analyze with groups (reference library)
    ref = salib_analyze.analyze({"num_vars": 4, "names": list("abcd"),
                                 "groups": ["g0", "g0", "g1", "p3"]}, sub,
                                calc_second_order=False, num_resamples=150, seed=_salib_seed(11))
    np.testing.assert_allclose(grp.first, ref["S1"][:2], rtol=0, atol=1e-12)
    np.testing.assert_allclose(grp.total, ref["ST"][:2], rtol=0, atol=1e-12)
    np.testing.assert_allclose(grp.first_ci, ref["S1_conf"][:2], rtol=0, atol=1e-10)
    np.testing.assert_allclose(grp.total_ci, ref["ST_conf"][:2], rtol=0, atol=1e-10)


def test_bootstrap_intervals_agree_with_salib_statistically():
    # independent resamples (other seeds) estimate the same bootstrap spread: with 400
    # resamples each half-width carries ~3.5 % sampling error, so 20 % is a loose bound
    design = sobol_design(1024, 3, seed=12)
    y = ishigami(_uniform_inputs(design))
    ind, _ = sobol_indices(y, design, names="abc", n_bootstrap=400, seed=21)
    # Source: SALib.analyze.sobol.analyze (reference library), another resample seed
    ref = salib_analyze.analyze({"num_vars": 3, "names": list("abc")}, y,
                                calc_second_order=False, num_resamples=400, seed=987654)
    np.testing.assert_allclose(ind.first_ci, ref["S1_conf"], rtol=0.2)
    np.testing.assert_allclose(ind.total_ci, ref["ST_conf"], rtol=0.2)


def test_bootstrap_independent_of_the_resample_blocks(monkeypatch):
    import plyrisk.analysis.sobol as sobol_module

    design = sobol_design(512, 3, seed=13)
    y = ishigami(_uniform_inputs(design))
    whole, _ = sobol_indices(y, design, names="abc", seed=5)
    monkeypatch.setattr(sobol_module, "BOOTSTRAP_BLOCK_VALUES", 512 * 7)  # blocks of 7 resamples
    blocks, _ = sobol_indices(y, design, names="abc", seed=5)
    np.testing.assert_allclose(blocks.first_ci, whole.first_ci, rtol=1e-13)
    np.testing.assert_allclose(blocks.total_ci, whole.total_ci, rtol=1e-13)
