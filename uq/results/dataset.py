"""The results dataset: an :class:`xarray.Dataset` written to NetCDF (``results.nc``).

Everything is SI inside the dataset; each variable carries ``units`` and ``long_name``. The
attributes carry the config text, seed, design, sample counts and library versions, so that a
result can be traced and re-run. The ``scenario`` dimension is always there: one entry per
swept exposure, or a single entry labelled :data:`NOMINAL_LABEL` for a study without
``[scenarios]``; :func:`is_swept` tells the two apart, :func:`scenario_slices` iterates over
either, and :func:`with_scenario_dim` upgrades a file written before the dimension was always
present.
"""

from __future__ import annotations

import sys
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np
import xarray as xr

from plyrisk.analysis.study import StudyAnalysis
from plyrisk.cautions import cautions_text
from plyrisk.methods import Method, get_method
from plyrisk.propagate.evaluate import Propagation, output_table, parameter_groups

if TYPE_CHECKING:  # pragma: no cover
    from plyrisk.study.definition import Study
from plyrisk.provenance import library_versions

BLOCK_LABELS = {0: "A", 1: "B"}
"""Saltelli design block codes: 0 = A, 1 = B, 2 + j = A with column j from B, then groups."""






def _var(dims, data, units: str, long_name: str, **attrs) -> xr.Variable:
    return xr.Variable(dims, data, attrs={"units": units, "long_name": long_name, **attrs})


PER_PARAMETER_UNITS = ("units differ per parameter: each column is in the SI unit the "
                       "coordinate parameter_si_unit names")
"""The ``comment`` of a variable whose units differ along ``parameter`` (CF allows one
``units`` per variable, so it carries none)."""

MORRIS_UNITS = ("units differ per output: those of the output (see the output_units attribute "
                "or the output's own variable) per grid step")
"""The ``comment`` of a Morris measure, whose units are those of each output."""


def per_parameter_variable(dims, data, long_name: str) -> xr.Variable:
    """A variable in per-parameter SI units: no ``units`` attribute, a ``comment`` instead."""
    return xr.Variable(dims, data, attrs={"long_name": long_name,
                                          "comment": PER_PARAMETER_UNITS})


INTERVAL_TEXT = {
    "order-statistics": "distribution-free order statistics of the pooled samples (binomial)",
    "replicates-woodruff": "Woodruff interval from the spread of the independently scrambled "
                           "replicates (Student t, replicates - 1 degrees of freedom)",
    "replicates": "pooled fraction ± Student t on the spread of the independently scrambled "
                  "replicates (replicates - 1 degrees of freedom)",
    "wilson": "Wilson score interval of the pooled samples (binomial)",
    "clopper-pearson": "Clopper-Pearson interval of the pooled samples (binomial)",
}


def _interval_attrs(methods: list[tuple[str, str]]) -> dict[str, str]:
    """``interval_method`` and ``interval`` attributes from (where, method) pairs: the one
    method, or the main one and where another (a binomial fallback) was used."""
    counts: dict[str, list[str]] = {}
    for where, m in methods:
        counts.setdefault(m, []).append(where)
    main = max(counts, key=lambda m: len(counts[m]))
    text = INTERVAL_TEXT.get(main, main)
    others = [f"{m} at {', '.join(dict.fromkeys(w))}" for m, w in counts.items() if m != main]
    if others:
        text += "; " + "; ".join(others) + (" (binomial fallback: too few pooled values on a "
                                            "side or no spread between the replicates)")
    return {"interval_method": main, "interval": text}


def _quantile_intervals(estimates: list[Any]) -> dict[str, str]:
    return _interval_attrs([(f"quantile {p:g}", m) for q in estimates
                            for p, m in zip(q.probabilities, q.interval_methods, strict=True)])


