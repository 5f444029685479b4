"""The results dataset: an :class:`xarray.Dataset` written to NetCDF (``results.nc``).

Everything is SI inside the dataset; each variable carries ``units`` and ``long_name``. The
attributes carry the config text, seed, design, sample counts and library versions, so that a
result can be traced and re-run. The ``scenario`` dimension exists only where the study sweeps
an exposure; :func:`scenario_slices` iterates over either kind of dataset.
"""

from __future__ import annotations

import platform
from collections.abc import Iterator
from importlib import metadata
from pathlib import Path

import numpy as np
import xarray as xr

from plyrisk.analysis.study import StudyAnalysis
from plyrisk.cautions import cautions_text
from plyrisk.propagate.evaluate import Propagation, parameter_groups

BLOCK_LABELS = {0: "A", 1: "B"}
"""Saltelli design block codes: 0 = A, 1 = B, 2 + j = A with column j from B, then groups."""

_LIBRARIES = ("plyrisk", "numpy", "scipy", "SALib", "chaospy", "xarray", "netCDF4", "pint")


SAMPLE_OUTPUTS: dict[str, tuple[tuple[str, ...], str, str]] = {
    "inner_surface_temperature": ((), "K", "inner-surface temperature"),
    "heat_flux": ((), "W m-2", "heat flux through the assembly"),
    "interface_temperature": (("interface",), "K", "face temperature"),
    "layer_temperature_drop": (("layer",), "K", "temperature drop across each element"),
    "layer_resistance": (("layer",), "m2 K W-1", "effective thermal resistance of each element"),
    "radiative_share": (("layer",), "1", "fraction of each gap's heat flow carried by radiation"),
    "rayleigh_number": (("layer",), "1", "Rayleigh number of each gap"),
    "convection_onset": (("layer",), "1", "gap past the onset of natural convection"),
    "converged": ((), "1", "sample converged to a physically valid solution"),
    "iterations": ((), "1", "Newton iterations"),
    "air_range_exceeded": ((), "1", "a gap's mean temperature was outside 250-1500 K"),
}
"""Per-sample model outputs: dimensions after (scenario ×) sample, units, long name [-]."""


def library_versions() -> dict[str, str]:
    """Versions of the libraries that produced a result [-]."""
    out = {"python": platform.python_version()}
    for name in _LIBRARIES:
        try:
            out[name] = metadata.version(name)
        except metadata.PackageNotFoundError:
            out[name] = "not installed"
    return out


def _var(dims, data, units: str, long_name: str, **attrs) -> xr.Variable:
    return xr.Variable(dims, data, attrs={"units": units, "long_name": long_name, **attrs})


