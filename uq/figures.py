"""Figures of a results dataset: one pure function per figure, each returning a matplotlib Figure.

The functions read a results dataset (:func:`uq.storage.to_dataset`) and draw with the
object-oriented API (:class:`matplotlib.figure.Figure`, no pyplot state, no display backend);
they never write files — :mod:`uq.report` saves them. Temperatures are shown in the unit of the
limit (``attrs["limit_display_unit"]``), parameters in the unit the user gave them
(``parameter_unit``), the swept exposure in ``attrs["scenario_display_unit"]``.

Every figure uses one look (:data:`STYLE`) and a palette that stays distinguishable in greyscale
and for colour-blind readers: dark blue, orange and grey, backed up by hatches and line styles.
Artists that carry data have a ``gid`` (``"median"``, ``"band_5_95"``, ``"band_1_99"``,
``"limit"``, ``"p95"``, ``"ecdf"``, ``"crossing"``) so that tests can read them back.
"""

from __future__ import annotations

import math
import textwrap
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass

import matplotlib as mpl
import numpy as np
import xarray as xr
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import Patch

from uq.units import QUANTITIES, TEMPERATURE, from_si

__all__ = [
    "BLUE",
    "GREY",
    "ORANGE",
    "STYLE",
    "LimitCrossing",
    "format_percent",
    "format_temperature",
    "select_quantile",
    "styled",
    "to_display_temperature",
    "top_parameters",
    "distribution_figure",
    "group_indices_figure",
    "independent_mask",
    "indices_figure",
    "limit_crossing",
    "parameter_values",
    "pretty_unit",
    "profile_figure",
    "scatter_figure",
    "surrogate_indices_figure",
    "sweep_figure",
    "temperature_unit",
]

BLUE = "#1f4e79"
"""Main data colour (dark blue; dark in greyscale)."""
ORANGE = "#e69f00"
"""Second data colour (orange; light in greyscale)."""
GREY = "#7a7a7a"
"""Neutral colour (structure, secondary marks)."""
INK = "#222222"
"""Text and the limit line."""
SOLID_FILL = "#ece8e1"
GAP_FILL = "#f7f9fc"
PRIMARY = "inner_surface_temperature"

STYLE = {
    "font.family": "DejaVu Sans",
    "font.size": 9.0,
    "axes.titlesize": 10.0,
    "axes.titleweight": "bold",
    "axes.titlelocation": "left",
    "axes.labelsize": 9.0,
    "axes.edgecolor": "#555555",
    "axes.labelcolor": INK,
    "axes.linewidth": 0.8,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "axes.grid": True,
    "axes.axisbelow": True,
    "grid.color": "#e3e3e3",
    "grid.linewidth": 0.6,
    "xtick.color": "#444444",
    "ytick.color": "#444444",
    "xtick.labelsize": 8.0,
    "ytick.labelsize": 8.0,
    "legend.frameon": False,
    "legend.fontsize": 8.0,
    "figure.facecolor": "white",
    "figure.dpi": 100.0,
    "hatch.linewidth": 0.6,
    "svg.fonttype": "path",
    "svg.hashsalt": "plyrisk",
    "axes.prop_cycle": mpl.cycler(color=[BLUE, ORANGE, GREY]),
}
"""The plyrisk look: rcParams applied while a figure is built (and saved, by :mod:`uq.report`)."""


@contextmanager
def styled() -> Iterator[None]:
    """Context in which :data:`STYLE` applies (figures are built and saved inside it)."""
    with mpl.rc_context(STYLE):
        yield


# ----------------------------------------------------------------------------------------------
# Units and selections
# ----------------------------------------------------------------------------------------------


def pretty_unit(unit: str) -> str:
    """A unit string for display: ``"degC"`` → ``"°C"``, ``"kW/m^2"`` → ``"kW/m²"``, ``""`` →
    ``"-"`` [-]."""
    if not unit:
        return "-"
    out = unit.replace("delta_degC", "°C").replace("delta_degF", "°F")
    out = out.replace("degC", "°C").replace("degF", "°F")
    for a, b in (("**2", "²"), ("**3", "³"), ("^2", "²"), ("^3", "³"), ("*", "·")):
        out = out.replace(a, b)
    return out


def temperature_unit(ds: xr.Dataset) -> str:
    """The unit temperatures are shown in: the limit's unit, ``"K"`` if none was stored [-]."""
    return str(ds.attrs.get("limit_display_unit") or "K")


def to_display_temperature(ds: xr.Dataset, kelvin) -> np.ndarray:
    """Temperatures [K] converted to the dataset's display unit [display unit]."""
    return np.asarray(from_si(np.asarray(kelvin, dtype=float), temperature_unit(ds), TEMPERATURE))


def _tlabel(ds: xr.Dataset, what: str) -> str:
    return f"{what} [{pretty_unit(temperature_unit(ds))}]"


def format_temperature(ds: xr.Dataset, kelvin: float, *, digits: int = 1) -> str:
    """A temperature [K] as display text in the dataset's unit, e.g. ``"43.2 °C"`` [-].

    Parameters
    ----------
    ds
        A results dataset (for its display unit) [-].
    kelvin
        The temperature [K]; non-finite gives ``"n/a"``.
    digits
        Decimals shown [-].
    """
    if not np.isfinite(kelvin):
        return "n/a"
    shown = float(to_display_temperature(ds, kelvin))
    return f"{shown:.{digits}f} {pretty_unit(temperature_unit(ds))}"


