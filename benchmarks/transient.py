"""Throughput of the batched transient solve against a per-sample solve_ivp loop.

An invented four-element garment (shell, air gap, liner, air gap) in front of three-layer skin
(Torvi & Dale property set) under an invented 84 kW/m2 exposure, half radiant and half
convective, for 8 s, then 60 s of cool-down; every garment input drawn per sample from a
seeded generator. The same samples are solved by
:func:`plyrisk.models.transient.solve_transient` (all at once) and, for the first
``--loop-samples`` of them, one at a time by
:func:`plyrisk.models.transient_reference.reference_solution` (scipy ``solve_ivp``, Radau, on
the same grid and equations, at tolerances matching the batched solve's accuracy). Batched and
loop timings are repeated and interleaved; min and median are printed.

Run from the repository root::

    .venv/bin/python benchmarks/transient.py [--samples N] [--loop-samples M] [--repeat R]

The same samples are also solved by the batched stepping (``compiled=False``: every sample
stepped together, Python per step; the former path) as the baseline of the compiled loop
(``compiled=True``, the default), and by the compiled loop on two threads. The last lines
printed are ``samples_per_second: <float>`` (compiled loop, one thread, best run),
``speedup_vs_batched: <float>`` (compiled loop over the batched path, best runs),
``threads_2_speedup: <float>`` (two threads over one) and ``speedup_vs_scalar_loop: <float>``
(per-sample time of the solve_ivp loop over that of the compiled loop, best runs).
BLAS/OpenMP thread counts are set to 1 first.
"""

from __future__ import annotations

import os

for _var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS", "NUMEXPR_NUM_THREADS",
             "NUMBA_NUM_THREADS"):
    os.environ[_var] = "1"

import argparse  # noqa: E402
import sys  # noqa: E402
import time  # noqa: E402
from pathlib import Path  # noqa: E402

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

import numpy as np  # noqa: E402

from plyrisk.models.exposure import TransientExposure  # noqa: E402
from plyrisk.models.mesh import build_mesh, mesh_layout  # noqa: E402
from plyrisk.models.skin import skin_properties  # noqa: E402
from plyrisk.models.stack import Gap, Solid  # noqa: E402
from plyrisk.models.transient import solve_transient  # noqa: E402
from plyrisk.models.transient_reference import reference_solution  # noqa: E402
from plyrisk.models.wearer import SkinWearer  # noqa: E402


def invented_garment(n: int, seed: int):
    """The invented benchmark garment and exposure with ``n`` samples of every garment input."""
    rng = np.random.default_rng(seed)
    u = rng.uniform
    layers = [
        Solid("shell", thickness=u(0.6e-3, 1.0e-3, n), conductivity=u(0.05, 0.08, n),
              conductivity_slope=u(0.0, 1e-4, n), density=u(300.0, 500.0, n),
              specific_heat=u(1200.0, 1400.0, n), emissivity_hot=u(0.8, 0.9, n),
              emissivity_cold=u(0.8, 0.9, n)),
        Gap("outer gap", width=u(2e-3, 5e-3, n)),
        Solid("liner", thickness=u(1.0e-3, 2.0e-3, n), conductivity=u(0.035, 0.055, n),
              density=u(100.0, 200.0, n), specific_heat=u(1200.0, 1400.0, n),
              emissivity_hot=u(0.85, 0.95, n), emissivity_cold=u(0.85, 0.95, n)),
        Gap("skin gap", width=u(2e-3, 6e-3, n)),
    ]
    # 42 kW/m2 radiant + about 42 kW/m2 convective to a cold surface (h 40 W/m2/K, 1350 K gas)
    exposure = TransientExposure(incident_flux=42e3, gas_temperature=1350.0,
                                 convection_coefficient=40.0, exposure_duration=8.0,
                                 horizon=68.0)
    return layers, exposure


