"""Start-up cost of the command line against importing numpy, measured in the same run.

Times ``plyrisk --help``, ``plyrisk --version`` and ``plyrisk check`` on the small demo, and
``python -c "import numpy"`` as the baseline, each as a fresh process, interleaved, repeated;
prints min and median wall times and the ratios of the minima, and lists the heavy libraries
that ``check`` imports (it should import none of dask, matplotlib, SALib, xarray).

    python benchmarks/startup.py [--repeat 7]

Last line: ``help_vs_numpy_import: <ratio>`` (goal: at most 1.5).
"""

from __future__ import annotations

import argparse
import statistics
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
SMALL = ROOT / "configs" / "small_demo.toml"
HEAVY = ("dask", "matplotlib", "SALib", "xarray", "chaospy", "zarr", "pandas")

COMMANDS = {
    "numpy_import": [sys.executable, "-c", "import numpy"],
    "help": [sys.executable, "-m", "plyrisk", "--help"],
    "version": [sys.executable, "-m", "plyrisk", "--version"],
    "check": [sys.executable, "-m", "plyrisk", "check", str(SMALL)],
}


def _time(cmd: list[str]) -> float:
    t0 = time.perf_counter()
    subprocess.run(cmd, check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    return time.perf_counter() - t0


def heavy_imports_of_check() -> list[str]:
    """Heavy libraries in sys.modules after running ``check`` in one process."""
    code = ("import sys, contextlib, io; from plyrisk.cli import main\n"
            f"with contextlib.redirect_stdout(io.StringIO()): main(['check', {str(SMALL)!r}])\n"
            f"print(' '.join(m for m in {HEAVY!r} if m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], check=True, capture_output=True,
                         text=True).stdout
    return out.split()


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=7)
    args = parser.parse_args()
    times: dict[str, list[float]] = {k: [] for k in COMMANDS}
    for k in COMMANDS:  # warm the file cache once
        _time(COMMANDS[k])
    for _ in range(args.repeat):  # interleaved, so load on the shared machine hits all alike
        for k, cmd in COMMANDS.items():
            times[k].append(_time(cmd))
    base = min(times["numpy_import"])
    print(f"{'command':<14} {'min [s]':>8} {'median [s]':>11} {'min / numpy':>12}")
    for k, t in times.items():
        print(f"{k:<14} {min(t):8.3f} {statistics.median(t):11.3f} {min(t) / base:12.2f}")
    print(f"heavy libraries imported by check: {' '.join(heavy_imports_of_check()) or 'none'}")
    print(f"check_vs_numpy_import: {min(times['check']) / base:.2f}")
    print(f"version_vs_numpy_import: {min(times['version']) / base:.2f}")
    print(f"help_vs_numpy_import: {min(times['help']) / base:.2f}")


if __name__ == "__main__":
    main()
