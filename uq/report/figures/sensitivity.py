"""Sensitivity figures: Sobol indices per parameter and per layer, or the screening chart.

For ``method = "saltelli"`` the Saltelli estimates of the first-order and total indices are drawn
as paired bars with their bootstrap intervals (unconverged ones hatched); for other designs the
rank-correlation screening chart, and, when the dataset carries them, the indices of the
polynomial-chaos surrogate (``pce_*``). Re-exported by :mod:`plyrisk.report.figures.outputs`.
"""

from __future__ import annotations

import numpy as np
import xarray as xr
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import Patch

from plyrisk.report.figures.common import (
    BLUE,
    GREY,
    INK,
    ORANGE,
    PRIMARY,
    add_title,
    one_exposure,
    styled,
)
from plyrisk.results.dataset import scenario_labels
from plyrisk.text.indices import layer_label

__all__ = ["group_indices_figure", "growth_figure", "indices_figure",
           "surrogate_indices_figure"]


def _what(output: str) -> str:
    return "inner-surface temperature" if output == PRIMARY else output.replace("_", " ")


def _paired_bars(ax, names: list[str], first, first_ci, total, total_ci, converged,
                 threshold: float | None) -> None:
    first, first_ci, total, total_ci = (np.asarray(v, dtype=float) for v in
                                        (first, first_ci, total, total_ci))
    converged = (np.ones(len(names), dtype=bool) if converged is None
                 else np.asarray(converged, dtype=bool))
    order = np.argsort(-np.nan_to_num(total, nan=-np.inf), kind="stable")
    y = np.arange(len(order))[::-1].astype(float)
    h = 0.38
    for values, cis, dy, colour, gid in ((total, total_ci, h / 2, BLUE, "total"),
                                         (first, first_ci, -h / 2, ORANGE, "first")):
        # one call per kind of bar (each bar keeps its gid and hatch): far fewer artists to
        # build than one bar and one error bar per index
        shown = np.isfinite(values[order])
        rows, at = order[shown], y[shown] + dy
        for pos in y[~shown] + dy:
            ax.text(0.0, pos, " n/a", va="center", fontsize="small", color=GREY)
        if rows.size:
            bars = ax.barh(at, values[rows], height=h, color=colour, edgecolor="white", lw=0.0)
            for bar, j in zip(bars.patches, rows, strict=True):
                bar.set_gid(f"{gid}:{names[j]}")
                if not converged[j]:
                    bar.set_hatch("////")
        ci = np.isfinite(cis[rows])
        if ci.any():
            ax.errorbar(values[rows][ci], at[ci], xerr=cis[rows][ci], fmt="none", ecolor=INK,
                        elinewidth=0.9, capsize=2.5)
    for pos, j in zip(y, order, strict=True):
        if not converged[j]:
            right = max(np.nan_to_num(total[j] + np.nan_to_num(total_ci[j])),
                        np.nan_to_num(first[j] + np.nan_to_num(first_ci[j])), 0.0)
            ax.text(right + 0.02, pos, "unconverged", va="center", fontsize="small", color=INK,
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
                         f"{one.attrs.get('method')!r}); they need method = 'saltelli'")
    outputs = [str(o) for o in one["output"].values]
    if output not in outputs:
        raise ValueError(f"unknown output {output!r}; valid: {', '.join(outputs)}")
    return one.sel(output=output)


