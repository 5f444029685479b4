"""Figures of a results dataset: one pure function per figure, each returning a matplotlib Figure.

The functions read a results dataset (:func:`plyrisk.results.dataset.to_dataset`) and draw with the
object-oriented API (:class:`matplotlib.figure.Figure`, no pyplot state, no display backend);
they never write files — :mod:`plyrisk.report.html` saves them. Temperatures are shown in the unit
of the
limit (``attrs["limit_display_unit"]``), parameters in the unit the user gave them
(``parameter_unit``), the swept exposure in ``attrs["scenario_display_unit"]``.

This module holds the figures of the response at one exposure — the temperature profile
through the assembly, the distribution of the inner-surface temperature and its scatter
against the most influential inputs — and is the one place to import every figure from: it
re-exports the shared look, units and selections (:mod:`plyrisk.report.figures.common`), the
sensitivity
figures (:mod:`plyrisk.report.figures.sensitivity`) and the exposure sweep
(:mod:`plyrisk.report.figures.sweep`).

Every figure uses one look (:data:`STYLE`) and a palette that stays distinguishable in greyscale
and for colour-blind readers: dark blue, orange and grey, backed up by hatches and line styles.
Artists that carry data have a ``gid`` (``"median"``, ``"band_5_95"``, ``"band_1_99"``,
``"limit"``, ``"p95"``, ``"ecdf"``, ``"crossing"``) so that tests can read them back.
"""

from __future__ import annotations

import math

import numpy as np
import xarray as xr
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import Patch

from plyrisk.report.figures.common import (
    BLUE,
    GAP_FILL,
    GREY,
    INK,
    ORANGE,
    PRIMARY,
    SOLID_FILL,
    STYLE,
    add_title,
    format_percent,
    format_temperature,
    independent_mask,
    inner_limit,
    one_exposure,
    parameter_values,
    pretty_unit,
    select_quantile,
    styled,
    surrogate_view,
    temperature_label,
    temperature_unit,
    to_display_temperature,
)
from plyrisk.report.figures.sensitivity import (
    group_indices_figure,
    growth_figure,
    indices_figure,
    surrogate_indices_figure,
)
from plyrisk.report.figures.sweep import (
    LimitCrossing,
    exceedance_sweep_figure,
    limit_crossing,
    sweep_figure,
)