def to_dataset(study, propagation: Propagation, analysis: StudyAnalysis) -> xr.Dataset:
    """Assemble the results dataset of a study.

    Parameters
    ----------
    study
        The parsed study (:class:`plyrisk.study.config.Study`). [-]
    propagation
        Design, inputs and outputs. [-]
    analysis
        Percentiles, exceedance, indices and rankings. [-]

    Returns
    -------
    xarray.Dataset
    """
    out = propagation.outputs
    swept = study.scenarios is not None
    sd = ("scenario",) if swept else ()

    def per(x):  # drop the scenario axis of an unswept study
        x = np.asarray(x)
        return x if swept else x[0]

    params = study.parameters
    n_samples = propagation.inputs.shape[0]
    group_names, _ = parameter_groups(study)
    probs = analysis.probabilities
    outputs = list(analysis.outputs)
    a = study.analysis
    coords = {
        "sample": _var(("sample",), np.arange(n_samples), "1", "sample index"),
        "sample_block": _var(
            ("sample",),
            propagation.design.block.astype(np.int16),
            "1",
            "design block of each sample (0 = A, 1 = B, 2+j = A with column j from B, "
            "2+d+g = A with group g from B)",
        ),
        "parameter": _var(("parameter",), np.array([p.name for p in params], dtype=str), "1",
                          "uncertain parameter"),
        "parameter_group": _var(("parameter",), np.array([p.group for p in params], dtype=str),
                                "1", "layer (or boundary) each parameter belongs to"),
        "parameter_unit": _var(("parameter",), np.array([p.unit for p in params], dtype=str),
                               "1", "unit the parameter was given in"),
        "parameter_si_unit": _var(("parameter",),
                                  np.array([_si_unit(p) for p in params], dtype=str), "1",
                                  "SI unit of the parameter's values in this dataset"),
        "parameter_distribution": _var(("parameter",),
                                       np.array([_describe(p) for p in params], dtype=str), "1",
                                       "input distribution (SI parameters)"),
        "parameter_nominal": _var(("parameter",),
                                  np.array([p.distribution.nominal for p in params], dtype=float),
                                  "SI", "nominal value of each parameter"),
        "interface": _var(("interface",), np.array(out.interface_names, dtype=str), "1",
                          "face of the assembly, hot (exposed) side first"),
        "layer": _var(("layer",), np.array(out.element_names, dtype=str), "1",
                      "element of the network (layers and contact resistances)"),
        "layer_kind": _var(("layer",), np.array(out.element_kinds, dtype=str), "1",
                           "element kind: solid, gap or contact"),
        "layer_nominal_thickness": _var(("layer",), _nominal_thickness(study, out), "m",
                                        "nominal thickness of each element (gap width; 0 for "
                                        "a contact)"),
        "quantile": _var(("quantile",), probs, "1", "cumulative probability of the quantile"),
        "group": _var(("group",), np.array(group_names, dtype=str), "1",
                      "layer (or boundary) group of parameters"),
        "output": _var(("output",), np.array(outputs, dtype=str), "1",
                       "model output the indices refer to"),
    }
    if swept:
        sc = study.scenarios
        coords["scenario"] = _var(("scenario",), np.asarray(sc.values, dtype=float),
                                  _si_of_hot(sc.quantity), f"swept hot-side {sc.quantity}")
        coords["scenario_label"] = _var(("scenario",), np.array(sc.labels, dtype=str), "1",
                                        "swept exposure as given in the config")

    f = out.fields
    data = {
        "input": _var(("sample", "parameter"), propagation.inputs, "SI",
                      "input value of each parameter (units: parameter_si_unit)"),
    }
    for name, (extra, units, long_name) in SAMPLE_OUTPUTS.items():
        values = per(f[name])
        data[name] = _var((*sd, "sample", *extra), values.astype(np.int32) if name ==
                          "iterations" else values, units, long_name)
    sa = analysis.scenarios
    q_est = per([s.inner_quantiles.estimate for s in sa])
    data["inner_surface_temperature_quantile"] = _var(
        (*sd, "quantile"), q_est, "K", "quantile of the inner-surface temperature"
    )
    data["inner_surface_temperature_quantile_lower"] = _var(
        (*sd, "quantile"), per([s.inner_quantiles.lower for s in sa]), "K",
        "lower confidence bound of the quantile", confidence=a.confidence,
    )
    data["inner_surface_temperature_quantile_upper"] = _var(
        (*sd, "quantile"), per([s.inner_quantiles.upper for s in sa]), "K",
        "upper confidence bound of the quantile", confidence=a.confidence,
    )
    for part, long in (("estimate", "quantile"), ("lower", "lower confidence bound of the "
                       "quantile"), ("upper", "upper confidence bound of the quantile")):
        suffix = "" if part == "estimate" else f"_{part}"
        data[f"interface_temperature_quantile{suffix}"] = _var(
            (*sd, "interface", "quantile"),
            per([[getattr(q, part) for q in s.interface_quantiles] for s in sa]),
            "K", f"{long} of each face temperature", confidence=a.confidence,
        )
    data["exceedance_probability"] = _var(
        sd, per([s.exceedance.probability for s in sa]), "1",
        "probability that the inner-surface temperature exceeds the limit",
        limit=a.limit, method=sa[0].exceedance.method,
    )
    data["exceedance_probability_lower"] = _var(
        sd, per([s.exceedance.lower for s in sa]), "1",
        "lower confidence bound of the exceedance probability", confidence=a.confidence,
    )
    data["exceedance_probability_upper"] = _var(
        sd, per([s.exceedance.upper for s in sa]), "1",
        "upper confidence bound of the exceedance probability", confidence=a.confidence,
    )
    data["samples_used"] = _var(sd, per([s.exceedance.n for s in sa]), "1",
                                "converged independent samples behind percentiles and exceedance")
    data["nonconverged_count"] = _var(sd, per([s.nonconverged for s in sa]), "1",
                                      "samples that did not converge (excluded from statistics)")
    data["rank_correlation"] = _var(
        (*sd, "parameter"), per([s.rank_correlation for s in sa]), "1",
        "Spearman rank correlation of each input with the inner-surface temperature",
    )
    if a.method == "saltelli" and params:
        _add_indices(data, sa, outputs, params, group_names, sd, per, a)
    if any(sc.surrogate is not None for sc in sa):
        _add_surrogate(data, sa, params, group_names, sd, per, a)
    attrs = {
        "title": study.title,
        "config_source": str(study.source),
        "config_text": study.text,
        "seed": int(a.seed),
        "method": a.method,
        "design": a.design,
        "base_samples": int(propagation.design.base_samples),
        "evaluations": int(n_samples),
        "parameters": len(params),
        "confidence": float(a.confidence),
        "percentiles": np.asarray(a.percentiles, dtype=float),
        "bootstrap": int(a.bootstrap),
        "index_ci_threshold": float(a.index_ci_threshold),
        "pce_max_loo_error": float(a.pce_max_loo_error),
        "limit": float(a.limit),
        "limit_units": "K",
        "limit_display_unit": study.limit_unit,
        "radiation": study.model.radiation,
        "convection": int(bool(study.model.convection)),
        "inner_surface_index": int(out.inner_surface_index),
        "notes": "\n".join(analysis.notes),
        "cautions": cautions_text(),
        "Conventions": "CF-1.10",
    }
    if swept:
        attrs["scenario_quantity"] = study.scenarios.quantity
        attrs["scenario_display_unit"] = study.scenarios.unit
    attrs.update({f"version_{k}": v for k, v in library_versions().items()})
    return xr.Dataset(data_vars=data, coords=coords, attrs=attrs)