def indices_figure(ds: xr.Dataset, *, scenario: int | None = None,
                   output: str = PRIMARY) -> Figure:
    """Sobol first and total indices per parameter, or the rank-correlation screening chart.

    For ``method = "saltelli"``: paired horizontal bars (total, first-order) with their bootstrap
    confidence intervals, sorted by the total index; unconverged indices
    (``index_converged`` False) are hatched, labelled and listed in the legend. For other
    methods: the Spearman rank correlation of each input with the inner-surface temperature,
    sorted by magnitude and titled as a screening measure.

    Parameters
    ----------
    ds
        A results dataset.
    scenario
        Index of the exposure for a swept dataset, ``None`` otherwise.
    output
        Output the indices refer to (Sobol only).

    Returns
    -------
    matplotlib.figure.Figure
    """
    label, one = one_exposure(ds, scenario)
    names = [str(n) for n in one["parameter"].values]
    with styled():
        fig = Figure(figsize=(8.0, 1.6 + 0.42 * len(names)), layout="constrained")
        ax = fig.add_subplot()
        ax.set_label("indices")
        if "sobol_total" not in one:
            _screening(ax, one, names)
            add_title(ax, "Screening only: rank correlation", label,
                      "with the inner-surface temperature: a measure of monotone influence;",
                      "it does not apportion variance or show interactions;",
                      "Sobol indices need method = \"saltelli\" or \"pce\" (this study: "
                      f"{one.attrs.get('method')}, {one.attrs.get('evaluations')} samples)")
            return fig
        s = _sobol_output(one, output)
        _paired_bars(ax, names, s["sobol_first"].values, s["sobol_first_ci"].values,
                     s["sobol_total"].values, s["sobol_total_ci"].values,
                     s["index_converged"].values,
                     s["index_converged"].attrs.get("threshold"))
        ax.set_xlabel("Sobol index")
        add_title(ax, f"Sobol indices of the {_what(output)}", label, _design_note(one))
    return fig


