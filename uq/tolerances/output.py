"""Tolerance results at the edge: the manufacturing table, its CSV file and the text report.

Values are shown in the user's units: each parameter's distribution as the config gave it
(:meth:`plyrisk.study.definition.Parameter.describe`), temperatures in the unit of ``[study]
limit``.
``tolerances.csv`` starts with ``#`` comment lines carrying the cautions (read it with e.g.
``pandas.read_csv(path, comment="#")``).

Two estimates are flagged rather than printed plainly. A time of a transient target at the
horizon is only known to lie beyond it: it is printed ``> 60 s`` (:func:`beyond_horizon`); the
CSV keeps the number (the horizon) and says so in ``quantile_if_halved_beyond_horizon``. A
variance share estimated outside [0, 100 %] (the ratio of two sampled variances, noisy at small
sample counts; a Sobol or Shapley index just below zero) is estimation noise, not a share: it
is printed ``not resolved (132 %)`` (:func:`share_resolved`); the CSV keeps the number with
``variance_share_resolved = false``.
"""

from __future__ import annotations

import csv
import math
from collections.abc import Mapping, Sequence
from dataclasses import asdict, dataclass, replace
from pathlib import Path
from typing import Any

from plyrisk.cautions import cautions_text
from plyrisk.study.definition import Parameter, Study
from plyrisk.study.targets import (
    EVENT_TIMES,
    Target,
    default_criterion,
    limit_quantity,
    parse_target,
)
from plyrisk.study.units import difference_unit, from_si
from plyrisk.text.tables import text_table
from plyrisk.tolerances.study import Outcome, ToleranceReport

__all__ = ["ADVICE_PREFIX", "CORRELATED_SHARE", "ManufacturingRow", "acceptance_note",
           "beyond_horizon", "cap_note", "headline_probability", "manufacturing_rows",
           "manufacturing_table", "not_resolved_advice", "read_tolerance_csv", "share_resolved",
           "share_text", "shapley_intervals", "shapley_output", "shapley_shares",
           "study_criterion", "tolerance_advice", "tolerance_text", "write_tolerance_csv"]

ADVICE_PREFIX = "# advice: "
"""Start of the ``tolerances.csv`` comment lines that carry the verification verdict and the
nominal-shift advice (:func:`tolerance_advice`)."""

CORRELATED_SHARE = ("n/a with correlated inputs (holding one input at nominal also drops its "
                    "correlation); see the Shapley effects of plyrisk run")
"""``share_source`` of a correlated study without Shapley effects."""

NOT_RESOLVED_SHARE = ("not resolved: a variance share estimated outside [0, 100 %] is "
                      "estimation noise at this sample size (a ratio of sampled variances, or an "
                      "index just below zero), not a share; the estimate is in brackets; raise "
                      "[tolerances] samples to resolve it")
"""The note under a table with a share that is not resolved (shares held at nominal)."""


def not_resolved_advice(sources: Sequence[str]) -> str:
    """Where more samples resolve a share estimated outside [0, 100 %], by its source: the
    tolerance design (``[tolerances] samples``) for shares held at nominal, the study's own run
    (``[study] samples``, and ``permutations`` for Shapley effects) for an index of the study.

    Examples
    --------
    >>> not_resolved_advice(["Shapley effect"])
    'raise [study] samples and permutations (the share is the Shapley effect of plyrisk run)'
    >>> not_resolved_advice(["held at nominal (CRN)"])
    'raise [tolerances] samples'
    """
    out = []
    if any(s == "held at nominal (CRN)" for s in sources):
        out.append("raise [tolerances] samples")
    if any(s == "Shapley effect" for s in sources):
        out.append("raise [study] samples and permutations (the share is the Shapley effect "
                   "of plyrisk run)")
    if any(s == "Sobol total index" for s in sources):
        out.append("raise [study] samples (the share is the Sobol total index of plyrisk run)")
    return "; ".join(out) or "raise [tolerances] samples"


def share_resolved(share: float, ci: float = math.nan) -> bool:
    """Whether a variance share estimate is a share: finite and within [0, 1], or, with the
    half-width ``ci`` of its interval, an interval that reaches into [0, 1] (an estimate just
    below zero is then noise around a small share, read as 0 within its interval, as in the
    rankings of the study).

    Parameters
    ----------
    share
        The estimate (a fraction) [-].
    ci
        Half-width of its confidence interval [-]; NaN when unknown.

    Examples
    --------
    >>> share_resolved(0.4), share_resolved(1.32), share_resolved(-0.02)
    (True, False, False)
    >>> share_resolved(-0.0133, 0.121), share_resolved(-0.3, 0.1)
    (True, False)
    """
    if not math.isfinite(share):
        return False
    if 0.0 <= share <= 1.0:
        return True
    return math.isfinite(ci) and share + ci >= 0.0 and share - ci <= 1.0


