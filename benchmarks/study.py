"""End-to-end Saltelli study of a 15-input demo stack, and the runs PCE needs for the same indices.

1. ``run_study`` of an invented five-layer garment with 15 uncertain inputs at N = 8192 base
   rows (Saltelli design with per-layer groups: N x (15 + 2 + 5) = 180 224 model runs, one
   exposure), the inner-surface temperature and the heat flux analysed, ``results.nc``
   written: wall time and model runs per second. ``--profile`` prints the cProfile of it.
2. A reference: Saltelli indices (first and total, per parameter) of the inner-surface
   temperature at ``--reference-samples`` base rows.
3. The model runs each method needs for every one of those 30 indices to lie within
   ``--tolerance`` (0.02) of the reference, with a seed independent of the reference's:
   Saltelli at N = 64, 128, ... (runs N x 22); PCE (Latin hypercube, truncation and terms
   chosen by leave-one-out error, terms selected by least-angle regression from candidate sets
   too large for least squares) at n = 60, 80, 100, 150, 200, 300, ... samples. "Needs" is the
   smallest size from which on every larger size tried also meets the tolerance, so that one
   lucky size does not count. For comparison, the same PCE sizes with least squares only
   (``fit_pce(sparse=False)``, full sets of at most n / 1.5 terms) on the same samples.
   Line ``pce_runs_ratio: <PCE runs / Saltelli runs>``.
4. Runs to precision: the model runs that ``--until-converged`` needs to bring every total
   index of the inner-surface temperature (15 parameters) to a half-width of at most
   ``--precision`` (0.02) at the study's confidence (90 %), starting at N = 64 and doubling
   (earlier runs reused, as ``plyrisk.pipeline.sequential`` does): with the former intervals
   (one scrambled sequence, SALib's bootstrap over rows, 200 resamples) and with replicate
   intervals (8 independently scrambled replicates, Student t), each for ``--precision-seeds``
   seeds, in the same run. For each, the share of the final total-index intervals that cover
   the reference (coverage held). Last line: ``runs_to_precision_ratio: <replicate runs /
   bootstrap runs>`` (medians over the seeds).

4. ``--transient``: a transient Saltelli study (an invented three-layer ensemble on skin, 12
   uncertain inputs, N = ``--transient-samples`` base rows, default 2048) end to end: propagate
   on ``--workers`` dask workers, analyse, write ``results.nc`` and the report; the stages are
   timed separately. Last line: ``transient_study_seconds: <float>`` (the whole run). With
   ``--transient-only`` the steady parts are skipped.

5. ``--demo``: only the steady garment demo (``plyrisk run configs/reflective_garment.toml``
   with its report) in ``--repeat`` fresh processes, split by phase (imports, solve,
   analysis, results.nc, tolerances, figures, report, other); last line
   ``demo_seconds: <float>``. See ``benchmarks/demo.py``, which also compares an older
   installation with this one (``--compare``).

Run from the repository root::

    /tmp/venv5/bin/python benchmarks/study.py [--repeat 3] [--profile]

Single-threaded: the BLAS/OpenMP thread counts are set to 1 before numpy loads.
"""

from __future__ import annotations

import os

for _var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS", "NUMEXPR_NUM_THREADS"):
    os.environ[_var] = "1"

import argparse  # noqa: E402
import cProfile  # noqa: E402
import pstats  # noqa: E402
import sys  # noqa: E402
import tempfile  # noqa: E402
import time  # noqa: E402
import warnings  # noqa: E402
from pathlib import Path  # noqa: E402

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

import numpy as np  # noqa: E402

from plyrisk.analysis.pce import fit_pce, shares  # noqa: E402
from plyrisk.analysis.sobol import sobol_indices  # noqa: E402
from plyrisk.design.sampling import Design, latin_hypercube_design, sobol_design  # noqa: E402
from plyrisk.pipeline.run import run_study  # noqa: E402
from plyrisk.propagate.evaluate import evaluate, parameter_groups, unit_to_inputs  # noqa: E402
from plyrisk.study.config import loads_study  # noqa: E402

