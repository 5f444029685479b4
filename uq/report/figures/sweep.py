"""The exposure sweep: the inner-surface temperature band against the swept exposure level.

:func:`limit_crossing` reads off where P95 (and its upper confidence bound) reaches the limit;
:func:`sweep_figure` draws the 5–50–95 % band with that read-off. The swept exposure is shown in
``attrs["scenario_display_unit"]``. Re-exported by :mod:`plyrisk.report.figures.outputs`.
"""

from __future__ import annotations

import math
import textwrap
from dataclasses import dataclass

import numpy as np
import xarray as xr
from matplotlib.figure import Figure

from plyrisk.report.figures.common import (
    BLUE,
    GREY,
    INK,
    ORANGE,
    add_title,
    format_limit_value,
    format_percent,
    format_temperature,
    inner_limit,
    limit_quantile_variables,
    pretty_unit,
    select_quantile,
    styled,
    temperature_label,
    temperature_unit,
    to_display_temperature,
)
from plyrisk.results.dataset import is_swept
from plyrisk.study.units import QUANTITIES, from_si

__all__ = ["LimitCrossing", "exceedance_sweep_figure", "limit_crossing", "sweep_figure"]


@dataclass(frozen=True)
class LimitCrossing:
    """Where the 95th percentile of the inner-surface temperature reaches the limit.

    Attributes
    ----------
    status
        ``"crosses"``, ``"below"`` (stays below over the swept range), ``"above"`` (exceeds at
        every swept level) or ``"unavailable"`` (no finite P95).
    exposure
        Exposure at which P95 reaches the limit, by linear interpolation between the two swept
        levels around the first crossing; NaN unless ``status == "crosses"`` [display unit].
    upper_bound_exposure
        The same read-off for the upper confidence bound of P95 (a cautious reading); NaN when
        that bound does not cross within the swept range [display unit].
    quantity
        The swept hot-side quantity, e.g. ``"incident_flux"``.
    unit
        Display unit of the exposure.
    text
        One sentence for the figure and the report.
    """

    status: str
    exposure: float
    upper_bound_exposure: float
    quantity: str
    unit: str
    text: str


def _sweep(ds: xr.Dataset) -> tuple[np.ndarray, str, str]:
    if not is_swept(ds):
        raise ValueError("the dataset sweeps no exposure (its one scenario is the nominal "
                         "exposure)")
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
        A results dataset with a ``scenario`` dimension.

    Returns
    -------
    LimitCrossing
    """
    x, quantity, unit = _sweep(ds)
    limit = float(ds.attrs["limit"])
    q_est, _, q_upper = limit_quantile_variables(ds)  # of the output the limit applies to
    est = np.asarray(select_quantile(q_est, 0.95), float)
    upper = np.asarray(select_quantile(q_upper, 0.95), float)
    order = np.argsort(x, kind="stable")
    x, est, upper = x[order], est[order], upper[order]
    ok = np.isfinite(est)
    status, at = _first_crossing(x[ok], est[ok], limit)
    ok_u = np.isfinite(upper)
    status_u, at_u = _first_crossing(x[ok_u], upper[ok_u], limit)
    u = pretty_unit(unit)
    t_lim = format_limit_value(ds, limit)
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
        A results dataset with a ``scenario`` dimension.

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
    limit = float(to_display_temperature(ds, inner_limit(ds)))
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
        if np.isfinite(limit):
            ax.axhline(limit, color=INK, ls="--", lw=1.2, gid="limit",
                       label=f"limit {limit:.4g} {tu}")
        if crossing.status == "crosses" and np.isfinite(limit):
            ax.plot([crossing.exposure], [limit], marker="D", ms=7, color=ORANGE,
                    markeredgecolor=INK, ls="none", gid="crossing", zorder=6,
                    label="P95 reaches the limit")
            ax.axvline(crossing.exposure, color=ORANGE, lw=1.0, ls="-.")
        ax.set_xlabel(f"{quantity.replace('_', ' ')} [{pretty_unit(unit)}]")
        ax.set_ylabel(temperature_label(ds, "inner-surface temperature"))
        ax.set_xticks(x, [f"{v:.3g}" for v in x])
        ax.grid(axis="x", visible=False)
        ax.set_title("Inner-surface temperature against the exposure")
        ax.text(0.99, 0.03, textwrap.fill(crossing.text, 70), transform=ax.transAxes,
                fontsize="small", color=INK, va="bottom", ha="right",
                bbox={"facecolor": "white", "edgecolor": "#cccccc", "lw": 0.6,
                      "boxstyle": "round,pad=0.4"})
        ax.legend(loc="upper left", ncols=2)
    return fig


def exceedance_sweep_figure(ds: xr.Dataset, *, target: float | None = None) -> Figure:
    """P(inner surface > limit) against the swept exposure, with its confidence band and the
    target probability.

    Parameters
    ----------
    ds
        A results dataset with a ``scenario`` dimension.
    target
        Largest acceptable exceedance probability, e.g. 0.01 from a ``[tolerances]`` target
        ``"P(exceed) <= 1 %"``; ``None`` draws no target.

    Returns
    -------
    matplotlib.figure.Figure

    Raises
    ------
    ValueError
        When the dataset sweeps no exposure.
    """
    x, quantity, unit = _sweep(ds)
    order = np.argsort(x, kind="stable")
    x = x[order]
    p, lo, hi = (100 * np.asarray(ds[v].values, dtype=float)[order] for v in (
        "exceedance_probability", "exceedance_probability_lower",
        "exceedance_probability_upper"))
    limit = format_temperature(ds, float(ds.attrs["limit"]))
    conf = float(ds.attrs.get("confidence", math.nan))
    with styled():
        fig = Figure(figsize=(8.0, 4.6), layout="constrained")
        ax = fig.add_subplot()
        ax.set_label("exceedance sweep")
        ax.fill_between(x, lo, hi, color=BLUE, alpha=0.25, lw=0, gid="exceedance_band",
                        label=(f"{100 * conf:g} % confidence band" if np.isfinite(conf)
                               else "confidence band"))
        ax.plot(x, p, color=BLUE, marker="o", lw=2.0, gid="exceedance",
                label=f"P(inner surface > {limit})")
        if target is not None and np.isfinite(target):
            ax.axhline(100 * target, color=INK, ls="--", lw=1.1, gid="target",
                       label=f"target {format_percent(target)}")
        ax.set_xlabel(f"{quantity.replace('_', ' ')} [{pretty_unit(unit)}]")
        ax.set_ylabel("probability of exceeding the limit [%]")
        top = np.nanmax(np.concatenate([hi, [100 * target if target else 0.0]]))
        ax.set_ylim(0.0, min(100.0, 1.15 * top) if np.isfinite(top) and top > 0 else 1.0)
        ax.set_xticks(x, [f"{v:.3g}" for v in x])
        ax.grid(axis="x", visible=False)
        ax.legend(loc="upper left")
        add_title(ax, "Probability of exceeding the limit against the exposure",
                  "straight lines join the swept levels; nothing is computed between them")
    return fig
