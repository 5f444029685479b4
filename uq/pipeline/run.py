"""The main job end to end: config → propagation → analysis → dataset on disk → summary text."""

from __future__ import annotations

import warnings
from dataclasses import dataclass, replace
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np
import xarray as xr

from plyrisk.analysis.study import StudyAnalysis
from plyrisk.cautions import cautions_text
from plyrisk.methods import get_method
from plyrisk.pipeline.options import RunOptions
from plyrisk.pipeline.screening import Screening, add_screening, screen_study, screening_lines
from plyrisk.pipeline.sequential import Growth, add_growth, grow_until_converged, growth_lines
from plyrisk.propagate.evaluate import Propagation, propagate
from plyrisk.results.dataset import write_results, write_store_analysis
from plyrisk.study.units import TEMPERATURE, from_si
from plyrisk.text.indices import index_lines

if TYPE_CHECKING:  # pragma: no cover
    from plyrisk.study.definition import Study

TOP_COUNT = 5
"""Parameters and layers listed in the summary [-]."""


@dataclass(frozen=True)
class StudyResult:
    """Everything a run produced: in memory and the path of the dataset written.

    ``analysis`` is a :class:`plyrisk.analysis.study.StudyAnalysis`, or for ``method = "morris"`` a
    :class:`plyrisk.pipeline.screening.MorrisAnalysis`; ``screening`` is the
    :class:`plyrisk.pipeline.screening.Screening`
    of a ``[screening]`` section (``study`` is then the reduced study) and ``growth`` the
    :class:`plyrisk.pipeline.sequential.Growth` of ``until_converged``.
    """

    study: Study
    propagation: Propagation
    analysis: StudyAnalysis
    dataset: xr.Dataset
    path: Path | None
    warnings: tuple[str, ...] = ()
    screening: Screening | None = None
    growth: Growth | None = None


def run_study(
    study: Study,
    *,
    out_dir: str | Path | None = None,
    options: RunOptions | None = None,
    **overrides: Any,
) -> StudyResult:
    """Propagate, analyse and (when ``out_dir`` is given) write ``out_dir/results.nc``.

    Parameters
    ----------
    study
        The parsed study (:func:`plyrisk.load_study`).
    out_dir
        Output folder, or ``None`` to keep the results in memory only.
    options
        How to run it (:class:`plyrisk.pipeline.options.RunOptions`); default: as configured.
    **overrides
        Fields of :class:`~plyrisk.pipeline.options.RunOptions` given directly, e.g.
        ``samples=256, seed=1`` (applied on top of ``options``).

    Returns
    -------
    StudyResult

    Raises
    ------
    OptionError
        One line naming an option that does not fit the study.

    Examples
    --------
    >>> import plyrisk
    >>> study = plyrisk.load_study("configs/small_demo.toml")      # doctest: +SKIP
    >>> result = plyrisk.run_study(study, samples=64, quiet=True)  # doctest: +SKIP
    >>> result.dataset["sobol_total"].sel(output="inner_surface_temperature")  # doctest: +SKIP
    """
    opts = replace(options or RunOptions(), **overrides).with_defaults(study)
    study = opts.validate(study)
    chosen = get_method(study.analysis.method)
    chunk_size, workers, scheduler, store = (opts.chunk_size, int(opts.workers or 1),
                                             opts.scheduler, opts.store)
    quiet = opts.quiet
    screening = growth = reader = None
    with warnings.catch_warnings(record=True) as caught:  # reported in the summary, once each
        warnings.simplefilter("always")
        if study.screening is not None:
            screening = screen_study(study, chunk_size=chunk_size, workers=workers)
            study = screening.reduced
        if opts.until_converged:
            growth = grow_until_converged(study, max_runs=opts.max_runs, chunk_size=chunk_size,
                                          workers=workers)
            study, prop, analysis = growth.study, growth.propagation, growth.analysis
        elif store is not None:
            prop, analysis, reader = _run_to_store(study, store, chunk_size=chunk_size,
                                                   resume=opts.resume, workers=workers,
                                                   scheduler=scheduler, quiet=quiet)
        else:
            prop = propagate(study, chunk_size=chunk_size, quiet=quiet, workers=workers,
                             scheduler=scheduler)
            analysis = chosen.analyse(study, prop)
    messages = tuple(dict.fromkeys(" ".join(str(w.message).split()) for w in caught
                                   if not _scheduling_noise(w)))
    ds = chosen.dataset(study, prop, analysis)
    if screening is not None:
        ds = add_screening(ds, screening)
    if growth is not None:
        ds = add_growth(ds, growth)
    if store is not None:
        ds.attrs["sample_store"] = str(store)
        if prop.inputs.shape[0] < reader.n_rows:  # analysed in passes; the file has a part
            ds.attrs["sample_rows_in_file"] = int(prop.inputs.shape[0])
            ds.attrs["notes"] += (f"\nresults.nc and the figures hold the first "
                                  f"{prop.inputs.shape[0]} of the {reader.n_rows} samples; "
                                  f"all of them are in the store {store}")
            ds.attrs["evaluations"] = int(reader.n_rows)
            ds.attrs["base_samples"] = int(study.analysis.samples)
        write_store_analysis(ds, store)
    ds.attrs["warnings"] = "\n".join(messages)
    path = None
    if out_dir is not None:
        path = write_results(ds, Path(out_dir) / "results.nc")
    return StudyResult(study, prop, analysis, ds, path, messages, screening, growth)


