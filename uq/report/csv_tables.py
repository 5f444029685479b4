"""The machine-readable tables of the report: quantiles, indices, group indices and ranking CSVs.

Values are written at full precision (10 significant digits, booleans as ``true``/``false``,
empty cells for NaN or None); temperatures in the limit's unit, which each row names.
``quantiles.csv`` says in ``limit_applies`` which rows are the output the study's limit protects
(``[study] limit_output``; a heat flux is written in W m-2).
"""

from __future__ import annotations

import csv
from pathlib import Path
from typing import Any

import numpy as np
import xarray as xr

from plyrisk.analysis.sobol import not_resolved
from plyrisk.report.figures import outputs as fg
from plyrisk.report.figures.common import PRIMARY
from plyrisk.report.tables import INDEX_KEYS, index_sets, scenario_values
from plyrisk.results.dataset import independent_samples, subset_warning
from plyrisk.text.indices import NOT_RESOLVED


def index_status(values: dict, j: int, converged: np.ndarray | None) -> str:
    """The status of one index row: ``"not resolved: more samples"`` when the first-order or
    total estimate lies outside [0, 1] by more than its interval, else ``"converged"`` or
    ``"unconverged"`` (interval wider than the threshold), ``""`` without flags."""
    if any(not_resolved(float(values[k][j]), float(values[f"{k}_ci"][j]))
           for k in ("first", "total")):
        return NOT_RESOLVED
    if converged is None:
        return ""
    return "converged" if bool(converged[j]) else "unconverged"

__all__ = ["write_csv", "write_csv_tables"]


def _csv(v: Any) -> str:
    if isinstance(v, bool | np.bool_):
        return "true" if v else "false"
    if isinstance(v, int | np.integer):
        return str(int(v))
    if isinstance(v, float | np.floating):
        return "" if not np.isfinite(v) else f"{float(v):.10g}"
    return "" if v is None else str(v)


def write_csv(path: Path, header: list[str], rows: list[list[Any]]) -> Path:
    """Write one CSV file: a header row, then ``rows`` as CSV text; returns ``path``."""
    with path.open("w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(header)
        w.writerows([[_csv(v) for v in r] for r in rows])
    return path


def write_csv_tables(ds: xr.Dataset, out: Path) -> list[Path]:
    """Write ``quantiles.csv``, ``indices.csv``, ``group_indices.csv`` and ``ranking.csv``
    into the folder ``out``; returns their paths."""
    ds = fg.surrogate_view(ds)
    unit = fg.temperature_unit(ds)
    quant, ind, grp, rank = [], [], [], []

    def shown(v) -> float:
        return float(fg.to_display_temperature(ds, v))

    independent = independent_samples(ds)
    lim = str(ds.attrs.get("limit_output", PRIMARY))

    def applies(quantity: str, face: str = "") -> bool:  # the row is the limit's output
        return lim == (face or quantity)

    for _, label, one in scenario_values(ds):
        probs = np.asarray(one["quantile"].values, dtype=float)
        lost = (subset_warning(int(one["samples_used"].item()), independent)
                if "samples_used" in one else "")
        for k, p in enumerate(probs):
            quant.append([label, PRIMARY, "", p,
                          *(shown(one[f"inner_surface_temperature_quantile{s}"].values[k])
                            for s in ("", "_lower", "_upper")), unit, lost, applies(PRIMARY)])
        for f, face in enumerate(str(v) for v in one["interface"].values):
            for k, p in enumerate(probs):
                quant.append([label, "interface_temperature", face, p,
                              *(shown(one[f"interface_temperature_quantile{s}"].values[f, k])
                                for s in ("", "_lower", "_upper")), unit, lost,
                              applies("interface_temperature", face)])
        if lim != PRIMARY and f"{lim}_quantile" in one:  # the heat flux, in SI
            for k, p in enumerate(probs):
                quant.append([label, lim, "", p, *(float(one[f"{lim}_quantile{s}"].values[k])
                                                   for s in ("", "_lower", "_upper")),
                              str(one[f"{lim}_quantile"].attrs.get("units", "")), lost, True])
        names = [str(n) for n in one["parameter"].values]
        groups = [str(g) for g in one["group"].values]
        rho = np.asarray(one["rank_correlation"].values, dtype=float)
        sets = index_sets(one)
        for ix in sets:
            pc, gc = ix.p_converged, ix.g_converged
            for j, name in enumerate(names):
                ind.append([label, ix.output, name, str(one["parameter_group"].values[j]),
                            str(one["parameter_unit"].values[j]),
                            *(float(ix.p[k][j]) for k in INDEX_KEYS), int(ix.p_rank[j]),
                            None if pc is None else bool(pc[j]),
                            rho[j] if ix.output == PRIMARY else None, ix.estimator,
                            index_status(ix.p, j, pc)])
                rank.append([label, ix.output, "parameter", int(ix.p_rank[j]), name,
                             f"total_sobol_index_{ix.estimator}", float(ix.p["total"][j]),
                             float(ix.p["total_ci"][j]), None if pc is None else bool(pc[j])])
            for j, g in enumerate(groups):
                grp.append([label, ix.output, g, *(float(ix.g[k][j]) for k in INDEX_KEYS),
                            int(ix.g_rank[j]), None if gc is None else bool(gc[j]),
                            ix.estimator, index_status(ix.g, j, gc)])
                rank.append([label, ix.output, "layer", int(ix.g_rank[j]), g,
                             f"total_sobol_index_{ix.estimator}", float(ix.g["total"][j]),
                             float(ix.g["total_ci"][j]), None if gc is None else bool(gc[j])])
        if not sets:
            for j, name in enumerate(names):
                ind.append([label, PRIMARY, name, str(one["parameter_group"].values[j]),
                            str(one["parameter_unit"].values[j]), *([None] * 6), rho[j], "",
                            ""])
        if "sobol_total" not in one:
            for r, j in enumerate(np.argsort(-np.nan_to_num(np.abs(rho), nan=-1.0),
                                             kind="stable"), start=1):
                rank.append([label, PRIMARY, "parameter", r, names[j],
                             "spearman_rank_correlation", rho[j], None, None])
    first_seen: dict[tuple, int] = {}
    for row in rank:
        first_seen.setdefault((row[0], row[1], row[2], row[5]), len(first_seen))
    rank.sort(key=lambda r: (first_seen[(r[0], r[1], r[2], r[5])], r[3]))
    return [
        write_csv(out / "quantiles.csv", ["scenario", "quantity", "interface", "probability",
                                          "estimate", "lower", "upper", "unit", "warning",
                                          "limit_applies"],
                  quant),
        write_csv(out / "indices.csv", ["scenario", "output", "parameter", "group", "unit",
                                        "first", "first_ci", "total", "total_ci", "rank",
                                        "converged", "rank_correlation", "estimator", "status"],
                  ind),
        write_csv(out / "group_indices.csv", ["scenario", "output", "group", "first",
                                              "first_ci", "total", "total_ci", "rank",
                                              "converged", "estimator", "status"], grp),
        write_csv(out / "ranking.csv", ["scenario", "output", "kind", "rank", "name", "measure",
                                        "value", "ci", "converged"], rank),
    ]