def _add_indices(data, sa, outputs, params, group_names, sd, per, a) -> None:
    n_p, n_g, n_o = len(params), len(group_names), len(outputs)

    def table(which: str, attr: str, size: int):
        arr = np.full((len(sa), n_o, size), np.nan)
        for s, sc in enumerate(sa):
            for k, o in enumerate(outputs):
                ind = sc.indices[o][which]
                if ind is not None:
                    arr[s, k] = getattr(ind, attr)
        return per(arr)

    thr = a.index_ci_threshold
    for which, dim, size, prefix in ((0, "parameter", n_p, "sobol"),
                                     (1, "group", n_g, "sobol_group")):
        who = "parameter" if which == 0 else "layer group"
        for kind in ("first", "total"):
            half = table(which, f"{kind}_ci", size)
            data[f"{prefix}_{kind}_converged"] = _var(
                (*sd, "output", dim), np.asarray(half <= thr), "1",
                f"{kind}-order index interval half-width at most the threshold" if kind ==
                "first" else "total index interval half-width at most the threshold",
                threshold=thr, method="saltelli")
        negative = table(which, "first", size) < 0
        data[f"{prefix}_first_negative"] = _var(
            (*sd, "output", dim), np.asarray(negative), "1",
            "first-order estimate below zero (estimator noise around a small index; shown as "
            "estimated, not clipped)", method="saltelli")
        data[f"{prefix}_first"] = _var((*sd, "output", dim), table(which, "first", size), "1",
                                       f"first-order Sobol index per {who}")
        data[f"{prefix}_first_ci"] = _var((*sd, "output", dim), table(which, "first_ci", size),
                                          "1", "half-width of the first-order index's "
                                          "bootstrap confidence interval", confidence=a.confidence)
        data[f"{prefix}_total"] = _var((*sd, "output", dim), table(which, "total", size), "1",
                                       f"total Sobol index per {who}")
        data[f"{prefix}_total_ci"] = _var((*sd, "output", dim), table(which, "total_ci", size),
                                          "1", "half-width of the total index's bootstrap "
                                          "confidence interval", confidence=a.confidence)
    rank_p = np.zeros((len(sa), n_o, n_p), dtype=np.int32)
    conv_p = np.zeros((len(sa), n_o, n_p), dtype=bool)
    rank_g = np.zeros((len(sa), n_o, n_g), dtype=np.int32)
    conv_g = np.zeros((len(sa), n_o, n_g), dtype=bool)
    suggested = np.zeros((len(sa), n_o), dtype=np.int64)
    dropped = np.zeros((len(sa), n_o), dtype=np.int64)
    names = [p.name for p in params]
    for s, sc in enumerate(sa):
        for k, o in enumerate(outputs):
            for r, item in enumerate(sc.ranking[o], start=1):
                j = names.index(item.name)
                rank_p[s, k, j] = r
                conv_p[s, k, j] = item.converged
                if item.suggested_base_samples:
                    suggested[s, k] = max(suggested[s, k], item.suggested_base_samples)
            for r, item in enumerate(sc.group_ranking.get(o, []), start=1):
                j = list(group_names).index(item.name)
                rank_g[s, k, j] = r
                conv_g[s, k, j] = item.converged
            dropped[s, k] = sc.indices[o][0].dropped_rows
    data["parameter_rank"] = _var((*sd, "output", "parameter"), per(rank_p), "1",
                                  "rank of each parameter by total index (1 = most influential)")
    data["index_converged"] = _var((*sd, "output", "parameter"), per(conv_p), "1",
                                   "both index intervals narrower than the threshold",
                                   threshold=a.index_ci_threshold)
    data["group_rank"] = _var((*sd, "output", "group"), per(rank_g), "1",
                              "rank of each layer group by total index (1 = most influential)")
    data["group_index_converged"] = _var((*sd, "output", "group"), per(conv_g), "1",
                                         "both group-index intervals narrower than the threshold",
                                         threshold=a.index_ci_threshold)
    data["suggested_base_samples"] = _var((*sd, "output"), per(suggested), "1",
                                          "base samples suggested to converge every index "
                                          "(0 = already converged)")
    data["sobol_rows_dropped"] = _var((*sd, "output"), per(dropped), "1",
                                      "base rows dropped from the Sobol estimators because an "
                                      "evaluation in them did not converge")
    for name in ("sobol_first", "sobol_first_ci", "sobol_total", "sobol_total_ci",
                 "sobol_group_first", "sobol_group_first_ci", "sobol_group_total",
                 "sobol_group_total_ci", "parameter_rank", "index_converged", "group_rank",
                 "group_index_converged", "suggested_base_samples", "sobol_rows_dropped"):
        data[name].attrs["method"] = "saltelli"


