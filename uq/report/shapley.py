"""The report's Shapley section (``method = "shapley"``): how to read the effects, and the
parameters and layers ranked by Shapley effect per exposure, from the dataset alone."""

from __future__ import annotations

import numpy as np
import xarray as xr

from plyrisk.report.tables import Table, exposure_text, scenario_values
from plyrisk.text.indices import layer_label

__all__ = ["DEPENDENT_INPUTS", "dependence_assumptions", "dependent_index_table", "has_shapley",
           "shapley_paragraphs", "shapley_tables", "write_shapley_csv"]

DEPENDENT_INPUTS = (
    "The uncertain inputs are sampled from the distributions given, dependent through a "
    "Gaussian copula of the rank correlations in [correlations] (each input keeps its own "
    "distribution and truncation); inputs not listed there are independent. The results are "
    "only as good as those distributions and correlations, and the copula is one model of "
    "dependence among many (it has no tail dependence).")
"""The assumption that replaces the independence one when the inputs are correlated."""


def dependence_assumptions(ds: xr.Dataset, assumptions: tuple[str, ...]) -> tuple[str, ...]:
    """The report's assumptions, the independence one replaced for correlated inputs."""
    if "input_rank_correlation" not in ds:
        return assumptions
    return tuple(DEPENDENT_INPUTS if a.startswith("The uncertain inputs are sampled "
                                                  "independently") else a
                 for a in assumptions)

PRIMARY = "inner_surface_temperature"


def has_shapley(ds: xr.Dataset) -> bool:
    """Whether the dataset holds Shapley effects."""
    return "shapley_effect" in ds


def shapley_paragraphs(ds: xr.Dataset) -> list[str]:
    """How to read Shapley effects, and what the inputs' dependence was."""
    from plyrisk.methods.shapley import HOW_TO_READ

    out = [HOW_TO_READ]
    if "input_rank_correlation" in ds:
        r = np.asarray(ds["input_rank_correlation"].values, dtype=float)
        r = r.reshape(-1, *r.shape[-2:])[0]
        names = [str(n) for n in ds["parameter"].values]
        pairs = [f"{names[i]} with {names[j]} {r[i, j]:+.2f}" for i in range(len(names))
                 for j in range(i + 1, len(names)) if r[i, j] != 0.0]
        out.append("The inputs were correlated through a Gaussian copula with these rank "
                   "correlations (as configured): " + ("; ".join(pairs) or "all zero") + ".")
        out += _partner_sentences(ds)
    return out


def _partner_sentences(ds: xr.Dataset) -> list[str]:
    """Per exposure, the inputs of the headline output that matter largely through their
    correlated partners (:func:`plyrisk.text.shapley.through_partners`)."""
    from plyrisk.text.shapley import through_partners

    if "full_total_index" not in ds or "independent_total_index" not in ds:
        return []
    out = []
    for _, label, one in scenario_values(ds):
        outputs = [str(o) for o in one["output"].values]
        k = outputs.index(PRIMARY) if PRIMARY in outputs else 0
        names = [str(n) for n in one["parameter"].values]
        said = through_partners(
            names, *(np.asarray(one[v].values[k], dtype=float) for v in (
                "full_total_index", "full_total_index_ci", "independent_total_index",
                "independent_total_index_ci")))
        at = f" ({exposure_text(ds, label)})" if label else ""
        out += [f"For {outputs[k]}{at}: {t}." for t in said]
    return out


def _cell(v: float, ci: float) -> str:
    if not np.isfinite(v):
        return "n/a"
    return f"{v:.3f} ± {ci:.3f}" if np.isfinite(ci) else f"{v:.3f}"


