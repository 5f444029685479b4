"""Polynomial-chaos expansion (PCE): regression fit, sparse by least-angle regression, terms
chosen by leave-one-out error, Sobol indices from the coefficients, and percentiles from the
surrogate when it is good enough.

The expansion uses chaospy's orthonormal Legendre polynomials on the unit hypercube (each input
mapped through its own CDF, which leaves Sobol indices unchanged for independent inputs). For
an orthonormal basis ``Psi_k`` with multi-indices ``alpha_k`` (Sudret 2008),

``V = sum_{k != 0} c_k^2``,  ``S_i = sum_{alpha_k = n e_i, n > 0} c_k^2 / V``,
``S_Ti = sum_{alpha_k,i > 0} c_k^2 / V``;                                         (P.1)

a group's first index sums the terms that involve only its members, its total index those
that involve any of them.

Truncation (sparse basis). Candidate bases are hyperbolic (q-norm) sets,
``{alpha : (sum_i alpha_i^q)^(1/q) <= p}`` (Blatman & Sudret 2011), for q in :data:`Q_NORMS`
(q = 1 is the full total-degree set; smaller q keeps high orders of single inputs and drops
high-order interactions) and p = 1, 2, ... while the set has at most
``max(n / SAMPLES_PER_TERM, min(CANDIDATES_PER_SAMPLE * n, MAX_CANDIDATES))`` terms. A set
with at most ``n /`` :data:`SAMPLES_PER_TERM` terms is fitted in full by least squares (normal
equations through a Cholesky factor; the basis is orthonormal, so they are well conditioned).
A larger set cannot be: its terms are selected by least-angle regression
(:func:`plyrisk.analysis.sparse_regression.lars_path`), the constant and the first k terms to enter
refitted
by least squares for every k up to ``n / SAMPLES_PER_TERM`` terms, and the k of the smallest
corrected error kept (hybrid LARS, Blatman & Sudret 2011). With few samples this keeps the
interaction and high-order terms that matter and leaves out the many that do not, which the
full sets that least squares can fit cannot do. Every fit is scored by its leave-one-out
error, in closed form from the hat matrix ``h = diag(Phi (Phi^T Phi)^-1 Phi^T)``:

``eps_LOO = mean(((y - y_hat) / (1 - h))^2) / var(y)``,  ``Q2 = 1 - eps_LOO``;        (P.2)

the fit with the smallest *corrected* error ``eps_LOO * N / (N - P) * (1 + tr((Phi^T
Phi)^-1))`` (Chapelle et al. 2002, as used by Blatman & Sudret 2010, 2011) is kept: the
correction penalises fits with nearly as many terms as samples. Errors below
:data:`LOO_FLOOR` are round-off of an exact fit and count as equal, so the first (smallest)
exact fit wins. Every order is tried up to the term cap (the error need not fall steadily: an
even function gains nothing from odd orders). With ``n >= MAX_CANDIDATES * SAMPLES_PER_TERM``
samples every set tried is fitted in full, as without sparse regression.

Honest error of a selected fit. The leave-one-out error of a selected fit is computed after
the selection, which saw every sample, so it is optimistic: on the invented demo stacks it was
2 to 20 times below the error on independent points. A selected fit therefore also gets a
:data:`CV_FOLDS`-fold cross-validation error, ``sum((y - y_hat_-f)^2) / (n var(y))`` over
folds f (row i in fold ``i mod CV_FOLDS``), in which each fold's terms are selected anew from
the same candidate set without that fold's samples; it followed the error on independent
points within a factor of about 2 there. For a fit in full it is the leave-one-out error
(exact cross-validation). Callers that trust the surrogate beyond its indices (percentiles
from it) compare the larger of the two errors with their threshold.

Intervals. Rows are resampled with a seeded generator and the selected terms refitted; the
half-width is ``z * sd`` of the refitted indices. They show the regression's sampling error,
not the truncation or selection error, which ``eps_LOO`` measures.

References
----------
.. [S2008] B. Sudret, "Global sensitivity analysis using polynomial chaos expansions",
   Reliab. Eng. Syst. Saf. 93 (2008) 964–979.
.. [BS2010] G. Blatman, B. Sudret, "An adaptive algorithm to build up sparse polynomial chaos
   expansions for stochastic finite element analysis", Probab. Eng. Mech. 25 (2010) 183–197.
.. [BS2011] G. Blatman, B. Sudret, "Adaptive sparse polynomial chaos expansion based on least
   angle regression", J. Comput. Phys. 230 (2011) 2345–2367.
.. [C2002] O. Chapelle, V. Vapnik, Y. Bengio, "Model selection for small sample regression",
   Machine Learning 48 (2002) 9–23.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, replace
from functools import cache
from math import comb

import chaospy
import numpy as np
from scipy import linalg
from scipy.stats import norm, qmc

from plyrisk.analysis.sparse_regression import lars_path

MAX_ORDER = 12
"""Highest total polynomial order tried [-]."""

Q_NORMS = (1.0, 0.75, 0.5)
"""q-norms of the hyperbolic truncations tried (1 = total degree) [-]."""

SAMPLES_PER_TERM = 1.5
"""Least samples per term of a least-squares fit (over-determination) [-]."""

CANDIDATES_PER_SAMPLE = 2.0
"""Most candidate terms per sample for sparse selection by least-angle regression [-]."""

MAX_CANDIDATES = 2000
"""Most candidate terms for sparse selection, whatever the samples (memory and time) [-]."""

CV_FOLDS = 5
"""Folds of the cross-validation of a fit whose terms were selected [-]."""

LOO_FLOOR = 1e-12
"""Corrected leave-one-out errors below this are round-off of an exact fit, treated as equal
[-]."""

PREDICT_CHUNK = 8192
"""Rows evaluated together when the surrogate is evaluated at many points [-]."""


@dataclass(frozen=True, eq=False)
class PceFit:
    """A fitted expansion.

    Attributes
    ----------
    alphas
        Multi-indices, shape ``(P, d)``, the constant term first [-].
    coef
        Coefficients of the orthonormal basis, shape ``(P,)`` [output unit].
    order, q_norm
        Total order and q-norm of the truncation (the candidate set) [-].
    loo_error
        Relative leave-one-out error ``eps_LOO`` (P.2) [-].
    corrected_loo_error
        ``eps_LOO`` with the small-sample correction used for the selection [-].
    samples
        Finite samples fitted [-].
    candidates
        Terms of the candidate set; more than ``P`` when the terms were selected from it by
        least-angle regression [-].
    cross_validation_error
        Relative :data:`CV_FOLDS`-fold cross-validation error with the terms selected anew in
        each fold, for a selected fit; ``loo_error`` for a fit in full [-].
    """

    alphas: np.ndarray
    coef: np.ndarray
    order: int
    q_norm: float
    loo_error: float
    corrected_loo_error: float
    samples: int
    candidates: int
    cross_validation_error: float

    @property
    def sparse(self) -> bool:
        """Whether the terms were selected from a larger candidate set [-]."""
        return self.candidates > len(self.alphas)

    @property
    def q2(self) -> float:
        """Leave-one-out coefficient of determination ``1 - eps_LOO`` [-]."""
        return 1.0 - self.loo_error

    @property
    def mean(self) -> float:
        """Mean of the output under the inputs' distributions [output unit]."""
        return float(self.coef[0])

    @property
    def variance(self) -> float:
        """Variance of the output (P.1) [output unit^2]."""
        return float(np.sum(self.coef[1:] ** 2))

    def predict(self, unit: np.ndarray) -> np.ndarray:
        """The surrogate at unit-hypercube points, shape ``(n, d)`` → ``(n,)`` [output unit].

        Parameters
        ----------
        unit
            Points in the unit hypercube [-].
        """
        unit = np.asarray(unit, dtype=float)
        out = np.empty(unit.shape[0])
        for start in range(0, unit.shape[0], PREDICT_CHUNK):
            block = unit[start:start + PREDICT_CHUNK]
            out[start:start + block.shape[0]] = design_matrix(block, self.alphas) @ self.coef
        return out