def share_text(share: float, ci: float = math.nan) -> str:
    """A variance share as a percentage; ``not resolved (132 %)`` outside [0, 100 %]; an
    estimate outside whose interval (half-width ``ci``) reaches into it is read as the nearer
    end: ``0 within its interval (-1.33 % ± 12.1 %)``.

    Examples
    --------
    >>> share_text(0.25), share_text(1.32), share_text(float("nan"))
    ('25 %', 'not resolved (132 %)', 'n/a')
    >>> share_text(-0.0133, 0.121)
    '0 within its interval (-1.33 % ± 12.1 %)'
    """
    if not math.isfinite(share):
        return "n/a"
    if not share_resolved(share, ci):
        return f"not resolved ({100 * share:.3g} %)"
    if not 0.0 <= share <= 1.0:
        end = "0" if share < 0.0 else "100 %"
        return f"{end} within its interval ({100 * share:.3g} % ± {100 * ci:.3g} %)"
    return f"{100 * share:.3g} %"


def beyond_horizon(report: ToleranceReport, value: float) -> bool:
    """Whether an engine value of a time target (minus the time capped at the horizon) sits at
    the horizon: the time is then only known to exceed it (``> 60 s``).

    Parameters
    ----------
    report
        The tolerance results (its target and limit, minus the horizon).
    value
        An engine value: a quantile of ``-min(t, horizon)`` [s].
    """
    if not _flip(report) or not math.isfinite(value):
        return False
    horizon = -report_limit(report)
    return math.isfinite(horizon) and -value >= horizon * (1.0 - 1e-12)


def shapley_output(target: Target) -> str:
    """The output whose Shapley effects stand for the variance shares of ``target``: the
    inner-surface temperature (steady); for a transient target the capped time to its event (a
    time quantile) or its burn indicator (a probability).

    Examples
    --------
    >>> from plyrisk.study.targets import parse_target
    >>> shapley_output(parse_target("P(second_degree_burn) <= 5 %"))
    'second_degree_burn'
    >>> shapley_output(parse_target("P5(time_to_second_degree_burn) >= 12 s"))
    'capped_time_to_second_degree_burn'
    """
    if not target.transient:
        return target.output
    if target.kind == "quantile":
        return f"capped_{target.output}"
    event = next(e for e, t in EVENT_TIMES.items() if t == target.output)
    return "sensor_criterion_reached" if event == "sensor_criterion" else event


def shapley_shares(report: ToleranceReport, analysis: Any) -> dict[str, float] | None:
    """Shapley effects of the target's output (:func:`shapley_output`) at the tolerance
    study's worst exposure, by parameter name, for :func:`manufacturing_table`; ``None``
    without Shapley effects of that output.

    Parameters
    ----------
    report
        The tolerance results [-].
    analysis
        The study's :class:`plyrisk.analysis.study.StudyAnalysis` [-].
    """
    return _shapley_by_name(report, analysis, "effect")


def shapley_intervals(report: ToleranceReport, analysis: Any) -> dict[str, float] | None:
    """Half-widths of the intervals of :func:`shapley_shares` (same output and exposure), by
    parameter name; ``None`` without them.

    Parameters
    ----------
    report
        The tolerance results [-].
    analysis
        The study's :class:`plyrisk.analysis.study.StudyAnalysis` [-].
    """
    return _shapley_by_name(report, analysis, "effect_ci")


def _shapley_by_name(report: ToleranceReport, analysis: Any,
                     attr: str) -> dict[str, float] | None:
    """``attr`` of the per-parameter Shapley effects of the target's output at the tolerance
    study's worst exposure, by parameter name; ``None`` without them."""
    scenarios = getattr(analysis, "scenarios", None) or []
    if not scenarios:
        return None
    s = min(int(report.whatif.baseline.scenario), len(scenarios) - 1)
    effects = getattr(scenarios[s], "shapley", {}).get(shapley_output(_target(report)))
    if not effects or getattr(effects[0], attr, None) is None:
        return None
    ind = effects[0]
    return {n: float(v) for n, v in zip(ind.names, getattr(ind, attr), strict=True)}


@dataclass(frozen=True)
class ManufacturingRow:
    """One parameter of the table for manufacturing.

    Attributes
    ----------
    parameter, layer
        Parameter name and its group (layer, ``hot_side`` or ``cold_side``).
    current_spec
        The current distribution in the user's unit.
    variance_share
        Share of the output variance: Var(Y - Y_0) / Var(Y) over the CRN pairs with the
        parameter held at its nominal (:attr:`plyrisk.tolerances.whatif.WhatIf.variance_share`),
        or the index given (Sobol total index; Shapley effect with correlated inputs). With
        correlated inputs and no index given: NaN (holding one input at nominal also removes
        its correlation, so that ratio is no share of the variance).
    share_source
        ``"held at nominal (CRN)"``, ``"Sobol total index"``, ``"Shapley effect"`` or why
        there is none.
    quantile_label
        The quantile reported, e.g. ``"P95"``.
    quantile_if_halved
        That quantile with this parameter's spread halved, worst exposure [temperature_unit].
    temperature_unit
        Unit of the temperatures.
    recommended_spec
        The distribution recommended by the allocation, in the user's unit.
    recommended_factor
        Recommended spread / current spread; NaN when the target is not reachable.
    target
        The target the recommendation serves.
    quantile_if_halved_beyond_horizon
        ``quantile_if_halved`` is a time at the horizon of a transient target: the time is
        only known to exceed it (shown ``> 60 s``); False for every other target.
    variance_share_resolved
        ``variance_share`` lies within [0, 1]; False: estimation noise, not a share (shown
        ``not resolved (132 %)``).
    quantile_baseline
        The same quantile at the current spreads on the tolerance study's own design (its
        baseline, worst exposure) [temperature_unit]: the reference of ``quantile_if_halved``.
        It differs from the study's own percentile by sampling (another design). NaN in a
        file from before it existed.
    quantile_baseline_beyond_horizon
        ``quantile_baseline`` is a time only known to exceed the horizon.
    design_samples
        Size of the tolerance study's design (``[tolerances] samples``) [-]; 0 when unknown.
    variance_share_ci
        Half-width of the interval of ``variance_share`` when the index gives one (Shapley
        effect) [-]; NaN otherwise. An estimate outside [0, 1] whose interval reaches into it
        is read as the nearer end within its interval (``variance_share_resolved`` true).
    """

    parameter: str
    layer: str
    current_spec: str
    variance_share: float
    share_source: str
    quantile_label: str
    quantile_if_halved: float
    temperature_unit: str
    recommended_spec: str
    recommended_factor: float
    target: str
    quantile_if_halved_beyond_horizon: bool = False
    variance_share_resolved: bool = True
    quantile_baseline: float = math.nan
    quantile_baseline_beyond_horizon: bool = False
    design_samples: int = 0
    variance_share_ci: float = math.nan


