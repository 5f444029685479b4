"""The core of the tolerance engine: problem, settings, one CRN run's statistics, searches.

:class:`Runner` holds one unit-hypercube design and maps it through (modified) input
distributions, so that every run of a tolerance study sees the same random numbers; the
conventions (spread factors, worst exposure, basis) are in :mod:`plyrisk.tolerances.study`.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from plyrisk.analysis.statistics import exceedance, quantiles
from plyrisk.design.copula import correlate
from plyrisk.design.sampling import make_design
from plyrisk.study.distributions import Distribution
from plyrisk.study.settings import BASES, DEFAULT_TARGET, METHODS, ToleranceSettings
from plyrisk.study.targets import Target

__all__ = ["BASES", "DEFAULT_TARGET", "METHODS", "Outcome", "Runner", "ToleranceProblem",
           "ToleranceSettings", "boundary", "factor_cap", "factor_grid", "largest_meeting",
           "worst"]

REPORT_PROBABILITY = 0.95
"""Quantile level reported by the what-if runs when the target is an exceedance bound."""
_GRID_BELOW_ONE = (0.0, 0.25, 0.5, 0.75, 1.0)
XTOL = 1e-5          # bisection stops at this fraction of the searched range


@dataclass(frozen=True)
class ToleranceProblem:
    """Uncertain inputs (independent, or dependent through a Gaussian copula), a model and a
    limit.

    Parameters
    ----------
    names
        Parameter names, one per input column.
    distributions
        Input distributions, one per column [SI].
    evaluate
        Maps input values of shape ``(n, d)`` [SI] to the output, shape ``(n_scenarios, n)``
        or ``(n,)`` [K]; non-finite outputs mark failed evaluations (excluded and counted).
    limit
        Limit of the output; "exceed" means strictly above it [K].
    scenario_labels
        Names of the exposures, one per output row; empty for one exposure.
    correlation
        Linear correlation of the inputs' normal scores (a Gaussian copula, see
        :mod:`plyrisk.design.copula`), shape ``(d, d)``; ``None`` for independent inputs.
        The copula acts in the unit cube, so a changed spread keeps the dependence [-].
    """

    names: tuple[str, ...]
    distributions: tuple[Distribution, ...]
    evaluate: Callable[[np.ndarray], np.ndarray]
    limit: float
    scenario_labels: tuple[str, ...] = ()
    correlation: np.ndarray | None = None

    def __post_init__(self) -> None:
        object.__setattr__(self, "names", tuple(self.names))
        object.__setattr__(self, "distributions", tuple(self.distributions))
        if not self.names or len(self.names) != len(self.distributions):
            raise ValueError(f"need one distribution per name, got {len(self.names)} names and "
                             f"{len(self.distributions)} distributions")
        if len(set(self.names)) != len(self.names):
            raise ValueError(f"parameter names must be unique, got {list(self.names)}")
        if not math.isfinite(float(self.limit)):
            raise ValueError(f"limit must be finite, got {self.limit}")

    def index(self, name: str) -> int:
        """Column of the parameter ``name``; ValueError naming the valid names."""
        if name not in self.names:
            raise ValueError(f"unknown parameter {name!r}; valid: {', '.join(self.names)}")
        return self.names.index(name)


# ----------------------------------------------------------------------------------------------
# Outcomes of one CRN run
# ----------------------------------------------------------------------------------------------


@dataclass(frozen=True, eq=False)
class Outcome:
    """Statistics of one run, per exposure (arrays of shape ``(n_scenarios,)``).

    Attributes
    ----------
    probability
        Quantile level reported in ``quantile``: the target's level, or 0.95.
    quantile, quantile_lower, quantile_upper
        That quantile and its confidence interval [K] (NaN bounds when n is too small).
    exceedance, exceedance_lower, exceedance_upper
        P(output > limit) and its Wilson interval.
    variance
        Sample variance of the output [K^2].
    scores
        The target metric on the settings' basis [K or -].
    nonconverged
        Non-finite outputs left out.
    bound
        The target's bound [K or -].
    """

    probability: float
    quantile: np.ndarray
    quantile_lower: np.ndarray
    quantile_upper: np.ndarray
    exceedance: np.ndarray
    exceedance_lower: np.ndarray
    exceedance_upper: np.ndarray
    variance: np.ndarray
    scores: np.ndarray
    nonconverged: np.ndarray
    bound: float

    @property
    def scenario(self) -> int:
        """The worst exposure: where the metric is largest (or not available)."""
        return int(np.argmax(np.where(np.isnan(self.scores), np.inf, self.scores)))

    @property
    def score(self) -> float:
        """The metric at the worst exposure [K or -]; NaN when unavailable."""
        return worst(self.scores)

    @property
    def worst_quantile(self) -> float:
        """The reported quantile at the worst exposure for it [K]."""
        return worst(self.quantile)

    @property
    def worst_exceedance(self) -> float:
        """The exceedance probability at the worst exposure for it."""
        return worst(self.exceedance)

    @property
    def met(self) -> bool:
        """Whether the target holds at every exposure on the settings' basis."""
        return bool(self.score <= self.bound)


