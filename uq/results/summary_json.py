"""``summary.json``: the machine-readable summary of a run, beside ``summary.md``.

It holds the verdict (overall and per exposure, with the criterion text, value, interval and
bound), the headline statistics with their intervals, the top parameters and layers, warnings
and notes, the counts (samples, runs, non-converged), the library versions, the study
fingerprint and the cautions. Its layout is fixed by the JSON Schema ``docs/summary.schema.json``
(:data:`SCHEMA_ID`; a test validates real outputs against it). Numbers are SI (``units`` says
which); a value that does not exist is ``null``; a time beyond the simulated horizon is
``"beyond_horizon"``.

Examples
--------
>>> import json
>>> from plyrisk.results.summary_json import summary_data
>>> import xarray as xr
>>> ds = xr.Dataset({"exceedance_probability": ((), 0.0),
...                  "exceedance_probability_lower": ((), 0.0),
...                  "exceedance_probability_upper": ((), 0.02)},
...                 attrs={"criterion": "P(exceed) <= 5 %", "limit": 317.15, "confidence": 0.9,
...                        "title": "Invented example", "method": "saltelli"})
>>> data = summary_data(ds)
>>> data["verdict"]["overall"], data["verdict"]["criterion"]
('MET', 'P(exceed) <= 5 %')
"""

from __future__ import annotations

import json
import math
from pathlib import Path
from typing import Any

import numpy as np
import xarray as xr

from plyrisk.cautions import CAUTIONS, TRANSIENT_CAUTIONS
from plyrisk.results.verdict import verdict_of

SCHEMA_ID = "https://plyrisk.invalid/schemas/summary-1.json"
"""``$id`` of the schema ``docs/summary.schema.json`` the file follows."""

FORMAT_VERSION = 1
"""Version of the layout; raised when a field changes meaning or is removed."""

TOP = 5
"""Parameters and layers listed per exposure [-]."""


def _num(x: Any) -> float | str | None:
    x = float(x)
    if math.isnan(x):
        return None
    if math.isinf(x):
        return "beyond_horizon" if x > 0 else None
    return x


def _labels(ds: xr.Dataset) -> list[str]:
    from plyrisk.results.dataset import scenario_labels

    return scenario_labels(ds)


def _at(var: xr.DataArray, k: int) -> xr.DataArray:
    return var.isel(scenario=k) if "scenario" in var.dims else var


def _quantiles(ds: xr.Dataset, name: str, k: int, **sel: Any) -> list[dict[str, Any]]:
    out: list[dict[str, Any]] = []
    found = [ds.get(f"{name}{s}") for s in ("", "_lower", "_upper")]
    estimate = found[0]
    if estimate is None:
        return out
    estimate = _at(estimate, k).sel(**sel)
    parts = [None if p is None else _at(p, k).sel(**sel) for p in found]
    for i, p in enumerate(np.asarray(ds["quantile"].values, dtype=float)):
        out.append({"probability": float(p),
                    "value": _num(estimate.values[i]),
                    "lower": None if parts[1] is None else _num(parts[1].values[i]),
                    "upper": None if parts[2] is None else _num(parts[2].values[i])})
    return out


def _wanted(ds: xr.Dataset, rows: list[dict[str, Any]]) -> list[dict[str, Any]]:
    """The study's own percentiles (``attrs["percentiles"]``) of a list of quantile rows."""
    keep = np.atleast_1d(np.asarray(ds.attrs.get("percentiles", []), dtype=float))
    if keep.size == 0:
        return rows
    return [r for r in rows if np.any(np.isclose(keep, r["probability"], atol=1e-9))]


