"""The main job end to end: config → propagation → analysis → dataset on disk → summary text."""

from __future__ import annotations

import warnings
from contextlib import ExitStack
from dataclasses import dataclass, replace
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np
import xarray as xr

from plyrisk.analysis.direction import gap_directions, limit_scope_note
from plyrisk.analysis.ratings import rating_check
from plyrisk.analysis.study import StudyAnalysis
from plyrisk.cautions import cautions_text, compact_cautions
from plyrisk.errors import PlyriskError
from plyrisk.methods import get_method
from plyrisk.pipeline.options import RunOptions
from plyrisk.pipeline.progress import _CLOCK, phase, set_progress_clock  # noqa: F401
from plyrisk.pipeline.screening import Screening, add_screening, screen_study, screening_lines
from plyrisk.pipeline.sequential import Growth, add_growth, grow_until_converged, growth_lines
from plyrisk.propagate.evaluate import Propagation, propagate
from plyrisk.results.dataset import (
    history_line,
    limit_output_text,
    subset_warning,
    subset_warnings,
    write_results,
    write_store_analysis,
)
from plyrisk.results.verdict import add_verdict, study_criterion, verdict_of
from plyrisk.study.units import TEMPERATURE, from_si
from plyrisk.study.values import truncation_warnings
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
    with ExitStack() as held:
        if store is not None:  # one run per store, until its analysis is stored
            from plyrisk.propagate.store import store_lock

            held.enter_context(store_lock(store, resume=opts.resume))
        with warnings.catch_warnings(record=True) as caught:  # reported in the summary, once each
            warnings.simplefilter("always")
            if study.screening is not None:
                phase("screening (Morris) before the study", quiet)
                screening = screen_study(study, chunk_size=chunk_size, workers=workers)
                study = screening.reduced
            if opts.until_converged:
                phase("growing the study until every index interval is narrow enough", quiet)
                growth = grow_until_converged(study, max_runs=opts.max_runs, chunk_size=chunk_size,
                                              workers=workers)
                study, prop, analysis = growth.study, growth.propagation, growth.analysis
            elif store is not None:
                phase(f"solving into the store {store}", quiet)
                prop, analysis, reader = _run_to_store(study, store, chunk_size=chunk_size,
                                                       resume=opts.resume, overwrite=opts.overwrite,
                                                       workers=workers,
                                                       scheduler=scheduler, quiet=quiet)
            else:
                phase("solving", quiet)
                prop = propagate(study, chunk_size=chunk_size, quiet=quiet, workers=workers,
                                 scheduler=scheduler)
                phase(ANALYSIS_PHASE, quiet)
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
    if "exceedance_probability" in ds:
        ds = _add_ratings(ds, study, prop)
        scope = _scope(study)
        if scope:
            ds.attrs["notes"] = "\n".join(n for n in (ds.attrs.get("notes", ""), scope) if n)
    ds.attrs["warnings"] = "\n".join((*messages, *subset_warnings(ds)))
    ds = add_verdict(ds, study_criterion(study), default=not study.analysis.criterion)
    ds.attrs["history"] = history_line(ds)  # CF: when and by what the results were made
    path = None
    if out_dir is not None:
        path = write_results(ds, Path(out_dir) / "results.nc")
    return StudyResult(study, prop, analysis, ds, path, messages, screening, growth)


class TransientOptionError(PlyriskError):
    """A run a transient study cannot make (one line): e.g. a store too large to analyse in
    memory."""


def _scheduling_noise(w: warnings.WarningMessage) -> bool:
    """A warning of the dask machinery (sockets, dashboard ports), not of the study."""
    where = w.filename.replace("\\", "/")
    return issubclass(w.category, ResourceWarning) or any(
        f"/{name}/" in where for name in ("distributed", "dask", "tornado"))


def _run_to_store(study: Study, store, *, chunk_size, resume, overwrite, workers, scheduler,
                  quiet):
    """Solve into the store, then analyse: loaded whole when small, in passes when large."""
    from plyrisk.analysis import streaming
    from plyrisk.propagate.store import load_propagation, solve_to_store

    method = get_method(study.analysis.method)
    reader = solve_to_store(study, store, chunk_size=chunk_size, resume=resume,
                            overwrite=overwrite, workers=workers, scheduler=scheduler, quiet=quiet)
    phase(ANALYSIS_PHASE + ("" if reader.n_rows <= streaming.STREAM_ROWS else ", in passes"),
          quiet)
    if reader.n_rows <= streaming.STREAM_ROWS:
        prop = load_propagation(study, reader)
        return prop, method.analyse(study, prop), reader
    if study.transient is not None:
        raise TransientOptionError(
            f"{study.source}: {reader.n_rows} samples are stored in {store}, more than the "
            f"{streaming.STREAM_ROWS} a transient study can analyse in memory yet; the samples "
            "stay in the store")
    analysis = method.analyse_store(study, reader)
    return load_propagation(study, reader, stop=FILE_SAMPLE_ROWS), analysis, reader


