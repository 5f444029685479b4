"""Morris elementary-effects screening: trajectories, mu*, sigma and which inputs may be fixed.

Design
------
``SALib.sample.morris.sample`` draws ``r`` one-at-a-time trajectories of ``d + 1`` points on a
grid of ``p`` levels ``k / (p - 1)`` in [0, 1] (Morris 1991), seeded with a
``numpy.random.Generator``. The grid includes 0 and 1, where the inverse CDF of an unbounded
input is infinite, so each level is moved to the middle of its probability cell,
``u = (k + 1/2) / p``: the p levels are equally likely under each input's distribution and the
design stays inside the open unit hypercube (a linear map, so elementary effects keep their
ranking; the measures below are per SALib grid step).

Measures (Morris 1991; Campolongo, Cariboni & Saltelli 2007)
------------------------------------------------------------
For every trajectory and input ``i`` the elementary effect is
``EE_i = (y(x + Delta e_i) - y(x)) / Delta`` with ``Delta = p / (2 (p - 1))``;
``mu* = mean |EE_i|`` (the screening measure), ``mu = mean EE_i`` and ``sigma = sd EE_i``
(non-linearity or interactions). ``mu*`` carries a bootstrap interval over trajectories (SALib).
Units: those of the output per grid step (the grid is on the probability scale, so inputs are
comparable whatever their units).

An input is *safe to fix at nominal* when both the upper end of its mu* interval and its
sigma lie below ``threshold`` times the largest mu*; mu* is *converged* when its interval
half-width is at most ``ci_threshold`` times the largest mu*.

References
----------
.. [M1991] M. D. Morris, "Factorial sampling plans for preliminary computational
   experiments", Technometrics 33 (1991) 161-174.
.. [CCS2007] F. Campolongo, J. Cariboni, A. Saltelli, "An effective screening design for
   sensitivity analysis of large models", Environ. Model. Softw. 22 (2007) 1509-1518.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from SALib.analyze import morris as salib_morris

from plyrisk.design.morris import _check_levels, _grid
from plyrisk.design.sampling import Design

__all__ = ["MorrisIndices", "morris_indices", "safe_to_fix"]


@dataclass(frozen=True, eq=False)
class MorrisIndices:
    """Morris measures of one output.

    Attributes
    ----------
    names
        Parameter names [-].
    mu, mu_star, mu_star_ci, sigma
        Mean, mean absolute value (with its bootstrap half-width) and standard deviation of
        the elementary effects [output unit].
    confidence
        Level of the mu* intervals [-].
    trajectories_used, dropped_trajectories
        Trajectories used, and left out because a run in them did not converge [-].
    constant_output
        True when every kept output was equal: all measures are zero.
    """

    names: tuple[str, ...]
    mu: np.ndarray
    mu_star: np.ndarray
    mu_star_ci: np.ndarray
    sigma: np.ndarray
    confidence: float
    trajectories_used: int
    dropped_trajectories: int
    constant_output: bool = False

    def converged(self, ci_threshold: float) -> np.ndarray:
        """mu* half-width at most ``ci_threshold`` times the largest mu* [-].

        Parameters
        ----------
        ci_threshold
            Relative half-width threshold (``index_ci_threshold``) [-].
        """
        scale = float(np.max(self.mu_star)) if self.mu_star.size else 0.0
        if scale == 0.0:
            return np.ones(len(self.names), dtype=bool)
        return self.mu_star_ci <= ci_threshold * scale

    def order(self) -> np.ndarray:
        """Parameter indices by mu*, largest first (sigma breaks ties) [-]."""
        return np.lexsort((-self.sigma, -self.mu_star))


def morris_indices(y: np.ndarray, design: Design, *, names: Sequence[str], levels: int = 4,
                   n_bootstrap: int = 200, confidence: float = 0.95,
                   seed: int) -> MorrisIndices:
    """mu, mu* (with a bootstrap interval) and sigma of one output on a Morris design.

    Parameters
    ----------
    y
        Output per design row, NaN where the model did not converge [output unit].
    design
        The ``morris`` design the output was evaluated on [-].
    names
        One name per parameter [-].
    levels
        The design's grid levels [-].
    n_bootstrap
        Bootstrap resamples of the trajectories for the mu* interval, >= 2 [-].
    confidence
        Level of the interval, in (0, 1) [-].
    seed
        Non-negative seed of the bootstrap generator [-].

    Returns
    -------
    MorrisIndices
        Trajectories with a non-finite output are left out whole and counted.
    """
    if design.method != "morris":
        raise ValueError(f"Morris measures need a 'morris' design, got method {design.method!r}")
    levels = _check_levels(levels)
    d, r = design.n_params, design.base_samples
    names = tuple(str(s) for s in names)
    if len(names) != d:
        raise ValueError(f"names must give one name per parameter ({d}), got {len(names)}")
    if not 0.0 < confidence < 1.0:
        raise ValueError(f"confidence must lie in (0, 1), got {confidence}")
    if isinstance(n_bootstrap, bool) or not isinstance(n_bootstrap, int) or n_bootstrap < 2:
        raise ValueError(f"n_bootstrap must be an integer >= 2, got {n_bootstrap!r}")
    y = np.asarray(y, dtype=float)
    if y.shape != (design.n_rows,):
        raise ValueError(f"y must hold one value per design row, shape ({design.n_rows},); "
                         f"got shape {y.shape}")
    table = y.reshape(r, d + 1)
    keep = np.isfinite(table).all(axis=1)
    used = int(keep.sum())
    if used < 2:
        raise ValueError(f"only {used} of {r} trajectories have finite outputs; at least 2 "
                         "needed")
    grid = _grid(design, levels).reshape(r, d + 1, d)[keep].reshape(-1, d)
    kept = table[keep]
    if np.ptp(kept) <= 8.0 * np.finfo(float).eps * max(float(np.max(np.abs(kept))), 1e-300):
        zero = np.zeros(d)
        return MorrisIndices(names, zero, zero.copy(), zero.copy(), zero.copy(), confidence,
                             used, r - used, constant_output=True)
    problem = {"num_vars": d, "names": list(names), "groups": None}
    res = salib_morris.analyze(problem, grid, kept.reshape(-1), num_resamples=n_bootstrap,
                               conf_level=confidence, num_levels=levels,
                               seed=np.random.default_rng(int(seed)))
    out = [np.asarray(res[k], dtype=float) for k in ("mu", "mu_star", "mu_star_conf", "sigma")]
    for v in out:
        v.setflags(write=False)
    return MorrisIndices(names, *out, confidence=confidence, trajectories_used=used,
                         dropped_trajectories=r - used)


def safe_to_fix(indices: MorrisIndices, *, threshold: float) -> np.ndarray:
    """Inputs whose influence is negligible: fixing them at nominal loses little.

    Parameters
    ----------
    indices
        Morris measures [-].
    threshold
        Share of the largest mu*, in (0, 1) [-].

    Returns
    -------
    numpy.ndarray
        Boolean per parameter: the upper end of the mu* interval and sigma both below
        ``threshold`` times the largest mu* (none when the output is constant: nothing can be
        learned from it) [-].
    """
    if not (math.isfinite(threshold) and 0.0 < threshold < 1.0):
        raise ValueError(f"threshold must lie in (0, 1), got {threshold}")
    if indices.constant_output:
        return np.zeros(len(indices.names), dtype=bool)
    cut = threshold * float(np.max(indices.mu_star))
    return (indices.mu_star + indices.mu_star_ci < cut) & (indices.sigma < cut)