@dataclass(frozen=True)
class SurrogateIndices:
    """PCE-based Sobol indices with bootstrap intervals.

    Attributes
    ----------
    names
        Parameter (or group) names [-].
    first, first_ci, total, total_ci
        Indices and the half-widths of their bootstrap intervals [-].
    q2
        Leave-one-out coefficient of determination of the fit, ``1 - loo_error`` [-].
    order
        Total order of the truncation the terms come from [-].
    samples
        Finite samples used [-].
    loo_error
        Relative leave-one-out error (P.2) [-].
    cross_validation_error
        Relative cross-validation error with the terms selected anew in each fold
        (``loo_error`` for a fit in full) [-].
    q_norm
        q-norm of the truncation [-].
    terms
        Terms of the expansion [-].
    candidates
        Terms of the candidate set they were selected from (``terms`` when fitted in full) [-].
    confidence
        Level of the intervals [-].
    fit
        The fitted expansion (for percentiles from the surrogate) [-].
    """

    names: tuple[str, ...]
    first: np.ndarray
    first_ci: np.ndarray
    total: np.ndarray
    total_ci: np.ndarray
    q2: float
    order: int
    samples: int
    loo_error: float = float("nan")
    cross_validation_error: float = float("nan")
    q_norm: float = 1.0
    terms: int = 0
    candidates: int = 0
    confidence: float = 0.90
    fit: PceFit | None = None

    @property
    def largest_error(self) -> float:
        """The larger of the leave-one-out and cross-validation errors, NaN if either is [-]."""
        errors = (self.loo_error, self.cross_validation_error)
        return float("nan") if np.isnan(errors).any() else max(errors)


