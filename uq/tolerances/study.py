"""Tolerance feedback: what-if spreads, allowable spreads, a least-cost allocation, nominal shifts.

Every question is answered by re-running the model on one fixed unit-hypercube design mapped
through modified input distributions (common random numbers, CRN): the differences between two
runs are then differences of the model, not sampling noise. The engine works on a generic
:class:`ToleranceProblem` (distributions + an evaluation callable + a limit); wrap a study with
:func:`problem_from_study`. The method and its choices are described in ``docs/tolerances.md``.

Conventions
-----------
* A *spread factor* f scales a parameter's spread about its nominal
  (:meth:`plyrisk.study.distributions.Distribution.with_spread`): f = 1 is the current
  specification,
  f = 0.5 halves the tolerance, f = 0 holds the parameter at its nominal value.
* The *metric* is the target's statistic of the study's limit output (``[study] limit_output``:
  the inner-surface temperature by default, the heat flux or a face temperature; a quantile or
  the exceedance probability of the limit) at the worst exposure: with a scenario sweep the
  target must hold at every exposure, so the maximum over exposures is compared with the bound.
* The *basis* decides which number of the metric is compared: ``"bound"`` (default) the upper
  end of its two-sided ``confidence`` interval (order statistics for a quantile, Wilson for the
  exceedance probability), ``"estimate"`` the point estimate. The intervals assume independent
  draws; on a Latin hypercube they are conservative.
* Searches scan a coarse grid and bisect inside the first bracket; a metric that is not
  monotone in the searched value is flagged (``monotone=False``), never hidden.

Modules: :mod:`plyrisk.study.targets` (target grammar), :mod:`plyrisk.tolerances.core` (problem,
settings, one
run's statistics, searches), :mod:`plyrisk.tolerances.whatif` (what-if, allowable spreads),
:mod:`plyrisk.tolerances.allocation` (allocation, verification), :mod:`plyrisk.tolerances.shift`
(nominal
shift), this module (everything together, the study wrapper) and :mod:`plyrisk.tolerances.output`
(manufacturing table, CSV, text).
"""

from __future__ import annotations

import hashlib
import math
from collections.abc import Callable
from dataclasses import dataclass, replace
from typing import TYPE_CHECKING

import numpy as np

from plyrisk.study.targets import Target, parse_target
from plyrisk.tolerances.allocation import (
    Allocation,
    Verification,
    allocate,
    run_allocation,
    verification_seed,
    verify,
)
from plyrisk.tolerances.core import (
    BASES,
    DEFAULT_TARGET,
    METHODS,
    Outcome,
    Runner,
    ToleranceProblem,
    ToleranceSettings,
)
from plyrisk.tolerances.shift import NominalShift, run_shift, shift_distribution, shift_nominal
from plyrisk.tolerances.whatif import (
    AllowableSpread,
    WhatIf,
    WhatIfStudy,
    allowable_spreads,
    run_allowable,
    run_what_if,
    what_if,
)

if TYPE_CHECKING:  # pragma: no cover
    from plyrisk.study.definition import Study

__all__ = [
    "BASES", "DEFAULT_TARGET", "METHODS", "Allocation", "AllowableSpread", "NominalShift",
    "Outcome", "ToleranceProblem", "ToleranceReport", "ToleranceSettings", "Verification",
    "WhatIf", "WhatIfStudy", "allocate", "allowable_spreads", "analyse_tolerances",
    "problem_from_study", "run_tolerances", "settings_for_study", "shift_distribution",
    "shift_nominal", "verification_seed", "verify", "what_if",
]


# ----------------------------------------------------------------------------------------------
# Everything together, and the study wrapper
# ----------------------------------------------------------------------------------------------


@dataclass(frozen=True, eq=False)
class ToleranceReport:
    """Every tolerance answer for one problem, on one CRN design.

    Attributes
    ----------
    settings
        The settings used (seed and confidence resolved).
    bound
        The target's numeric bound [K or -].
    whatif, allowable, allocation, nominal_shift
        The answers (``nominal_shift`` is ``None`` unless configured).
    runs
        Model runs on the design, plus one for the verification.
    limit
        The problem's limit [K]; for a transient target minus the horizon [s].
    """

    settings: ToleranceSettings
    bound: float
    whatif: WhatIfStudy
    allowable: tuple[AllowableSpread, ...]
    allocation: Allocation
    nominal_shift: NominalShift | None
    runs: int
    limit: float = math.nan


