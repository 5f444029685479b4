"""The ``plyrisk`` command line: one subcommand (verb) per function.

``plyrisk check CONFIG`` validates a study config and prints its uncertain parameters and the
nominal solution. Exit codes: 0 success; 1 the nominal solve failed to converge; 2 a user
mistake (bad config, missing file, bad arguments), reported as exactly one line on stderr,
``plyrisk: error: <file>: <key path>: <message>``; 1 also for an internal error (a bug;
``--verbose`` shows its traceback). ``plyrisk run --fail-if-not-met`` exits 3 when the
study's criterion is not met. Every verb's ``--help`` ends with examples.

A verb is added by writing ``_add_<verb>(subparsers)`` (which sets ``func``) and a
``cmd_<verb>(args) -> int`` and listing the adder in :data:`VERBS`.
"""

from __future__ import annotations

import argparse
import functools
import shlex
import sys
from collections.abc import Callable, Sequence
from pathlib import Path
from typing import Any

from plyrisk.cautions import cautions_text
from plyrisk.errors import ConfigError, PlyriskError
from plyrisk.methods import METHODS, get_method
from plyrisk.pipeline.options import MAX_SEED, RunOptions, default_output_dir
from plyrisk.text.tables import fit_width

# Heavy modules (xarray, matplotlib, SALib, dask) are imported inside the verb that needs them,
# so that --help, --version and check start fast (benchmarks/startup.py).

PROG = "plyrisk"


class UsageError(Exception):
    """A command-line mistake; reported as one line, exit code 2."""


class _Formatter(argparse.HelpFormatter):
    """Wraps the description; keeps the exit codes and examples of the epilog line by line."""

    def _fill_text(self, text: str, width: int, indent: str) -> str:
        out = []
        for block in text.split("\n\n"):
            if block.startswith(("examples:", "exit codes:")):
                out.append("\n".join(indent + line for line in block.splitlines()))
            else:
                out.append(super()._fill_text(block, width, indent))
        return "\n\n".join(out)


def _examples(*lines: str) -> str:
    """The epilog of a verb's ``--help``: examples, one command per line, with a comment."""
    return "examples:\n" + "\n".join(f"  {line}" for line in lines)


def _verbosity(p: argparse.ArgumentParser, quiet: str) -> None:
    """``-q/--quiet`` and ``-v/--verbose`` (mutually exclusive) on a verb."""
    g = p.add_mutually_exclusive_group()
    g.add_argument("-q", "--quiet", action="store_true", help=quiet)
    g.add_argument("-v", "--verbose", action="store_true", help="progress lines with the "
                   "elapsed time, and the full traceback of an unexpected internal error")


def _progress_clock(args: argparse.Namespace) -> None:
    """Stamp the progress lines with the elapsed time under ``--verbose``."""
    from plyrisk.pipeline.progress import set_progress_clock

    set_progress_clock(bool(getattr(args, "verbose", False)))


class _Parser(argparse.ArgumentParser):
    def __init__(self, *args, **kwargs) -> None:
        kwargs["allow_abbrev"] = False  # "--sample 512" is an error, never "--samples 512"
        super().__init__(*args, **kwargs)

    def error(self, message: str) -> None:  # type: ignore[override]
        raise UsageError(message)


# ----------------------------------------------------------------------------------------------
# check
# ----------------------------------------------------------------------------------------------


def _add_check(subparsers) -> None:
    p = subparsers.add_parser(
        "check",
        help="validate a study config and show its parameters and nominal solution",
        description="Validate a study config; print the uncertain parameters, the nominal "
        "solution (every uncertain input at its nominal value) and the margin to the limit. "
        "A transient study's first check (or run) after installation compiles the time loop "
        "once, up to a minute; on a terminal a line on stderr says so, piped output stays "
        "clean.",
        epilog=_examples(
            "plyrisk check study.toml          # validate; show the nominal solution",
            "plyrisk init study.toml && plyrisk check study.toml   # start from a template"),
        formatter_class=_Formatter,
    )
    p.add_argument("config", help="study config file (TOML)")
    p.set_defaults(func=cmd_check)


def cmd_check(args: argparse.Namespace) -> int:
    """Run ``plyrisk check``: validate, print the parameters and the nominal solution.

    Parameters
    ----------
    args
        Parsed arguments; ``args.config`` is the config path [-].

    Returns
    -------
    int
        0 on success, 1 when the nominal solve did not converge [-].
    """
    from plyrisk.study.config import load_study
    from plyrisk.text.check import check_text

    study = load_study(args.config)
    if study.transient is not None and sys.stderr.isatty():
        print(f"{PROG}: solving the nominal history (the first run after installation compiles "
              "the time loop once: up to a minute)", file=sys.stderr, flush=True)
    text, converged = check_text(study)
    print(fit_width(text))
    return 0 if converged else 1


# ----------------------------------------------------------------------------------------------
# run
# ----------------------------------------------------------------------------------------------