def _target(report: ToleranceReport) -> Target:
    t = report.settings.target
    assert isinstance(t, Target), "a report's settings hold the parsed target"
    return t


def target_text(report: ToleranceReport, study: Study) -> str:
    """The target with its bound in the user's unit, e.g. ``"P95 <= limit (44 degC)"``."""
    t = _target(report)
    text = t.text
    if t.transient:
        text += f" (within the horizon {-report_limit(report):g} s)"
    elif t.kind == "quantile":
        text += (f" ({study.format_limit_value(report.bound)})" if t.uses_limit else "")
        text += _on_output(study)
    elif t.kind == "exceedance":
        text += (f" (limit {study.format_limit_value(study.analysis.limit)}"
                 f"{_on_output(study)})")
    if study.scenarios is not None:
        text += ", at every exposure"
    return text


def _limit_words(study: Study) -> str:
    """The output the limit applies to, in words (``"inner-surface temperature"``, ...)."""
    from plyrisk.results.dataset import limit_output_text

    return limit_output_text(study)


def _on_output(study: Study) -> str:
    """`` on the <output>`` where the limit protects another output than the inner surface."""
    if study.analysis.limit_output == "inner_surface_temperature":
        return ""
    return f" on the {_limit_words(study)}"


def report_limit(report: ToleranceReport) -> float:
    """The problem's limit: for a transient target minus the horizon [K or s]."""
    return float(getattr(report, "limit", math.nan))


def _flip(report: ToleranceReport) -> bool:
    """Engine values of a transient target are minus the capped time to the event."""
    return bool(_target(report).transient)


def _label(report: ToleranceReport, probability: float) -> str:
    """``"P95"``, or for a time target the percentile of the time, e.g. ``"P5 time"``."""
    if _flip(report):
        return f"P{100 * (1 - probability):.10g} time"
    return f"P{100 * probability:.10g}"


def cap_note(bounded: bool) -> str:
    """The mark of a spread factor at its cap: the search stopped there, so the spec is the
    widest one tried, not a spec to adopt.

    Parameters
    ----------
    bounded
        The physical bounds of the distribution set the cap (else ``[tolerances] max_factor``).

    Examples
    --------
    >>> cap_note(False)
    'at the max_factor cap: the target holds up to it; not a recommended spec'
    """
    if bounded:
        return ("at the widest spread the physical bounds allow: the target holds up to it; "
                "not a recommended spec")
    return "at the max_factor cap: the target holds up to it; not a recommended spec"


def _at_cap(factor: float, cap: float) -> bool:
    """A factor above 1 at its cap (within the search's tolerance)."""
    return math.isfinite(factor) and cap > 1.0 and factor >= cap * (1.0 - 1e-9)


def _recommended(p: Parameter, factor: float, status: str, kept: bool = False,
                 cap: float = math.nan, bounded: bool = False) -> str:
    if status == "infeasible":
        return "not reachable by tolerances alone"
    if kept:
        return f"{p.describe()} (kept)"
    if factor == 1.0:
        return f"{p.describe()} (unchanged)"
    spec = replace(p, distribution=p.distribution.with_spread(factor)).describe()
    if _at_cap(factor, cap):
        return f"{spec} ({cap_note(bounded)})"
    return spec