def analyse_tolerances(problem: ToleranceProblem, settings: ToleranceSettings, *,
                       progress: Callable[[str], None] | None = None) -> ToleranceReport:
    """What-if, allowable spreads, allocation (verified) and the optional nominal shift.

    Parameters
    ----------
    problem
        The problem.
    settings
        The settings; ``seed`` must be set.
    progress
        Called with the name of each stage as it starts.

    Returns
    -------
    ToleranceReport
    """
    run = Runner(problem, settings)
    tell = progress or (lambda stage: None)
    tell("what-if runs")
    wi = run_what_if(run)
    tell("allowable spreads")
    allowable = run_allowable(run)
    tell("allocation and verification")
    alloc = run_allocation(run, wi)
    shift = None
    if settings.nominal_shift is not None:
        tell("nominal shift")
        shift = run_shift(run, settings.nominal_shift)
    return ToleranceReport(settings, run.bound, wi, allowable, alloc, shift, run.runs + 1,
                           float(problem.limit))


MODEL_MEMORY = 64
"""Designs whose steady outputs a tolerance problem keeps, so that a design asked for again is
not solved again (the same values give the same outputs) [-]."""
KEPT_GROUPS = ("hot_side", "cold_side", "exposure", "wearer", "skin", "sensor")
"""Parameter groups that are conditions, not manufacturing tolerances: kept at their spread by
default."""


def problem_from_study(study: Study, target: Target | None = None, *,
                       evaluate: Callable | None = None) -> ToleranceProblem:
    """The output a study's target is about, as a :class:`ToleranceProblem`.

    Steady studies: the inner-surface temperature. Transient studies (``study.transient``): the
    time to the target's event capped at the horizon and negated, ``-min(t, horizon)``, with the
    limit ``-horizon``, so that "larger is worse" holds as for a temperature: P(event within the
    horizon) is P(output > limit) and ``P5(t) >= 12 s`` is ``P95(output) <= -12 s``
    (:mod:`plyrisk.study.targets`). Non-converged samples become NaN (excluded and counted).

    Parameters
    ----------
    study
        The parsed study.
    target
        The target (transient studies need one about an event time).
    evaluate
        ``(study, values) -> outputs`` with ``outputs[name]`` of shape ``(n_scenarios, n)``;
        default :func:`plyrisk.propagate.evaluate.evaluate`.

    Returns
    -------
    ToleranceProblem

    Raises
    ------
    ValueError
        A target that does not fit the study's kind, or a time bound beyond the horizon.
    """
    from plyrisk.analysis.transient import is_transient, transient_facts

    if evaluate is None:
        from plyrisk.propagate.evaluate import evaluate as evaluate_study

        evaluate = evaluate_study
    labels = tuple(study.scenarios.labels) if study.scenarios is not None else ()
    names = tuple(p.name for p in study.parameters)
    dists = tuple(p.distribution for p in study.parameters)
    if is_transient(study):
        if target is None:
            raise ValueError("target None: a transient study takes e.g. "
                             "'P(second_degree_burn) <= 5 %' or "
                             "'P5(time_to_second_degree_burn) >= 12 s'")
        check_target_fits(study, target)
        horizon = transient_facts(study).horizon
        name = target.output

        run = evaluate

        def timed(values: np.ndarray) -> np.ndarray:
            out = run(study, values)
            t = np.asarray(out[name], dtype=float)
            return np.where(np.asarray(out["converged"], bool), -np.minimum(t, horizon),
                            np.nan)

        return ToleranceProblem(names, dists, timed, -horizon, labels)
    if target is not None:
        check_target_fits(study, target)

    run_steady = evaluate
    output = study.analysis.limit_output  # the output the limit (and the target) is about
    solved: dict[bytes, np.ndarray] = {}  # the searches ask for some designs more than once

    def model(values: np.ndarray) -> np.ndarray:
        values = np.ascontiguousarray(values, dtype=float)
        key = hashlib.sha256(values.tobytes()).digest() + repr(values.shape).encode()
        if key not in solved:
            if len(solved) >= MODEL_MEMORY:
                solved.pop(next(iter(solved)))
            out = run_steady(study, values)
            if output in ("inner_surface_temperature", "heat_flux"):
                y = out[output]
            else:
                y = np.asarray(out["interface_temperature"])[
                    ..., list(out.interface_names).index(output)]
            solved[key] = np.where(out["converged"], y, np.nan)
        return solved[key].copy()

    labels = tuple(study.scenarios.labels) if study.scenarios is not None else ()
    corr = None if study.correlations is None else study.correlations.full_linear(names)
    return ToleranceProblem(names, dists, model, float(study.analysis.limit), labels, corr)