def _add_run(subparsers) -> None:
    p = subparsers.add_parser(
        "run",
        help="run the study: sample, solve, analyse, write results.nc and the report",
        description="Run the study of a config: draw the design, solve the model for every "
        "sample and exposure, compute percentiles, exceedance and sensitivity indices, write "
        "DIR/results.nc and the report, and print the summary.",
        epilog=_examples(
            "plyrisk run study.toml                       # results in ./study/",
            "plyrisk run study.toml --out runs/a --samples 1024 --seed 7",
            "plyrisk run study.toml --until-converged --max-runs 200000",
            "plyrisk run study.toml --workers 2 --store runs/a.zarr   # out of core, resumable",
            "plyrisk run study.toml --store runs/a.zarr --resume      # after an interruption",
            "plyrisk run study.toml --out runs/a --overwrite          # replace an older result"),
        formatter_class=_Formatter,
    )
    p.add_argument("config", help="study config file (TOML)")
    p.add_argument("--out", metavar="DIR", help="output folder (default: a folder named after "
                   "the config, in the current directory)")
    p.add_argument("--samples", metavar="N", type=int, help="base sample count (overrides "
                   "[study] samples; a power of two for method = saltelli)")
    p.add_argument("--seed", metavar="S", type=int, help="seed (overrides [study] seed)")
    p.add_argument("--method", metavar="NAME", help="analysis method: "
                   + ", ".join(METHODS) + " (overrides [study] method)")
    p.add_argument("--until-converged", action="store_true", help="saltelli: double the base "
                   "samples, reusing every run, until every index interval is at most "
                   "[study] index_ci_threshold, or --max-runs is reached; prints the path "
                   "(a transient study: the intervals of the capped time to burn and the burn "
                   "indicator)")
    p.add_argument("--max-runs", metavar="N", type=int, help="model-run budget of "
                   "--until-converged (default 1000000, every exposure counted)")
    p.add_argument("--chunk-size", metavar="N", type=int, help="samples per evaluation chunk "
                   "(memory bound; results do not depend on it)")
    p.add_argument("--workers", metavar="N", type=int, help="solve on a local dask cluster "
                   "of N worker processes (a transient study: N threads in this process; "
                   "default [compute] workers, else 1 = in this process; results do not "
                   "depend on it)")
    p.add_argument("--scheduler", metavar="ADDRESS", help="solve on an existing dask "
                   "scheduler, e.g. tcp://10.0.0.5:8786 (default [compute] scheduler)")
    p.add_argument("--store", metavar="DIR", help="stream per-sample results to this Zarr "
                   "store (out of core; default [compute] store); results.nc keeps the "
                   "analysis")
    p.add_argument("--resume", action="store_true", help="with --store: keep the chunks an "
                   "interrupted run of the same study already stored (a finished store: "
                   "only the analysis runs again)")
    p.add_argument("--overwrite", action="store_true", help="replace the earlier result in "
                   "--out (only the files its plyrisk-manifest.json lists) and, without "
                   "--resume, a plyrisk store at --store; files plyrisk did not write are never "
                   "touched")
    p.add_argument("--no-report", action="store_true", help="write results.nc, summary.txt "
                   "and summary.json only")
    _verbosity(p, "no progress bar or progress lines")
    p.add_argument("--fail-if-not-met", action="store_true", help="exit with code 3 when the "
                   "study's criterion ([study] criterion, default 'P95 <= limit') is NOT MET "
                   "or UNDECIDED (for scripts and CI; the results are written all the same)")
    p.epilog = f"{EXIT_CODES}\n\n{p.epilog}"  # the examples stay last
    p.set_defaults(func=cmd_run)


EXIT_CODES = ("exit codes:\n"
              "  0 success (or up to date)\n"
              "  1 internal error, or no sample converged\n"
              "  2 bad input (config, files, arguments)\n"
              "  3 the criterion is NOT MET or UNDECIDED (run --fail-if-not-met only)\n"
              "  130 interrupted (Ctrl-C)")
"""The exit codes, as ``--help`` states them (README and docs/results.md say the same)."""

EXIT_NOT_MET = 3
"""Exit code of ``run --fail-if-not-met`` when the verdict is NOT MET or UNDECIDED."""


def run_options(args: argparse.Namespace) -> RunOptions:
    """The run options of ``plyrisk run``'s arguments (validated by the library)."""
    return RunOptions(samples=args.samples, seed=args.seed, method=args.method,
                      chunk_size=args.chunk_size, workers=args.workers,
                      scheduler=args.scheduler, store=args.store, resume=args.resume,
                      overwrite=args.overwrite, until_converged=args.until_converged,
                      max_runs=args.max_runs, quiet=args.quiet)


def _run_fingerprint(study: Any, options: RunOptions) -> str:
    """Digest of everything that fixes a run's result: the config text, method, design,
    samples, seed, growth options and the plyrisk version [-]."""
    from plyrisk.results.files import fingerprint_of, plyrisk_version

    a = study.analysis
    return fingerprint_of({
        "config_text": study.text, "method": a.method, "design": a.design,
        "samples": int(a.samples), "seed": int(a.seed), "lhs_optimization": a.lhs_optimization,
        "until_converged": bool(options.until_converged), "max_runs": options.max_runs,
        "version": plyrisk_version()})


RUN_NAMES = ("results.nc", "summary.txt", "summary.json", "report.html", "summary.md",
             "tolerances.csv")
