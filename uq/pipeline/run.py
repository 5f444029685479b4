"""The main job end to end: config → propagation → analysis → dataset on disk → summary text."""

from __future__ import annotations

import os
import warnings
from contextlib import ExitStack
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import xarray as xr

from plyrisk.analysis.study import StudyAnalysis, analyse
from plyrisk.cautions import cautions_text
from plyrisk.pipeline.screening import (
    add_screening,
    morris_analysis,
    morris_dataset,
    morris_lines,
    screen_study,
    screening_lines,
)
from plyrisk.pipeline.sequential import add_growth, grow_until_converged, growth_lines
from plyrisk.propagate.evaluate import Propagation, propagate
from plyrisk.results.dataset import to_dataset, write_results, write_store_analysis
from plyrisk.study.config import override
from plyrisk.study.units import TEMPERATURE, from_si
from plyrisk.text.indices import index_lines

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

    study: object
    propagation: Propagation
    analysis: StudyAnalysis
    dataset: xr.Dataset
    path: Path | None
    warnings: tuple[str, ...] = ()
    screening: object | None = None
    growth: object | None = None


MEMORY_SHARE = 0.7
"""Largest share of this machine's memory a study may plan to use [-]."""


def memory_estimate(study, samples: int | None = None) -> int:
    """Bytes a run will hold at its peak: the design, the inputs and every output [B].

    Parameters
    ----------
    study
        The parsed study. [-]
    samples
        Base sample count overriding the config [-].

    Returns
    -------
    int
        Estimated peak memory [B] (with a 50 % margin for the analysis and the dataset).
    """
    from plyrisk.models.network import interface_names
    from plyrisk.propagate.evaluate import scenario_count

    rows = memory_rows(study, samples) // scenario_count(study)
    d = len(study.parameters)
    faces = len(interface_names(study.layers, study.cold_side))
    per_row = 16 * d + scenario_count(study) * 8 * (6 * faces + 4)
    return int(1.5 * rows * per_row)


def memory_rows(study, samples: int | None = None) -> int:
    """Model runs of a study, every exposure counted [-].

    Parameters
    ----------
    study
        The parsed study. [-]
    samples
        Sample count overriding the config [-].
    """
    from plyrisk.propagate.evaluate import parameter_groups, scenario_count

    n = int(samples if samples is not None else study.analysis.samples)
    d = len(study.parameters)
    if study.analysis.method == "saltelli":
        groups = [g for g in parameter_groups(study)[1] if len(g) > 1]
        rows = n * (d + len(groups) + 2)
    elif study.analysis.method == "morris":
        rows = n * (d + 1)
    else:
        rows = n
    return rows * scenario_count(study)


def check_memory(study, samples: int | None = None) -> None:
    """Raise ``ValueError`` when a run would not fit in this machine's memory.

    Parameters
    ----------
    study
        The parsed study. [-]
    samples
        Base sample count overriding the config [-].
    """
    need = memory_estimate(study, samples)
    try:
        have = os.sysconf("SC_PHYS_PAGES") * os.sysconf("SC_PAGE_SIZE")
    except (ValueError, OSError, AttributeError):  # not available: do not guess
        return
    if need > MEMORY_SHARE * have:
        n = samples if samples is not None else study.analysis.samples
        raise ValueError(
            f"{n} samples need about {need / 2**30:.1f} GiB of memory and this machine has "
            f"{have / 2**30:.1f} GiB; use fewer samples"
        )


def default_output_dir(config_path: str | Path) -> Path:
    """The default output folder: named after the config, next to where plyrisk runs."""
    return Path(Path(config_path).stem)


