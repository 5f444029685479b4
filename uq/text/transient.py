"""Terminal text of a transient study: the answer first (time to burn, P(burn), dominant layer).

Shared by the summary of ``plyrisk run`` (:func:`transient_summary_lines`) and the report's
headline (:func:`headline_sentences`), so that both say the same thing in the same words.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from plyrisk.analysis.outputs import DERIVED_OUTPUTS
from plyrisk.analysis.sobol import not_resolved
from plyrisk.analysis.transient import (
    CONDITION_GROUPS,
    EVENTS,
    HEADLINE_EVENT,
    CensoredQuantiles,
    TransientAnalysis,
    TransientScenarioAnalysis,
)
from plyrisk.text.indices import NOT_RESOLVED

EVENT_TEXT = {"first_degree_burn": "first-degree burn", "second_degree_burn":
              "second-degree burn", "third_degree_burn": "third-degree burn",
              "sensor_criterion": "the sensor's second-degree criterion"}
"""Words for each event."""


def seconds(value: float, horizon: float, *, beyond: bool | None = None) -> str:
    """A time [s] as text: ``"> 30 s"`` beyond the horizon, ``"n/a"`` for NaN."""
    if beyond or (beyond is None and math.isinf(value) and value > 0):
        return f"> {horizon:g} s"
    if not math.isfinite(value):
        return "n/a"
    return f"{value:.3g} s"


def percent(p: float) -> str:
    """A probability as a percentage, ``"n/a"`` for NaN."""
    return "n/a" if not math.isfinite(p) else f"{100 * p:.3g} %"


def level_of(q: CensoredQuantiles, p: float) -> int:
    """Index of the percentile level closest to ``p``."""
    return int(np.argmin(np.abs(np.asarray(q.probabilities) - p)))


def time_text(q: CensoredQuantiles, p: float) -> str:
    """``"7.7 s [6.3 s, 8.8 s]"``: the percentile with its interval ("> horizon" if beyond)."""
    i = level_of(q, p)
    h = q.horizon
    return (f"{seconds(q.estimate[i], h)} [{seconds(q.lower[i], h)}, "
            f"{seconds(q.upper[i], h)}]")


def index_resolved(value: float, half_width: float, converged: bool) -> bool:
    """Whether an index can be read as a value: inside [0, 1] within its interval
    (:func:`plyrisk.analysis.sobol.not_resolved`) and its interval no wider than the study's
    ``index_ci_threshold`` (``converged``)."""
    return bool(converged) and not not_resolved(value, half_width)


def _status(item: Any) -> str:
    """``ok`` or ``not resolved: more samples`` for a ranked index (total and first)."""
    ok = index_resolved(item.total, item.total_ci, item.total_converged) and (
        not math.isfinite(item.first) or index_resolved(item.first, item.first_ci,
                                                         item.first_converged))
    return "ok" if ok else NOT_RESOLVED


def index_word(sc: TransientScenarioAnalysis, output: str) -> str:
    """What the rankings of ``output`` are by: "Shapley effect" or "total index"."""
    return "Shapley effect" if output in getattr(sc, "shapley", {}) else "total index"


def dominant(study: Any, sc: TransientScenarioAnalysis, output: str) -> tuple[str, str]:
    """The layer group (or input) that moves ``output`` most, and how it was measured.

    By the total index per layer group (Saltelli or the surrogate) or the layer's Shapley
    effect; for Morris by the largest mu*, naming its input and layer.
    """
    groups = [g for g in sc.group_ranking.get(output) or [] if math.isfinite(g.total)]
    layers = [g for g in groups if g.name not in CONDITION_GROUPS]
    word = index_word(sc, output)
    if layers:
        first = layers[0]
        how = f"{word} {first.total:.2f} ± {first.total_ci:.2f}"
        if not index_resolved(first.total, first.total_ci, first.total_converged):
            how += f"; {NOT_RESOLVED}"
        if groups[0].name in CONDITION_GROUPS:
            how += (f"; the {groups[0].name} itself moves it more: {word} "
                    f"{groups[0].total:.2f} ± {groups[0].total_ci:.2f}")
        return first.name, how
    m = sc.screening.get(output)
    layer = np.array([p.group not in CONDITION_GROUPS for p in study.parameters], dtype=bool)
    if m is not None and layer.size == len(m.mu_star) and np.isfinite(m.mu_star[layer]).any():
        j = int(np.nanargmax(np.where(layer, m.mu_star, np.nan)))  # never the exposure
        group = study.parameters[j].group
        return group, f"largest Morris mu*: {m.names[j]}"
    return "", ""


def criterion_note(criterion: str, event: str, probability: float,
                   acceptable: float | None) -> str:
    """A warning when the verdict judges another criterion while P(event) is too high.

    A criterion on a time quantile (``P5(time_to_second_degree_burn) >= 18 s``) can be MET
    while many samples burn; the probability is then flagged beside the answer so that the
    verdict is not read as "no burn".

    Parameters
    ----------
    criterion
        The study's ``[study] criterion`` ("" for the default) [-].
    event
        The headline event, e.g. ``"second_degree_burn"`` [-].
    probability
        Its probability within the horizon [-].
    acceptable
        ``[study] acceptable_burn_probability`` (``None``: the default, 5 %) [-].

    Returns
    -------
    str
        The note, or "" when the criterion is the default or the probability acceptable.

    Examples
    --------
    >>> criterion_note("P5(time_to_second_degree_burn) >= 18 s", "second_degree_burn",
    ...                0.63, 0.05)[:60]
    'note: this probability is above the acceptable 5 % of [study'
    >>> criterion_note("", "second_degree_burn", 0.63, 0.05)
    ''
    """
    if not criterion or criterion.replace(" ", "").startswith(f"P({event})"):
        return ""
    acceptable = 0.05 if acceptable is None else acceptable
    if not (math.isfinite(probability) and probability > acceptable):
        return ""
    return (f"note: this probability is above the acceptable {100 * acceptable:g} % of [study] "
            f"acceptable_burn_probability; the verdict judges only the criterion "
            f"{criterion!r}, not the chance of a burn")


def headline_sentences(study: Any, analysis: TransientAnalysis, s: int) -> list[str]:
    """The answer of one exposure in three sentences: time, probability, dominant layer."""
    f = analysis.facts
    sc = analysis.scenarios[s]
    event = HEADLINE_EVENT.get(f.wearer_kind)
    conf = f"{100 * study.analysis.confidence:g} %"
    out = []
    if event is not None and analysis.statistics:
        q, b = sc.times[event], sc.burn[event]
        what = EVENT_TEXT[event]
        out.append(f"time to {what}: P5 {time_text(q, 0.05)}, median {time_text(q, 0.5)} "
                   f"({conf} confidence; counted from the start of the exposure; "
                   f"'> {f.horizon:g} s' = beyond the horizon)")
        out.append(f"P({what} within {f.horizon:g} s) = {percent(b.probability)} "
                   f"[{percent(b.lower)}, {percent(b.upper)}] ({b.method}; {b.count} of "
                   f"{b.n} samples)")
        note = criterion_note(study.analysis.criterion, event, b.probability,
                              f.acceptable_burn_probability)
        if note:
            out.append(note)
        if f.wearer_kind == "sensor" and sc.exposure_energy is not None:
            e = sc.exposure_energy
            out.append("rating (exposure energy when the sensor reaches the criterion): P5 "
                       f"{_energy(e, 0.05)}, median {_energy(e, 0.5)}")
    elif not analysis.statistics:
        out.append("screening only: no percentiles or probabilities (a Morris design samples "
                   "a grid, not the input distributions)")
    primary = analysis.outputs[0] if analysis.outputs else ""
    name, how = dominant(study, sc, primary)
    if name:
        rule = "" if primary not in DERIVED_OUTPUTS else DERIVED_OUTPUTS[primary].long_name
        out.append(f"dominant layer: {name} (for the {rule}: {how})")
    elif primary in sc.constant_outputs:
        out.append(f"dominant layer: none ({primary} is the same in every sample)")
    elif sc.indices or sc.screening:
        count, n = _event_count(analysis, sc, primary)
        out.append("dominant layer: not determined (" + no_index_line(
            primary, wearer_kind=f.wearer_kind, horizon=f.horizon, count=count, n=n) + ")")
    return out


def _energy(q: CensoredQuantiles, p: float) -> str:
    i = level_of(q, p)

    def one(v: float) -> str:
        if math.isinf(v):
            return "not reached"
        return "n/a" if not math.isfinite(v) else f"{v / 1e3:.4g} kJ/m²"

    return f"{one(q.estimate[i])} [{one(q.lower[i])}, {one(q.upper[i])}]"


def transient_summary_lines(study: Any, analysis: TransientAnalysis, *, evaluations: int,
                            temperature, top: int = 5) -> list[str]:
    """The summary of a transient study after its header: the answer first, then the rest.

    Parameters
    ----------
    study
        The study.
    analysis
        Its transient analysis.
    evaluations
        Model evaluations per exposure.
    temperature
        ``kelvin -> text`` in the user's unit.
    top
        Inputs listed per ranking.

    Returns
    -------
    list of str
    """
    f = analysis.facts
    lines = [f"transient model: {f.wearer_kind} behind the assembly, horizon {f.horizon:g} s, "
             + ("burn criterion: the sensor's second-degree criterion (Stoll & Chianta)"
                if f.wearer_kind == "sensor" else f"damage constants {f.damage_model or 'n/a'}")]
    for s, sc in enumerate(analysis.scenarios):
        lines.append("")
        if study.scenarios is not None:
            lines.append(f"exposure {s + 1}: {study.scenarios.quantity} = "
                         f"{study.scenarios.labels[s]}")
        lines.append("ANSWER")
        lines += [f"  {t}" for t in headline_sentences(study, analysis, s)]
        if analysis.statistics:
            lines += _details(study, analysis, sc, temperature)
        lines += _rankings(study, analysis, sc, top)
        lines.append(f"non-converged samples: {sc.nonconverged} of {evaluations}"
                     + (" (excluded from every statistic; see 'converged' in the dataset)"
                        if sc.nonconverged else ""))
    if analysis.limit is not None:
        lines.append("")
        lines += sweep_lines(study, analysis)
    lines.append("")
    lines.append("derived outputs (indices are of these, each with its rule):")
    for o in analysis.outputs:
        if o in DERIVED_OUTPUTS:
            lines.append(f"  {o}: {DERIVED_OUTPUTS[o].rule}")
    if any(sc.shapley for sc in analysis.scenarios):
        import textwrap

        from plyrisk.methods.shapley import HOW_TO_READ

        lines.append("")
        lines += ["  " + t for t in textwrap.wrap(HOW_TO_READ, 96)]
    return lines


def _details(study, analysis: TransientAnalysis, sc, temperature) -> list[str]:
    f = analysis.facts
    conf = f"{100 * study.analysis.confidence:g} %"
    lines = [f"times to each event ({conf} confidence intervals; '> {f.horizon:g} s': no event "
             "by the horizon at that rank):"]
    for event, _ in EVENTS[f.wearer_kind]:
        q, b = sc.times[event], sc.burn[event]
        cells = "   ".join(f"P{100 * p:g} {time_text(q, p)}" for p in study.analysis.percentiles)
        lines.append(f"  {EVENT_TEXT[event]}: {cells}")
        lines.append(f"    P(within {f.horizon:g} s) = {percent(b.probability)} "
                     f"[{percent(b.lower)}, {percent(b.upper)}]; no event in "
                     f"{percent(q.no_event_fraction)} of the samples")
    for name, label in (("peak_basal_temperature", "peak basal temperature"),
                        ("peak_surface_temperature", "peak surface temperature")):
        q = sc.quantiles.get(name)
        if q is None:
            continue
        cells = "   ".join(
            f"P{100 * p:g} {temperature(q.estimate[i])}"
            for p in study.analysis.percentiles
            for i in [int(np.argmin(np.abs(q.probabilities - p)))])
        lines.append(f"  {label}: {cells}")
    return lines


def no_index_line(output: str, *, wearer_kind: str, horizon: float, count: int | None,
                  n: int) -> str:
    """One plain line on why an output that varies got no index (every estimate undefined).

    For an output of a burn or of the sensor's criterion (the capped time, the indicator) it
    says in how few samples the event occurs, or fails to: a design block (a replicate of a
    Saltelli design) in which every sample agrees has no variance to share out.

    Parameters
    ----------
    output
        The derived output.
    wearer_kind
        ``"skin"``, ``"sensor"`` or ``"prescribed"``.
    horizon
        The horizon [s].
    count
        Converged independent samples with the output's event within the horizon; ``None``
        when the output is not one of an event.
    n
        Converged independent samples.

    Examples
    --------
    >>> no_index_line("second_degree_burn", wearer_kind="skin", horizon=60.0, count=7,
    ...               n=64).split(": ", 1)[1][:48]
    'a second-degree burn within 60 s in only 7 of 64'
    """
    source = DERIVED_OUTPUTS[output].source if output in DERIVED_OUTPUTS else ""
    event = next((e for e, t in EVENTS.get(wearer_kind, ()) if t == source), None)
    if event is None or count is None:
        why = "it varies in too few samples"
    else:
        what = ("the sensor reaching its second-degree criterion" if event == "sensor_criterion"
                else f"a {EVENT_TEXT[event]}")
        few = f"only {count}" if count <= n - count else f"all but {n - count}"
        why = f"{what} within {horizon:g} s in {few} of {n} samples"
    return f"no index for {output}: {why}, too few at this sample size; raise [study] samples"


def _event_count(analysis: TransientAnalysis, sc, output: str) -> tuple[int | None, int]:
    """(samples with the output's event, converged independent samples) of one exposure."""
    source = DERIVED_OUTPUTS[output].source if output in DERIVED_OUTPUTS else ""
    for event, time in EVENTS.get(analysis.facts.wearer_kind, ()):
        if time == source and event in sc.burn:
            return sc.burn[event].count, sc.burn[event].n
    any_burn = next(iter(sc.burn.values()), None)
    return None, any_burn.n if any_burn is not None else 0


def _undefined(items: list) -> bool:
    return bool(items) and not any(math.isfinite(i.total) for i in items)


def _rankings(study, analysis: TransientAnalysis, sc, top: int) -> list[str]:
    lines = []
    for o in analysis.outputs[:2]:
        if o in sc.constant_outputs:  # no variance to share: no ranking, whatever the samples
            lines.append(f"inputs ranked by {o}: none (the output is the same in every "
                         "converged sample, so no input moves it)")
            continue
        groups = sc.group_ranking.get(o) or []
        params = sc.ranking.get(o) or []
        shapley = o in sc.shapley
        word = index_word(sc, o)
        if _undefined(params) and (not groups or _undefined(groups)):
            count, n = _event_count(analysis, sc, o)
            lines.append(no_index_line(o, wearer_kind=analysis.facts.wearer_kind,
                                       horizon=analysis.facts.horizon, count=count, n=n))
            continue
        if params:
            fit = sc.surrogate_quality.get(o, "")
            lines.append(f"inputs ranked by {word} of {o}" + (f" ({fit})" if fit else "")
                         + ":")
            for r, item in enumerate(params[:top], start=1):
                value = (f"effect {item.total:6.3f} ± {item.total_ci:.3f}" if shapley else
                         f"total {item.total:6.3f} ± {item.total_ci:.3f}  first "
                         f"{item.first:6.3f}")
                lines.append(f"  {r}. {item.name:<32} {value}  {_status(item)}")
        if groups:
            lines.append(f"layers ranked by {word} of {o}"
                         + (" (sum of the layer's parameters' effects)" if shapley else "")
                         + ":")
            for r, item in enumerate(groups[:top], start=1):
                name = (f"{item.name} (not a layer)" if item.name in CONDITION_GROUPS
                        else item.name)
                lines.append(f"  {r}. {name:<32} {'effect' if shapley else 'total'} "
                             f"{item.total:6.3f} ± {item.total_ci:.3f}  {_status(item)}")
        if shapley:
            from plyrisk.text.shapley import rerun_line

            rerun = rerun_line(study, sc, o)
            lines += [f"  {rerun}"] if rerun else []
        if shapley and o == analysis.outputs[0]:
            lines += _dependent_indices(study, sc, o, params[:top])
        m = sc.screening.get(o)
        if m is not None:
            lines.append(f"inputs ranked by Morris mu* of {o}:")
            for r, j in enumerate(m.order()[:top], start=1):
                lines.append(f"  {r}. {m.names[j]:<32} mu* {m.mu_star[j]:8.3g} ± "
                             f"{m.mu_star_ci[j]:.2g}  sigma {m.sigma[j]:8.3g}")
    return lines


def _dependent_indices(study, sc, output: str, ranked: list) -> list[str]:
    """The four indices of dependent inputs of the headline output (``method = "shapley"``)."""
    from plyrisk.text.shapley import _partners, dependent_index_lines

    table = dependent_index_lines(sc.shapley[output][0], [item.name for item in ranked])
    if not table:
        return []
    return ([f"indices of dependent inputs of {output} (full: with what the correlated "
             "partners carry; indep.: the input's own part; first-order and total; "
             f"{100 * study.analysis.confidence:g} % bootstrap intervals):"] + table
            + [f"  {t}" for t in _partners(sc.shapley[output][0])])


def sweep_lines(study, analysis: TransientAnalysis) -> list[str]:
    """P(headline event) per swept level and the longest acceptable exposure."""
    f = analysis.facts
    event = HEADLINE_EVENT[f.wearer_kind]
    sc = study.scenarios
    lines = [f"P({EVENT_TEXT[event]} within {f.horizon:g} s) against {sc.quantity}:"]
    for label, s in zip(sc.labels, analysis.scenarios, strict=True):
        b = s.burn[event]
        lines.append(f"  {label:>12}: {percent(b.probability):>8} [{percent(b.lower)}, "
                     f"{percent(b.upper)}]")
    lines.append(limit_sentence(study, analysis))
    return lines


def limit_sentence(study, analysis: TransientAnalysis) -> str:
    """One sentence on the longest exposure whose P(burn) stays acceptable."""
    from plyrisk.study.units import QUANTITIES, from_si

    lim = analysis.limit
    sc = study.scenarios
    if lim is None or sc is None:
        return ""
    spec = QUANTITIES.get(sc.quantity)

    def show(v: float) -> str:
        if spec is not None and sc.unit:
            return f"{float(from_si(v, sc.unit, spec)):.3g} {sc.unit}"
        return f"{v:.3g} s" if sc.quantity == "exposure_duration" else f"{v:.3g}"

    what = f"P({EVENT_TEXT[HEADLINE_EVENT[analysis.facts.wearer_kind]]})"
    acc = percent(lim.acceptable)
    if lim.status == "crosses":
        text = f"{what} stays at or below {acc} up to {sc.quantity} ≈ {show(lim.value)}"
    elif lim.status == "below":
        text = f"{what} stays at or below {acc} over the whole swept range"
    elif lim.status == "above":
        text = f"{what} exceeds {acc} even at the lowest swept level"
    else:
        text = f"{what} is not available"
    if lim.cautious_status == "crosses":
        text += (f"; by the upper confidence bound of {what}, only up to ≈ "
                 f"{show(lim.cautious_value)}")
    elif lim.cautious_status == "above" and lim.status != "above":
        text += "; its upper confidence bound exceeds it at every swept level"
    return text + " (linear interpolation between swept levels; run a finer sweep around it)."
