"""Figures of a transient study, drawn from its results dataset
(:func:`plyrisk.results.transient.transient_dataset`).

* :func:`bands_figure` — percentile bands of the basal (or sensor) temperature against time,
  the exposure drawn beneath, the damage onset (skin) or the criterion (sensor) marked;
* :func:`burn_time_figure` — distribution of the time to second-degree burn (or to the sensor's
  criterion) with the share of samples without it by the horizon;
* :func:`burn_sweep_figure` — P(burn) against the swept exposure with its confidence band and
  the acceptable probability;
* :func:`layer_indices_figure` — indices per layer (and per input) of a derived output.
"""

from __future__ import annotations

import math
import textwrap

import numpy as np
import xarray as xr
from matplotlib.figure import Figure

from plyrisk.report.figures.common import (
    BLUE,
    GREY,
    INK,
    ORANGE,
    add_title,
    format_percent,
    joint_rows,
    one_exposure,
    pretty_unit,
    styled,
    temperature_label,
    to_display_temperature,
)
from plyrisk.report.figures.sensitivity import _paired_bars
from plyrisk.results.dataset import is_swept

__all__ = ["bands_figure", "burn_sweep_figure", "burn_time_figure", "headline_event",
           "independent_rows", "layer_indices_figure"]

DAMAGE_ONSET = 317.15
"""Basal temperature above which the damage integral accrues, 44 degC [K] (Henriques 1947;
the onset of both published parameter sets)."""


def headline_event(ds: xr.Dataset) -> str:
    """``"second_degree_burn"`` (skin) or ``"sensor_criterion"`` (sensor)."""
    return "sensor_criterion" if ds.attrs.get("wearer_kind") == "sensor" else \
        "second_degree_burn"


def _event_source(event: str) -> str:
    return {"second_degree_burn": "time_to_second_degree_burn",
            "first_degree_burn": "time_to_first_degree_burn",
            "third_degree_burn": "time_to_third_degree_burn",
            "sensor_criterion": "sensor_criterion_time"}[event]


def independent_rows(one: xr.Dataset) -> np.ndarray:
    """Converged rows drawn from the joint input distribution, for one exposure
    (:func:`plyrisk.report.figures.common.joint_rows`)."""
    return joint_rows(one) & np.asarray(one["converged"].values, dtype=bool)


def _exposure(one: xr.Dataset) -> tuple[float, float]:
    """Exposure duration [s] and incident flux [W m-2] of one exposure (NaN where unknown)."""
    duration = float(one.attrs.get("exposure_duration", math.nan))
    flux = float(one.attrs.get("exposure_incident_flux", math.nan))
    if "scenario" in one.coords and one.attrs.get("scenario_quantity") == "exposure_duration":
        duration = float(one["scenario"].item())
    if "scenario" in one.coords and one.attrs.get("scenario_quantity") == "incident_flux":
        flux = float(one["scenario"].item())
    return duration, flux


def exposure_spread(one: xr.Dataset, name: str) -> tuple[float, float] | None:
    """P5 and P95 of an uncertain exposure input (``"duration"`` [s] or ``"incident_flux"``
    [W m-2]) over the joint draws of one exposure; ``None`` when it is fixed or not stored."""
    key = f"exposure.{name}"
    if "input" not in one or key not in [str(p) for p in one["parameter"].values]:
        return None
    x = np.asarray(one["input"].sel(parameter=key).values, dtype=float)
    x = x[independent_rows(one) & np.isfinite(x)]
    if x.size == 0:
        return None
    lo, hi = np.percentile(x, [5.0, 95.0])
    return float(lo), float(hi)


