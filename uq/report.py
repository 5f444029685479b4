"""The study report: one self-contained HTML file, a Markdown summary, figures and CSV tables.

:func:`write_report` turns a results dataset (:func:`uq.storage.to_dataset` or
:func:`uq.storage.read_results`) into, inside ``out_dir``:

* ``report.html`` — everything, figures embedded as base64 PNG; no external links, scripts,
  fonts or stylesheets, so that it opens from disk in any browser with no network;
* ``summary.md`` — the headline, ranking, convergence and cautions in Markdown;
* ``figures/*.png`` and ``figures/*.svg`` — every figure of :mod:`uq.figures`;
* ``quantiles.csv``, ``indices.csv``, ``group_indices.csv``, ``ranking.csv`` and, when a
  tolerance table is passed, ``tolerances.csv``.

The report re-reads the study from ``attrs["config_text"]`` (:func:`uq.config.loads_study`) for
the stack and the input distributions in the user's units. What each section holds is
described in ``docs/report.md``.
"""

from __future__ import annotations

import base64
import csv
import html
import math
import tomllib
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, fields
from pathlib import Path
from typing import Any

import numpy as np
import xarray as xr

from uq import figures as fg
from uq.cautions import CAUTIONS
from uq.config import loads_study
from uq.storage import scenario_slices
from uq.units import QUANTITIES, TEMPERATURE, format_value

__all__ = ["ReportFigure", "ReportFiles", "Table", "report_figures", "write_report"]

PRIMARY = fg.PRIMARY
TOP_COUNT = 5
"""Parameters listed in the Markdown summary's ranking [-]."""
_REQUIRED = ("inner_surface_temperature", "interface_temperature_quantile",
             "inner_surface_temperature_quantile", "exceedance_probability", "rank_correlation",
             "layer_nominal_thickness", "converged", "sample_block")


@dataclass(frozen=True)
class ReportFiles:
    """Paths of everything :func:`write_report` wrote.

    Attributes
    ----------
    html
        ``report.html`` [-].
    markdown
        ``summary.md`` [-].
    figures
        Every figure file, PNG and SVG [-].
    tables
        Every CSV table [-].
    """

    html: Path
    markdown: Path
    figures: list[Path] = field(default_factory=list)
    tables: list[Path] = field(default_factory=list)


@dataclass(frozen=True)
class ReportFigure:
    """One figure of the report: file stem, heading, caption and the matplotlib Figure."""

    stem: str
    title: str
    caption: str
    figure: Any


@dataclass(frozen=True)
class Table:
    """A table of display text, rendered to HTML and Markdown alike."""

    header: list[str]
    rows: list[list[str]]
    caption: str = ""


# ----------------------------------------------------------------------------------------------
# Formatting
# ----------------------------------------------------------------------------------------------


def _t(ds: xr.Dataset, kelvin: float) -> str:
    return fg.format_temperature(ds, float(kelvin))


def _pct(p: float) -> str:
    return fg.format_percent(float(p))


def _idx(v: float, ci: float | None = None) -> str:
    if not np.isfinite(v):
        return "n/a"
    return f"{v:.3f}" + (f" ± {ci:.3f}" if ci is not None and np.isfinite(ci) else "")


def _cell(v: Any) -> str:
    if isinstance(v, bool | np.bool_):
        return "yes" if v else "no"
    if isinstance(v, float | np.floating):
        return "" if math.isnan(v) else f"{float(v):.4g}"
    return "" if v is None else str(v)


def _csv(v: Any) -> str:
    if isinstance(v, bool | np.bool_):
        return "true" if v else "false"
    if isinstance(v, int | np.integer):
        return str(int(v))
    if isinstance(v, float | np.floating):
        return "" if not np.isfinite(v) else f"{float(v):.10g}"
    return "" if v is None else str(v)


def _scenario_values(ds: xr.Dataset) -> list[tuple[int | None, str, xr.Dataset]]:
    out = []
    for i, (label, one) in enumerate(scenario_slices(ds)):
        out.append((i if "scenario" in ds.dims else None, label, one))
    return out


def _exposure(ds: xr.Dataset, label: str) -> str:
    if not label:
        return "as configured"
    quantity = str(ds.attrs.get("scenario_quantity", "exposure")).replace("_", " ")
    return f"{quantity} = {fg.pretty_unit(label)}"


# ----------------------------------------------------------------------------------------------
# Figures
# ----------------------------------------------------------------------------------------------