"""Files of a run checked for clashes with files plyrisk did not write before any computing
(figures and CSV tables are checked again when the set is committed) [-]."""

_interrupt_note: str | None = None
"""What a Ctrl-C now leaves behind, for the one line :func:`main` prints [-]."""


def _resume_command(args: argparse.Namespace, out_dir: Path, store: Any) -> str:
    words = [PROG, "run", args.config, "--out", str(out_dir), "--store", str(store), "--resume"]
    for option in ("samples", "seed", "method", "chunk_size"):
        value = getattr(args, option)
        if value is not None:
            words += [f"--{option.replace('_', '-')}", str(value)]
    return " ".join(shlex.quote(w) for w in words)


def _kept(out_dir: Path, earlier: bool, store: Any, args: argparse.Namespace) -> str:
    kept = (f"the earlier result in {out_dir} is unchanged" if earlier
            else f"nothing was written to {out_dir}")
    if store:
        kept += (f"; the store {store} keeps every chunk solved so far: continue with "
                 f"{_resume_command(args, out_dir, store)}")
    return kept


def cmd_run(args: argparse.Namespace) -> int:
    """Run ``plyrisk run``: the study end to end, results written to ``--out``.

    The output folder is locked for the run; a folder holding the result of the same study is
    up to date (nothing is recomputed), one holding another result needs ``--overwrite``; the
    new files are staged and replace the earlier set at the end
    (:mod:`plyrisk.results.files`).

    Parameters
    ----------
    args
        Parsed arguments [-].

    Returns
    -------
    int
        0 on success or when up to date; 1 when no sample converged; 3 with
        ``--fail-if-not-met`` when the criterion is NOT MET or UNDECIDED [-].
    """
    global _interrupt_note

    from plyrisk.results.files import OutputSet, decide, folder_lock
    from plyrisk.study.config import load_study, require_runnable
    from plyrisk.tolerances.study import settings_for_study

    _progress_clock(args)
    study = load_study(args.config)
    require_runnable(study)
    options = run_options(args)
    final = options.validate(study)
    out_dir = Path(args.out) if args.out else default_output_dir(args.config)
    if study.tolerances is not None and not args.no_report:
        try:
            settings_for_study(study)
        except ValueError as err:
            raise UsageError(f"{study.source}: tolerances: {err}") from None
    store = options.with_defaults(study).store
    fingerprint = _run_fingerprint(final, options)
    method = get_method(final.analysis.method)
    report = not args.no_report and method.writes_report
    with folder_lock(out_dir, what="--out" if args.out else "output folder"):
        decision = decide(out_dir, fingerprint=fingerprint, overwrite=args.overwrite,
                          names=RUN_NAMES, needs={"report": report})
        if decision.up_to_date:
            m = decision.manifest
            print(f"{out_dir}: up to date: it holds the result of this study ({m.describe()}); "
                  "nothing was recomputed (--overwrite recomputes it)")
            summary = out_dir / "summary.txt"
            if summary.is_file():
                print(summary.read_text(encoding="utf-8"), end="")
            return _verdict_exit(args, _stored_verdict(out_dir))
        _interrupt_note = _kept(out_dir, decision.manifest is not None, store, args)
        with OutputSet(out_dir, decision.manifest,
                       keep_earlier=decision.keep_earlier) as out:
            # the tolerance study needs only the config: started in a forked process before
            # the modules of the run, the dataset and the figures are loaded
            early = None
            if report and study.tolerances is not None and study.screening is None \
                    and not options.until_converged:
                early = _meanwhile(_tolerance_report, final)
            from plyrisk.analysis.study import AnalysisError
            from plyrisk.pipeline.run import run_study

            _xarray_without_dask_array()
            from plyrisk.results.dataset import write_results
            from plyrisk.results.summary_json import write_summary_json

            try:
                result = run_study(study, options=options)
            except AnalysisError as err:
                print(f"{PROG}: {err}", file=sys.stderr)
                print(cautions_text(transient=study.transient is not None))
                return 1
            result.dataset.attrs["study_fingerprint"] = fingerprint
            # results.nc is compressed and written by a forked process while the report is drawn
            written = _meanwhile(write_results, result.dataset, out.staging / "results.nc")
            try:
                text = _summary_and_report(args, method, report, study.tolerances is not None,
                                           result, out_dir, out.staging, early)
                written()
            finally:
                written.join()  # type: ignore[attr-defined]
            write_summary_json(result.dataset, out.staging / "summary.json",
                               fingerprint=fingerprint)
            _interrupt_note = (f"{out_dir} was being replaced and may hold a mix of files: "
                               "run again with --overwrite")
            out.commit(fingerprint=fingerprint, seed=int(final.analysis.seed),
                       method=final.analysis.method, config=str(args.config),
                       details={"report": report})
            _interrupt_note = None
    print(text, end="")
    return _verdict_exit(args, str(result.dataset.attrs.get("verdict", "")))