def bands_figure(ds: xr.Dataset, *, scenario: int | None = None) -> Figure:
    """Percentile bands of the basal (skin) or sensor temperature against time.

    Parameters
    ----------
    ds
        A transient results dataset.
    scenario
        Index of the exposure of a swept dataset, ``None`` otherwise.

    Returns
    -------
    matplotlib.figure.Figure
        Two panels sharing the time axis: the bands (1–99 %, 5–95 %, median) with the damage
        onset (44 degC) or the sensor's criterion as a temperature, and the exposure beneath.
    """
    label, one = one_exposure(ds, scenario)
    skin = one.attrs.get("wearer_kind") == "skin"
    name = "basal_temperature_band" if skin else "surface_temperature_band"
    if name not in one:
        raise ValueError(f"the dataset has no {name} (no statistics or no output times)")
    t = np.asarray(one["time"].values, float)
    band = one[name]
    y = {float(p): to_display_temperature(ds, band.sel(band_quantile=p).values)
         for p in band["band_quantile"].values}
    duration, flux = _exposure(one)
    horizon = float(ds.attrs.get("horizon", t[-1] if t.size else math.nan))
    with styled():
        fig = Figure(figsize=(8.0, 6.0), layout="constrained")
        top, bottom = fig.subplots(2, 1, sharex=True, height_ratios=(3.2, 1.0))
        top.set_label("bands")
        bottom.set_label("exposure")
        top.fill_between(t, y[0.01], y[0.99], color=BLUE, alpha=0.15, lw=0, label="1–99 %")
        top.fill_between(t, y[0.05], y[0.95], color=BLUE, alpha=0.3, lw=0, label="5–95 %")
        top.plot(t, y[0.5], color=BLUE, lw=2.0, label="median")
        if skin:
            onset = float(to_display_temperature(ds, DAMAGE_ONSET))
            top.axhline(onset, color=INK, ls="--", lw=1.1,
                        label="damage onset (44 °C): damage accrues above it")
            q = one["event_time_quantile"].sel(event="second_degree_burn")
            p5 = float(q.sel(quantile=0.05, method="nearest"))
            if math.isfinite(p5):
                top.axvline(p5, color=ORANGE, lw=1.4, ls="-.",
                            label=f"P5 time to second-degree burn ({p5:.3g} s)")
        else:
            _criterion_curve(top, ds, one, t)
        spread = exposure_spread(one, "duration")
        if math.isfinite(duration):
            for ax in (top, bottom):
                ax.axvspan(0.0, duration, color=ORANGE, alpha=0.10, lw=0,
                           label=f"exposure, nominal duration ({duration:.3g} s)"
                           if ax is top else None)
                if spread is not None:  # the shade is nominal: show how far the end varies
                    ax.axvspan(spread[0], spread[1], facecolor="none", edgecolor=ORANGE,
                               alpha=0.5, hatch="//", lw=0,
                               label=f"duration uncertain: P5–P95 {spread[0]:.3g}–"
                               f"{spread[1]:.3g} s" if ax is top else None)
        what = "basal-layer temperature (80 µm)" if skin else "sensor temperature"
        top.set_ylabel(temperature_label(ds, what))
        # below both panels, so that it never hides a band
        handles, labels = top.get_legend_handles_labels()
        fig.legend(handles, labels, loc="outside lower center", ncols=3 if len(labels) <= 6
                   else 2, fontsize="small")
        add_title(top, f"{what.capitalize()} against time: percentile bands", label,
                  "each time's percentiles taken separately (not the history of one sample); "
                  f"{int(one['samples_used'].item()) if 'samples_used' in one else '?'} "
                  "converged samples")
        if math.isfinite(duration) and math.isfinite(flux):
            bottom.step([0.0, 0.0, duration, duration, horizon],
                        [0.0, flux / 1e3, flux / 1e3, 0.0, 0.0], where="post", color=INK,
                        lw=1.4)
            bottom.set_ylim(0.0, flux / 1e3 * 1.25)
            bottom.set_ylabel("incident flux\n[kW/m²]")

        else:
            bottom.set_yticks([])
            bottom.set_ylabel("exposure")
        # right of the exposure's end (where the step is back at zero), never over the step
        right = duration / horizon if math.isfinite(duration) and horizon > 0 else 0.0
        note = "exposure (shaded) then cool-down to the horizon"
        flux_spread = exposure_spread(one, "incident_flux")
        if flux_spread is not None and math.isfinite(flux):
            note += (f"\nnominal flux drawn; flux uncertain: P5–P95 "
                     f"{flux_spread[0] / 1e3:.3g}–{flux_spread[1] / 1e3:.3g} kW/m²")
        bottom.text(min(right + 0.02, 0.6), 0.9, note, transform=bottom.transAxes,
                    fontsize="small", va="top", color=INK)
        bottom.set_xlabel("time from the start of the exposure [s]")
        bottom.set_xlim(0.0, horizon)
    return fig