STACK = """
# INVENTED benchmark study: every value is invented; it describes no real garment.
[study]
title = "Invented benchmark: five-layer garment with 15 uncertain inputs"
method = "saltelli"
samples = 8192
seed = 2025
limit = "44 degC"
outputs = ["heat_flux"]

[hot_side]
kind = "environment"
incident_flux = { uniform = ["0.8 kW/m^2", "1.2 kW/m^2"] }
gas_temperature = { normal = { mean = "45 degC", sd = "3 K" } }
convection_coefficient = { uniform = ["8 W/m^2/K", "16 W/m^2/K"] }
surroundings_temperature = "40 degC"

[[layer]]
name = "shell"
kind = "solid"
thickness = { nominal = "0.5 mm", tolerance = "0.04 mm" }
conductivity = { uniform = ["0.045 W/m/K", "0.06 W/m/K"] }
emissivity_hot = { triangular = [0.10, 0.15, 0.25] }
emissivity_cold = 0.85

[[layer]]
name = "outer gap"
kind = "gap"
width = { lognormal = { median = "1 mm", gsd = 1.4 } }
height = "0.4 m"

[[layer]]
name = "barrier"
kind = "solid"
thickness = { nominal = "0.3 mm", tolerance = "0.03 mm" }
conductivity = { normal = { mean = "0.08 W/m/K", sd = "0.006 W/m/K" } }
emissivity = 0.9

[[layer]]
name = "liner"
kind = "solid"
thickness = { nominal = "2.0 mm", upper = "0.3 mm", lower = "0.2 mm" }
conductivity = { normal = { mean = "0.040 W/m/K", sd = "0.003 W/m/K" } }
emissivity = { beta = { mean = 0.9, sd = 0.03 } }

[[layer]]
name = "skin gap"
kind = "gap"
width = { lognormal = { median = "3 mm", gsd = 1.5 } }
height = "0.4 m"

[cold_side]
kind = "surface"
temperature = { normal = { mean = "34 degC", sd = "0.5 K" } }
emissivity = { uniform = [0.95, 0.99] }
"""

TRANSIENT_STACK = """
# INVENTED benchmark study: every value is invented; it describes no real garment.
[study]
title = "Invented benchmark: three-layer ensemble on skin, 12 uncertain inputs"
method = "saltelli"
samples = 2048
seed = 2026
acceptable_burn_probability = "5 %"

[exposure]
incident_flux = { uniform = ["36 kW/m^2", "48 kW/m^2"] }
gas_temperature = "860 degC"
convection_coefficient = "50 W/m^2/K"
surroundings_temperature = "25 degC"
duration = { uniform = ["6 s", "14 s"] }
horizon = "60 s"
ambient_temperature = "25 degC"
cooldown_convection_coefficient = "10 W/m^2/K"

[[layer]]
name = "outer shell"
kind = "solid"
thickness = { nominal = "0.75 mm", tolerance = "0.08 mm" }
conductivity = "0.065 W/m/K"
density = { normal = { mean = "320 kg/m^3", sd = "20 kg/m^3" } }
specific_heat = { uniform = ["1200 J/kg/K", "1400 J/kg/K"] }
emissivity = 0.88

[[layer]]
name = "shell gap"
kind = "gap"
width = { lognormal = { median = "1 mm", gsd = 1.4 } }

[[layer]]
name = "moisture barrier"
kind = "solid"
thickness = { nominal = "0.45 mm", tolerance = "0.05 mm" }
conductivity = "0.05 W/m/K"
density = "380 kg/m^3"
specific_heat = { uniform = ["1150 J/kg/K", "1450 J/kg/K"] }

[[layer]]
name = "thermal liner"
kind = "solid"
thickness = { nominal = "1.8 mm", tolerance = "0.25 mm" }
conductivity = { uniform = ["0.038 W/m/K", "0.046 W/m/K"] }
density = { uniform = ["85 kg/m^3", "115 kg/m^3"] }
specific_heat = "1350 J/kg/K"

[[layer]]
name = "skin gap"
kind = "gap"
width = { lognormal = { median = "3 mm", gsd = 1.5 } }

[wearer]
kind = "skin"
properties = "jiang_2002"
damage_model = "henriques_1947"
"""


