"""Settings sections of a study that steer later stages: ``[screening]`` and ``[tolerances]``.

They live with the study definition (the config reader builds them) and are read by the stages
that use them (:mod:`plyrisk.pipeline.screening`, :mod:`plyrisk.tolerances`).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field

from plyrisk.study.targets import Target, parse_target

__all__ = ["BASES", "DEFAULT_REPORT_FORMATS", "DEFAULT_TARGET", "DESIGNS", "METHODS",
           "REPORT_FORMATS", "ScreeningSettings", "ToleranceSettings", "report_formats_error"]

DEFAULT_TARGET = "P95 <= limit"
DESIGNS = ("lhs", "random")
"""Designs of the tolerance engine's common-random-number runs (``[tolerances] design``)."""
METHODS = DESIGNS
"""Former name of :data:`DESIGNS`."""
BASES = ("bound", "estimate")
"""What a tolerance target is checked on: the confidence bound or the estimate."""
REPORT_FORMATS = ("png", "svg")
"""Figure file formats of ``[report] formats``; PNG is always written (the HTML embeds it)."""
DEFAULT_REPORT_FORMATS = ("png",)
"""The figure formats of a study without ``[report] formats``."""


def report_formats_error(value: object) -> str | None:
    """What is wrong with a ``[report] formats`` value, or ``None`` when it is valid.

    Parameters
    ----------
    value
        The raw value: a list of format names.

    Examples
    --------
    >>> report_formats_error(["png", "svg"]) is None
    True
    >>> print(report_formats_error(["svg"]))  # doctest: +NORMALIZE_WHITESPACE
    expected a list of figure formats from 'png', 'svg' that includes 'png' (the report
    embeds the PNG figures), got ['svg']
    """
    choices = ", ".join(map(repr, REPORT_FORMATS))
    expected = (f"expected a list of figure formats from {choices} that includes 'png' (the "
                "report embeds the PNG figures)")
    if not isinstance(value, list | tuple) or not all(isinstance(v, str) for v in value):
        return f"{expected}, got {value!r}"
    if "png" not in value or any(v not in REPORT_FORMATS for v in value) \
            or len(set(value)) != len(value):
        return f"{expected}, got {list(value)!r}"
    return None


@dataclass(frozen=True)
class ScreeningSettings:
    """The ``[screening]`` section: Morris first, then the study's method on what is kept.

    Attributes
    ----------
    trajectories
        Morris trajectories r (model runs: r (d + 1) per exposure) [-].
    levels
        Grid levels p (even) [-].
    threshold
        Share of the largest mu* below which an input is fixed at nominal [-].
    keep
        Parameter names always retained, whatever the screening says [-].
    """

    trajectories: int
    levels: int = 4
    threshold: float = 0.1
    keep: tuple[str, ...] = ()


@dataclass(frozen=True)
class ToleranceSettings:
    """What to compute and how (the ``[tolerances]`` section of a config).

    Parameters
    ----------
    target
        The target, or its text (see :mod:`plyrisk.study.targets`) [-].
    samples
        Rows of the CRN design [-].
    design
        ``"lhs"`` (Latin hypercube) or ``"random"`` [-].
    seed
        Seed of the design; ``None`` = the study's seed (must be set before computing) [-].
    cost
        Cost weight per parameter name (default 1); the cost of a parameter is
        weight / spread factor [-].
    max_factor
        Largest spread factor ever tried or recommended, >= 1 [-].
    allow_loosening
        Let the allocation widen spreads (up to ``max_factor``); by default it only
        tightens, and parameters that do not matter keep their current spread [-].
    keep
        Parameters whose spread the allocation leaves as it is (e.g. exposure conditions,
        which no manufacturing tolerance controls); ``None`` = none in the engine, the
        boundary-condition parameters (``hot_side.*``, ``cold_side.*``) for a study [-].
    basis
        ``"bound"`` (upper confidence bound of the metric) or ``"estimate"`` [-].
    confidence
        Two-sided level of the confidence intervals, in (0, 1); ``None`` = 0.90 [-].
    nominal_shift
        Name of the parameter whose nominal is shifted to meet the target, or ``None`` [-].
    nominal_range
        Range searched for that nominal ``(low, high)``; ``None`` = half to twice the nominal
        (nominal ± 10 spreads for a nominal <= 0) [SI].
    """

    target: Target | str = DEFAULT_TARGET
    samples: int = 2048
    design: str = "lhs"
    seed: int | None = None
    cost: Mapping[str, float] = field(default_factory=dict)
    max_factor: float = 10.0
    allow_loosening: bool = False
    keep: tuple[str, ...] | None = None
    basis: str = "bound"
    confidence: float | None = None
    nominal_shift: str | None = None
    nominal_range: tuple[float, float] | None = None

    def __post_init__(self) -> None:
        if isinstance(self.target, str):
            object.__setattr__(self, "target", parse_target(self.target))
        if not isinstance(self.target, Target):
            raise ValueError(f"target must be a Target or its text, got {self.target!r}")
        if isinstance(self.samples, bool) or not isinstance(self.samples, int) or \
                self.samples < 2:
            raise ValueError(f"samples must be a whole number >= 2, got {self.samples!r}")
        if self.design not in DESIGNS:
            raise ValueError(f"unknown design {self.design!r}; valid: {', '.join(DESIGNS)}")
        if self.basis not in BASES:
            raise ValueError(f"unknown basis {self.basis!r}; valid: {', '.join(BASES)}")
        if self.seed is not None and (isinstance(self.seed, bool) or
                                      not isinstance(self.seed, int) or self.seed < 0):
            raise ValueError(f"seed must be a whole number >= 0 or None, got {self.seed!r}")
        if not (math.isfinite(self.max_factor) and self.max_factor >= 1.0):
            raise ValueError(f"max_factor must be a finite number >= 1, got {self.max_factor!r}")
        if self.confidence is not None and not 0.0 < self.confidence < 1.0:
            raise ValueError(f"confidence must lie in (0, 1), got {self.confidence!r}")
        cost = dict(self.cost)
        for name, w in cost.items():
            if isinstance(w, bool) or not isinstance(w, int | float) or \
                    not (math.isfinite(w) and w > 0):
                raise ValueError(f"cost weight of {name!r} must be a positive number, got {w!r}")
        object.__setattr__(self, "cost", cost)
        if self.keep is not None:
            object.__setattr__(self, "keep", tuple(self.keep))
        if self.nominal_range is not None:
            lo, hi = (float(v) for v in self.nominal_range)
            if not lo < hi:
                raise ValueError(f"nominal_range needs low < high, got {self.nominal_range!r}")
            object.__setattr__(self, "nominal_range", (lo, hi))

    @property
    def level(self) -> float:
        """The confidence level used [-]."""
        return 0.90 if self.confidence is None else float(self.confidence)
