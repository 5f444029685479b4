"""The nominal of one parameter that meets the target at the current tolerances.

See :func:`shift_nominal` and ``docs/tolerances.md``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from plyrisk.study.distributions import Distribution
from plyrisk.tolerances.core import XTOL, Runner, ToleranceProblem, ToleranceSettings, boundary

__all__ = ["NominalShift", "shift_distribution", "shift_nominal"]

NOMINAL_GRID = 17
"""Grid points of the nominal scan before bisection."""


# ----------------------------------------------------------------------------------------------
# Nominal shift
# ----------------------------------------------------------------------------------------------


def shift_distribution(dist: Distribution, nominal: float) -> Distribution:
    """The same distribution moved to a new nominal, spread unchanged.

    normal, truncnormal (with its low/high), tolerance, uniform, triangular, beta (with its
    support) and fixed are translated; lognormal keeps its gsd and moves its median (a scale
    change). The physical bounds stay: a distribution that would cross them raises.

    Parameters
    ----------
    dist
        The distribution [SI].
    nominal
        The new nominal [SI].

    Returns
    -------
    Distribution

    Raises
    ------
    ValueError
        When the moved distribution is invalid (e.g. crosses the physical bounds).
    """
    nominal = float(nominal)
    delta = nominal - dist.nominal
    p = dict(dist.params)
    if dist.kind == "lognormal":
        new = {"median": nominal, "gsd": math.exp(dist.spread)}
    elif dist.kind == "tolerance":
        new = {**p, "nominal": nominal}
    elif dist.kind == "fixed":
        new = {"value": nominal}
    else:
        moving = {"normal": ("mean",), "truncnormal": ("mean", "low", "high"),
                  "uniform": ("low", "high"), "triangular": ("low", "mode", "high"),
                  "beta": ("mean", "low", "high")}[dist.kind]
        if dist.kind == "beta":
            p.setdefault("low", 0.0)
            p.setdefault("high", 1.0)
        new = {k: (v + delta if k in moving else v) for k, v in p.items()}
    return Distribution(dist.kind, new, dist.bounds)


@dataclass(frozen=True)
class NominalShift:
    """The nominal of one parameter that meets the target at the current tolerances.

    Attributes
    ----------
    name
        The parameter.
    status
        ``"met"`` (the current nominal meets the target), ``"shift"`` (move it to
        ``required``) or ``"not reachable"`` (no nominal in [low, high] meets it).
    current
        The current nominal [SI].
    required
        The nominal closest to the current one that meets the target (the current one when
        met; NaN when not reachable) [SI].
    met_from, met_to
        The interval of nominals around ``required`` that meet the target, within the range
        (NaN when not reachable) [SI].
    low, high
        The range searched, narrowed where the physical bounds forbid a distribution [SI].
    monotone
        False when the nominals meeting the target form more than one interval.
    """

    name: str
    status: str
    current: float
    required: float
    met_from: float
    met_to: float
    low: float
    high: float
    monotone: bool


def shift_nominal(problem: ToleranceProblem, settings: ToleranceSettings,
                  name: str | None = None) -> NominalShift:
    """Root-find on one parameter's nominal with CRN so that the target is just met.

    Parameters
    ----------
    problem
        The problem.
    settings
        Target, design, basis and ``nominal_range``.
    name
        The parameter; default ``settings.nominal_shift``.

    Returns
    -------
    NominalShift
    """
    name = name or settings.nominal_shift
    if name is None:
        raise ValueError("no parameter to shift: give name or settings.nominal_shift")
    return run_shift(Runner(problem, settings), name)


def run_shift(run: Runner, name: str) -> NominalShift:
    """:func:`shift_nominal` on an existing design."""
    j = run.problem.index(name)
    dist = run.problem.distributions[j]
    x0 = float(dist.nominal)
    if run.settings.nominal_range is not None:
        lo, hi = run.settings.nominal_range
    elif x0 > 0.0:
        lo, hi = 0.5 * x0, 2.0 * x0
    else:
        width = 10.0 * max(abs(dist.spread), 1e-12)
        lo, hi = x0 - width, x0 + width

    def valid(x: float) -> bool:
        try:
            shift_distribution(dist, x)
        except ValueError:
            return False
        return True

    if not lo <= x0 <= hi:
        raise ValueError(f"nominal_range [{lo:g}, {hi:g}] must contain the current nominal "
                         f"{x0:g} of {name!r}")
    xtol = XTOL * (hi - lo)
    if not valid(lo):
        lo = boundary(valid, x0, lo, xtol)
    if not valid(hi):
        hi = boundary(valid, x0, hi, xtol)

    def met(x: float) -> bool:
        return run.score({j: shift_distribution(dist, x)}) <= run.bound

    grid = sorted(set(np.linspace(lo, hi, NOMINAL_GRID).tolist()) | {x0})
    flags = [met(g) for g in grid]
    if not any(flags):
        return NominalShift(name, "not reachable", x0, math.nan, math.nan, math.nan, lo, hi,
                            True)
    c = grid.index(x0)
    if flags[c]:
        status, k = "met", c
    else:  # the met grid point nearest the current nominal
        k = min((i for i, f in enumerate(flags) if f), key=lambda i: abs(grid[i] - x0))
        status = "shift"
    a = k
    while a > 0 and flags[a - 1]:
        a -= 1
    b = k
    while b < len(grid) - 1 and flags[b + 1]:
        b += 1
    met_from = grid[a] if a == 0 else boundary(met, grid[a], grid[a - 1], xtol)
    met_to = grid[b] if b == len(grid) - 1 else boundary(met, grid[b], grid[b + 1], xtol)
    monotone = sum(1 for i in range(len(flags)) if flags[i] and (i == 0 or not flags[i - 1])) == 1
    if status == "met":
        required = x0
    else:
        required = met_from if grid[k] > x0 else met_to
    return NominalShift(name, status, x0, float(required), float(met_from), float(met_to),
                        float(lo), float(hi), monotone)