def manufacturing_table(report: ToleranceReport, study: Study, *,
                        indices: Mapping[str, float] | None = None,
                        index_name: str = "Sobol total index",
                        index_ci: Mapping[str, float] | None = None) -> list[ManufacturingRow]:
    """One row per parameter: spec, variance share, tightened quantile, recommendation.

    Parameters
    ----------
    report
        The tolerance results of ``study``.
    study
        The study.
    indices
        Sobol total index (or, with correlated inputs, Shapley effect) per parameter name to use
        as the variance share (see :func:`shapley_shares`).
    index_name
        What ``indices`` are, for ``share_source``.
    index_ci
        Half-widths of the intervals of ``indices`` (see :func:`shapley_intervals`).

    Returns
    -------
    list of ManufacturingRow
    """
    unit = "s" if _flip(report) else (
        (study.limit_output_unit or "W/m^2") if study.analysis.limit_output == "heat_flux"
        else (study.limit_unit or "K"))
    alloc = report.allocation
    label = _label(report, report.whatif.baseline.probability)
    base = float(report.whatif.baseline.worst_quantile)
    base_value = (-base if _flip(report) else
                  float(from_si(base, unit, limit_quantity(study.analysis.limit_output))))
    rows = []
    for j, (p, w) in enumerate(zip(study.parameters, report.whatif.rows, strict=True)):
        share, source, ci = w.variance_share, "held at nominal (CRN)", math.nan
        if study.correlations is not None:
            share, source = math.nan, CORRELATED_SHARE
        if indices is not None and p.name in indices:
            share, source = float(indices[p.name]), index_name
            ci = float((index_ci or {}).get(p.name, math.nan))
        factor = float(alloc.factors[j]) if alloc.status != "infeasible" else math.nan
        rows.append(ManufacturingRow(
            parameter=p.name, layer=p.group, current_spec=p.describe(), variance_share=share,
            share_source=source, quantile_label=label,
            quantile_if_halved=(-float(w.halved.worst_quantile) if _flip(report) else
                                float(from_si(w.halved.worst_quantile, unit,
                                              limit_quantity(study.analysis.limit_output)))),
            temperature_unit=unit, recommended_spec=_recommended(
                p, factor, alloc.status, p.name in alloc.kept, float(alloc.caps[j]),
                _bounded(report, float(alloc.caps[j]))),
            recommended_factor=factor, target=target_text(report, study),
            quantile_if_halved_beyond_horizon=beyond_horizon(report,
                                                             float(w.halved.worst_quantile)),
            variance_share_resolved=share_resolved(share, ci) or not math.isfinite(share),
            variance_share_ci=ci,
            quantile_baseline=base_value,
            quantile_baseline_beyond_horizon=beyond_horizon(report, base),
            design_samples=int(report.settings.samples)))
    return rows


def write_tolerance_csv(rows: Sequence[ManufacturingRow], path: str | Path, *,
                        advice: Sequence[str] = ()) -> Path:
    """Write the manufacturing table as CSV, the cautions and the advice first as ``#`` lines.

    Parameters
    ----------
    rows
        The table.
    path
        The file to write; its folder is created.
    advice
        Lines of :func:`tolerance_advice`, written as ``# advice: ...`` comment lines.

    Returns
    -------
    pathlib.Path
        The file written.
    """
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    names = list(ManufacturingRow.__dataclass_fields__)
    with path.open("w", newline="", encoding="utf-8") as f:
        transient = any(r.temperature_unit == "s" for r in rows)
        for line in cautions_text(transient=transient).splitlines():
            f.write(f"# {line}\n")
        for line in advice:
            f.write(f"{ADVICE_PREFIX}{' '.join(line.split())}\n")
        writer = csv.DictWriter(f, fieldnames=names)
        writer.writeheader()
        for row in rows:
            d = asdict(row)
            d["variance_share"] = f"{row.variance_share:.6g}"
            d["quantile_if_halved"] = f"{row.quantile_if_halved:.6g}"
            d["recommended_factor"] = f"{row.recommended_factor:.6g}"
            d["quantile_baseline"] = f"{row.quantile_baseline:.6g}"
            d["variance_share_ci"] = f"{row.variance_share_ci:.6g}"
            for flag in _FLAGS:
                d[flag] = "true" if getattr(row, flag) else "false"
            writer.writerow(d)
    return path


def read_tolerance_csv(path: str | Path) -> tuple[list[dict[str, str]], list[str]]:
    """Read a ``tolerances.csv`` back: its rows (as text) and its advice lines.

    Parameters
    ----------
    path
        A file written by :func:`write_tolerance_csv`.

    Returns
    -------
    rows, advice
        One dict per row (column name to cell text) and the ``# advice:`` lines.

    Raises
    ------
    ValueError
        When the file has no header row.
    """
    lines = Path(path).read_text(encoding="utf-8").splitlines()
    advice = [ln[len(ADVICE_PREFIX):] for ln in lines if ln.startswith(ADVICE_PREFIX)]
    body = [ln for ln in lines if not ln.startswith("#")]
    if not body:
        raise ValueError(f"{path}: no header row")
    return [dict(r) for r in csv.DictReader(body)], advice


_FLAGS = ("quantile_if_halved_beyond_horizon", "variance_share_resolved",
          "quantile_baseline_beyond_horizon")
"""The flag columns of ``tolerances.csv`` (``true``/``false``); optional when read back (a
file from before they existed: the beyond-horizon flag is false, the share's is worked out)."""


_OPTIONAL = ("quantile_baseline", "design_samples", "variance_share_ci")
"""Columns of ``tolerances.csv`` that a file from before they existed lacks (NaN, 0)."""


