"""Morris one-at-a-time trajectories in the open unit hypercube (the design of a screening).

``SALib.sample.morris.sample`` draws ``r`` trajectories of ``d + 1`` points on a grid of ``p``
levels ``k / (p - 1)`` in [0, 1] (Morris 1991), seeded with a ``numpy.random.Generator``. The
grid includes 0 and 1, where the inverse CDF of an unbounded input is infinite, so each level is
moved to the middle of its probability cell, ``u = (k + 1/2) / p``: the p levels are equally
likely under each input's distribution and the design stays inside the open unit hypercube.
The estimators are in :mod:`plyrisk.analysis.morris`.

References
----------
.. [M1991] M. D. Morris, "Factorial sampling plans for preliminary computational
   experiments", Technometrics 33 (1991) 161-174.
"""

from __future__ import annotations

import numpy as np

from plyrisk.design.sampling import Design

__all__ = ["morris_design", "step_size"]


def _grid_step(levels: int) -> float:
    return levels / (2.0 * (levels - 1))


def _check_levels(levels: int) -> int:
    if isinstance(levels, bool) or not isinstance(levels, int | np.integer) or levels < 2 \
            or levels % 2:
        raise ValueError(f"levels must be an even integer >= 2, got {levels!r}")
    return int(levels)


def morris_design(trajectories: int, n_params: int, *, seed: int, levels: int = 4) -> Design:
    """Morris trajectories in the open unit hypercube.

    Parameters
    ----------
    trajectories
        Number of trajectories r, >= 2 [-].
    n_params
        Number of parameters d, >= 1 [-].
    seed
        Non-negative seed of the ``numpy.random.Generator`` handed to SALib [-].
    levels
        Even number of grid levels p [-].

    Returns
    -------
    Design
        ``r (d + 1)`` rows, trajectory after trajectory; ``method = "morris"``,
        ``base_samples = r``; blocks are all 0.
    """
    levels = _check_levels(levels)
    if isinstance(trajectories, bool) or not isinstance(trajectories, int | np.integer) \
            or trajectories < 2:
        raise ValueError(f"trajectories must be an integer >= 2, got {trajectories!r}")
    if isinstance(n_params, bool) or not isinstance(n_params, int | np.integer) or n_params < 1:
        raise ValueError(f"n_params must be an integer >= 1, got {n_params!r}")
    if isinstance(seed, bool) or not isinstance(seed, int | np.integer) or seed < 0:
        raise ValueError(f"seed must be a non-negative integer, got {seed!r}")
    problem = {"num_vars": int(n_params), "names": [f"x{i}" for i in range(n_params)],
               "bounds": [[0.0, 1.0]] * int(n_params)}
    from SALib.sample import morris as salib_morris_sample  # heavy: imported when drawn

    grid = salib_morris_sample.sample(problem, int(trajectories), num_levels=levels,
                                      seed=np.random.default_rng(int(seed)))
    unit = (np.rint(grid * (levels - 1)) + 0.5) / levels
    unit.setflags(write=False)
    block = np.zeros(unit.shape[0], dtype=np.int64)
    block.setflags(write=False)
    return Design(unit, block, "morris", int(trajectories), ())


def _grid(design: Design, levels: int) -> np.ndarray:
    """SALib's grid coordinates k / (p - 1) of a Morris design."""
    return np.rint(design.unit * levels - 0.5) / (levels - 1)


def step_size(levels: int) -> float:
    """Morris step Delta on SALib's grid, ``p / (2 (p - 1))`` [-]."""
    return _grid_step(_check_levels(levels))