def transient_benchmark(samples: int, workers: int) -> float:
    """Run the transient Saltelli study end to end, print the stage times; total [s]."""
    from plyrisk.methods import get_method
    from plyrisk.propagate.evaluate import propagate
    from plyrisk.report.html import write_report
    from plyrisk.results.dataset import write_results

    study = loads_study(TRANSIENT_STACK.replace("samples = 2048", f"samples = {samples}"),
                        source="<transient benchmark>")
    method = get_method("saltelli")
    with tempfile.TemporaryDirectory() as tmp:
        stages = {}
        start = time.perf_counter()
        prop = propagate(study, quiet=True, workers=workers)
        stages["propagate"] = time.perf_counter() - start
        t = time.perf_counter()
        analysis = method.analyse(study, prop)
        stages["analyse"] = time.perf_counter() - t
        t = time.perf_counter()
        ds = method.dataset(study, prop, analysis)
        write_results(ds, Path(tmp) / "results.nc")
        stages["dataset"] = time.perf_counter() - t
        t = time.perf_counter()
        write_report(ds, Path(tmp) / "report")
        stages["report"] = time.perf_counter() - t
        total = time.perf_counter() - start
    runs = prop.inputs.shape[0]
    print(f"transient saltelli study: {len(study.parameters)} inputs, N = {samples}, "
          f"{runs} model runs, {workers} worker(s)")
    print("  " + ", ".join(f"{k} {v:.1f} s" for k, v in stages.items())
          + f"; {runs / stages['propagate']:.1f} runs/s in the propagation")
    return total


PCE_SIZES = (60, 80, 100, 150, 200, 300, 400, 600, 800, 1200, 1600, 2400, 3200)
"""Latin-hypercube sizes tried for the PCE [-]."""


def inner(study, unit: np.ndarray) -> np.ndarray:
    """Inner-surface temperature at unit-hypercube points [K]."""
    out = evaluate(study, unit_to_inputs(study.parameters, unit))
    return out["inner_surface_temperature"][0]


def saltelli(study, n: int, seed: int) -> tuple[np.ndarray, int]:
    """First and total indices (30 values) at N base rows, and the model runs [-]."""
    design = sobol_design(n, len(study.parameters), seed=seed,
                          groups=parameter_groups(study)[1])
    ind, _ = sobol_indices(inner(study, design.unit), design, names=study.parameter_names,
                           group_names=parameter_groups(study)[0], n_bootstrap=2, seed=seed)
    return np.concatenate([ind.first, ind.total]), design.n_rows


def pce(study, n: int, seed: int) -> tuple[np.ndarray, np.ndarray]:
    """First and total indices from PCEs fitted to n Latin-hypercube samples: with sparse
    regression, and least squares only [-]."""
    design = latin_hypercube_design(n, len(study.parameters), seed=seed)
    y = inner(study, design.unit)
    out = []
    for sparse in (True, False):
        fit = fit_pce(design.unit, y, sparse=sparse)
        first, total = shares(fit.coef, fit.alphas, [(j,) for j in range(design.n_params)])
        out.append(np.concatenate([first, total]))
    return out[0], out[1]