def to_dataset(study: Study, propagation: Propagation, analysis: StudyAnalysis, *,
               method: Method | None = None) -> xr.Dataset:
    """Assemble the results dataset of a study.

    Parameters
    ----------
    study
        The parsed study (:class:`plyrisk.study.config.Study`). [-]
    propagation
        Design, inputs and outputs. [-]
    analysis
        Percentiles, exceedance, indices and rankings. [-]
    method
        The analysis method, which adds its index variables; default: the study's.

    Returns
    -------
    xarray.Dataset
        For a transient study, :func:`plyrisk.results.transient.transient_dataset`.
    """
    from plyrisk.analysis.transient import is_transient

    if is_transient(study):
        from plyrisk.results.transient import transient_dataset

        return transient_dataset(study, propagation, analysis, method=method)
    frame = _Frame(study, propagation, analysis)
    data = {**_sample_variables(frame), **_statistics_variables(frame)}
    method = method or get_method(study.analysis.method)
    for name, (dims, values, units, long_name, extra) in method.dataset_variables(
            study, analysis, list(analysis.outputs)).items():
        data[name] = _var((*frame.sd, *dims), frame.per(values), units, long_name, **extra)
    return xr.Dataset(data_vars=data, coords=_coordinates(frame), attrs=_attributes(frame))


@dataclass(frozen=True)
class _Frame:
    """What the parts of the dataset are built from."""

    study: Study
    propagation: Propagation
    analysis: StudyAnalysis

    @property
    def swept(self) -> bool:
        return self.study.scenarios is not None

    @property
    def sd(self) -> tuple[str, ...]:
        """The scenario dimension (length 1 for an unswept study)."""
        return ("scenario",)

    def per(self, x: Any) -> np.ndarray:
        """Values with their leading scenario axis."""
        return np.asarray(x)


def _coordinates(frame: _Frame) -> dict[str, xr.Variable]:
    study, propagation, out = frame.study, frame.propagation, frame.propagation.outputs
    params = study.parameters
    n_samples = propagation.inputs.shape[0]
    group_names, _ = parameter_groups(study)
    probs = frame.analysis.probabilities
    outputs = list(frame.analysis.outputs)
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
        "parameter_nominal": per_parameter_variable(("parameter",), np.array(
            [p.distribution.nominal for p in params], dtype=float),
            "nominal value of each parameter"),
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
    sc = study.scenarios
    coords.update(scenario_coordinates(
        sc, None if sc is None else _si_of_hot(sc.quantity), "swept hot-side"))
    return coords


NOMINAL_LABEL = "nominal exposure"
"""``scenario_label`` of the one entry of the ``scenario`` dimension of an unswept study."""


def scenario_coordinates(scenarios: Any, si_unit: str | None,
                         what: str = "swept") -> dict[str, xr.Variable]:
    """The coordinates along ``scenario``.

    A sweep: ``scenario`` (the swept levels in SI) and ``scenario_label`` (as written). No
    sweep: ``scenario_label = ["nominal exposure"]`` only (nothing is swept, so there is no
    value to index by; the exposure is the config's, in ``config_text``).
    """
    if scenarios is None:
        return {"scenario_label": _var(("scenario",), np.array([NOMINAL_LABEL], dtype=str), "1",
                                       "exposure of each scenario: the config's own (no "
                                       "[scenarios] sweep)")}
    return {
        "scenario": _var(("scenario",), np.asarray(scenarios.values, dtype=float), si_unit,
                         f"{what} {scenarios.quantity}"),
        "scenario_label": _var(("scenario",), np.array(scenarios.labels, dtype=str), "1",
                               "swept exposure as given in the config"),
    }


def _sample_variables(frame: _Frame) -> dict[str, xr.Variable]:
    """Inputs and every per-sample model output (the model's output table)."""
    study, propagation, out = frame.study, frame.propagation, frame.propagation.outputs
    sd, per = frame.sd, frame.per
    f = out.fields
    data = {
        "input": per_parameter_variable(("sample", "parameter"), propagation.inputs,
                                "input value of each parameter"),
    }
    for spec in output_table(study):
        values = per(f[spec.name])
        data[spec.name] = _var((*sd, "sample", *spec.dims),
                               values.astype(np.int32) if spec.dtype == "i4" else values,
                               spec.units, spec.long_name)
    return data