def _summary_and_report(args: argparse.Namespace, method: Any, report: bool, tolerances: bool,
                        result: Any, out_dir: Path, staging: Path,
                        early: Callable[[], Any] | None) -> str:
    """Write the report of ``plyrisk run`` (with the tolerance table when ``tolerances``;
    ``early``: the tolerance study started before the run, or ``None``) and ``summary.txt``
    into ``staging``; return the summary text [-]."""
    import dataclasses

    from plyrisk.pipeline.progress import phase
    from plyrisk.pipeline.run import summary_text

    result = dataclasses.replace(result, path=out_dir / "results.nc")
    lines = [summary_text(result)]
    if not method.writes_report and not args.no_report:
        lines.append(f"report: not written for method = {method.name} (a screening: "
                     f"the summary above and {result.path} hold its results)")
    elif report:
        rows: Any = None
        if tolerances:
            phase("tolerance feedback for the report ([tolerances] in the config; computed "
                  "while the study runs and the figures are drawn)", args.quiet)
            full = result.screening.study if result.screening is not None else result.study
            if early is None:
                early = _meanwhile(_tolerance_report, full)
            rows = functools.partial(_tolerance_rows, full, result.analysis, early)
        lines.append(_write_report(result.dataset, staging, rows, shown=out_dir,
                                   quiet=args.quiet))
    text = fit_width("\n".join(lines)) + "\n"
    (staging / "summary.txt").write_text(text, encoding="utf-8")
    return text


def _stored_verdict(out_dir: Path) -> str:
    """The overall verdict of the summary.json of an up-to-date folder (``""`` if none)."""
    import json

    try:
        data = json.loads((out_dir / "summary.json").read_text(encoding="utf-8"))
        return str(data["verdict"]["overall"])
    except (OSError, ValueError, KeyError, TypeError):
        return ""


def _verdict_exit(args: argparse.Namespace, verdict: str) -> int:
    """0, or :data:`EXIT_NOT_MET` when ``--fail-if-not-met`` is given and the verdict is not
    MET (an unknown verdict counts as not met)."""
    if getattr(args, "fail_if_not_met", False) and verdict != "MET":
        print(f"{PROG}: criterion {verdict or 'not judged'}: exit code {EXIT_NOT_MET} "
              "(--fail-if-not-met)", file=sys.stderr)
        return EXIT_NOT_MET
    return 0


class _DaskWhenLoaded:
    """dask as xarray's ``DuckArrayModule`` sees it, without importing ``dask.array``: its
    array type is that of ``dask.array`` once something has imported it (no dask array can
    exist before), anything else loads the real entry [-]."""

    def __init__(self, real: Callable[[], Any]) -> None:
        self._make, self._real = real, None

    def _load(self) -> Any:
        if self._real is None:
            self._real = self._make()
        return self._real

    @property
    def type(self) -> tuple[type, ...]:
        module = sys.modules.get("dask.array")
        array = getattr(module, "Array", None)
        return () if array is None else (array,)

    @property
    def module(self) -> Any:
        return self._load().module

    @property
    def version(self) -> Any:
        return self._load().version

    @property
    def available(self) -> bool:
        return bool(self._load().available)


def _xarray_without_dask_array() -> None:
    """Keep xarray from importing ``dask.array`` (a third of a second) just to tell that an
    in-memory array is not a dask array: its entry for dask is made lazy
    (:class:`_DaskWhenLoaded`). Nothing changes when xarray's internals differ or dask.array is
    already loaded [-]."""
    try:
        from xarray.namedarray import pycompat
    except ImportError:  # pragma: no cover - another xarray layout: leave it as it is
        return
    cache = getattr(pycompat, "_cached_duck_array_modules", None)
    real = getattr(pycompat, "DuckArrayModule", None)
    if not isinstance(cache, dict) or real is None or "dask" in cache \
            or "dask.array" in sys.modules:
        return
    cache["dask"] = _DaskWhenLoaded(lambda: real("dask"))


def _tolerance_report(study: Any) -> Any:
    """The tolerance study of the report (:func:`plyrisk.tolerances.study.run_tolerances`) [-]."""
    from plyrisk.tolerances.study import run_tolerances

    return run_tolerances(study)


def _tolerance_rows(study: Any, analysis: Any, report: Callable[[], Any] | None = None
                    ) -> tuple[list, list[str]]:
    """The tolerance table of the report and the advice lines to act on
    (:func:`plyrisk.tolerances.study.run_tolerances`, or ``report()``: its result computed
    meanwhile); with correlated inputs the table's shares are the study's Shapley effects [-]."""
    from plyrisk.tolerances.output import (
        headline_probability,
        manufacturing_table,
        shapley_intervals,
        shapley_shares,
        tolerance_advice,
    )

    report = _tolerance_report(study) if report is None else report()
    shares = shapley_shares(report, analysis)  # correlated inputs: Shapley effects
    rows = manufacturing_table(report, study, indices=shares, index_name="Shapley effect",
                               index_ci=shapley_intervals(report, analysis))
    return rows, tolerance_advice(report, study, probability=headline_probability(analysis))