def _add_surrogate(data, sa, params, group_names, sd, per, a) -> None:
    n_p, n_g = len(params), len(group_names)

    def table(which: str, attr: str, size: int):
        arr = np.full((len(sa), size), np.nan)
        for s, sc in enumerate(sa):
            ind = getattr(sc, which)
            if ind is not None:
                arr[s] = getattr(ind, attr)
        return per(arr)

    for which, dim, size, prefix, who in (("surrogate", "parameter", n_p, "pce", "parameter"),
                                          ("surrogate_groups", "group", n_g, "pce_group",
                                           "layer group")):
        for attr, long in (("first", "first-order Sobol index"), ("total", "total Sobol index")):
            data[f"{prefix}_{attr}"] = _var(
                (*sd, dim), table(which, attr, size), "1",
                f"{long} per {who} of the inner-surface temperature, from a polynomial-chaos "
                "surrogate", method="pce",
            )
            data[f"{prefix}_{attr}_ci"] = _var(
                (*sd, dim), table(which, f"{attr}_ci", size), "1",
                f"half-width of the bootstrap interval of the surrogate {long}",
                confidence=a.confidence, method="pce",
            )
        for attr in ("first", "total"):
            data[f"{prefix}_{attr}_converged"] = _var(
                (*sd, dim), np.asarray(table(which, f"{attr}_ci", size) <= a.index_ci_threshold),
                "1", f"surrogate {attr}-order index interval half-width at most the threshold"
                if attr == "first" else "surrogate total index interval half-width at most "
                "the threshold", threshold=a.index_ci_threshold, method="pce")

    def scalar(attr: str, missing):
        return per(np.array([getattr(sc.surrogate, attr) if sc.surrogate else missing
                             for sc in sa]))

    data["pce_q2"] = _var(sd, scalar("q2", np.nan), "1", "leave-one-out coefficient of "
                          "determination of the polynomial-chaos surrogate (1 = perfect)",
                          method="pce")
    data["pce_order"] = _var(sd, scalar("order", 0), "1",
                             "total order of the polynomial-chaos surrogate's truncation",
                             method="pce")
    data["pce_loo_error"] = _var(sd, scalar("loo_error", np.nan), "1",
                                 "relative leave-one-out error of the polynomial-chaos "
                                 "surrogate (1 - Q2)", method="pce",
                                 max_error_for_percentiles=a.pce_max_loo_error)
    data["pce_cross_validation_error"] = _var(
        sd, scalar("cross_validation_error", np.nan), "1",
        "relative cross-validation error of the polynomial-chaos surrogate, its terms selected "
        "anew in each fold (equal to pce_loo_error for a fit in full)", method="pce")
    data["pce_q_norm"] = _var(sd, scalar("q_norm", np.nan), "1",
                              "q-norm of the surrogate's hyperbolic truncation (1 = total "
                              "degree)", method="pce")
    data["pce_terms"] = _var(sd, scalar("terms", 0), "1",
                             "terms of the polynomial-chaos expansion", method="pce")
    data["pce_candidate_terms"] = _var(sd, scalar("candidates", 0), "1",
                                       "terms of the truncation the expansion's terms were "
                                       "selected from (more than pce_terms when selected by "
                                       "least-angle regression)", method="pce")
    data["pce_samples"] = _var(sd, scalar("samples", 0), "1",
                               "converged samples the surrogate was fitted to", method="pce")
    probs = len(sa[0].inner_quantiles.probabilities)
    quant = np.full((len(sa), probs), np.nan)
    for s, sc in enumerate(sa):
        if sc.surrogate_quantiles is not None:
            quant[s] = sc.surrogate_quantiles
    data["pce_quantile"] = _var(
        (*sd, "quantile"), per(quant), "K", "quantile of the inner-surface temperature from "
        "the polynomial-chaos surrogate (NaN where refused; see pce_quantile_status)",
        method="pce", max_loo_error=a.pce_max_loo_error)
    data["pce_quantile_status"] = _var(
        sd, per(np.array([sc.surrogate_quantile_status for sc in sa], dtype=str)), "1",
        "why the surrogate's quantiles were computed or refused", method="pce")