def main(argv: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--samples", type=int, default=2000, help="samples of the model solves")
    parser.add_argument("--loop-samples", type=int, default=3, help="solve_ivp loop samples")
    parser.add_argument("--repeat", type=int, default=3, help="interleaved repeats")
    parser.add_argument("--seed", type=int, default=20241202, help="generator seed")
    args = parser.parse_args(argv)
    if args.samples < 1 or not 1 <= args.loop_samples <= args.samples:
        parser.error("need --samples >= 1 and 1 <= --loop-samples <= --samples")
    skin = SkinWearer(skin_properties("torvi_dale_1994"))
    layers, exposure = invented_garment(args.samples, args.seed)
    layout = mesh_layout(layers, skin, exposure.horizon)
    mesh = build_mesh(layers, skin, layout, args.samples)
    times = np.linspace(0.0, exposure.horizon, 69)
    print("invented benchmark garment: shell | gap | liner | gap | skin (torvi_dale_1994)")
    print(f"grid: {layout.cells()} slices, {mesh.nodes} nodes; numpy {np.__version__}")

    warm_layers, warm_exposure = invented_garment(16, args.seed + 1)
    solve_transient(warm_layers, warm_exposure, skin, layout=layout)  # first-call costs
    compiled, threaded, batched, loop = [], [], [], []
    for _ in range(args.repeat):
        start = time.perf_counter()
        sol = solve_transient(layers, exposure, skin, output_times=times, layout=layout)
        compiled.append(time.perf_counter() - start)
        start = time.perf_counter()
        solve_transient(layers, exposure, skin, output_times=times, layout=layout, threads=2)
        threaded.append(time.perf_counter() - start)
        start = time.perf_counter()
        old = solve_transient(layers, exposure, skin, output_times=times, layout=layout,
                              compiled=False)
        batched.append(time.perf_counter() - start)
        start = time.perf_counter()
        refs = [reference_solution(mesh, layers, exposure, skin, i, output_times=times,
                                   rtol=1e-6, atol=1e-3)
                for i in range(args.loop_samples)]
        loop.append((time.perf_counter() - start) / args.loop_samples)
    c_min, c_med = min(compiled), float(np.median(compiled))
    t_min, t_med = min(threaded), float(np.median(threaded))
    b_min, b_med = min(batched), float(np.median(batched))
    l_min, l_med = min(loop), float(np.median(loop))
    print(f"compiled loop: {args.samples} samples, min {c_min:.3f} s, median {c_med:.3f} s; "
          f"converged {int(sol.converged.sum())}/{args.samples}; mean steps "
          f"{sol.steps.mean():.1f}, rejected {sol.rejected_steps.mean():.1f}")
    print(f"compiled loop, 2 threads: min {t_min:.3f} s, median {t_med:.3f} s")
    print(f"batched stepping (baseline): min {b_min:.3f} s, median {b_med:.3f} s; max "
          f"|compiled - batched| basal temperature "
          f"{float(np.nanmax(np.abs(sol.basal_temperature - old.basal_temperature))):.2e} K")
    print(f"solve_ivp loop (Radau, rtol 1e-6, atol 1e-3 K): {args.loop_samples} samples, "
          f"per sample min {l_min:.3f} s, median {l_med:.3f} s")
    diff = max(float(np.max(np.abs(sol.basal_temperature[i] - r["basal"])))
               for i, r in enumerate(refs))
    burned = float(np.mean(np.isfinite(sol.time_to_second_degree_burn)))
    print(f"max |batched - loop| basal temperature: {diff:.4f} K; "
          f"share with a second-degree burn: {burned:.3f}")
    per_sample = c_min / args.samples
    print(f"samples_per_second: {1.0 / per_sample:.1f}")
    print(f"speedup_vs_batched: {b_min / c_min:.2f}")
    print(f"threads_2_speedup: {c_min / t_min:.2f}")
    print(f"speedup_vs_scalar_loop: {l_min / per_sample:.1f}")


if __name__ == "__main__":
    main()