def _meanwhile(function: Callable[..., Any], *args: Any) -> Callable[[], Any]:
    """Start ``function(*args)`` in a forked process (Linux, two or more cores) and return a
    function that waits for its result (its ``join()`` waits for the process only). Without a
    fork, or when the process fails, it is computed here on the first call instead: same
    result, same errors [-]."""
    import os

    if sys.platform != "linux" or len(os.sched_getaffinity(0)) < 2:
        def here() -> Any:
            return function(*args)
        here.join = lambda: None  # type: ignore[attr-defined]
        return here
    import multiprocessing
    import pickle
    import warnings

    receive, send = multiprocessing.Pipe(duplex=False)

    def child() -> None:
        try:
            payload = pickle.dumps(("ok", function(*args)))
        except BaseException:  # the parent computes it again and reports the error itself
            payload = pickle.dumps(("failed", None))
        send.send_bytes(payload)

    with warnings.catch_warnings():  # a fork while other threads run is fine here
        warnings.simplefilter("ignore", DeprecationWarning)
        process = multiprocessing.get_context("fork").Process(target=child, daemon=True)
        process.start()
    send.close()
    got: list = []
    done: list = []

    def received() -> tuple[str, Any]:
        if not got:
            try:
                got.append(pickle.loads(receive.recv_bytes()))
            except (EOFError, OSError, pickle.UnpicklingError):
                got.append(("failed", None))
            process.join()
        return got[0]

    def result() -> Any:
        if not done:
            status, value = received()
            done.append(value if status == "ok" else function(*args))
        return done[0]
    result.join = lambda: received() and None  # type: ignore[attr-defined]
    return result


def _write_report(ds: Any, out_dir: Path, rows: Any, *, shown: Path | None = None,
                  advice: Sequence[str] = (), quiet: bool = True) -> str:
    """Write the report (and the tolerance table and advice, when given) into ``out_dir``;
    return the line to print, naming the files in ``shown`` (where they end up) [-].

    ``rows`` are :class:`plyrisk.tolerances.output.ManufacturingRow` (the canonical
    ``tolerances.csv``, cautions first, is written from them), or a function returning a
    ``(rows, advice)`` pair, called once the figures are drawn. Unless ``quiet``, a line on
    stderr as each stage begins.
    """
    from dataclasses import asdict

    from plyrisk.pipeline.progress import phase
    from plyrisk.report.html import write_report
    from plyrisk.tolerances.output import write_tolerance_csv

    got: list = []

    def pending() -> tuple[list, Sequence[str]]:  # the rows and advice, computed once
        if not got:
            got.append(rows() if callable(rows) else (rows, advice))
        return got[0]

    files = write_report(ds, out_dir, tolerance_table=None if rows is None else
                         (lambda: ([asdict(r) for r in pending()[0]], pending()[1])),
                         progress=lambda text: phase(text, quiet))
    if rows is not None:  # the canonical tolerance CSV, cautions first
        table, notes = pending()
        write_tolerance_csv(table, out_dir / "tolerances.csv", advice=notes)
    where = out_dir if shown is None else shown
    return f"report: {where / files.html.name}  (summary: {files.markdown.name}; figures and " \
           f"CSV tables in {where})"


def _update_folder(out_dir: Path, fingerprint: str, ds: Any, write: Callable[[Path], str],
                   what: str) -> str:
    """Add files to an output folder as one set under its lock, keeping its other files.

    ``write(staging)`` writes the files into the staging folder and returns the line to print.
    """
    from plyrisk.results.files import OutputSet, decide_update, folder_lock

    with folder_lock(out_dir, what=what):
        earlier = decide_update(out_dir, fingerprint=fingerprint, names=RUN_NAMES[2:])
        with OutputSet(out_dir, earlier, keep_earlier=True) as out:
            line = write(out.staging)
            attrs = ds.attrs if ds is not None else {}
            seed = attrs.get("seed")
            out.commit(fingerprint=fingerprint, seed=None if seed is None else int(seed),
                       method=str(attrs.get("method", "")),
                       config=str(attrs.get("config_source", "")),
                       details={"report": True} if ds is not None else {})
    return line


# ----------------------------------------------------------------------------------------------
# report
# ----------------------------------------------------------------------------------------------


def _add_report(subparsers) -> None:
    p = subparsers.add_parser(
        "report",
        help="write the HTML report, Markdown summary, figures and CSV tables of a results.nc",
        description="Write the report of a finished study (plyrisk run does this by default): "
        "report.html (self-contained), summary.md, figures/*.png|svg and CSV tables. The "
        "tolerance section comes from the tolerances.csv beside the results file, when there "
        "is one.",
        epilog=_examples(
            "plyrisk report study/results.nc              # rewrite the report in study/",
            "plyrisk report study/results.nc --out share  # write it to another folder"),
        formatter_class=_Formatter,
    )
    p.add_argument("results", help="a results.nc written by plyrisk run, or its folder")
    p.add_argument("--out", metavar="DIR", help="output folder (default: the folder of the "
                   "results file)")
    _verbosity(p, "no progress lines (they are shown on a terminal only)")
    p.set_defaults(func=cmd_report)