def worst(scores: np.ndarray) -> float:
    """The largest of per-exposure values, NaN if any is NaN [unit of scores]."""
    return math.nan if np.any(np.isnan(scores)) else float(np.max(scores))


class Runner:
    """One CRN design and the statistics of the problem's output on it.

    Parameters
    ----------
    problem
        The problem.
    settings
        Target, design (samples, method), basis and confidence.
    seed
        Seed of the design; default ``settings.seed``.

    Attributes
    ----------
    unit
        The design, shape ``(samples, d)``.
    base
        The inputs at the current specification [SI].
    bound
        The target's numeric bound [K or -].
    runs
        Model evaluations so far.
    """

    def __init__(self, problem: ToleranceProblem, settings: ToleranceSettings,
                 seed: int | None = None) -> None:
        seed = settings.seed if seed is None else seed
        if seed is None:
            raise ValueError("settings.seed is None: set a seed (settings_for_study takes the "
                             "study's seed)")
        self.problem, self.settings, self.seed = problem, settings, int(seed)
        self.target: Target = settings.target  # type: ignore[assignment]
        self.bound = self.target.bound(problem.limit)
        self.level = settings.level
        self.probability = (self.target.engine_probability if self.target.kind == "quantile"
                            else REPORT_PROBABILITY)
        d = len(problem.names)
        self.unit = make_design(settings.design, settings.samples, d, seed=self.seed).unit
        if problem.correlation is not None:
            r = np.asarray(problem.correlation, dtype=float)
            cols = np.flatnonzero(np.any((r - np.eye(d)) != 0.0, axis=1))
            if cols.size:
                self.unit = correlate(self.unit, r[np.ix_(cols, cols)], columns=cols)
        self.base = np.empty_like(self.unit)
        for j, dist in enumerate(problem.distributions):
            self.base[:, j] = dist.ppf(self.unit[:, j])
        self.runs = 0

    def inputs(self, changes: Mapping[int, Distribution]) -> np.ndarray:
        """Input values with the distributions of the columns in ``changes`` replaced [SI]."""
        x = self.base.copy()
        for j, dist in changes.items():
            x[:, j] = dist.ppf(self.unit[:, j])
        return x

    def output(self, changes: Mapping[int, Distribution]) -> np.ndarray:
        """The output, shape ``(n_scenarios, n)`` [K]."""
        x = self.inputs(changes)
        y = np.asarray(self.problem.evaluate(x), dtype=float)
        if y.ndim == 1:
            y = y[None, :]
        if y.ndim != 2 or y.shape[1] != x.shape[0]:
            raise ValueError(f"evaluate must return shape (n_scenarios, {x.shape[0]}), got "
                             f"{y.shape}")
        self.runs += 1
        return y

    def scores(self, y: np.ndarray) -> np.ndarray:
        """The target metric per exposure on the settings' basis [K or -]."""
        out = np.full(y.shape[0], math.nan)
        t, limit = self.target, self.problem.limit
        for s, row in enumerate(y):
            v = row[np.isfinite(row)]
            if v.size == 0:
                continue
            if t.kind == "quantile" and self.settings.basis == "estimate":
                out[s] = float(np.quantile(v, self.probability))
            elif t.kind == "quantile":
                out[s] = float(quantiles(v, [self.probability], confidence=self.level).upper[0])
            elif self.settings.basis == "estimate":
                out[s] = float(np.count_nonzero(v > limit) / v.size)
            else:
                out[s] = exceedance(v, limit, confidence=self.level).upper
        return out

    def score(self, changes: Mapping[int, Distribution]) -> float:
        """The metric at the worst exposure for modified distributions [K or -]."""
        return worst(self.scores(self.output(changes)))

    def outcome(self, changes: Mapping[int, Distribution]) -> Outcome:
        """Full statistics of one run."""
        return self.summarise(self.output(changes))

    def summarise(self, y: np.ndarray) -> Outcome:
        """Full statistics of an output of shape ``(n_scenarios, n)`` [K]."""
        n_s = y.shape[0]
        arrays = {k: np.full(n_s, math.nan) for k in (
            "quantile", "quantile_lower", "quantile_upper", "exceedance", "exceedance_lower",
            "exceedance_upper", "variance")}
        bad = np.sum(~np.isfinite(y), axis=1)
        for s, row in enumerate(y):
            v = row[np.isfinite(row)]
            if v.size == 0:
                continue
            q = quantiles(v, [self.probability], confidence=self.level)
            e = exceedance(v, self.problem.limit, confidence=self.level)
            for key, value in (("quantile", q.estimate[0]), ("quantile_lower", q.lower[0]),
                               ("quantile_upper", q.upper[0]), ("exceedance", e.probability),
                               ("exceedance_lower", e.lower), ("exceedance_upper", e.upper),
                               ("variance", np.var(v, ddof=1) if v.size > 1 else math.nan)):
                arrays[key][s] = value
        return Outcome(self.probability, scores=self.scores(y), nonconverged=bad,
                       bound=self.bound, **arrays)