def shapley_tables(ds: xr.Dataset) -> list[Table]:
    """Parameters and layers by Shapley effect of the inner-surface temperature, per exposure.
    """
    out = []
    for _, label, one in scenario_values(ds):
        suffix = f" — {exposure_text(ds, label)}" if label else ""
        outputs = [str(o) for o in one["output"].values]
        if PRIMARY not in outputs:
            continue
        k = outputs.index(PRIMARY)
        for dim, prefix, what in (("parameter", "shapley", "Parameters"),
                                  ("group", "shapley_group", "Layers")):
            eff = np.asarray(one[f"{prefix}_effect"].values[k], dtype=float)
            ci = np.asarray(one[f"{prefix}_effect_ci"].values[k], dtype=float)
            ok = np.asarray(one[f"{prefix}_converged"].values[k], dtype=bool)
            names = [str(n).replace("_", " ") if dim == "parameter" else
                     layer_label(str(n), spaced=True) for n in one[dim].values]
            order = np.argsort(-np.nan_to_num(eff, nan=-np.inf), kind="stable")
            rows = []
            for r, j in enumerate(order, start=1):
                row = [str(r), names[j]]
                if dim == "parameter":
                    row.append(str(one["parameter_group"].values[j]).replace("_", " "))
                row += [_cell(eff[j], ci[j]), "ok" if ok[j] else "WIDE"]
                rows.append(row)
            header = ["rank", "parameter", "layer"] if dim == "parameter" else ["rank", "layer"]
            out.append(Table(header + ["Shapley effect ± CI", "status"], rows,
                             f"{what} by Shapley effect of the inner-surface temperature"
                             f"{suffix}"))
        table = dependent_index_table(one, k, f"the inner-surface temperature{suffix}")
        if table is not None:
            out.append(table)
    return out


def dependent_index_table(one: xr.Dataset, k: int, of: str) -> Table | None:
    """The four indices of dependent inputs of output ``k`` per parameter, in the order of the
    effects; ``of`` names the output (and the exposure) in the caption."""
    from plyrisk.text.shapley import INDEX_COLUMNS

    cols = [(attr, label) for attr, label in INDEX_COLUMNS if f"{attr}_index" in one]
    if not cols:
        return None
    eff = np.asarray(one["shapley_effect"].values[k], dtype=float)
    order = np.argsort(-np.nan_to_num(eff, nan=-np.inf), kind="stable")
    names = [str(n).replace("_", " ") for n in one["parameter"].values]
    rows = []
    for j in order:
        rows.append([names[j]] + [
            _cell(float(one[f"{attr}_index"].values[k, j]),
                  float(one[f"{attr}_index_ci"].values[k, j])) for attr, _ in cols])
    return Table(["parameter"] + [f"{label} ± CI" for _, label in cols], rows,
                 f"Indices of dependent inputs of {of} (full: with what the correlated "
                 "partners carry; indep.: the parameter's own part)")


def write_shapley_csv(ds: xr.Dataset, out) -> list:
    """Write ``shapley.csv`` (every output, parameter and layer effect with its half-width,
    rank and status, and per parameter the four indices of dependent inputs with their
    half-widths) into the folder ``out``; ``[]`` without Shapley effects."""
    from pathlib import Path

    from plyrisk.report.csv_tables import write_csv
    from plyrisk.text.shapley import INDEX_COLUMNS

    if not has_shapley(ds):
        return []
    indices = [f"{attr}_index" for attr, _ in INDEX_COLUMNS if f"{attr}_index" in ds]
    rows = []
    for _, label, one in scenario_values(ds):
        for k, o in enumerate(str(v) for v in one["output"].values):
            for dim, prefix, kind in (("parameter", "shapley", "parameter"),
                                      ("group", "shapley_group", "layer")):
                for j, name in enumerate(str(v) for v in one[dim].values):
                    extra: list = []
                    for v in indices:  # per parameter only; empty for a layer
                        extra += ([float(one[v].values[k, j]), float(one[f"{v}_ci"].values[k, j])]
                                  if dim == "parameter" else ["", ""])
                    rows.append([label, o, kind, name,
                                 float(one[f"{prefix}_effect"].values[k, j]),
                                 float(one[f"{prefix}_effect_ci"].values[k, j]),
                                 int(one[f"{prefix}_rank"].values[k, j]),
                                 bool(one[f"{prefix}_converged"].values[k, j]), *extra])
    header = ["scenario", "output", "kind", "name", "shapley_effect", "ci_half_width", "rank",
              "converged"] + [c for v in indices for c in (v, f"{v}_ci_half_width")]
    return [write_csv(Path(out) / "shapley.csv", header, rows)]