def run_study(
    study,
    *,
    out_dir: str | Path | None = None,
    samples: int | None = None,
    seed: int | None = None,
    chunk_size: int | None = None,
    quiet: bool = False,
    workers: int = 1,
    scheduler: str | None = None,
    store: str | Path | None = None,
    resume: bool = False,
    overwrite: bool = False,
    method: str | None = None,
    until_converged: bool = False,
    max_runs: int | None = None,
) -> StudyResult:
    """Propagate, analyse and (when ``out_dir`` is given) write ``out_dir/results.nc``.

    Parameters
    ----------
    study
        The parsed study (:class:`plyrisk.study.config.Study`). [-]
    out_dir
        Output folder, or ``None`` to keep the results in memory only [-].
    samples
        Base sample count overriding the config [-].
    seed
        Seed overriding the config [-].
    chunk_size
        Samples per evaluation chunk overriding the config [-].
    quiet
        No progress bar [-].
    workers
        Worker processes of a local dask cluster [-]; results do not depend on it.
    scheduler
        Address of an existing dask scheduler to solve on [-]; results do not depend on it.
    store
        Zarr store folder to stream the per-sample results to (out of core); the analysis
        reads them from there and is added to it [-].
    resume
        Keep the chunks an interrupted run already put in ``store``; on a finished store
        only the analysis runs again [-].
    overwrite
        Replace a plyrisk store already at ``store`` (ignored with ``resume``) [-].
    method
        Analysis method overriding the config (``saltelli``, ``pce``, ``morris``) [-].
    until_converged
        Saltelli only: double the base samples, reusing every run, until every index
        interval is narrower than ``index_ci_threshold`` or ``max_runs`` is reached
        (:mod:`plyrisk.pipeline.sequential`) [-].
    max_runs
        Model-run budget of ``until_converged`` (default
        :data:`plyrisk.pipeline.sequential.DEFAULT_MAX_RUNS`) [-].

    Returns
    -------
    StudyResult
    """
    study = override(study, samples=samples, seed=seed, method=method)
    if until_converged and study.analysis.method != "saltelli":
        raise ValueError(f"until_converged needs method = saltelli, not "
                         f"{study.analysis.method!r}")
    if store is not None and (until_converged or study.analysis.method == "morris"):
        raise ValueError("a store holds one fixed design: use it with method = saltelli or "
                         "pce, without until_converged")
    screening = growth = reader = None
    with ExitStack() as held:
        if store is not None:  # one run per store, until its analysis is stored
            from plyrisk.propagate.store import store_lock

            held.enter_context(store_lock(store, resume=resume))
        with warnings.catch_warnings(record=True) as caught:  # reported in the summary, once each
            warnings.simplefilter("always")
            if study.screening is not None:
                screening = screen_study(study, chunk_size=chunk_size, workers=workers)
                study = screening.reduced
            if until_converged:
                growth = grow_until_converged(study, max_runs=max_runs, chunk_size=chunk_size,
                                              workers=workers)
                study, prop, analysis = growth.study, growth.propagation, growth.analysis
            elif store is not None:
                prop, analysis, reader = _run_to_store(study, store, chunk_size=chunk_size,
                                                       resume=resume, overwrite=overwrite,
                                                       workers=workers, scheduler=scheduler,
                                                       quiet=quiet)
            else:
                prop = propagate(study, chunk_size=chunk_size, quiet=quiet, workers=workers,
                                 scheduler=scheduler)
                if study.analysis.method == "morris":
                    analysis = morris_analysis(study, prop)
                else:
                    analysis = analyse(study, prop)
        messages = tuple(dict.fromkeys(" ".join(str(w.message).split()) for w in caught
                                       if not _scheduling_noise(w)))
        if study.analysis.method == "morris":
            ds = morris_dataset(study, prop, analysis)
        else:
            ds = to_dataset(study, prop, analysis)
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


def _run_to_store(study, store, *, chunk_size, resume, overwrite, workers, scheduler, quiet):
    """Solve into the store, then analyse: loaded whole when small, in passes when large."""
    from plyrisk.analysis import streaming
    from plyrisk.propagate.store import load_propagation, solve_to_store

    reader = solve_to_store(study, store, chunk_size=chunk_size, resume=resume,
                            overwrite=overwrite, workers=workers, scheduler=scheduler, quiet=quiet)
    if reader.n_rows <= streaming.STREAM_ROWS:
        prop = load_propagation(study, reader)
        return prop, analyse(study, prop), reader
    analysis = streaming.stream_analyse(study, reader)
    return load_propagation(study, reader, stop=FILE_SAMPLE_ROWS), analysis, reader


FILE_SAMPLE_ROWS = 2**18
"""Leading rows of a store analysed in passes that ``results.nc`` carries for the figures [-]."""


def _t(study, kelvin: float) -> str:
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
    if a.method == "morris":
        return "\n".join(_closing(result, lines + morris_lines(study, prop, an, top=TOP_COUNT),
                                   []))
    n_eval = int(result.dataset.attrs.get("evaluations", prop.inputs.shape[0]))
    n_independent = 2 * int(a.samples) if a.method == "saltelli" else n_eval
    lines.append(
        f"method: {a.method}, {a.design} design, {a.samples} "
        + {"saltelli": "base samples", "morris": "trajectories"}.get(a.method, "samples") + ", "
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