def format_percent(p: float) -> str:
    """A probability [-] as a percentage with 3 significant digits, ``"n/a"`` if not finite."""
    return "n/a" if not np.isfinite(p) else f"{100 * p:.3g} %"


def _one(ds: xr.Dataset, scenario: int | None) -> tuple[str, xr.Dataset]:
    """Label and dataset of one exposure; validates ``scenario`` against the dataset."""
    if "scenario" in ds.dims:
        k = ds.sizes["scenario"]
        if scenario is None or isinstance(scenario, bool) or not 0 <= int(scenario) < k:
            raise ValueError(
                f"scenario must be an index 0..{k - 1} for a dataset sweeping "
                f"{ds.attrs.get('scenario_quantity', 'an exposure')}, got {scenario!r}"
            )
        one = ds.isel(scenario=int(scenario))
        quantity = str(ds.attrs.get("scenario_quantity", "exposure")).replace("_", " ")
        return f"{quantity} = {pretty_unit(str(one['scenario_label'].item()))}", one
    if scenario not in (None, 0):
        raise ValueError(f"scenario must be None (or 0) for an unswept dataset, got {scenario!r}")
    return "", ds


def _title(ax, text: str, *subs: str) -> None:
    """Bold title with grey subtitle lines under it (e.g. the exposure)."""
    sub = "\n".join(s for s in subs if s)
    ax.set_title(text, pad=6 + (11 * (sub.count("\n") + 1) if sub else 0))
    if sub:
        ax.annotate(sub, xy=(0.0, 1.0), xycoords="axes fraction", xytext=(0, 5),
                    textcoords="offset points", va="bottom", ha="left", fontsize=8, color=GREY)


def _what(output: str) -> str:
    return "inner-surface temperature" if output == PRIMARY else output.replace("_", " ")


def select_quantile(da: xr.DataArray, p: float) -> xr.DataArray:
    """The slice of a quantile variable at cumulative probability ``p`` [-].

    Raises
    ------
    ValueError
        When ``p`` is not among the dataset's ``quantile`` coordinates (naming those).
    """
    q = np.asarray(da["quantile"].values, dtype=float)
    hit = np.flatnonzero(np.isclose(q, p, rtol=0.0, atol=1e-9))
    if hit.size == 0:
        raise ValueError(
            f"quantile {p:g} is not in the dataset; available: {', '.join(f'{v:g}' for v in q)}"
        )
    return da.isel(quantile=int(hit[0]))


def independent_mask(ds: xr.Dataset) -> np.ndarray:
    """Rows drawn from the joint input distribution that converged, for one exposure [-].

    Sobol designs: the A and B rows (``sample_block`` 0 or 1); other designs: every row. Only
    samples flagged ``converged`` with a finite inner-surface temperature are kept.

    Parameters
    ----------
    ds
        A results dataset of one exposure (no ``scenario`` dimension) [-].

    Returns
    -------
    numpy.ndarray
        Boolean mask over ``sample`` [-].
    """
    if "scenario" in ds["inner_surface_temperature"].dims:
        raise ValueError("independent_mask needs one exposure: select a scenario first")
    rows = np.ones(ds.sizes["sample"], dtype=bool)
    if ds.attrs.get("method") == "sobol":
        rows = np.asarray(ds["sample_block"].values) <= 1
    ok = np.asarray(ds["converged"].values, dtype=bool)
    ok &= np.isfinite(np.asarray(ds["inner_surface_temperature"].values, dtype=float))
    return rows & ok


def parameter_values(ds: xr.Dataset, name: str) -> tuple[np.ndarray, str]:
    """The samples of one parameter in the user's unit, and that unit [user unit].

    Parameters
    ----------
    ds
        A results dataset [-].
    name
        Parameter name, e.g. ``"outer gap.width"`` [-].

    Returns
    -------
    values, unit
        Values over ``sample`` and the unit text; the SI unit (``parameter_si_unit``) when the
        quantity is not one plyrisk knows how to convert.
    """
    names = [str(v) for v in ds["parameter"].values]
    if name not in names:
        raise ValueError(f"unknown parameter {name!r}; valid: {', '.join(names)}")
    one = ds.sel(parameter=name)
    si = np.asarray(one["input"].values, dtype=float)
    unit = str(one["parameter_unit"].item())
    spec = QUANTITIES.get(name.rsplit(".", 1)[-1])
    if spec is None:
        return si, str(one["parameter_si_unit"].item())
    return np.asarray(from_si(si, unit, spec)), unit


def _split(name: str) -> tuple[str, str]:
    group, _, quantity = name.rpartition(".")
    return group.replace("_", " "), quantity.replace("_", " ")


# ----------------------------------------------------------------------------------------------
# 1. Temperature profile through the assembly
# ----------------------------------------------------------------------------------------------


def _label_rows(mids: np.ndarray, names: list[str], span: float, width_pt: float,
                ) -> tuple[np.ndarray, np.ndarray]:
    """Row of each element label (greedy, no overlaps) and its clamped x position [mm]."""
    char = 4.9  # mean advance of an 8 pt DejaVu Sans character [pt]
    half = np.array([(len(n) * char / 2 + 3) / width_pt * span for n in names])
    x = np.clip(mids, half, span - half) if span > 0 else mids
    rows = np.zeros(len(names), dtype=int)
    right_edges: list[float] = []
    for i in range(len(names)):
        for r, edge in enumerate(right_edges):
            if x[i] - half[i] > edge:
                rows[i] = r
                right_edges[r] = x[i] + half[i]
                break
        else:
            rows[i] = len(right_edges)
            right_edges.append(x[i] + half[i])
    return rows, x