def _statistics_variables(frame: _Frame) -> dict[str, xr.Variable]:
    """Quantiles, exceedance, counts and rank correlations, per scenario."""
    a = frame.study.analysis
    sd, per = frame.sd, frame.per
    data: dict[str, xr.Variable] = {}
    sa = frame.analysis.scenarios
    q_est = per([s.inner_quantiles.estimate for s in sa])
    inner_iv = _quantile_intervals([s.inner_quantiles for s in sa])
    face_iv = _quantile_intervals([q for s in sa for q in s.interface_quantiles])
    exc_iv = _interval_attrs([(f"scenario {k}", s.exceedance.method)
                              for k, s in enumerate(sa)])
    notes = sorted({s.exceedance.note for s in sa if s.exceedance.note})
    if notes:
        exc_iv["interval"] += "; " + "; ".join(notes)
    data["inner_surface_temperature_quantile"] = _var(
        (*sd, "quantile"), q_est, "K", "quantile of the inner-surface temperature"
    )
    data["inner_surface_temperature_quantile_lower"] = _var(
        (*sd, "quantile"), per([s.inner_quantiles.lower for s in sa]), "K",
        "lower confidence bound of the quantile", confidence=a.confidence, **inner_iv,
    )
    data["inner_surface_temperature_quantile_upper"] = _var(
        (*sd, "quantile"), per([s.inner_quantiles.upper for s in sa]), "K",
        "upper confidence bound of the quantile", confidence=a.confidence, **inner_iv,
    )
    for part, long in (("estimate", "quantile"), ("lower", "lower confidence bound of the "
                       "quantile"), ("upper", "upper confidence bound of the quantile")):
        suffix = "" if part == "estimate" else f"_{part}"
        data[f"interface_temperature_quantile{suffix}"] = _var(
            (*sd, "interface", "quantile"),
            per([[getattr(q, part) for q in s.interface_quantiles] for s in sa]),
            "K", f"{long} of each face temperature", confidence=a.confidence,
            **({} if part == "estimate" else face_iv),
        )
    lim_spec = limit_output_spec(frame.study)
    if sa[0].limit_quantiles is not None and lim_spec.name != "interface_temperature":
        for part, long in (("estimate", "quantile"), ("lower", "lower confidence bound of the "
                           "quantile"), ("upper", "upper confidence bound of the quantile")):
            suffix = "" if part == "estimate" else f"_{part}"
            data[f"{a.limit_output}_quantile{suffix}"] = _var(
                (*sd, "quantile"), per([getattr(s.limit_quantiles, part) for s in sa]),
                lim_spec.units, f"{long} of the {lim_spec.long_name}",
                **({} if part == "estimate" else {
                    "confidence": a.confidence,
                    **_quantile_intervals([s.limit_quantiles for s in sa])}),
            )
    data["exceedance_probability"] = _var(
        sd, per([s.exceedance.probability for s in sa]), "1",
        f"probability that the {limit_output_text(frame.study)} exceeds the limit",
        limit=a.limit, limit_units=lim_spec.units, output=a.limit_output,
        method=sa[0].exceedance.method,
    )
    data["exceedance_probability_lower"] = _var(
        sd, per([s.exceedance.lower for s in sa]), "1",
        "lower confidence bound of the exceedance probability", confidence=a.confidence,
        **exc_iv,
    )
    data["exceedance_probability_upper"] = _var(
        sd, per([s.exceedance.upper for s in sa]), "1",
        "upper confidence bound of the exceedance probability", confidence=a.confidence,
        **exc_iv,
    )
    data["samples_used"] = _var(sd, per([s.exceedance.n for s in sa]), "1",
                                "converged independent samples behind percentiles and exceedance")
    data["nonconverged_count"] = _var(sd, per([s.nonconverged for s in sa]), "1",
                                      "samples that did not converge (excluded from statistics)")
    data["rank_correlation"] = _var(
        (*sd, "parameter"), per([s.rank_correlation for s in sa]), "1",
        "Spearman rank correlation of each input with the inner-surface temperature",
    )
    return data