def _screening(ax, one: xr.Dataset, names: list[str]) -> None:
    rho = np.asarray(one["rank_correlation"].values, dtype=float)
    order = np.argsort(-np.nan_to_num(np.abs(rho), nan=-1.0), kind="stable")
    y = np.arange(len(order))[::-1].astype(float)
    for pos, j in zip(y, order, strict=True):
        if not np.isfinite(rho[j]):
            ax.text(0.02, pos, "n/a (input or output constant)", va="center", fontsize="small",
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
    ax.set_xlabel("Spearman rank correlation ρ")
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
        A results dataset with ``method = "saltelli"``.
    scenario
        Index of the exposure for a swept dataset, ``None`` otherwise.
    output
        Output the indices refer to.

    Returns
    -------
    matplotlib.figure.Figure
    """
    label, one = one_exposure(ds, scenario)
    s = _sobol_output(one, output)
    if "sobol_group_total" not in s:
        raise ValueError("the dataset has no grouped Sobol indices")
    groups = [layer_label(str(g), spaced=True) for g in s["group"].values]
    with styled():
        fig = Figure(figsize=(8.0, 1.6 + 0.42 * len(groups)), layout="constrained")
        ax = fig.add_subplot()
        ax.set_label("group indices")
        _paired_bars(ax, groups, s["sobol_group_first"].values, s["sobol_group_first_ci"].values,
                     s["sobol_group_total"].values, s["sobol_group_total_ci"].values,
                     s["group_index_converged"].values,
                     s["group_index_converged"].attrs.get("threshold"))
        ax.set_xlabel("Sobol index of the layer's parameters together")
        add_title(ax, "Which layer dominates", label,
                  f"grouped Sobol indices of the {_what(output)}: each layer's parameters varied "
                  "together", _design_note(one))
    return fig


def surrogate_indices_figure(ds: xr.Dataset, *, scenario: int | None = None,
                             groups: bool = False) -> Figure:
    """Sobol indices of the inner-surface temperature from the polynomial-chaos surrogate.

    For designs without a Saltelli structure (method = "pce") the dataset may carry indices from
    a surrogate fitted to the samples (``pce_*``); they are drawn as paired bars with their
    bootstrap intervals and titled with the surrogate's order and leave-one-out Q2 — they are
    only as good as the fit.

    Parameters
    ----------
    ds
        A results dataset holding ``pce_total``.
    scenario
        Index of the exposure for a swept dataset, ``None`` otherwise.
    groups
        Per layer group (``pce_group_*``) instead of per parameter.

    Returns
    -------
    matplotlib.figure.Figure
    """
    label, one = one_exposure(ds, scenario)
    prefix = "pce_group" if groups else "pce"
    if f"{prefix}_total" not in one:
        raise ValueError("the dataset has no surrogate indices (pce_*); they exist for "
                         "method = 'pce' when a surrogate could be fitted")
    dim = "group" if groups else "parameter"
    names = [layer_label(str(n), spaced=True) if groups else str(n) for n in one[dim].values]
    q2, order = float(one["pce_q2"].item()), int(one["pce_order"].item())
    with styled():
        fig = Figure(figsize=(8.0, 1.9 + 0.42 * len(names)), layout="constrained")
        ax = fig.add_subplot()
        ax.set_label("surrogate group indices" if groups else "surrogate indices")
        first, first_ci, total, total_ci = (one[f"{prefix}_{v}"].values for v in
                                            ("first", "first_ci", "total", "total_ci"))
        _paired_bars(ax, names, first, first_ci, total, total_ci, None, None)
        ax.set_xlabel("Sobol index from the surrogate")
        fit = (f"polynomial-chaos surrogate of order {order}, leave-one-out Q2 = {q2:.3f}"
               if np.isfinite(q2) else "no surrogate could be fitted")
        add_title(ax, "Sobol indices from a surrogate " + ("per layer" if groups else
                                                             "per parameter"),
                  label, f"{fit}; {one.attrs.get('evaluations')} {one.attrs.get('method')} samples",
                  "trust these indices only when Q2 is close to 1")
    return fig



def growth_figure(ds: xr.Dataset, *, count: int = 5) -> Figure:
    """The total Sobol indices of the top parameters against the base samples, step by step,
    for a study grown with ``--until-converged`` (one panel per exposure).

    Parameters
    ----------
    ds
        A results dataset with the growth path (``growth_sobol_total``).
    count
        Parameters drawn: the ``count`` largest total indices at the last step.

    Returns
    -------
    matplotlib.figure.Figure

    Raises
    ------
    ValueError
        When the dataset holds no growth path.
    """
    if "growth_sobol_total" not in ds:
        raise ValueError("the dataset holds no growth path (run with --until-converged)")
    n = np.asarray(ds["growth_base_samples"].values, dtype=float)
    total = np.asarray(ds["growth_sobol_total"].values, dtype=float)
    half = np.asarray(ds["growth_sobol_total_ci"].values, dtype=float)
    if total.ndim == 2:
        total, half = total[:, None, :], half[:, None, :]
    names = [str(v) for v in ds["parameter"].values]
    labels = scenario_labels(ds) if total.shape[1] == ds.sizes.get("scenario", 1) else (
        [""] * total.shape[1])
    target = float(ds.attrs.get("growth_target", np.nan))
    styles = ["-", "--", "-.", ":", (0, (5, 1, 1, 1))]
    colours = [BLUE, ORANGE, GREY, INK, BLUE]
    with styled():
        k = total.shape[1]
        fig = Figure(figsize=(8.0, 2.4 + 2.6 * k), layout="constrained")
        axes = np.atleast_1d(fig.subplots(k, 1, sharex=True, squeeze=False)[:, 0])
        for s, ax in enumerate(axes):
            ax.set_label(f"growth:{s}")
            last = np.nan_to_num(total[-1, s], nan=-np.inf)
            top = np.argsort(-last, kind="stable")[:count]
            for r, j in enumerate(top):
                ax.errorbar(n, total[:, s, j], yerr=half[:, s, j], color=colours[r % 5],
                            ls=styles[r % 5], marker="o", ms=3.5, lw=1.4, capsize=2.5,
                            label=names[j], gid=f"growth:{s}:{names[j]}")
            ax.set_xscale("log", base=2)
            ax.set_xticks(n, [f"{int(v)}" for v in n])
            ax.minorticks_off()
            ax.set_ylabel("total Sobol index")
            if labels[s]:
                ax.set_title(labels[s].replace("_", " "), loc="left", fontsize="medium",
                             fontweight="normal")
            ax.legend(loc="best", fontsize="small")
        axes[-1].set_xlabel("base samples N (each doubling reuses every earlier model run)")
        fig.suptitle("Convergence of the top total indices as the study grew", x=0.01,
                     ha="left", fontweight="bold")
        sub = ("bars: confidence half-width of each index; target half-width "
               f"±{target:g}" if np.isfinite(target) else "bars: confidence half-width")
        path = str(ds.attrs.get("growth_output", "inner_surface_temperature"))
        if path != "inner_surface_temperature":  # a transient study: name the derived output
            sub = f"indices of {path}; {sub}"
        axes[0].annotate(sub, xy=(0.0, 1.0), xycoords="axes fraction", xytext=(0, 18),
                         textcoords="offset points", va="bottom", ha="left",
                         fontsize="small", color=GREY)
    return fig
