"""Throughput of the vectorized steady solve against a per-sample scipy reference loop.

One invented five-layer assembly (outer shell, air gap, membrane touching a liner through a
contact resistance, air gap to the skin) under a fire environment, every input drawn per sample
from a seeded generator. The same samples are solved by :func:`plyrisk.models.network.solve_network`
(all at once) and, for the first ``--loop-samples`` of them, one at a time by
:func:`plyrisk.models.reference.solve_reference`; the two answers are compared on those samples.

Run from the repository root::

    /tmp/venv/bin/python benchmarks/steady.py [--samples N] [--loop-samples M] [--seed S]

The last two lines printed are ``samples_per_second: <float>`` (vectorized solve) and
``speedup_vs_scalar_loop: <float>`` (per-sample time of the loop over that of the vectorized
solve). Single-threaded: the BLAS/OpenMP thread counts are set to 1 before numpy loads.
"""

from __future__ import annotations

import os

for _var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS", "NUMEXPR_NUM_THREADS"):
    os.environ[_var] = "1"

import argparse  # noqa: E402
import sys  # noqa: E402
import time  # noqa: E402
import warnings  # noqa: E402
from pathlib import Path  # noqa: E402

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

import numpy as np  # noqa: E402

from plyrisk.models.boundary import ColdSurface, HotEnvironment  # noqa: E402
from plyrisk.models.network import solve_network  # noqa: E402
from plyrisk.models.reference import select_sample, solve_reference  # noqa: E402
from plyrisk.models.stack import Gap, Solid  # noqa: E402


def invented_assembly(n: int, seed: int):
    """The invented benchmark assembly with ``n`` samples of every input."""
    rng = np.random.default_rng(seed)
    u = rng.uniform
    layers = [
        Solid(
            "shell",
            thickness=u(0.6e-3, 1.0e-3, n),
            conductivity=u(0.05, 0.08, n),
            conductivity_slope=u(0.0, 1e-4, n),
            emissivity_hot=u(0.8, 0.9, n),
            emissivity_cold=u(0.8, 0.9, n),
        ),
        Gap("outer gap", width=u(1e-3, 4e-3, n), orientation="vertical", height=0.5),
        Solid(
            "membrane",
            thickness=u(0.3e-3, 0.6e-3, n),
            conductivity=u(0.10, 0.20, n),
            emissivity_hot=u(0.85, 0.95, n),
            emissivity_cold=u(0.85, 0.95, n),
            contact_resistance=u(1e-3, 5e-3, n),
        ),
        Solid(
            "liner",
            thickness=u(1.0e-3, 2.0e-3, n),
            conductivity=u(0.04, 0.06, n),
            conductivity_slope=u(0.0, 1.5e-4, n),
            emissivity_hot=u(0.85, 0.95, n),
            emissivity_cold=u(0.85, 0.95, n),
        ),
        Gap("skin gap", width=u(0.5e-3, 3e-3, n), orientation="vertical", height=0.5),
    ]
    hot = HotEnvironment(
        incident_flux=u(5e3, 20e3, n),
        gas_temperature=u(400.0, 900.0, n),
        convection_coefficient=u(10.0, 40.0, n),
    )
    cold = ColdSurface(temperature=u(305.0, 307.0, n), emissivity=u(0.97, 0.98, n))
    return layers, hot, cold


def main(argv: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0], allow_abbrev=False)
    parser.add_argument("--samples", type=int, default=1_000_000, help="vectorized samples")
    parser.add_argument("--loop-samples", type=int, default=2000, help="reference-loop samples")
    parser.add_argument("--seed", type=int, default=20240611, help="generator seed")
    parser.add_argument("--convection", action="store_true", help="enable gap convection")
    parser.add_argument("--repeat", type=int, default=3, help="timed vectorized runs (best kept)")
    args = parser.parse_args(argv)
    if args.samples < 1 or not 1 <= args.loop_samples <= args.samples:
        parser.error("need --samples >= 1 and 1 <= --loop-samples <= --samples")

    kw = {"radiation": "exact", "convection_enabled": args.convection}
    layers, hot, cold = invented_assembly(args.samples, args.seed)
    print("invented benchmark assembly: shell | gap | membrane + liner (contact) | gap | skin")
    print(f"options: {kw}, seed {args.seed}, numpy {np.__version__}, single thread")

    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        warm = invented_assembly(min(args.samples, 10_000), args.seed + 1)
        solve_network(*warm, **kw)  # warm-up: first-call costs are not throughput
        t_vec = np.inf
        for _ in range(args.repeat):  # best of a few runs: the least disturbed by other load
            start = time.perf_counter()
            sol = solve_network(layers, hot, cold, **kw)
            t_vec = min(t_vec, time.perf_counter() - start)
    for w in caught:
        print(f"warning: {w.message}")
    print(
        f"vectorized: {args.samples} samples in {t_vec:.3f} s "
        f"({t_vec / args.samples * 1e6:.3f} us/sample), converged "
        f"{int(sol.converged.sum())}/{args.samples}, mean iterations "
        f"{sol.iterations.mean():.2f}"
    )

    m = args.loop_samples
    ref = np.empty((m, sol.interface_temperature.shape[1]))
    start = time.perf_counter()
    for i in range(m):
        ref[i] = solve_reference(
            [select_sample(layer, i) for layer in layers],
            select_sample(hot, i),
            select_sample(cold, i),
            **kw,
        )
    t_loop = time.perf_counter() - start
    print(f"scalar loop (scipy.optimize.root hybr): {m} samples in {t_loop:.3f} s "
          f"({t_loop / m * 1e3:.3f} ms/sample)")
    diff = np.abs(sol.interface_temperature[:m] - ref)
    print(f"max |vectorized - reference| face temperature on {m} samples: {np.nanmax(diff):.3e} K")

    per_vec = t_vec / args.samples
    per_loop = t_loop / m
    print(f"samples_per_second: {1.0 / per_vec:.1f}")
    print(f"speedup_vs_scalar_loop: {per_loop / per_vec:.1f}")


if __name__ == "__main__":
    main()