def _attributes(frame: _Frame) -> dict[str, Any]:
    """Provenance: config, seed, design, sizes, settings, notes, cautions, versions."""
    study, propagation, analysis = frame.study, frame.propagation, frame.analysis
    a, out = study.analysis, propagation.outputs
    n_samples = propagation.inputs.shape[0]
    attrs = {
        "title": study.title,
        "config_source": str(study.source),
        "config_text": study.text,
        "seed": int(a.seed),
        "method": a.method,
        "design": a.design,
        "base_samples": int(propagation.design.base_samples),
        "replicates": int(getattr(propagation.design, "replicates", 1)),
        "evaluations": int(n_samples),
        "parameters": len(study.parameters),
        "confidence": float(a.confidence),
        "percentiles": np.asarray(a.percentiles, dtype=float),
        "bootstrap": int(a.bootstrap),
        "index_ci_threshold": float(a.index_ci_threshold),
        "pce_max_loo_error": float(a.pce_max_loo_error),
        "limit": float(a.limit),
        "limit_units": limit_output_spec(study).units,
        "limit_display_unit": study.limit_unit,
        "limit_output": a.limit_output,
        "limit_output_long_name": limit_output_text(study),
        "limit_output_display_unit": study.limit_output_unit or study.limit_unit,
        "radiation": study.model.radiation,
        "convection": int(bool(study.model.convection)),
        "inner_surface_index": int(out.inner_surface_index),
        "notes": "\n".join(analysis.notes),
        "cautions": cautions_text(),
        "Conventions": "CF-1.10",
    }
    if frame.swept:
        attrs["scenario_quantity"] = study.scenarios.quantity
        attrs["scenario_display_unit"] = study.scenarios.unit
    attrs.update({f"version_{k}": v for k, v in library_versions().items()})
    return attrs


def limit_output_spec(study: Study):
    """The :class:`~plyrisk.models.outputs.OutputSpec` of a steady study's limit output (the
    ``interface_temperature`` record for a face)."""
    from plyrisk.models.network import NETWORK_OUTPUTS
    from plyrisk.models.outputs import output_spec

    name = study.analysis.limit_output
    if name in ("inner_surface_temperature", "heat_flux"):
        return output_spec(NETWORK_OUTPUTS, name)
    return output_spec(NETWORK_OUTPUTS, "interface_temperature")


def limit_output_text(study: Study) -> str:
    """Plain words for a steady study's limit output, e.g. ``"inner-surface temperature"``,
    ``"heat flux through the assembly"`` or ``"temperature of face 'gap | liner'"``."""
    name = study.analysis.limit_output
    if name in ("inner_surface_temperature", "heat_flux"):
        return limit_output_spec(study).long_name
    return f"temperature of face {name!r}"


def _nominal_thickness(study: Study, out) -> np.ndarray:
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
    encoding: dict[str, dict[str, Any]] = {
        name: {"zlib": True, "complevel": 1, "shuffle": True}
        for name, v in ds.data_vars.items()
        if v.dtype.kind in "fiub"
    }
    for name in ds.coords:  # CF: coordinates hold no missing values, so no _FillValue
        encoding.setdefault(str(name), {})["_FillValue"] = None
    ds = ds.copy()
    ds.attrs = {**ds.attrs, "Conventions": ds.attrs.get("Conventions") or CONVENTIONS,
                "history": ds.attrs.get("history") or history_line(ds)}
    with _without_distributed(ds):
        ds.to_netcdf(path, engine="netcdf4", encoding=encoding)
    return path


