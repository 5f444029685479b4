"""Scale-out: model runs per second in one process and on a local dask cluster, and a study of
at least 10^8 model runs streamed to a Zarr store with bounded memory.

Runs the invented demo study ``configs/small_demo.toml`` (a Saltelli design, 7 model runs per
base sample) three times:

1. ``--runs`` model runs (default 10^7) solved in this process, results in memory;
2. the same runs on a local dask cluster of ``--workers`` worker processes (default 2), results
   in memory; the two datasets are compared value for value;
3. ``--store-runs`` model runs (default 10^8) on the cluster, streamed to a Zarr store under
   ``--tmp``, then analysed from the store in passes (``uq.streaming``).

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

from uq.config import load_study  # noqa: E402
from uq.pipeline import run_study  # noqa: E402
from uq.propagate import study_plan  # noqa: E402


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


def timed(label: str, study, **kwargs):
    with PeakMemory() as memory:
        start = time.perf_counter()
        result = run_study(study, quiet=True, **kwargs)
        wall = time.perf_counter() - start
    runs = study_plan(study).n_rows
    print(f"{label}: {runs} model runs in {wall:.1f} s = {runs / wall:,.0f} runs/s "
          f"(solve + analysis); peak RSS {memory.peak / 2**20:,.0f} MiB")
    return result, memory.peak / 2**20, runs / wall


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=float, default=1e7)
    parser.add_argument("--store-runs", type=float, default=1e8)
    parser.add_argument("--workers", type=int, default=2)
    parser.add_argument("--chunk-size", type=int, default=2**18)
    parser.add_argument("--tmp", default=None, help="folder for the Zarr store")
    args = parser.parse_args(argv)
    chunk = args.chunk_size

    study = study_with_runs(int(args.runs))
    one, _, rate_one = timed("in process", study, chunk_size=chunk)
    two, _, rate_two = timed(f"dask, {args.workers} workers", study, chunk_size=chunk,
                             workers=args.workers)
    same = all(np.array_equal(one.dataset[v].values, two.dataset[v].values, equal_nan=True)
               for v in one.dataset.data_vars)
    print(f"identical datasets: {same}")
    print(f"cluster_speedup: {rate_two / rate_one:.2f}")
    del one, two

    big = study_with_runs(int(args.store_runs))
    tmp = Path(tempfile.mkdtemp(prefix="plyrisk-scale-", dir=args.tmp))
    try:
        _, peak, _ = timed(f"dask, {args.workers} workers, to Zarr", big, chunk_size=chunk,
                           workers=args.workers, store=tmp / "samples.zarr",
                           out_dir=tmp / "out")
        size = sum(f.stat().st_size for f in (tmp / "samples.zarr").rglob("*") if f.is_file())
        print(f"store size: {size / 2**30:.1f} GiB")
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
    print(f"peak_rss_mb: {peak:.1f}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
