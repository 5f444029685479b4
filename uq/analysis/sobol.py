"""First- and total-order Sobol' indices from a Saltelli design, and their ranking.

The estimators are those of ``SALib.analyze.sobol.analyze`` with ``calc_second_order=False``
(Saltelli et al. 2010, Computer Physics Communications 181, 259-270, doi:10.1016/j.cpc.2009.09.018:
first order their Eq. (b) of Table 2, ``mean(f_B (f_AB_i - f_A)) / V``; total order Jansen's
``mean((f_A - f_AB_i)^2) / (2 V)``, their Eq. (f)), the output centred and scaled as SALib does;
they are computed here, vectorised, and tested against SALib. The design decides the
intervals:

* A replicated design (``Design.replicates = R > 1``: R independently scrambled Saltelli
  designs, replicated randomized quasi-Monte Carlo; Owen 1995, Springer LNS
  106, 299-317; L'Ecuyer & Lemieux 2002, Modeling Uncertainty, 419-474): SALib's estimators
  are applied to every replicate on its own (its output centred as SALib centres it), the
  index is the mean of the R estimates and the half-width the Student t interval with R - 1
  degrees of freedom on their spread, ``t_(R-1) s / sqrt(R)``. The replicates are independent
  and identically distributed, so the interval holds whatever the correlation of the rows
  within a scrambled sequence (which a bootstrap over rows ignores: on Saltelli designs its
  intervals are several times too wide).
* One scrambled sequence (``replicates = 1``): SALib's bootstrap over base rows (its resample
  matrix, normal-quantile half-widths), vectorised: one matrix of resample counts over the base
  rows, applied to the per-row terms of all blocks at once.

Conventions
-----------
* Non-finite outputs (samples whose model did not converge) are handled by dropping the whole
  base row (A_i, every AB_i and B_i), which keeps the estimator structure; the count is
  reported in :attr:`SobolIndices.dropped_rows`.
* A constant output (all kept values equal within floating-point noise, 8 machine epsilons
  of the largest magnitude) has no variance to apportion: indices and half-widths are NaN
  and :attr:`SobolIndices.constant_output` is True. No exception is raised, so a study in
  which an output does not respond to any input still completes.
* The bootstrap seed is derived from ``seed`` with ``numpy.random.SeedSequence`` (as it was
  handed to SALib, which treats seed 0 as "unseeded"); the resample indices are those SALib
  draws from it (``numpy.random.default_rng(seed).integers(N, size=(N, resamples))``), so the
  same seed always gives identical half-widths, equal to SALib's to rounding.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np
from scipy import stats

from plyrisk.design.sampling import Design
from plyrisk.errors import AnalysisError

if TYPE_CHECKING:  # pragma: no cover
    from plyrisk.analysis.pce import SurrogateIndices

__all__ = ["INTERVAL_BOOTSTRAP", "INTERVAL_JACKKNIFE", "INTERVAL_REPLICATES", "RankedIndex",
           "SobolIndices", "rank", "replicate_interval", "sobol_indices"]

INTERVAL_BOOTSTRAP = "bootstrap"
"""Interval method: SALib's bootstrap over the base rows of one scrambled sequence."""
INTERVAL_REPLICATES = "replicates"
"""Interval method: Student t on the spread of independently scrambled replicates."""
INTERVAL_JACKKNIFE = "jackknife"
"""Interval method: delete-one-batch jackknife (streamed stores of one scrambled sequence)."""


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
        Confidence half-widths at ``confidence`` [-]: Student t over the replicates, or
        SALib's bootstrap (``*_conf``) for one scrambled sequence (see ``interval``).
    confidence : float
        Confidence level of the half-widths [-].
    base_samples_used : int
        Base rows used after dropping rows with non-finite outputs [-].
    dropped_rows : int
        Base rows dropped because any of their outputs was non-finite [-].
    constant_output : bool
        True when the output had no variance; all indices are then NaN.
    interval : str
        How the half-widths were obtained: ``"replicates"``, ``"bootstrap"`` or
        ``"jackknife"``.
    replicates : int
        Independently scrambled replicates R behind the estimates (1 for one sequence).
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
    interval: str = INTERVAL_BOOTSTRAP
    replicates: int = 1


