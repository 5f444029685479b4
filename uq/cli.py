"""The ``plyrisk`` command line: one subcommand (verb) per function.

``plyrisk check CONFIG`` validates a study config and prints its uncertain parameters and the
nominal solution. Exit codes: 0 success; 1 the nominal solve failed to converge; 2 a user
mistake (bad config, missing file, bad arguments), reported as exactly one line on stderr,
``plyrisk: error: <file>: <key path>: <message>``.

A verb is added by writing ``_add_<verb>(subparsers)`` (which sets ``func``) and a
``cmd_<verb>(args) -> int`` and listing the adder in :data:`VERBS`.
"""

from __future__ import annotations

import argparse
import sys
import warnings
from collections.abc import Callable, Sequence
from dataclasses import asdict, replace
from pathlib import Path

import numpy as np

from models.network import NetworkSolution, solve_network
from models.stack import StackError
from uq.analysis import AnalysisError
from uq.cautions import cautions_text
from uq.config import load_study, require_runnable, stack_key_path
from uq.errors import ConfigError
from uq.pipeline import default_output_dir, run_study, summary_text
from uq.report import write_report
from uq.storage import read_results
from uq.study import Study
from uq.targets import parse_target
from uq.tolerance_io import manufacturing_table, tolerance_text, write_tolerance_csv
from uq.tolerances import run_tolerances

PROG = "plyrisk"


class UsageError(Exception):
    """A command-line mistake; reported as one line, exit code 2."""


class _Parser(argparse.ArgumentParser):
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
        "solution (every uncertain input at its nominal value) and the margin to the limit.",
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
    study = load_study(args.config)
    solution, notes = _nominal_solve(study)
    if study.cold_side.kind == "temperature":
        notes.append("the cold side prescribes the innermost face's temperature, so the "
                     "inner-surface temperature is fixed; use a cold side of kind 'surface' or "
                     "'environment' to study it, or analyse other outputs")
    out: list[str] = [f"Study: {study.title}", f"Config: {study.source}", ""]
    out += _analysis_lines(study)
    out += [""] + _parameter_lines(study)
    out += [""] + _solution_lines(study, solution)
    converged = bool(np.all(solution.converged))
    if study.scenarios is not None:
        scen, scen_ok = _scenario_lines(study, notes)
        out += [""] + scen
        converged &= scen_ok
    if notes:
        out += ["", "Notes"] + [f"  - {n}" for n in dict.fromkeys(notes)]
    out += ["", cautions_text()]
    print("\n".join(out))
    return 0 if converged else 1


def _solve(study: Study, layers, hot, cold, notes: list[str]) -> NetworkSolution:
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        try:
            solution = solve_network(layers, hot, cold, **study.model.solver_kwargs())
        except StackError as err:
            raise ConfigError(study.source, stack_key_path(err), str(err)) from None
    notes.extend(" ".join(str(w.message).split()) for w in caught)
    return solution


def _nominal_solve(study: Study) -> tuple[NetworkSolution, list[str]]:
    notes: list[str] = []
    solution = _solve(study, study.layers, study.hot_side, study.cold_side, notes)
    return solution, notes


def _analysis_lines(study: Study) -> list[str]:
    a, m = study.analysis, study.model
    method = {"sobol": f"Sobol indices, {a.samples} base rows (Saltelli design)",
              "lhs": f"Latin hypercube, {a.samples} samples"
              + (f", {a.lhs_optimization} optimization" if a.lhs_optimization else ""),
              "random": f"plain Monte Carlo, {a.samples} samples"}[a.method]
    lines = [
        f"Analysis: {method}; seed {a.seed}",
        f"  limit: inner-surface temperature {study.format_temperature(a.limit)}",
        "  percentiles: " + ", ".join(f"{100 * q:g}" for q in a.percentiles)
        + f"; confidence {100 * a.confidence:g} %",
        f"Model: radiation {m.radiation}; natural convection in gaps "
        f"{'on' if m.convection else 'off'}; tolerance {m.tolerance:g} K; "
        f"at most {m.max_iterations} iterations",
    ]
    if a.outputs:
        lines.insert(3, "  extra outputs: " + ", ".join(a.outputs))
    try:
        require_runnable(study)
    except ConfigError as err:
        lines.append(f"  NOTE: this study cannot be run yet: {err.key_path}: {err.message}")
    return lines