def check_target_fits(study: Study, target: Target) -> None:
    """Raise ``ValueError`` (one line) when a target does not fit the study's kind: a
    temperature target on a transient study, a time-to-burn target on a steady one, or a time
    bound not below the horizon.

    Parameters
    ----------
    study
        The parsed study.
    target
        The parsed target.
    """
    from plyrisk.analysis.transient import is_transient, transient_facts

    if is_transient(study):
        if not target.transient:
            raise ValueError(f"target {target.text!r} is about the inner-surface temperature of "
                             "a steady study; a transient study takes e.g. "
                             "'P(second_degree_burn) <= 5 %' or "
                             "'P5(time_to_second_degree_burn) >= 12 s'")
        horizon = transient_facts(study).horizon
        if target.kind == "quantile" and not target.threshold < horizon:
            raise ValueError(f"target {target.text!r}: the bound {target.threshold:g} s is not "
                             f"below the horizon {horizon:g} s; beyond it the time to the event "
                             "is only known to exceed the horizon")
    elif target.transient:
        raise ValueError(f"target {target.text!r} is about a transient study's time to burn; "
                         "this study is steady")


def settings_for_study(study: Study, *, target: str | None = None, samples: int | None = None,
                       seed: int | None = None) -> ToleranceSettings:
    """The study's ``[tolerances]`` settings (or the defaults) with overrides, resolved.

    Parameters
    ----------
    study
        The parsed study; its ``tolerances`` attribute may be ``None``.
    target
        Target text overriding the config.
    samples
        Design size overriding the config.
    seed
        Seed overriding the config (default: the ``[tolerances]`` seed, else the study's).

    Returns
    -------
    ToleranceSettings
        With ``seed`` and ``confidence`` set.
    """
    from plyrisk.analysis.transient import HEADLINE_EVENT, is_transient, transient_facts

    base = getattr(study, "tolerances", None) or ToleranceSettings()
    changes: dict = {}
    limit_output = getattr(study.analysis, "limit_output", "inner_surface_temperature")
    if target is not None:
        changes["target"] = parse_target(target, output=limit_output)
    elif (isinstance(base.target, Target) and not base.target.transient
          and base.target.output != limit_output and not is_transient(study)):
        changes["target"] = parse_target(base.target.text, output=limit_output)
    elif is_transient(study) and isinstance(base.target, Target) and \
            not base.target.transient and base.target.text == parse_target(DEFAULT_TARGET).text:
        facts = transient_facts(study)
        event = HEADLINE_EVENT.get(facts.wearer_kind, "second_degree_burn")
        acceptable = facts.acceptable_burn_probability or 0.05
        changes["target"] = parse_target(f"P({event}) <= {100 * acceptable:g} %")
    if samples is not None:
        changes["samples"] = samples
    if base.keep is None:
        changes["keep"] = tuple(p.name for p in study.parameters if p.group in KEPT_GROUPS)
    if seed is not None:
        changes["seed"] = seed
    elif base.seed is None:
        changes["seed"] = int(study.analysis.seed)
    if base.confidence is None:
        changes["confidence"] = float(study.analysis.confidence)
    settings = replace(base, **changes)
    assert isinstance(settings.target, Target), "resolved settings hold the parsed target"
    check_target_fits(study, settings.target)
    check_sample_size(settings)
    return settings


def check_sample_size(settings: ToleranceSettings) -> None:
    """Raise ``ValueError`` when the design is too small to bound the target's percentile.

    The upper order-statistic bound of the ``p`` quantile at two-sided confidence ``c`` exists
    only when ``1 - p^n >= 1 - (1 - c)/2``, i.e. ``n >= ln((1 - c)/2) / ln p`` (distribution-free;
    common practice, e.g. Hahn & Meeker 1991, Statistical Intervals, from memory). Searches on the
    bound (``basis = "bound"``) cannot judge the target below that size.

    Parameters
    ----------
    settings
        Resolved settings.
    """
    t = settings.target
    assert isinstance(t, Target), "resolved settings hold the parsed target"
    if settings.basis != "bound" or t.kind != "quantile":
        return
    alpha = 1.0 - settings.level
    need = math.ceil(math.log(alpha / 2.0) / math.log(t.engine_probability))
    if settings.samples < need:
        raise ValueError(
            f"samples = {settings.samples} is too small to bound {t.label} at "
            f"{100 * settings.level:g} % confidence; need at least {need}"
        )


def run_tolerances(study: Study, *, target: str | None = None, samples: int | None = None,
                   seed: int | None = None,
                   progress: Callable[[str], None] | None = None) -> ToleranceReport:
    """:func:`analyse_tolerances` of a study (overrides as in :func:`settings_for_study`).

    Parameters
    ----------
    study
        The parsed study.
    target, samples, seed
        Overrides of the ``[tolerances]`` settings.
    progress
        Called with the name of each stage.

    Returns
    -------
    ToleranceReport
    """
    settings = settings_for_study(study, target=target, samples=samples, seed=seed)
    assert isinstance(settings.target, Target), "settings hold the parsed target"
    problem = problem_from_study(study, settings.target)
    for name in (*settings.cost, *(settings.keep or ()),
                 *(() if settings.nominal_shift is None else (settings.nominal_shift,))):
        problem.index(name)
    return analyse_tolerances(problem, settings, progress=progress)