def report_figures(ds: xr.Dataset) -> list[ReportFigure]:
    """Every figure of the report, in order (built, not saved).

    Parameters
    ----------
    ds
        A results dataset [-].

    Returns
    -------
    list of ReportFigure
    """
    sobol = "sobol_total" in ds
    out: list[ReportFigure] = []
    for i, label, _ in _scenario_values(ds):
        sfx = "" if i is None else f"_{i + 1}"
        at = f" — {_exposure(ds, label)}" if label else ""
        out.append(ReportFigure(
            f"temperature_profile{sfx}", f"Temperature through the assembly{at}",
            "Median and 5–95 % / 1–99 % bands of each face temperature, from the exposed face "
            "to the innermost face; layers and gaps are drawn in their nominal widths, contact "
            "resistances (no width) as dotted lines. Straight lines join the faces: the profile "
            "inside a layer is not resolved, and the bands are percentiles of each face taken "
            "separately, not the profile of any one sample.",
            fg.profile_figure(ds, scenario=i)))
        if sobol:
            out.append(ReportFigure(
                f"sobol_indices{sfx}", f"Sobol indices per parameter{at}",
                "First-order (variance share of the input alone) and total (including its "
                "interactions) Sobol indices of the inner-surface temperature, with bootstrap "
                "confidence intervals, sorted by the total index. Hatched bars: the interval is "
                "wider than the convergence threshold; the ranking of those is not settled.",
                fg.indices_figure(ds, scenario=i)))
            out.append(ReportFigure(
                f"layer_indices{sfx}", f"Sobol indices per layer{at}",
                "Indices of each layer's (or boundary's) parameters varied together: which "
                "layer dominates the spread of the inner-surface temperature. Layers without "
                "an uncertain input are not shown.",
                fg.group_indices_figure(ds, scenario=i)))
        else:
            out.append(ReportFigure(
                f"rank_correlation{sfx}", f"Screening: rank correlation per parameter{at}",
                "Spearman rank correlation of each input with the inner-surface temperature. A "
                "screening measure only: it does not apportion the variance and misses "
                "interactions.", fg.indices_figure(ds, scenario=i)))
            if "pce_total" in ds:
                for groups, stem, what in ((False, "surrogate_indices", "parameter"),
                                           (True, "surrogate_layer_indices", "layer")):
                    out.append(ReportFigure(
                        f"{stem}{sfx}", f"Sobol indices from the surrogate, per {what}{at}",
                        "First-order and total Sobol indices of the inner-surface temperature "
                        "computed from a polynomial-chaos surrogate fitted to the samples, with "
                        "bootstrap intervals. They are only as good as the surrogate: check its "
                        "leave-one-out Q2 (in the title) is close to 1.",
                        fg.surrogate_indices_figure(ds, scenario=i, groups=groups)))
        out.append(ReportFigure(
            f"inner_temperature_distribution{sfx}",
            f"Distribution of the inner-surface temperature{at}",
            "Histogram and empirical cumulative distribution of the inner-surface temperature "
            "over the independent, converged samples, with the limit, P95 and its confidence "
            "interval (shaded) and the exceedance probability.",
            fg.distribution_figure(ds, scenario=i)))
        out.append(ReportFigure(
            f"inner_temperature_scatter{sfx}", f"Response to the most influential inputs{at}",
            "The inner-surface temperature of each independent, converged sample against the "
            "three most influential inputs (by total Sobol index; for lhs/random by the "
            "surrogate's total index, or by |rank correlation| without a surrogate), in the "
            "units they were given in.",
            fg.scatter_figure(ds, scenario=i)))
    if "scenario" in ds.dims:
        out.append(ReportFigure(
            "exposure_sweep", "Inner-surface temperature against the exposure",
            "Median and 5–95 % band of the inner-surface temperature at each swept level, the "
            "upper confidence bound of P95 and the limit. The read-off interpolates linearly "
            "between swept levels; run a finer sweep around it before relying on it.",
            fg.sweep_figure(ds)))
    return out


def _save(figs: list[ReportFigure], folder: Path) -> tuple[list[Path], dict[str, str]]:
    folder.mkdir(parents=True, exist_ok=True)
    paths, embedded = [], {}
    with fg.styled():
        for f in figs:
            png, svg = folder / f"{f.stem}.png", folder / f"{f.stem}.svg"
            f.figure.savefig(png, dpi=150, metadata={"Software": None})
            f.figure.savefig(svg, metadata={"Date": None})
            paths += [png, svg]
            embedded[f.stem] = base64.b64encode(png.read_bytes()).decode("ascii")
    return paths, embedded


# ----------------------------------------------------------------------------------------------
# Tables (display)
# ----------------------------------------------------------------------------------------------


def _study(ds: xr.Dataset):
    """The study re-read from the stored config text, or ``(None, reason)``."""
    text = ds.attrs.get("config_text")
    if not text:
        return None, "the dataset holds no config text"
    try:
        return loads_study(str(text), source=str(ds.attrs.get("config_source", "<results>"))), ""
    except Exception as err:  # a newer or older config schema: report it, never fail the report
        return None, f"{type(err).__name__}: {err}"