def replicate_interval(estimates: np.ndarray, confidence: float,
                       axis: int = 0) -> tuple[np.ndarray, np.ndarray]:
    """Mean of independent replicate estimates and the Student t half-width of that mean.

    Parameters
    ----------
    estimates : array_like
        One estimate per replicate along ``axis`` (R >= 2) [any].
    confidence : float
        Two-sided confidence level in (0, 1) [-].
    axis : int
        The replicate axis [-].

    Returns
    -------
    mean, half_width : numpy.ndarray
        ``mean`` over the replicates and ``t_(1 - alpha/2, R - 1) s / sqrt(R)``, s the sample
        standard deviation of the replicates [unit of the estimates].

    Notes
    -----
    For R independent, identically distributed randomizations of a quasi-Monte Carlo rule the
    replicate estimates are i.i.d.; their mean has variance sigma^2 / R, estimated without
    bias by s^2 / R, and the t interval is exact for normal replicates (L'Ecuyer & Lemieux
    2002, Modeling Uncertainty, 419-474, section "Variance estimation"; Owen 1997, SIAM J.
    Numer. Anal. 34, 1884-1910, for the scrambled-net variance) (R.1).

    Examples
    --------
    >>> mean, half = replicate_interval([0.30, 0.32, 0.31, 0.33], 0.95)
    >>> round(float(mean), 4), round(float(half), 4)
    (0.315, 0.0205)
    """
    x = np.asarray(estimates, dtype=float)
    r = x.shape[axis]
    if r < 2:
        raise ValueError(f"a replicate interval needs at least 2 replicates, got {r}")
    if not 0.0 < confidence < 1.0:
        raise ValueError(f"confidence must lie in (0, 1), got {confidence}")
    t = float(stats.t.ppf(0.5 + confidence / 2.0, r - 1))
    return x.mean(axis=axis), t * x.std(axis=axis, ddof=1) / np.sqrt(r)    # (R.1)


def _replicate_estimates(table: np.ndarray, cols: Sequence[int], label: np.ndarray,
                         replicates: int) -> tuple[np.ndarray, np.ndarray]:
    """SALib's first and total estimators on every replicate: shape (R, k) each.

    ``table`` holds the kept base rows (one row per base row, one column per design block),
    ``cols`` the columns A, AB_1 ... AB_k, B, ``label`` each base row's replicate. Each
    replicate's output is centred on its mean over those columns, as
    ``SALib.analyze.sobol.analyze`` centres the output it is given (the first-order numerator
    depends on the centring; the scale cancels).
    """
    sizes = np.bincount(label, minlength=replicates)
    if np.all(sizes == sizes[0]):   # every replicate whole: one vectorised pass
        groups = [table[np.argsort(label, kind="stable")][:, list(cols)]
                  .reshape(replicates, int(sizes[0]), len(cols))]
    else:
        groups = [table[label == r][:, list(cols)][None] for r in range(replicates)]
    first, total = [], []
    for t in groups:
        t = t - t.mean(axis=(1, 2), keepdims=True)
        fa, fb, fab = t[:, :, :1], t[:, :, -1:], t[:, :, 1:-1]
        var = np.var(np.concatenate([fa, fb], axis=1), axis=(1, 2))[:, None]
        with np.errstate(invalid="ignore", divide="ignore"):
            first.append(np.where(var > 0, np.mean(fb * (fab - fa), axis=1) / var, np.nan))
            total.append(np.where(var > 0, 0.5 * np.mean((fa - fab) ** 2, axis=1) / var,
                                  np.nan))
    return np.concatenate(first), np.concatenate(total)

