"""The steady garment demo end to end: where its time goes, and old against new.

``plyrisk run configs/reflective_garment.toml`` (Saltelli, N = 2048, three swept exposures,
the ``[tolerances]`` table and the report) is the demo a new user runs first.

* ``python benchmarks/demo.py`` (also ``benchmarks/study.py --demo``) runs the demo once in a
  fresh Python process and times its phases: ``imports`` (the modules the run loads, imported
  up front), ``solve`` (the propagation), ``analysis`` (percentiles, exceedance, indices),
  ``results.nc`` (dataset and file), ``tolerances`` (the tolerance table of the report),
  ``figures`` (built and saved), ``report`` (CSV tables, report.html, summary.md) and
  ``other`` (the rest: config, summary, output folder). Last line ``demo_seconds: <float>``
  (the smallest wall time of the whole process over ``--repeat`` runs, interpreter start
  included).
* ``python benchmarks/demo.py --compare --old OLD_PLYRISK`` runs the command line of an older
  installation (its own ``plyrisk`` executable) and of this one on the same config,
  ``--repeat`` times each, interleaved (old, new, new, old, ...) so that both see the same load;
  it prints every wall and CPU time (the children's user + system time), min and median of
  each and the ratios old / new. Last line ``demo_speedup: <min old wall / min new wall>``.

Nothing here is a test: timings depend on the machine and its load (compare within one run).
"""

from __future__ import annotations

import argparse
import os
import resource
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
CONFIG = ROOT / "configs" / "reflective_garment.toml"
OLD_CONFIG = Path("/work/base-src/configs/reflective_garment.toml")
"""The demo config of the older version measured against (its ``[tolerances]`` key was named
``method`` then), when that version's source is there."""
PHASES = ("imports", "solve", "analysis", "results.nc", "tolerances", "figures", "report",
          "other")


# ----------------------------------------------------------------------------------------------
# One run, split by phase (runs in a fresh process: --child)
# ----------------------------------------------------------------------------------------------


def _child(config: Path, out: Path) -> None:
    """Run ``plyrisk run CONFIG --out OUT --quiet`` in this process with its phases timed; print
    one ``phase seconds`` line per phase."""
    start = time.perf_counter()
    import plyrisk.cli as cli
    import plyrisk.pipeline.run as run
    import plyrisk.report.html as html
    import plyrisk.results.dataset as dataset
    from plyrisk.methods import get_method
    from plyrisk.study.config import load_study
    from plyrisk.tolerances.output import manufacturing_table  # noqa: F401

    times = dict.fromkeys(PHASES, 0.0)
    times["imports"] = time.perf_counter() - start

    def timed(owner, name: str, phase: str, *, minus: tuple[str, ...] = ()) -> None:
        function = getattr(owner, name)

        def wrapper(*args, **kwargs):
            before = {m: times[m] for m in minus}
            t = time.perf_counter()
            try:
                return function(*args, **kwargs)
            finally:
                inner = sum(times[m] - before[m] for m in minus)
                times[phase] += time.perf_counter() - t - inner
        setattr(owner, name, wrapper)

    method = type(get_method(load_study(config).analysis.method))
    timed(run, "propagate", "solve")
    timed(method, "analyse", "analysis")
    timed(method, "dataset", "results.nc")
    meanwhile = cli._meanwhile

    def waited(function, *args):
        """Work the run hands to a forked process (the tolerance study, the results.nc
        writer): the time this process waits for it counts to that phase."""
        phase = "results.nc" if function is dataset.write_results else "tolerances"
        pending = meanwhile(function, *args)

        def result():
            t = time.perf_counter()
            try:
                return pending()
            finally:
                times[phase] += time.perf_counter() - t
        result.join = pending.join
        return result
    cli._meanwhile = waited
    timed(html, "report_figures", "figures")
    timed(html, "_save", "figures")
    timed(html, "write_report", "report", minus=("figures",))
    code = cli.main(["run", str(config), "--out", str(out), "--quiet"])
    if code != 0:
        raise SystemExit(f"plyrisk run exited with {code}")
    total = time.perf_counter() - start
    times["other"] = total - sum(times[p] for p in PHASES if p != "other")
    for phase in PHASES:
        print(f"{phase} {times[phase]:.4f}")


def phases(config: Path, python: str = sys.executable) -> tuple[dict[str, float], float]:
    """The phase times of one demo run in a fresh process, and its wall time [s]."""
    with tempfile.TemporaryDirectory(prefix="plyrisk-demo-") as tmp:
        t = time.perf_counter()
        done = subprocess.run([python, __file__, "--child", str(config), str(Path(tmp) / "out")],
                              capture_output=True, text=True, check=False)
        wall = time.perf_counter() - t
    if done.returncode != 0:
        raise SystemExit(f"the demo run failed:\n{done.stderr[-3000:]}")
    times = {}
    for line in done.stdout.splitlines():
        name, _, value = line.rpartition(" ")
        if name in PHASES:
            times[name] = float(value)
    return times, wall


