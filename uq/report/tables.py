"""The display tables of the report: stack, headline, percentiles, ranking, convergence, provenance.

Each builder reads a results dataset (:func:`plyrisk.results.dataset.to_dataset`) and returns
:class:`Table` objects of display text (temperatures in the limit's unit, indices with their
confidence intervals) that :mod:`plyrisk.report.html` renders to HTML and Markdown alike. The Sobol
indices of one exposure — from the Saltelli estimators or the polynomial-chaos surrogate — are
gathered by :func:`index_sets`, which :mod:`plyrisk.report.csv_tables` shares.
"""

from __future__ import annotations

import math
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass, fields
from typing import TYPE_CHECKING, Any

import numpy as np
import xarray as xr

from plyrisk.analysis.sobol import not_resolved
from plyrisk.report.figures import outputs as fg
from plyrisk.report.figures.common import PRIMARY, format_limit_value, limit_quantile_variables
from plyrisk.results.dataset import is_swept, scenario_slices, subset_warnings
from plyrisk.study.units import QUANTITIES, TEMPERATURE, format_value
from plyrisk.text.indices import layer_label

if TYPE_CHECKING:  # pragma: no cover - for type checkers only
    from plyrisk.study.definition import Study

__all__ = ["INDEX_KEYS", "IndexSet", "Table", "cell_text", "convergence_summary",
           "exposure_text", "headline_table", "index_sets", "nonconverged_table",
           "provenance_table", "quantile_note", "quantile_tables", "ranking_tables",
           "requested_quantiles", "scenario_values", "stack_tables"]


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


def cell_text(v: Any) -> str:
    """A value as table text: yes/no, 4 significant digits, "" for NaN or None."""
    if isinstance(v, bool | np.bool_):
        return "yes" if v else "no"
    if isinstance(v, float | np.floating):
        return "" if math.isnan(v) else f"{float(v):.4g}"
    return "" if v is None else str(v)


def scenario_values(ds: xr.Dataset) -> list[tuple[int | None, str, xr.Dataset]]:
    """``(index, label, dataset)`` of each exposure; index ``None`` when unswept."""
    out = []
    ds = fg.surrogate_view(ds)
    swept = is_swept(ds)
    for i, (label, one) in enumerate(scenario_slices(ds)):
        out.append((i if swept else None, label, one))
    return out


def exposure_text(ds: xr.Dataset, label: str) -> str:
    """An exposure label as text, e.g. ``"incident flux = 10 kW/m²"``; ``"as configured"``
    for an unswept dataset (``label == ""``)."""
    if not label:
        return "as configured"
    quantity = str(ds.attrs.get("scenario_quantity", "exposure")).replace("_", " ")
    return f"{quantity} = {fg.pretty_unit(label)}"


# ----------------------------------------------------------------------------------------------
# Tables
# ----------------------------------------------------------------------------------------------


def stack_tables(study: Study, ds: xr.Dataset) -> list[Table]:
    """The hot side, the assembly and the cold side: each quantity's nominal value and
    uncertainty in the user's units, from the re-read ``study``."""
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
                shown = given[key] if isinstance(given[key], str) else cell_text(given[key])
                note = ""
                if where == ("hot_side",) and key == swept and study.scenarios is not None:
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