def _criterion_curve(ax, ds: xr.Dataset, one: xr.Dataset, t: np.ndarray) -> None:
    """The sensor temperature at which the absorbed energy meets the criterion, over time."""
    from plyrisk.models.sensor import criterion_energy

    cap = float(ds.attrs.get("sensor_heat_capacity_per_area", math.nan))
    if not math.isfinite(cap) or "initial_surface_temperature" not in one:
        return
    t0 = float(np.nanmedian(one["initial_surface_temperature"].values))
    tt = t[(t >= 1.0) & (t <= 30.0)]
    if tt.size < 2:
        return
    with np.errstate(invalid="ignore"):
        temp = t0 + np.asarray(criterion_energy(tt), float) / cap
    ax.plot(tt, to_display_temperature(ds, temp), color=INK, ls="--", lw=1.1,
            label="criterion (Stoll & Chianta 1969) as a sensor temperature")


def burn_time_figure(ds: xr.Dataset, *, scenario: int | None = None) -> Figure:
    """Distribution of the time to second-degree burn (or to the sensor's criterion).

    Parameters
    ----------
    ds
        A transient results dataset.
    scenario
        Index of the exposure of a swept dataset, ``None`` otherwise.

    Returns
    -------
    matplotlib.figure.Figure
        Empirical cumulative distribution over the converged independent samples, which ends
        below 1 by the share without the event; that share is drawn as a bar at the horizon.
    """
    label, one = one_exposure(ds, scenario)
    event = headline_event(ds)
    t = np.asarray(one[_event_source(event)].values, float)[independent_rows(one)]
    horizon = float(ds.attrs["horizon"])
    n = t.size
    finite = np.sort(t[np.isfinite(t)])
    share_none = (n - finite.size) / n if n else math.nan
    what = "time to second-degree burn" if event == "second_degree_burn" else \
        "time to the sensor's criterion"
    with styled():
        fig = Figure(figsize=(8.0, 4.4), layout="constrained")
        ax = fig.add_subplot()
        ax.set_label("burn time")
        if finite.size:
            ax.step(np.concatenate([[0.0], finite, [horizon]]),
                    np.concatenate([[0.0], np.arange(1, finite.size + 1) / n,
                                    [finite.size / n]]),
                    where="post", color=BLUE, lw=2.0, label="share of samples with the event "
                    "by that time")
        ax.bar([horizon * 1.04], [share_none], width=horizon * 0.05,
               bottom=[1.0 - share_none], color=GREY, alpha=0.6, hatch="//",
               label=f"no event by the horizon: {format_percent(share_none)}")
        q = one["event_time_quantile"].sel(event=event)
        lo = one["event_time_quantile_lower"].sel(event=event)
        hi = one["event_time_quantile_upper"].sel(event=event)
        p5 = float(q.sel(quantile=0.05, method="nearest"))
        if math.isfinite(p5):
            a = float(lo.sel(quantile=0.05, method="nearest"))
            b = float(hi.sel(quantile=0.05, method="nearest"))
            ax.axvspan(a if math.isfinite(a) else 0.0, b if math.isfinite(b) else horizon,
                       color=ORANGE, alpha=0.2, lw=0, label="interval of P5")
            ax.axvline(p5, color=ORANGE, lw=1.5, ls="-.", label=f"P5 = {p5:.3g} s")
        ax.axvline(horizon, color=INK, lw=1.0, ls=":", label=f"horizon {horizon:g} s")
        ax.axhline(0.05, color=GREY, lw=0.8, ls="--",
                   label="5 % of samples (where the curve crosses it: P5)")
        ax.set_xlim(0.0, horizon * 1.1)
        ax.set_ylim(0.0, 1.02)
        ax.set_xlabel(f"{what} [s]")
        ax.set_ylabel("cumulative share of samples [-]")
        ax.legend(loc="upper left", fontsize="small")
        add_title(ax, f"Distribution of the {what}", label,
                  f"{n} converged independent samples; samples without the event by "
                  f"{horizon:g} s are censored, not given a time")
    return fig