def profile_figure(ds: xr.Dataset, *, scenario: int | None = None) -> Figure:
    """Face-temperature percentiles through the assembly, layers drawn in their nominal widths.

    The median and the 5–95 % and 1–99 % bands of every face temperature
    (``interface_temperature_quantile``) are joined by straight lines from the exposed face
    (position 0) to the innermost face; solids and gaps are shaded over their nominal
    thickness or width (``layer_nominal_thickness``), contact resistances (no width) are drawn
    as dotted lines. The limit is a horizontal line.

    Parameters
    ----------
    ds
        A results dataset [-].
    scenario
        Index of the exposure for a swept dataset, ``None`` otherwise [-].

    Returns
    -------
    matplotlib.figure.Figure
    """
    label, one = _one(ds, scenario)
    widths_mm = np.asarray(one["layer_nominal_thickness"].values, dtype=float) * 1e3
    kinds = [str(k) for k in one["layer_kind"].values]
    names = [str(n) for n in one["layer"].values]
    faces = [str(n) for n in one["interface"].values]
    x = np.concatenate([[0.0], np.cumsum(widths_mm)])
    if x.size != len(faces):
        raise ValueError(f"the dataset has {len(faces)} faces for {len(names)} elements; "
                         f"expected {len(names) + 1}")
    q = one["interface_temperature_quantile"]
    band = {p: to_display_temperature(one, select_quantile(q, p).values) for p in
            (0.01, 0.05, 0.5, 0.95, 0.99)}
    limit = float(to_display_temperature(one, one.attrs["limit"]))
    span = float(x[-1])
    mids = 0.5 * (x[:-1] + x[1:])
    with styled():
        fig = Figure(figsize=(8.0, 5.4), layout="constrained")
        rows, lx = _label_rows(mids, names, span, width_pt=6.6 * 72)
        n_rows = int(rows.max()) + 1
        gs = fig.add_gridspec(2, 1, height_ratios=[0.32 * n_rows + 0.15, 4.0], hspace=0.0)
        head = fig.add_subplot(gs[0])
        ax = fig.add_subplot(gs[1], sharex=head)
        ax.set_label("profile")
        head.set_label("layer labels")
        for i, kind in enumerate(kinds):
            if kind == "contact":
                ax.axvline(x[i], color=GREY, ls=":", lw=1.4, zorder=1)
            elif kind == "gap":
                ax.axvspan(x[i], x[i + 1], facecolor=GAP_FILL, edgecolor="#b8c4d2", hatch="..",
                           lw=0.0, zorder=0)
            else:
                ax.axvspan(x[i], x[i + 1], facecolor=SOLID_FILL, edgecolor="none", zorder=0)
        for xi in x:
            ax.axvline(xi, color="#bdbdbd", lw=0.5, zorder=0.5)
        ax.grid(axis="x", visible=False)
        ax.fill_between(x, band[0.01], band[0.99], color=BLUE, alpha=0.16, lw=0, zorder=2,
                        gid="band_1_99", label="1–99 % band")
        ax.fill_between(x, band[0.05], band[0.95], color=BLUE, alpha=0.38, lw=0, zorder=3,
                        gid="band_5_95", label="5–95 % band")
        ax.plot(x, band[0.5], color=BLUE, lw=2.0, marker="o", ms=3.5, zorder=4, gid="median",
                label="median", clip_on=False)
        ax.axhline(limit, color=INK, ls="--", lw=1.2, zorder=5, gid="limit",
                   label=f"limit {limit:.4g} {pretty_unit(temperature_unit(one))}")
        inner = int(one.attrs.get("inner_surface_index", len(faces) - 1))
        right = span > 0 and x[inner] > 0.7 * span
        ax.annotate("inner surface", (x[inner], band[0.5][inner]),
                    xytext=(-8 if right else 8, 14), ha="right" if right else "left",
                    textcoords="offset points", fontsize=8, color=INK,
                    arrowprops={"arrowstyle": "-", "color": INK, "lw": 0.6})
        shown = np.concatenate([band[0.01], band[0.99], [limit]])
        shown = shown[np.isfinite(shown)]
        lo, hi = (shown.min(), shown.max()) if shown.size else (0.0, 1.0)
        pad = 0.06 * (hi - lo if hi > lo else 1.0)
        ax.set_ylim(lo - pad, hi + pad)
        ax.set_xlim(0.0, span if span > 0 else 1.0)
        ax.set_xlabel("distance from the exposed face [mm]")
        ax.set_ylabel(_tlabel(one, "temperature"))
        ax.text(0.005, 0.015, "exposed side", transform=ax.transAxes, fontsize=8,
                style="italic", color=GREY, ha="left", va="bottom")
        ax.text(0.995, 0.015, "skin" if faces[-1] == "skin surface" else "inner side",
                transform=ax.transAxes, fontsize=8, style="italic", color=GREY, ha="right",
                va="bottom")
        # the label strip: element names, staggered so that none overlap, with leader lines
        head.set_ylim(0.0, n_rows + 0.15)
        head.axis("off")
        for i, name in enumerate(names):
            y = rows[i] + 0.35
            head.text(lx[i], y, name, ha="center", va="bottom", fontsize=8, color=INK)
            head.plot([mids[i], lx[i]], [0.0, y - 0.05], color=GREY, lw=0.6)
        _title(head, "Temperature through the assembly", label,
               "bands: percentiles of each face temperature, joined by straight lines")
        handles = [
            Line2D([], [], color=BLUE, lw=2.0, marker="o", ms=3.5, label="median"),
            Patch(facecolor=BLUE, alpha=0.38, label="5–95 % band"),
            Patch(facecolor=BLUE, alpha=0.16, label="1–99 % band"),
            Line2D([], [], color=INK, ls="--", lw=1.2, label=f"limit {limit:.4g} "
                   f"{pretty_unit(temperature_unit(one))}"),
        ]
        if "solid" in kinds:
            handles.append(Patch(facecolor=SOLID_FILL, edgecolor="#999999", lw=0.5,
                                 label="solid layer"))
        if "gap" in kinds:
            handles.append(Patch(facecolor=GAP_FILL, edgecolor="#b8c4d2", hatch="..",
                                 label="air gap"))
        if "contact" in kinds:
            handles.append(Line2D([], [], color=GREY, ls=":", lw=1.4, label="contact resistance"))
        fig.legend(handles=handles, loc="outside lower center", ncol=4)
    return fig