def headline_table(ds: xr.Dataset) -> tuple[Table, list[str]]:
    """P95 and the exceedance probability per exposure, and one verdict sentence each."""
    rows, verdicts = [], []
    limit = float(ds.attrs["limit"])
    lim_out = str(ds.attrs.get("limit_output", "inner_surface_temperature"))
    words = str(ds.attrs.get("limit_output_long_name", "inner-surface temperature"))
    def _t(_ds: xr.Dataset, v: float) -> str:
        return format_limit_value(ds, v)

    for _, label, one in scenario_values(ds):
        qv = limit_quantile_variables(one)
        q, lo, hi = (fg.select_quantile(v, 0.95).item() for v in qv)
        e = [float(one[v].item()) for v in ("exceedance_probability",
                                            "exceedance_probability_lower",
                                            "exceedance_probability_upper")]
        rows.append([exposure_text(ds, label), _t(ds, q), f"[{_t(ds, lo)}, {_t(ds, hi)}]",
                     _pct(e[0]), f"[{_pct(e[1])}, {_pct(e[2])}]",
                     str(int(one["samples_used"].item())),
                     str(int(one["nonconverged_count"].item()))])
        where = f"At {exposure_text(ds, label)}, " if label else ""
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
    verdicts += subset_warnings(ds)
    conf = f"{100 * float(ds.attrs.get('confidence', math.nan)):g} %"
    symbol = "T" if lim_out != "heat_flux" else "q"
    header = ["exposure", "P95", f"P95 {conf} interval", f"P({symbol} > {_t(ds, limit)})",
              f"{conf} interval", "independent samples used", "evaluations not converged"]
    method = ds["exceedance_probability"].attrs.get("method")
    return Table(header, rows, f"{words[:1].upper()}{words[1:]} (the output the limit "
                 "applies to): P95 and the probability of exceeding the limit"
                 + (f" ({method} interval)" if method else "")), verdicts


def requested_quantiles(ds: xr.Dataset) -> list[tuple[int, float]]:
    """``(position, level)`` on the ``quantile`` axis of the study's own percentiles
    (``[study] percentiles``, ``attrs["percentiles"]``), the ones the tables show; the axis
    also holds the levels of the figure bands (1 and 99 %), which only the CSV tables list.
    Every level for a dataset that names none.

    Examples
    --------
    >>> ds = xr.Dataset(coords={"quantile": [0.01, 0.05, 0.5, 0.95, 0.99]},
    ...                 attrs={"percentiles": [0.05, 0.5, 0.95]})
    >>> [f"P{100 * p:g}" for _, p in requested_quantiles(ds)]
    ['P5', 'P50', 'P95']
    """
    levels = np.asarray(ds["quantile"].values, dtype=float)
    wanted = np.atleast_1d(np.asarray(ds.attrs.get("percentiles", []), dtype=float))
    return [(k, float(p)) for k, p in enumerate(levels)
            if wanted.size == 0 or np.any(np.isclose(wanted, p, rtol=0.0, atol=1e-9))]


def quantile_tables(ds: xr.Dataset) -> list[Table]:
    """The study's percentiles of the inner-surface temperature, one table per exposure."""
    out = []
    for _, label, one in scenario_values(ds):
        rows = []
        for k, p in requested_quantiles(one):
            rows.append([f"P{100 * p:g}",
                         _t(ds, one["inner_surface_temperature_quantile"].values[k]),
                         f"[{_t(ds, one['inner_surface_temperature_quantile_lower'].values[k])}, "
                         f"{_t(ds, one['inner_surface_temperature_quantile_upper'].values[k])}]"])
        out.append(Table(["percentile", "inner-surface temperature", "confidence interval"],
                         rows, exposure_text(ds, label) if label else ""))
    return out


def quantile_note(ds: xr.Dataset) -> str:
    """The sentence saying how the percentile intervals were obtained."""
    conf = 100 * float(ds.attrs.get("confidence", math.nan))
    how = "order statistics"
    bound = ds.variables.get("inner_surface_temperature_quantile_lower")
    if bound is not None and bound.attrs.get("interval"):
        how = str(bound.attrs["interval"])
    text = (f"Intervals: {conf:g} % confidence intervals of the percentiles from {how}; n/a "
            "where the samples are too few to bound a tail percentile on that side.")
    ci = ds.variables.get("sobol_total_ci")
    if ci is not None and ci.attrs.get("interval"):
        text += f" Sobol index intervals: {ci.attrs['interval']}."
    return text