def _scheduling_noise(w: warnings.WarningMessage) -> bool:
    """A warning of the dask machinery (sockets, dashboard ports), not of the study."""
    where = w.filename.replace("\\", "/")
    return issubclass(w.category, ResourceWarning) or any(
        f"/{name}/" in where for name in ("distributed", "dask", "tornado"))


def _run_to_store(study: Study, store, *, chunk_size, resume, workers, scheduler, quiet):
    """Solve into the store, then analyse: loaded whole when small, in passes when large."""
    from plyrisk.analysis import streaming
    from plyrisk.propagate.store import load_propagation, solve_to_store

    method = get_method(study.analysis.method)
    reader = solve_to_store(study, store, chunk_size=chunk_size, resume=resume,
                            workers=workers, scheduler=scheduler, quiet=quiet)
    if reader.n_rows <= streaming.STREAM_ROWS:
        prop = load_propagation(study, reader)
        return prop, method.analyse(study, prop), reader
    analysis = method.analyse_store(study, reader)
    return load_propagation(study, reader, stop=FILE_SAMPLE_ROWS), analysis, reader


FILE_SAMPLE_ROWS = 2**18
"""Leading rows of a store analysed in passes that ``results.nc`` carries for the figures [-]."""


def _t(study: Study, kelvin: float) -> str:
    unit = study.limit_unit or "K"
    if not np.isfinite(kelvin):
        return "n/a"
    return f"{float(from_si(kelvin, unit, TEMPERATURE)):.1f} {unit}"


def _pct(p: float) -> str:
    if not np.isfinite(p):
        return "n/a"
    return f"{100 * p:.3g} %"


