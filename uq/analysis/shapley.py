"""Shapley effects: a variance decomposition that stays meaningful for dependent inputs.

Sobol indices split the output variance into contributions of independent inputs; with
correlated inputs they no longer add up and can mislead. The Shapley effect of input i
(Owen 2014, SIAM/ASA JUQ 2, 245-251, doi:10.1137/130936233; Song, Nelson & Staum 2016,
SIAM/ASA JUQ 4, 1060-1083, doi:10.1137/15M1048070) gives it the average, over every order in
which the inputs can be revealed, of the variance explained when i joins the inputs before it:

    Sh_i = (1 / d!) sum_pi [c(P_i(pi) u {i}) - c(P_i(pi))] / Var(Y),   c(J) = E[Var(Y | X_-J)]
    (eq. S.1)

The effects are non-negative, sum to one and, for independent inputs, lie between the first-
order and the total Sobol index (each equals half of the interaction shared; for an additive
model they are the first-order indices). The estimator here is Song et al.'s random-permutation
estimator (their algorithm 1, N_O = 1, N_I = 3): m random permutations; at each step j of
permutation k the sample variance of ``N_I`` conditional draws estimates
``c(P_j)`` (:func:`plyrisk.design.copula.shapley_rows`), ``c`` of the full set is Var(Y) from
the joint draws, and the steps telescope, so the effects sum to exactly one. Intervals: a
bootstrap over permutations and joint draws together (every resample sums to one).

A layer's effect is the sum of its parameters' effects: the share of the variance the Shapley
allocation gives to that layer's inputs.

The design also gives the four variance-based indices for dependent inputs of Mara &
Tarantola (2012, Reliab. Eng. Syst. Saf. 107, 115-121, doi:10.1016/j.ress.2011.08.008) and
Mara, Tarantola & Annoni (2015, Environ. Model. Softw. 72, 173-183,
doi:10.1016/j.envsoft.2015.07.010; the full indices are the first-order and total indices of
Kucherenko, Tarantola & Annoni 2012, Comput. Phys. Commun. 183, 937-946,
doi:10.1016/j.cpc.2011.12.020). Each input is decorrelated from the others by a Rosenblatt
transform (Rosenblatt 1952, doi:10.1214/aoms/1177729394), closed form inside the Gaussian
copula (:func:`plyrisk.design.copula.rosenblatt_rows`, eq. K.3): with ``e_i`` the innovation
of the normal score of X_i given all the others (the last variable of a transform that ends
with X_i) and ``r_-i`` the part of the other scores independent of X_i (the other variables of
a transform that starts with X_i; their conditional CDFs are a one-to-one map of ``r_-i``):

    S_i^full  = Var(E[Y | X_i]) / Var(Y)                          (eq. S.2)
    ST_i^ind  = E[Var(Y | X_-i)] / Var(Y)                         (eq. S.3)
    S_i^ind   = Var(E[Y | e_i]) / Var(Y)                          (eq. S.4)
    ST_i^full = E[Var(Y | r_-i)] / Var(Y)                         (eq. S.5)

(Mara, Tarantola & Annoni 2015, sec. 2: the first-order and total indices of the first
variable of a transform starting with X_i are the full ones, those of the last variable of a
transform ending with X_i the independent ones; conditioning on X_i is conditioning on its
normal score, a monotone map.) The full indices count what X_i explains including through its
correlated partners; the independent ones only what X_i explains on its own, beyond
everything correlated with it. All four come from pick-and-freeze blocks: the joint draws A, a
second joint block B and, per input, C_i (A's other inputs with B's ``e_i``) and D_i (A's
``r_-i`` with B's X_i), N rows each; C_i shares ``z_-i`` with A and ``e_i`` with B, D_i shares
``r_-i`` with A and X_i with B:

    S_i^full  ~ mean(y_B (y_D_i - y_A)) / V     first order: the estimator Saltelli et al.
    S_i^ind   ~ mean(y_B (y_C_i - y_A)) / V     (2010) recommend, doi:10.1016/j.cpc.2009.09.018
    ST_i^full ~ mean((y_A - y_D_i)^2) / (2 V)   total: Jansen (1999),
    ST_i^ind  ~ mean((y_A - y_C_i)^2) / (2 V)   doi:10.1016/S0010-4655(98)00154-4

with V the variance of the A and B outputs pooled and the outputs centred by their pooled
mean. Intervals: a bootstrap over the rows j, each resample taking A_j, B_j, C_i,j and D_i,j
together. With independent inputs C_i = D_i = A with column i from B and the four are the
Saltelli first-order and Jansen total estimators of the Sobol indices. Without the blocks
(:func:`shapley_effects` called without ``y_rosenblatt``) eqs. S.2 and S.3 come from the ends
of the permutations, ``1 - c(-i) / Var(Y)`` and ``c({i}) / Var(Y)``, about m/d permutations
each.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Sequence
from dataclasses import dataclass, replace
from typing import NamedTuple

import numpy as np

from plyrisk.design.copula import SPAWN

__all__ = ["DependentIndices", "ShapleyEffects", "linear_gaussian_indices",
           "linear_gaussian_shapley", "rank_effects", "rerun_counts", "rosenblatt_indices",
           "shapley_effects"]


@dataclass(frozen=True)
class ShapleyEffects:
    """Shapley effects of one output.

    Attributes
    ----------
    names
        Parameter (or layer) names.
    effect
        Shapley effects, summing to one [-].
    effect_ci
        Half-widths of the bootstrap percentile intervals at ``confidence`` [-].
    confidence
        Level of the intervals [-].
    permutations_used
        Permutations behind the estimate [-].
    permutations_dropped
        Permutations dropped because a conditional draw did not converge [-].
    joint_used
        Joint draws behind Var(Y) [-].
    variance
        Var(Y) from the joint draws [output unit squared].
    constant_output
        True when the output had no variance; the effects are then NaN.
    full_first, full_first_ci
        "Full" first-order index ``Var(E[Y | X_i]) / Var(Y)`` (eq. S.2) and its half-width,
        per parameter [-].
    independent_total, independent_total_ci
        "Independent" total index ``E[Var(Y | X_-i)] / Var(Y)`` (eq. S.3) and its half-width,
        per parameter [-].
    independent_first, independent_first_ci
        "Independent" first-order index ``Var(E[Y | e_i]) / Var(Y)`` (eq. S.4) and its
        half-width, per parameter [-].
    full_total, full_total_ci
        "Full" total index ``E[Var(Y | r_-i)] / Var(Y)`` (eq. S.5) and its half-width, per
        parameter [-].
    rosenblatt_used
        Rows j of the Rosenblatt blocks behind eqs. S.2 to S.5 (a row with any non-finite
        output in A, B, C_i or D_i is dropped whole); 0 without the blocks [-].
    joint_share
        Per effect, the share of its bootstrap variance that comes from the joint draws (behind
        Var(Y)) rather than the permutations, from the same resamples with one source held
        fixed [-]; it says which count narrows the interval (:func:`rerun_counts`).
    """

    names: tuple[str, ...]
    effect: np.ndarray
    effect_ci: np.ndarray
    confidence: float
    permutations_used: int
    permutations_dropped: int
    joint_used: int
    variance: float
    constant_output: bool = False
    full_first: np.ndarray | None = None
    full_first_ci: np.ndarray | None = None
    independent_total: np.ndarray | None = None
    independent_total_ci: np.ndarray | None = None
    independent_first: np.ndarray | None = None
    independent_first_ci: np.ndarray | None = None
    full_total: np.ndarray | None = None
    full_total_ci: np.ndarray | None = None
    rosenblatt_used: int = 0
    joint_share: np.ndarray | None = None


class DependentIndices(NamedTuple):
    """The four variance-based indices of dependent inputs, per parameter [-]."""

    full_first: np.ndarray
    independent_first: np.ndarray
    full_total: np.ndarray
    independent_total: np.ndarray


def rosenblatt_indices(y_a: np.ndarray, y_blocks: np.ndarray, n_params: int, *,
                       confidence: float = 0.90, n_bootstrap: int = 200, seed: int = 0
                       ) -> tuple[DependentIndices, DependentIndices, int]:
    """The four indices of dependent inputs from the joint rows and the Rosenblatt blocks.

    Parameters
    ----------
    y_a
        Output at the joint rows A, shape ``(N,)`` [output unit].
    y_blocks
        Output at the rows of :func:`plyrisk.design.copula.rosenblatt_rows` (B, C_1 .. C_d,
        D_1 .. D_d), shape ``((1 + 2 d) N,)`` [output unit].
    n_params
        d.
    confidence
        Level of the intervals.
    n_bootstrap
        Bootstrap resamples (over the rows j).
    seed
        Seed of the bootstrap.

    Returns
    -------
    estimates, half_widths, rows_used
        Eqs. S.2 to S.5 (module docstring) and the half-widths of their bootstrap percentile
        intervals [-], as :class:`DependentIndices`; NaN without variance or with fewer than
        two usable rows.

    Notes
    -----
    Why the estimators hold (pick-and-freeze, Sobol' 1993 / Saltelli et al. 2010): B and D_i
    share X_i (``z_i`` of B) and nothing else, since D_i's ``r_-i`` is A's and A is
    independent of B; so ``E[y_B y_D_i] = E[E[Y | X_i]^2]`` and, A being independent of B,
    ``E[y_B y_A] = E[Y]^2``: their difference is Var(E[Y | X_i]) (eq. S.2). B and C_i share
    ``e_i`` only, giving Var(E[Y | e_i]) (eq. S.4). A and D_i share ``r_-i``; given it, their
    ``z_i`` are independent draws of its marginal (``z_i`` is independent of ``r_-i``) and
    ``(z_i, r_-i)`` fixes every score, so ``E[(y_A - y_D_i)^2] / 2 = E[Var(Y | r_-i)]``
    (eq. S.5); A and C_i share ``z_-i`` and their ``e_i`` are independent, giving
    E[Var(Y | X_-i)] (eq. S.3). Conditioning on X_i is conditioning on its normal score, since
    ``Distribution.ppf`` is monotone.

    First-order indices by the estimator Saltelli et al. (2010) recommend,
    doi:10.1016/j.cpc.2009.09.018 (B and the block sharing the conditioning variable with it,
    A sharing nothing with B); total indices by Jansen's estimator (Jansen 1999,
    doi:10.1016/S0010-4655(98)00154-4; A and the block sharing the complement with it). The
    conditioning variables are those of Mara, Tarantola & Annoni (2015),
    doi:10.1016/j.envsoft.2015.07.010, inside the Gaussian copula (eq. K.3 of
    :mod:`plyrisk.design.copula`).

    Examples
    --------
    Y = X1 + 2 X2, independent standard normal inputs: every index is 1/5 and 4/5.

    >>> import numpy as np
    >>> from scipy import special
    >>> from plyrisk.design.copula import rosenblatt_rows
    >>> from plyrisk.analysis.shapley import rosenblatt_indices
    >>> a = np.random.default_rng(0).random((20000, 2))
    >>> z = special.ndtri(np.vstack([a, rosenblatt_rows(a, np.eye(2), seed=1)]))
    >>> y = z[:, 0] + 2.0 * z[:, 1]
    >>> est, half, used = rosenblatt_indices(y[:20000], y[20000:], 2)
    >>> est.independent_first.round(1), est.full_total.round(1), used
    (array([0.2, 0.8]), array([0.2, 0.8]), 20000)
    """
    d = int(n_params)
    y_a = np.asarray(y_a, dtype=float)
    n = y_a.size
    blocks = np.asarray(y_blocks, dtype=float).reshape(1 + 2 * d, n)
    ok = np.isfinite(y_a) & np.all(np.isfinite(blocks), axis=0)
    used = int(ok.sum())
    nan = DependentIndices(*(np.full(d, np.nan) for _ in range(4)))
    if used < 2:
        return nan, nan, used
    ya, yb = y_a[ok], blocks[0, ok]
    centre = 0.5 * (ya.mean() + yb.mean())
    ya, yb = ya - centre, yb - centre
    yc = blocks[1:1 + d, ok].T - centre                                # (used, d): C_i
    yd = blocks[1 + d:, ok].T - centre                                 # D_i
    # per row j: the terms whose means over j estimate the four partial variances, in the
    # order of DependentIndices (eqs. S.2, S.4: B with D_i, C_i; eqs. S.5, S.3: A with D_i, C_i)
    terms = np.concatenate([yb[:, None] * (yd - ya[:, None]),          # Var(E[Y | X_i])
                            yb[:, None] * (yc - ya[:, None]),          # Var(E[Y | e_i])
                            0.5 * (ya[:, None] - yd) ** 2,             # E[Var(Y | r_-i)]
                            0.5 * (ya[:, None] - yc) ** 2], axis=1)    # E[Var(Y | X_-i)]

    def indices(w: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Weighted by resample counts ``w`` (a row of ones: the estimate itself)."""
        k = w.sum(axis=1, keepdims=True)
        mean = (w @ ya + w @ yb)[:, None] / (2.0 * k)
        square = (w @ ya**2 + w @ yb**2)[:, None] / (2.0 * k)
        var = (square - mean**2) * (2.0 * k) / (2.0 * k - 1.0)
        with np.errstate(invalid="ignore", divide="ignore"):
            return (w @ terms) / k / var, var[:, 0]

    point, var = indices(np.ones((1, used)))
    if not var[0] > 0.0:
        return nan, nan, used
    rng = np.random.default_rng(np.random.SeedSequence(int(seed), spawn_key=(SPAWN, 12)))
    counts = np.stack([np.bincount(rng.integers(0, used, used), minlength=used)
                       for _ in range(int(n_bootstrap))]).astype(float)
    boot, _ = indices(counts)
    alpha = 0.5 * (1.0 - confidence)
    lo, hi = np.nanquantile(boot, [alpha, 1.0 - alpha], axis=0)
    half = 0.5 * (hi - lo)
    return (DependentIndices(*point[0].reshape(4, d)), DependentIndices(*half.reshape(4, d)),
            used)


