"""Polynomial-chaos expansion (PCE): regression fit, truncation chosen by leave-one-out error,
Sobol indices from the coefficients, and percentiles from the surrogate when it is good enough.

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
high-order interactions) and p = 1, 2, ... while the basis has at most ``n /``
:data:`SAMPLES_PER_TERM` terms. Each is fitted by least squares (normal equations through a
Cholesky factor; the basis is orthonormal, so they are well conditioned) and scored by its
leave-one-out error, in closed form from the hat matrix ``h = diag(Phi (Phi^T Phi)^-1 Phi^T)``:

``eps_LOO = mean(((y - y_hat) / (1 - h))^2) / var(y)``,  ``Q2 = 1 - eps_LOO``;        (P.2)

the basis with the smallest *corrected* error ``eps_LOO * N / (N - P) * (1 + tr((Phi^T
Phi)^-1))`` (Chapelle et al. 2002, as used by Blatman & Sudret 2010) is kept: the correction
penalises bases with nearly as many terms as samples. Every order is tried up to the term
cap (the error need not fall steadily: an even function gains nothing from odd orders).

Intervals. Rows are resampled with a seeded generator and the selected basis refitted; the
half-width is ``z * sd`` of the refitted indices. They show the regression's sampling error,
not the truncation error, which ``eps_LOO`` measures.

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
from dataclasses import dataclass
from functools import cache
from math import comb

import chaospy
import numpy as np
from scipy import linalg
from scipy.stats import norm, qmc

MAX_ORDER = 12
"""Highest total polynomial order tried [-]."""

Q_NORMS = (1.0, 0.75, 0.5)
"""q-norms of the hyperbolic truncations tried (1 = total degree) [-]."""

SAMPLES_PER_TERM = 1.5
"""Least samples per expansion term for a basis to be tried (over-determination) [-]."""

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
        Total order and q-norm of the truncation [-].
    loo_error
        Relative leave-one-out error ``eps_LOO`` (P.2) [-].
    corrected_loo_error
        ``eps_LOO`` with the small-sample correction used for the selection [-].
    samples
        Finite samples fitted [-].
    """

    alphas: np.ndarray
    coef: np.ndarray
    order: int
    q_norm: float
    loo_error: float
    corrected_loo_error: float
    samples: int

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
        Total order of the expansion [-].
    samples
        Finite samples used [-].
    loo_error
        Relative leave-one-out error (P.2) [-].
    q_norm
        q-norm of the truncation [-].
    terms
        Terms of the expansion [-].
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
    q_norm: float = 1.0
    terms: int = 0
    confidence: float = 0.90
    fit: PceFit | None = None


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


def _score(unit, y, alphas, order, q):
    n, p = y.size, len(alphas)
    solved = _least_squares(design_matrix(unit, alphas), y)
    if solved is None:
        return None
    coef, loo, trace = solved
    err = float(np.mean(loo**2) / np.var(y))
    corrected = err * n / (n - p) * (1.0 + trace)
    return PceFit(alphas, coef, order, q, err, corrected, n)


def fit_pce(unit: np.ndarray, y: np.ndarray, *, order: int | None = None,
            max_order: int = MAX_ORDER, q_norms: Sequence[float] = Q_NORMS) -> PceFit | None:
    """Least-squares PCE with the truncation chosen by corrected leave-one-out error.

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
    cap = int(n / SAMPLES_PER_TERM)
    if order is not None:
        if comb(d + int(order), int(order)) > n - 1:
            return None
        return _score(u, y, hyperbolic_basis(int(order), d), int(order), 1.0)
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
            fit = _score(u, y, alphas, p, q)
            if fit is None:
                break
            if best is None or fit.corrected_loo_error < best.corrected_loo_error:
                best = fit
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
    """Sobol indices from a least-squares PCE fitted to unit-hypercube samples.

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
        q_norm=fit.q_norm,
        terms=len(fit.alphas),
        confidence=confidence,
        fit=fit,
    )


SURROGATE_POINTS = 2**16
"""Scrambled Sobol' points at which the surrogate is evaluated for its percentiles [-]."""


def surrogate_quantiles(fit: PceFit, probabilities: Sequence[float], *, seed: int,
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