INDEX_KEYS = ("first", "first_ci", "total", "total_ci")


def _ranks(total: np.ndarray) -> np.ndarray:
    order = np.argsort(-np.nan_to_num(np.asarray(total, dtype=float), nan=-np.inf),
                       kind="stable")
    r = np.empty(order.size, dtype=int)
    r[order] = np.arange(1, order.size + 1)
    return r


@dataclass(frozen=True)
class IndexSet:
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


def index_sets(one: xr.Dataset) -> list[IndexSet]:
    """The Sobol index sets of one exposure: one per output (Saltelli), the surrogate's for
    the inner-surface temperature, or none."""
    if "sobol_total" in one:
        out = []
        for o in [str(v) for v in one["output"].values]:
            s = one.sel(output=o)
            out.append(IndexSet(
                o, "saltelli", {k: s[f"sobol_{k}"].values for k in INDEX_KEYS},
                {k: s[f"sobol_group_{k}"].values for k in INDEX_KEYS}, s["parameter_rank"].values,
                s["group_rank"].values, s["index_converged"].values,
                s["group_index_converged"].values))
        return out
    if "pce_total" in one:
        p = {k: one[f"pce_{k}"].values for k in INDEX_KEYS}
        g = {k: one[f"pce_group_{k}"].values for k in INDEX_KEYS}
        conv = None
        if "pce_total_converged" in one:  # results before 0.2 carry no flags
            conv = (np.asarray(one["pce_total_converged"].values, dtype=bool)
                    & np.asarray(one["pce_first_converged"].values, dtype=bool),
                    np.asarray(one["pce_group_total_converged"].values, dtype=bool)
                    & np.asarray(one["pce_group_first_converged"].values, dtype=bool))
        return [IndexSet(PRIMARY, "pce_surrogate", p, g, _ranks(p["total"]),
                         _ranks(g["total"]), *(conv or (None, None)))]
    return []


def _status(conv: np.ndarray | None, j: int, values: dict | None = None) -> str:
    if values is not None and any(
            not_resolved(float(values[k][j]), float(values[f"{k}_ci"][j]))
            for k in ("total", "first")):
        return "NOT RESOLVED: more samples (estimate outside [0, 1] beyond its interval)"
    if conv is None:
        return "surrogate"
    return "converged" if conv[j] else "UNCONVERGED"


def _fit(one: xr.Dataset) -> str:
    q2 = float(one["pce_q2"].item())
    if not np.isfinite(q2):
        return "no surrogate could be fitted"
    return f"polynomial-chaos surrogate, order {int(one['pce_order'].item())}, Q2 = {q2:.3f}"