def hyperbolic_basis(order: int, n_params: int, q_norm: float = 1.0, *,
                     max_terms: int | None = None) -> np.ndarray | None:
    """Multi-indices with ``(sum alpha_i^q)^(1/q) <= order``, constant term first.

    Parameters
    ----------
    order
        Total order p, >= 0 [-].
    n_params
        Inputs d, >= 1 [-].
    q_norm
        q in (0, 1] [-].
    max_terms
        Give up (return ``None``) once the set would exceed this many terms [-].

    Returns
    -------
    numpy.ndarray or None
        Shape ``(P, d)``, sorted by total degree then reverse-lexicographically [-].
    """
    if not 0.0 < q_norm <= 1.0:
        raise ValueError(f"q_norm must lie in (0, 1], got {q_norm}")
    if order < 0 or n_params < 1:
        raise ValueError(f"order must be >= 0 and n_params >= 1, got {order}, {n_params}")
    limit = order**q_norm * (1.0 + 1e-12)
    powers = np.arange(order + 1, dtype=float) ** q_norm
    partial = np.zeros((1, 0), dtype=np.int64)
    used = np.zeros(1)
    for _ in range(n_params):
        rows, sums = [], []
        for k in range(order + 1):
            ok = used + powers[k] <= limit
            if not ok.any():
                break
            rows.append(np.column_stack([partial[ok], np.full(ok.sum(), k, dtype=np.int64)]))
            sums.append(used[ok] + powers[k])
        partial, used = np.vstack(rows), np.concatenate(sums)
        if max_terms is not None and partial.shape[0] > max_terms:
            return None
    degree = partial.sum(axis=1)
    keys = [partial[:, j] for j in range(n_params - 1, -1, -1)] + [degree]
    return partial[np.lexsort(keys)]


@cache
def _legendre(order: int):
    return chaospy.expansion.legendre(order, lower=0.0, upper=1.0, normed=True)