def _parameter_lines(study: Study) -> list[str]:
    if not study.parameters:
        return ["Uncertain parameters: none (every input is fixed)"]
    rows = []
    for p in study.parameters:
        d = p.distribution
        lo, hi = d.interval(0.90)
        lo_u, hi_u = p.to_unit([lo, hi])
        rows.append([p.name, p.describe(), p.format(d.mean),
                     f"{lo_u:.4g} .. {hi_u:.4g} {p.unit}".rstrip(), p.truncation()])
    header = ["parameter", "distribution", "mean", "5-95 % range", "truncation"]
    return [f"Uncertain parameters ({len(rows)})"] + _table(header, rows)


def _solution_lines(study: Study, sol: NetworkSolution) -> list[str]:
    unit = study.limit_unit
    fmt_t = study.format_temperature
    lines = ["Nominal solution (every uncertain input at its nominal value)"]
    if not bool(sol.converged[0]):
        n = int(sol.iterations[0])
        lines += [
            f"  WARNING: the nominal solve did not converge after {n} iteration"
            f"{'' if n == 1 else 's'} (or reached an unphysical state): no results.",
            "  Check the inputs, or raise [model] max_iterations.",
        ]
        return lines
    r = sol.layer_resistance[0]
    total = float(np.sum(r))
    rows = []
    for j, name in enumerate(sol.element_names):
        kind = sol.element_kinds[j]
        gap = kind == "gap"
        note = ""
        if gap and bool(sol.convection_onset[0, j]):
            note = ("natural convection included" if study.model.convection else
                    "past convection onset; convection is off (set [model] convection = true)")
        rows.append([
            name, kind, f"{r[j]:.4g}",
            fmt_t(sol.layer_temperature_drop[0, j], difference=True),
            f"{100 * r[j] / total:.1f}",
            f"{100 * sol.radiative_share[0, j]:.1f}" if gap else "-",
            f"{sol.rayleigh_number[0, j]:.3g}" if gap else "-",
            note,
        ])
    header = ["element", "kind", "R [m^2 K/W]", "temperature drop", "share of R [%]",
              "radiative [%]", "Rayleigh", "note"]
    lines += _table(header, rows)
    lines += ["", f"Interface temperatures [{unit or 'K'}] (hot side first)"]
    lines += _table(["interface", "temperature"],
                    [[n, fmt_t(t)] for n, t in zip(sol.interface_names,
                                                   sol.interface_temperature[0], strict=True)])
    t_in = float(sol.inner_surface_temperature[0])
    lines += [
        "",
        f"Heat flux: {float(sol.heat_flux[0]):.4g} W/m^2",
        f"Total thermal resistance of the elements: {total:.4g} m^2 K/W",
        f"Inner-surface temperature: {fmt_t(t_in)}",
        _margin_text(study, t_in),
    ]
    return lines


def _margin_text(study: Study, t_inner: float) -> str:
    margin = study.analysis.limit - t_inner
    shown = study.format_temperature(abs(margin), difference=True)
    limit = study.format_temperature(study.analysis.limit)
    if margin >= 0:
        return f"Margin to the limit ({limit}): {shown} below the limit"
    return f"Margin to the limit ({limit}): EXCEEDS the limit by {shown}"


def _scenario_lines(study: Study, notes: list[str]) -> tuple[list[str], bool]:
    sc = study.scenarios
    hot = replace(study.hot_side, **{sc.quantity: np.asarray(sc.values, dtype=float)})
    sol = _solve(study, study.layers, hot, study.cold_side, notes)
    rows = []
    for k, label in enumerate(sc.labels):
        if not bool(sol.converged[k]):
            rows.append([label, "did not converge", "-", "-"])
            continue
        t_in = float(sol.inner_surface_temperature[k])
        margin = study.analysis.limit - t_in
        rows.append([label, study.format_temperature(t_in), f"{float(sol.heat_flux[k]):.4g}",
                     ("" if margin >= 0 else "-")
                     + study.format_temperature(abs(margin), difference=True)])
    header = [f"hot_side.{sc.quantity}", "inner surface", "heat flux [W/m^2]",
              "margin to limit"]
    title = f"Scenarios: hot_side.{sc.quantity} swept, nominal inputs (negative margin = over)"
    return [title] + _table(header, rows), bool(np.all(sol.converged))


