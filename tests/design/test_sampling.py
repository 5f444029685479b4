"""Unit-hypercube designs against SALib and scipy.stats.qmc."""

import numpy as np
import pytest
from SALib.sample import sobol as salib_sobol
from scipy.stats import qmc

from plyrisk.design.sampling import (
    RANDOM_BLOCK_ROWS,
    DesignPlan,
    latin_hypercube_design,
    make_design,
    random_design,
    sobol_design,
)


def _problem(d):
    return {"num_vars": d, "names": [f"x{i}" for i in range(d)], "bounds": [[0.0, 1.0]] * d}


@pytest.mark.parametrize(("n", "d", "seed"), [(64, 1, 0), (256, 3, 7), (1024, 6, 12345)])
def test_sobol_design_bit_identical_to_salib(n, d, seed):
    # Source: SALib.sample.sobol.sample (reference library), calc_second_order=False
    ref = salib_sobol.sample(_problem(d), n, calc_second_order=False, seed=seed)
    assert np.all((ref > 0.0) & (ref < 1.0))  # no open-cube correction applied here
    design = sobol_design(n, d, seed=seed)
    assert design.unit.shape == ref.shape == (n * (d + 2), d)
    np.testing.assert_array_equal(design.unit, ref)
    assert design.method == "sobol" and design.base_samples == n and design.groups == ()


def test_sobol_layout_and_blocks():
    n, d = 8, 3
    design = sobol_design(n, d, seed=3)
    base = qmc.Sobol(d=2 * d, scramble=True, seed=3).random(n)  # Source: scipy.stats.qmc
    a, b = base[:, :d], base[:, d:]
    rows = design.unit.reshape(n, d + 2, d)
    np.testing.assert_array_equal(design.block[: d + 2], [0, 2, 3, 4, 1])
    np.testing.assert_array_equal(rows[:, 0], a)
    np.testing.assert_array_equal(rows[:, -1], b)
    for j in range(d):
        expected = a.copy()
        expected[:, j] = b[:, j]
        np.testing.assert_array_equal(rows[:, 1 + j], expected)
    np.testing.assert_array_equal(design.independent_rows(),
                                  np.flatnonzero(np.isin(design.block, (0, 1))))
    assert design.independent_rows().size == 2 * n


def test_sobol_groups_add_blocks_and_skip_singletons():
    n, d = 4, 5
    groups = [(0, 1), (2,), (3, 4)]
    design = sobol_design(n, d, seed=5, groups=groups)
    plain = sobol_design(n, d, seed=5)
    step = d + 2 + 2  # two groups with more than one member
    assert design.unit.shape == (n * step, d)
    assert design.groups == ((0, 1), (2,), (3, 4))
    np.testing.assert_array_equal(design.block[:step], [0, 2, 3, 4, 5, 6, 7, 9, 1])
    rows = design.unit.reshape(n, step, d)
    prow = plain.unit.reshape(n, d + 2, d)
    np.testing.assert_array_equal(rows[:, : d + 1], prow[:, : d + 1])  # A and AB_j unchanged
    np.testing.assert_array_equal(rows[:, -1], prow[:, -1])
    a, b = prow[:, 0], prow[:, -1]
    np.testing.assert_array_equal(rows[:, d + 1], np.column_stack([b[:, :2], a[:, 2:]]))
    np.testing.assert_array_equal(rows[:, d + 2], np.column_stack([a[:, :3], b[:, 3:]]))


def test_sobol_grouped_layout_matches_salib_groups():
    # SALib's own grouped sampler, with every parameter in a group, gives the same A, AB_g, B.
    problem = {**_problem(4), "groups": ["g0", "g0", "g1", "g1"]}
    ref = salib_sobol.sample(problem, 16, calc_second_order=False, seed=9)  # Source: SALib
    design = sobol_design(16, 4, seed=9, groups=[(0, 1), (2, 3)])
    rows = design.unit.reshape(16, 8, 4)
    np.testing.assert_array_equal(rows[:, [0, 5, 6, 7]].reshape(-1, 4), ref)


@pytest.mark.parametrize("method", ["sobol", "lhs", "random"])
def test_same_seed_identical_different_seed_differs(method):
    first = make_design(method, 64, 4, seed=11)
    again = make_design(method, 64, 4, seed=11)
    other = make_design(method, 64, 4, seed=12)
    np.testing.assert_array_equal(first.unit, again.unit)
    assert not np.array_equal(first.unit, other.unit)
    assert np.all((first.unit > 0.0) & (first.unit < 1.0))
    assert not first.unit.flags.writeable