ANALYSIS_PHASE = "analysis (percentiles, exceedance, sensitivity indices or surrogate fit)"


FILE_SAMPLE_ROWS = 2**18
"""Leading rows of a store analysed in passes that ``results.nc`` carries for the figures [-]."""


def _t(study: Study, kelvin: float) -> str:
    unit = study.limit_unit or "K"
    if not np.isfinite(kelvin):
        return "n/a"
    return f"{float(from_si(kelvin, unit, TEMPERATURE)):.1f} {unit}"


def _limit_ranking_lines(sc, output: str, words: str) -> list[str]:
    """The top parameters and layers of the limit output (when it is not the inner surface)."""
    lines = []
    for what, ranked in (("parameters", sc.ranking.get(output)),
                         ("layers", sc.group_ranking.get(output))):
        if ranked:
            lines.append(f"most influential {what} for the {words}, which the limit applies "
                         "to (total Sobol index ± CI half-width):")
            lines += [f"  {r}. {_name(item.name, what):<32} {item.total:.3f} ± "
                      f"{item.total_ci:.3f}" for r, item in enumerate(ranked[:TOP_COUNT], start=1)]
    return lines


def _name(name: str, what: str) -> str:
    from plyrisk.text.indices import layer_label

    return layer_label(name) if what == "layers" else name


def _fv(fmt, value: float) -> str:
    return fmt(value) if np.isfinite(value) else "n/a"


def _scope(study: Study) -> str:
    """The note on what the limit protects (the inner-surface temperature only)."""
    if study.analysis.limit_output != "inner_surface_temperature":
        return ""
    return limit_scope_note(study)


def _pct(p: float) -> str:
    if not np.isfinite(p):
        return "n/a"
    return f"{100 * p:.3g} %"


def _add_ratings(ds: xr.Dataset, study: Study, prop: Propagation) -> xr.Dataset:
    """Add the rated-temperature check (``max_temperature`` of the layers) to the dataset."""
    checks = [rating_check(study, prop, s) for s in range(prop.outputs["converged"].shape[0])]
    if checks[0] is None:
        return ds
    swept = "scenario" in ds.dims
    sd = ("scenario",) if swept else ()

    def per(values):
        return np.asarray(values) if swept else np.asarray(values)[0]

    margin = per([c.margin for c in checks])
    ds = ds.copy()
    ds["layer_rating_margin"] = ((*sd, "sample"), margin[..., :ds.sizes["sample"]], {
        "units": "K", "long_name": "largest excess of a rated layer's hotter face over its "
        "max_temperature (positive: some layer above its rating; NaN: not converged)"})
    for key, attr in (("", "probability"), ("_lower", "lower"), ("_upper", "upper")):
        ds[f"rating_exceedance_probability{key}"] = (sd, per([getattr(c.exceedance, attr)
                                                              for c in checks]), {
            "units": "1", "long_name": "P(some layer above its max_temperature), independent "
            "converged samples" + ("" if not key else f" ({attr} bound)")})
    ds.attrs["rated_layers"] = ", ".join(
        f"{layer.name} ({study.format_temperature(r)})"
        for layer, r in zip(study.layers, study.max_temperatures, strict=True) if r is not None)
    return ds


def _rating_lines(study: Study, prop: Propagation, scenario: int) -> list[str]:
    """Summary lines of the rated-temperature check of one exposure."""
    check = rating_check(study, prop, scenario)
    if check is None:
        return []
    e = check.exceedance
    over = [f"{name} {count}" for name, count in check.per_layer.items() if count]
    return [f"  P(a layer above its max_temperature) = {_pct(e.probability)}   [{_pct(e.lower)}, "
            f"{_pct(e.upper)}]  ({e.count} of {e.n} samples"
            + (f"; by layer: {', '.join(over)}" if over else "") + ")"]