def _table(header: Sequence[str], rows: Sequence[Sequence[str]]) -> list[str]:
    """Rows of left-aligned columns, two spaces apart, indented by two."""
    cols = list(zip(header, *rows, strict=True))
    widths = [max(len(str(c)) for c in col) for col in cols]

    def line(cells) -> str:
        return "  " + "  ".join(str(c).ljust(w) for c, w in zip(cells, widths, strict=True))

    return [line(header).rstrip(), line("-" * w for w in widths).rstrip()] + [
        line(r).rstrip() for r in rows
    ]


# ----------------------------------------------------------------------------------------------
# run
# ----------------------------------------------------------------------------------------------


def _add_run(subparsers) -> None:
    p = subparsers.add_parser(
        "run",
        help="run the study: sample, solve, analyse, write results.nc and the report",
        description="Run the study of a config: draw the design, solve the network for every "
        "sample and exposure, compute percentiles, exceedance and Sobol indices, write "
        "DIR/results.nc and the report, and print the summary.",
    )
    p.add_argument("config", help="study config file (TOML)")
    p.add_argument("--out", metavar="DIR", help="output folder (default: a folder named after "
                   "the config, in the current directory)")
    p.add_argument("--samples", metavar="N", type=int, help="base sample count (overrides "
                   "[study] samples; a power of two for method = sobol)")
    p.add_argument("--seed", metavar="S", type=int, help="seed (overrides [study] seed)")
    p.add_argument("--chunk-size", metavar="N", type=int, help="samples per evaluation chunk "
                   "(memory bound; results do not depend on it)")
    p.add_argument("--workers", metavar="N", type=int, default=1, help="processes solving "
                   "chunks in parallel (default 1; results do not depend on it)")
    p.add_argument("--no-report", action="store_true", help="write results.nc only")
    p.add_argument("--quiet", action="store_true", help="no progress bar")
    p.set_defaults(func=cmd_run)


def _check_overrides(study: Study, args: argparse.Namespace) -> None:
    n = args.samples
    if n is not None:
        if n < 1:
            raise UsageError(f"--samples must be a positive integer, got {n}")
        if study.analysis.method == "sobol" and n & (n - 1):
            lo = 1 << (n.bit_length() - 1)
            raise UsageError(f"--samples {n}: method = sobol needs a power of two "
                             f"(e.g. {lo} or {2 * lo})")
    if args.seed is not None and args.seed < 0:
        raise UsageError(f"--seed must be zero or positive, got {args.seed}")
    if args.chunk_size is not None and args.chunk_size < 1:
        raise UsageError(f"--chunk-size must be a positive integer, got {args.chunk_size}")
    if args.workers < 1:
        raise UsageError(f"--workers must be a positive integer, got {args.workers}")


def cmd_run(args: argparse.Namespace) -> int:
    """Run ``plyrisk run``: the study end to end, results written to ``--out``.

    Parameters
    ----------
    args
        Parsed arguments [-].

    Returns
    -------
    int
        0 on success; 1 when no sample converged [-].
    """
    study = load_study(args.config)
    require_runnable(study)
    _check_overrides(study, args)
    out_dir = Path(args.out) if args.out else default_output_dir(args.config)
    try:
        result = run_study(study, out_dir=out_dir, samples=args.samples, seed=args.seed,
                           chunk_size=args.chunk_size, quiet=args.quiet, workers=args.workers)
    except AnalysisError as err:
        print(f"{PROG}: {err}", file=sys.stderr)
        print(cautions_text())
        return 1
    print(summary_text(result))
    if not args.no_report:
        rows = None
        if study.tolerances is not None:
            if not args.quiet and sys.stderr.isatty():
                print(f"{PROG}: tolerance feedback for the report ([tolerances] in the "
                      "config) ...", file=sys.stderr)
            rows = manufacturing_table(run_tolerances(result.study), result.study)
        print(_write_report(result.dataset, out_dir, rows))
    return 0


def _write_report(ds, out_dir: Path, rows) -> str:
    """Write the report (and the tolerance table, when given); return the line to print."""
    files = write_report(ds, out_dir, tolerance_table=None if rows is None else
                         [asdict(r) for r in rows])
    if rows is not None:  # the canonical tolerance CSV, cautions first
        write_tolerance_csv(rows, out_dir / "tolerances.csv")
    return f"report: {files.html}  (summary: {files.markdown.name}; figures and CSV tables in " \
           f"{out_dir})"