def design_matrix(unit: np.ndarray, alphas: np.ndarray) -> np.ndarray:
    """Orthonormal Legendre tensor basis on [0, 1]^d at the samples, shape ``(n, P)`` [-].

    Parameters
    ----------
    unit
        Points in the unit hypercube, shape ``(n, d)`` [-].
    alphas
        Multi-indices, shape ``(P, d)`` [-].
    """
    unit = np.asarray(unit, dtype=float)
    n, d = unit.shape
    order = int(alphas.max()) if alphas.size else 0
    legendre = _legendre(order)
    phi = np.ones((n, len(alphas)))
    for j in range(d):
        if not alphas[:, j].any():
            continue
        table = np.asarray(legendre(unit[:, j])).reshape(order + 1, n)
        phi *= table[alphas[:, j], :].T
    return phi


def _least_squares(phi: np.ndarray, y: np.ndarray):
    """Coefficients, LOO residuals and tr((Phi^T Phi)^-1); ``None`` if singular."""
    try:
        chol = linalg.cholesky(phi.T @ phi, lower=True, check_finite=False)
    except linalg.LinAlgError:
        return None
    coef = linalg.cho_solve((chol, True), phi.T @ y, check_finite=False)
    half = linalg.solve_triangular(chol, phi.T, lower=True, check_finite=False)
    hat = np.sum(half**2, axis=0)
    if np.any(hat >= 1.0 - 1e-10):
        return None
    inv_l = linalg.solve_triangular(chol, np.eye(chol.shape[0]), lower=True,
                                    check_finite=False)
    return coef, (y - phi @ coef) / (1.0 - hat), float(np.sum(inv_l**2))


def _score(phi, y, alphas, order, q, candidates):
    n, p = y.size, len(alphas)
    solved = _least_squares(phi, y)
    if solved is None:
        return None
    coef, loo, trace = solved
    err = float(np.mean(loo**2) / np.var(y))
    corrected = err * n / (n - p) * (1.0 + trace)
    # leave-one-out is exact cross-validation of a fit in full; a selected fit gets its own
    cross = err if candidates == p else float("nan")
    return PceFit(alphas, coef, order, q, err, corrected, n, candidates, cross)


def _sparse(unit, y, alphas, order, q, max_terms):
    """Terms of ``alphas`` selected by LARS, refitted; ``None`` if none could enter."""
    phi = design_matrix(unit, alphas)
    path = lars_path(phi, y, max_terms=max_terms)
    if path.entered.size == 0:
        return None
    k = int(np.argmin(np.maximum(path.corrected_loo_error, LOO_FLOOR)))
    keep = np.concatenate([[0], np.sort(path.entered[:k + 1])])
    return _score(phi[:, keep], y, alphas[keep], order, q, len(alphas))


def _cross_validation(unit, y, fit: PceFit) -> float:
    """Error of selecting and fitting the terms of ``fit``'s candidate set, by folds [-]."""
    alphas = hyperbolic_basis(fit.order, unit.shape[1], fit.q_norm)
    folds = np.arange(y.size) % CV_FOLDS
    squared = 0.0
    for f in range(CV_FOLDS):
        train, test = folds != f, folds == f
        fitted = _sparse(unit[train], y[train], alphas, fit.order, fit.q_norm,
                         int(train.sum() / SAMPLES_PER_TERM))
        if fitted is None:
            return float("nan")
        squared += float(np.sum((fitted.predict(unit[test]) - y[test]) ** 2))
    return squared / y.size / float(np.var(y))


def _rank(fit: PceFit) -> float:
    return max(fit.corrected_loo_error, LOO_FLOOR)