__all__ = [
    "BLUE",
    "surrogate_view",
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
    "exceedance_sweep_figure",
    "group_indices_figure",
    "growth_figure",
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
        A results dataset.
    scenario
        Index of the exposure for a swept dataset, ``None`` otherwise.

    Returns
    -------
    matplotlib.figure.Figure
    """
    label, one = one_exposure(ds, scenario)
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
    lim_k = (float(one.attrs["limit"]) if str(one.attrs.get("limit_output", "")) in
             [str(f) for f in faces] else inner_limit(one))  # a limit on a face temperature
    limit = float(to_display_temperature(one, lim_k))
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
        if np.isfinite(limit):
            ax.axhline(limit, color=INK, ls="--", lw=1.2, zorder=5, gid="limit",
                       label=f"limit {limit:.4g} {pretty_unit(temperature_unit(one))}")
        inner = int(one.attrs.get("inner_surface_index", len(faces) - 1))
        right = span > 0 and x[inner] > 0.7 * span
        ax.annotate("inner surface", (x[inner], band[0.5][inner]),
                    xytext=(-8 if right else 8, 14), ha="right" if right else "left",
                    textcoords="offset points", fontsize="small", color=INK,
                    arrowprops={"arrowstyle": "-", "color": INK, "lw": 0.6})
        shown = np.concatenate([band[0.01], band[0.99], [limit]])
        shown = shown[np.isfinite(shown)]
        lo, hi = (shown.min(), shown.max()) if shown.size else (0.0, 1.0)
        pad = 0.06 * (hi - lo if hi > lo else 1.0)
        ax.set_ylim(lo - pad, hi + pad)
        ax.set_xlim(0.0, span if span > 0 else 1.0)
        ax.set_xlabel("distance from the exposed face [mm]")
        ax.set_ylabel(temperature_label(one, "temperature"))
        ax.text(0.005, 0.015, "exposed side", transform=ax.transAxes, fontsize="small",
                style="italic", color=GREY, ha="left", va="bottom")
        ax.text(0.995, 0.015, "skin" if faces[-1] == "skin surface" else "inner side",
                transform=ax.transAxes, fontsize="small", style="italic", color=GREY, ha="right",
                va="bottom")
        # the label strip: element names, staggered so that none overlap, with leader lines
        head.set_ylim(0.0, n_rows + 0.15)
        head.axis("off")
        for i, name in enumerate(names):
            y = rows[i] + 0.35
            head.text(lx[i], y, name, ha="center", va="bottom", fontsize="small", color=INK)
            head.plot([mids[i], lx[i]], [0.0, y - 0.05], color=GREY, lw=0.6)
        add_title(head, "Temperature through the assembly", label,
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
# 2. Distribution of the inner-surface temperature
# ----------------------------------------------------------------------------------------------


def distribution_figure(ds: xr.Dataset, *, scenario: int | None = None) -> Figure:
    """Histogram and empirical CDF of the inner-surface temperature, with the limit and P95.

    Uses the independent, converged samples only (:func:`independent_mask`); the exceedance
    probability and its confidence interval are written on the figure.

    Parameters
    ----------
    ds
        A results dataset.
    scenario
        Index of the exposure for a swept dataset, ``None`` otherwise.

    Returns
    -------
    matplotlib.figure.Figure
    """
    label, one = one_exposure(ds, scenario)
    mask = independent_mask(one)
    t = to_display_temperature(one, one["inner_surface_temperature"].values[mask])
    unit = pretty_unit(temperature_unit(one))
    limit = float(to_display_temperature(one, inner_limit(one)))
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
            if np.isfinite(limit):
                ax.axvline(limit, color=INK, ls="--", lw=1.2, gid="limit")
        bottom.axhline(0.95, color=GREY, lw=0.7, ls="-.")
        bottom.set_ylim(0.0, 1.02)
        top.set_ylabel(f"probability density [1/{unit}]")
        bottom.set_ylabel("cumulative probability")
        bottom.set_xlabel(temperature_label(one, "inner-surface temperature"))
        e, lo_, hi_ = (float(one[v].item()) for v in ("exceedance_probability",
                                                        "exceedance_probability_lower",
                                                        "exceedance_probability_upper"))
        c = f"{100 * conf:g} %" if np.isfinite(conf) else "confidence"
        pct = format_percent
        # The numbers go above the axes, never over the data (a box inside the axes hid the
        # peak of the histogram).
        add_title(top, "Distribution of the inner-surface temperature", label,
                  f"P(T > {limit:.4g} {unit}) = {pct(e)} [{pct(lo_)}, {pct(hi_)}];  "
                  f"P95 = {p95:.1f} {unit} [{p95_lo:.1f}, {p95_hi:.1f}]  ({c} intervals)",
                  f"{int(one['samples_used'].item())} independent, converged samples; "
                  f"{int(one['nonconverged_count'].item())} not converged")
        handles = [Patch(facecolor=BLUE, label="samples"),
                   Line2D([], [], color=ORANGE, ls=":", lw=2.0, label="P95 (shade: interval)"),
                   Line2D([], [], color=INK, ls="--", lw=1.2, label=f"limit {limit:.4g} {unit}")]
        fig.legend(handles=handles, loc="outside lower center", ncols=3)
    return fig


# ----------------------------------------------------------------------------------------------
# 3. Scatter against the most influential parameters
# ----------------------------------------------------------------------------------------------


def top_parameters(ds: xr.Dataset, *, scenario: int | None = None, count: int = 3) -> list[str]:
    """The ``count`` most influential parameters: by ``parameter_rank`` of the inner-surface
    temperature (Sobol), else by the surrogate's total index (``pce_total``) when there is
    one, else by the magnitude of ``rank_correlation``."""
    _, one = one_exposure(ds, scenario)
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
        A results dataset.
    scenario
        Index of the exposure for a swept dataset, ``None`` otherwise.
    count
        Number of parameters (panels).

    Returns
    -------
    matplotlib.figure.Figure
    """
    label, one = one_exposure(ds, scenario)
    chosen = top_parameters(ds, scenario=scenario, count=count)
    mask = independent_mask(one)
    t = to_display_temperature(one, one["inner_surface_temperature"].values[mask])
    limit = float(to_display_temperature(one, inner_limit(one)))
    names = [str(n) for n in one["parameter"].values]
    with styled():
        fig = Figure(figsize=(8.0, 4.2), layout="constrained")
        axes = np.atleast_1d(fig.subplots(1, max(len(chosen), 1), sharey=True, squeeze=False)[0])
        for ax, name in zip(axes, chosen, strict=False):
            ax.set_label(f"scatter:{name}")
            values, unit = parameter_values(one, name)
            ax.scatter(values[mask], t, s=6, color=BLUE, alpha=0.45, lw=0, rasterized=True,
                       gid=f"points:{name}")
            over = t > limit  # the samples over the limit, marked on top of the others
            if np.any(over):
                ax.scatter(values[mask][over], t[over], s=14, marker="^", color=ORANGE,
                           edgecolor=INK, lw=0.3, rasterized=True, gid=f"over:{name}")
            if np.isfinite(limit):
                ax.axhline(limit, color=INK, ls="--", lw=1.1)
            group, quantity = _split(name)
            xlabel = f"{quantity} [{pretty_unit(unit)}]"
            ax.set_xlabel(xlabel if len(xlabel) <= 24 else xlabel.replace(" [", "\n["))
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
            ax.set_title(f"{group}\n{note}", fontsize="medium", fontweight="normal")
        axes[0].set_ylabel(temperature_label(one, "inner-surface temperature"))
        fig.suptitle("Inner-surface temperature against the top inputs"
                     + (f"\n{label}" if label else ""), x=0.01, ha="left", fontsize="large",
                     fontweight="bold")
        n_over = int(np.sum(t > limit))
        fig.legend(handles=[  # below the panels, never over the samples
            Line2D([], [], color=INK, ls="--", lw=1.1,
                   label=f"limit {limit:.4g} {pretty_unit(temperature_unit(one))}"),
            Line2D([], [], ls="", marker="^", color=ORANGE, markeredgecolor=INK, mew=0.3,
                   label=f"over the limit ({n_over} of {t.size} samples)")],
            loc="outside lower center", ncols=2)
    return fig

