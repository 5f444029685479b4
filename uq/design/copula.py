"""Dependent inputs: the Gaussian copula in the unit hypercube, Iman–Conover rank reordering,
and the Shapley design (joint draws plus conditional draws along random permutations).

Every function works on unit-cube coordinates: the copula makes the columns dependent while
each stays uniform on (0, 1), and :meth:`plyrisk.study.distributions.Distribution.ppf` then maps
each column to its marginal, so every marginal keeps its truncation to physical bounds.

Gaussian copula (eq. K.1)
    ``z = Phi^-1(u)`` (independent normal scores), ``z' = L z`` with ``L L^T = R`` the
    Cholesky factor of the linear correlation of the normal scores, ``u' = Phi(z')``. Row by
    row, so any row range is transformed alone (chunk- and worker-invariant). ``R`` comes from
    the rank correlations by ``2 sin(pi rho_s / 6)`` (:mod:`plyrisk.study.correlations`).
Iman–Conover (``lhs_reordering = "iman-conover"``)
    Iman & Conover (1982), "A distribution-free approach to inducing rank correlation among
    input variables", Commun. Stat. Simul. Comput. 11, 311-334, doi:10.1080/03610918208812265:
    each column of a Latin hypercube is reordered (its values unchanged, so its strata stay)
    to follow the ranks of van der Waerden scores given the target correlation.
Conditional normal (eq. K.2)
    Given the scores ``z_C`` of a set C, the scores of the others are normal with mean
    ``R_JC R_CC^-1 z_C`` and covariance ``R_JJ - R_JC R_CC^-1 R_CJ`` (e.g. Anderson 2003, An
    Introduction to Multivariate Statistical Analysis, thm 2.5.1): exact conditional sampling
    inside the copula, whatever the marginals.
Rosenblatt blocks (eq. K.3)
    Two decorrelations of the scores per input i, both exact inside the copula by eq. K.2:
    ``z_i = g_i^T z_-i + s_i e_i`` with ``g_i = R_-i,-i^-1 R_-i,i``,
    ``s_i^2 = 1 - R_i,-i g_i`` and ``e_i`` standard normal independent of ``z_-i`` (``e_i`` is
    the normal score of the last variable of a Rosenblatt transform that ends with X_i); and
    ``z_-i = R_-i,i z_i + r_-i`` with ``r_-i`` independent of ``z_i`` (``r_-i`` carries the
    other variables of a Rosenblatt transform that starts with X_i: the conditional CDFs of
    X_-i given X_i are a one-to-one map of ``r_-i``). Rosenblatt (1952), Ann. Math. Stat. 23,
    470-472, doi:10.1214/aoms/1177729394; Mara, Tarantola & Annoni (2015),
    doi:10.1016/j.envsoft.2015.07.010.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np
from scipy import special

if TYPE_CHECKING:  # pragma: no cover
    from plyrisk.study.correlations import Correlations

__all__ = ["INNER_SAMPLES", "SPAWN", "ShapleyLayout", "cholesky_factor", "correlate",
           "iman_conover", "joint_design", "rosenblatt_rows", "shapley_layout",
           "shapley_permutations", "shapley_rows"]

INNER_SAMPLES = 3
"""Conditional draws per permutation step (N_I = 3, N_O = 1: the choice Song, Nelson & Staum
2016 recommend for the random-permutation estimator)."""
_EDGE = 2.0**-54
SPAWN = 0x5348
"""First spawn key of every random stream of this module (and of the Shapley bootstrap), kept
apart from the spawned blocks ``(k,)`` of a random design drawn from the same seed."""


def cholesky_factor(linear: np.ndarray) -> np.ndarray:
    """Lower Cholesky factor of a positive definite correlation matrix [-].

    Raises
    ------
    ValueError
        When the matrix is not symmetric positive definite (name its smallest eigenvalue).
    """
    r = np.asarray(linear, dtype=float)
    if r.ndim != 2 or r.shape[0] != r.shape[1] or not np.allclose(r, r.T):
        raise ValueError(f"correlation matrix must be square and symmetric, got shape "
                         f"{r.shape}")
    try:
        return np.linalg.cholesky(r)
    except np.linalg.LinAlgError:
        w = float(np.linalg.eigvalsh(r).min())
        raise ValueError(f"correlation matrix is not positive definite (smallest eigenvalue "
                         f"{w:.3g})") from None


def _phi(z: np.ndarray) -> np.ndarray:
    """Standard normal CDF kept strictly inside (0, 1)."""
    u = special.ndtr(z)
    return np.clip(u, _EDGE, 1.0 - _EDGE)


def _scores(u: np.ndarray) -> np.ndarray:
    return special.ndtri(np.asarray(u, dtype=float))


def correlate(unit: np.ndarray, linear: np.ndarray, *, columns: np.ndarray | None = None
              ) -> np.ndarray:
    """Independent unit-cube rows → rows with a Gaussian copula of correlation ``linear``.

    Parameters
    ----------
    unit
        Independent uniforms, shape ``(n, d)``, strictly inside (0, 1).
    linear
        Linear correlation of the normal scores over ``columns`` (or all d columns) [-].
    columns
        Column indices the correlation applies to; the others are returned unchanged.

    Returns
    -------
    numpy.ndarray
        Uniform marginals, dependent columns, strictly inside (0, 1); row i depends on row i
        of ``unit`` only (eq. K.1).

    Examples
    --------
    >>> import numpy as np
    >>> from scipy import stats
    >>> from plyrisk.design.copula import correlate
    >>> from plyrisk.study.correlations import linear_from_rank
    >>> u = np.random.default_rng(1).random((20000, 2))
    >>> r = linear_from_rank(np.array([[1.0, 0.6], [0.6, 1.0]]))
    >>> np.fill_diagonal(r, 1.0)
    >>> v = correlate(u, r)
    >>> round(float(stats.spearmanr(v[:, 0], v[:, 1]).statistic), 2)
    0.6
    """
    unit = np.asarray(unit, dtype=float)
    cols = np.arange(unit.shape[1]) if columns is None else np.asarray(columns, dtype=int)
    lower = cholesky_factor(linear)
    out = unit.copy()
    if len(cols) and unit.shape[0]:
        out[:, cols] = _phi(_scores(unit[:, cols]) @ lower.T)
    return out


def iman_conover(unit: np.ndarray, linear: np.ndarray, *, seed: int,
                 columns: np.ndarray | None = None) -> np.ndarray:
    """Reorder the columns of a design so their ranks follow a target correlation.

    Parameters
    ----------
    unit
        A design (e.g. a Latin hypercube), shape ``(n, d)``.
    linear
        Target linear correlation of the van der Waerden scores over ``columns`` [-].
    seed
        Seed of the random score permutations.
    columns
        Column indices to reorder (default all).

    Returns
    -------
    numpy.ndarray
        The same values per column, reordered (Iman & Conover 1982).
    """
    unit = np.asarray(unit, dtype=float)
    n = unit.shape[0]
    cols = np.arange(unit.shape[1]) if columns is None else np.asarray(columns, dtype=int)
    k = len(cols)
    rng = np.random.default_rng(np.random.SeedSequence(seed, spawn_key=(SPAWN, 7)))
    base = special.ndtri(np.arange(1, n + 1) / (n + 1.0))
    scores = np.column_stack([rng.permutation(base) for _ in range(k)])
    e = np.corrcoef(scores, rowvar=False).reshape(k, k)
    target = cholesky_factor(linear)
    t = scores @ np.linalg.inv(np.linalg.cholesky(e)).T @ target.T
    out = unit.copy()
    for c, j in enumerate(cols):
        ranks = np.argsort(np.argsort(t[:, c], kind="stable"), kind="stable")
        out[:, j] = np.sort(unit[:, j])[ranks]
    return out


def joint_design(design: str, samples: int, names: Sequence[str], *, seed: int,
                 correlations: Correlations | None = None, optimization: str | None = None
                 ) -> np.ndarray:
    """Draws from the joint distribution in the unit cube: a design through the copula.

    Parameters
    ----------
    design
        ``"lhs"``, ``"sobol"`` (points of a scrambled Sobol' sequence) or ``"random"``.
    samples
        Rows.
    names
        The study's parameter names (the columns).
    seed
        Seed of the design (and of the Iman–Conover scores).
    correlations
        The study's :class:`plyrisk.study.correlations.Correlations`; ``None``: independent.
    optimization
        Latin hypercube optimization (``lhs`` only).

    Returns
    -------
    numpy.ndarray
        Shape ``(samples, d)``: uniform marginals, dependent through the Gaussian copula (or
        a Latin hypercube reordered by Iman–Conover when the correlations ask for it).
    """
    from plyrisk.design.sampling import DesignPlan

    d = len(names)
    kind = "sobol-sequence" if design == "sobol" else design
    unit = DesignPlan(kind, int(samples), d, int(seed),
                      optimization=optimization if kind == "lhs" else None).design().unit
    if correlations is None:
        return np.array(unit)
    cols = np.array([list(names).index(n) for n in correlations.names], dtype=int)
    if correlations.lhs_reordering == "iman-conover" and design == "lhs":
        return iman_conover(unit, correlations.linear, seed=int(seed), columns=cols)
    return correlate(unit, correlations.linear, columns=cols)


def shapley_permutations(permutations: int, n_params: int, *, seed: int) -> np.ndarray:
    """The random permutations of a Shapley design, shape ``(m, d)`` [-].

    Drawn by ``numpy.random.default_rng(numpy.random.SeedSequence(seed,
    spawn_key=(SPAWN, 1)))``,
    so the analysis redraws the ones the design used.
    """
    rng = np.random.default_rng(np.random.SeedSequence(int(seed), spawn_key=(SPAWN, 1)))
    return np.argsort(rng.random((int(permutations), int(n_params))), axis=1)


@dataclass(frozen=True)
class ShapleyLayout:
    """Where the rows of a Shapley design are.

    Attributes
    ----------
    joint
        Rows drawn from the joint distribution (first ``joint`` rows), behind Var(Y) and the
        percentiles.
    permutations
        Random permutations m.
    n_params
        Parameters d.
    inner
        Conditional draws per permutation step.
    """

    joint: int
    permutations: int
    n_params: int
    inner: int = INNER_SAMPLES

    @property
    def steps(self) -> int:
        """Permutation steps with conditional draws, ``d - 1`` [-]."""
        return max(self.n_params - 1, 0)

    @property
    def conditional(self) -> int:
        """Conditional rows, ``m (d - 1) inner`` [-]."""
        return self.permutations * self.steps * self.inner

    @property
    def rosenblatt(self) -> int:
        """Rows of the Rosenblatt blocks (:func:`rosenblatt_rows`), ``(1 + 2 d) joint`` for
        d >= 2, else none [-]."""
        return (1 + 2 * self.n_params) * self.joint if self.steps else 0

    @property
    def n_rows(self) -> int:
        """``joint + m (d - 1) inner + (1 + 2 d) joint`` rows (the last term for d >= 2) [-]."""
        return self.joint + self.conditional + self.rosenblatt


def shapley_layout(joint: int, permutations: int, n_params: int) -> ShapleyLayout:
    """The :class:`ShapleyLayout` of a design [-]."""
    return ShapleyLayout(int(joint), int(permutations), int(n_params))


def shapley_rows(joint_unit: np.ndarray, linear: np.ndarray, *, permutations: int, seed: int,
                 inner: int = INNER_SAMPLES) -> np.ndarray:
    """The conditional rows of a Shapley design, after its joint rows.

    For permutation k and step j = 1 .. d-1, with J the first j inputs of the permutation and
    C the rest: one outer draw of the scores, then ``inner`` draws of the J scores from their
    conditional normal given the outer C scores (eq. K.2); the C columns keep the outer draw.
    The sample variance over the inner draws estimates ``E[Var(Y | X_C)]`` (Song, Nelson &
    Staum 2016, doi:10.1137/15M1048070, algorithm 1 with N_O = 1).

    Parameters
    ----------
    joint_unit
        The joint rows (already dependent), shape ``(N, d)``; returned first.
    linear
        Linear correlation of the normal scores over all d columns [-].
    permutations
        Random permutations m.
    seed
        Seed; permutations from :func:`shapley_permutations`, draws from
        ``SeedSequence(seed, spawn_key=(SPAWN, 2))``.
    inner
        Conditional draws per step.

    Returns
    -------
    numpy.ndarray
        Unit rows, shape ``(N + m (d - 1) inner, d)``; the conditional rows ordered by
        permutation, step, inner draw.
    """
    joint_unit = np.asarray(joint_unit, dtype=float)
    d = joint_unit.shape[1]
    r = np.asarray(linear, dtype=float)
    lower = cholesky_factor(r)
    m = int(permutations)
    perms = shapley_permutations(m, d, seed=seed)
    rng = np.random.default_rng(np.random.SeedSequence(int(seed), spawn_key=(SPAWN, 2)))
    steps = d - 1
    outer = rng.standard_normal((m, max(steps, 1), d)) @ lower.T
    eps = rng.standard_normal((m, max(steps, 1), inner, d))
    z = np.repeat(outer[:, :, None, :], inner, axis=2)  # (m, steps, inner, d)
    # the set J of step j of permutation k, as a bit mask; every (k, j) with the same set
    # shares the conditional mean gain and covariance factor, drawn in one batch
    if steps:
        bits = np.cumsum(1 << perms[:, :steps].astype(np.int64), axis=1)
        flat_z = z.reshape(m * steps, inner, d)
        flat_outer = outer.reshape(m * steps, d)
        flat_eps = eps.reshape(m * steps, inner, d)
        keys = bits.reshape(-1)
        for key in np.unique(keys):
            where = np.flatnonzero(keys == key)
            chosen = np.flatnonzero((int(key) >> np.arange(d)) & 1)
            rest = np.setdiff1d(np.arange(d), chosen)
            r_jc = r[np.ix_(chosen, rest)]
            gain = np.linalg.solve(r[np.ix_(rest, rest)], r_jc.T).T      # R_JC R_CC^-1
            cov = r[np.ix_(chosen, chosen)] - gain @ r_jc.T
            chol = np.linalg.cholesky((cov + cov.T) / 2.0)
            mean = flat_outer[np.ix_(where, rest)] @ gain.T               # (n, |J|)
            block = flat_z[where]
            block[:, :, chosen] = mean[:, None, :] + flat_eps[where][:, :, :len(chosen)] @ chol.T
            flat_z[where] = block
        z = flat_z.reshape(m, steps, inner, d)
    cond = _phi(z.reshape(-1, d)) if steps else np.empty((0, d))
    return np.vstack([joint_unit, cond])


def rosenblatt_rows(joint_unit: np.ndarray, linear: np.ndarray, *, seed: int) -> np.ndarray:
    """The Rosenblatt blocks of a Shapley design: a second joint block and 2 d mixed blocks.

    With A the joint rows (scores ``z^A``) and B a second, independent joint block drawn here
    (scores ``z^B``), for every input i (eq. K.3):

    * ``C_i``: A's scores of the other inputs, ``z_i = g_i^T z^A_-i + s_i e^B_i`` with B's
      innovation ``e^B_i = (z^B_i - g_i^T z^B_-i) / s_i``; C_i shares only ``e_i`` with B.
    * ``D_i``: ``z_i = z^B_i`` and ``z_-i = z^A_-i + R_-i,i (z^B_i - z^A_i)``; D_i shares only
      ``r_-i`` with A.

    Columns a block takes unchanged from A (or B) keep A's (or B's) unit values exactly; the
    others go through ``Phi`` like every copula row, so each row is a draw of the joint
    distribution and :meth:`plyrisk.study.distributions.Distribution.ppf` applies every
    marginal's truncation to it.

    Parameters
    ----------
    joint_unit
        The joint rows A, shape ``(N, d)``, strictly inside (0, 1).
    linear
        Linear correlation of the normal scores over all d columns [-].
    seed
        Seed; B from ``SeedSequence(seed, spawn_key=(SPAWN, 3))``.

    Returns
    -------
    numpy.ndarray
        Unit rows, shape ``((1 + 2 d) N, d)``: B, then C_1 .. C_d, then D_1 .. D_d (N rows
        each, row j of every block paired with row j of A, and depending on row j of A and
        the seed only).

    Examples
    --------
    >>> import numpy as np
    >>> from plyrisk.design.copula import rosenblatt_rows
    >>> a = np.random.default_rng(0).random((5, 3))
    >>> rosenblatt_rows(a, np.eye(3), seed=1).shape
    (35, 3)
    """
    a_unit = np.asarray(joint_unit, dtype=float)
    n, d = a_unit.shape
    r = np.asarray(linear, dtype=float)
    lower = cholesky_factor(r)
    rng = np.random.default_rng(np.random.SeedSequence(int(seed), spawn_key=(SPAWN, 3)))
    z_b = rng.standard_normal((n, d)) @ lower.T
    b_unit = _phi(z_b)
    z_a = _scores(a_unit)
    first = np.empty((d, n, d))
    total = np.empty((d, n, d))
    for i in range(d):
        rest = np.setdiff1d(np.arange(d), [i])
        gain = np.linalg.solve(r[np.ix_(rest, rest)], r[rest, i])          # g_i
        c = a_unit.copy()
        if np.any(gain != 0.0):
            innovation = z_b[:, i] - z_b[:, rest] @ gain                   # s_i e^B_i
            # z_i of C_i: A's conditional mean plus B's innovation (eq. K.3)
            c[:, i] = _phi(z_a[:, rest] @ gain + innovation)
        else:
            c[:, i] = b_unit[:, i]
        first[i] = c
        t = a_unit.copy()
        t[:, i] = b_unit[:, i]
        moved = rest[r[rest, i] != 0.0]
        if moved.size:
            t[:, moved] = _phi(z_a[:, moved] + np.outer(z_b[:, i] - z_a[:, i], r[moved, i]))
        total[i] = t
    return np.vstack([b_unit, first.reshape(-1, d), total.reshape(-1, d)])