def fit_pce(unit: np.ndarray, y: np.ndarray, *, order: int | None = None,
            max_order: int = MAX_ORDER, q_norms: Sequence[float] = Q_NORMS,
            sparse: bool = True) -> PceFit | None:
    """PCE with the truncation and terms chosen by corrected leave-one-out error.

    Parameters
    ----------
    unit
        Inputs in the unit hypercube, shape ``(n, d)``; rows with a non-finite ``y`` are left
        out [-].
    y
        Output per row [output unit].
    order
        A fixed total order (full total-degree basis, no selection); ``None`` selects [-].
    max_order
        Highest order tried [-].
    q_norms
        q-norms tried [-].
    sparse
        Also try candidate sets too large for least squares, their terms selected by
        least-angle regression; ``False`` tries only sets fitted in full [-].

    Returns
    -------
    PceFit or None
        ``None`` when no basis beyond the constant can be fitted (too few samples, a constant
        output, or no parameter).
    """
    unit = np.asarray(unit, dtype=float)
    y = np.asarray(y, dtype=float)
    ok = np.isfinite(y)
    u, y = unit[ok], y[ok]
    n, d = u.shape
    if d == 0 or n < 3 or np.ptp(y) == 0:
        return None
    full_cap = int(n / SAMPLES_PER_TERM)
    if order is not None:
        if comb(d + int(order), int(order)) > n - 1:
            return None
        alphas = hyperbolic_basis(int(order), d)
        return _score(design_matrix(u, alphas), y, alphas, int(order), 1.0, len(alphas))
    cap = full_cap
    if sparse:
        cap = max(full_cap, min(int(CANDIDATES_PER_SAMPLE * n), MAX_CANDIDATES))
    best: PceFit | None = None
    seen: set[int] = set()
    for q in q_norms:
        for p in range(1, max_order + 1):
            alphas = hyperbolic_basis(p, d, q, max_terms=cap)
            if alphas is None:
                break
            key = hash(alphas.tobytes())
            if key in seen:  # the same set as a previous q (e.g. every q at order 1)
                continue
            seen.add(key)
            fit = None
            if len(alphas) <= full_cap:
                fit = _score(design_matrix(u, alphas), y, alphas, p, q, len(alphas))
            if fit is None and sparse:
                fit = _sparse(u, y, alphas, p, q, full_cap)
            if fit is None:
                break
            if best is None or _rank(fit) < _rank(best):
                best = fit
    if best is not None and best.sparse:
        best = replace(best, cross_validation_error=_cross_validation(u, y, best))
    return best


def shares(coef: np.ndarray, alphas: np.ndarray,
           groups: Sequence[Sequence[int]]) -> tuple[np.ndarray, np.ndarray]:
    """First and total Sobol indices per group from PCE coefficients (P.1) [-].

    Parameters
    ----------
    coef
        Coefficients, constant first [output unit].
    alphas
        Multi-indices [-].
    groups
        Parameter indices per group [-].
    """
    c2 = coef[1:] ** 2  # (P.1): the constant term carries the mean, not variance
    a = alphas[1:] > 0
    var = c2.sum()
    first = np.empty(len(groups))
    total = np.empty(len(groups))
    for g, members in enumerate(groups):
        inside = np.zeros(a.shape[1], dtype=bool)
        inside[list(members)] = True
        touches = a[:, inside].any(axis=1)
        only = touches & ~a[:, ~inside].any(axis=1)
        first[g] = c2[only].sum() / var if var > 0 else np.nan
        total[g] = c2[touches].sum() / var if var > 0 else np.nan
    return first, total