def ranking_tables(ds: xr.Dataset) -> list[Table]:
    """Parameters and layers ranked by total Sobol index, or by |rank correlation| for a
    screening study, per exposure."""
    out = []
    for _, label, one in scenario_values(ds):
        suffix = f" — {exposure_text(ds, label)}" if label else ""
        for ix in index_sets(one):
            if ix.output != PRIMARY:
                continue
            how = ("" if ix.estimator == "saltelli" else f" from a {_fit(one)}")
            names = [str(n) for n in one["parameter"].values]
            rows = [[str(int(ix.p_rank[j])), names[j],
                     str(one["parameter_group"].values[j]).replace("_", " "),
                     _idx(float(ix.p["total"][j]), float(ix.p["total_ci"][j])),
                     _idx(float(ix.p["first"][j]), float(ix.p["first_ci"][j])),
                     _status(ix.p_converged, j, ix.p)]
                    for j in np.argsort(ix.p_rank, kind="stable")]
            out.append(Table(["rank", "parameter", "layer", "total index ± CI",
                              "first-order index ± CI", "status"], rows,
                             f"Parameters by total Sobol index{how}{suffix}"))
            groups = [layer_label(str(g), spaced=True) for g in one["group"].values]
            rows = [[str(int(ix.g_rank[j])), groups[j],
                     _idx(float(ix.g["total"][j]), float(ix.g["total_ci"][j])),
                     _idx(float(ix.g["first"][j]), float(ix.g["first_ci"][j])),
                     _status(ix.g_converged, j, ix.g)]
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


def convergence_summary(ds: xr.Dataset) -> tuple[list[str], Table | None]:
    """Paragraphs on the convergence of the indices and their table (``None`` if none)."""
    if "sobol_total" not in ds:
        if "pce_total" not in ds:
            return [f"No Sobol indices were computed (method = {ds.attrs.get('method')}), so "
                    "there is no index convergence to report."], None
        rows = [[exposure_text(ds, label) if label else "—", str(int(one["pce_order"].item())),
                 cell_text(float(one["pce_q2"].item()))] for _, label, one in scenario_values(ds)]
        return [f"The indices of this {ds.attrs.get('method')} study come from a "
                "polynomial-chaos surrogate fitted to the samples, with bootstrap intervals. "
                "They are only as good as the fit: the leave-one-out Q2 below should be close "
                "to 1. A Saltelli design (method = \"saltelli\") estimates them without a "
                "surrogate."], Table(["exposure", "surrogate order", "leave-one-out Q2"], rows)
    thr = ds["index_converged"].attrs.get("threshold")
    rows = []
    for _, label, one in scenario_values(ds):
        for ix in index_sets(one):
            assert ix.p_converged is not None and ix.g_converged is not None  # Sobol indices
            s = one.sel(output=ix.output)
            bad_p = [str(n) for n, c in zip(one["parameter"].values, ix.p_converged,
                                            strict=True) if not c]
            bad_g = [str(n).replace("_", " ") for n, c in
                     zip(one["group"].values, ix.g_converged, strict=True) if not c]
            need = int(s["suggested_base_samples"].item())
            rows.append([exposure_text(ds, label) if label else "—", ix.output.replace("_", " "),
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


def screening_table(ds: xr.Dataset) -> Table | None:
    """The decisions of a ``[screening]`` pre-study: per screened input, kept or fixed at its
    nominal, and why; ``None`` without a screening."""
    if "screening_fixed" not in ds:
        return None
    fixed = np.asarray(ds["screening_fixed"].values, dtype=bool)
    reasons = [str(r) for r in np.asarray(ds["screening_reason"].values)]
    names = [str(n) for n in ds["screened_parameter"].values]
    rows = [[n, "fixed at its nominal" if f else "kept", r]
            for n, f, r in zip(names, fixed, reasons, strict=True)]
    runs = ds.attrs.get("screening_runs", "?")
    return Table(["input", "decision", "why"], rows,
                 f"Screening before the study (Morris, {runs} model runs; threshold "
                 f"{ds.attrs.get('screening_threshold', '?')})")


def nonconverged_table(ds: xr.Dataset) -> Table:
    """Per exposure: evaluations, those not converged, gap-air range and convection onset
    counts."""
    rows = []
    layers = [str(n) for n in ds["layer"].values]
    gaps = [j for j, k in enumerate(ds["layer_kind"].values) if str(k) == "gap"]
    conv_on = bool(int(ds.attrs.get("convection", 0)))
    for _, label, one in scenario_values(ds):
        n = int(ds.attrs.get("evaluations", one.sizes["sample"]))
        onset = np.asarray(one["convection_onset"].values, dtype=bool)
        past = "; ".join(f"{layers[j]}: {int(onset[:, j].sum())}" for j in gaps) or "no gaps"
        rows.append([exposure_text(ds, label) if label else "—", str(n),
                     str(int(one["nonconverged_count"].item())),
                     str(int(np.asarray(one["air_range_exceeded"].values, dtype=bool).sum())),
                     past + ("" if conv_on or not gaps else
                             " (convection is off: these gaps break the still-air assumption)"
                             if onset[:, gaps].any() else "")])
    kept = ds.attrs.get("sample_rows_in_file")
    part = f" (of the first {kept} samples, kept in results.nc)" if kept else ""
    return Table(["exposure", "evaluations", "not converged (excluded)",
                  f"gap air outside 250–1500 K{part}",
                  f"samples past convection onset, per gap{part}"], rows)


def provenance_table(ds: xr.Dataset) -> Table:
    """Config, method, seed, sample counts, model options and versions."""
    a = ds.attrs
    rows = [["config file", str(a.get("config_source", ""))],
            ["method", str(a.get("method", ""))], ["seed", str(a.get("seed", ""))],
            ["base samples", str(a.get("base_samples", ""))],
            ["model evaluations", f"{a.get('evaluations', '')}"
             + (f" per exposure × {ds.sizes['scenario']} exposures"
                if is_swept(ds) else "")],
            ["uncertain parameters", str(a.get("parameters", ""))],
            ["confidence level", f"{100 * float(a.get('confidence', math.nan)):g} %"],
            ["gap radiation", str(a.get("radiation", ""))],
            ["gap convection", "on" if int(a.get("convection", 0)) else "off"]]
    rows += [[f"{k.removeprefix('version_')} version", str(v)] for k, v in a.items()
             if k.startswith("version_")]
    return Table(["item", "value"], rows)


# ----------------------------------------------------------------------------------------------
# Tolerance recommendations
# ----------------------------------------------------------------------------------------------

MANUFACTURING_COLUMNS = ("parameter", "layer", "current_spec", "variance_share", "share_source",
                         "quantile_label", "quantile_if_halved", "temperature_unit",
                         "recommended_spec", "recommended_factor", "target")
"""The columns of :class:`plyrisk.tolerances.output.ManufacturingRow` (``tolerances.csv``)."""


def _number(v: Any) -> float:
    try:
        return float(v)
    except (TypeError, ValueError):
        return math.nan


def _flag(v: Any) -> bool:
    """A flag of ``tolerances.csv``: ``True`` or the text ``true``."""
    return v is True or (isinstance(v, str) and v.strip().lower() == "true") or (
        isinstance(v, int | float | np.bool_) and not isinstance(v, bool) and bool(v))


def share_text(v: Any, ci: Any = None) -> str:
    """A variance share (a fraction) as a percentage with 2 significant digits; ``"< 0.01 %"``
    for the negligible ones, ``"n/a"`` when missing, ``"not resolved (132 %)"`` outside
    [0, 100 %] (estimation noise, not a share), unless the interval of half-width ``ci``
    reaches into [0, 100 %]: then the nearer end within its interval
    (:func:`plyrisk.tolerances.output.share_text`)."""
    from plyrisk.tolerances.output import share_text as plain

    x = _number(v)
    if not math.isfinite(x):
        return "n/a"
    if not 0.0 <= x <= 1.0:
        return plain(x, _number(ci))
    if x < 1e-4:
        return "< 0.01 %"
    return f"{100 * x:.2g} %" if x < 0.1 else f"{100 * x:.0f} %"


def _level(x: float, unit: str) -> str:
    """A temperature to 0.01 of its unit (the what-if changes are that small), a time to 3
    significant digits."""
    if not math.isfinite(x):
        return "n/a"
    return f"{x:.3g}" if unit == "s" else f"{x:.2f}"


def _change(new: float, base: float, new_out: bool, base_out: bool, unit: str) -> str:
    """``new - base`` with a sign; a bound where one value lies beyond the horizon (a time),
    ``n/a`` where both do or one is missing."""
    if not (math.isfinite(new) and math.isfinite(base)) or (new_out and base_out):
        return "n/a"
    text = f"{new - base:+.3g}" if unit == "s" else f"{new - base:+.2f}"
    return ("> " if new_out else "< " if base_out else "") + text


def tolerance_tables(columns: list[str], records: list[dict]) -> list[Table]:
    """The tolerance recommendations as display tables.

    A manufacturing table (the columns of ``tolerances.csv``) becomes two narrow tables with
    human headers and units: what each parameter's spread does, then the recommended
    specification; the target, common to every row, goes in the caption. Any other table is
    rendered as it comes.

    Parameters
    ----------
    columns
        Column names.
    records
        One dict per row.

    Returns
    -------
    list of Table
    """
    if not set(MANUFACTURING_COLUMNS) <= set(columns):
        return [Table(list(columns), [[cell_text(r.get(c)) for c in columns] for r in records])]
    first = records[0] if records else {}
    label = str(first.get("quantile_label", "P95"))
    unit = fg.pretty_unit(str(first.get("temperature_unit", "")))
    target = str(first.get("target", ""))
    sources = sorted({str(r.get("share_source", "")) for r in records} - {""})
    beyond = [_flag(r.get("quantile_if_halved_beyond_horizon")) for r in records]
    from plyrisk.tolerances.output import not_resolved_advice

    shown = [share_text(r.get("variance_share"), r.get("variance_share_ci")) for r in records]
    noise = [str(r.get("share_source", "")) for r, t in zip(records, shown, strict=True)
             if t.startswith("not resolved")]
    notes = []
    if noise:
        notes.append("not resolved: a share estimated outside [0, 100 %] is estimation noise "
                     "at this sample size, not a share (the estimate in brackets); "
                     + not_resolved_advice(noise))
    if any("within its interval" in t for t in shown):
        notes.append("'0 within its interval': an estimate just below zero whose interval "
                     "reaches zero is noise around a small share, read as 0 as in the study's "
                     "rankings")
    if any(beyond):
        at = next(r for r, out in zip(records, beyond, strict=True) if out)
        notes.append(f"> {_level(_number(at.get('quantile_if_halved')), unit)} {unit}: "
                     "only known to lie beyond the horizon (so many samples reach no event "
                     "within it)")
    base = _number(first.get("quantile_baseline"))
    base_out = _flag(first.get("quantile_baseline_beyond_horizon"))
    n_design = _number(first.get("design_samples"))
    size = int(n_design) if math.isfinite(n_design) else 0
    columns = ["Parameter", "Layer", "Share of the variance",
               f"{label} with this spread halved [{unit}]"]
    cells = [[str(r["parameter"]), str(r["layer"]).replace("_", " "),
              text,
              ("> " if out else "") + _level(_number(r.get("quantile_if_halved")), unit)]
             for r, out, text in zip(records, beyond, shown, strict=True)]
    caption = "What each spread does" + (f" (share: {', '.join(sources)})" if sources else "")
    if math.isfinite(base):  # the reference the halved values are compared with
        columns.append(f"Change from the tolerance baseline [{unit}]")
        for row, r, out in zip(cells, records, beyond, strict=True):
            row.append(_change(_number(r.get("quantile_if_halved")), base, out, base_out, unit))
        design = f"its own design of {size} samples" if size else "its own design"
        caption += (f"; baseline of the tolerance study: {label} = "
                    f"{'> ' if base_out else ''}{_level(base, unit)} {unit} at the current "
                    f"spreads ({design}, worst exposure): the halved values and changes are "
                    "against it, not against the study's own percentile, which comes from "
                    "another design and differs by sampling")
    effect = Table(columns, cells, caption + "".join(f"; {n}" for n in notes))

    def factor(v: Any) -> str:
        x = _number(v)
        return f"{x:.2f}×" if math.isfinite(x) else "—"

    spec = Table(
        ["Parameter", "Current specification", "Recommended specification",
         "Spread factor"],
        [[str(r["parameter"]), str(r["current_spec"]), str(r["recommended_spec"]),
          factor(r.get("recommended_factor"))] for r in records],
        "Recommended specification" + (f" for the target {target}" if target else ""))
    return [effect, spec]
