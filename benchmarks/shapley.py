"""Shapley effects of a 10-input stack with three correlated pairs, to half-widths <= 0.02.

1. An invented four-layer garment (shell, outer gap, batt, skin gap) with 10 uncertain inputs
   and three correlated pairs (both gap widths through the fit; the batt's thickness and
   conductivity; the shell's thickness and emissivity), ``method = "shapley"``: propagate the
   design (N joint draws + m (d - 1) 3 conditional draws + (1 + 2 d) N rows of the Rosenblatt
   blocks) and estimate the effects of the inner-surface temperature and the four indices of
   dependent inputs with bootstrap intervals (90 %). Starting at ``--permutations``,
   m is raised to the count the widest interval asks for (half-widths shrink as 1/sqrt(m))
   until every half-width, per parameter and per layer, is at most ``--precision`` (0.02).
2. Baseline, measured in the same run, interleaved before and after: the same number of model
   runs on a plain random design (propagation only), so the line
   ``shapley_over_plain_runs`` says what the estimator and its conditional design cost on top
   of the model runs themselves.

Prints model runs, seconds, the effects, the four indices with the widest half-width among
them (``dependent_index_widest``, not part of the stopping rule), and last
``shapley_seconds: <float>`` (the final,
converged study: design, model runs and estimator). Goal < 120 s on 2 cores; never asserted.

Run from the repository root::

    .venv/bin/python benchmarks/shapley.py [--permutations 4096] [--samples 4096]

Single-threaded: the BLAS/OpenMP thread counts are set to 1 before numpy loads.
"""

from __future__ import annotations

import os

for _var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS", "NUMEXPR_NUM_THREADS"):
    os.environ[_var] = "1"

import argparse  # noqa: E402
import math  # noqa: E402
import time  # noqa: E402
from dataclasses import replace  # noqa: E402

import numpy as np  # noqa: E402

from plyrisk.design.sampling import random_design  # noqa: E402
from plyrisk.methods import get_method  # noqa: E402
from plyrisk.propagate.evaluate import evaluate, propagate, unit_to_inputs  # noqa: E402
from plyrisk.study.config import loads_study  # noqa: E402

CONFIG = """
[study]
title = "Invented benchmark: four-layer garment, ten inputs, three correlated pairs"
method = "shapley"
design = "lhs"
samples = 4096
seed = 2026
limit = "44 degC"

[hot_side]
kind = "environment"
incident_flux = { uniform = ["2 kW/m^2", "3 kW/m^2"] }
gas_temperature = "50 degC"
convection_coefficient = { uniform = ["8 W/m^2/K", "14 W/m^2/K"] }

[[layer]]
name = "shell"
kind = "solid"
thickness = { nominal = "0.6 mm", tolerance = "0.06 mm" }
conductivity = { uniform = ["0.05 W/m/K", "0.07 W/m/K"] }
emissivity = { uniform = [0.80, 0.92] }

[[layer]]
name = "outer gap"
kind = "gap"
width = { lognormal = { median = "1.5 mm", gsd = 1.3 } }

[[layer]]
name = "batt"
kind = "solid"
thickness = { nominal = "2.5 mm", tolerance = "0.4 mm" }
conductivity = { uniform = ["0.035 W/m/K", "0.045 W/m/K"] }

[[layer]]
name = "skin gap"
kind = "gap"
width = { lognormal = { median = "2 mm", gsd = 1.3 } }

[cold_side]
kind = "surface"
temperature = { normal = { mean = "34 degC", sd = "0.5 K" } }

[correlations]
pairs = [
  ["outer gap.width", "skin gap.width", 0.6],
  ["batt.thickness", "batt.conductivity", -0.5],
  ["shell.thickness", "shell.emissivity", 0.3],
]
"""


def plain_runs(study, rows: int) -> float:
    """Seconds to solve ``rows`` samples of a plain random design (the baseline)."""
    t = time.perf_counter()
    unit = random_design(rows, len(study.parameters), seed=7).unit
    evaluate(study, unit_to_inputs(study.parameters, unit))
    return time.perf_counter() - t


def shapley_study(study):
    """Propagate and analyse; seconds and the (parameter, layer) effects."""
    t = time.perf_counter()
    method = get_method("shapley")
    prop = propagate(study, quiet=True)
    sc = method.analyse(study, prop).scenarios[0]
    return time.perf_counter() - t, prop.inputs.shape[0], sc.shapley[
        "inner_surface_temperature"]


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--permutations", type=int, default=4096)
    ap.add_argument("--samples", type=int, default=4096)
    ap.add_argument("--precision", type=float, default=0.02)
    ap.add_argument("--max-rounds", type=int, default=4)
    args = ap.parse_args()
    study = loads_study(CONFIG, source="benchmark")
    d = len(study.parameters)
    print(f"{d} uncertain inputs; correlated pairs: "
          + "; ".join(f"{a} ~ {b} {v:+.1f}" for a, b, v in study.correlations.pairs()))
    m = int(args.permutations)
    for round_ in range(int(args.max_rounds)):
        s = replace(study, analysis=replace(study.analysis, samples=int(args.samples),
                                            permutations=m))
        seconds, runs, (ind, grp) = shapley_study(s)
        widest = float(max(np.max(ind.effect_ci), np.max(grp.effect_ci)))
        print(f"round {round_ + 1}: {m} permutations, {runs} model runs, {seconds:.1f} s, "
              f"widest half-width {widest:.4f}")
        if widest <= args.precision:
            break
        m = int(math.ceil(m * 1.1 * (widest / args.precision) ** 2))
    for k in np.argsort(-ind.effect):
        print(f"  {ind.names[k]:<34} {ind.effect[k]:6.3f} ± {ind.effect_ci[k]:.3f}")
    for k in np.argsort(-grp.effect):
        print(f"  layer {grp.names[k]:<28} {grp.effect[k]:6.3f} ± {grp.effect_ci[k]:.3f}")
    print(f"sum of effects: {ind.effect.sum():.12f}")
    cols = ("full_first", "independent_first", "full_total", "independent_total")
    print(f"  {'indices of dependent inputs':<34}" + "".join(f"{c:>19}" for c in cols))
    for k in np.argsort(-ind.effect):
        print(f"  {ind.names[k]:<34}" + "".join(
            f"{getattr(ind, c)[k]:>10.3f} ± {getattr(ind, c + '_ci')[k]:.3f}" for c in cols))
    dep_widest = max(float(np.max(getattr(ind, c + "_ci"))) for c in cols)
    print(f"dependent_index_rows: {ind.rosenblatt_used}")
    print(f"dependent_index_widest: {dep_widest:.4f}")
    before = plain_runs(study, runs)
    after = plain_runs(study, runs)
    base = min(before, after)
    print(f"plain random design, same {runs} runs: {before:.1f} s, {after:.1f} s (min "
          f"{base:.1f} s)")
    print(f"model_runs: {runs}")
    print(f"converged: {widest <= args.precision}")
    print(f"shapley_over_plain_runs: {seconds / base:.2f}")
    print(f"shapley_seconds: {seconds:.2f}")


if __name__ == "__main__":
    main()
