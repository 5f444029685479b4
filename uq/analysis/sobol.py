"""First- and total-order Sobol' indices from a Saltelli design, and their ranking.

The estimators are those of ``SALib.analyze.sobol.analyze`` (Saltelli et al. 2010, Computer
Physics Communications 181, 259-270) with ``calc_second_order=False``; confidence half-widths
come from SALib's bootstrap over base rows.

Conventions
-----------
* Non-finite outputs (samples whose model did not converge) are handled by dropping the whole
  base row (A_i, every AB_i and B_i), which keeps the estimator structure; the count is
  reported in :attr:`SobolIndices.dropped_rows`.
* A constant output (all kept values equal within floating-point noise, 8 machine epsilons
  of the largest magnitude) has no variance to apportion: indices and half-widths are NaN
  and :attr:`SobolIndices.constant_output` is True. No exception is raised, so a study in
  which an output does not respond to any input still completes.
* The bootstrap seed handed to SALib is derived from ``seed`` with
  ``numpy.random.SeedSequence`` (SALib treats seed 0 as "unseeded"); the same seed always
  gives identical half-widths.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np
from SALib.analyze import sobol as salib_sobol

from plyrisk.design.sampling import Design

if TYPE_CHECKING:  # pragma: no cover
    from plyrisk.analysis.pce import SurrogateIndices

__all__ = ["RankedIndex", "SobolIndices", "rank", "sobol_indices"]


@dataclass(frozen=True, eq=False)
class SobolIndices:
    """First- and total-order Sobol' indices of one output.

    Attributes
    ----------
    names : tuple of str
        Parameter (or group) names.
    first, total : numpy.ndarray
        First-order and total-order indices [-].
    first_ci, total_ci : numpy.ndarray
        Bootstrap confidence half-widths at ``confidence`` [-] (SALib's ``*_conf``).
    confidence : float
        Confidence level of the half-widths [-].
    base_samples_used : int
        Base rows used after dropping rows with non-finite outputs [-].
    dropped_rows : int
        Base rows dropped because any of their outputs was non-finite [-].
    constant_output : bool
        True when the output had no variance; all indices are then NaN.
    """

    names: tuple[str, ...]
    first: np.ndarray
    first_ci: np.ndarray
    total: np.ndarray
    total_ci: np.ndarray
    confidence: float
    base_samples_used: int
    dropped_rows: int
    constant_output: bool = False


def _salib_seed(seed: int) -> int:
    if isinstance(seed, bool) or not isinstance(seed, int | np.integer) or seed < 0:
        raise ValueError(f"seed must be a non-negative integer, got {seed!r}")
    return int(np.random.SeedSequence(int(seed)).generate_state(1, dtype=np.uint32)[0]) or 1


def _analyze(table: np.ndarray, problem: dict, n_bootstrap: int, confidence: float,
             seed: int) -> tuple[np.ndarray, ...]:
    res = salib_sobol.analyze(problem, table.reshape(-1), calc_second_order=False,
                              num_resamples=n_bootstrap, conf_level=confidence, seed=seed)
    return tuple(np.asarray(res[k], dtype=float) for k in ("S1", "S1_conf", "ST", "ST_conf"))


def _result(names: Sequence[str], values: tuple[np.ndarray, ...] | None, confidence: float,
            used: int, dropped: int) -> SobolIndices:
    constant = values is None
    if values is None:
        nan = np.full(len(names), np.nan)
        values = (nan, nan.copy(), nan.copy(), nan.copy())
    for v in values:
        v.setflags(write=False)
    s1, s1c, st, stc = values
    return SobolIndices(tuple(names), s1, s1c, st, stc, confidence, used, dropped,
                        constant_output=constant)


def sobol_indices(y: np.ndarray, design: Design, *, names: Sequence[str],
                  group_names: Sequence[str] = (), n_bootstrap: int = 200,
                  confidence: float = 0.95,
                  seed: int) -> tuple[SobolIndices, SobolIndices | None]:
    """Sobol' indices of one output evaluated on a Sobol' design.

    Parameters
    ----------
    y : array_like
        Output per design row, shape (n_rows,), NaN where the model did not converge [any].
    design : Design
        The ``sobol`` design the output was evaluated on. [-]
    names : sequence of str
        One name per parameter. [-]
    group_names : sequence of str
        One name per design group; defaults to the member names joined with ``+``. [-]
    n_bootstrap : int
        Bootstrap resamples for the half-widths, >= 2 [-].
    confidence : float
        Confidence level of the half-widths, in (0, 1) [-].
    seed : int
        Non-negative bootstrap seed [-].

    Returns
    -------
    tuple
        (per-parameter indices, per-group indices or None when the design has no groups).
    """
    if design.method != "sobol":
        raise ValueError(f"Sobol' indices need a 'sobol' design, got method {design.method!r}")
    d, n = design.n_params, design.base_samples
    names = tuple(str(s) for s in names)
    if len(names) != d:
        raise ValueError(f"names must give one name per parameter ({d}), got {len(names)}")
    if design.groups and not group_names:
        group_names = ["+".join(names[i] for i in g) for g in design.groups]
    group_names = tuple(str(s) for s in group_names)
    if len(group_names) != len(design.groups):
        raise ValueError(f"group_names must give one name per group ({len(design.groups)}), "
                         f"got {len(group_names)}")
    if isinstance(n_bootstrap, bool) or not isinstance(n_bootstrap, int) or n_bootstrap < 2:
        raise ValueError(f"n_bootstrap must be an integer >= 2, got {n_bootstrap!r}")
    if not 0.0 < confidence < 1.0:
        raise ValueError(f"confidence must lie in (0, 1), got {confidence}")
    salib_seed = _salib_seed(seed)
    y = np.asarray(y, dtype=float)
    if y.shape != (design.n_rows,):
        raise ValueError(f"y must hold one value per design row, shape ({design.n_rows},); "
                         f"got shape {y.shape}")

    step = design.n_rows // n
    codes = design.block[:step]
    column = {int(c): k for k, c in enumerate(codes)}
    table = y.reshape(n, step)
    keep = np.isfinite(table).all(axis=1)
    used, dropped = int(keep.sum()), int(n - keep.sum())
    if used < 2:
        raise ValueError(f"only {used} of {n} base rows have finite outputs; at least 2 needed")
    table = table[keep]

    ab = [column[2 + j] for j in range(d)]
    grp_cols = [ab[g[0]] if len(g) == 1 else column[2 + d + k] for k, g in enumerate(design.groups)]
    scale = np.max(np.abs(table))
    if np.ptp(table) <= 8.0 * np.finfo(float).eps * scale:
        first = _result(names, None, confidence, used, dropped)
        groups = _result(group_names, None, confidence, used, dropped) if design.groups else None
        return first, groups

    problem = {"num_vars": d, "names": list(names)}
    first = _result(names, _analyze(table[:, [column[0], *ab, column[1]]], problem,
                                    n_bootstrap, confidence, salib_seed),
                    confidence, used, dropped)
    if not design.groups:
        return first, None

    # SALib needs a group label for every parameter: ungrouped ones form their own group.
    label = [f"p{i}" for i in range(d)]
    for k, g in enumerate(design.groups):
        for i in g:
            label[i] = f"g{k}"
    order = list(dict.fromkeys(label))          # SALib's group order: first appearance
    cols = [grp_cols[int(lab[1:])] if lab[0] == "g" else ab[int(lab[1:])] for lab in order]
    gproblem = {"num_vars": d, "names": list(names), "groups": label}
    values = _analyze(table[:, [column[0], *cols, column[1]]], gproblem, n_bootstrap,
                      confidence, salib_seed)
    pick = [order.index(f"g{k}") for k in range(len(design.groups))]
    grouped = _result(group_names, tuple(v[pick] for v in values), confidence, used, dropped)
    return first, grouped


def not_resolved(value: float, half_width: float) -> bool:
    """Whether an index estimate lies outside [0, 1] by more than its interval half-width.

    A Sobol index is a variance share, so an estimate above 1 or below 0 beyond its interval
    is not noise around a true value inside the range: the estimator has not settled (too few
    samples for the model's interactions). Such an index is reported as "not resolved: more
    samples", never as a value.

    Parameters
    ----------
    value
        The estimate.
    half_width
        Its confidence half-width.

    Examples
    --------
    >>> not_resolved(1.615, 0.054), not_resolved(1.02, 0.05), not_resolved(-0.2, 0.1)
    (True, False, True)
    """
    if not (np.isfinite(value) and np.isfinite(half_width)):
        return False
    return bool(value - half_width > 1.0 or value + half_width < 0.0)


@dataclass(frozen=True)
class RankedIndex:
    """One parameter's indices with a convergence verdict.

    Attributes
    ----------
    name : str
        Parameter or group name.
    first, first_ci, total, total_ci : float
        Indices and half-widths [-].
    converged : bool
        Both half-widths at or below the threshold.
    suggested_base_samples : int or None
        Base samples N expected to bring the larger half-width to the threshold (half-widths
        shrink like N**-0.5), rounded up to a power of 2; None when converged or undefined.
    first_converged, total_converged : bool
        Each half-width at or below the threshold on its own.
    """

    name: str
    first: float
    first_ci: float
    total: float
    total_ci: float
    converged: bool
    suggested_base_samples: int | None
    first_converged: bool = True
    total_converged: bool = True

    @property
    def first_negative(self) -> bool:
        """The first-order estimate is below zero (estimator noise; shown, not clipped)."""
        return self.first < 0.0


def rank(indices: SobolIndices | SurrogateIndices, *, ci_threshold: float = 0.05
         ) -> list[RankedIndex]:
    """Rank parameters by total-order index, largest first, with a convergence verdict.

    Parameters
    ----------
    indices : SobolIndices or plyrisk.analysis.pce.SurrogateIndices
        Result of :func:`sobol_indices` (or of the PCE surrogate). [-]
    ci_threshold : float
        Largest acceptable confidence half-width, > 0 [-].

    Returns
    -------
    list of RankedIndex
        Sorted by total index, descending (NaN last). The suggested N scales the design's
        base samples (used + dropped, so the drop rate is carried over) by
        (max half-width / threshold)**2 and rounds up to a power of 2.
    """
    if not (math.isfinite(ci_threshold) and ci_threshold > 0.0):
        raise ValueError(f"ci_threshold must be positive, got {ci_threshold}")
    if hasattr(indices, "base_samples_used"):
        n_design = indices.base_samples_used + indices.dropped_rows
    else:  # surrogate indices (plyrisk.analysis.pce.SurrogateIndices): scale the sample count
        n_design = indices.samples
    out = []
    for k, name in enumerate(indices.names):
        s1, s1c = float(indices.first[k]), float(indices.first_ci[k])
        st, stc = float(indices.total[k]), float(indices.total_ci[k])
        converged = bool(stc <= ci_threshold and s1c <= ci_threshold)
        suggested = None
        worst = max(s1c, stc)
        if not converged and math.isfinite(worst):
            target = math.ceil(n_design * (worst / ci_threshold) ** 2)
            suggested = 1 << max(target - 1, 0).bit_length()
        out.append(RankedIndex(name, s1, s1c, st, stc, converged, suggested,
                               first_converged=bool(s1c <= ci_threshold),
                               total_converged=bool(stc <= ci_threshold)))
    return sorted(out, key=lambda r: math.inf if math.isnan(r.total) else -r.total)