def manufacturing_rows(records: Sequence[Mapping[str, str]]) -> list[ManufacturingRow]:
    """The rows of :func:`read_tolerance_csv` as :class:`ManufacturingRow`.

    Raises
    ------
    ValueError
        When a column of the table is missing, or a flag is not ``true``/``false``.
    """
    names = [n for n in ManufacturingRow.__dataclass_fields__
             if n not in _FLAGS and n not in _OPTIONAL]
    out = []
    for i, r in enumerate(records):
        missing = [n for n in names if n not in r]
        if missing:
            raise ValueError(f"row {i + 1}: missing column(s) {', '.join(missing)}")
        d: dict = {n: r[n] for n in names}
        for n in ("variance_share", "quantile_if_halved", "recommended_factor"):
            try:
                d[n] = float(d[n]) if d[n] not in ("", None) else math.nan
            except ValueError:
                raise ValueError(f"row {i + 1}: {n} = {d[n]!r} is not a number") from None
        try:
            d["quantile_baseline"] = float(r.get("quantile_baseline") or math.nan)
            d["design_samples"] = int(r.get("design_samples") or 0)
            d["variance_share_ci"] = float(r.get("variance_share_ci") or math.nan)
        except ValueError:
            raise ValueError(f"row {i + 1}: quantile_baseline = {r.get('quantile_baseline')!r}, "
                             f"design_samples = {r.get('design_samples')!r} or "
                             f"variance_share_ci = {r.get('variance_share_ci')!r}: expected "
                             "numbers") from None
        for n in _FLAGS:
            text = str(r.get(n) or "").strip().lower()
            if text not in ("", "true", "false"):
                raise ValueError(f"row {i + 1}: {n} = {r.get(n)!r}; expected true or false")
            if text:
                d[n] = text == "true"
            elif n == "variance_share_resolved":
                share = d["variance_share"]
                d[n] = (share_resolved(share, d["variance_share_ci"])
                        or not math.isfinite(share))
        out.append(ManufacturingRow(**d))
    return out


def headline_probability(analysis: Any) -> float | None:
    """P(headline event) within the horizon of a transient study's own run, at its worst
    exposure (the largest over exposures), for :func:`acceptance_note`; ``None`` for a steady
    study or without the probability.

    Parameters
    ----------
    analysis
        The study's analysis (:class:`plyrisk.analysis.transient.TransientAnalysis` for a
        transient study) [-].
    """
    from plyrisk.analysis.transient import HEADLINE_EVENT

    facts = getattr(analysis, "facts", None)
    event = HEADLINE_EVENT.get(getattr(facts, "wearer_kind", ""), "")
    values = [float(sc.burn[event].probability) for sc in getattr(analysis, "scenarios", None) or []
              if event in (getattr(sc, "burn", None) or {})]
    values = [v for v in values if math.isfinite(v)]
    return max(values) if values else None


def study_criterion(study: Study) -> str:
    """The criterion the study's verdict judges: ``[study] criterion`` or its default
    (:func:`plyrisk.study.targets.default_criterion`)."""
    from plyrisk.analysis.transient import HEADLINE_EVENT, is_transient, transient_facts

    given = str(getattr(study.analysis, "criterion", "") or "")
    if given:
        return given
    if not is_transient(study):
        return default_criterion()
    facts = transient_facts(study)
    return default_criterion(transient_event=HEADLINE_EVENT.get(facts.wearer_kind),
                             acceptable=facts.acceptable_burn_probability)


def acceptance_note(report: ToleranceReport, study: Study, *,
                    probability: float | None = None) -> str:
    """A plain note when meeting the tolerance target does not make the study acceptable.

    Transient study with a target on a time quantile: the target judges only that time, while
    P(headline event) may stay above ``[study] acceptable_burn_probability`` (default 5 %); the
    note then gives that probability (same condition as
    :func:`plyrisk.text.transient.criterion_note`). Otherwise, when the target is not the
    criterion the study's verdict judges (``[study] criterion`` or its default), the note says
    that meeting the target does not decide that verdict.

    Parameters
    ----------
    report
        The tolerance results of ``study``.
    study
        The study.
    probability
        P(headline event) within the horizon from the study's own run, worst exposure [-];
        ``None``: the tolerance design's baseline (current spreads, worst exposure).

    Returns
    -------
    str
        The note, or ``""``.
    """
    from plyrisk.analysis.transient import HEADLINE_EVENT, is_transient, transient_facts
    from plyrisk.text.transient import criterion_note

    t = _target(report)
    criterion = study_criterion(study)
    if is_transient(study) and t.kind == "quantile":
        facts = transient_facts(study)
        event = HEADLINE_EVENT.get(facts.wearer_kind, "")
        if event and t.event == event:
            own = probability is not None
            p = (float(probability) if probability is not None
                 else float(report.whatif.baseline.worst_exceedance))
            acceptable = facts.acceptable_burn_probability
            if criterion_note(t.text, event, p, acceptable):
                where = ("the study's run" if own
                         else "the tolerance design at the current spreads")
                return (f"note: the tolerance target judges only {t.text!r}; "
                        f"P({event} within {facts.horizon:g} s) = {_pct(p)} ({where}) stays "
                        f"above the acceptable {100 * (acceptable or 0.05):g} % of [study] "
                        "acceptable_burn_probability: tolerances alone do not make the study "
                        "acceptable")
    try:
        same = parse_target(criterion, output=t.output if not t.transient else
                            "inner_surface_temperature").text == t.text
    except ValueError:
        same = False
    if same:
        return ""
    return (f"note: the tolerance target {t.text!r} is not the study's criterion "
            f"{criterion!r}; meeting the target does not decide the study's verdict on that "
            "criterion")