CONVENTIONS = "CF-1.10"
"""The CF version the results follow (``Conventions`` global attribute)."""


def history_line(ds: xr.Dataset) -> str:
    """The CF ``history`` attribute: earlier lines, then ``plyrisk <version>: results of
    <config> (method <m>, seed <s>)``.

    No time stamp: the same config and seed give identical datasets (the time a folder's
    result was written is in its ``plyrisk-manifest.json``, ``created``) [-].
    """
    from plyrisk.provenance import package_version

    line = (f"plyrisk {package_version()}: results of "
            f"{ds.attrs.get('config_source', 'a study')} (method {ds.attrs.get('method', '?')},"
            f" seed {ds.attrs.get('seed', '?')})")
    earlier = str(ds.attrs.get("history", "") or "")
    if earlier.endswith(line):
        return earlier
    return f"{earlier}\n{line}" if earlier else line


@contextmanager
def _without_distributed(ds: xr.Dataset) -> Iterator[None]:
    """While an in-memory dataset is written, make ``distributed`` unimportable unless it is
    already loaded. xarray asks dask which scheduler is active (it matters for chunked data
    only), and dask imports ``distributed`` to look for a client: about a second of start-up
    for a run that never uses it. No client can exist when ``distributed`` was never imported.
    """
    chunked = any(v.chunks is not None for v in ds.variables.values())
    if chunked or "distributed" in sys.modules:
        yield
        return
    sys.modules["distributed"] = None  # type: ignore[assignment]  # import raises ImportError
    try:
        yield
    finally:
        if sys.modules.get("distributed", 0) is None:
            del sys.modules["distributed"]


def read_results(path: str | Path) -> xr.Dataset:
    """Read a results dataset fully into memory (the file is closed afterwards).

    Parameters
    ----------
    path
        A ``results.nc`` written by :func:`write_results` [-].

    Returns
    -------
    xarray.Dataset
        With its ``scenario`` dimension: a file of an unswept study written before the
        dimension was always present gets it on load (:func:`with_scenario_dim`).
    """
    with xr.open_dataset(path, engine="netcdf4") as ds:
        return with_scenario_dim(ds.load())


SUBSET_WARNING = 0.01
"""Share of the independent samples lost (not converged) above which every output warns that
the percentiles describe a reduced subset."""


def subset_warning(used: int, independent: int, where: str = "") -> str:
    """The warning of percentiles from a subset that lost more than :data:`SUBSET_WARNING` of
    the samples, or ``""``.

    Parameters
    ----------
    used
        Converged independent samples the percentiles come from.
    independent
        Independent samples drawn.
    where
        The exposure, e.g. ``"at incident_flux = 10 kW/m^2: "``.

    Examples
    --------
    >>> subset_warning(990, 1000)
    ''
    >>> subset_warning(600, 1000)[:60]
    'WARNING: the percentiles and P(exceed) come from 600 of 1000'
    """
    if independent <= 0 or (independent - used) <= SUBSET_WARNING * independent:
        return ""
    lost = independent - used
    return (f"WARNING: {where}the percentiles and P(exceed) come from {used} of {independent} "
            f"samples ({100 * lost / independent:.3g} % did not converge and are left out): "
            "they describe the converged subset only, which is biased when the samples lost "
            "are the hot ones")


def independent_samples(ds: xr.Dataset) -> int:
    """Independent samples of a results dataset: the A and B rows of a Saltelli design, the
    joint draws of a Shapley design (``sample_block`` 0 or 1), every sample otherwise."""
    n = int(ds.attrs.get("evaluations", ds.sizes.get("sample", 0)))
    if "sample_block" in ds and ds.sizes.get("sample", 0) == n:
        return int(np.count_nonzero(np.asarray(ds["sample_block"].values) <= 1))
    if ds.attrs.get("method") == "saltelli":
        return 2 * int(ds.attrs.get("base_samples", 0))
    return n