# ----------------------------------------------------------------------------------------------
# Searches
# ----------------------------------------------------------------------------------------------


def boundary(met: Callable[[float], bool], good: float, bad: float, xtol: float) -> float:
    """Bisect between a value that meets the target and one that does not; the last good."""
    for _ in range(200):
        if abs(bad - good) <= xtol:
            break
        mid = 0.5 * (good + bad)
        if met(mid):
            good = mid
        else:
            bad = mid
    return good


def largest_meeting(met: Callable[[float], bool], grid: Sequence[float],
                     xtol: float) -> tuple[str, float, bool]:
    """Largest x of the met region starting at ``grid[0]``: (status, x, monotone).

    status ``"none"`` (not met at ``grid[0]``), ``"any"`` (met on the whole grid) or
    ``"limited"``; monotone is False when a grid point beyond the first failure meets again.
    """
    flags = [met(g) for g in grid]
    if not flags[0]:
        return "none", math.nan, not any(flags)
    if all(flags):
        return "any", float(grid[-1]), True
    k = flags.index(False)
    x = boundary(met, float(grid[k - 1]), float(grid[k]), xtol)
    return "limited", x, not any(flags[k:])


def factor_cap(dist: Distribution, max_factor: float) -> tuple[float, bool]:
    """Largest valid spread factor <= ``max_factor`` and whether the bounds set it."""
    def valid(f: float) -> bool:
        try:
            dist.with_spread(f)
        except ValueError:
            return False
        return True

    if valid(max_factor):
        return float(max_factor), False
    return boundary(valid, 1.0, float(max_factor), XTOL * max_factor), True


def factor_grid(cap: float) -> list[float]:
    """Spread factors scanned before bisection: 0 to 1 by quarters, then doubling to ``cap``."""
    above = np.geomspace(1.0, cap, max(2, math.ceil(math.log2(cap)) + 1)) if cap > 1.0 else ()
    return sorted(set(_GRID_BELOW_ONE) | {float(v) for v in above} | {cap})
