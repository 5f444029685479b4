"""Replicated Saltelli designs: R independently scrambled sequences, drawn by any row range.

Checked against scipy.stats.qmc.Sobol (reference library) scrambled by the numpy SeedSequence
spawn keys the design documents, and against SALib's estimators per replicate.
"""

from __future__ import annotations

import math
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest
from SALib.analyze import sobol as salib_analyze
from scipy.stats import qmc

from plyrisk.analysis.sobol import replicate_interval, sobol_indices
from plyrisk.design.sampling import DesignPlan, make_design, sobol_design
from plyrisk.propagate.evaluate import study_plan
from plyrisk.study.config import load_study
from tests.analysis.test_sobol import ishigami

ROOT = Path(__file__).resolve().parents[2]


def test_each_replicate_is_its_own_scrambled_sequence_interleaved_by_base_row():
    n, d, reps, seed = 32, 3, 4, 17
    design = sobol_design(n, d, seed=seed, replicates=reps)
    rows = design.unit.reshape(n, d + 2, d)
    for r in range(reps):
        # Source: scipy.stats.qmc.Sobol (reference library), scrambled by the generator of the
        # numpy SeedSequence with spawn key (r,) of the study seed
        rng = np.random.default_rng(np.random.SeedSequence(seed, spawn_key=(r,)))
        base = qmc.Sobol(d=2 * d, scramble=True, rng=rng).random(n // reps)
        np.testing.assert_array_equal(rows[r::reps, 0], base[:, :d])      # A
        np.testing.assert_array_equal(rows[r::reps, -1], base[:, d:])     # B
        ab = base[:, :d].copy()
        ab[:, 1] = base[:, d + 1]
        np.testing.assert_array_equal(rows[r::reps, 2], ab)               # AB_1
    np.testing.assert_array_equal(design.replicate_of_rows(),
                                  np.repeat(np.arange(n) % reps, d + 2))
    assert design.replicates == reps and design.base_samples == n


def test_one_replicate_is_the_single_sequence_design():
    np.testing.assert_array_equal(sobol_design(64, 3, seed=5, replicates=1).unit,
                                  sobol_design(64, 3, seed=5).unit)


@pytest.mark.parametrize("groups", [(), ((0, 1), (2, 3))])
def test_any_row_range_is_bit_identical_to_the_whole_design(groups):
    plan = DesignPlan("sobol", 64, 4, 21, groups=groups, replicates=8)
    whole = plan.design()
    n = plan.n_rows
    for start, stop in ((0, n), (0, 1), (3, 17), (n // 3, n // 2 + 1), (n - 7, n), (n, n)):
        unit, block = plan.rows(start, stop)
        np.testing.assert_array_equal(unit, whole.unit[start:stop])
        np.testing.assert_array_equal(block, whole.block[start:stop])


def test_doubling_extends_every_replicate_together():
    groups = ((0, 1),)
    whole = sobol_design(128, 3, seed=5, groups=groups, replicates=8)
    first = sobol_design(64, 3, seed=5, groups=groups, replicates=8)
    second = sobol_design(64, 3, seed=5, groups=groups, replicates=8, start=64)
    np.testing.assert_array_equal(np.vstack([first.unit, second.unit]), whole.unit)
    # each replicate's points of the doubled design are the first 16 of its sequence
    rows = whole.unit.reshape(128, -1, 3)
    rng = np.random.default_rng(np.random.SeedSequence(5, spawn_key=(3,)))
    base = qmc.Sobol(d=6, scramble=True, rng=rng).random(16)   # Source: scipy.stats.qmc
    np.testing.assert_array_equal(rows[3::8, 0], base[:, :3])


def test_studies_are_replicated_by_default_and_every_store_path_uses_the_plan():
    # the chunking, worker, store and resume tests (tests/propagate/test_scale.py) run this
    # study: they compare replicated designs bit for bit
    study = load_study(ROOT / "configs" / "small_demo.toml")
    assert study.analysis.replicates == 8 and study_plan(study).replicates == 8
    one = replace(study, analysis=replace(study.analysis, replicates=1))
    assert study_plan(one).replicates == 1


def test_indices_are_the_mean_of_salib_per_replicate_with_a_t_interval():
    design = sobol_design(256, 3, seed=3, replicates=8)
    y = ishigami(math.pi * (2.0 * design.unit - 1.0))
    ind, _ = sobol_indices(y, design, names="abc", confidence=0.9, seed=0)
    table = y.reshape(256, 5)
    per = []
    for r in range(8):
        # Source: SALib.analyze.sobol.analyze (reference library) on replicate r alone
        res = salib_analyze.analyze({"num_vars": 3, "names": list("abc")},
                                    table[r::8].reshape(-1), calc_second_order=False,
                                    num_resamples=2, seed=1)
        per.append((res["S1"], res["ST"]))
    s1 = np.array([p[0] for p in per])
    st = np.array([p[1] for p in per])
    np.testing.assert_allclose(ind.first, s1.mean(0), rtol=0, atol=1e-14)
    np.testing.assert_allclose(ind.total, st.mean(0), rtol=0, atol=1e-14)
    # Source: Student t quantile with 7 degrees of freedom at 0.95: 1.894579 (scipy.stats.t)
    np.testing.assert_allclose(ind.total_ci, 1.894579 * st.std(0, ddof=1) / math.sqrt(8),
                               rtol=1e-6)
    assert ind.interval == "replicates" and ind.replicates == 8


def test_non_finite_rows_are_dropped_within_their_replicate():
    design = sobol_design(64, 3, seed=6, replicates=4)
    y = ishigami(math.pi * (2.0 * design.unit - 1.0))
    y[5 * 5 + 2] = np.nan          # base row 5: replicate 1
    ind, _ = sobol_indices(y, design, names="abc", seed=0)
    assert (ind.base_samples_used, ind.dropped_rows) == (63, 1)
    keep = np.ones(64, dtype=bool)
    keep[5] = False
    rows = y.reshape(64, 5)
    ref = salib_analyze.analyze({"num_vars": 3, "names": list("abc")},   # Source: SALib
                                rows[keep & (np.arange(64) % 4 == 1)].reshape(-1),
                                calc_second_order=False, num_resamples=2, seed=1)
    others = [salib_analyze.analyze({"num_vars": 3, "names": list("abc")},
                                    rows[np.arange(64) % 4 == r].reshape(-1),
                                    calc_second_order=False, num_resamples=2, seed=1)["S1"]
              for r in (0, 2, 3)]
    np.testing.assert_allclose(ind.first, np.mean([ref["S1"], *others], axis=0), atol=1e-14)


def test_replicate_interval_doctest_and_validation():
    import doctest

    import plyrisk.analysis.sobol as sobol
    import plyrisk.analysis.statistics as statistics

    for module in (sobol, statistics):
        assert doctest.testmod(module).failed == 0
    with pytest.raises(ValueError, match="at least 2 replicates, got 1"):
        replicate_interval([0.3], 0.9)


@pytest.mark.parametrize(("call", "match"), [
    (lambda: sobol_design(100, 2, seed=0, replicates=8),
     r"base_samples must be replicates \(8\) x a power of 2 .*got 100; nearest: 64 or 128"),
    (lambda: sobol_design(4, 2, seed=0, replicates=8),
     r"replicates \(8\) x a power of 2 .*got 4; nearest: 8"),
    (lambda: sobol_design(64, 2, seed=0, replicates=0), "replicates must be at least 1, got 0"),
    (lambda: sobol_design(64, 2, seed=0, replicates=8, start=12),
     r"start must be a multiple of replicates \(8\), got 12"),
    (lambda: make_design("lhs", 64, 2, seed=0, replicates=8),
     "replicates apply to the 'sobol' method only, got method 'lhs'"),
    (lambda: DesignPlan("random", 64, 2, 0, replicates=4),
     "replicates apply to the 'sobol' method only, got method 'random'"),
])
def test_validators(call, match):
    with pytest.raises(ValueError, match=match):
        call()