def tolerance_advice(report: ToleranceReport, study: Study, *,
                     probability: float | None = None) -> list[str]:
    """What to act on, one line each: the independent verification's verdict, the note of
    :func:`acceptance_note` when it applies and, when configured, the nominal-shift advice.

    Parameters
    ----------
    report
        The tolerance results of ``study``.
    study
        The study.
    probability
        P(headline event) of the study's own run (worst exposure) for :func:`acceptance_note`
        [-]; ``None``: the tolerance design's baseline.

    Returns
    -------
    list of str
    """
    out = [_verification_line(report, study).strip()]
    note = acceptance_note(report, study, probability=probability)
    if note:
        out.append(note)
    if report.nominal_shift is not None:
        out += [ln.strip() for ln in _shift_lines(report, study)]
    return out


# ----------------------------------------------------------------------------------------------
# Text report
# ----------------------------------------------------------------------------------------------


def _pct(p: float) -> str:
    return "n/a" if not math.isfinite(p) else f"{100 * p:.3g} %"


def _metric(report: ToleranceReport, study: Study, value: float, *,
            difference: bool = False) -> str:
    if not math.isfinite(value):
        return "n/a"
    if _target(report).kind == "exceedance":
        return (f"{100 * value:+.3g} %" if difference else _pct(value))
    if _flip(report):
        if difference:
            return f"{-value:+.3g} s"
        return _time(report, value)
    return _temperature(study, value, difference=difference)


def _time(report: ToleranceReport, value: float, digits: str = ".3g") -> str:
    """An engine value of a time target as a time: ``> 60 s`` at the horizon."""
    if not math.isfinite(value):
        return "n/a"
    if beyond_horizon(report, value):
        return f"> {-report_limit(report):{digits}} s"
    return f"{-value:{digits}} s"


def _time_change(report: ToleranceReport, new: float, base: float) -> str:
    """The change of a time from ``base`` to ``new`` (engine values): a bound where one of them
    is beyond the horizon, ``n/a`` where both are."""
    if not (math.isfinite(new) and math.isfinite(base)):
        return "n/a"
    change = base - new  # the times are minus the engine values
    new_out, base_out = beyond_horizon(report, new), beyond_horizon(report, base)
    if new_out and base_out:
        return "n/a"
    if new_out:  # the new time is later than the horizon: the change is at least this
        return f"> {change:+.3g} s"
    if base_out:  # the old one was: the change is at most this
        return f"< {change:+.3g} s"
    return f"{change:+.3g} s"


def _temperature(study: Study, value: float, *, difference: bool = False) -> str:
    if not math.isfinite(value):
        return "n/a"
    if study.analysis.limit_output == "heat_flux":  # the metric is a heat flux [W m-2]
        shown = study.format_limit_value(abs(value) if difference else value)
        return (("-" if value < 0 else "+") + shown) if difference else shown
    if difference:
        return ("-" if value < 0 else "+") + study.format_temperature(abs(value), difference=True)
    return study.format_temperature(value)


def _exposure(study: Study, outcome: Outcome) -> str:
    if study.scenarios is None:
        return ""
    s = outcome.scenario
    return f" at {study.scenarios.quantity} = {study.scenarios.labels[s]}"