def runs_to_precision(study, replicates: int, seed: int, precision: float,
                      reference: np.ndarray, max_base: int = 2**15) -> tuple[int, float, int]:
    """Model runs until every total index half-width <= precision, doubling N from 64 with the
    earlier runs reused; the share of total-index intervals covering the reference; final N."""
    d = len(study.parameters)
    groups = parameter_groups(study)[1]
    n, conf = 64, study.analysis.confidence
    design = sobol_design(n, d, seed=seed, groups=groups, replicates=replicates)
    y = inner(study, design.unit)
    while True:
        ind, _ = sobol_indices(y, design, names=study.parameter_names,
                               group_names=parameter_groups(study)[0], confidence=conf,
                               n_bootstrap=study.analysis.bootstrap, seed=seed)
        if np.max(ind.total_ci) <= precision or n >= max_base:
            covered = float(np.mean(np.abs(ind.total - reference[15:]) <= ind.total_ci))
            return design.n_rows, covered, n
        extra = sobol_design(n, d, seed=seed, groups=groups, replicates=replicates, start=n)
        y = np.concatenate([y, inner(study, extra.unit)])
        unit = np.vstack([design.unit, extra.unit])
        block = np.concatenate([design.block, extra.block])
        design = Design(unit, block, "sobol", 2 * n, design.groups, replicates)
        n *= 2