def _statistics(ds: xr.Dataset, k: int) -> dict[str, Any]:
    transient = ds.attrs.get("study_kind") == "transient"
    stats: dict[str, Any] = {}
    if transient:
        if "event" in ds.coords and "event_probability" in ds:
            stats["events"] = [{
                "event": str(e),
                "probability": {key: _num(_at(ds[f"event_probability{sfx}"], k).sel(event=e))
                                for key, sfx in (("value", ""), ("lower", "_lower"),
                                                 ("upper", "_upper"))},
                "time_percentiles": _wanted(ds, _quantiles(ds, "event_time_quantile", k,
                                                           event=e)),
                "time_units": "s"} for e in np.asarray(ds["event"].values)]
        return stats
    lim = str(ds.attrs.get("limit_output", "inner_surface_temperature"))
    outputs: list[tuple[str, str, dict[str, Any], str]] = [
        ("inner_surface_temperature", "inner_surface_temperature_quantile", {}, "K")]
    if lim != "inner_surface_temperature":
        if f"{lim}_quantile" in ds:
            outputs.append((lim, f"{lim}_quantile", {},
                            str(ds[f"{lim}_quantile"].attrs.get("units", ""))))
        elif "interface" in ds.coords:
            outputs.append((lim, "interface_temperature_quantile", {"interface": lim}, "K"))
    stats["outputs"] = [{"output": o, "units": u, "limit_applies": o == lim,
                         "percentiles": _wanted(ds, _quantiles(ds, var, k, **sel))}
                        for o, var, sel, u in outputs if var in ds]
    if "exceedance_probability" in ds:
        stats["exceedance"] = {
            "output": lim,
            "limit": _num(ds.attrs.get("limit", math.nan)),
            "limit_units": str(ds.attrs.get("limit_units", "K")),
            **{key: _num(_at(ds[f"exceedance_probability{sfx}"], k))
               for key, sfx in (("value", ""), ("lower", "_lower"), ("upper", "_upper"))}}
    return stats


def _ranked(ds: xr.Dataset, k: int, dim: str) -> dict[str, Any] | None:
    """The top parameters (``dim = "parameter"``) or layers (``"group"``) of one exposure."""
    group = dim == "group"
    candidates = (("sobol_group_total", "sobol_group_total_ci", "sobol_total") if group else
                  ("sobol_total", "sobol_total_ci", "sobol_total"),
                  ("pce_group_total", "pce_group_total_ci", "pce_total") if group else
                  ("pce_total", "pce_total_ci", "pce_total"),
                  ("shapley_group_effect", "shapley_group_effect_ci", "shapley_effect")
                  if group else ("shapley_effect", "shapley_effect_ci", "shapley_effect"),
                  (None, None, None) if group else
                  ("morris_mu_star", "morris_mu_star_ci", "morris_mu_star"))
    for name, ci, measure in candidates:
        if name is None or name not in ds:
            continue
        var, half = _at(ds[name], k), _at(ds[ci], k) if ci in ds else None
        output = None
        if "output" in var.dims:
            outs = [str(o) for o in var["output"].values]
            pref = str(ds.attrs.get("limit_output", outs[0]))
            output = pref if pref in outs else outs[0]
            var = var.sel(output=output)
            half = None if half is None else half.sel(output=output)
        values = np.asarray(var.values, dtype=float)
        names = [str(n) for n in var[dim].values]
        order = np.argsort(-np.nan_to_num(values, nan=-np.inf), kind="stable")[:TOP]
        said = str(var.attrs.get("estimator", "saltelli"))
        estimator = ("pce" if name.startswith("pce") or said == "pce" or "polynomial" in said
                     else "morris" if name.startswith("morris")
                     else "shapley" if name.startswith("shapley") else "saltelli")
        return {"measure": measure, "estimator": estimator, "output": output,
                "items": [{"rank": r, "name": names[j], "value": _num(values[j]),
                           "ci_half_width": None if half is None else
                           _num(np.asarray(half.values, dtype=float)[j])}
                          for r, j in enumerate(order, start=1)]}
    return None