def subset_warnings(ds: xr.Dataset) -> list[str]:
    """:func:`subset_warning` of every exposure of a results dataset."""
    if "samples_used" not in ds:
        return []
    out = []
    n = independent_samples(ds)
    used = np.atleast_1d(np.asarray(ds["samples_used"].values))  # one per scenario
    for label, k in zip(scenario_labels(ds), used, strict=True):
        where = f"at {ds.attrs.get('scenario_quantity', 'scenario')} = {label}: " if label else ""
        text = subset_warning(int(k), n, where)
        if text:
            out.append(text)
    return out


def is_swept(ds: xr.Dataset) -> bool:
    """Whether a results dataset sweeps an exposure (``[scenarios]``): its ``scenario``
    dimension then lists the levels; otherwise it has the one entry ``"nominal exposure"``.

    Examples
    --------
    >>> import xarray as xr
    >>> is_swept(xr.Dataset(attrs={"scenario_quantity": "incident_flux"}))
    True
    >>> is_swept(xr.Dataset())
    False
    """
    return bool(ds.attrs.get("scenario_quantity"))


def scenario_labels(ds: xr.Dataset) -> list[str]:
    """The label of each scenario as displayed: as written for a sweep, ``""`` for the one
    scenario of an unswept study (where there is nothing to name)."""
    if not is_swept(ds):
        return [""] * ds.sizes.get("scenario", 1)
    if "scenario_label" in ds.variables:
        return [str(v) for v in np.atleast_1d(ds["scenario_label"].values)]
    return [f"{v:g}" for v in np.atleast_1d(ds["scenario"].values)]


def scenario_slices(ds: xr.Dataset) -> Iterator[tuple[str, xr.Dataset]]:
    """Yield ``(label, dataset of one exposure)``: the label as written for a sweep, ``""``
    for the one scenario of an unswept study."""
    ds = with_scenario_dim(ds)
    for i, label in enumerate(scenario_labels(ds)):
        yield label, ds.isel(scenario=i)


def with_scenario_dim(ds: xr.Dataset) -> xr.Dataset:
    """A results dataset with its ``scenario`` dimension: unchanged when it has one; a file
    of an unswept study written before the dimension was always present gets it (length 1,
    ``scenario_label = "nominal exposure"``) on every variable that was per exposure.

    Examples
    --------
    >>> import xarray as xr
    >>> old = xr.Dataset({"samples_used": ((), 10), "input": (("sample",), [1.0])})
    >>> new = with_scenario_dim(old)
    >>> new["samples_used"].dims, new["input"].dims, str(new["scenario_label"].values[0])
    (('scenario',), ('sample',), 'nominal exposure')
    """
    if "scenario" in ds.dims:
        return ds
    out = ds.copy()
    for name in list(out.data_vars):
        if _per_exposure(str(name), out[name]):
            out[name] = out[name].expand_dims("scenario")
    return out.assign_coords(scenario_coordinates(None, None))


_NOT_PER_EXPOSURE = frozenset({
    "input", "criterion_bound", "longest_acceptable_exposure",
    "longest_acceptable_exposure_cautious", "input_rank_correlation", "morris_safe_to_fix",
    "screening_fixed", "screening_reason", "screening_nominal"})
"""Variables of a results dataset that are not per exposure (no ``scenario`` dimension)."""


def _per_exposure(name: str, var: xr.DataArray) -> bool:
    """Whether a variable of an unswept file written before the dimension was always present
    is one that carries the ``scenario`` dimension today."""
    if name in _NOT_PER_EXPOSURE:
        return False
    return "growth_step" not in var.dims or "parameter" in var.dims


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

    from plyrisk.propagate.store import STORE_OWN_ATTRS

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