# ----------------------------------------------------------------------------------------------
# report
# ----------------------------------------------------------------------------------------------


def _add_report(subparsers) -> None:
    p = subparsers.add_parser(
        "report",
        help="write the HTML report, Markdown summary, figures and CSV tables of a results.nc",
        description="Write the report of a finished study (plyrisk run does this by default): "
        "report.html (self-contained), summary.md, figures/*.png|svg and CSV tables.",
    )
    p.add_argument("results", help="a results.nc written by plyrisk run")
    p.add_argument("--out", metavar="DIR", help="output folder (default: the folder of the "
                   "results file)")
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
    path = Path(args.results)
    if not path.is_file():
        raise UsageError(f"{path}: no such results file")
    try:
        ds = read_results(path)
    except (OSError, ValueError) as err:
        raise UsageError(f"{path}: not a readable NetCDF results file ({err})") from None
    out_dir = Path(args.out) if args.out else path.parent
    try:
        line = _write_report(ds, out_dir, None)
    except ValueError as err:
        raise UsageError(f"{path}: {err}") from None
    print(line)
    print(cautions_text())
    return 0


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
    )
    p.add_argument("config", help="study config file (TOML)")
    p.add_argument("--target", metavar="TEXT", help="target overriding [tolerances] target, "
                   "e.g. \"P95 <= limit\" or \"P(exceed) <= 1 %%\"")
    p.add_argument("--samples", metavar="N", type=int, help="design size (overrides "
                   "[tolerances] samples)")
    p.add_argument("--seed", metavar="S", type=int, help="seed (overrides [tolerances] seed)")
    p.add_argument("--out", metavar="DIR", help="output folder (default: a folder named after "
                   "the config, in the current directory)")
    p.add_argument("--quiet", action="store_true", help="no progress messages")
    p.set_defaults(func=cmd_tolerances)


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
    study = load_study(args.config)
    require_runnable(study)
    if args.samples is not None and args.samples < 2:
        raise UsageError(f"--samples must be an integer >= 2, got {args.samples}")
    if args.seed is not None and args.seed < 0:
        raise UsageError(f"--seed must be zero or positive, got {args.seed}")
    if args.target is not None:
        try:
            parse_target(args.target)
        except ValueError as err:
            raise UsageError(f"--target: {err}") from None
    show = not args.quiet and sys.stderr.isatty()
    report = run_tolerances(
        study, target=args.target, samples=args.samples, seed=args.seed,
        progress=(lambda stage: print(f"{PROG}: {stage} ...", file=sys.stderr)) if show
        else None)
    out_dir = Path(args.out) if args.out else default_output_dir(args.config)
    rows = manufacturing_table(report, study)
    path = write_tolerance_csv(rows, out_dir / "tolerances.csv")
    print(tolerance_text(report, study, csv_path=path))
    results = out_dir / "results.nc"
    if results.is_file():  # a study run already in the folder: add the table to its report
        print(_write_report(read_results(results), out_dir, rows))
    return 0


# ----------------------------------------------------------------------------------------------
# Entry point
# ----------------------------------------------------------------------------------------------

VERBS: tuple[Callable, ...] = (_add_check, _add_run, _add_report, _add_tolerances)
"""Adders of the subcommands, in help order."""


def build_parser() -> argparse.ArgumentParser:
    """The argument parser with every verb of :data:`VERBS` [-]."""
    parser = _Parser(
        prog=PROG,
        description="Uncertainty and sensitivity studies of steady heat transfer through "
        "multilayer heat-protective assemblies. Engineering estimates only.",
    )
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
        The exit code: 0 success, 1 a failed solve, 2 a user mistake [-].
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
    try:
        return int(args.func(args))
    except ConfigError as err:
        return _fail(str(err))
    except UsageError as err:
        return _fail(f"{err} (see '{PROG} {args.verb} --help')")
    except OSError as err:  # unwritable output folder, disk full, ...
        where = f"{err.filename}: " if getattr(err, "filename", None) else ""
        return _fail(f"{where}{err.strerror or err}")


def _fail(message: str) -> int:
    print(f"{PROG}: error: {' '.join(message.split())}", file=sys.stderr)
    return 2


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