def _end_costs(y_cond: np.ndarray, permutations: np.ndarray, inner: int
               ) -> tuple[np.ndarray, np.ndarray]:
    """Per permutation: c of its first input alone, E[Var(Y | X_-first)], and c of all but its
    last input, E[Var(Y | X_last)] [output unit squared]."""
    m, d = permutations.shape
    c = np.var(y_cond.reshape(m, d - 1, inner), axis=2, ddof=1)
    return c[:, 0], c[:, -1]


def _by_input(values: np.ndarray, which: np.ndarray, d: int) -> np.ndarray:
    """Mean of ``values`` over the permutations whose ``which`` input is i, per i."""
    counts = np.bincount(which, minlength=d).astype(float)
    sums = np.bincount(which, weights=values, minlength=d)
    with np.errstate(invalid="ignore", divide="ignore"):
        return sums / counts


def _contributions(y_cond: np.ndarray, permutations: np.ndarray, inner: int
                   ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Per permutation: the contributions without Var(Y) (D0) and the indicator of the last
    input (E), Sh = mean(D0) / Var(Y) + mean(E); and which permutations are usable."""
    m, d = permutations.shape
    c = np.var(y_cond.reshape(m, d - 1, inner), axis=2, ddof=1)       # c(P_j), j = 1..d-1
    ok = np.all(np.isfinite(c), axis=1)
    full = np.zeros((m, d))
    full[:, 1:] = c                                                   # c(P_0) = 0
    steps = np.diff(np.concatenate([full, np.zeros((m, 1))], axis=1), axis=1)
    steps[:, -1] = -c[:, -1] if d > 1 else 0.0                        # + Var(Y) via E
    d0 = np.zeros((m, d))
    e = np.zeros((m, d))
    rows = np.arange(m)[:, None]
    d0[rows, permutations] = steps
    e[rows, permutations[:, -1:]] = 1.0
    return d0, e, ok


def shapley_effects(y_joint: np.ndarray, y_cond: np.ndarray, permutations: np.ndarray, *,
                    names: Sequence[str], inner: int = 3,
                    groups: Sequence[Sequence[int]] | None = None,
                    group_names: Sequence[str] = (), confidence: float = 0.90,
                    n_bootstrap: int = 200, seed: int = 0,
                    y_rosenblatt: np.ndarray | None = None
                    ) -> tuple[ShapleyEffects, ShapleyEffects | None]:
    """Shapley effects per parameter (and per group) by the random-permutation estimator.

    Parameters
    ----------
    y_joint
        Output at the joint draws, shape ``(N,)`` [output unit].
    y_cond
        Output at the conditional draws of :func:`plyrisk.design.copula.shapley_rows`, shape
        ``(m (d - 1) inner,)`` [output unit].
    permutations
        The permutations, shape ``(m, d)`` (:func:`plyrisk.design.copula.shapley_permutations`).
    names
        Parameter names.
    inner
        Conditional draws per step.
    groups, group_names
        Parameter indices per group (layer) and their names.
    confidence
        Level of the intervals.
    n_bootstrap
        Bootstrap resamples.
    seed
        Seed of the bootstrap.
    y_rosenblatt
        Output at the rows of :func:`plyrisk.design.copula.rosenblatt_rows` (paired with the
        joint draws), shape ``((1 + 2 d) N,)`` [output unit]; with it all four indices of
        dependent inputs come from the blocks (:func:`rosenblatt_indices`), without it only
        eqs. S.2 and S.3, from the ends of the permutations.

    Returns
    -------
    per_parameter, per_group
        :class:`ShapleyEffects`; ``per_group`` is ``None`` without groups.

    Notes
    -----
    Eq. S.1 (module docstring), estimated as in Song, Nelson & Staum (2016),
    doi:10.1137/15M1048070, algorithm 1. Non-finite outputs: a permutation with any non-finite
    conditional output is dropped whole; non-finite joint draws are left out of Var(Y).

    Examples
    --------
    Y = X1 + 2 X2 with independent standard normal inputs: the effects are 1/5 and 4/5.

    >>> import numpy as np
    >>> from plyrisk.design.copula import shapley_permutations, shapley_rows
    >>> from plyrisk.analysis.shapley import shapley_effects
    >>> from scipy import special
    >>> r = np.eye(2)
    >>> joint = np.random.default_rng(0).random((4000, 2))
    >>> rows = shapley_rows(joint, r, permutations=2000, seed=3)
    >>> z = special.ndtri(rows)
    >>> y = z[:, 0] + 2.0 * z[:, 1]
    >>> sh, _ = shapley_effects(y[:4000], y[4000:], shapley_permutations(2000, 2, seed=3),
    ...                         names=["x1", "x2"])
    >>> sh.effect.round(1), float(sh.effect.sum())
    (array([0.2, 0.8]), 1.0)
    """
    perms = np.asarray(permutations, dtype=np.int64)
    m, d = perms.shape
    y_a = np.asarray(y_joint, dtype=float)
    yj = y_a[np.isfinite(y_a)]
    g_members = [tuple(g) for g in groups] if groups is not None else None
    n_g = len(g_members) if g_members is not None else 0
    membership = np.zeros((d, n_g))
    for g, members in enumerate(g_members or ()):
        membership[list(members), g] = 1.0

    def result(names_: Sequence[str], eff: np.ndarray, ci: np.ndarray, used: int, var: float,
               constant: bool) -> ShapleyEffects:
        return ShapleyEffects(tuple(names_), eff, ci, float(confidence), used, m - used,
                              int(yj.size), var, constant)

    var = float(np.var(yj, ddof=1)) if yj.size > 1 else math.nan
    if d == 1:
        one = np.ones(1)
        ind = result(names, one, np.zeros(1), m, var, not var > 0)
        grp = (result(group_names, membership[0].copy(), np.zeros(n_g), m, var, not var > 0)
               if g_members is not None else None)
        return ind, grp
    d0, e, ok = _contributions(np.asarray(y_cond, dtype=float), perms, inner)
    d0, e = d0[ok], e[ok]
    used = int(ok.sum())
    if not (var > 0.0) or used < 2:
        nan = np.full(d, np.nan)
        ind = result(names, nan, nan.copy(), used, var, bool(var == 0.0))
        grp = (result(group_names, np.full(n_g, np.nan), np.full(n_g, np.nan), used, var,
                      bool(var == 0.0)) if g_members is not None else None)
        return ind, grp
    effect = d0.mean(axis=0) / var + e.mean(axis=0)
    c_first, c_last = _end_costs(np.asarray(y_cond, dtype=float), perms, inner)
    c_first, c_last = c_first[ok], c_last[ok]
    first_in, last_in = perms[ok, 0], perms[ok, -1]
    # eqs. S.2, S.3 without the Rosenblatt blocks: the last and the first step of every
    # permutation
    full = 1.0 - _by_input(c_last, last_in, d) / var
    indep = _by_input(c_first, first_in, d) / var
    rng = np.random.default_rng(np.random.SeedSequence(int(seed), spawn_key=(SPAWN, 11)))
    boot = np.empty((int(n_bootstrap), d))
    boot_full = np.empty((int(n_bootstrap), d))
    boot_indep = np.empty((int(n_bootstrap), d))
    # the same resamples with one source held fixed: which source sets the widths
    only_perms = np.empty((int(n_bootstrap), d))
    only_joint = np.empty((int(n_bootstrap), d))
    d0_mean, e_mean = d0.mean(axis=0), e.mean(axis=0)
    for b in range(int(n_bootstrap)):
        ip = rng.integers(0, used, used)
        ij = rng.integers(0, yj.size, yj.size)
        v = float(np.var(yj[ij], ddof=1))
        if not v > 0.0:  # a resample without spread (e.g. a rare burn indicator): no estimate
            boot[b] = boot_full[b] = boot_indep[b] = only_perms[b] = only_joint[b] = np.nan
            continue
        boot[b] = d0[ip].mean(axis=0) / v + e[ip].mean(axis=0)
        boot_full[b] = 1.0 - _by_input(c_last[ip], last_in[ip], d) / v
        boot_indep[b] = _by_input(c_first[ip], first_in[ip], d) / v
        only_perms[b] = d0[ip].mean(axis=0) / var + e[ip].mean(axis=0)
        only_joint[b] = d0_mean / v + e_mean
    alpha = 0.5 * (1.0 - confidence)

    def joint_share(m: np.ndarray) -> np.ndarray:
        """Share of the bootstrap variance that comes from the joint draws [-]."""
        vp, vj = np.nanvar(only_perms @ m, axis=0), np.nanvar(only_joint @ m, axis=0)
        with np.errstate(invalid="ignore", divide="ignore"):
            return np.where(vp + vj > 0.0, vj / (vp + vj), 0.0)

    def half(samples: np.ndarray) -> np.ndarray:
        lo, hi = np.nanquantile(samples, [alpha, 1.0 - alpha], axis=0)
        return 0.5 * (hi - lo)

    ind = replace(result(names, effect, half(boot), used, var, False), full_first=full,
                  full_first_ci=half(boot_full), independent_total=indep,
                  independent_total_ci=half(boot_indep), joint_share=joint_share(np.eye(d)))
    if y_rosenblatt is not None:
        est, hw, rows = rosenblatt_indices(y_a, y_rosenblatt, d, confidence=confidence,
                                           n_bootstrap=n_bootstrap, seed=seed)
        ind = replace(ind, full_first=est.full_first, full_first_ci=hw.full_first,
                      independent_first=est.independent_first,
                      independent_first_ci=hw.independent_first, full_total=est.full_total,
                      full_total_ci=hw.full_total, independent_total=est.independent_total,
                      independent_total_ci=hw.independent_total, rosenblatt_used=rows)
    grp = None
    if g_members is not None:
        grp = replace(result(group_names, effect @ membership, half(boot @ membership), used,
                             var, False), joint_share=joint_share(membership))
    return ind, grp


def _up(count: float) -> int:
    """A count rounded up, ignoring floating-point dust."""
    return math.ceil(round(count, 6))


def _needed(effects: ShapleyEffects, k: int, ci_threshold: float) -> tuple[float, float]:
    """Factors on (permutations, joint draws) that bring effect k's half-width to the
    threshold: the permutations alone (``inf`` when the joint draws' part already exceeds
    it), else both by the same factor (half-widths squared add over the two sources, each
    shrinking as 1 / count)."""
    h = float(effects.effect_ci[k])
    share = (float(effects.joint_share[k]) if effects.joint_share is not None else 0.0)
    thr2, h2 = ci_threshold**2, h * h
    if thr2 > share * h2:
        return (1.0 - share) * h2 / (thr2 - share * h2), 1.0
    return h2 / thr2, h2 / thr2


def rerun_counts(effects: ShapleyEffects, *, ci_threshold: float
                 ) -> tuple[int, int] | None:
    """``(permutations, joint draws)`` that would bring every interval within the threshold,
    or ``None`` when all are; the joint draws stay as they are unless the permutations alone
    cannot do it (:attr:`ShapleyEffects.joint_share`; half-widths shrink as 1 / sqrt(count)).
    """
    wide = [k for k in range(len(effects.names))
            if math.isfinite(float(effects.effect_ci[k]))
            and float(effects.effect_ci[k]) > ci_threshold]
    if not wide:
        return None
    m = effects.permutations_used + effects.permutations_dropped
    factors = [_needed(effects, k, ci_threshold) for k in wide]
    if any(f[1] > 1.0 for f in factors):
        # both counts by one factor F: every half-width squared shrinks by F, so F is the
        # largest (h / threshold)^2, which also covers the effects the permutations could settle
        both = max(float(effects.effect_ci[k]) ** 2 / ci_threshold**2 for k in wide)
        return _up(m * both), _up(effects.joint_used * both)
    return _up(m * max(f[0] for f in factors)), effects.joint_used


def rank_effects(effects: ShapleyEffects, *, ci_threshold: float) -> list:
    """Parameters (or layers) ranked by Shapley effect, largest first, as
    :class:`plyrisk.analysis.sobol.RankedIndex` records (first = total = the effect).

    ``suggested_base_samples`` is the permutation count that would bring the interval to
    ``ci_threshold`` (the permutations' part of the half-width shrinks as 1 / sqrt(m)); ``None``
    when the joint draws' part alone exceeds it (more ``samples`` needed: :func:`rerun_counts`).
    """
    from plyrisk.analysis.sobol import RankedIndex

    n_design = effects.permutations_used + effects.permutations_dropped
    out = []
    for k, name in enumerate(effects.names):
        s, ci = float(effects.effect[k]), float(effects.effect_ci[k])
        converged = bool(ci <= ci_threshold)
        suggested = None
        if not converged and math.isfinite(ci):
            perm, joint = _needed(effects, k, ci_threshold)
            suggested = _up(n_design * perm) if joint == 1.0 else None
        out.append(RankedIndex(name, s, ci, s, ci, converged, suggested,
                               first_converged=converged, total_converged=converged))
    return sorted(out, key=lambda r: math.inf if math.isnan(r.total) else -r.total)


def linear_gaussian_indices(coefficients: Sequence[float], covariance: np.ndarray
                            ) -> DependentIndices:
    """Exact indices of dependent inputs of ``Y = b^T X``, X multivariate normal.

    Parameters
    ----------
    coefficients
        b, shape ``(d,)`` [output unit per input unit].
    covariance
        Covariance of X, positive definite [input unit squared].

    Returns
    -------
    DependentIndices
        ``full_first = full_total = (S b)_i^2 / (S_ii Var(Y))`` and
        ``independent_first = independent_total = b_i^2 (S_ii - S_i,-i S_-i,-i^-1 S_-i,i) /
        Var(Y) = b_i^2 / ((S^-1)_ii Var(Y))`` [-].

    Notes
    -----
    Eqs. S.2 to S.5 with the Gaussian conditional moments (Mara, Tarantola & Annoni 2015,
    doi:10.1016/j.envsoft.2015.07.010, linear models; Iooss & Prieur 2019,
    doi:10.1615/Int.J.UncertaintyQuantification.2019028372). With ``X_-i = S_-i,i X_i / S_ii +
    r_-i``, ``Y = X_i (S b)_i / S_ii + b_-i^T r_-i``: given r_-i the variance left is
    ``(S b)_i^2 / S_ii``, the same as Var(E[Y | X_i]), so the full indices agree. With
    ``X_i = E[X_i | X_-i] + e_i``, Var(e_i) = 1 / (S^-1)_ii: ``Y = b_i e_i + f(X_-i)`` and both
    independent indices are ``b_i^2 / (S^-1)_ii / Var(Y)``. A linear model has no
    interactions, so first-order and total indices agree in each pair.

    Examples
    --------
    Y = X1 + X2, unit variances, correlation 0.5: Var(Y) = 3, the full indices 1.5^2 / 3 =
    0.75, the independent ones (1 - 0.25) / 3 = 0.25.

    >>> import numpy as np
    >>> from plyrisk.analysis.shapley import linear_gaussian_indices
    >>> idx = linear_gaussian_indices([1, 1], np.array([[1, 0.5], [0.5, 1]]))
    >>> idx.full_first.round(3), idx.independent_first.round(3)
    (array([0.75, 0.75]), array([0.25, 0.25]))
    """
    b = np.asarray(coefficients, dtype=float)
    s = np.asarray(covariance, dtype=float)
    d = b.size
    total = float(b @ s @ b)
    full = (s @ b) ** 2 / np.diag(s) / total
    indep = np.empty(d)
    for i in range(d):
        rest = [k for k in range(d) if k != i]
        cond = s[i, i] - (s[i, rest] @ np.linalg.solve(s[np.ix_(rest, rest)], s[rest, i])
                          if rest else 0.0)
        indep[i] = b[i] ** 2 * cond / total
    # eq. S.4 through the precision matrix: Var(e_i) = 1 / (S^-1)_ii (equal to indep)
    first_ind = b**2 / np.diag(np.linalg.inv(s)) / total
    return DependentIndices(full, first_ind, full.copy(), indep)


def linear_gaussian_shapley(coefficients: Sequence[float], covariance: np.ndarray
                            ) -> np.ndarray:
    """Exact Shapley effects of ``Y = b^T X`` with ``X`` multivariate normal.

    Parameters
    ----------
    coefficients
        b, shape ``(d,)`` [output unit per input unit].
    covariance
        Covariance of X, shape ``(d, d)``, positive definite [input unit squared].

    Returns
    -------
    numpy.ndarray
        Shapley effects, summing to one [-].

    Notes
    -----
    By the definition (eq. S.1) over all subsets, with the closed-form conditional variance
    ``Var(Y | X_C) = b_J^T (S_JJ - S_JC S_CC^-1 S_CJ) b_J``, J the complement of C (Owen &
    Prieur 2017, SIAM/ASA JUQ 5, 986-1002, doi:10.1137/16M1097717; Iooss & Prieur 2019,
    doi:10.1615/Int.J.UncertaintyQuantification.2019028372). Exponential in d; for d <= 15.

    Examples
    --------
    Y = X1 + X2 + X3, unit variances, X2 and X3 correlated 0.5 (Iooss & Prieur 2019, sec. 3.1:
    Sh_1 = 1/s2, Sh_2 = Sh_3 = (1 + rho) / s2 with s2 = 3 + 2 rho = 4):

    >>> import numpy as np
    >>> from plyrisk.analysis.shapley import linear_gaussian_shapley
    >>> cov = np.array([[1, 0, 0], [0, 1, 0.5], [0, 0.5, 1]])
    >>> linear_gaussian_shapley([1, 1, 1], cov).round(4)
    array([0.25 , 0.375, 0.375])
    """
    b = np.asarray(coefficients, dtype=float)
    s = np.asarray(covariance, dtype=float)
    d = b.size
    total = float(b @ s @ b)

    def cost(j: tuple[int, ...]) -> float:  # E[Var(Y | X_-J)]
        if not j:
            return 0.0
        rest = [i for i in range(d) if i not in j]
        jj = list(j)
        cov = s[np.ix_(jj, jj)]
        if rest:
            cov = cov - s[np.ix_(jj, rest)] @ np.linalg.solve(s[np.ix_(rest, rest)],
                                                              s[np.ix_(rest, jj)])
        return float(b[jj] @ cov @ b[jj])

    costs = {j: cost(j) for k in range(d + 1) for j in itertools.combinations(range(d), k)}
    out = np.zeros(d)
    for i in range(d):
        others = [k for k in range(d) if k != i]
        for size in range(d):
            w = 1.0 / (d * math.comb(d - 1, size))
            for sub in itertools.combinations(others, size):
                with_i = tuple(sorted((*sub, i)))
                out[i] += w * (costs[with_i] - costs[sub])
    return out / total