def _stack_tables(study, ds: xr.Dataset) -> list[Table]:
    raw = tomllib.loads(study.text)
    by_target = {p.target: p for p in study.parameters}
    unit = study.limit_unit or "K"
    swept = study.scenarios.quantity if study.scenarios is not None else None

    def rows_of(obj, where: tuple, given: Mapping) -> list[list[str]]:
        rows = []
        keys = [f.name for f in fields(obj) if f.name != "name"]
        if "emissivity" in given and "emissivity_hot" in keys:  # a solid's shorthand
            keys = [k for k in keys if k not in ("emissivity_hot", "emissivity_cold")]
            keys.insert(keys.index("contact_resistance") if "contact_resistance" in keys
                        else len(keys), "emissivity")
        for key in keys:
            p = by_target.get((*where, key))
            if p is not None:
                rows.append([key, p.format(p.distribution.nominal), p.describe(),
                             p.truncation()])
                continue
            if key in given:
                shown = given[key] if isinstance(given[key], str) else _cell(given[key])
                note = ""
                if where == ("hot_side",) and key == swept:
                    note = "swept: " + ", ".join(study.scenarios.labels)
                rows.append([key, shown, note or "fixed", ""])
                continue
            value = getattr(obj, key)
            if value is None:
                continue
            if isinstance(value, str):
                rows.append([key, value, "default", ""])
                continue
            spec = QUANTITIES.get(key)
            shown = (format_value(float(value), unit, TEMPERATURE) if spec is TEMPERATURE
                     else format_value(float(value), spec.si_unit, spec) if spec else str(value))
            rows.append([key, shown, "default", ""])
        return rows

    header = ["element", "kind", "quantity", "nominal", "uncertainty", "truncation"]
    layer_rows = []
    widths = dict(zip([str(n) for n in ds["layer"].values],
                      np.asarray(ds["layer_nominal_thickness"].values, dtype=float),
                      strict=True))
    for i, layer in enumerate(study.layers):
        given = raw.get("layer", [{}] * (i + 1))[i]
        kind = given.get("kind", type(layer).__name__.lower())
        first = True
        for r in rows_of(layer, ("layer", i), given):
            layer_rows.append([layer.name if first else "", kind if first else "", *r])
            first = False
        if f"{layer.name} contact" in widths:
            layer_rows.append(["", "", "(contact to the next layer: no width)", "", "", ""])
    sides = []
    for side in ("hot_side", "cold_side"):
        obj = getattr(study, side)
        given = raw.get(side, {})
        rows = [[side.replace("_", " ") if j == 0 else "", obj.kind if j == 0 else "", *r]
                for j, r in enumerate(rows_of(obj, (side,), given))]
        sides.append(rows)
    return [
        Table(header, sides[0], "The exposure (hot side)"),
        Table(header, layer_rows, "The assembly, exposed side first"),
        Table(header, sides[1], "The cold side"),
    ]


def _headline(ds: xr.Dataset) -> tuple[Table, list[str]]:
    rows, verdicts = [], []
    limit = float(ds.attrs["limit"])
    for _, label, one in _scenario_values(ds):
        q = fg.select_quantile(one["inner_surface_temperature_quantile"], 0.95).item()
        lo = fg.select_quantile(one["inner_surface_temperature_quantile_lower"], 0.95).item()
        hi = fg.select_quantile(one["inner_surface_temperature_quantile_upper"], 0.95).item()
        e = [float(one[v].item()) for v in ("exceedance_probability",
                                            "exceedance_probability_lower",
                                            "exceedance_probability_upper")]
        rows.append([_exposure(ds, label), _t(ds, q), f"[{_t(ds, lo)}, {_t(ds, hi)}]",
                     _pct(e[0]), f"[{_pct(e[1])}, {_pct(e[2])}]",
                     str(int(one["samples_used"].item())),
                     str(int(one["nonconverged_count"].item()))])
        where = f"At {_exposure(ds, label)}, " if label else ""
        if not np.isfinite(q):
            verdicts.append(f"{where}P95 is not available (no converged samples).")
        elif not (np.isfinite(lo) and np.isfinite(hi)):
            side = "below" if q < limit else "at or above"
            verdicts.append(f"{where}P95 ({_t(ds, q)}) is {side} the limit ({_t(ds, limit)}), "
                            "but the samples are too few for a confidence interval on P95: "
                            "run more samples before relying on it.")
        elif hi < limit:
            verdicts.append(f"{where}P95 ({_t(ds, q)}) is below the limit ({_t(ds, limit)}), "
                            "with its whole confidence interval.")
        elif lo > limit:
            verdicts.append(f"{where}P95 ({_t(ds, q)}) is above the limit ({_t(ds, limit)}), "
                            "with its whole confidence interval.")
        else:
            verdicts.append(f"{where}{'the' if where else 'The'} limit ({_t(ds, limit)}) "
                            "lies inside the confidence "
                            f"interval of P95 ({_t(ds, q)}): these samples cannot tell whether "
                            "P95 is above or below it; more samples narrow the interval.")
    conf = f"{100 * float(ds.attrs.get('confidence', math.nan)):g} %"
    header = ["exposure", "P95", f"P95 {conf} interval", f"P(T > {_t(ds, limit)})",
              f"{conf} interval", "independent samples used", "evaluations not converged"]
    method = ds["exceedance_probability"].attrs.get("method")
    return Table(header, rows, "Inner-surface temperature: P95 and the probability of "
                 "exceeding the limit" + (f" ({method} interval)" if method else "")), verdicts


