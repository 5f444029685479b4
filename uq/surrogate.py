"""Polynomial-chaos (PCE) surrogate Sobol indices for designs without a Saltelli structure.

A Latin-hypercube or random study gives percentiles and exceedance directly, but its samples
cannot feed the Saltelli estimators. Fitting an orthonormal polynomial-chaos expansion to the
samples (least-squares point collocation) gives Sobol indices analytically from the expansion
coefficients (Sudret 2008): for an orthonormal basis ``Psi_k`` with multi-indices ``alpha_k``,

``V = sum_{k != 0} c_k^2``,  ``S_i = sum_{alpha_k = n e_i, n > 0} c_k^2 / V``,
``S_Ti = sum_{alpha_k,i > 0} c_k^2 / V``.                                            (P.1)

The expansion (chaospy's orthonormal Legendre polynomials on a total-degree multi-index set)
is built on the unit hypercube (each input mapped through its own CDF,
which leaves Sobol indices unchanged for independent inputs). Its quality is the leave-one-out
coefficient of determination ``Q2`` (closed form from the hat matrix, Blatman & Sudret 2010);
the indices are only as good as the fit, so they are reported with ``Q2`` and bootstrap
intervals (rows resampled with a seeded generator and the fit repeated).

References
----------
.. [S2008] B. Sudret, "Global sensitivity analysis using polynomial chaos expansions",
   Reliab. Eng. Syst. Saf. 93 (2008) 964–979.
.. [BS2010] G. Blatman, B. Sudret, "An adaptive algorithm to build up sparse polynomial chaos
   expansions for stochastic finite element analysis", Probab. Eng. Mech. 25 (2010) 183–197.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from math import comb

import chaospy
import numpy as np
from scipy import linalg

MAX_ORDER = 5
"""Highest total polynomial order tried [-]."""

SAMPLES_PER_TERM = 3
"""Least samples per expansion term for a fit to be attempted (over-determination) [-]."""


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
        Leave-one-out coefficient of determination of the fit [-].
    order
        Total order of the expansion [-].
    samples
        Finite samples used [-].
    """

    names: tuple[str, ...]
    first: np.ndarray
    first_ci: np.ndarray
    total: np.ndarray
    total_ci: np.ndarray
    q2: float
    order: int
    samples: int


def choose_order(n_samples: int, n_params: int, *, max_order: int = MAX_ORDER) -> int:
    """Highest total order whose term count leaves ``SAMPLES_PER_TERM`` samples per term.

    Parameters
    ----------
    n_samples
        Samples available [-].
    n_params
        Inputs [-].
    max_order
        Cap on the order [-].

    Returns
    -------
    int
        The order, or 0 when not even a linear expansion can be fitted [-].
    """
    order = 0
    for p in range(1, max_order + 1):
        if comb(n_params + p, p) * SAMPLES_PER_TERM <= n_samples:
            order = p
    return order


def _basis(order: int, n_params: int) -> np.ndarray:
    """Multi-indices of the total-degree basis up to ``order``, constant term first."""
    return np.asarray(chaospy.glexindex(0, order + 1, n_params, graded=True), dtype=int)


def _design_matrix(unit: np.ndarray, alphas: np.ndarray, order: int) -> np.ndarray:
    """Orthonormal Legendre tensor basis on [0, 1]^d evaluated at the samples, ``(n, P)``."""
    legendre = chaospy.expansion.legendre(order, lower=0.0, upper=1.0, normed=True)
    n, d = unit.shape
    table = np.stack([np.asarray(legendre(unit[:, j])) for j in range(d)])  # (d, order+1, n)
    phi = np.ones((n, len(alphas)))
    for j in range(d):
        phi *= table[j, alphas[:, j], :].T
    return phi


def _shares(coef: np.ndarray, alphas: np.ndarray, groups: Sequence[Sequence[int]]):
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
        Total order of the expansion; ``None`` chooses it from the sample count [-].
    n_bootstrap
        Bootstrap refits for the intervals [-].
    confidence
        Level of the intervals [-].
    seed
        Seed of the bootstrap generator [-].

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
    order = choose_order(n, d) if order is None else int(order)
    if order < 1 or d == 0 or np.ptp(y) == 0:
        return None
    alphas = _basis(order, d)
    phi = _design_matrix(u, alphas, order)
    # normal equations through a Cholesky factor: the basis is orthonormal, so Phi^T Phi / n is
    # close to the identity and well conditioned; the hat diagonal follows from the same factor
    chol = linalg.cholesky(phi.T @ phi, lower=True)
    coef = linalg.cho_solve((chol, True), phi.T @ y)
    resid = y - phi @ coef
    hat = np.sum(linalg.solve_triangular(chol, phi.T, lower=True) ** 2, axis=0)
    loo = resid / np.maximum(1.0 - hat, 1e-12)
    q2 = 1.0 - np.mean(loo**2) / np.var(y)
    first, total = _shares(coef, alphas, groups)
    rng = np.random.default_rng(seed)
    boot_f = np.empty((n_bootstrap, len(groups)))
    boot_t = np.empty((n_bootstrap, len(groups)))
    for b in range(n_bootstrap):
        # a resample with replacement is a least-squares fit weighted by the draw counts; the
        # basis is orthonormal, so the weighted normal equations are well conditioned
        w = np.bincount(rng.integers(0, n, n), minlength=n).astype(float)
        pw = phi * w[:, None]
        c_b = np.linalg.solve(pw.T @ phi, pw.T @ y)
        boot_f[b], boot_t[b] = _shares(c_b, alphas, groups)
    z = _z(confidence)
    return SurrogateIndices(
        names=tuple(names),
        first=first,
        first_ci=z * np.std(boot_f, axis=0, ddof=1),
        total=total,
        total_ci=z * np.std(boot_t, axis=0, ddof=1),
        q2=float(q2),
        order=order,
        samples=n,
    )


def _z(confidence: float) -> float:
    from scipy.stats import norm

    return float(norm.ppf(0.5 + confidence / 2.0))