def tolerance_text(report: ToleranceReport, study: Study, *,
                   csv_path: Path | None = None) -> str:
    """The report printed by ``plyrisk tolerances``, ending with the cautions.

    Parameters
    ----------
    report
        The tolerance results of ``study``.
    study
        The study.
    csv_path
        The CSV file written, to mention.

    Returns
    -------
    str
    """
    st, wi, params = report.settings, report.whatif, study.parameters
    level = f"{100 * st.level:g} %"
    basis = ("the upper end of the metric's confidence interval" if st.basis == "bound"
             else "the point estimate of the metric")
    base = wi.baseline
    label = _label(report, base.probability)
    flip = _flip(report)

    def _t(study: Study, value: float, *, difference: bool = False) -> str:
        if flip:  # engine values are minus the capped time
            if not math.isfinite(value):
                return "n/a"
            return f"{-value:+.3g} s" if difference else _time(report, value)
        return _temperature(study, value, difference=difference)

    def _change(new: float, old: float) -> str:
        if flip:
            return _time_change(report, new, old)
        return _t(study, new - old, difference=True)

    if flip:
        lo_name, hi_name = "quantile_upper", "quantile_lower"
        exceed = f"P({_target(report).event or 'event'} within {-report_limit(report):g} s)"
    else:
        lo_name, hi_name = "quantile_lower", "quantile_upper"
        exceed = (f"P({_limit_words(study)} > "
                  f"{study.format_limit_value(study.analysis.limit)})")
    out = [f"Tolerance study: {study.title}", f"Config: {study.source}",
           f"Target: {target_text(report, study)}; judged on {basis} ({level})",
           f"Design: {st.design}, {st.samples} samples, seed {st.seed}, common random numbers; "
           f"{report.runs} model runs ({report.runs - 1} over the {st.samples}-row design, each "
           f"with one set of spreads, + 1 verification run over a new design of "
           f"{report.allocation.verification.samples} rows)"]
    out += ["", f"Baseline (current spreads){_exposure(study, base)}:",
            f"  {label} = {_t(study, base.quantile[base.scenario])} "
            f"[{_t(study, getattr(base, lo_name)[base.scenario])}, "
            f"{_t(study, getattr(base, hi_name)[base.scenario])}] ({level} CI)",
            f"  {exceed} = {_pct(base.exceedance[base.scenario])} "
            f"[{_pct(base.exceedance_lower[base.scenario])}, "
            f"{_pct(base.exceedance_upper[base.scenario])}]",
            f"  target metric = {_metric(report, study, base.score)}: "
            + ("MET" if base.met else "NOT MET")]
    accept = acceptance_note(report, study)
    if accept:
        out.append(f"  {accept}")
    def bare(text: str) -> str:  # the unit goes in the heading, the number in the cell
        if text == "n/a":
            return text
        number = text.rsplit(" ", 1)[0]
        try:
            return f"{float(number):+.3g}" if number[:1] in "+-" else number
        except ValueError:
            return number

    rows = []
    for w in wi.rows:
        rows.append([w.name, bare(_t(study, w.halved.worst_quantile)),
                     bare(_change(w.halved.worst_quantile, base.worst_quantile)),
                     bare(_t(study, w.nominal.worst_quantile)),
                     bare(_change(w.nominal.worst_quantile, base.worst_quantile)),
                     _pct(w.halved.worst_exceedance), _pct(w.nominal.worst_exceedance),
                     "n/a" if study.correlations is not None else share_text(w.variance_share)])
    level_unit = "s" if flip else (study.limit_unit or "K")
    change_unit = "s" if flip else difference_unit(level_unit)
    out += ["", "What-if: one parameter tightened, the others as specified (worst exposure; "
            f"{label} in {level_unit}, changes in {change_unit}; share: of the variance)"]
    out += text_table(["parameter", f"{label} halved", "change", f"{label} at nominal", "change",
                       "P(exceed) halved" if not flip else "P(event) halved",
                       "P(exceed) at nominal" if not flip else "P(event) at nominal",
                       "share"], rows)
    s = base.scenario
    half = 0.5 * (base.quantile_upper[s] - base.quantile_lower[s])
    half = abs(half)
    half_text = (_t(study, half if not flip else -half, difference=True).lstrip("+")
                 if math.isfinite(half)
                 else "n/a (too few samples for this percentile's interval)")
    out.append(f"  (baseline {label} CI half-width about {half_text};"
               " the changes share the design (common random numbers) and are far more "
               "precise than that)")
    out += ["", "Allowable spread: each parameter alone, the others as specified (the largest "
            "spread meeting the target, a limit, not a recommendation)"]
    rows = []
    for p, a in zip(params, report.allowable, strict=True):
        if a.status == "none":
            spec, note = "-", "not met even at zero spread"
        else:
            spec = replace(p, distribution=p.distribution.with_spread(a.factor)).describe()
            note = cap_note(a.bounded) if a.status == "any" or _at_cap(a.factor, a.cap) else ""
        if not a.monotone:
            note = (note + "; " if note else "") + "metric not monotone in the spread"
        rows.append([p.name, f"{a.factor:.3g}x" if math.isfinite(a.factor) else "-", spec,
                     note])
    out += text_table(["parameter", "factor", "allowable spec", "note"], rows)
    out += [""] + _allocation_lines(report, study)
    if report.nominal_shift is not None:
        out += [""] + _shift_lines(report, study)
    table = manufacturing_table(report, study)
    out += ["", f"For manufacturing (target {target_text(report, study)})"]
    out += text_table(["parameter", "current spec", "variance share", f"{label} if halved",
                       "recommended"],
                      [[r.parameter, r.current_spec,
                        share_text(r.variance_share, r.variance_share_ci),
                        ("> " if r.quantile_if_halved_beyond_horizon else "")
                        + f"{r.quantile_if_halved:.4g} {r.temperature_unit}", r.recommended_spec]
                       for r in table])
    notes = _notes(report)
    if any(not r.variance_share_resolved for r in table) or (
            study.correlations is None and not all(
                share_resolved(w.variance_share) or not math.isfinite(w.variance_share)
                for w in wi.rows)):
        notes.append(NOT_RESOLVED_SHARE.replace(
            "raise [tolerances] samples",
            not_resolved_advice([r.share_source for r in table]
                                + ["held at nominal (CRN)"] * (study.correlations is None))))
    if flip and any(r.quantile_if_halved_beyond_horizon for r in table) or (
            flip and beyond_horizon(report, base.worst_quantile)):
        notes.append(f"'> {-report_limit(report):g} s': so many samples reach no event "
                     "within the horizon that this percentile of the time is only known to lie "
                     "beyond it (tolerances.csv keeps the horizon with "
                     "quantile_if_halved_beyond_horizon = true); a change next to it is a bound "
                     "('> +x s', '< -x s'), n/a when both lie beyond")
    if study.correlations is not None:
        notes.append("inputs correlated ([correlations]): every run draws its design through "
                     "the Gaussian copula, so a changed spread keeps the dependence; the "
                     "variance share is left out (n/a) because holding one input at nominal "
                     "also removes its correlation; the Shapley effects of plyrisk run give "
                     "the shares")
    if notes:
        out += ["", "Notes"] + [f"  - {n}" for n in notes]
    if csv_path is not None:
        out += ["", f"Table written: {csv_path}"]
    out += ["", cautions_text(transient=_target(report).transient)]
    return "\n".join(out)


