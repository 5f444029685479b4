"""What-if runs (one parameter tightened) and the allowable spread of each parameter alone.

Both use one CRN design (:class:`plyrisk.tolerances.core.Runner`); see
:mod:`plyrisk.tolerances.study`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from plyrisk.study.distributions import Distribution
from plyrisk.tolerances.core import (
    XTOL,
    Outcome,
    Runner,
    ToleranceProblem,
    ToleranceSettings,
    factor_cap,
    factor_grid,
    largest_meeting,
)

__all__ = ["AllowableSpread", "WhatIf", "WhatIfStudy", "allowable_spreads", "what_if"]


# ----------------------------------------------------------------------------------------------
# What-if
# ----------------------------------------------------------------------------------------------


@dataclass(frozen=True, eq=False)
class WhatIf:
    """One parameter tightened: spread halved, and held at its nominal.

    Attributes
    ----------
    name
        The parameter.
    halved, nominal
        The run with the spread halved (factor 0.5) and held at the nominal (factor 0).
    contribution
        The parameter's variance contribution at its current spread, V_i, at the reference
        exposure [K^2]: the least-squares fit of Var(Y_f - Y_0) = f^2 V_i over the CRN pairs
        f = 1 (baseline) and f = 0.5, Y_0 being the run held at the nominal. Exact for an
        additive model; with interactions it includes them (like a total-effect index).
    variance_share
        ``contribution`` / Var(Y) at the reference exposure (a first-order estimate; the
        shares add to about 1 for a nearly additive model).
    variance_drop
        Var(Y) - Var(Y_0): the drop in output variance when the parameter is held at its
        nominal [K^2]. Noisier for small contributors (it carries the sample covariances with
        every other input) and may come out slightly negative.
    """

    name: str
    halved: Outcome
    nominal: Outcome
    contribution: float
    variance_share: float
    variance_drop: float


@dataclass(frozen=True, eq=False)
class WhatIfStudy:
    """The baseline run and every parameter's what-if runs, on one CRN design.

    Attributes
    ----------
    baseline
        The current specification.
    rows
        One :class:`WhatIf` per parameter, in problem order.
    reference_scenario
        The exposure the variance shares refer to: the worst at baseline.
    seed, samples
        The design.
    """

    baseline: Outcome
    rows: tuple[WhatIf, ...]
    reference_scenario: int
    seed: int
    samples: int


def what_if(problem: ToleranceProblem, settings: ToleranceSettings) -> WhatIfStudy:
    """Baseline and, per parameter, the outcome with its spread halved or held at nominal.

    Parameters
    ----------
    problem
        The problem.
    settings
        Design, target and confidence.

    Returns
    -------
    WhatIfStudy
    """
    return run_what_if(Runner(problem, settings))


def run_what_if(run: Runner) -> WhatIfStudy:
    """:func:`what_if` on an existing design."""
    y_base = run.output({})
    base = run.summarise(y_base)
    ref = base.scenario
    v0 = base.variance[ref]
    rows = []
    for j, (name, dist) in enumerate(zip(run.problem.names, run.problem.distributions,
                                         strict=True)):
        y_half = run.output({j: dist.with_spread(0.5)})
        y_nom = run.output({j: dist.with_spread(0.0)})
        d1 = _pair_variance(y_base[ref], y_nom[ref])
        d_half = _pair_variance(y_half[ref], y_nom[ref])
        contribution = (d1 + 0.25 * d_half) / (1.0 + 0.25**2)   # least squares, d = f^2 V_i
        nominal = run.summarise(y_nom)
        share = contribution / v0 if v0 > 0 else math.nan
        rows.append(WhatIf(name, run.summarise(y_half), nominal, float(contribution),
                           float(share), float(v0 - nominal.variance[ref])))
    return WhatIfStudy(base, tuple(rows), ref, run.seed, run.settings.samples)


def _pair_variance(a: np.ndarray, b: np.ndarray) -> float:
    """Sample variance of a - b over the pairs where both are finite [K^2]."""
    ok = np.isfinite(a) & np.isfinite(b)
    return float(np.var(a[ok] - b[ok], ddof=1)) if np.count_nonzero(ok) > 1 else math.nan


# ----------------------------------------------------------------------------------------------
# Allowable spread of each parameter alone
# ----------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class AllowableSpread:
    """The largest spread of one parameter (the others as specified) that meets the target.

    Attributes
    ----------
    name
        The parameter.
    status
        ``"limited"`` (met up to ``factor``), ``"any"`` (met at every factor up to ``cap``) or
        ``"none"`` (not met even with the parameter held at its nominal).
    factor
        Largest spread factor meeting the target; ``cap`` for ``"any"``, NaN for ``"none"``.
    cap
        Largest factor tried: ``max_factor``, or less where the physical bounds forbid a
        wider distribution.
    bounded
        True when the physical bounds set ``cap``.
    spread
        The parameter's spread at ``factor`` [SI; ln(gsd) for lognormal].
    monotone
        False when the met region is not one interval from zero (see module notes).
    """

    name: str
    status: str
    factor: float
    cap: float
    bounded: bool
    spread: float
    monotone: bool


def allowable_spreads(problem: ToleranceProblem,
                      settings: ToleranceSettings) -> tuple[AllowableSpread, ...]:
    """Bisection on each parameter's spread factor, with CRN.

    Parameters
    ----------
    problem
        The problem.
    settings
        Target, design, ``max_factor`` and basis.

    Returns
    -------
    tuple of AllowableSpread
        One per parameter, in problem order.
    """
    return run_allowable(Runner(problem, settings))


def run_allowable(run: Runner) -> tuple[AllowableSpread, ...]:
    """:func:`allowable_spreads` on an existing design."""
    out = []
    for j, (name, dist) in enumerate(zip(run.problem.names, run.problem.distributions,
                                         strict=True)):
        cap, bounded = factor_cap(dist, run.settings.max_factor)

        def met(f: float, j: int = j, dist: Distribution = dist) -> bool:
            return run.score({j: dist.with_spread(f)}) <= run.bound

        status, f, mono = largest_meeting(met, factor_grid(cap), XTOL * cap)
        out.append(AllowableSpread(name, status, f, cap, bounded, dist.spread * f, mono))
    return tuple(out)