def _quantile_tables(ds: xr.Dataset) -> list[Table]:
    out = []
    for _, label, one in _scenario_values(ds):
        rows = []
        for k, p in enumerate(np.asarray(one["quantile"].values, dtype=float)):
            rows.append([f"P{100 * p:g}",
                         _t(ds, one["inner_surface_temperature_quantile"].values[k]),
                         f"[{_t(ds, one['inner_surface_temperature_quantile_lower'].values[k])}, "
                         f"{_t(ds, one['inner_surface_temperature_quantile_upper'].values[k])}]"])
        out.append(Table(["percentile", "inner-surface temperature", "confidence interval"],
                         rows, _exposure(ds, label) if label else ""))
    return out


def _quantile_note(ds: xr.Dataset) -> str:
    conf = 100 * float(ds.attrs.get("confidence", math.nan))
    return (f"Intervals: {conf:g} % confidence intervals from order statistics; n/a where the "
            "samples are too few to bound a tail percentile on that side.")


_KEYS = ("first", "first_ci", "total", "total_ci")


def _ranks(total: np.ndarray) -> np.ndarray:
    order = np.argsort(-np.nan_to_num(np.asarray(total, dtype=float), nan=-np.inf),
                       kind="stable")
    r = np.empty(order.size, dtype=int)
    r[order] = np.arange(1, order.size + 1)
    return r


@dataclass(frozen=True)
class _IndexSet:
    """The Sobol indices of one exposure and output, from the Saltelli estimators or the
    polynomial-chaos surrogate; ``*_converged`` is ``None`` when no flag exists."""

    output: str
    estimator: str
    p: dict
    g: dict
    p_rank: np.ndarray
    g_rank: np.ndarray
    p_converged: np.ndarray | None
    g_converged: np.ndarray | None


def _index_sets(one: xr.Dataset) -> list[_IndexSet]:
    if "sobol_total" in one:
        out = []
        for o in [str(v) for v in one["output"].values]:
            s = one.sel(output=o)
            out.append(_IndexSet(
                o, "saltelli", {k: s[f"sobol_{k}"].values for k in _KEYS},
                {k: s[f"sobol_group_{k}"].values for k in _KEYS}, s["parameter_rank"].values,
                s["group_rank"].values, s["index_converged"].values,
                s["group_index_converged"].values))
        return out
    if "pce_total" in one:
        p = {k: one[f"pce_{k}"].values for k in _KEYS}
        g = {k: one[f"pce_group_{k}"].values for k in _KEYS}
        return [_IndexSet(PRIMARY, "pce_surrogate", p, g, _ranks(p["total"]),
                          _ranks(g["total"]), None, None)]
    return []


def _status(conv: np.ndarray | None, j: int) -> str:
    if conv is None:
        return "surrogate"
    return "converged" if conv[j] else "UNCONVERGED"


def _fit(one: xr.Dataset) -> str:
    q2 = float(one["pce_q2"].item())
    if not np.isfinite(q2):
        return "no surrogate could be fitted"
    return f"polynomial-chaos surrogate, order {int(one['pce_order'].item())}, Q2 = {q2:.3f}"


def _ranking_tables(ds: xr.Dataset) -> list[Table]:
    out = []
    for _, label, one in _scenario_values(ds):
        suffix = f" — {_exposure(ds, label)}" if label else ""
        for ix in _index_sets(one):
            if ix.output != PRIMARY:
                continue
            how = ("" if ix.estimator == "saltelli" else f" from a {_fit(one)}")
            names = [str(n) for n in one["parameter"].values]
            rows = [[str(int(ix.p_rank[j])), names[j],
                     str(one["parameter_group"].values[j]).replace("_", " "),
                     _idx(float(ix.p["total"][j]), float(ix.p["total_ci"][j])),
                     _idx(float(ix.p["first"][j]), float(ix.p["first_ci"][j])),
                     _status(ix.p_converged, j)]
                    for j in np.argsort(ix.p_rank, kind="stable")]
            out.append(Table(["rank", "parameter", "layer", "total index ± CI",
                              "first-order index ± CI", "status"], rows,
                             f"Parameters by total Sobol index{how}{suffix}"))
            groups = [str(g).replace("_", " ") for g in one["group"].values]
            rows = [[str(int(ix.g_rank[j])), groups[j],
                     _idx(float(ix.g["total"][j]), float(ix.g["total_ci"][j])),
                     _idx(float(ix.g["first"][j]), float(ix.g["first_ci"][j])),
                     _status(ix.g_converged, j)]
                    for j in np.argsort(ix.g_rank, kind="stable")]
            out.append(Table(["rank", "layer", "total index ± CI", "first-order index ± CI",
                              "status"], rows,
                             f"Layers by grouped total Sobol index{how}{suffix}"))
        if "sobol_total" not in one:
            rho = np.asarray(one["rank_correlation"].values, dtype=float)
            order = np.argsort(-np.nan_to_num(np.abs(rho), nan=-1.0), kind="stable")
            names = [str(n) for n in one["parameter"].values]
            out.append(Table(
                ["rank", "parameter", "layer", "Spearman ρ"],
                [[str(r), names[j], str(one["parameter_group"].values[j]).replace("_", " "),
                  "n/a" if not np.isfinite(rho[j]) else f"{rho[j]:+.3f}"]
                 for r, j in enumerate(order, start=1)],
                f"Screening only: parameters by |rank correlation|{suffix}"))
    return out