def surrogate_indices(
    unit: np.ndarray,
    y: np.ndarray,
    *,
    names: Sequence[str],
    groups: Sequence[Sequence[int]] | None = None,
    order: int | None = None,
    n_bootstrap: int = 100,
    confidence: float = 0.90,
    seed: int,
    fit: PceFit | None = None,
) -> SurrogateIndices | None:
    """Sobol indices from a PCE fitted to unit-hypercube samples (:func:`fit_pce`).

    Parameters
    ----------
    unit
        Inputs mapped to the unit hypercube, shape ``(n, d)`` [-].
    y
        Output per sample, ``(n,)``; non-finite values are left out and counted [output unit].
    names
        One name per entry of ``groups`` (per parameter when ``groups`` is ``None``) [-].
    groups
        Parameter indices per group, for grouped indices; ``None`` for one group per parameter. [-]
    order
        Total order of a full total-degree expansion; ``None`` selects the truncation by
        leave-one-out error (:func:`fit_pce`) [-].
    n_bootstrap
        Bootstrap refits for the intervals [-].
    confidence
        Level of the intervals [-].
    seed
        Seed of the bootstrap generator [-].
    fit
        An expansion already fitted to the same ``unit`` and ``y`` (reused, e.g. for grouped
        indices after per-parameter ones) [-].

    Returns
    -------
    SurrogateIndices or None
        ``None`` when there are too few samples for even a linear expansion.
    """
    if not 0 < confidence < 1:
        raise ValueError(f"confidence must be in (0, 1), got {confidence!r}")
    unit = np.asarray(unit, dtype=float)
    y = np.asarray(y, dtype=float)
    ok = np.isfinite(y)
    u, y = unit[ok], y[ok]
    n, d = u.shape
    groups = [(j,) for j in range(d)] if groups is None else [tuple(g) for g in groups]
    if len(names) != len(groups):
        raise ValueError(f"{len(names)} names for {len(groups)} groups")
    if fit is None:
        fit = fit_pce(u, y, order=order)
    if fit is None:
        return None
    first, total = shares(fit.coef, fit.alphas, groups)
    phi = design_matrix(u, fit.alphas)
    rng = np.random.default_rng(seed)
    boot_f = np.empty((n_bootstrap, len(groups)))
    boot_t = np.empty((n_bootstrap, len(groups)))
    for b in range(n_bootstrap):
        # a resample with replacement is a least-squares fit weighted by the draw counts; the
        # basis is orthonormal, so the weighted normal equations are well conditioned
        w = np.bincount(rng.integers(0, n, n), minlength=n).astype(float)
        pw = phi * w[:, None]
        try:
            c_b = np.linalg.solve(pw.T @ phi, pw.T @ y)
        except np.linalg.LinAlgError:  # a resample that leaves the basis rank-deficient
            boot_f[b] = boot_t[b] = np.nan
            continue
        boot_f[b], boot_t[b] = shares(c_b, fit.alphas, groups)
    z = float(norm.ppf(0.5 + confidence / 2.0))
    return SurrogateIndices(
        names=tuple(names),
        first=first,
        first_ci=z * np.nanstd(boot_f, axis=0, ddof=1),
        total=total,
        total_ci=z * np.nanstd(boot_t, axis=0, ddof=1),
        q2=fit.q2,
        order=fit.order,
        samples=n,
        loo_error=fit.loo_error,
        cross_validation_error=fit.cross_validation_error,
        q_norm=fit.q_norm,
        terms=len(fit.alphas),
        candidates=fit.candidates,
        confidence=confidence,
        fit=fit,
    )


SURROGATE_POINTS = 2**16
"""Scrambled Sobol' points at which the surrogate is evaluated for its percentiles [-]."""


def surrogate_quantiles(fit: PceFit, probabilities: Sequence[float] | np.ndarray, *, seed: int,
                        points: int = SURROGATE_POINTS) -> np.ndarray:
    """Quantiles of the output from the surrogate, evaluated at many quasi-random points.

    Parameters
    ----------
    fit
        The expansion [-].
    probabilities
        Cumulative probabilities in (0, 1) [-].
    seed
        Seed of the scrambled Sobol' points [-].
    points
        Number of points, a power of 2 [-].

    Returns
    -------
    numpy.ndarray
        One quantile per probability [output unit]. Only as good as the surrogate: callers
        compare its leave-one-out error with a threshold first.
    """
    d = fit.alphas.shape[1]
    unit = qmc.Sobol(d=d, scramble=True, seed=seed).random(points)
    return np.quantile(fit.predict(unit), np.asarray(probabilities, dtype=float))
