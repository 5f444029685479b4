"""What every figure shares: the plyrisk look, display units and the selections figures make.

The figure modules (:mod:`plyrisk.report.figures.outputs`,
:mod:`plyrisk.report.figures.sensitivity`, :mod:`plyrisk.report.figures.sweep`)
draw with one look (:data:`STYLE`) and a palette that stays distinguishable in greyscale and for
colour-blind readers: dark blue, orange and grey, backed up by hatches and line styles.
Temperatures are shown in the unit of the limit (``attrs["limit_display_unit"]``), parameters in
the unit the user gave them (``parameter_unit``). The selections pick one exposure, one quantile,
the independent converged samples or one parameter's samples out of a results dataset
(:func:`plyrisk.results.dataset.to_dataset`). Everything here is re-exported by
:mod:`plyrisk.report.figures.outputs`.
"""

from __future__ import annotations

import math
import os
import sys
import warnings
from collections.abc import Iterator, Sequence
from contextlib import contextmanager
from pathlib import Path
from typing import Any

import matplotlib as mpl
import numpy as np
import xarray as xr
from matplotlib.rcsetup import cycler

from plyrisk.results.dataset import is_swept, with_scenario_dim
from plyrisk.study.units import QUANTITIES, TEMPERATURE, from_si

__all__ = [
    "BLUE",
    "GAP_FILL",
    "GREY",
    "INK",
    "ORANGE",
    "PRIMARY",
    "SOLID_FILL",
    "STYLE",
    "add_title",
    "format_percent",
    "format_temperature",
    "independent_mask",
    "one_exposure",
    "parameter_values",
    "pretty_unit",
    "save_figures",
    "select_quantile",
    "styled",
    "temperature_label",
    "temperature_unit",
    "to_display_temperature",
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

STYLE: dict[Any, Any] = {  # rcParams (matplotlib types their names as literals)
    "font.family": "DejaVu Sans",
    "font.size": 11.5,  # every other size is relative to it
    "axes.titlesize": "large",
    "axes.titleweight": "bold",
    "axes.titlelocation": "left",
    "axes.labelsize": "medium",
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
    "xtick.labelsize": "small",
    "ytick.labelsize": "small",
    "legend.frameon": False,
    "legend.fontsize": "small",
    "figure.facecolor": "white",
    "figure.dpi": 100.0,
    "hatch.linewidth": 0.6,
    "svg.fonttype": "path",
    "svg.hashsalt": "plyrisk",
    "axes.prop_cycle": cycler(color=[BLUE, ORANGE, GREY]),
}
"""The plyrisk look: rcParams applied while a figure is built (and saved, by
:mod:`plyrisk.report.html`). Every figure is 8 in wide and every text size is relative to
``font.size``, chosen so that the smallest text ("small") stays about 11 px high when the
report is read in an 800 px wide window (``tests/report/test_figures.py`` checks it)."""


@contextmanager
def styled() -> Iterator[None]:
    """Context in which :data:`STYLE` applies (figures are built and saved inside it)."""
    with mpl.rc_context(STYLE):
        yield


# ----------------------------------------------------------------------------------------------
# Saving: each figure drawn once per format, in two processes where that pays
# ----------------------------------------------------------------------------------------------

SAVE_OPTIONS: dict[str, dict[str, Any]] = {
    # zlib level 3 instead of PIL's 6: on the garment demo's 16 figures 0.50 s of encoding
    # instead of 0.81 s for files 2 % larger (measured once on the shared 2-core machine)
    "png": {"dpi": 150, "metadata": {"Software": None}, "pil_kwargs": {"compress_level": 3}},
    "svg": {"metadata": {"Date": None}},
}
"""``savefig`` options per figure format (reproducible files: no software or date stamp)."""

PARALLEL_MIN_FIGURES = 4
"""Fewest figures worth a second process: below this the fork costs more than it saves."""


def _render(stem: str, figure: Any, folder: Path, formats: Sequence[str]) -> list[Path]:
    """Draw one figure once per format. The layout engine runs once, before the first draw,
    at that format's resolution; the positions it found are kept for every format (no layout
    engine left on the figure, so ``savefig`` draws each file once instead of a layout draw
    followed by the real one)."""
    _lay_out(figure, formats[0])
    paths = []
    for fmt in formats:
        path = folder / f"{stem}.{fmt}"
        figure.savefig(path, format=fmt, **SAVE_OPTIONS[fmt])
        paths.append(path)
    return paths


def _lay_out(figure: Any, fmt: str) -> None:
    """Run the figure's layout engine once at the resolution ``fmt`` is saved at and fix the
    positions found (the layout engine is removed). ``savefig`` with a layout engine draws the
    whole figure twice (a draw without output that runs the layout, then the real one); the
    layout engine alone measures only what it places, so this saves most of the first draw."""
    engine = figure.get_layout_engine()
    if engine is None:
        return
    from matplotlib import cbook
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    dpi = SAVE_OPTIONS[fmt].get("dpi", 72.0 if fmt == "svg" else figure.dpi)
    if not isinstance(figure.canvas, FigureCanvasAgg):
        FigureCanvasAgg(figure)
    with cbook._setattr_cm(figure, dpi=dpi):
        engine.execute(figure)
    figure.set_layout_engine(None)


def _processes(count: int, processes: int | None) -> int:
    if processes is not None:
        return max(1, min(int(processes), count))
    if count < PARALLEL_MIN_FIGURES or sys.platform != "linux":  # fork: Linux only
        return 1
    cores = len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else 1
    return max(1, min(2, cores))


def save_figures(figures: Sequence[tuple[str, Any]], folder: str | Path, *,
                 formats: Sequence[str] = ("png",), processes: int | None = None) -> list[Path]:
    """Write every figure as ``<folder>/<stem>.<format>``, each drawn once per format.

    A figure may be given as a function of no arguments that builds it: it is then built in
    the process that draws it. With two or more cores (and at least
    :data:`PARALLEL_MIN_FIGURES` figures) a forked process takes figures from the same queue as
    this one (each takes the next figure not yet taken, so a process held up by other work
    takes fewer); a figure the other process did not write (it failed) is drawn here
    afterwards, so nothing is dropped. The files are the same whichever process drew them.
    Call inside :func:`styled` (a forked process keeps the style).

    Parameters
    ----------
    figures
        ``(stem, figure)`` pairs: a matplotlib Figure, or a function of no arguments returning
        one.
    folder
        Folder to write into (created if missing).
    formats
        File formats, each one of ``"png"``, ``"svg"``; the layout is found for the first.
    processes
        Processes to draw in (default: 2 on Linux with two or more cores, else 1).

    Returns
    -------
    list of pathlib.Path
        The files written, per figure in the order of ``formats``.
    """
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    unknown = [f for f in formats if f not in SAVE_OPTIONS]
    if unknown or not formats:
        raise ValueError(f"formats must be one or more of {', '.join(SAVE_OPTIONS)}, got "
                         f"{list(formats)!r}")
    items = list(figures)
    paths = [folder / f"{stem}.{fmt}" for stem, _ in items for fmt in formats]
    shares = _processes(len(items), processes)
    if shares == 1:
        for stem, figure in items:
            _render(stem, _built(figure), folder, formats)
        return paths
    import multiprocessing

    context = multiprocessing.get_context("fork")
    queue = context.Value("i", 0)  # the next figure to take, shared with the forked process
    for stale in paths:
        stale.unlink(missing_ok=True)   # so a failed child is noticed, never an old file kept
    with warnings.catch_warnings():  # a fork while other threads run is fine for drawing
        warnings.simplefilter("ignore", DeprecationWarning)
        child = context.Process(target=_render_all, args=(items, folder, tuple(formats), queue),
                                daemon=True)
        child.start()
    mine: set[int] = set()
    try:
        for i in _taken(queue, len(items)):
            mine.add(i)
            _render(items[i][0], _built(items[i][1]), folder, formats)
    finally:
        child.join()
    for i, (stem, figure) in enumerate(items):
        if i not in mine and (child.exitcode != 0 or not all(
                (folder / f"{stem}.{fmt}").is_file() for fmt in formats)):
            _render(stem, _built(figure), folder, formats)
    return paths


def _built(figure: Any) -> Any:
    """The figure, built first when it is given as a function of no arguments."""
    return figure() if callable(figure) else figure


def _taken(queue: Any, count: int) -> Iterator[int]:
    """The indices of the figures this process takes from the shared ``queue``, in turn."""
    while True:
        with queue.get_lock():
            i = queue.value
            queue.value = i + 1
        if i >= count:
            return
        yield i


def _render_all(items: Sequence[tuple[str, Any]], folder: Path, formats: Sequence[str],
                queue: Any) -> None:
    for i in _taken(queue, len(items)):
        _render(items[i][0], _built(items[i][1]), folder, formats)


# ----------------------------------------------------------------------------------------------
# Units and selections
# ----------------------------------------------------------------------------------------------


def pretty_unit(unit: str) -> str:
    """A unit string for display: ``"degC"`` → ``"°C"``, ``"kW/m^2"`` → ``"kW/m²"``, ``""`` →
    ``"-"``."""
    if not unit:
        return "-"
    out = unit.replace("delta_degC", "°C").replace("delta_degF", "°F")
    out = out.replace("degC", "°C").replace("degF", "°F")
    for a, b in (("**2", "²"), ("**3", "³"), ("^2", "²"), ("^3", "³"), ("*", "·")):
        out = out.replace(a, b)
    return out


def limit_quantile_variables(ds: xr.Dataset) -> list[xr.DataArray]:
    """The quantile variables (estimate, lower, upper) of the output the limit applies to
    (``attrs["limit_output"]``: the inner-surface temperature, the heat flux or a face)."""
    output = str(ds.attrs.get("limit_output", "inner_surface_temperature"))
    parts = ("", "_lower", "_upper")
    if f"{output}_quantile" in ds:
        return [ds[f"{output}_quantile{s}"] for s in parts]
    if "interface" in ds.coords and output in [str(v) for v in ds["interface"].values]:
        return [ds[f"interface_temperature_quantile{s}"].sel(interface=output) for s in parts]
    return [ds[f"inner_surface_temperature_quantile{s}"] for s in parts]


def format_limit_value(ds: xr.Dataset, value: float) -> str:
    """A value of the limit output (SI) in the unit the limit was given in."""
    if ds.attrs.get("limit_output") == "heat_flux":
        from plyrisk.results.verdict import show_value

        return show_value(float(value), "W m-2",
                          str(ds.attrs.get("limit_output_display_unit") or "W/m^2"))
    return format_temperature(ds, float(value))


def inner_limit(ds: xr.Dataset) -> float:
    """The limit [K] where it applies to the inner-surface temperature (the figures of that
    temperature draw it), else NaN (a limit on another output is not drawn there)."""
    if ds.attrs.get("limit_output", "inner_surface_temperature") != "inner_surface_temperature":
        return math.nan
    return float(ds.attrs["limit"])


def temperature_unit(ds: xr.Dataset) -> str:
    """The unit temperatures are shown in: the limit's unit, ``"K"`` if none was stored."""
    return str(ds.attrs.get("limit_display_unit") or "K")


def to_display_temperature(ds: xr.Dataset, kelvin) -> np.ndarray:
    """Temperatures [K] converted to the dataset's display unit [display unit]."""
    return np.asarray(from_si(np.asarray(kelvin, dtype=float), temperature_unit(ds), TEMPERATURE))


def temperature_label(ds: xr.Dataset, what: str) -> str:
    """An axis label for a temperature, e.g. ``"temperature [°C]"``.

    Parameters
    ----------
    ds
        A results dataset (for its display unit).
    what
        The quantity's name, e.g. ``"inner-surface temperature"``.
    """
    return f"{what} [{pretty_unit(temperature_unit(ds))}]"


def format_temperature(ds: xr.Dataset, kelvin: float, *, digits: int = 1) -> str:
    """A temperature [K] as display text in the dataset's unit, e.g. ``"43.2 °C"``.

    Parameters
    ----------
    ds
        A results dataset (for its display unit).
    kelvin
        The temperature [K]; non-finite gives ``"n/a"``.
    digits
        Decimals shown.
    """
    if not np.isfinite(kelvin):
        return "n/a"
    shown = float(to_display_temperature(ds, kelvin))
    return f"{shown:.{digits}f} {pretty_unit(temperature_unit(ds))}"


def format_percent(p: float) -> str:
    """A probability as a percentage with 3 significant digits, ``"n/a"`` if not finite."""
    return "n/a" if not np.isfinite(p) else f"{100 * p:.3g} %"


SURROGATE_KEYS = ("first", "first_ci", "total", "total_ci", "first_converged",
                  "total_converged")


def surrogate_view(ds: xr.Dataset) -> xr.Dataset:
    """The report's view of a steady ``method = "pce"`` dataset: its indices (``sobol_*`` with
    ``estimator = "pce"``, the one schema of every method) as the surrogate indices of the
    inner-surface temperature the report draws (``pce_*`` over ``parameter`` / ``group``).
    Any other dataset is returned as it is."""
    v = ds.get("sobol_total")
    if (v is None or v.attrs.get("estimator") != "pce"
            or ds.attrs.get("study_kind") == "transient"):
        return ds
    out = ds.copy()
    for base, new in (("sobol", "pce"), ("sobol_group", "pce_group")):
        for key in SURROGATE_KEYS:
            name = f"{base}_{key}"
            if name in out:
                out[f"{new}_{key}"] = out[name].sel(output=PRIMARY, drop=True)
    return out.drop_vars([n for n in out.data_vars if str(n).startswith("sobol_")])


def one_exposure(ds: xr.Dataset, scenario: int | None) -> tuple[str, xr.Dataset]:
    """Label and dataset of one exposure; validates ``scenario`` against the dataset.

    Parameters
    ----------
    ds
        A results dataset.
    scenario
        Index of the exposure for a swept dataset, ``None`` (or 0) otherwise.

    Returns
    -------
    label, dataset
        ``"<quantity> = <level>"`` (``""`` for an unswept dataset) and the dataset of that
        exposure (no ``scenario`` dimension).
    """
    ds = surrogate_view(with_scenario_dim(ds))
    if is_swept(ds):
        k = ds.sizes["scenario"]
        if scenario is None or isinstance(scenario, bool) or not 0 <= int(scenario) < k:
            raise ValueError(
                f"scenario must be an index 0..{k - 1} for a dataset sweeping "
                f"{ds.attrs.get('scenario_quantity', 'an exposure')}, got {scenario!r}"
            )
        one = ds.isel(scenario=int(scenario))
        quantity = str(ds.attrs.get("scenario_quantity", "exposure")).replace("_", " ")
        return f"{quantity} = {pretty_unit(str(one['scenario_label'].item()))}", one
    if scenario is not None and (isinstance(scenario, bool) or scenario != 0):
        raise ValueError(f"scenario must be None (or 0) for an unswept dataset, got {scenario!r}")
    return "", ds.isel(scenario=0)


def add_title(ax, text: str, *subs: str) -> None:
    """Bold title with grey subtitle lines under it (e.g. the exposure).

    Parameters
    ----------
    ax
        The matplotlib Axes to title.
    text
        The title.
    *subs
        Subtitle lines; empty ones are left out.
    """
    sub = "\n".join(s for s in subs if s)
    ax.set_title(text, pad=6 + (13 * (sub.count("\n") + 1) if sub else 0))
    if sub:
        ax.annotate(sub, xy=(0.0, 1.0), xycoords="axes fraction", xytext=(0, 5),
                    textcoords="offset points", va="bottom", ha="left", fontsize="small",
                    color=GREY)


def select_quantile(da: xr.DataArray, p: float) -> xr.DataArray:
    """The slice of a quantile variable at cumulative probability ``p``.

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


def joint_rows(ds: xr.Dataset) -> np.ndarray:
    """Rows drawn independently from the joint input distribution: ``sample_block`` 0 or 1
    (the A and B rows of a Saltelli design, the joint draws of a Shapley design, every row of
    the other designs, whose rows are all block 0); every row of a file without
    ``sample_block``.

    Parameters
    ----------
    ds
        A results dataset.

    Returns
    -------
    numpy.ndarray
        Boolean mask over ``sample``.
    """
    if "sample_block" not in ds:
        return np.ones(ds.sizes["sample"], dtype=bool)
    return np.asarray(ds["sample_block"].values) <= 1


def independent_mask(ds: xr.Dataset) -> np.ndarray:
    """Rows drawn from the joint input distribution that converged, for one exposure.

    :func:`joint_rows` (a Saltelli design's A and B rows, a Shapley design's joint draws,
    every row of the others). Only samples flagged ``converged`` with a finite inner-surface
    temperature are kept.

    Parameters
    ----------
    ds
        A results dataset of one exposure (no ``scenario`` dimension).

    Returns
    -------
    numpy.ndarray
        Boolean mask over ``sample``.
    """
    if "scenario" in ds["inner_surface_temperature"].dims:
        raise ValueError("independent_mask needs one exposure: select a scenario first")
    rows = joint_rows(ds)
    ok = np.asarray(ds["converged"].values, dtype=bool)
    ok &= np.isfinite(np.asarray(ds["inner_surface_temperature"].values, dtype=float))
    return rows & ok


def parameter_values(ds: xr.Dataset, name: str) -> tuple[np.ndarray, str]:
    """The samples of one parameter in the user's unit, and that unit [user unit].

    Parameters
    ----------
    ds
        A results dataset.
    name
        Parameter name, e.g. ``"outer gap.width"``.

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