def cmd_report(args: argparse.Namespace) -> int:
    """Run ``plyrisk report``: the report of a stored results dataset.

    Parameters
    ----------
    args
        Parsed arguments [-].

    Returns
    -------
    int
        0 on success [-].
    """
    from plyrisk.pipeline.progress import phase
    from plyrisk.results.dataset import read_results

    _progress_clock(args)
    path = Path(args.results)
    if path.is_dir() and (path / "results.nc").is_file():  # the output folder of a run
        path = path / "results.nc"
    if not path.is_file():
        raise UsageError(f"{path}: no such results file (give the results.nc that plyrisk run "
                         "wrote, or its folder)")
    # stages on stderr when it is a terminal (a script reading stderr gets errors only, one
    # line each)
    quiet = args.quiet or not sys.stderr.isatty()
    phase(f"reading {path}", quiet)
    try:
        ds = read_results(path)
    except (OSError, ValueError) as err:
        raise UsageError(f"{path}: not a readable NetCDF results file ({err})") from None
    out_dir = Path(args.out) if args.out else path.parent
    rows, advice = _stored_tolerances(path.parent / "tolerances.csv")

    def write(staging: Path) -> str:
        from plyrisk.results.summary_json import write_summary_json

        try:
            write_summary_json(ds, staging / "summary.json")
            return _write_report(ds, staging, rows, shown=out_dir, advice=advice, quiet=quiet)
        except (KeyError, TypeError, ValueError) as err:
            raise UsageError(f"{path}: not a complete plyrisk results file ({err})") from None

    line = _update_folder(out_dir, str(ds.attrs.get("study_fingerprint", "")), ds, write,
                          "--out" if args.out else "output folder")
    print(line)
    print(cautions_text(transient=ds.attrs.get("study_kind") == "transient"))
    return 0


def _stored_tolerances(path: Path) -> tuple[list[Any] | None, list[str]]:
    """The tolerance table and advice ``plyrisk tolerances`` or ``run`` stored beside a
    results file, so that a regenerated report keeps its tolerance section [-]."""
    from plyrisk.tolerances.output import manufacturing_rows, read_tolerance_csv

    if not path.is_file():
        return None, []
    try:
        records, advice = read_tolerance_csv(path)
        rows = manufacturing_rows(records)
    except (OSError, ValueError, UnicodeDecodeError) as err:
        print(f"{PROG}: note: {path} was not read; the report has no tolerance section "
              f"({err})", file=sys.stderr)
        return None, []
    return rows, advice


# ----------------------------------------------------------------------------------------------
# tolerances
# ----------------------------------------------------------------------------------------------


def _add_tolerances(subparsers) -> None:
    p = subparsers.add_parser(
        "tolerances",
        help="tolerance feedback: what-if, allowable spreads, least-cost allocation",
        description="Re-run the model with common random numbers to show what tightening each "
        "input does, the largest spread of each input that meets a target, a least-cost set "
        "of spreads (verified with a new seed) and, if configured, the nominal shift that "
        "meets it; print the table for manufacturing and write DIR/tolerances.csv. Settings: "
        "[tolerances] in the config (docs/tolerances.md).",
        epilog=_examples(
            "plyrisk tolerances study.toml                  # settings from [tolerances]",
            "plyrisk tolerances study.toml --target \"P(exceed) <= 1 %\"",
            "plyrisk tolerances study.toml --samples 4096 --seed 3 --out study",
            "plyrisk run study.toml && plyrisk tolerances study.toml   # table into the report"),
        formatter_class=_Formatter,
    )
    p.add_argument("config", help="study config file (TOML)")
    p.add_argument("--target", metavar="TEXT", help="target overriding [tolerances] target, "
                   "e.g. \"P95 <= limit\" or \"P(exceed) <= 1 %%\"")
    p.add_argument("--samples", metavar="N", type=int, help="design size (overrides "
                   "[tolerances] samples)")
    p.add_argument("--seed", metavar="S", type=int, help="seed (overrides [tolerances] seed)")
    p.add_argument("--out", metavar="DIR", help="output folder (default: a folder named after "
                   "the config, in the current directory)")
    _verbosity(p, "no progress messages")
    p.set_defaults(func=cmd_tolerances)


def _tolerance_blame(study: Any, args: argparse.Namespace) -> str:
    """Where a refused tolerance setting came from: ``--target`` when that target does not fit
    the study, else ``--samples`` when given (the design size is what remains to refuse), else
    the config's ``[tolerances]``."""
    from plyrisk.study.targets import parse_target
    from plyrisk.tolerances.study import check_target_fits

    if args.target is not None:
        output = getattr(study.analysis, "limit_output", "inner_surface_temperature")
        try:
            check_target_fits(study, parse_target(args.target, output=output))
        except ValueError:
            return "--target"
    return "--samples" if args.samples is not None else f"{study.source}: tolerances"