def _bounded(report: ToleranceReport, cap: float) -> bool:
    """Whether the physical bounds set a cap (one below ``[tolerances] max_factor``)."""
    return cap < float(report.settings.max_factor) * (1.0 - 1e-9)


def _allocation_lines(report: ToleranceReport, study: Study) -> list[str]:
    a, st = report.allocation, report.settings
    head = {"met": "meets the target at least cost",
            "caps": "target met with every spread at its cap"
            + ("" if st.allow_loosening else " (the current spreads; loosening is off)"),
            "infeasible": "NOT REACHABLE: the target is not met even with every adjustable "
            "influential parameter at its nominal; change the design (nominals), not the "
            "tolerances"}
    out = [f"Allocation: {head[a.status]}",
           f"  cost sum(w/f): current {a.current_cost:.4g}, allocation {a.cost:.4g}"]
    rows = []
    for j, p in enumerate(study.parameters):
        factor = "-" if a.status == "infeasible" else f"{a.factors[j]:.3g}x"
        rows.append([p.name, f"{a.weights[j]:.3g}", factor,
                     _recommended(p, float(a.factors[j]), a.status, p.name in a.kept,
                                  float(a.caps[j]), _bounded(report, float(a.caps[j])))])
    out += text_table(["parameter", "cost weight", "factor", "recommended spec"], rows)
    if a.kept:
        out.append(f"  kept at the current spread (not a manufacturing tolerance): "
                   f"{', '.join(a.kept)}")
    out.append(_verification_line(report, study))
    accept = acceptance_note(report, study)
    if accept:
        out.append(f"  {accept}")
    return out


def _verification_line(report: ToleranceReport, study: Study) -> str:
    a, st = report.allocation, report.settings
    v = a.verification
    t = _target(report)
    lo, hi = ((v.upper, v.lower) if _flip(report) and t.kind == "quantile"
              else (v.lower, v.upper))
    # the cautious side: the upper bound of a quantity kept below a bound, the lower bound of
    # a time kept above one (P5(time_to_second_degree_burn) >= 12 s)
    side = "lower" if _flip(report) and t.kind == "quantile" else "upper"
    if v.met:
        verdict = "MET"
    elif v.met_estimate:
        verdict = "NOT VERIFIED (the point estimate meets, but not with confidence)"
    else:
        verdict = "NOT MET"
    return (f"  Independent verification -> {verdict}: {t.label} = "
            f"{_metric(report, study, v.value)} [{_metric(report, study, lo)}, "
            f"{_metric(report, study, hi)}] ({100 * st.level:g} % CI); new seed {v.seed}, "
            f"{v.samples} samples{_exposure(study, v.outcome)}; point estimate "
            f"{'meets' if v.met_estimate else 'misses'}, {side} confidence bound "
            f"{'meets' if v.met_bound else 'misses'} the target")


def _shift_lines(report: ToleranceReport, study: Study) -> list[str]:
    s = report.nominal_shift
    assert s is not None, "called for a report with a nominal shift"
    p = next(q for q in study.parameters if q.name == s.name)
    rng = f"[{p.format(s.low)}, {p.format(s.high)}]"
    if s.status == "not reachable":
        return [f"Nominal shift of {s.name}: not reachable within {rng} at the current "
                "tolerances"]
    span = f"the target holds for nominals from {p.format(s.met_from)} to {p.format(s.met_to)}"
    if s.status == "met":
        first = f"the current nominal {p.format(s.current)} meets the target"
    else:
        first = (f"move the nominal from {p.format(s.current)} to {p.format(s.required)} "
                 f"({'+' if s.required > s.current else '-'}"
                 f"{p.format(abs(s.required - s.current), difference=True)})")
    lines = [f"Nominal shift of {s.name} (current tolerances, searched {rng}): {first}; "
             f"{span}"]
    if not s.monotone:
        lines.append("  note: the nominals meeting the target form more than one interval")
    return lines


def _notes(report: ToleranceReport) -> list[str]:
    notes = []
    bad = int(max(report.whatif.baseline.nonconverged.max(),
                  report.allocation.verification.outcome.nonconverged.max()))
    if bad:
        notes.append(f"{bad} sample(s) did not converge in a run; they are left out of the "
                     "statistics")
    if not math.isfinite(report.whatif.baseline.score):
        notes.append("the confidence bound of the metric needs more samples (raise samples)")
    if not report.allocation.monotone:
        notes.append("the metric was not monotone in the allocation multiplier; check the "
                     "allocation by hand")
    return notes
