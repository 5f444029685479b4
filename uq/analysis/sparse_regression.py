"""Least-angle regression (LARS) path with the leave-one-out error of a least-squares refit.

Sparse regression for the polynomial-chaos surrogate (:mod:`plyrisk.analysis.pce`) when the
candidate
basis has more terms than plain least squares can fit. LARS (Efron et al. 2004) adds the
columns of the design matrix one at a time: each step moves the fit along the direction
equiangular to the active columns until an inactive column is as correlated with the residual
as the active ones, and that column enters. Following the hybrid scheme of Blatman & Sudret
(2011), the LARS coefficients are not used: after each entry the constant and the active
columns are refitted by ordinary least squares and scored by the leave-one-out error of that
refit, in closed form from the hat matrix,

``eps_LOO = mean(((y - y_hat) / (1 - h))^2) / var(y)``,                               (L.1)

``eps*_LOO = eps_LOO * N / (N - P) * (1 + tr((Phi_A^T Phi_A)^-1))``                  (L.2)

(P terms of the refit, the constant included; Chapelle et al. 2002). One Gram–Schmidt
factor ``[1, Phi_A] = Q R`` (orthogonalised twice) serves both: the LARS Gram matrix of the
centred, normalised active columns is ``R_A^T R_A`` with the constant's row and column left
out, and the refit's hat diagonal, residual and ``tr(R^-1 R^-T)`` are updated by one column
per step, so a path of k steps costs ``O(k N P)``.

The path stops early once the corrected error has not improved for
``max(PATIENCE_STEPS, PATIENCE_FRACTION * steps)`` steps: past its minimum the refit only
chases noise and the remaining steps cannot be chosen.

References
----------
.. [E2004] B. Efron, T. Hastie, I. Johnstone, R. Tibshirani, "Least angle regression",
   Ann. Statist. 32 (2004) 407–499.
.. [BS2011] G. Blatman, B. Sudret, "Adaptive sparse polynomial chaos expansion based on least
   angle regression", J. Comput. Phys. 230 (2011) 2345–2367.
.. [C2002] O. Chapelle, V. Vapnik, Y. Bengio, "Model selection for small sample regression",
   Machine Learning 48 (2002) 9–23.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import linalg

__all__ = ["LarsPath", "lars_path"]

PATIENCE_STEPS = 20
"""Steps without a better corrected error after which the path stops, at least [-]."""

PATIENCE_FRACTION = 0.25
"""... or this fraction of the steps taken, whichever is more [-]."""

DEPENDENT = 1e-7
"""A column whose part orthogonal to the active ones is below this fraction of its norm is
numerically dependent on them and is passed over [-]."""


@dataclass(frozen=True, eq=False)
class LarsPath:
    """The columns in order of entry and the leave-one-out errors of the refits.

    Attributes
    ----------
    entered
        Indices of the design-matrix columns in the order they entered (never column 0, the
        constant, which every refit holds) [-].
    loo_error
        ``eps_LOO`` (L.1) of the refit on the constant and ``entered[:k + 1]``, per step k [-].
    corrected_loo_error
        The same with the small-sample correction (L.2) [-].
    """

    entered: np.ndarray
    loo_error: np.ndarray
    corrected_loo_error: np.ndarray


def lars_path(phi: np.ndarray, y: np.ndarray, *, max_terms: int,
              patience_steps: int = PATIENCE_STEPS,
              patience_fraction: float = PATIENCE_FRACTION) -> LarsPath:
    """LARS entry order of the columns of ``phi`` and the leave-one-out error at each step.

    Parameters
    ----------
    phi
        Design matrix, shape ``(N, P)``; column 0 must be the constant term (it is in every
        refit and never enters) [-].
    y
        Output per row, finite, shape ``(N,)`` [output unit].
    max_terms
        Most terms of a refit, the constant included; the path also stops at ``N - 1`` terms
        and when no column is left [-].
    patience_steps, patience_fraction
        Early stop: after ``max(patience_steps, patience_fraction * steps)`` steps without a
        smaller corrected error [-].

    Returns
    -------
    LarsPath
        Empty arrays when no column can enter (constant columns only, or ``max_terms < 2``).
    """
    phi = np.asarray(phi, dtype=float)
    y = np.asarray(y, dtype=float)
    n, p = phi.shape
    if y.shape != (n,):
        raise ValueError(f"y must have shape ({n},), got {y.shape}")
    steps = max(min(int(max_terms) - 1, p - 1, n - 2), 0)
    var = float(np.var(y))
    # norms of the centred columns; LARS works on centred, normalised columns
    col_mean = phi.mean(axis=0)
    scale = np.sqrt(np.maximum(np.einsum("ij,ij->j", phi, phi) - n * col_mean**2, 0.0))
    available = scale > DEPENDENT * np.sqrt(np.einsum("ij,ij->j", phi, phi))
    available[0] = False
    scale[~available] = 1.0
    if steps == 0 or not available.any() or var == 0:
        empty = np.empty(0)
        return LarsPath(np.empty(0, dtype=np.int64), empty, empty)

    q = np.zeros((n, steps + 1))           # orthonormal basis of [1, phi_A]
    q[:, 0] = 1.0 / np.sqrt(n)
    r_lars = np.zeros((steps, steps))      # R of the signed, centred, normalised active columns
    r_inv = np.zeros((steps + 1, steps + 1))  # inverse of R of [1, phi_A]
    r_inv[0, 0] = 1.0 / np.sqrt(n)
    trace = 1.0 / n                        # tr((Phi_A^T Phi_A)^-1) = ||R^-1||_F^2
    hat = np.full(n, 1.0 / n)
    residual = y - y.mean()                # of the least-squares refit
    corr = (phi.T @ residual) / scale      # correlations with the LARS residual (centred)
    corr[~available] = 0.0
    entered: list[int] = []
    loo: list[float] = []
    corrected: list[float] = []
    best, since = np.inf, 0
    direction = None
    j = int(np.argmax(np.where(available, np.abs(corr), -1.0)))
    while True:
        k = len(entered)
        available[j] = False
        v = phi[:, j].copy()
        coef = q[:, :k + 1].T @ v
        v -= q[:, :k + 1] @ coef
        again = q[:, :k + 1].T @ v
        v -= q[:, :k + 1] @ again
        coef += again
        rho = float(np.linalg.norm(v))
        if rho > DEPENDENT * np.linalg.norm(phi[:, j]):
            col = v / rho
            new_hat = hat + col**2
            if np.any(new_hat >= 1.0 - 1e-10):  # a sample the refit would interpolate
                break
            q[:, k + 1], hat = col, new_hat
            t = r_inv[:k + 1, :k + 1] @ coef
            r_inv[:k + 1, k + 1] = -t / rho
            r_inv[k + 1, k + 1] = 1.0 / rho
            trace += (t @ t + 1.0) / rho**2
            residual -= (col @ y) * col
            sign = 1.0 if corr[j] >= 0 else -1.0
            r_lars[:k, k] = sign * coef[1:] / scale[j]
            r_lars[k, k] = sign * rho / scale[j]
            entered.append(j)
            terms = k + 2
            err = float(np.mean((residual / (1.0 - hat)) ** 2) / var)
            loo.append(err)
            corrected.append(err * n / (n - terms) * (1.0 + trace))
            if corrected[-1] < best:
                best, since = corrected[-1], 0
            else:
                since += 1
            if len(entered) >= steps or since >= max(patience_steps,
                                                      patience_fraction * len(entered)):
                break
            # the equiangular direction of the active columns (Efron et al. 2004, eq. 2.6)
            m = len(entered)
            r_a = r_lars[:m, :m]
            g_inv_1 = linalg.solve_triangular(
                r_a, linalg.solve_triangular(r_a, np.ones(m), trans="T", check_finite=False),
                check_finite=False)
            a_a = 1.0 / np.sqrt(np.sum(g_inv_1))
            u = q[:, 1:m + 1] @ (r_a @ (a_a * g_inv_1))
            direction = (a_a, (phi.T @ u) / scale)
        if not available.any():
            break
        if direction is None:  # the first pick was dependent on the constant: the next one
            j = int(np.argmax(np.where(available, np.abs(corr), -1.0)))
            continue
        # the step to the next entry (Efron et al. 2004, eq. 2.13)
        a_a, along = direction
        level = float(np.mean(np.abs(corr[entered])))
        with np.errstate(divide="ignore", invalid="ignore"):
            gamma = np.minimum(
                np.where((level - corr) / (a_a - along) > 0, (level - corr) / (a_a - along),
                         np.inf),
                np.where((level + corr) / (a_a + along) > 0, (level + corr) / (a_a + along),
                         np.inf))
        gamma[~available] = np.inf
        j = int(np.argmin(gamma))
        if not np.isfinite(gamma[j]):
            break
        corr = corr - gamma[j] * along
    return LarsPath(np.asarray(entered, dtype=np.int64), np.asarray(loo),
                    np.asarray(corrected))