def test_lhs_matches_scipy_and_is_latin():
    design = latin_hypercube_design(50, 3, seed=4)
    # Source: scipy.stats.qmc.LatinHypercube (reference library)
    ref = qmc.LatinHypercube(3, rng=np.random.default_rng(4)).random(50)
    np.testing.assert_array_equal(design.unit, ref)
    # Source: McKay, Beckman & Conover (1979), Technometrics 21, 239-245: one point per stratum
    for col in design.unit.T:
        np.testing.assert_array_equal(np.sort(np.floor(col * 50)), np.arange(50))
    assert design.method == "lhs" and design.base_samples == 50
    np.testing.assert_array_equal(design.independent_rows(), np.arange(50))
    for opt in ("random-cd", "lloyd"):
        optimized = latin_hypercube_design(20, 2, seed=4, optimization=opt)
        ref = qmc.LatinHypercube(2, optimization=opt, rng=np.random.default_rng(4)).random(20)
        np.testing.assert_array_equal(optimized.unit, ref)


def test_random_matches_numpy_generator():
    design = random_design(30, 2, seed=8)
    # Source: numpy.random.SeedSequence spawn keys (the first block of the design is key 0)
    ref = np.random.default_rng(np.random.SeedSequence(8, spawn_key=(0,))).random((30, 2))
    np.testing.assert_array_equal(design.unit, ref)
    np.testing.assert_array_equal(design.block, np.zeros(30))


@pytest.mark.parametrize(("call", "match"), [
    (lambda: sobol_design(1000, 2, seed=0),
     "base_samples must be a power of 2 for a Sobol' design, got 1000; nearest: 512 or 1024"),
    (lambda: sobol_design(0, 2, seed=0), "base_samples must be at least 1, got 0"),
    (lambda: sobol_design(8, 0, seed=0), "n_params must be at least 1, got 0"),
    (lambda: sobol_design(8, 2, seed=-1), "seed must be at least 0, got -1"),
    (lambda: sobol_design(8, 2, seed=1.5), "seed must be an integer, got 1.5"),
    (lambda: sobol_design(8, 3, seed=0, groups=[(0, 3)]),
     "groups.0. holds parameter index 3; valid: 0 to 2"),
    (lambda: sobol_design(8, 3, seed=0, groups=[(0, 1), (1, 2)]),
     "parameter index 1 appears in more than one group"),
    (lambda: sobol_design(8, 3, seed=0, groups=[(0, 0)]), "appears in more than one group"),
    (lambda: sobol_design(8, 3, seed=0, groups=[()]), "groups.0. is empty"),
    (lambda: make_design("halton", 8, 2, seed=0),
     "unknown design method 'halton'; valid: sobol, lhs, random"),
    (lambda: make_design("lhs", 8, 2, seed=0, groups=[(0, 1)]),
     "groups apply to the 'sobol' method only"),
    (lambda: make_design("sobol", 8, 2, seed=0, optimization="lloyd"),
     "optimization applies to the 'lhs' method only"),
    (lambda: latin_hypercube_design(8, 2, seed=0, optimization="cd"),
     "unknown Latin hypercube optimization 'cd'; valid: None, 'random-cd', 'lloyd'"),
    (lambda: latin_hypercube_design(8, 1, seed=0, optimization="lloyd"),
     "optimization 'lloyd' needs at least 2 parameters, got 1"),
    (lambda: random_design(0, 2, seed=0), "samples must be at least 1, got 0"),
])
def test_validators(call, match):
    with pytest.raises(ValueError, match=match):
        call()


@pytest.mark.parametrize(("method", "samples", "groups"), [
    ("sobol", 64, ((0, 1), (2, 3))),
    ("sobol", 32, ()),
    ("random", 2 * RANDOM_BLOCK_ROWS + 5, ()),
    ("lhs", 50, ()),
])
def test_plan_rows_equal_the_same_rows_of_the_whole_design(method, samples, groups):
    plan = DesignPlan(method, samples, 4, 21, groups=groups)
    whole = plan.design()
    assert plan.n_rows == whole.n_rows
    n = plan.n_rows
    for start, stop in ((0, n), (0, 1), (3, 17), (n // 3, n // 2 + 1), (n - 7, n), (n, n)):
        unit, block = plan.rows(start, stop)
        np.testing.assert_array_equal(unit, whole.unit[start:stop])
        np.testing.assert_array_equal(block, whole.block[start:stop])


def test_sobol_start_extends_the_same_sequence():
    first = sobol_design(64, 3, seed=5, groups=((0, 1),))
    second = sobol_design(64, 3, seed=5, groups=((0, 1),), start=64)
    doubled = sobol_design(128, 3, seed=5, groups=((0, 1),))
    np.testing.assert_array_equal(np.vstack([first.unit, second.unit]), doubled.unit)


def test_plan_rejects_a_range_outside_the_design():
    plan = DesignPlan("random", 10, 2, 0)
    with pytest.raises(ValueError, match=r"row range \[5, 11\) is outside the design's 10 rows"):
        plan.rows(5, 11)
    with pytest.raises(ValueError, match="unknown design method 'halton'; valid: sobol, lhs"):
        DesignPlan("halton", 10, 2, 0)