def burn_sweep_figure(ds: xr.Dataset) -> Figure:
    """P(second-degree burn) (or the sensor's criterion) against the swept exposure.

    Parameters
    ----------
    ds
        A swept transient results dataset.

    Returns
    -------
    matplotlib.figure.Figure
    """
    if not is_swept(ds):
        raise ValueError("the dataset sweeps no exposure (its one scenario is the nominal "
                         "exposure)")
    from plyrisk.study.units import QUANTITIES, from_si

    event = headline_event(ds)
    quantity = str(ds.attrs.get("scenario_quantity", ""))
    unit = str(ds.attrs.get("scenario_display_unit", ""))
    x = np.asarray(ds["scenario"].values, float)
    spec = QUANTITIES.get(quantity)
    if spec is not None and unit:
        x = np.asarray(from_si(x, unit, spec), float)
    elif quantity == "exposure_duration":
        unit = "s"
    order = np.argsort(x, kind="stable")
    x = x[order]
    p = np.asarray(ds["event_probability"].sel(event=event).values, float)[order]
    lo = np.asarray(ds["event_probability_lower"].sel(event=event).values, float)[order]
    hi = np.asarray(ds["event_probability_upper"].sel(event=event).values, float)[order]
    acceptable = float(ds.attrs.get("acceptable_burn_probability", math.nan))
    conf = float(ds.attrs.get("confidence", math.nan))
    what = "P(second-degree burn)" if event == "second_degree_burn" else \
        "P(sensor reaches the criterion)"
    with styled():
        fig = Figure(figsize=(8.0, 4.6), layout="constrained")
        ax = fig.add_subplot()
        ax.set_label("burn sweep")
        ax.fill_between(x, 100 * lo, 100 * hi, color=BLUE, alpha=0.25, lw=0,
                        label=f"{100 * conf:g} % confidence band")
        ax.plot(x, 100 * p, color=BLUE, marker="o", lw=2.0, label=what)
        text = ""
        if math.isfinite(acceptable):
            ax.axhline(100 * acceptable, color=INK, ls="--", lw=1.1,
                       label=f"acceptable {format_percent(acceptable)}")
            if "longest_acceptable_exposure" in ds:
                v = float(ds["longest_acceptable_exposure"].item())
                if math.isfinite(v):
                    shown = float(from_si(v, unit, spec)) if spec is not None and unit else v
                    ax.plot([shown], [100 * acceptable], marker="D", ms=7, color=ORANGE,
                            markeredgecolor=INK, ls="none", label="longest acceptable exposure")
                    ax.axvline(shown, color=ORANGE, lw=1.0, ls="-.")
                    text = f"{what} ≤ {format_percent(acceptable)} up to ≈ {shown:.3g} " \
                           f"{pretty_unit(unit)} (interpolated between swept levels)"
        ax.set_xlabel(f"{quantity.replace('_', ' ')} [{pretty_unit(unit)}]")
        ax.set_ylabel(f"{what} within {float(ds.attrs['horizon']):g} s [%]")
        ax.set_ylim(0.0, 100.0)
        ax.set_xticks(x, [f"{v:.3g}" for v in x])
        ax.legend(loc="upper left", fontsize="small")
        add_title(ax, f"{what} against the exposure", textwrap.fill(text, 100) if text else
                  "Wilson intervals per swept level")
    return fig


def _wrap(names: list[str]) -> int:
    """Characters per subtitle line that fit right of the longest bar label (8 in figure)."""
    return max(40, 88 - max((len(n) for n in names), default=0))