def _convergence(ds: xr.Dataset) -> tuple[list[str], Table | None]:
    if "sobol_total" not in ds:
        if "pce_total" not in ds:
            return [f"No Sobol indices were computed (method = {ds.attrs.get('method')}), so "
                    "there is no index convergence to report."], None
        rows = [[_exposure(ds, label) if label else "—", str(int(one["pce_order"].item())),
                 _cell(float(one["pce_q2"].item()))] for _, label, one in _scenario_values(ds)]
        return [f"The indices of this {ds.attrs.get('method')} study come from a "
                "polynomial-chaos surrogate fitted to the samples, with bootstrap intervals. "
                "They are only as good as the fit: the leave-one-out Q2 below should be close "
                "to 1. A Sobol design (method = \"sobol\") estimates them without a "
                "surrogate."], Table(["exposure", "surrogate order", "leave-one-out Q2"], rows)
    thr = ds["index_converged"].attrs.get("threshold")
    rows = []
    for _, label, one in _scenario_values(ds):
        for ix in _index_sets(one):
            s = one.sel(output=ix.output)
            bad_p = [str(n) for n, c in zip(one["parameter"].values, ix.p_converged,
                                            strict=True) if not c]
            bad_g = [str(n).replace("_", " ") for n, c in
                     zip(one["group"].values, ix.g_converged, strict=True) if not c]
            need = int(s["suggested_base_samples"].item())
            rows.append([_exposure(ds, label) if label else "—", ix.output.replace("_", " "),
                         ", ".join(bad_p) or "none", ", ".join(bad_g) or "none",
                         str(need) if need else "— (converged)",
                         str(int(s["sobol_rows_dropped"].item()))])
    text = [f"An index counts as converged when both its confidence half-widths are below "
            f"{thr:g}. Unconverged indices are hatched in the figures; their ranking is not "
            f"settled. The study used {ds.attrs.get('base_samples')} base samples; the "
            "suggested count would narrow every interval below the threshold (set samples in "
            "[study], or rerun with --samples)." if thr is not None else
            "Convergence threshold not stored in the dataset."]
    return text, Table(["exposure", "output", "unconverged parameters", "unconverged layers",
                        "suggested base samples", "base rows dropped"], rows)


def _nonconverged(ds: xr.Dataset) -> Table:
    rows = []
    layers = [str(n) for n in ds["layer"].values]
    gaps = [j for j, k in enumerate(ds["layer_kind"].values) if str(k) == "gap"]
    conv_on = bool(int(ds.attrs.get("convection", 0)))
    for _, label, one in _scenario_values(ds):
        n = one.sizes["sample"]
        onset = np.asarray(one["convection_onset"].values, dtype=bool)
        past = "; ".join(f"{layers[j]}: {int(onset[:, j].sum())}" for j in gaps) or "no gaps"
        rows.append([_exposure(ds, label) if label else "—", str(n),
                     str(int(one["nonconverged_count"].item())),
                     str(int(np.asarray(one["air_range_exceeded"].values, dtype=bool).sum())),
                     past + ("" if conv_on or not gaps else
                             " (convection is off: these gaps break the still-air assumption)"
                             if onset[:, gaps].any() else "")])
    return Table(["exposure", "evaluations", "not converged (excluded)",
                  "gap air outside 250–1500 K", "samples past convection onset, per gap"], rows)


def _tolerance_table(table) -> tuple[list[str], list[dict]]:
    if hasattr(table, "to_dict") and hasattr(table, "columns"):
        if getattr(table.index, "name", None) is not None:
            table = table.reset_index()
        records = table.to_dict(orient="records")
        return [str(c) for c in table.columns], [{str(k): v for k, v in r.items()}
                                                  for r in records]
    if isinstance(table, Sequence) and not isinstance(table, str | bytes):
        records = list(table)
        for i, r in enumerate(records):
            if not isinstance(r, Mapping):
                raise ValueError(f"tolerance_table[{i}] must be a mapping (one record), got "
                                 f"{type(r).__name__}")
        columns = list(dict.fromkeys(str(k) for r in records for k in r))
        return columns, [{str(k): v for k, v in r.items()} for r in records]
    raise ValueError(f"tolerance_table must be a pandas DataFrame, a list of dicts or None, got "
                     f"{type(table).__name__}")


def _provenance(ds: xr.Dataset) -> Table:
    a = ds.attrs
    rows = [["config file", str(a.get("config_source", ""))],
            ["method", str(a.get("method", ""))], ["seed", str(a.get("seed", ""))],
            ["base samples", str(a.get("base_samples", ""))],
            ["model evaluations", f"{a.get('evaluations', '')}"
             + (f" per exposure × {ds.sizes['scenario']} exposures"
                if "scenario" in ds.dims else "")],
            ["uncertain parameters", str(a.get("parameters", ""))],
            ["confidence level", f"{100 * float(a.get('confidence', math.nan)):g} %"],
            ["gap radiation", str(a.get("radiation", ""))],
            ["gap convection", "on" if int(a.get("convection", 0)) else "off"]]
    rows += [[f"{k.removeprefix('version_')} version", str(v)] for k, v in a.items()
             if k.startswith("version_")]
    return Table(["item", "value"], rows)