# ----------------------------------------------------------------------------------------------
# 2. and 3. Sensitivity: Sobol indices (per parameter, per layer) or the screening measure
# ----------------------------------------------------------------------------------------------


def _paired_bars(ax, names: list[str], first, first_ci, total, total_ci, converged,
                 threshold: float | None) -> None:
    first, first_ci, total, total_ci = (np.asarray(v, dtype=float) for v in
                                        (first, first_ci, total, total_ci))
    converged = (np.ones(len(names), dtype=bool) if converged is None
                 else np.asarray(converged, dtype=bool))
    order = np.argsort(-np.nan_to_num(total, nan=-np.inf), kind="stable")
    y = np.arange(len(order))[::-1].astype(float)
    h = 0.38
    for pos, j in zip(y, order, strict=True):
        hatch = None if converged[j] else "////"
        for value, ci, dy, colour, gid in ((total[j], total_ci[j], h / 2, BLUE, "total"),
                                           (first[j], first_ci[j], -h / 2, ORANGE, "first")):
            if not np.isfinite(value):
                ax.text(0.0, pos + dy, " n/a", va="center", fontsize=7, color=GREY)
                continue
            ax.barh(pos + dy, value, height=h, color=colour, hatch=hatch, edgecolor="white",
                    lw=0.0, gid=f"{gid}:{names[j]}")
            if np.isfinite(ci):
                ax.errorbar(value, pos + dy, xerr=ci, fmt="none", ecolor=INK, elinewidth=0.9,
                            capsize=2.5)
        if not converged[j]:
            right = max(np.nan_to_num(total[j] + np.nan_to_num(total_ci[j])),
                        np.nan_to_num(first[j] + np.nan_to_num(first_ci[j])), 0.0)
            ax.text(right + 0.02, pos, "unconverged", va="center", fontsize=7.5, color=INK,
                    style="italic")
    ax.set_yticks(y, [names[j] for j in order])
    ax.axvline(0.0, color="#555555", lw=0.8)
    ax.grid(axis="y", visible=False)
    hi = max(np.nanmax(np.concatenate([total + np.nan_to_num(total_ci), [1.0]])), 1.0)
    lo = min(np.nanmin(np.concatenate([first - np.nan_to_num(first_ci), [0.0]])), 0.0)
    ax.set_xlim(min(lo - 0.02, 0.0), hi + (0.22 if not converged.all() else 0.05))
    ax.set_ylim(-0.7, len(order) - 0.3)
    handles = [Patch(facecolor=BLUE, label="total index"),
               Patch(facecolor=ORANGE, label="first-order index"),
               Line2D([], [], color=INK, lw=0.9, marker="|", ms=6,
                      label="confidence interval")]
    if not converged.all():
        thr = f" ±{threshold:g}" if threshold is not None else ""
        handles.append(Patch(facecolor="white", edgecolor=INK, hatch="////",
                             label=f"unconverged (interval wider than{thr})"))
    ax.figure.legend(handles=handles, loc="outside lower center", ncols=len(handles))


def _sobol_output(one: xr.Dataset, output: str) -> xr.Dataset:
    if "sobol_total" not in one:
        raise ValueError(f"the dataset has no Sobol indices (method "
                         f"{one.attrs.get('method')!r}); they need method = 'sobol'")
    outputs = [str(o) for o in one["output"].values]
    if output not in outputs:
        raise ValueError(f"unknown output {output!r}; valid: {', '.join(outputs)}")
    return one.sel(output=output)


def indices_figure(ds: xr.Dataset, *, scenario: int | None = None,
                   output: str = PRIMARY) -> Figure:
    """Sobol first and total indices per parameter, or the rank-correlation screening chart.

    For ``method = "sobol"``: paired horizontal bars (total, first-order) with their bootstrap
    confidence intervals, sorted by the total index; unconverged indices
    (``index_converged`` False) are hatched, labelled and listed in the legend. For other
    methods: the Spearman rank correlation of each input with the inner-surface temperature,
    sorted by magnitude and titled as a screening measure.

    Parameters
    ----------
    ds
        A results dataset [-].
    scenario
        Index of the exposure for a swept dataset, ``None`` otherwise [-].
    output
        Output the indices refer to (Sobol only) [-].

    Returns
    -------
    matplotlib.figure.Figure
    """
    label, one = _one(ds, scenario)
    names = [str(n) for n in one["parameter"].values]
    with styled():
        fig = Figure(figsize=(8.0, 1.6 + 0.42 * len(names)), layout="constrained")
        ax = fig.add_subplot()
        ax.set_label("indices")
        if "sobol_total" not in one:
            _screening(ax, one, names)
            _title(ax, "Screening only: rank correlation with the inner-surface temperature",
                   label, "a measure of monotone influence: it does not apportion variance or "
                   "show interactions;", f"Sobol indices need method = \"sobol\" (this study: "
                   f"{one.attrs.get('method')}, {one.attrs.get('evaluations')} samples)")
            return fig
        s = _sobol_output(one, output)
        _paired_bars(ax, names, s["sobol_first"].values, s["sobol_first_ci"].values,
                     s["sobol_total"].values, s["sobol_total_ci"].values,
                     s["index_converged"].values,
                     s["index_converged"].attrs.get("threshold"))
        ax.set_xlabel("Sobol index [-]")
        _title(ax, f"Sobol indices of the {_what(output)}", label, _design_note(one))
    return fig