def _nominal_thickness(study, out) -> np.ndarray:
    widths = []
    for kind, index in zip(out.element_kinds, out.element_layers, strict=True):
        layer = study.layers[index]
        if kind == "solid":
            widths.append(float(layer.thickness))
        elif kind == "gap":
            widths.append(float(layer.width))
        else:
            widths.append(0.0)
    return np.array(widths)


def _describe(p) -> str:
    d = p.distribution
    inner = ", ".join(f"{k}={v:.6g}" for k, v in d.params.items())
    return f"{d.kind}({inner})"


_SI_UNITS = {
    "thickness": "m", "width": "m", "height": "m", "conductivity": "W m-1 K-1",
    "conductivity_slope": "W m-1 K-2", "reference_temperature": "K", "contact_resistance":
    "m2 K W-1", "emissivity": "1", "emissivity_hot": "1", "emissivity_cold": "1",
    "heat_flux": "W m-2", "incident_flux": "W m-2", "temperature": "K",
    "gas_temperature": "K", "surroundings_temperature": "K", "ambient_temperature": "K",
    "convection_coefficient": "W m-2 K-1",
}


def _si_unit(p) -> str:
    return _SI_UNITS.get(p.target[-1], "SI")


def _si_of_hot(quantity: str) -> str:
    return _SI_UNITS.get(quantity, "SI")