def _onset_gaps(prop: Propagation, scenario: int) -> set[str]:
    """Names of the gaps past the onset of natural convection in any sample of a scenario."""
    out = prop.outputs
    onset = np.asarray(out.fields["convection_onset"])
    onset = onset[scenario] if onset.ndim == 3 else onset
    return {name for name, kind, flag in zip(out.element_names, out.element_kinds,
                                               np.any(onset, axis=0), strict=True)
            if kind == "gap" and flag}


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
    lines = [f"plyrisk study: {study.title}", f"config: {study.source}", "",
             *verdict_of(result.dataset).lines(), "",
             compact_cautions(transient=study.transient is not None)]
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
    from plyrisk.analysis.transient import is_transient

    if is_transient(study):
        from plyrisk.text.transient import transient_summary_lines

        lines.append(f"method: {a.method}, {a.design} design, {a.samples} {method.sample_noun}, "
                     f"{len(study.parameters)} uncertain parameters, {n_eval} model evaluations"
                     + (f" per exposure × {len(an.scenarios)} exposures"
                        if len(an.scenarios) > 1 else "") + f"; seed {a.seed}")
        lines += transient_summary_lines(study, an, evaluations=n_eval,
                                         temperature=lambda k: _t(study, k), top=TOP_COUNT)
        return "\n".join(_closing(result, lines, an.notes, transient=True))
    lines.append(
        f"method: {a.method}, {a.design} design, {a.samples} {method.sample_noun}, "
        f"{len(study.parameters)} uncertain parameters, {n_eval} model evaluations"
        + (f" per exposure × {len(an.scenarios)} exposures" if len(an.scenarios) > 1 else "")
        + f"; seed {a.seed}"
    )
    lim = study.format_limit_value(a.limit)
    on_inner = a.limit_output == "inner_surface_temperature"
    words = limit_output_text(study)
    conf = f"{100 * a.confidence:g} %"
    directions = gap_directions(study)  # which way an underestimated gap flow moves the limit
    scope = _scope(study)
    cut = truncation_warnings(study.parameters)
    if cut:
        lines += ["", *cut]
    for s, sc in enumerate(an.scenarios):
        lines.append("")
        if study.scenarios is not None:
            lines.append(f"exposure {s + 1}: {study.scenarios.quantity} = "
                         f"{study.scenarios.labels[s]}")
        q = sc.inner_quantiles
        lines.append("inner-surface temperature ("
                     + (f"limit {lim}; " if on_inner else "") + f"{conf} confidence intervals):")
        for p in a.percentiles:
            i = int(np.argmin(np.abs(q.probabilities - p)))
            lines.append(
                f"  P{100 * p:<4g} {_t(study, q.estimate[i]):>10}   "
                f"[{_t(study, q.lower[i])}, {_t(study, q.upper[i])}]"
            )
        if not on_inner:
            lq = sc.criterion_quantiles
            lines.append(f"{words}, which the limit applies to (limit {lim}; {conf} "
                         "confidence intervals):")
            f = study.format_limit_value
            for p in a.percentiles:
                i = int(np.argmin(np.abs(lq.probabilities - p)))
                lines.append(f"  P{100 * p:<4g} {_fv(f, lq.estimate[i]):>12}   "
                             f"[{_fv(f, lq.lower[i])}, {_fv(f, lq.upper[i])}]")
        short = "inner surface" if on_inner else words
        e = sc.exceedance
        lines.append(
            f"  P({short} > {lim}) = {_pct(e.probability)}   [{_pct(e.lower)}, "
            f"{_pct(e.upper)}]  ({e.method}; {e.count} of {e.n} samples above)"
        )
        left_out = n_independent - e.n
        if left_out > 0:
            worst = (e.count + left_out) / (e.n + left_out)
            lines.append(
                f"  {left_out} non-converged samples are left out above; counting them as "
                f"exceeding, P({short} > {lim}) = {_pct(worst)}"
            )
            lost = subset_warning(e.n, n_independent)
            if lost:
                lines.append(f"  {lost}")
        lines += _rating_lines(study, prop, s)
        ranking = sc.ranking.get("inner_surface_temperature")
        lines += index_lines(study, sc, top=TOP_COUNT, temperature=lambda k: _t(study, k))
        if not on_inner:
            lines += _limit_ranking_lines(sc, a.limit_output, words)
        if not ranking or sc.surrogate is not None:
            names = [p.name for p in study.parameters]
            order = np.argsort(-np.abs(np.nan_to_num(sc.rank_correlation)))
            if names:
                lines.append("rank correlation with the inner-surface temperature (screening "
                             "only):")
                for r, j in enumerate(order[:TOP_COUNT], start=1):
                    lines.append(f"  {r}. {names[j]:<32} {sc.rank_correlation[j]:+.3f}")
        if sc.onset_samples:
            if study.model.convection:
                lines.append(f"note: {sc.onset_samples} of {n_eval} samples have a gap past the "
                             "onset of natural convection (convection correlations applied)")
            else:
                effects = "; ".join(d.less_heat_effect("inner-surface temperature")
                                    for d in directions if d.gap in _onset_gaps(prop, s))
                lines.append(
                    f"WARNING: {sc.onset_samples} of {n_eval} samples have a gap past the onset "
                    "of natural convection; still-air conduction carries too little heat across "
                    f"it there ({effects or 'gap not identified'}); consider [model] "
                    "convection = true")
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
    if scope:
        lines += ["", f"note: {scope}"]
    if study.model.radiation == "linearized" and directions:
        lines.append("")
        lines.append(
            "note: radiation = \"linearized\" (4 eps sigma Tm^3) always carries less heat across "
            "a gap than the exact form; at the nominal point: "
            + "; ".join(d.less_heat_effect("inner-surface temperature") for d in directions))
    return "\n".join(_closing(result, lines, an.notes))


def _closing(result: StudyResult, lines: list[str], notes, *,
             transient: bool = False) -> list[str]:
    """Notes, warnings, the results path and the cautions at the end of the summary."""
    for note in (*notes, *result.warnings):
        lines.append("")
        lines.append(f"note: {note}")
    if result.path is not None:
        lines.append("")
        lines.append(f"results: {result.path}")
    lines.append("")
    lines.append(cautions_text(transient=transient))
    return lines