def _screening(ax, one: xr.Dataset, names: list[str]) -> None:
    rho = np.asarray(one["rank_correlation"].values, dtype=float)
    order = np.argsort(-np.nan_to_num(np.abs(rho), nan=-1.0), kind="stable")
    y = np.arange(len(order))[::-1].astype(float)
    for pos, j in zip(y, order, strict=True):
        if not np.isfinite(rho[j]):
            ax.text(0.02, pos, "n/a (input or output constant)", va="center", fontsize=7,
                    color=GREY)
            continue
        positive = rho[j] >= 0
        ax.barh(pos, rho[j], height=0.6, color=BLUE if positive else ORANGE,
                hatch=None if positive else "\\\\\\", edgecolor="white", lw=0.0,
                gid=f"rho:{names[j]}")
    ax.set_yticks(y, [names[j] for j in order])
    ax.axvline(0.0, color="#555555", lw=0.8)
    ax.grid(axis="y", visible=False)
    ax.set_xlim(-1.0, 1.0)
    ax.set_xlabel("Spearman rank correlation ρ [-]")
    ax.figure.legend(handles=[Patch(facecolor=BLUE, label="higher input → hotter"),
                              Patch(facecolor=ORANGE, hatch="\\\\\\", edgecolor="white",
                                    label="higher input → cooler")],
                     loc="outside lower center", ncols=2)


def _design_note(one: xr.Dataset) -> str:
    conf = one.attrs.get("confidence")
    text = f"{one.attrs.get('base_samples')} base samples"
    return text + (f"; {100 * float(conf):g} % bootstrap intervals" if conf else "")


def group_indices_figure(ds: xr.Dataset, *, scenario: int | None = None,
                         output: str = PRIMARY) -> Figure:
    """Sobol indices of each layer group (all of a layer's parameters moved together).

    Parameters
    ----------
    ds
        A results dataset with ``method = "sobol"`` [-].
    scenario
        Index of the exposure for a swept dataset, ``None`` otherwise [-].
    output
        Output the indices refer to [-].

    Returns
    -------
    matplotlib.figure.Figure
    """
    label, one = _one(ds, scenario)
    s = _sobol_output(one, output)
    if "sobol_group_total" not in s:
        raise ValueError("the dataset has no grouped Sobol indices")
    groups = [str(g).replace("_", " ") for g in s["group"].values]
    with styled():
        fig = Figure(figsize=(8.0, 1.6 + 0.42 * len(groups)), layout="constrained")
        ax = fig.add_subplot()
        ax.set_label("group indices")
        _paired_bars(ax, groups, s["sobol_group_first"].values, s["sobol_group_first_ci"].values,
                     s["sobol_group_total"].values, s["sobol_group_total_ci"].values,
                     s["group_index_converged"].values,
                     s["group_index_converged"].attrs.get("threshold"))
        ax.set_xlabel("Sobol index of the layer's parameters together [-]")
        _title(ax, f"Which layer dominates: grouped Sobol indices of the {_what(output)}",
               label, "each layer's parameters varied together; " + _design_note(one))
    return fig


def surrogate_indices_figure(ds: xr.Dataset, *, scenario: int | None = None,
                             groups: bool = False) -> Figure:
    """Sobol indices of the inner-surface temperature from the polynomial-chaos surrogate.

    For designs without a Saltelli structure (lhs, random) the dataset may carry indices from
    a surrogate fitted to the samples (``pce_*``); they are drawn as paired bars with their
    bootstrap intervals and titled with the surrogate's order and leave-one-out Q2 — they are
    only as good as the fit.

    Parameters
    ----------
    ds
        A results dataset holding ``pce_total`` [-].
    scenario
        Index of the exposure for a swept dataset, ``None`` otherwise [-].
    groups
        Per layer group (``pce_group_*``) instead of per parameter [-].

    Returns
    -------
    matplotlib.figure.Figure
    """
    label, one = _one(ds, scenario)
    prefix = "pce_group" if groups else "pce"
    if f"{prefix}_total" not in one:
        raise ValueError("the dataset has no surrogate indices (pce_*); they exist for "
                         "method = 'lhs' or 'random' when a surrogate could be fitted")
    dim = "group" if groups else "parameter"
    names = [str(n).replace("_", " ") if groups else str(n) for n in one[dim].values]
    q2, order = float(one["pce_q2"].item()), int(one["pce_order"].item())
    with styled():
        fig = Figure(figsize=(8.0, 1.9 + 0.42 * len(names)), layout="constrained")
        ax = fig.add_subplot()
        ax.set_label("surrogate group indices" if groups else "surrogate indices")
        _paired_bars(ax, names, *(one[f"{prefix}_{v}"].values for v in
                                  ("first", "first_ci", "total", "total_ci")), None, None)
        ax.set_xlabel("Sobol index from the surrogate [-]")
        fit = (f"polynomial-chaos surrogate of order {order}, leave-one-out Q2 = {q2:.3f}"
               if np.isfinite(q2) else "no surrogate could be fitted")
        _title(ax, "Sobol indices from a surrogate " + ("per layer" if groups else
                                                          "per parameter"),
               label, f"{fit}; {one.attrs.get('evaluations')} {one.attrs.get('method')} samples",
               "trust these indices only when Q2 is close to 1")
    return fig