def report_phases(config: Path, repeat: int) -> float:
    """Print the phase table of ``repeat`` runs (min and median per phase); return the
    smallest wall time."""
    runs = [phases(config) for _ in range(repeat)]
    print(f"garment demo: plyrisk run {config.name} (report included), {repeat} fresh process"
          f"{'es' if repeat > 1 else ''}")
    print(f"  {'phase':<12} {'min s':>8} {'median s':>9}")
    for phase in PHASES:
        values = [r[0].get(phase, 0.0) for r in runs]
        print(f"  {phase:<12} {min(values):8.2f} {statistics.median(values):9.2f}")
    walls = [w for _, w in runs]
    print(f"  {'process':<12} {min(walls):8.2f} {statistics.median(walls):9.2f}  (wall, "
          "interpreter start included)")
    return min(walls)


# ----------------------------------------------------------------------------------------------
# Old against new, interleaved
# ----------------------------------------------------------------------------------------------


def _timed_cli(executable: str, config: Path, out: Path) -> tuple[float, float]:
    """Wall and CPU (user + system of the child) time of one ``plyrisk run`` [s]."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    t = time.perf_counter()
    done = subprocess.run([executable, "run", str(config), "--out", str(out), "--quiet"],
                          capture_output=True, text=True, check=False)
    wall = time.perf_counter() - t
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    if done.returncode != 0:
        raise SystemExit(f"{executable} run failed:\n{done.stderr[-3000:]}")
    if not (out / "report.html").is_file():
        raise SystemExit(f"{executable} run wrote no report.html in {out}")
    cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    return wall, cpu


def compare(old: str, new: str, config: Path, old_config: Path, repeat: int) -> float:
    """Run old and new interleaved; print the times and ratios; return min old / min new."""
    times: dict[str, list[tuple[float, float]]] = {"old": [], "new": []}
    runs = {"old": (old, old_config), "new": (new, config)}
    with tempfile.TemporaryDirectory(prefix="plyrisk-compare-") as tmp:
        for i in range(repeat):
            order = ("old", "new") if i % 2 == 0 else ("new", "old")
            for which in order:
                out = Path(tmp) / f"{which}{i}"
                wall, cpu = _timed_cli(runs[which][0], runs[which][1], out)
                times[which].append((wall, cpu))
                print(f"  run {i + 1} {which}: wall {wall:6.2f} s  cpu {cpu:6.2f} s", flush=True)
                shutil.rmtree(out, ignore_errors=True)
    print(f"old: {old} run {old_config}")
    print(f"new: {new} run {config}")
    print(f"{'':4} {'wall min':>9} {'wall median':>12} {'cpu min':>8} {'cpu median':>11}")
    for which in ("old", "new"):
        wall = [w for w, _ in times[which]]
        cpu = [c for _, c in times[which]]
        print(f"{which:4} {min(wall):9.2f} {statistics.median(wall):12.2f} {min(cpu):8.2f} "
              f"{statistics.median(cpu):11.2f}")

    def ratio(k: int, pick) -> float:
        return pick([t[k] for t in times["old"]]) / pick([t[k] for t in times["new"]])

    print(f"ratio old/new: wall min {ratio(0, min):.2f}, wall median "
          f"{ratio(0, statistics.median):.2f}, cpu min {ratio(1, min):.2f}, cpu median "
          f"{ratio(1, statistics.median):.2f}")
    print(f"load average at the end: {', '.join(f'{x:.2f}' for x in os.getloadavg())}")
    return ratio(0, min)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--config", type=Path, default=CONFIG, help="demo config")
    parser.add_argument("--repeat", type=int, default=3, help="runs (each, with --compare)")
    parser.add_argument("--compare", action="store_true", help="old against new, interleaved")
    parser.add_argument("--old", default="/work/venv-base/bin/plyrisk",
                        help="the older plyrisk executable (--compare)")
    parser.add_argument("--new", default=str(Path(sys.executable).with_name("plyrisk")),
                        help="this plyrisk executable (--compare; default: beside this Python)")
    parser.add_argument("--old-config", type=Path, default=OLD_CONFIG if OLD_CONFIG.is_file()
                        else None, help="config for the old executable (default: "
                        f"{OLD_CONFIG} when it exists, else --config)")
    parser.add_argument("--child", nargs=2, metavar=("CONFIG", "OUT"), help=argparse.SUPPRESS)
    args = parser.parse_args(argv)
    if args.child:
        _child(Path(args.child[0]), Path(args.child[1]))
        return 0
    if args.compare:
        speedup = compare(args.old, args.new, args.config, args.old_config or args.config,
                          args.repeat)
        print(f"demo_speedup: {speedup:.3f}")
        return 0
    seconds = report_phases(args.config, args.repeat)
    print(f"demo_seconds: {seconds:.3f}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