def cmd_tolerances(args: argparse.Namespace) -> int:
    """Run ``plyrisk tolerances``: print the tolerance report, write ``DIR/tolerances.csv``.

    Parameters
    ----------
    args
        Parsed arguments [-].

    Returns
    -------
    int
        0 on success [-].
    """
    from plyrisk.pipeline.progress import phase
    from plyrisk.results.dataset import read_results
    from plyrisk.study.config import load_study, require_runnable
    from plyrisk.study.targets import parse_target
    from plyrisk.tolerances.output import (
        manufacturing_table,
        tolerance_advice,
        tolerance_text,
        write_tolerance_csv,
    )
    from plyrisk.tolerances.study import run_tolerances, settings_for_study

    _progress_clock(args)
    study = load_study(args.config)
    require_runnable(study)
    if args.samples is not None and args.samples < 2:
        raise UsageError(f"--samples must be an integer >= 2, got {args.samples}")
    if args.seed is not None and not 0 <= args.seed <= MAX_SEED:
        raise UsageError(f"--seed must be a whole number from 0 to 2**64 - 1, got {args.seed}")
    if args.target is not None:
        try:
            parse_target(args.target)
        except ValueError as err:
            raise UsageError(f"--target: {err}") from None
    out_dir = Path(args.out) if args.out else default_output_dir(args.config)
    try:
        settings_for_study(study, target=args.target, samples=args.samples, seed=args.seed)
    except ValueError as err:
        raise UsageError(f"{_tolerance_blame(study, args)}: {err}") from None
    show = not args.quiet  # a plain line per stage, on a terminal or not
    report = run_tolerances(
        study, target=args.target, samples=args.samples, seed=args.seed,
        progress=(lambda stage: phase(stage, False)) if show else None)
    rows = manufacturing_table(report, study)
    advice = tolerance_advice(report, study)
    results = out_dir / "results.nc"
    ds = note = None
    if results.is_file():  # a study run already in the folder: add the table to its report
        try:
            ds = read_results(results)
        except (OSError, KeyError, TypeError, ValueError) as err:
            note = (f"{PROG}: note: {results} was left as it is: not a readable results file of "
                    f"this study ({err})")

    def write(staging: Path) -> str:
        nonlocal note
        path = write_tolerance_csv(rows, staging / "tolerances.csv", advice=advice)
        text = tolerance_text(report, study, csv_path=out_dir / path.name)
        if ds is not None:
            try:
                text += "\n" + _write_report(ds, staging, rows, shown=out_dir, advice=advice)
            except (KeyError, TypeError, ValueError) as err:
                note = (f"{PROG}: note: the report in {out_dir} was left as it is: {results} is "
                        f"not a complete results file ({err})")
        return text

    fingerprint = "" if ds is None else str(ds.attrs.get("study_fingerprint", ""))
    print(fit_width(_update_folder(out_dir, fingerprint, ds, write,
                                   "--out" if args.out else "output folder")))
    if note:
        print(note, file=sys.stderr)
    return 0


# ----------------------------------------------------------------------------------------------
# init
# ----------------------------------------------------------------------------------------------


def _add_init(subparsers) -> None:
    from plyrisk.templates import TEMPLATES

    p = subparsers.add_parser(
        "init",
        help="write a commented starting config (an invented demo study) to edit",
        description="Write a commented starting config: one of the invented demo studies, "
        "labelled as such, to replace with the data of your own assembly. It passes "
        "'plyrisk check' as written. An existing file is never overwritten. Templates: "
        + "; ".join(f"{k}: {v[2]}" for k, v in TEMPLATES.items()) + ".",
        epilog=_examples(
            "plyrisk init study.toml                        # the garment template",
            "plyrisk init --template transient flash.toml   # a transient (burn) study",
            "plyrisk init --template blanket blanket.toml && plyrisk check blanket.toml"),
        formatter_class=_Formatter,
    )
    p.add_argument("file", help="config file to write (must not exist)")
    p.add_argument("--template", metavar="NAME", default="garment",
                   choices=tuple(TEMPLATES), help="starting study: " + ", ".join(TEMPLATES)
                   + " (default garment)")
    p.set_defaults(func=cmd_init)


def cmd_init(args: argparse.Namespace) -> int:
    """Run ``plyrisk init``: write a starting config, refusing to overwrite.

    Parameters
    ----------
    args
        Parsed arguments [-].

    Returns
    -------
    int
        0 on success [-].
    """
    from plyrisk.provenance import package_version
    from plyrisk.templates import template_text

    path = Path(args.file)
    head = (f"# Starting config written by `plyrisk init --template {args.template}` (plyrisk "
            f"{package_version()}).\n"
            "# Every value below is INVENTED: replace each one with the data of your own "
            "assembly.\n"
            "# Keys: docs/config.md. Next: `plyrisk check FILE`, then `plyrisk run FILE`.\n"
            "# Results are engineering estimates only, not a substitute for certification "
            "testing by\n# accredited laboratories; defer to the applicable standards, local "
            "codes and qualified\n# practice.\n#\n")
    try:
        with path.open("x", encoding="utf-8") as f:
            f.write(head + template_text(args.template))
    except FileExistsError:
        raise UsageError(f"{path}: already exists; plyrisk init never overwrites a file "
                         "(choose another name)") from None
    print(f"wrote {path} (template {args.template}: an invented study to edit); next: "
          f"{PROG} check {shlex.quote(str(path))}")
    return 0


# ----------------------------------------------------------------------------------------------
# completion
# ----------------------------------------------------------------------------------------------