# ----------------------------------------------------------------------------------------------
# 4. Distribution of the inner-surface temperature
# ----------------------------------------------------------------------------------------------


def distribution_figure(ds: xr.Dataset, *, scenario: int | None = None) -> Figure:
    """Histogram and empirical CDF of the inner-surface temperature, with the limit and P95.

    Uses the independent, converged samples only (:func:`independent_mask`); the exceedance
    probability and its confidence interval are written on the figure.

    Parameters
    ----------
    ds
        A results dataset [-].
    scenario
        Index of the exposure for a swept dataset, ``None`` otherwise [-].

    Returns
    -------
    matplotlib.figure.Figure
    """
    label, one = _one(ds, scenario)
    mask = independent_mask(one)
    t = to_display_temperature(one, one["inner_surface_temperature"].values[mask])
    unit = pretty_unit(temperature_unit(one))
    limit = float(to_display_temperature(one, one.attrs["limit"]))
    qv = one["inner_surface_temperature_quantile"]
    p95 = float(to_display_temperature(one, select_quantile(qv, 0.95).item()))
    p95_lo = float(to_display_temperature(
        one, select_quantile(one["inner_surface_temperature_quantile_lower"], 0.95).item()))
    p95_hi = float(to_display_temperature(
        one, select_quantile(one["inner_surface_temperature_quantile_upper"], 0.95).item()))
    conf = float(one.attrs.get("confidence", math.nan))
    with styled():
        fig = Figure(figsize=(8.0, 5.6), layout="constrained")
        top, bottom = fig.subplots(2, 1, sharex=True, height_ratios=[1.0, 1.0])
        top.set_label("histogram")
        bottom.set_label("ecdf")
        if t.size:
            edges = np.histogram_bin_edges(t, bins="fd")
            if edges.size > 61 or edges.size < 11:
                edges = np.histogram_bin_edges(t, bins=min(60, max(10, int(np.sqrt(t.size)))))
            top.hist(t, bins=edges, density=True, color=BLUE, alpha=0.85, edgecolor="white",
                     lw=0.4, gid="histogram")
            xs = np.sort(t)
            bottom.step(xs, np.arange(1, xs.size + 1) / xs.size, where="post", color=BLUE,
                        lw=1.6, gid="ecdf")
        for ax in (top, bottom):
            if np.isfinite(p95_lo) and np.isfinite(p95_hi):
                ax.axvspan(p95_lo, p95_hi, color=ORANGE, alpha=0.18, lw=0)
            ax.axvline(p95, color=ORANGE, ls=":", lw=2.0, gid="p95")
            ax.axvline(limit, color=INK, ls="--", lw=1.2, gid="limit")
        bottom.axhline(0.95, color=GREY, lw=0.7, ls="-.")
        bottom.set_ylim(0.0, 1.02)
        top.set_ylabel(f"probability density [1/{unit}]")
        bottom.set_ylabel("cumulative probability [-]")
        bottom.set_xlabel(_tlabel(one, "inner-surface temperature"))
        _title(top, "Distribution of the inner-surface temperature", label,
               "independent, converged samples only")
        e, lo_, hi_ = (float(one[v].item()) for v in ("exceedance_probability",
                                                        "exceedance_probability_lower",
                                                        "exceedance_probability_upper"))
        c = f"{100 * conf:g} %" if np.isfinite(conf) else "confidence"
        pct = format_percent
        text = (f"P(T > {limit:.4g} {unit}) = {pct(e)}  [{pct(lo_)}, {pct(hi_)}]\n"
                f"P95 = {p95:.1f} {unit}  [{p95_lo:.1f}, {p95_hi:.1f}]\n"
                f"({c} intervals; {int(one['samples_used'].item())} converged samples; "
                f"{int(one['nonconverged_count'].item())} not converged)")
        top.text(0.01, 0.97, text, transform=top.transAxes, va="top", ha="left", fontsize=8,
                 color=INK, bbox={"facecolor": "white", "edgecolor": "#cccccc", "lw": 0.6,
                                  "boxstyle": "round,pad=0.4"})
        handles = [Patch(facecolor=BLUE, label="samples"),
                   Line2D([], [], color=ORANGE, ls=":", lw=2.0, label="P95 (shade: interval)"),
                   Line2D([], [], color=INK, ls="--", lw=1.2, label=f"limit {limit:.4g} {unit}")]
        fig.legend(handles=handles, loc="outside lower center", ncols=3)
    return fig


# ----------------------------------------------------------------------------------------------
# 5. Scatter against the most influential parameters
# ----------------------------------------------------------------------------------------------