def summary_text(result: StudyResult) -> str:
    """The summary printed at the end of ``plyrisk run``.

    Parameters
    ----------
    result
        A finished run. [-]

    Returns
    -------
    str
    """
    study, prop, an = result.study, result.propagation, result.analysis
    a = study.analysis
    lines = [f"plyrisk study: {study.title}", f"config: {study.source}"]
    if result.screening is not None:
        lines += screening_lines(result.screening)
    if result.growth is not None:
        lines += growth_lines(result.growth)
    method = get_method(a.method)
    own = method.summary_lines(result, top=TOP_COUNT)
    if own is not None:
        return "\n".join(_closing(result, lines + own, []))
    n_eval = int(result.dataset.attrs.get("evaluations", prop.inputs.shape[0]))
    n_independent = method.independent_samples(study, n_eval)
    lines.append(
        f"method: {a.method}, {a.design} design, {a.samples} {method.sample_noun}, "
        f"{len(study.parameters)} uncertain parameters, {n_eval} model evaluations"
        + (f" per exposure × {len(an.scenarios)} exposures" if len(an.scenarios) > 1 else "")
        + f"; seed {a.seed}"
    )
    lim = _t(study, a.limit)
    conf = f"{100 * a.confidence:g} %"
    for s, sc in enumerate(an.scenarios):
        lines.append("")
        if study.scenarios is not None:
            lines.append(f"exposure {s + 1}: {study.scenarios.quantity} = "
                         f"{study.scenarios.labels[s]}")
        q = sc.inner_quantiles
        lines.append(f"inner-surface temperature (limit {lim}; {conf} confidence intervals):")
        for p in a.percentiles:
            i = int(np.argmin(np.abs(q.probabilities - p)))
            lines.append(
                f"  P{100 * p:<4g} {_t(study, q.estimate[i]):>10}   "
                f"[{_t(study, q.lower[i])}, {_t(study, q.upper[i])}]"
            )
        e = sc.exceedance
        lines.append(
            f"  P(inner surface > {lim}) = {_pct(e.probability)}   [{_pct(e.lower)}, "
            f"{_pct(e.upper)}]  ({e.method}; {e.count} of {e.n} samples above)"
        )
        left_out = n_independent - e.n
        if left_out > 0:
            worst = (e.count + left_out) / (e.n + left_out)
            lines.append(
                f"  {left_out} non-converged samples are left out above; counting them as "
                f"exceeding, P(inner surface > {lim}) = {_pct(worst)}"
            )
        ranking = sc.ranking.get("inner_surface_temperature")
        lines += index_lines(study, sc, top=TOP_COUNT, temperature=lambda k: _t(study, k))
        if not ranking or sc.surrogate is not None:
            names = [p.name for p in study.parameters]
            order = np.argsort(-np.abs(np.nan_to_num(sc.rank_correlation)))
            if names:
                lines.append("rank correlation with the inner-surface temperature (screening "
                             "only):")
                for r, j in enumerate(order[:TOP_COUNT], start=1):
                    lines.append(f"  {r}. {names[j]:<32} {sc.rank_correlation[j]:+.3f}")
        if sc.onset_samples:
            lines.append(
                f"WARNING: {sc.onset_samples} of {n_eval} samples have a gap past the onset of "
                "natural convection"
                + ("; still-air conduction underestimates the heat flow there, so those "
                   "temperatures are not conservative — consider [model] convection = true"
                   if not study.model.convection else " (convection correlations applied)")
            )
        if sc.air_range_samples:
            lines.append(
                f"note: {sc.air_range_samples} samples have a gap mean temperature outside "
                "250–1500 K, where the air properties are extrapolated"
            )
        lines.append(
            f"non-converged samples: {sc.nonconverged} of {n_eval}"
            + (" (excluded from the statistics; see 'converged' in the dataset)"
               if sc.nonconverged else "")
        )
    if study.model.radiation == "linearized":
        lines.append("")
        lines.append(
            "note: radiation = \"linearized\" (4 eps sigma Tm^3) always carries less heat across "
            "a gap than the exact form, so it predicts a cooler inner surface: not conservative"
        )
    return "\n".join(_closing(result, lines, an.notes))


def _closing(result: StudyResult, lines: list[str], notes) -> list[str]:
    """Notes, warnings, the results path and the cautions at the end of the summary."""
    for note in (*notes, *result.warnings):
        lines.append("")
        lines.append(f"note: {note}")
    if result.path is not None:
        lines.append("")
        lines.append(f"results: {result.path}")
    lines.append("")
    lines.append(cautions_text())
    return lines