def _add_completion(subparsers) -> None:
    from plyrisk.text.completion import SHELLS

    p = subparsers.add_parser(
        "completion",
        help="print a shell completion script (verbs, options, config and results files)",
        description="Print a completion script for bash or zsh, generated from plyrisk's own "
        "arguments: TAB then offers the verbs, each verb's options, study configs (*.toml) "
        "where a config is expected, results files (*.nc) for report, folders for DIR "
        "options and the methods for --method. Load it in the shell's start-up file.",
        epilog=_examples(
            "plyrisk completion bash > ~/.plyrisk.bash  # ~/.bashrc: source ~/.plyrisk.bash",
            "plyrisk completion bash > ~/.local/share/bash-completion/completions/plyrisk",
            "plyrisk completion zsh > ~/.plyrisk.zsh    # ~/.zshrc: source ~/.plyrisk.zsh"),
        formatter_class=_Formatter,
    )
    p.add_argument("shell", choices=SHELLS, help="the shell: " + ", ".join(SHELLS))
    p.set_defaults(func=cmd_completion)


def cmd_completion(args: argparse.Namespace) -> int:
    """Run ``plyrisk completion SHELL``: print the completion script.

    Parameters
    ----------
    args
        Parsed arguments; ``args.shell`` is the shell [-].

    Returns
    -------
    int
        0 [-].
    """
    from plyrisk.text.completion import completion_script

    print(completion_script(build_parser(), args.shell, values={"--method": tuple(METHODS)}),
          end="")
    return 0


# ----------------------------------------------------------------------------------------------
# Entry point
# ----------------------------------------------------------------------------------------------

VERBS: tuple[Callable, ...] = (_add_init, _add_check, _add_run, _add_report, _add_tolerances,
                               _add_completion)
"""Adders of the subcommands, in help order."""


def build_parser() -> argparse.ArgumentParser:
    """The argument parser with every verb of :data:`VERBS` [-]."""
    parser = _Parser(
        prog=PROG,
        description="Uncertainty and sensitivity studies of heat transfer through "
        "multilayer heat-protective assemblies: steady temperatures and transient exposures "
        "with skin burn injury. Engineering estimates only.",
        epilog=EXIT_CODES + "\n\n" + _examples(
            "plyrisk init study.toml        # a commented starting config (invented values)",
            "plyrisk check study.toml       # validate it; nominal solution",
            "plyrisk run study.toml         # the study; results and report in ./study/",
            "plyrisk tolerances study.toml  # tolerance feedback",
            "plyrisk completion bash       # TAB completion: source its output in ~/.bashrc",
            "plyrisk VERB --help            # options and examples of one verb"),
        formatter_class=_Formatter,
    )
    from plyrisk.provenance import package_version

    parser.add_argument("--version", action="version", version=f"{PROG} {package_version()}")
    sub = parser.add_subparsers(dest="verb", metavar="VERB", parser_class=_Parser)
    for add in VERBS:
        add(sub)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Run the ``plyrisk`` command line.

    Parameters
    ----------
    argv
        Arguments without the program name; ``None`` reads ``sys.argv[1:]`` [-].

    Returns
    -------
    int
        The exit code (:data:`EXIT_CODES`): 0 success, 1 an internal error or a failed
        solve, 2 a user mistake, 3 criterion not met (``run --fail-if-not-met``), 130
        interrupted (Ctrl-C).
    """
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except UsageError as err:
        return _fail(f"{err} (see '{PROG} --help')")
    except SystemExit as stop:  # --help
        return int(stop.code or 0)
    if getattr(args, "func", None) is None:
        verbs = ", ".join(sorted(build_parser()._subparsers._group_actions[0].choices))
        return _fail(f"missing VERB; choose from: {verbs} (see '{PROG} --help')")
    global _interrupt_note
    _interrupt_note = None
    try:
        code = int(args.func(args))
    except KeyboardInterrupt:
        kept = _interrupt_note or "nothing was written"
        print(f"{PROG}: interrupted: {kept}", file=sys.stderr)
        return 130
    except ConfigError as err:
        return _fail(str(err))
    except (UsageError, PlyriskError) as err:
        return _fail(f"{err} (see '{PROG} {args.verb} --help')")
    except OSError as err:  # unwritable output folder, disk full, ...
        where = f"{err.filename}: " if getattr(err, "filename", None) else ""
        return _fail(f"{where}{err.strerror or err}")
    except Exception:  # a bug: the traceback under --verbose, else one line asking for it
        if getattr(args, "verbose", False):
            raise
        kind = sys.exc_info()[0].__name__
        print(f"{PROG}: internal error ({kind}); run again with --verbose for the traceback "
              "and report it", file=sys.stderr)
        return 1
    return code if argv is not None else _leave(code)


def _leave(code: int) -> int:
    """End the ``plyrisk`` process with ``code`` at once, its output flushed and its exit
    handlers run, without the interpreter's teardown of every loaded module (about 0.6 s once
    matplotlib, xarray, pandas and scipy are loaded). Only for the command line itself (no
    ``argv`` given), with those modules loaded and no other thread running; otherwise, or when
    the output cannot be flushed, ``code`` is returned for the usual exit [-]."""
    import threading

    if "xarray" not in sys.modules or threading.active_count() > 1:
        return code
    try:
        sys.stdout.flush()
        sys.stderr.flush()
    except (OSError, ValueError):  # a closed pipe or stream: the usual exit reports it
        return code
    import atexit
    import os

    atexit._run_exitfuncs()
    os._exit(code)


def _fail(message: str) -> int:
    print(f"{PROG}: error: {' '.join(message.split())}", file=sys.stderr)
    return 2


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