def top_parameters(ds: xr.Dataset, *, scenario: int | None = None, count: int = 3) -> list[str]:
    """The ``count`` most influential parameters: by ``parameter_rank`` of the inner-surface
    temperature (Sobol), else by the surrogate's total index (``pce_total``) when there is
    one, else by the magnitude of ``rank_correlation`` [-]."""
    _, one = _one(ds, scenario)
    names = [str(n) for n in one["parameter"].values]
    if "parameter_rank" in one:
        r = np.asarray(one["parameter_rank"].sel(output=PRIMARY).values, dtype=float)
        r = np.where(r > 0, r, np.inf)  # 0 = not ranked
        order = np.argsort(r, kind="stable")
    elif "pce_total" in one and np.isfinite(one["pce_total"].values).all():
        order = np.argsort(-np.asarray(one["pce_total"].values, dtype=float), kind="stable")
    else:
        rho = np.abs(np.asarray(one["rank_correlation"].values, dtype=float))
        order = np.argsort(-np.nan_to_num(rho, nan=-1.0), kind="stable")
    return [names[j] for j in order[:count]]


def scatter_figure(ds: xr.Dataset, *, scenario: int | None = None, count: int = 3) -> Figure:
    """Inner-surface temperature against each of the most influential parameters.

    Parameters
    ----------
    ds
        A results dataset [-].
    scenario
        Index of the exposure for a swept dataset, ``None`` otherwise [-].
    count
        Number of parameters (panels) [-].

    Returns
    -------
    matplotlib.figure.Figure
    """
    label, one = _one(ds, scenario)
    chosen = top_parameters(ds, scenario=scenario, count=count)
    mask = independent_mask(one)
    t = to_display_temperature(one, one["inner_surface_temperature"].values[mask])
    limit = float(to_display_temperature(one, one.attrs["limit"]))
    names = [str(n) for n in one["parameter"].values]
    with styled():
        fig = Figure(figsize=(8.0, 3.4), layout="constrained")
        axes = np.atleast_1d(fig.subplots(1, max(len(chosen), 1), sharey=True, squeeze=False)[0])
        for ax, name in zip(axes, chosen, strict=False):
            ax.set_label(f"scatter:{name}")
            values, unit = parameter_values(one, name)
            ax.scatter(values[mask], t, s=6, color=BLUE, alpha=0.45, lw=0, rasterized=True,
                       gid=f"points:{name}")
            ax.axhline(limit, color=INK, ls="--", lw=1.1)
            group, quantity = _split(name)
            ax.set_xlabel(f"{quantity} [{pretty_unit(unit)}]")
            j = names.index(name)
            if "sobol_total" in one:
                s = one.sel(output=PRIMARY, parameter=name)
                note = (f"rank {int(s['parameter_rank'].item())}, total index "
                        f"{float(s['sobol_total'].item()):.2f}")
            elif "pce_total" in one:
                note = (f"surrogate total index {float(one['pce_total'].values[j]):.2f}, "
                        f"ρ = {float(one['rank_correlation'].values[j]):+.2f}")
            else:
                note = f"ρ = {float(one['rank_correlation'].values[j]):+.2f}"
            ax.set_title(f"{group}\n{note}", fontsize=8.5, fontweight="normal")
        axes[0].set_ylabel(_tlabel(one, "inner-surface temperature"))
        fig.suptitle("Inner-surface temperature against the top inputs"
                     + (f"  ({label})" if label else ""), x=0.01, ha="left", fontsize=10,
                     fontweight="bold")
        axes[-1].legend(handles=[Line2D([], [], color=INK, ls="--", lw=1.1,
                                        label=f"limit {limit:.4g} "
                                        f"{pretty_unit(temperature_unit(one))}")],
                        loc="best")
    return fig


# ----------------------------------------------------------------------------------------------
# 6. The exposure sweep
# ----------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class LimitCrossing:
    """Where the 95th percentile of the inner-surface temperature reaches the limit.

    Attributes
    ----------
    status
        ``"crosses"``, ``"below"`` (stays below over the swept range), ``"above"`` (exceeds at
        every swept level) or ``"unavailable"`` (no finite P95) [-].
    exposure
        Exposure at which P95 reaches the limit, by linear interpolation between the two swept
        levels around the first crossing; NaN unless ``status == "crosses"`` [display unit].
    upper_bound_exposure
        The same read-off for the upper confidence bound of P95 (a cautious reading); NaN when
        that bound does not cross within the swept range [display unit].
    quantity
        The swept hot-side quantity, e.g. ``"incident_flux"`` [-].
    unit
        Display unit of the exposure [-].
    text
        One sentence for the figure and the report [-].
    """

    status: str
    exposure: float
    upper_bound_exposure: float
    quantity: str
    unit: str
    text: str


def _sweep(ds: xr.Dataset) -> tuple[np.ndarray, str, str]:
    if "scenario" not in ds.dims:
        raise ValueError("the dataset sweeps no exposure (no 'scenario' dimension)")
    quantity = str(ds.attrs.get("scenario_quantity", ""))
    unit = str(ds.attrs.get("scenario_display_unit", ""))
    si = np.asarray(ds["scenario"].values, dtype=float)
    spec = QUANTITIES.get(quantity)
    if spec is None:
        return si, quantity, str(ds["scenario"].attrs.get("units", "SI"))
    return np.asarray(from_si(si, unit, spec), dtype=float), quantity, unit


def _first_crossing(x: np.ndarray, y: np.ndarray, limit: float) -> tuple[str, float]:
    if y.size == 0:
        return "unavailable", math.nan
    above = y >= limit
    if not above.any():
        return "below", math.nan
    if above[0]:
        return "above", math.nan
    i = int(np.argmax(above))
    x0, x1, y0, y1 = x[i - 1], x[i], y[i - 1], y[i]
    return "crosses", float(x0 + (limit - y0) * (x1 - x0) / (y1 - y0))