def _versions(ds: xr.Dataset) -> dict[str, str]:
    return {key[len("version_"):]: str(v) for key, v in ds.attrs.items()
            if key.startswith("version_")}


def _lines(text: Any) -> list[str]:
    return [line for line in str(text or "").split("\n") if line.strip()]


def summary_data(ds: xr.Dataset, *, fingerprint: str | None = None) -> dict[str, Any]:
    """The content of ``summary.json`` of a results dataset.

    Parameters
    ----------
    ds
        A results dataset (steady or transient, any method).
    fingerprint
        The study fingerprint; default ``ds.attrs["study_fingerprint"]``.

    Returns
    -------
    dict
        JSON-ready data following ``docs/summary.schema.json``.
    """
    from plyrisk.provenance import package_version

    v = verdict_of(ds)
    transient = ds.attrs.get("study_kind") == "transient"
    labels = _labels(ds)
    scenarios = []
    for k, label in enumerate(labels):
        nonconv = ds.get("nonconverged_count")
        used = ds.get("samples_used")
        scenarios.append({
            "label": label,
            "verdict": v.scenarios[k].verdict if k < len(v.scenarios) else v.overall,
            "statistics": _statistics(ds, k),
            "top_parameters": _ranked(ds, k, "parameter"),
            "top_layers": _ranked(ds, k, "group"),
            "nonconverged": None if nonconv is None else int(_at(nonconv, k).item()),
            "samples_used": None if used is None else int(_at(used, k).item()),
        })
    nonconverged = (int(np.asarray(ds["nonconverged_count"].values).sum())
                    if "nonconverged_count" in ds else
                    int((~np.asarray(ds["converged"].values, dtype=bool)).sum())
                    if "converged" in ds else None)
    return {
        "$schema": SCHEMA_ID,
        "format": "plyrisk-summary",
        "format_version": FORMAT_VERSION,
        "title": str(ds.attrs.get("title", "")),
        "config_source": str(ds.attrs.get("config_source", "")),
        "study_kind": "transient" if transient else "steady",
        "method": str(ds.attrs.get("method", "")),
        "design": str(ds.attrs.get("design", "")),
        "seed": int(ds.attrs["seed"]) if "seed" in ds.attrs else None,
        "study_fingerprint": fingerprint or str(ds.attrs.get("study_fingerprint", "")) or None,
        "verdict": v.to_dict(),
        "limit_output": (None if transient else
                         str(ds.attrs.get("limit_output", "inner_surface_temperature"))),
        "confidence": _num(ds.attrs.get("confidence", math.nan)),
        "scenario_quantity": (str(ds.attrs["scenario_quantity"])
                              if "scenario_quantity" in ds.attrs else None),
        "scenarios": scenarios,
        "counts": {"samples": int(ds.attrs.get("base_samples", 0)),
                   "runs": int(ds.attrs.get("evaluations", 0)),
                   "nonconverged": nonconverged,
                   "parameters": int(ds.attrs.get("parameters", 0)),
                   "scenarios": len(labels)},
        "warnings": _lines(ds.attrs.get("warnings")),
        "notes": _lines(ds.attrs.get("notes")),
        "versions": {"plyrisk": package_version(), **_versions(ds)},
        "cautions": list(TRANSIENT_CAUTIONS if transient else CAUTIONS),
    }


def write_summary_json(ds: xr.Dataset, path: str | Path, *,
                       fingerprint: str | None = None) -> Path:
    """Write ``summary.json`` (into a staging folder of :mod:`plyrisk.results.files`, which
    renames it into place and lists it in the manifest).

    Parameters
    ----------
    ds
        A results dataset.
    path
        File to write.
    fingerprint
        The study fingerprint.

    Returns
    -------
    pathlib.Path
    """
    path = Path(path)
    text = json.dumps(summary_data(ds, fingerprint=fingerprint), indent=2, allow_nan=False)
    path.write_text(text + "\n", encoding="utf-8")
    return path
