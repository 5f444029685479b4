"""The report of a transient study: the answer first, then figures, tables, limits, provenance.

:func:`plyrisk.report.html.write_report` hands a dataset with ``attrs["study_kind"] ==
"transient"`` to :func:`write_transient_report`, which writes into ``out_dir`` the same files
as a steady report: ``report.html`` (self-contained), ``summary.md``, ``figures/*.png|svg`` and
CSV tables (``event_times.csv``, ``event_probabilities.csv``, ``indices.csv``). The first section
answers the question: time to second-degree burn (P5 with its interval, median), P(burn) within
the horizon with its interval, the dominant layer. ``docs/report.md`` describes each section.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from pathlib import Path
from typing import Any

import numpy as np
import xarray as xr

from plyrisk.analysis.outputs import DERIVED_OUTPUTS
from plyrisk.analysis.sobol import not_resolved
from plyrisk.analysis.transient import CONDITION_GROUPS, EVENTS
from plyrisk.cautions import TRANSIENT_CAUTIONS
from plyrisk.report.csv_tables import write_csv
from plyrisk.report.figures import transient as tf
from plyrisk.report.figures.common import (
    format_percent,
    format_temperature,
    pretty_unit,
    temperature_unit,
)
from plyrisk.report.shapley import dependence_assumptions, has_shapley, shapley_paragraphs
from plyrisk.report.tables import Table, cell_text, provenance_table, requested_quantiles
from plyrisk.report.verdict import verdict_html, verdict_markdown
from plyrisk.results.dataset import is_swept, scenario_slices
from plyrisk.text.indices import NOT_RESOLVED
from plyrisk.text.transient import criterion_note, no_index_line

__all__ = ["headline_lines", "transient_figures", "write_transient_report"]

EVENT_TEXT = {"first_degree_burn": "first-degree burn", "second_degree_burn":
              "second-degree burn", "third_degree_burn": "third-degree burn",
              "sensor_criterion": "the sensor's second-degree criterion"}


def _s(v: float, horizon: float, beyond: bool = False) -> str:
    if beyond or (math.isinf(v) and v > 0):
        return f"> {horizon:g} s"
    return "n/a" if not math.isfinite(v) else f"{v:.3g} s"


def _time(one: xr.Dataset, event: str, p: float) -> str:
    h = float(one.attrs["horizon"])
    parts = []
    for sfx in ("", "_lower", "_upper"):
        q = one[f"event_time_quantile{sfx}"].sel(event=event).sel(quantile=p, method="nearest")
        parts.append(_s(float(q), h))
    return f"{parts[0]} [{parts[1]}, {parts[2]}]"


def _ranked_by(one: xr.Dataset, output: str, *, groups: bool,
               ) -> tuple[str, np.ndarray, np.ndarray] | None:
    """What ``output`` is ranked by, per layer group or per input: ("Shapley effect" or
    "total index", the values, their half-widths); ``None`` without indices."""
    if "shapley_effect" in one:
        word, name = "Shapley effect", ("shapley_group_effect" if groups else "shapley_effect")
    elif "sobol_total" in one:
        word, name = "total index", ("sobol_group_total" if groups else "sobol_total")
    else:
        return None
    s = one.sel(output=output)
    return (word, np.asarray(s[name].values, float), np.asarray(s[f"{name}_ci"].values, float))


def _dominant(one: xr.Dataset) -> str:
    if "output" not in one.coords or one.sizes.get("output", 0) == 0:
        return ""
    output = str(one["output"].values[0])
    ranked = _ranked_by(one, output, groups=True)
    if ranked is not None:
        word, tot, ci = ranked
        names = [str(g) for g in one["group"].values]
        layer = np.array([n not in CONDITION_GROUPS for n in names])
        if np.isfinite(tot[layer]).any():
            j = int(np.nanargmax(np.where(layer, tot, np.nan)))
            text = (f"dominant layer: {names[j]} ({word} {tot[j]:.2f} ± {ci[j]:.2f} for "
                    f"{output}")
            threshold = float(one.attrs.get("index_ci_threshold", math.inf))
            if not_resolved(tot[j], ci[j]) or not ci[j] <= threshold:
                text += f"; {NOT_RESOLVED}"
            k = int(np.nanargmax(tot))
            if not layer[k]:
                text += (f"; the {names[k]} itself moves it more: {word} {tot[k]:.2f} ± "
                         f"{ci[k]:.2f}")
            return text + ")"
        if _varies(one, output):
            return f"dominant layer: not determined ({_no_index(one, output)})"
        return f"dominant layer: none ({output} is the same in every sample)"
    if "morris_mu_star" in one:
        mu = np.asarray(one["morris_mu_star"].sel(output=output).values, float)
        mu = np.where([str(g) not in CONDITION_GROUPS for g in one["parameter_group"].values],
                      mu, np.nan)  # the dominant *layer*: never the exposure or the wearer
        if np.isfinite(mu).any():
            j = int(np.nanargmax(mu))
            return (f"dominant layer: {one['parameter_group'].values[j]} (largest Morris mu* "
                    f"of {output}: {one['parameter'].values[j]})")
    return ""


def _varies(one: xr.Dataset, output: str) -> bool:
    """Whether a derived output differs between converged samples of one exposure."""
    if output not in one:
        return False
    v = np.asarray(one[output].values, float)
    v = v[np.isfinite(v)]
    return v.size > 1 and bool(np.ptp(v) > 0)


def _no_index(one: xr.Dataset, output: str) -> str:
    """Why an output that varies has no index (:func:`plyrisk.text.transient.no_index_line`)."""
    kind = str(one.attrs.get("wearer_kind", ""))
    source = DERIVED_OUTPUTS[output].source if output in DERIVED_OUTPUTS else ""
    count = None
    for event, time in EVENTS.get(kind, ()):
        if time == source and "event_count" in one and event in one["event"].values:
            count = int(one["event_count"].sel(event=event))
    n = int(one["samples_used"]) if "samples_used" in one else 0
    return no_index_line(output, wearer_kind=kind, horizon=float(one.attrs["horizon"]),
                         count=count, n=n)


def headline_lines(ds: xr.Dataset) -> list[tuple[str, list[str]]]:
    """Per exposure: its label and the answer in sentences (time, probability, layer)."""
    out = []
    event = tf.headline_event(ds)
    conf = f"{100 * float(ds.attrs.get('confidence', math.nan)):g} %"
    horizon = float(ds.attrs["horizon"])
    quantity = str(ds.attrs.get("scenario_quantity", "")).replace("_", " ")
    for label, one in scenario_slices(ds):
        label = f"{quantity} = {label}" if label else ""
        lines = []
        if "event_time_quantile" in one:
            what = EVENT_TEXT[event]
            lines.append(f"Time to {what}: P5 {_time(one, event, 0.05)}, median "
                         f"{_time(one, event, 0.5)} ({conf} confidence; counted from the start "
                         f"of the exposure; '> {horizon:g} s' = beyond the horizon).")
            b = {k: float(one[f"event_probability{k}"].sel(event=event)) for k in
                 ("", "_lower", "_upper")}
            lines.append(f"P({what} within {horizon:g} s) = {format_percent(b[''])} "
                         f"[{format_percent(b['_lower'])}, {format_percent(b['_upper'])}] "
                         f"({int(one['event_count'].sel(event=event))} of "
                         f"{int(one['samples_used'])} samples).")
            note = criterion_note(str(ds.attrs.get("criterion", "")) if not int(
                ds.attrs.get("criterion_is_default", 1)) else "", event, b[""],
                float(ds.attrs.get("acceptable_burn_probability", 0.05)))
            if note:
                lines.append(note[0].upper() + note[1:] + ".")
        else:
            lines.append("Screening only (method = morris): no percentiles or probabilities.")
        if "exposure_energy_at_criterion_quantile" in one:
            q = one["exposure_energy_at_criterion_quantile"]
            e5 = float(q.sel(quantile=0.05, method="nearest"))
            e50 = float(q.sel(quantile=0.5, method="nearest"))
            lines.append("Rating (exposure energy when the sensor reaches the criterion): P5 "
                         f"{_kj(e5)}, median {_kj(e50)}.")
        dom = _dominant(one)
        if dom:
            lines.append(dom[0].upper() + dom[1:] + ".")
        out.append((label, lines))
    return out


def _kj(v: float) -> str:
    if math.isinf(v):
        return "not reached"
    return "n/a" if not math.isfinite(v) else f"{v / 1e3:.4g} kJ/m²"


def _sweep_sentence(ds: xr.Dataset) -> str:
    if "longest_acceptable_exposure" not in ds:
        return ""
    v = ds["longest_acceptable_exposure"]
    c = ds["longest_acceptable_exposure_cautious"]
    acc = format_percent(float(v.attrs.get("acceptable_probability", math.nan)))
    q = str(ds.attrs.get("scenario_quantity", "exposure")).replace("_", " ")
    unit = v.attrs.get("units", "")
    status = v.attrs.get("status")
    if status == "crosses":
        text = f"P(burn) stays at or below {acc} up to {q} ≈ {float(v):.3g} {unit}"
    elif status == "below":
        text = f"P(burn) stays at or below {acc} over the whole swept range"
    elif status == "above":
        text = f"P(burn) exceeds {acc} even at the lowest swept level"
    else:
        text = "P(burn) is not available"
    if c.attrs.get("status") == "crosses":
        text += f"; by its upper confidence bound only up to ≈ {float(c):.3g} {unit}"
    return text + " (linear interpolation between swept levels)."


def transient_figures(ds: xr.Dataset) -> list[Any]:
    """Every figure of a transient report, in order (built, not saved)."""
    from plyrisk.report.html import ReportFigure

    out = []
    stats = "event_time_quantile" in ds
    swept = is_swept(ds)
    for i, (label, one) in enumerate(scenario_slices(ds)):
        idx = i if swept else None
        sfx = "" if idx is None else f"_{i + 1}"
        at = f" — {label}" if label else ""
        if stats and any(v in one for v in ("basal_temperature_band",
                                            "surface_temperature_band")):
            out.append(ReportFigure(
                f"temperature_bands{sfx}", f"Temperature against time{at}",
                "Median, 5–95 % and 1–99 % bands of the basal-layer (skin) or sensor "
                "temperature at each output time, the exposure shaded and drawn beneath. For "
                "skin the dashed line is the damage onset (44 °C), above which the damage "
                "integral grows; for a sensor it is the criterion as a sensor temperature. The "
                "bands are percentiles of each time taken separately, not the history of one "
                "sample.", tf.bands_figure(ds, scenario=idx)))
        if stats:
            out.append(ReportFigure(
                f"burn_time_distribution{sfx}", f"Distribution of the time to burn{at}",
                "Cumulative share of the converged independent samples with the event by each "
                "time; the hatched bar at the horizon is the share without it (censored: only "
                "known to be beyond the horizon). The shaded span is the confidence interval of "
                "P5.", tf.burn_time_figure(ds, scenario=idx)))
        if any(v in one for v in ("sobol_group_total", "shapley_group_effect",
                                  "morris_mu_star")):
            why = ""  # every index n/a: say why under the figure, as in the ranking
            first = str(one["output"].values[0]) if one.sizes.get("output") else ""
            values = ("sobol_total" if "sobol_total" in one else
                      "shapley_effect" if "shapley_effect" in one else "")
            if (values and first and _varies(one, first)
                    and not np.isfinite(np.asarray(one[values].sel(output=first).values,
                                                   float)).any()):
                why = f" Every index is n/a here: {_no_index(one, first)}."
            shapley = "shapley_group_effect" in one
            try:
                out.append(ReportFigure(
                    f"layer_indices{sfx}", f"Which layer buys the most time{at}",
                    ("Shapley effects of the first derived output (the capped time to burn) "
                     "per layer: the sum of the layer's parameters' effects, with bootstrap "
                     "intervals. " if shapley else
                     "Indices of the first derived output (the capped time to burn) per layer: "
                     "each layer's parameters varied together. ")
                    + "Indices of a capped output count every sample without a burn as burning "
                    "at the horizon; see the rule in the title." + why,
                    tf.layer_indices_figure(ds, scenario=idx, groups=True)))
                out.append(ReportFigure(
                    f"input_indices{sfx}", f"Indices per input{at}",
                    "The same output's "
                    + ("Shapley effects" if shapley else "indices")
                    + " per uncertain input." + why,
                    tf.layer_indices_figure(ds, scenario=idx, groups=False)))
            except ValueError:
                pass
    if "growth_sobol_total" in ds:  # --until-converged
        from plyrisk.report.figures.sensitivity import growth_figure

        path = str(ds.attrs.get("growth_output", "the first derived output"))
        judged = str(ds.attrs.get("growth_judged_outputs", path))
        out.append(ReportFigure(
            "index_convergence", "Convergence of the indices as the study grew",
            f"The total Sobol indices of the most influential inputs for {path} (see its rule "
            "in the table of derived outputs) at each doubling of the base samples "
            f"(--until-converged, judged on the intervals of {judged}), with their "
            "confidence half-widths. Rankings that still cross at the last step are not "
            "settled.", growth_figure(ds)))
    if stats and swept:
        out.append(ReportFigure(
            "burn_probability_sweep", "P(burn) against the exposure",
            "Estimated probability of a second-degree burn (or of the sensor reaching the "
            "criterion) within the horizon at each swept level, its confidence band and the "
            "acceptable probability; the read-off interpolates linearly between levels.",
            tf.burn_sweep_figure(ds)))
    return out


def _event_tables(ds: xr.Dataset) -> list[Table]:
    tables = []
    horizon = float(ds.attrs["horizon"])
    conf = f"{100 * float(ds.attrs.get('confidence', math.nan)):g} %"
    for label, one in scenario_slices(ds):
        if "event_time_quantile" not in one:
            continue
        probs = [p for _, p in requested_quantiles(one)]  # as the steady tables
        rows = []
        for e in one["event"].values:
            e = str(e)
            row = [EVENT_TEXT.get(e, e)]
            row += [_time(one, e, p) for p in probs]
            b = {k: float(one[f"event_probability{k}"].sel(event=e)) for k in
                 ("", "_lower", "_upper")}
            row.append(f"{format_percent(b[''])} [{format_percent(b['_lower'])}, "
                       f"{format_percent(b['_upper'])}]")
            rows.append(row)
        tables.append(Table(["event"] + [f"P{100 * p:g}" for p in probs]
                            + [f"P(within {horizon:g} s)"], rows,
                            f"Times to each event and their probability ({conf} intervals)"
                            + (f" — {label}" if label else "")))
        peak = []
        for name, what in (("peak_basal_temperature", "peak basal temperature"),
                           ("peak_surface_temperature", "peak surface temperature")):
            if f"{name}_quantile" in one:
                q = one[f"{name}_quantile"]
                peak.append([what] + [format_temperature(ds, float(q.sel(quantile=p)))
                                      for p in probs])
        if peak:
            tables.append(Table(["output"] + [f"P{100 * p:g}" for p in probs], peak,
                                "Peak temperatures" + (f" — {label}" if label else "")))
    return tables


def _ranking_tables(ds: xr.Dataset) -> list[Table]:
    tables = []
    for label, one in scenario_slices(ds):
        if "output" not in one.coords:
            continue
        for o in [str(v) for v in one["output"].values][:2]:
            if "sobol_total" in one:
                s = one.sel(output=o)
                tot = np.asarray(s["sobol_total"].values, float)
                order = np.argsort(-np.nan_to_num(tot, nan=-np.inf))
                threshold = float(one.attrs.get("index_ci_threshold", math.inf))
                tci = np.asarray(s["sobol_total_ci"].values, float)
                first = np.asarray(s["sobol_first"].values, float)
                fci = np.asarray(s["sobol_first_ci"].values, float)

                rows = [[str(k + 1), str(s["parameter"].values[j]),
                         str(s["parameter_group"].values[j]),
                         cell_text(f"{tot[j]:.3f} ± {tci[j]:.3f}"),
                         cell_text(f"{first[j]:.3f} ± {fci[j]:.3f}"),
                         _index_status(((tot[j], tci[j]), (first[j], fci[j])), threshold)]
                        for k, j in enumerate(order)]
                if not np.isfinite(tot).any():  # e.g. every sample burns, or none does
                    rows = [["-", "(none)", "", "", "", _no_index(one, o) if _varies(one, o)
                             else "the output is the same in every converged sample: no "
                             "input moves it"]]
                tables.append(Table(["rank", "input", "layer", "total index", "first-order",
                                     "status"],
                                    rows, f"Inputs ranked for {o}"
                                    + (f" — {label}" if label else "")))
            elif "shapley_effect" in one:
                tables += _shapley_tables(one, o, label, first=o == str(one["output"].values[0]))
            elif "morris_mu_star" in one:
                s = one.sel(output=o)
                mu = np.asarray(s["morris_mu_star"].values, float)
                order = np.argsort(-np.nan_to_num(mu, nan=-np.inf))
                rows = [[str(k + 1), str(s["parameter"].values[j]),
                         f"{mu[j]:.3g} ± {float(s['morris_mu_star_ci'].values[j]):.2g}",
                         f"{float(s['morris_sigma'].values[j]):.3g}"] for k, j in
                        enumerate(order)]
                tables.append(Table(["rank", "input", "mu*", "sigma"], rows,
                                    f"Morris screening of {o}" + (f" — {label}" if label
                                                                  else "")))
    return tables


def _shapley_tables(one: xr.Dataset, output: str, label: str, *, first: bool) -> list[Table]:
    """Inputs and layers by Shapley effect of ``output``; for the headline output also the four
    indices of dependent inputs."""
    from plyrisk.report.shapley import dependent_index_table

    threshold = float(one.attrs.get("index_ci_threshold", math.inf))
    s = one.sel(output=output)
    at = f" — {label}" if label else ""
    tables = []
    for dim, prefix, who in (("parameter", "shapley", "Inputs"), ("group", "shapley_group",
                                                                  "Layers")):
        eff = np.asarray(s[f"{prefix}_effect"].values, float)
        ci = np.asarray(s[f"{prefix}_effect_ci"].values, float)
        order = np.argsort(-np.nan_to_num(eff, nan=-np.inf), kind="stable")
        rows = []
        for k, j in enumerate(order):
            name = str(s[dim].values[j])
            row = [str(k + 1), name.replace("_", " ")
                   + (" (not a layer)" if dim == "group" and name in CONDITION_GROUPS else "")]
            if dim == "parameter":
                row.append(str(s["parameter_group"].values[j]))
            rows.append(row + [cell_text(f"{eff[j]:.3f} ± {ci[j]:.3f}"),
                               _index_status(((eff[j], ci[j]),), threshold)])
        if not np.isfinite(eff).any():
            rows = [["-", "(none)"] + ([""] if dim == "parameter" else []) + [
                "", _no_index(one, output) if _varies(one, output) else
                "the output is the same in every converged sample: no input moves it"]]
        header = ["rank", "input", "layer"] if dim == "parameter" else ["rank", "layer"]
        tables.append(Table(header + ["Shapley effect ± CI", "status"], rows,
                            f"{who} ranked by Shapley effect of {output}{at}"))
    if first:
        k = [str(v) for v in one["output"].values].index(output)
        table = dependent_index_table(one, k, f"{output}{at}")
        if table is not None:
            tables.append(table)
    return tables


def _index_status(pairs, threshold: float) -> str:
    """``ok``; ``not resolved: more samples`` when an estimate lies outside [0, 1] by more
    than its interval or its interval is wider than ``threshold``; ``undefined`` when an
    estimate is not a number (an output that does not vary)."""
    if not all(np.isfinite(v) for v, _ in pairs):
        return "undefined (the output does not vary enough)"
    bad = any(not_resolved(v, c) or not c <= threshold for v, c in pairs)
    return NOT_RESOLVED if bad else "ok"


def _rules_table(ds: xr.Dataset) -> Table:
    rows = []
    for o in [str(v) for v in ds["output"].values] if "output" in ds.coords else []:
        rule = ds[o].attrs.get("rule", "") if o in ds else ""
        units = str(ds[o].attrs.get("units", "")) if o in ds else ""
        if units == "K":  # a temperature: in the unit every other temperature is shown in
            units = pretty_unit(temperature_unit(ds))
        rows.append([o, units, rule])
    return Table(["derived output", "units", "rule"], rows,
                 "Outputs the indices refer to, and how each is derived")


def studied_tables(ds: xr.Dataset) -> tuple[list[Table], str]:
    """What was studied: the exposure, the layers (exposed side first) and the wearer as
    written in the config, each uncertain value with its nominal, distribution and truncation;
    re-read from the stored config text. Returns the tables and, when the config cannot be
    re-read, the reason (no tables)."""
    import tomllib

    from plyrisk.report.html import _study

    study, why = _study(ds)
    if study is None:
        return [], why
    raw = tomllib.loads(study.text)
    by_target = {p.target: p for p in study.parameters}
    header = ["element", "kind", "quantity", "nominal or value", "uncertainty", "truncation"]

    def rows_of(name: str, kind: str, given: dict, where: tuple) -> list[list[str]]:
        rows: list[list[str]] = []
        for key, value in given.items():
            if key in ("name", "kind"):
                continue
            p = by_target.get((*where, key))
            if p is not None:
                found = [[key, p.format(p.distribution.nominal), p.describe(), p.truncation()]]
            elif isinstance(value, dict) and all(isinstance(v, dict | str | int | float)
                                                 for v in value.values()) and any(
                    (*where, key, k) in by_target or not isinstance(v, dict)
                    for k, v in value.items()) and not _is_distribution(value):
                found = [[f"{key}.{r[2]}", *r[3:]] for r in rows_of("", "", value,
                                                                    (*where, key))]
            else:
                found = [[key, value if isinstance(value, str) else cell_text(value), "fixed",
                          ""]]
            for row in found:
                rows.append([name if not rows else "", kind if not rows else "", *row])
        return rows

    layers = []
    for i, given in enumerate(raw.get("layer", [])):
        layers += rows_of(str(given.get("name", f"layer {i + 1}")), str(given.get("kind", "")),
                          given, ("layer", i))
    wearer = raw.get("wearer", {})
    wearer_rows = rows_of("wearer", str(wearer.get("kind", "")), wearer, ("wearer",))
    setup = study.transient
    if setup is not None and wearer.get("kind") == "skin":
        # what the model used where the config left it out: never an empty table
        for key, value in (("properties", setup.skin_properties),
                           ("damage_model", setup.damage_model)):
            if key not in wearer and value:
                wearer_rows.append(["wearer" if not wearer_rows else "",
                                    "skin" if not wearer_rows else "", key, str(value),
                                    "default", ""])
    tables = [
        Table(header, rows_of("exposure", "", raw.get("exposure", {}), ("exposure",)),
              "The exposure and the cool-down"),
        Table(header, layers, "The assembly, exposed side first"),
        Table(header, wearer_rows, "The wearer"),
    ]
    return tables, ""


def _is_distribution(value: dict) -> bool:
    """Whether a TOML table is an uncertain value (one distribution key, or nominal/tolerance)."""
    from plyrisk.study.distributions import KINDS

    return bool(set(value) & (set(KINDS) | {"nominal", "tolerance"}))


def _nonconverged(ds: xr.Dataset) -> Table:
    rows = []
    for label, one in scenario_slices(ds):
        n = int(np.sum(~np.asarray(one["converged"].values, bool)))
        rows.append([label or "—", str(n), str(one.sizes["sample"])])
    return Table(["exposure", "not converged", "samples"], rows)


def write_transient_report(ds: xr.Dataset, out_dir: str | Path, *,
                           tolerance_table: Any = None,
                           tolerance_advice: Any = None,
                           formats: Sequence[str] | None = None,
                           progress: Callable[[str], None] | None = None) -> Any:
    """Write the report of a transient results dataset (see the module docstring).

    Parameters
    ----------
    ds
        A transient results dataset.
    out_dir
        Folder to write into.
    tolerance_table
        Tolerance recommendations (as for :func:`plyrisk.report.html.write_report`).
    tolerance_advice
        Lines to act on (as for :func:`plyrisk.report.html.write_report`).
    formats
        Figure file formats (as for :func:`plyrisk.report.html.write_report`).
    progress
        Called with a short text as each stage begins (as for
        :func:`plyrisk.report.html.write_report`).

    Returns
    -------
    plyrisk.report.html.ReportFiles
    """
    from plyrisk.report.html import (
        _CSS,
        INDEPENDENT_INPUTS,
        ReportFiles,
        _esc,
        _formats,
        _html_table,
        _md_table,
        _pending_tolerances,
        _save,
        _Tolerances,
        screening_html,
        screening_markdown,
        with_contents,
    )

    missing = [v for v in ("converged", "sample_block") if v not in ds.variables]
    if missing or "horizon" not in ds.attrs:
        raise ValueError("not a plyrisk transient results dataset: missing "
                         + ", ".join(missing + ([] if "horizon" in ds.attrs
                                                else ["attrs.horizon"])))
    if callable(tolerance_table):  # a table computed meanwhile (see write_report)
        tolerance_table, tolerance_advice = _pending_tolerances(tolerance_table,
                                                                tolerance_advice)
    tol = _Tolerances.of(tolerance_table, tolerance_advice)
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    kinds = _formats(ds, formats)
    if progress is not None:
        progress(f"report: figures ({', '.join(kinds)})")
    figs = transient_figures(ds)
    fig_paths, embedded = _save(figs, out / "figures", kinds)
    if progress is not None:
        progress("report: CSV tables, report.html, summary.md")
    for f in figs:
        f.figure.clear()
    head = headline_lines(ds)
    sweep = _sweep_sentence(ds)
    events = _event_tables(ds)
    ranking = _ranking_tables(ds)
    rules = _rules_table(ds)
    studied, why = studied_tables(ds)
    tables = _csv(ds, out)
    if tol is not None:
        tables.append(tol.write_csv(out))
    title = str(ds.attrs.get("title", "plyrisk study"))
    notes = [n for n in str(ds.attrs.get("notes", "")).split("\n") if n.strip()]
    cautions = "".join(f"<li>{_esc(c)}</li>" for c in TRANSIENT_CAUTIONS)
    box = f'<div class="cautions"><h2>Cautions</h2><ul>{cautions}</ul></div>'
    h = ["<!DOCTYPE html>", '<html lang="en">', "<head>", '<meta charset="utf-8">',
         f"<title>{_esc(title)} — plyrisk report</title>", f"<style>{_CSS}</style>", "</head>",
         "<body>", f"<h1>{_esc(title)}</h1>",
         f'<p class="sub">plyrisk transient study report · config '
         f"{_esc(ds.attrs.get('config_source', ''))} · method {_esc(ds.attrs.get('method'))}"
         f" · seed {_esc(ds.attrs.get('seed'))} · {_esc(ds.attrs.get('wearer_kind'))} · "
         f"horizon {float(ds.attrs['horizon']):g} s</p>", verdict_html(ds), "<h2>Answer</h2>"]
    for label, lines in head:
        if label:
            h.append(f"<h3>{_esc(label)}</h3>")
        h += [f'<p class="headline">{_esc(t)}</p>' for t in lines]
    if sweep:
        h.append(f'<p class="headline"><strong>{_esc(sweep)}</strong></p>')
    h.append('<p class="sub">Engineering estimates within the wide scatter of the published '
             "burn criteria; the intervals cover the sampling of the inputs only. See the "
             "cautions below.</p>")
    h.append(box)
    h.append("<h2>What was studied</h2>")
    if studied:
        h += [_html_table(t) for t in studied]
    else:
        h.append(f"<p>The stored config could not be re-read by this version of plyrisk "
                 f"({_esc(why)}); the tables are left out. The config text is under "
                 "Provenance.</p>")
    h.append("<h2>Figures</h2>")
    for f in figs:
        h.append(f"<figure><h3>{_esc(f.title)}</h3>"
                 f'<img src="data:image/png;base64,{embedded[f.stem]}" alt="{_esc(f.title)}">'
                 f"<figcaption>{_esc(f.caption)}</figcaption></figure>")
    h.append("<h2>Times to burn and probabilities</h2>")
    h += [_html_table(t) for t in events]
    h.append(f"<p>{_esc(ds.attrs.get('censoring', ''))}.</p>")
    h.append("<h2>Ranking: which inputs and layers matter</h2>")
    h += [f"<p>{_esc(t)}</p>" for t in shapley_paragraphs(ds)] if has_shapley(ds) else []
    h += [_html_table(t) for t in ranking]
    h.append(_html_table(rules))
    if tol is not None:
        h += tol.html()
    h += screening_html(ds)
    h += ["<h2>Samples that did not converge</h2>",
          "<p>Samples whose transient solve failed are excluded from every statistic and "
          "counted here.</p>", _html_table(_nonconverged(ds))]
    inputs = dependence_assumptions(ds, (INDEPENDENT_INPUTS,))
    h.append("<h2>Assumptions and limits of the model</h2><ul>"
             + "".join(f"<li>{_esc(c)}</li>" for c in (*TRANSIENT_CAUTIONS[2:], *inputs))
             + "".join(f"<li>{_esc(n)}</li>" for n in notes) + "</ul>")
    h.append(box)
    h += ["<h2>Provenance</h2>", _html_table(_provenance(ds)), "<h3>Config text</h3>",
          f"<pre>{_esc(ds.attrs.get('config_text', ''))}</pre>", "</body>", "</html>"]
    html_path = out / "report.html"
    html_path.write_text("\n".join(with_contents(h)) + "\n", encoding="utf-8")
    cautions_md = "## Cautions\n\n" + "\n".join(f"- **{c}**" for c in TRANSIENT_CAUTIONS)
    m = [f"# {title}", "", "plyrisk transient study summary; the full report is "
         "`report.html`.", "", *verdict_markdown(ds), "## Answer", ""]
    for label, lines in head:
        if label:
            m += [f"### {label}", ""]
        m += [f"- {t}" for t in lines] + [""]
    if sweep:
        m += [f"**{sweep}**", ""]
    m += [cautions_md, "", "## What was studied", ""]
    for t in studied:
        m += [_md_table(t), ""]
    m += ["## Times to burn", ""]
    for t in events:
        m += [_md_table(t), ""]
    m += ["## Ranking", ""]
    if has_shapley(ds):
        m += [x for t in shapley_paragraphs(ds) for x in (t, "")]
    for t in ranking:
        m += [_md_table(Table(t.header, t.rows[:5], t.caption)), ""]
    m += [_md_table(rules), ""] + (tol.markdown() if tol is not None else [])
    m += screening_markdown(ds)
    m += ["## Samples that did not converge", "",
          _md_table(_nonconverged(ds)), ""]
    m += ["## Notes", "", *[f"- {n}" for n in (*inputs, *notes)], ""]
    m += ["## Files", "", *[f"- `{p.relative_to(out).as_posix()}`" for p in
                            fig_paths + tables], "", "## Provenance", "",
          _md_table(_provenance(ds)), "", cautions_md, ""]
    md_path = out / "summary.md"
    md_path.write_text("\n".join(m), encoding="utf-8")
    return ReportFiles(html_path, md_path, fig_paths, tables)


def _provenance(ds: xr.Dataset) -> Table:
    t = provenance_table(ds)
    rows = [r for r in t.rows if r[0] not in ("gap radiation", "gap convection")]
    rows[4:4] = [["wearer", str(ds.attrs.get("wearer_kind", ""))],
                 ["horizon", f"{float(ds.attrs.get('horizon', math.nan)):g} s"],
                 (["burn criterion", "the sensor's second-degree criterion (Stoll & Chianta)"]
                  if ds.attrs.get("wearer_kind") == "sensor" else
                  ["damage constants", str(ds.attrs.get("damage_model", ""))])]
    return Table(t.header, rows)


def _csv(ds: xr.Dataset, out: Path) -> list[Path]:
    paths = []
    rows_t, rows_p = [], []
    for label, one in scenario_slices(ds):
        if "event_time_quantile" not in one:
            continue
        for e in one["event"].values:
            for p in one["quantile"].values:
                sel = {"event": e, "quantile": p}
                rows_t.append([label, str(e), float(p)] + [
                    float(one[f"event_time_quantile{s}"].sel(sel)) for s in
                    ("", "_lower", "_upper")] + [
                    bool(one["event_time_quantile_beyond_horizon"].sel(sel))])
            rows_p.append([label, str(e)] + [float(one[f"event_probability{s}"].sel(event=e))
                                             for s in ("", "_lower", "_upper")]
                          + [int(one["event_count"].sel(event=e)), int(one["samples_used"])])
    if rows_t:
        paths.append(write_csv(out / "event_times.csv", ["exposure", "event", "quantile",
                                                         "time_s", "lower_s", "upper_s",
                                                         "beyond_horizon"], rows_t))
        paths.append(write_csv(out / "event_probabilities.csv",
                               ["exposure", "event", "probability", "lower", "upper", "count",
                                "samples"], rows_p))
    from plyrisk.report.shapley import write_shapley_csv

    paths += write_shapley_csv(ds, out)
    if "sobol_total" in ds:
        rows = []
        for label, one in scenario_slices(ds):
            for o in one["output"].values:
                for j, name in enumerate(one["parameter"].values):
                    s = one.sel(output=o)
                    rows.append([label, str(o), str(name)] + [
                        float(s[v].values[j]) for v in ("sobol_first", "sobol_first_ci",
                                                        "sobol_total", "sobol_total_ci")])
        paths.append(write_csv(out / "indices.csv", ["exposure", "output", "parameter",
                                                     "first", "first_ci", "total", "total_ci"],
                               rows))
    return paths