def needed(sizes, errors, tolerance: float) -> int | None:
    """The smallest size from which on every larger size meets the tolerance."""
    ok = [e <= tolerance for e in errors]
    for k in range(len(sizes)):
        if all(ok[k:]):
            return sizes[k]
    return None


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0], allow_abbrev=False)
    parser.add_argument("--repeat", type=int, default=3, help="timed runs of the study (best)")
    parser.add_argument("--profile", action="store_true", help="print the cProfile of a run")
    parser.add_argument("--reference-samples", type=int, default=2**16)
    parser.add_argument("--tolerance", type=float, default=0.02)
    parser.add_argument("--transient", action="store_true",
                        help="also run the transient Saltelli study")
    parser.add_argument("--transient-only", action="store_true",
                        help="run only the transient Saltelli study")
    parser.add_argument("--transient-samples", type=int, default=2048)
    parser.add_argument("--workers", type=int, default=2,
                        help="dask workers of the transient study")
    parser.add_argument("--precision", type=float, default=0.02,
                        help="total-index half-width --until-converged must reach")
    parser.add_argument("--precision-seeds", type=int, default=3,
                        help="seeds of the runs-to-precision comparison")
    parser.add_argument("--precision-only", action="store_true",
                        help="only the reference and the runs-to-precision comparison")
    parser.add_argument("--demo", action="store_true",
                        help="only the garment demo end to end, by phase (benchmarks/demo.py; "
                        "--repeat fresh processes)")
    args = parser.parse_args()
    warnings.simplefilter("ignore")
    if args.demo:
        import demo  # benchmarks/demo.py, beside this script

        seconds = demo.report_phases(demo.CONFIG, max(args.repeat, 1))
        print(f"demo_seconds: {seconds:.3f}")
        return 0
    if args.transient_only:
        total = transient_benchmark(args.transient_samples, args.workers)
        print(f"transient_study_seconds: {total:.2f}")
        return 0
    study = loads_study(STACK, source="<benchmark stack>")

    with tempfile.TemporaryDirectory() as tmp:
        run_study(study, samples=64, quiet=True)  # warm-up: imports, caches
        times = []
        for _ in range(0 if args.precision_only else max(args.repeat, 1)):
            start = time.perf_counter()
            result = run_study(study, out_dir=tmp, quiet=True)
            times.append(time.perf_counter() - start)
    if times:
        runs = result.propagation.inputs.shape[0]
        best = min(times)
        print(f"saltelli study: {len(study.parameters)} inputs, N = {study.analysis.samples}, "
              f"{runs} model runs, 2 outputs analysed, results.nc written")
        print(f"  wall time: best {best:.2f} s of {len(times)} (all: "
              + ", ".join(f"{t:.2f}" for t in times) + f"); {runs / best:,.0f} model runs/s "
              "end to end")
        if args.profile:
            with tempfile.TemporaryDirectory() as tmp:
                profile = cProfile.Profile()
                profile.enable()
                run_study(study, out_dir=tmp, quiet=True)
                profile.disable()
            pstats.Stats(profile).sort_stats("tottime").print_stats(15)

    start = time.perf_counter()
    reference, ref_runs = saltelli(study, args.reference_samples, seed=1)
    print(f"reference: saltelli N = {args.reference_samples} ({ref_runs} runs, "
          f"{time.perf_counter() - start:.1f} s); largest total index {reference[15:].max():.3f}")

    if args.precision_only:
        return precision(study, reference, args)
    sizes, errors, costs = [], [], []
    n = 64
    while n <= args.reference_samples // 8:
        values, rows = saltelli(study, n, seed=7)
        sizes.append(n)
        costs.append(rows)
        errors.append(float(np.max(np.abs(values - reference))))
        n *= 2
    print("saltelli: N -> runs, largest |index - reference|: "
          + "; ".join(f"{s} -> {c}, {e:.3f}" for s, c, e in zip(sizes, costs, errors,
                                                                 strict=True)))
    n_salt = needed(sizes, errors, args.tolerance)
    salt_runs = costs[sizes.index(n_salt)] if n_salt else None

    start = time.perf_counter()
    fits = [pce(study, m, seed=7) for m in PCE_SIZES]
    pce_errors = [float(np.max(np.abs(sparse - reference))) for sparse, _ in fits]
    lsq_errors = [float(np.max(np.abs(full - reference))) for _, full in fits]
    print(f"pce (lhs, {time.perf_counter() - start:.1f} s for both): n -> largest |index - "
          "reference|: " + "; ".join(f"{m} -> {e:.3f}" for m, e in zip(PCE_SIZES, pce_errors,
                                                                        strict=True)))
    print("  least squares only (for comparison): "
          + "; ".join(f"{m} -> {e:.3f}" for m, e in zip(PCE_SIZES, lsq_errors, strict=True))
          + f"; needs {needed(PCE_SIZES, lsq_errors, args.tolerance)}")
    pce_runs = needed(PCE_SIZES, pce_errors, args.tolerance)
    if salt_runs is None or pce_runs is None:
        print("a method did not reach the tolerance within the sizes tried")
        print("pce_runs_ratio: nan")
        return 1
    print(f"runs for every index within {args.tolerance} of the reference: saltelli "
          f"{salt_runs} (N = {n_salt}), pce {pce_runs}")
    print(f"pce_runs_ratio: {pce_runs / salt_runs:.4f}")
    if args.transient:
        total = transient_benchmark(args.transient_samples, args.workers)
        print(f"transient_study_seconds: {total:.2f}")
    return precision(study, reference, args)


def precision(study, reference: np.ndarray, args) -> int:
    """Step 4: runs to precision with bootstrap and with replicate intervals."""
    print(f"runs to precision: every total index of the inner-surface temperature to a "
          f"half-width <= {args.precision} at {study.analysis.confidence:.0%} "
          "(--until-converged from N = 64, doubling)")
    medians = {}
    for label, reps in (("bootstrap (1 sequence)", 1), ("replicates (8, Student t)", 8)):
        start = time.perf_counter()
        found = [runs_to_precision(study, reps, seed, args.precision, reference)
                 for seed in range(11, 11 + args.precision_seeds)]
        medians[reps] = float(np.median([f[0] for f in found]))
        print(f"  {label}: runs " + ", ".join(f"{r} (N = {n})" for r, _, n in found)
              + f"; median {medians[reps]:.0f}; intervals covering the reference "
              f"{np.mean([f[1] for f in found]):.2f} ({time.perf_counter() - start:.1f} s)")
    print(f"runs_to_precision_ratio: {medians[8] / medians[1]:.4f}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