def write_results(ds: xr.Dataset, path: str | Path) -> Path:
    """Write a results dataset to NetCDF-4 (compressed).

    Parameters
    ----------
    ds
        Results dataset. [-]
    path
        Target file [-].

    Returns
    -------
    pathlib.Path
        The file written.
    """
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    encoding = {
        name: {"zlib": True, "complevel": 1, "shuffle": True}
        for name, v in ds.data_vars.items()
        if v.dtype.kind in "fiub"
    }
    ds.to_netcdf(path, engine="netcdf4", encoding=encoding)
    return path


def read_results(path: str | Path) -> xr.Dataset:
    """Read a results dataset fully into memory (the file is closed afterwards).

    Parameters
    ----------
    path
        A ``results.nc`` written by :func:`write_results` [-].

    Returns
    -------
    xarray.Dataset
    """
    with xr.open_dataset(path, engine="netcdf4") as ds:
        return ds.load()


def scenario_slices(ds: xr.Dataset) -> Iterator[tuple[str, xr.Dataset]]:
    """Yield ``(label, dataset of one exposure)`` for swept and unswept results alike."""
    if "scenario" in ds.dims:
        for i in range(ds.sizes["scenario"]):
            yield str(ds["scenario_label"].values[i]), ds.isel(scenario=i)
    else:
        yield "", ds


STORE_MARK = "plyrisk_store"
"""Root attribute that marks a Zarr group as a plyrisk store (value: layout version) [-]."""

STORE_OWN_ATTRS = (STORE_MARK, "plyrisk_study", "chunk_size", "evaluations", "interface_names",
                   "element_names", "element_kinds", "element_layers", "inner_surface_index")
"""Root attributes of a store itself (:mod:`plyrisk.propagate.store`), kept for the store's
life whatever the analysis adds: the fingerprint above all, so that a finished store can be
resumed [-]."""

PER_SAMPLE_DIMS = ("sample",)
"""Variables along these dimensions are the store's own; the rest is the analysis [-]."""


def write_store_analysis(ds: xr.Dataset, path: str | Path) -> None:
    """Add a results dataset's analysis variables and attributes to its Zarr store.

    Parameters
    ----------
    ds
        The results dataset (its per-sample variables are already in the store). [-]
    path
        The Zarr store folder [-].
    """
    import zarr

    keep = [n for n, v in ds.variables.items() if "sample" not in v.dims]
    part = ds[[n for n in keep if n in ds.data_vars]]
    part = part.assign_coords({n: ds[n] for n in keep if n in ds.coords})
    part = part.drop_vars([n for n in part.coords if "sample" in part[n].dims])
    group = zarr.open_group(str(path), mode="r")
    own = {k: group.attrs[k] for k in STORE_OWN_ATTRS if k in group.attrs}
    # the group's attributes are replaced in one write, the store's own ones kept: a kill at
    # any point leaves the fingerprint in place
    part.attrs = {**{k: (v.tolist() if isinstance(v, np.ndarray) else
                         v.item() if isinstance(v, np.generic) else v)
                     for k, v in ds.attrs.items()}, **own}
    # variable-length strings: fixed-width unicode has no Zarr v3 specification yet
    part = part.assign({n: v.astype(object) for n, v in part.data_vars.items()
                        if v.dtype.kind == "U"})
    part = part.assign_coords({n: part[n].astype(object) for n in part.coords
                               if part[n].dtype.kind == "U"})
    part.to_zarr(str(path), mode="a", consolidated=False, zarr_format=3)