def layer_indices_figure(ds: xr.Dataset, *, scenario: int | None = None,
                         output: str | None = None, groups: bool = True) -> Figure:
    """Sobol indices (or Shapley effects) per layer or per input of a derived output; Morris
    mu* without them.

    Parameters
    ----------
    ds
        A transient results dataset.
    scenario
        Index of the exposure of a swept dataset, ``None`` otherwise.
    output
        The derived output (default: the first, the capped time to burn).
    groups
        Per layer group (True) or per input (False).

    Returns
    -------
    matplotlib.figure.Figure
    """
    label, one = one_exposure(ds, scenario)
    output = output or str(one["output"].values[0])
    s = one.sel(output=output)
    rule = str(one[output].attrs.get("rule", "")) if output in one else ""
    with styled():
        if "sobol_total" in s:
            prefix, dim = ("sobol_group", "group") if groups else ("sobol", "parameter")
            names = [str(n).replace("_", " ") for n in s[dim].values]
            if groups:  # the exposure and the wearer are ranked too, but are not layers
                from plyrisk.analysis.transient import CONDITION_GROUPS

                names = [f"{n} (not a layer)" if str(g) in CONDITION_GROUPS else n
                         for n, g in zip(names, s[dim].values, strict=True)]
            fig = Figure(figsize=(8.0, 2.2 + 0.42 * len(names)), layout="constrained")
            ax = fig.add_subplot()
            ax.set_label("layer indices" if groups else "indices")
            first, first_ci, total, total_ci = (np.asarray(s[f"{prefix}_{v}"].values, float)
                                                for v in ("first", "first_ci", "total",
                                                          "total_ci"))
            _paired_bars(ax, names, first, first_ci, total, total_ci, None, None)
            ax.set_xlabel("Sobol index [-]")
            fit = ""
            if "surrogate_fit" in s:
                fit = str(s["surrogate_fit"].item())
            add_title(ax, ("Which layer buys the most time" if groups else
                           "Which input matters"), f"indices of {output}", label,
                      textwrap.fill(f"rule: {rule}", _wrap(names)), *([fit] if fit else []))
        elif "shapley_effect" in s:
            prefix, dim = ("shapley_group", "group") if groups else ("shapley", "parameter")
            names = [str(n).replace("_", " ") for n in s[dim].values]
            if groups:
                from plyrisk.analysis.transient import CONDITION_GROUPS

                names = [f"{n} (not a layer)" if str(g) in CONDITION_GROUPS else n
                         for n, g in zip(names, s[dim].values, strict=True)]
            fig = Figure(figsize=(8.0, 2.2 + 0.42 * len(names)), layout="constrained")
            ax = fig.add_subplot()
            ax.set_label("layer shapley" if groups else "shapley")
            eff = np.asarray(s[f"{prefix}_effect"].values, float)
            ci = np.asarray(s[f"{prefix}_effect_ci"].values, float)
            order = np.argsort(-np.nan_to_num(eff, nan=-np.inf), kind="stable")
            ax.barh([names[j] for j in order], eff[order], xerr=ci[order], color=BLUE,
                    alpha=0.8, capsize=3)
            ax.invert_yaxis()
            ax.axvline(0.0, color="0.4", lw=0.8)
            ax.set_xlabel("Shapley effect [-] (share of the variance; the effects add up to 1)")
            add_title(ax, ("Which layer buys the most time" if groups else
                           "Which input matters"), f"Shapley effects of {output}", label,
                      textwrap.fill(f"rule: {rule}", _wrap(names)))
        elif "morris_mu_star" in s:
            names = [str(n) for n in s["parameter"].values]
            fig = Figure(figsize=(8.0, 2.2 + 0.42 * len(names)), layout="constrained")
            ax = fig.add_subplot()
            ax.set_label("morris")
            mu = np.asarray(s["morris_mu_star"].values, float)
            ci = np.asarray(s["morris_mu_star_ci"].values, float)
            ax.barh(names, mu, xerr=ci, color=BLUE, alpha=0.8)
            ax.invert_yaxis()
            ax.set_xlabel(f"Morris mu* of {output} [{s[output].attrs.get('units', '')}"
                          " per grid step]" if output in s else "Morris mu*")
            add_title(ax, f"Screening: Morris mu* of {output}", label,
                      textwrap.fill(f"rule: {rule}", _wrap(names)))
        else:
            raise ValueError("the dataset has no indices (sobol_*, shapley_* or morris_*)")
    return fig