def _salib_seed(seed: int) -> int:
    if isinstance(seed, bool) or not isinstance(seed, int | np.integer) or seed < 0:
        raise ValueError(f"seed must be a non-negative integer, got {seed!r}")
    return int(np.random.SeedSequence(int(seed)).generate_state(1, dtype=np.uint32)[0]) or 1


BOOTSTRAP_BLOCK_VALUES = 2**22
"""Resample counts held at once (resamples x base rows); a fixed bound, so the half-widths never
depend on how anything else is chunked [-]."""


def _bootstrap_estimates(block: np.ndarray, n_bootstrap: int, confidence: float, seed: int
                         ) -> tuple[np.ndarray, ...]:
    """First and total indices with bootstrap half-widths, as ``SALib.analyze.sobol.analyze``.

    ``block`` holds the kept base rows, columns A, AB_1 ... AB_k, B. Every resample mean is a
    weighted sum over the base rows with weights the resample's counts, so one matrix of counts
    (resamples x rows) times the per-row terms gives every resample of every index (S.1).
    """
    n = block.shape[0]
    y = (block - block.mean()) / block.std()            # SALib's normalisation
    fa, fb, fab = y[:, 0], y[:, -1], y[:, 1:-1]
    both = np.concatenate([fa, fb])
    var = np.var(both)
    first_terms = fb[:, None] * (fab - fa[:, None])
    total_terms = (fa[:, None] - fab) ** 2
    ok = var > np.finfo(float).eps
    s1 = np.mean(first_terms, axis=0) / var if ok else np.zeros(fab.shape[1])
    st = 0.5 * np.mean(total_terms, axis=0) / var if ok else np.zeros(fab.shape[1])
    resamples = np.random.default_rng(seed).integers(n, size=(n, n_bootstrap))  # SALib's draw
    terms = np.column_stack([first_terms, total_terms, fa + fb, fa * fa + fb * fb])
    k = fab.shape[1]
    boot = np.empty((n_bootstrap, terms.shape[1]))
    step = max(1, BOOTSTRAP_BLOCK_VALUES // n)
    for b0 in range(0, n_bootstrap, step):
        b1 = min(b0 + step, n_bootstrap)
        flat = (resamples[:, b0:b1] + n * np.arange(b1 - b0)).ravel(order="F")
        counts = np.bincount(flat, minlength=(b1 - b0) * n).reshape(b1 - b0, n)
        boot[b0:b1] = (counts @ terms) / n
    mean2 = boot[:, 2 * k] / 2.0
    var_b = boot[:, 2 * k + 1] / 2.0 - mean2 * mean2
    good = var_b > np.finfo(float).eps
    with np.errstate(invalid="ignore", divide="ignore"):
        s1_b = np.where(good[:, None], boot[:, :k] / var_b[:, None], 0.0)
        st_b = np.where(good[:, None], 0.5 * boot[:, k:2 * k] / var_b[:, None], 0.0)
    z = float(stats.norm.ppf(0.5 + confidence / 2.0))
    return s1, z * s1_b.std(axis=0, ddof=1), st, z * st_b.std(axis=0, ddof=1)


def _result(names: Sequence[str], values: tuple[np.ndarray, ...] | None, confidence: float,
            used: int, dropped: int, replicates: int = 1) -> SobolIndices:
    constant = values is None
    if values is None:
        nan = np.full(len(names), np.nan)
        values = (nan, nan.copy(), nan.copy(), nan.copy())
    for v in values:
        v.setflags(write=False)
    s1, s1c, st, stc = values
    interval = INTERVAL_REPLICATES if replicates > 1 else INTERVAL_BOOTSTRAP
    return SobolIndices(tuple(names), s1, s1c, st, stc, confidence, used, dropped,
                        constant_output=constant, interval=interval, replicates=replicates)


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
        Bootstrap resamples for the half-widths, >= 2 (one scrambled sequence only) [-].
    confidence : float
        Confidence level of the half-widths, in (0, 1) [-].
    seed : int
        Non-negative bootstrap seed (one scrambled sequence only) [-].

    Returns
    -------
    tuple
        (per-parameter indices, per-group indices or None when the design has no groups).
        For a replicated design (``design.replicates > 1``) each index is the mean of SALib's
        estimators over the replicates and its half-width the Student t interval on their
        spread (:func:`replicate_interval`); no bootstrap.

    Examples
    --------
    >>> import numpy as np
    >>> from plyrisk.design.sampling import sobol_design
    >>> design = sobol_design(1024, 2, seed=3, replicates=8)
    >>> y = design.unit @ np.array([1.0, 2.0])      # additive: S = (1, 4) / 5
    >>> ind, _ = sobol_indices(y, design, names=("a", "b"), seed=0)
    >>> np.round(ind.first, 2), ind.interval
    (array([0.2, 0.8]), 'replicates')
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
        raise AnalysisError(f"only {used} of {n} base rows have finite outputs; at least 2 "
                            "needed (more samples, or check why the solves failed)")
    reps = int(getattr(design, "replicates", 1))
    rep_label = (np.arange(n) % reps)[keep]
    if reps > 1:
        short = np.flatnonzero(np.bincount(rep_label, minlength=reps) < 2)
        if short.size:
            raise AnalysisError(f"replicate {short[0]} has fewer than 2 base rows with finite "
                                f"outputs; at least 2 needed in each of the {reps} replicates "
                                "(more samples, or check why the solves failed)")
    table = table[keep]

    def analyze(cols: list[int]) -> tuple[np.ndarray, ...]:
        if reps == 1:
            return _bootstrap_estimates(table[:, cols], n_bootstrap, confidence, salib_seed)
        s1, st = _replicate_estimates(table, cols, rep_label, reps)
        (m1, h1), (mt, ht) = (replicate_interval(v, confidence) for v in (s1, st))
        return m1, h1, mt, ht

    ab = [column[2 + j] for j in range(d)]
    grp_cols = [ab[g[0]] if len(g) == 1 else column[2 + d + k] for k, g in enumerate(design.groups)]
    scale = np.max(np.abs(table))
    if np.ptp(table) <= 8.0 * np.finfo(float).eps * scale:
        first = _result(names, None, confidence, used, dropped, reps)
        groups = (_result(group_names, None, confidence, used, dropped, reps) if design.groups
                  else None)
        return first, groups

    first = _result(names, analyze([column[0], *ab, column[1]]),
                    confidence, used, dropped, reps)
    if not design.groups:
        return first, None

    # As SALib's groups: every parameter has a group label, ungrouped ones form their own group
    # (their columns share the normalisation, so they stay in).
    label = [f"p{i}" for i in range(d)]
    for k, g in enumerate(design.groups):
        for i in g:
            label[i] = f"g{k}"
    order = list(dict.fromkeys(label))          # SALib's group order: first appearance
    cols = [grp_cols[int(lab[1:])] if lab[0] == "g" else ab[int(lab[1:])] for lab in order]
    values = analyze([column[0], *cols, column[1]])
    pick = [order.index(f"g{k}") for k in range(len(design.groups))]
    grouped = _result(group_names, tuple(v[pick] for v in values), confidence, used, dropped,
                      reps)
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
        (max half-width / threshold)**2 and rounds up to a power of 2 (with R replicates: to R
        times a power of 2).
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
            reps = int(getattr(indices, "replicates", 1))
            target = math.ceil(n_design * (worst / ci_threshold) ** 2 / reps)
            suggested = reps * (1 << max(target - 1, 0).bit_length())
        out.append(RankedIndex(name, s1, s1c, st, stc, converged, suggested,
                               first_converged=bool(s1c <= ci_threshold),
                               total_converged=bool(stc <= ci_threshold)))
    return sorted(out, key=lambda r: math.inf if math.isnan(r.total) else -r.total)