def limit_crossing(ds: xr.Dataset) -> LimitCrossing:
    """Read off the exposure at which P95 of the inner-surface temperature reaches the limit.

    The swept levels are sorted; levels without a finite P95 are left out (and said so). The
    read-off interpolates linearly between the last level below and the first at or above the
    limit.

    Parameters
    ----------
    ds
        A results dataset with a ``scenario`` dimension [-].

    Returns
    -------
    LimitCrossing
    """
    x, quantity, unit = _sweep(ds)
    limit = float(ds.attrs["limit"])
    est = np.asarray(select_quantile(ds["inner_surface_temperature_quantile"], 0.95), float)
    upper = np.asarray(select_quantile(ds["inner_surface_temperature_quantile_upper"], 0.95),
                       float)
    order = np.argsort(x, kind="stable")
    x, est, upper = x[order], est[order], upper[order]
    ok = np.isfinite(est)
    status, at = _first_crossing(x[ok], est[ok], limit)
    ok_u = np.isfinite(upper)
    status_u, at_u = _first_crossing(x[ok_u], upper[ok_u], limit)
    u = pretty_unit(unit)
    t_lim = format_temperature(ds, limit)
    if status == "crosses":
        text = f"P95 reaches the limit at ≈ {at:.3g} {u}"
        later = est[ok][x[ok] > at] < limit
        if later.any():
            text += " (and falls below it again at a higher level: the response is not monotone)"
    elif status == "below":
        text = "P95 stays below the limit over the swept range"
    elif status == "above":
        text = "P95 exceeds the limit at every swept level"
    else:
        text = "P95 is not available at any swept level (no converged samples)"
    if status in ("crosses", "below") and status_u == "crosses":
        conf = float(ds.attrs.get("confidence", math.nan))
        text += (f"; its upper {100 * conf:g} % confidence bound reaches it at ≈ {at_u:.3g} {u}"
                 if np.isfinite(conf) else
                 f"; its upper confidence bound reaches it at ≈ {at_u:.3g} {u}")
    elif status == "below" and status_u == "above":
        text += "; its upper confidence bound exceeds the limit at every swept level"
    if (~ok).any() and status != "unavailable":
        text += f" ({int((~ok).sum())} swept level(s) without a P95 left out)"
    text += f" (limit {t_lim})"
    return LimitCrossing(status, at, at_u if status_u == "crosses" else math.nan, quantity,
                         unit, text + ".")


def sweep_figure(ds: xr.Dataset) -> Figure:
    """The 5–50–95 % band of the inner-surface temperature against the swept exposure level.

    Parameters
    ----------
    ds
        A results dataset with a ``scenario`` dimension [-].

    Returns
    -------
    matplotlib.figure.Figure
    """
    x, quantity, unit = _sweep(ds)
    crossing = limit_crossing(ds)
    order = np.argsort(x, kind="stable")
    x = x[order]
    q = ds["inner_surface_temperature_quantile"]
    y = {p: to_display_temperature(ds, select_quantile(q, p).values)[order]
         for p in (0.05, 0.5, 0.95)}
    y95_hi = to_display_temperature(
        ds, select_quantile(ds["inner_surface_temperature_quantile_upper"], 0.95).values)[order]
    limit = float(to_display_temperature(ds, ds.attrs["limit"]))
    tu = pretty_unit(temperature_unit(ds))
    with styled():
        fig = Figure(figsize=(8.0, 4.6), layout="constrained")
        ax = fig.add_subplot()
        ax.set_label("sweep")
        ax.fill_between(x, y[0.05], y[0.95], color=BLUE, alpha=0.3, lw=0, gid="band_5_95",
                        label="5–95 % band")
        ax.plot(x, y[0.5], color=BLUE, lw=2.0, marker="o", ms=4, gid="median", label="median")
        ax.plot(x, y[0.95], color=BLUE, lw=1.0, ls="-", marker="s", ms=3.5, gid="p95",
                label="P95")
        conf = float(ds.attrs.get("confidence", math.nan))
        ax.plot(x, y95_hi, color=GREY, lw=1.0, ls=(0, (1, 1.5)), gid="p95_upper",
                label=f"upper {100 * conf:g} % bound of P95" if np.isfinite(conf)
                else "upper bound of P95")
        ax.axhline(limit, color=INK, ls="--", lw=1.2, gid="limit", label=f"limit {limit:.4g} {tu}")
        if crossing.status == "crosses":
            ax.plot([crossing.exposure], [limit], marker="D", ms=7, color=ORANGE,
                    markeredgecolor=INK, ls="none", gid="crossing", zorder=6,
                    label="P95 reaches the limit")
            ax.axvline(crossing.exposure, color=ORANGE, lw=1.0, ls="-.")
        ax.set_xlabel(f"{quantity.replace('_', ' ')} [{pretty_unit(unit)}]")
        ax.set_ylabel(_tlabel(ds, "inner-surface temperature"))
        ax.set_xticks(x, [f"{v:.3g}" for v in x])
        ax.grid(axis="x", visible=False)
        ax.set_title("Inner-surface temperature against the exposure")
        ax.text(0.99, 0.03, textwrap.fill(crossing.text, 70), transform=ax.transAxes,
                fontsize=8, color=INK, va="bottom", ha="right",
                bbox={"facecolor": "white", "edgecolor": "#cccccc", "lw": 0.6,
                      "boxstyle": "round,pad=0.4"})
        ax.legend(loc="upper left", ncols=2)
    return fig
