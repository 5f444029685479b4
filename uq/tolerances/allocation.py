"""The least-cost allocation of spreads over all parameters, and its independent verification.

See :func:`allocate` and ``docs/tolerances.md``.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, replace

import numpy as np

from plyrisk.study.distributions import Distribution
from plyrisk.tolerances.core import (
    XTOL,
    Outcome,
    Runner,
    ToleranceProblem,
    ToleranceSettings,
    factor_cap,
    largest_meeting,
)
from plyrisk.tolerances.whatif import WhatIfStudy, run_what_if

VERIFICATION_SCALE = 4
"""The verification design is this many times larger than the search design."""

__all__ = ["Allocation", "Verification", "allocate", "verification_seed", "verify"]


# ----------------------------------------------------------------------------------------------
# Allocation and its independent verification
# ----------------------------------------------------------------------------------------------


@dataclass(frozen=True, eq=False)
class Verification:
    """The allocation re-run on an independent design (a new seed).

    Attributes
    ----------
    seed, samples
        The new design.
    outcome
        Its statistics.
    value, lower, upper
        The target metric's point estimate and confidence interval at the worst exposure
        [K or -].
    met_estimate, met_bound
        Whether the point estimate / the upper confidence bound meets the bound.
    met
        The verdict, by the same rule as the search: with ``basis = "bound"`` (the default) the
        new run's upper confidence bound meets the bound (``met_bound``); with
        ``basis = "estimate"`` its point estimate does (``met_estimate``). The new design is
        ``VERIFICATION_SCALE`` times larger than the search's.
    """

    seed: int
    samples: int
    outcome: Outcome
    value: float
    lower: float
    upper: float
    met_estimate: bool
    met_bound: bool
    met: bool


@dataclass(frozen=True, eq=False)
class Allocation:
    """Spread factors for all parameters together that meet the target at least cost.

    Attributes
    ----------
    names
        Parameters.
    factors
        Recommended spread factors.
    weights
        Cost weights w_i; the cost is sum(w_i / factor_i).
    contributions
        Calibrated output-variance contributions at the current spread, V_i [K^2].
    caps
        Upper limits of the factors: 1 unless loosening is allowed, else ``max_factor`` or
        the physical-bounds limit; 1 for the parameters kept.
    kept
        The parameters the allocation left at their current spread by request.
    multiplier
        The common multiplier s of the Lagrange ratios (factor_i = min(cap_i, s r_i)).
    status
        ``"met"``, ``"caps"`` (met with every factor at its cap) or ``"infeasible"`` (not met
        even with every influential parameter at its nominal).
    score
        The metric on the calibration design [K or -].
    cost, current_cost
        sum(w_i / f_i) of the allocation (inf when a factor is 0) and of the current spec.
    monotone
        False when the metric was not monotone in the multiplier on the search grid.
    verification
        The independent re-run (new seed).
    """

    names: tuple[str, ...]
    factors: np.ndarray
    weights: np.ndarray
    contributions: np.ndarray
    caps: np.ndarray
    kept: tuple[str, ...]
    multiplier: float
    status: str
    score: float
    cost: float
    current_cost: float
    monotone: bool
    verification: Verification


def verification_seed(seed: int) -> int:
    """The seed of the independent verification run.

    The first 32-bit word of ``numpy.random.SeedSequence(seed, spawn_key=(1,))``: a child of
    the design's seed sequence, independent of the design itself.
    """
    return int(np.random.SeedSequence(int(seed), spawn_key=(1,)).generate_state(1)[0])


def allocate(problem: ToleranceProblem, settings: ToleranceSettings, *,
             whatif: WhatIfStudy | None = None) -> Allocation:
    """Least-cost spread factors meeting the target, verified with a new seed.

    The variance model V(f) = V_0 - sum_i V_i (1 - f_i^2) takes the contributions V_i of the
    what-if runs (:attr:`plyrisk.tolerances.whatif.WhatIf.contribution`); minimising
    sum(w_i / f_i) at a fixed variance budget sum(V_i f_i^2) gives the Lagrange optimum
    f_i = s (w_i / V_i)^(1/3). Factors are clamped to their caps (the optimum with box limits
    keeps one multiplier for the free factors), parameters with V_i <= 0 or kept stay at their
    cap, and the multiplier s is found by bisection on the full model with CRN so that the
    target is met.

    Parameters
    ----------
    problem
        The problem.
    settings
        Target, design, cost weights, ``max_factor``, ``allow_loosening`` and basis.
    whatif
        What-if runs on the same design, to reuse; computed when ``None``.

    Returns
    -------
    Allocation
    """
    return run_allocation(Runner(problem, settings), whatif)


def run_allocation(run: Runner, whatif: WhatIfStudy | None) -> Allocation:
    """:func:`allocate` on an existing design (``whatif`` reused when on the same seed)."""
    p, st = run.problem, run.settings
    keep = set(st.keep or ())
    for what, names in (("cost weights", st.cost), ("keep", keep)):
        unknown = sorted(set(names) - set(p.names))
        if unknown:
            raise ValueError(f"{what} for unknown parameter(s) {unknown}; valid: "
                             f"{', '.join(p.names)}")
    wi = whatif if whatif is not None and whatif.seed == run.seed else run_what_if(run)
    contrib = np.array([r.contribution for r in wi.rows])
    weights = np.array([float(st.cost.get(n, 1.0)) for n in p.names])
    held = np.array([n in keep for n in p.names])
    caps = np.array([factor_cap(d, st.max_factor)[0] if st.allow_loosening and not h else 1.0
                     for d, h in zip(p.distributions, held, strict=True)])
    active = np.isfinite(contrib) & (contrib > 0.0) & ~held
    ratio = np.full(len(p.names), math.inf)
    ratio[active] = np.cbrt(weights[active] / contrib[active])

    def factors(s: float) -> np.ndarray:
        return np.where(active, np.minimum(caps, s * np.where(active, ratio, 0.0)), caps)

    def changes(f: np.ndarray) -> dict[int, Distribution]:
        return {j: d.with_spread(float(f[j])) for j, d in enumerate(p.distributions)
                if f[j] != 1.0}

    def met(s: float) -> bool:
        return run.score(changes(factors(s))) <= run.bound

    s_max = float(np.max(caps[active] / ratio[active])) if np.any(active) else 1.0
    grid = [0.0] + [float(v) for v in s_max * np.geomspace(1 / 64, 1.0, 7)]
    status, s, monotone = largest_meeting(met, grid, XTOL * s_max)
    if status == "none":
        s, status = 0.0, "infeasible"
    elif status == "any":
        status = "caps"
    else:
        status = "met"
    f = factors(s)
    score = run.score(changes(f))
    with np.errstate(divide="ignore"):
        cost = float(np.sum(weights / f))
    ver = verify(run.problem, run.settings, f, seed=verification_seed(run.seed))
    kept = tuple(n for n in p.names if n in keep)
    return Allocation(p.names, f, weights, contrib, caps, kept, float(s), status, score, cost,
                      float(np.sum(weights)), monotone, ver)


def verify(problem: ToleranceProblem, settings: ToleranceSettings,
           factors: Sequence[float] | np.ndarray, *, seed: int) -> Verification:
    """Re-run the model with given spread factors on an independent design.

    Parameters
    ----------
    problem
        The problem.
    settings
        Target, design size, method and basis.
    factors
        Spread factor per parameter.
    seed
        Seed of the new design (e.g. :func:`verification_seed`).

    Returns
    -------
    Verification
    """
    f = np.asarray(factors, dtype=float)
    if f.shape != (len(problem.names),):
        raise ValueError(f"need one factor per parameter ({len(problem.names)}), got shape "
                         f"{f.shape}")
    # A design VERIFICATION_SCALE times larger than the search's, so that the new run's own
    # confidence interval is narrower than the one the allocation was sized on.
    settings = replace(settings, samples=VERIFICATION_SCALE * settings.samples)
    run = Runner(problem, settings, seed=seed)
    out = run.outcome({j: d.with_spread(float(f[j]))
                       for j, d in enumerate(problem.distributions) if f[j] != 1.0})
    s = out.scenario
    if run.target.kind == "quantile":
        value, lower, upper = out.quantile[s], out.quantile_lower[s], out.quantile_upper[s]
    else:
        value, lower, upper = out.exceedance[s], out.exceedance_lower[s], out.exceedance_upper[s]
    est, bnd = bool(value <= run.bound), bool(upper <= run.bound)
    verdict = bnd if settings.basis == "bound" else est  # the same rule as the search
    return Verification(run.seed, settings.samples, out, float(value), float(lower),
                        float(upper), est, bnd, verdict)