NO_SOBOL = ("Without a Sobol design (method = \"sobol\") the Sobol indices, where shown, come "
            "from a polynomial-chaos surrogate fitted to the samples: trust them only when its "
            "leave-one-out Q2 is close to 1. The rank correlation is a screening measure of "
            "monotone influence only and misses interactions.")
"""Said wherever a ranking is shown for an lhs/random study."""

ASSUMPTIONS = (
    "Steady state: the temperatures are those reached after a long, constant exposure; no "
    "transient heating, no heat stored in the layers.",
    "One-dimensional heat flow through the thickness; no edge or seam effects.",
    "Dry fabrics: no moisture, sweat or evaporation.",
    "No compression of the layers or gaps beyond the widths given; no degradation, charring "
    "or melting.",
    "Grey, diffuse surfaces for radiation across gaps.",
    "Air gaps conduct through still air unless gap convection is enabled; air properties are "
    "those of dry air at 1 atm, valid for gap temperatures of 250–1500 K.",
    "The uncertain inputs are sampled independently of each other from the distributions "
    "given; the results are only as good as those distributions.",
    "Percentiles and the exceedance probability come from the independent samples (for a "
    "Sobol design its A and B blocks, which are quasi-random: the confidence intervals, "
    "derived for independent draws, are then approximate).",
)
"""The model's assumptions and limits, listed in every report."""


# ----------------------------------------------------------------------------------------------
# CSV tables
# ----------------------------------------------------------------------------------------------


