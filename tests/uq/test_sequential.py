"""Sequential growth of a Saltelli study: designs that extend one sequence, runs reused."""

import numpy as np
from scipy.stats import qmc

from uq.sampling import sobol_design


def test_scipy_sobol_prefix_and_fast_forward():
    # Source: scipy.stats.qmc.Sobol (reference library): one scrambled sequence, drawn in one
    # call or in two, or skipped with fast_forward, gives the same points.
    whole = qmc.Sobol(d=6, scramble=True, seed=4).random(16)
    np.testing.assert_array_equal(whole[:8], qmc.Sobol(d=6, scramble=True, seed=4).random(8))
    engine = qmc.Sobol(d=6, scramble=True, seed=4)
    engine.fast_forward(8)
    np.testing.assert_array_equal(whole[8:], engine.random(8))


def test_design_of_2n_base_rows_is_the_n_design_and_its_continuation():
    groups = [(0, 1), (2,), (3, 4)]
    whole = sobol_design(32, 5, seed=9, groups=groups)
    first = sobol_design(16, 5, seed=9, groups=groups)
    second = sobol_design(16, 5, seed=9, groups=groups, start=16)
    np.testing.assert_array_equal(whole.unit, np.vstack([first.unit, second.unit]))
    np.testing.assert_array_equal(whole.block, np.concatenate([first.block, second.block]))
    np.testing.assert_array_equal(sobol_design(16, 5, seed=9, groups=groups, start=0).unit,
                                  first.unit)
