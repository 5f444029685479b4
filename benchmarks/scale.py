"""Scale-out: model runs per second in one process and on a local dask cluster, and a study of
at least 10^8 model runs streamed to a Zarr store with bounded memory.

Runs the invented demo study ``configs/small_demo.toml`` (a Saltelli design, 7 model runs per
base sample):

1. ``--runs`` model runs (default 10^7), solve only (design, inputs, model): in this process and
   on a local dask cluster of ``--workers`` worker processes (default 2), with the results
   gathered in memory, then streamed to a Zarr store; the results are compared value for value.
   ``cluster_speedup_in_memory`` and ``cluster_speedup_to_zarr`` are the ratios of runs per
   second, cluster over one process, measured in the same run.
2. ``--store-runs`` model runs (default 10^8) end to end on the cluster: streamed to a Zarr
   store under ``--tmp``, analysed from the store in passes (``plyrisk.analysis.streaming``),
   results.nc.

For each it prints the wall time, model runs per second, and the peak resident memory of this
process plus its worker processes (sampled every 0.2 s with psutil). Run from the repository
root::

    python benchmarks/scale.py [--runs N] [--store-runs N] [--workers W] [--tmp DIR]

The last line is ``peak_rss_mb: <float>``: the peak resident memory of the store run [MiB]
(the goal is under 2 GB). The store needs about 100 bytes of disk per model run (compressed).
"""

from __future__ import annotations

import os

for _var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS", "NUMEXPR_NUM_THREADS"):
    os.environ[_var] = "1"

import argparse  # noqa: E402
import shutil  # noqa: E402
import sys  # noqa: E402
import tempfile  # noqa: E402
import threading  # noqa: E402
import time  # noqa: E402
from dataclasses import replace  # noqa: E402
from pathlib import Path  # noqa: E402

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

import numpy as np  # noqa: E402
import psutil  # noqa: E402

from plyrisk.pipeline.run import run_study  # noqa: E402
from plyrisk.propagate.evaluate import propagate, study_plan  # noqa: E402
from plyrisk.propagate.store import StoreReader, solve_to_store  # noqa: E402
from plyrisk.study.config import load_study  # noqa: E402


class PeakMemory:
    """Peak resident memory of this process and all its children, sampled in a thread."""

    def __init__(self, every: float = 0.2) -> None:
        self.every, self.peak, self._stop = every, 0, threading.Event()

    def _sample(self) -> None:
        me = psutil.Process()
        while not self._stop.is_set():
            total = 0
            for p in [me, *me.children(recursive=True)]:
                try:
                    total += p.memory_info().rss
                except psutil.Error:
                    pass
            self.peak = max(self.peak, total)
            self._stop.wait(self.every)

    def __enter__(self) -> PeakMemory:
        self._thread = threading.Thread(target=self._sample, daemon=True)
        self._thread.start()
        return self

    def __exit__(self, *exc) -> None:
        self._stop.set()
        self._thread.join()


def study_with_runs(runs: int):
    """The demo study with the smallest power-of-2 base sample count giving >= runs runs."""
    study = load_study(ROOT / "configs" / "small_demo.toml")
    per_base = study_plan(study).rows_per_base
    n = 1 << max(int(np.ceil(np.log2(runs / per_base))), 3)
    return replace(study, analysis=replace(study.analysis, samples=n))


def measure(label: str, runs: int, work):
    """Run ``work()``; print its wall time, runs per second and peak memory."""
    with PeakMemory() as memory:
        start = time.perf_counter()
        result = work()
        wall = time.perf_counter() - start
    print(f"{label}: {runs} model runs in {wall:.1f} s = {runs / wall:,.0f} runs/s; "
          f"peak RSS {memory.peak / 2**20:,.0f} MiB")
    return result, runs / wall, memory.peak / 2**20


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0], allow_abbrev=False)
    parser.add_argument("--runs", type=float, default=1e7)
    parser.add_argument("--store-runs", type=float, default=1e8)
    parser.add_argument("--workers", type=int, default=2)
    parser.add_argument("--chunk-size", type=int, default=2**18)
    parser.add_argument("--tmp", default=None, help="folder for the Zarr stores")
    args = parser.parse_args(argv)
    chunk, w = args.chunk_size, args.workers
    tmp = Path(tempfile.mkdtemp(prefix="plyrisk-scale-", dir=args.tmp))
    try:
        study = study_with_runs(int(args.runs))
        runs = study_plan(study).n_rows
        print("solve only (design, inputs, model), no analysis:")
        one, r1, _ = measure("  in process, in memory", runs,
                             lambda: propagate(study, chunk_size=chunk, quiet=True))
        two, r2, _ = measure(f"  dask {w} workers, in memory", runs,
                             lambda: propagate(study, chunk_size=chunk, quiet=True, workers=w))
        same = all(np.array_equal(one.outputs[k], two.outputs[k], equal_nan=True)
                   for k in one.outputs.fields)
        del one, two
        _, r3, _ = measure("  in process, to Zarr", runs, lambda: solve_to_store(
            study, tmp / "one.zarr", chunk_size=chunk, quiet=True))
        _, r4, _ = measure(f"  dask {w} workers, to Zarr", runs, lambda: solve_to_store(
            study, tmp / "two.zarr", chunk_size=chunk, quiet=True, workers=w))
        a, b = StoreReader(tmp / "one.zarr"), StoreReader(tmp / "two.zarr")
        same = same and all(np.array_equal(a.read(k), b.read(k), equal_nan=True)
                            for k in ("input", "inner_surface_temperature", "converged"))
        shutil.rmtree(tmp / "one.zarr")
        shutil.rmtree(tmp / "two.zarr")
        print(f"identical results (memory and Zarr, one process and {w} workers): {same}")
        print(f"cluster_speedup_in_memory: {r2 / r1:.2f}")
        print(f"cluster_speedup_to_zarr: {r4 / r3:.2f}")

        big = study_with_runs(int(args.store_runs))
        runs = study_plan(big).n_rows
        print("end to end (solve, analysis in passes, results.nc):")
        _, _, peak = measure(f"  dask {w} workers, to Zarr", runs, lambda: run_study(
            big, quiet=True, chunk_size=chunk, workers=w, store=tmp / "big.zarr",
            out_dir=tmp / "out"))
        size = sum(f.stat().st_size for f in (tmp / "big.zarr").rglob("*") if f.is_file())
        print(f"store size: {size / 2**30:.1f} GiB ({size / runs:.0f} bytes per model run)")
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
    print(f"peak_rss_mb: {peak:.1f}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