def _write_csv(path: Path, header: list[str], rows: list[list[Any]]) -> Path:
    with path.open("w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(header)
        w.writerows([[_csv(v) for v in r] for r in rows])
    return path


def _csv_tables(ds: xr.Dataset, out: Path) -> list[Path]:
    unit = fg.temperature_unit(ds)
    quant, ind, grp, rank = [], [], [], []

    def shown(v) -> float:
        return float(fg.to_display_temperature(ds, v))

    for _, label, one in _scenario_values(ds):
        probs = np.asarray(one["quantile"].values, dtype=float)
        for k, p in enumerate(probs):
            quant.append([label, PRIMARY, "", p,
                          *(shown(one[f"inner_surface_temperature_quantile{s}"].values[k])
                            for s in ("", "_lower", "_upper")), unit])
        for f, face in enumerate(str(v) for v in one["interface"].values):
            for k, p in enumerate(probs):
                quant.append([label, "interface_temperature", face, p,
                              *(shown(one[f"interface_temperature_quantile{s}"].values[f, k])
                                for s in ("", "_lower", "_upper")), unit])
        names = [str(n) for n in one["parameter"].values]
        groups = [str(g) for g in one["group"].values]
        rho = np.asarray(one["rank_correlation"].values, dtype=float)
        sets = _index_sets(one)
        for ix in sets:
            pc, gc = ix.p_converged, ix.g_converged
            for j, name in enumerate(names):
                ind.append([label, ix.output, name, str(one["parameter_group"].values[j]),
                            str(one["parameter_unit"].values[j]),
                            *(float(ix.p[k][j]) for k in _KEYS), int(ix.p_rank[j]),
                            None if pc is None else bool(pc[j]),
                            rho[j] if ix.output == PRIMARY else None, ix.estimator])
                rank.append([label, ix.output, "parameter", int(ix.p_rank[j]), name,
                             f"total_sobol_index_{ix.estimator}", float(ix.p["total"][j]),
                             float(ix.p["total_ci"][j]), None if pc is None else bool(pc[j])])
            for j, g in enumerate(groups):
                grp.append([label, ix.output, g, *(float(ix.g[k][j]) for k in _KEYS),
                            int(ix.g_rank[j]), None if gc is None else bool(gc[j]),
                            ix.estimator])
                rank.append([label, ix.output, "layer", int(ix.g_rank[j]), g,
                             f"total_sobol_index_{ix.estimator}", float(ix.g["total"][j]),
                             float(ix.g["total_ci"][j]), None if gc is None else bool(gc[j])])
        if not sets:
            for j, name in enumerate(names):
                ind.append([label, PRIMARY, name, str(one["parameter_group"].values[j]),
                            str(one["parameter_unit"].values[j]), *([None] * 6), rho[j], ""])
        if "sobol_total" not in one:
            for r, j in enumerate(np.argsort(-np.nan_to_num(np.abs(rho), nan=-1.0),
                                             kind="stable"), start=1):
                rank.append([label, PRIMARY, "parameter", r, names[j],
                             "spearman_rank_correlation", rho[j], None, None])
    first_seen: dict[tuple, int] = {}
    for r in rank:
        first_seen.setdefault((r[0], r[1], r[2], r[5]), len(first_seen))
    rank.sort(key=lambda r: (first_seen[(r[0], r[1], r[2], r[5])], r[3]))
    return [
        _write_csv(out / "quantiles.csv", ["scenario", "quantity", "interface", "probability",
                                           "estimate", "lower", "upper", "unit"], quant),
        _write_csv(out / "indices.csv", ["scenario", "output", "parameter", "group", "unit",
                                         "first", "first_ci", "total", "total_ci", "rank",
                                         "converged", "rank_correlation", "estimator"], ind),
        _write_csv(out / "group_indices.csv", ["scenario", "output", "group", "first",
                                               "first_ci", "total", "total_ci", "rank",
                                               "converged", "estimator"], grp),
        _write_csv(out / "ranking.csv", ["scenario", "output", "kind", "rank", "name", "measure",
                                         "value", "ci", "converged"], rank),
    ]


# ----------------------------------------------------------------------------------------------
# Rendering
# ----------------------------------------------------------------------------------------------

_CSS = """
body{font-family:system-ui,-apple-system,"Segoe UI",Roboto,Helvetica,Arial,sans-serif;
 color:#222;max-width:62rem;margin:2rem auto;padding:0 1rem;line-height:1.45}
h1{font-size:1.6rem;margin-bottom:.2rem}h2{border-bottom:2px solid #1f4e79;padding-bottom:.2rem;
 margin-top:2.2rem}h3{margin-top:1.6rem}
table{border-collapse:collapse;margin:.6rem 0 1.2rem;font-size:.9rem}
caption{text-align:left;font-weight:600;padding:.3rem 0}
th,td{border:1px solid #c8c8c8;padding:.25rem .5rem;text-align:left;vertical-align:top}
th{background:#eef2f7}
.cautions{border:3px solid #b35900;background:#fff6ea;padding:.6rem 1.2rem;margin:1rem 0}
.cautions h2{border:none;margin-top:.4rem;color:#7a3d00}
.headline{font-size:1.05rem}
figure{margin:1.2rem 0}figure img{max-width:100%;height:auto;border:1px solid #ddd}
figcaption{font-size:.9rem;color:#444}
pre{background:#f6f6f6;padding:.8rem;overflow-x:auto;font-size:.8rem}
.sub{color:#555}
"""


def _esc(text: Any) -> str:
    return html.escape(str(text), quote=True)


def _html_table(t: Table) -> str:
    out = ["<table>"]
    if t.caption:
        out.append(f"<caption>{_esc(t.caption)}</caption>")
    out.append("<thead><tr>" + "".join(f"<th>{_esc(h)}</th>" for h in t.header) + "</tr></thead>")
    out.append("<tbody>")
    for r in t.rows:
        out.append("<tr>" + "".join(f"<td>{_esc(c)}</td>" for c in r) + "</tr>")
    out.append("</tbody></table>")
    return "\n".join(out)


def _md_table(t: Table) -> str:
    def cell(c: str) -> str:
        return str(c).replace("|", "\\|").replace("\n", " ")

    out = [f"**{cell(t.caption)}**", ""] if t.caption else []
    out.append("| " + " | ".join(cell(h) for h in t.header) + " |")
    out.append("|" + "---|" * len(t.header))
    out += ["| " + " | ".join(cell(c) for c in r) + " |" for r in t.rows]
    return "\n".join(out)


def _cautions_html() -> str:
    items = "".join(f"<li>{_esc(c)}</li>" for c in CAUTIONS)
    return f'<div class="cautions"><h2>Cautions</h2><ul>{items}</ul></div>'


def _cautions_md() -> str:
    return "## Cautions\n\n" + "\n".join(f"- **{c}**" for c in CAUTIONS)


def write_report(
    ds: xr.Dataset,
    out_dir: str | Path,
    *,
    tolerance_table: Any = None,
) -> ReportFiles:
    """Write the report of a results dataset: HTML, Markdown summary, figures and CSV tables.

    Parameters
    ----------
    ds
        A results dataset (:func:`uq.storage.to_dataset` or :func:`uq.storage.read_results`)
        [-].
    out_dir
        Folder to write into (created if missing) [-].
    tolerance_table
        Tolerance recommendations to include: a pandas DataFrame or a list of dicts (one per
        row; columns are rendered as they come), or ``None`` [-].

    Returns
    -------
    ReportFiles
        The paths written.

    Raises
    ------
    ValueError
        When ``ds`` is not a results dataset, or ``tolerance_table`` has a wrong type.
    """
    missing = [v for v in _REQUIRED if v not in ds.variables]
    if missing or "limit" not in ds.attrs:
        raise ValueError("not a plyrisk results dataset: missing "
                         + ", ".join(missing + ([] if "limit" in ds.attrs else ["attrs.limit"])))
    tol = _tolerance_table(tolerance_table) if tolerance_table is not None else None
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    figs = report_figures(ds)
    fig_paths, embedded = _save(figs, out / "figures")
    tables = _csv_tables(ds, out)
    if tol is not None:
        columns, records = tol
        tables.append(_write_csv(out / "tolerances.csv", columns,
                                 [[r.get(c) for c in columns] for r in records]))
    study, why = _study(ds)
    headline, verdicts = _headline(ds)
    crossing = fg.limit_crossing(ds) if "scenario" in ds.dims else None
    conv_text, conv_table = _convergence(ds)
    ranking = _ranking_tables(ds)
    title = str(ds.attrs.get("title", "plyrisk study"))
    notes = [n for n in str(ds.attrs.get("notes", "")).split("\n") if n.strip()]

    # --- HTML -----------------------------------------------------------------------------
    h: list[str] = ["<!DOCTYPE html>", '<html lang="en">', "<head>", '<meta charset="utf-8">',
                    f"<title>{_esc(title)} — plyrisk report</title>", f"<style>{_CSS}</style>",
                    "</head>", "<body>", f"<h1>{_esc(title)}</h1>",
                    '<p class="sub">plyrisk study report · config '
                    f"{_esc(ds.attrs.get('config_source', ''))}"
                    f" · method {_esc(ds.attrs.get('method', ''))} · seed "
                    f"{_esc(ds.attrs.get('seed', ''))}</p>", _cautions_html(),
                    "<h2>Headline</h2>", _html_table(headline)]
    h += [f'<p class="headline">{_esc(v)}</p>' for v in verdicts]
    if crossing is not None:
        h.append(f'<p class="headline"><strong>{_esc(crossing.text)}</strong> (linear '
                 "interpolation between swept levels)</p>")
    h.append("<h2>What was studied</h2>")
    if study is not None:
        h += [_html_table(t) for t in _stack_tables(study, ds)]
    else:
        h.append(f"<p>The stored config could not be re-read by this version of plyrisk "
                 f"({_esc(why)}); the stack table is left out. The config text is under "
                 "Provenance.</p>")
    h.append(f"<p>Limit of the inner-surface temperature: {_esc(_t(ds, ds.attrs['limit']))}."
             "</p>")
    h.append("<h2>Percentiles of the inner-surface temperature</h2>")
    h += [_html_table(t) for t in _quantile_tables(ds)]
    h.append(f"<p>{_esc(_quantile_note(ds))}</p>")
    h.append("<h2>Ranking: which inputs and layers matter</h2>")
    if "sobol_total" not in ds:
        h.append(f"<p>{_esc(NO_SOBOL)}</p>")
    h += [_html_table(t) for t in ranking]
    h.append("<h2>Figures</h2>")
    for f in figs:
        h.append(f"<figure><h3>{_esc(f.title)}</h3>"
                 f'<img src="data:image/png;base64,{embedded[f.stem]}" alt="{_esc(f.title)}">'
                 f"<figcaption>{_esc(f.caption)}</figcaption></figure>")
    if tol is not None:
        columns, records = tol
        h.append("<h2>Tolerance recommendations</h2>")
        h.append(_html_table(Table(columns, [[_cell(r.get(c)) for c in columns]
                                             for r in records])) if records else
                 "<p>The tolerance table has no rows.</p>")
    h.append("<h2>Convergence of the indices</h2>")
    h += [f"<p>{_esc(t)}</p>" for t in conv_text]
    if conv_table is not None:
        h.append(_html_table(conv_table))
    h += ["<h2>Samples that did not converge</h2>",
          "<p>Samples whose solve did not converge to a physically valid solution are excluded "
          "from every statistic and counted here; nothing is clipped.</p>",
          _html_table(_nonconverged(ds))]
    h.append("<h2>Assumptions and limits of the model</h2><ul>"
             + "".join(f"<li>{_esc(a)}</li>" for a in ASSUMPTIONS)
             + "".join(f"<li>{_esc(n)}</li>" for n in notes) + "</ul>")
    h.append(_cautions_html())
    h += ["<h2>Provenance</h2>", _html_table(_provenance(ds)),
          "<h3>Config text</h3>", f"<pre>{_esc(ds.attrs.get('config_text', ''))}</pre>",
          "</body>", "</html>"]
    html_path = out / "report.html"
    html_path.write_text("\n".join(h) + "\n", encoding="utf-8")

    # --- Markdown summary ------------------------------------------------------------------
    m = [f"# {title}", "", "plyrisk study summary; the full report is `report.html`.", "",
         _cautions_md(), "", "## Headline", "", _md_table(headline), ""]
    m += [f"- {v}" for v in verdicts]
    if crossing is not None:
        m += ["", f"**{crossing.text}** (linear interpolation between swept levels)"]
    m += ["", "## Ranking", ""] + ([NO_SOBOL, ""] if "sobol_total" not in ds else [])
    for t in ranking:
        m += [_md_table(Table(t.header, t.rows[:TOP_COUNT], t.caption
                              + (f" (top {TOP_COUNT})" if len(t.rows) > TOP_COUNT else ""))), ""]
    m += ["## Convergence", "", *conv_text, ""]
    if conv_table is not None:
        m += [_md_table(conv_table), ""]
    m += ["## Samples that did not converge", "", _md_table(_nonconverged(ds)), ""]
    if notes:
        m += ["## Notes", "", *[f"- {n}" for n in notes], ""]
    m += ["## Files", "", *[f"- `{p.relative_to(out).as_posix()}`" for p in fig_paths + tables],
          "", "## Provenance", "", _md_table(_provenance(ds)), "", _cautions_md(), ""]
    md_path = out / "summary.md"
    md_path.write_text("\n".join(m), encoding="utf-8")
    return ReportFiles(html_path, md_path, fig_paths, tables)
