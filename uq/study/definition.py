"""The validated study: what :func:`plyrisk.study.config.load_study` returns, all values SI.

:class:`Study` holds the nominal model objects, the uncertain :class:`Parameter` list, the
solver options, the analysis settings and an optional scenario sweep; a transient study (one
with an ``[exposure]`` section) also holds a :class:`TransientSetup`. :func:`assemble` puts
sampled parameter values into the model objects for
:func:`plyrisk.models.network.solve_network` or, for a transient study,
:func:`plyrisk.models.transient.solve_transient`.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from typing import TYPE_CHECKING, Any

import numpy as np
from numpy.typing import ArrayLike

from plyrisk.models.boundary import ColdSide, HotSide
from plyrisk.models.exposure import TransientExposure
from plyrisk.models.mesh import MeshLayout
from plyrisk.models.sensor import CopperDisc
from plyrisk.models.stack import Gap, Solid
from plyrisk.models.wearer import PrescribedWearer, SensorWearer, SkinWearer
from plyrisk.study.distributions import Distribution
from plyrisk.study.units import (
    HEAT_FLUX,
    QUANTITIES,
    TEMPERATURE,
    QuantitySpec,
    format_value,
    from_si,
)

if TYPE_CHECKING:  # pragma: no cover
    from plyrisk.study.correlations import Correlations
    from plyrisk.study.settings import ScreeningSettings, ToleranceSettings

__all__ = ["Analysis", "ComputeOptions", "ModelOptions", "Parameter", "Scenarios", "Study",
           "TransientSetup", "assemble", "exposure_field", "sensor_disc"]

_SPREADS = frozenset({"sd", "tolerance", "upper", "lower"})
_PLAIN = frozenset({"gsd", "cv", "a", "b", "coverage"})  # dimensionless distribution parameters


@dataclass(frozen=True)
class Parameter:
    """One uncertain input of a study.

    Parameters
    ----------
    name
        Stable name, ``"<layer name>.<quantity>"`` or ``"hot_side.<quantity>"``.
    group
        Layer name, ``"hot_side"`` or ``"cold_side"``, for grouped indices.
    target
        ``("layer", index, field)``, ``("hot_side", field)`` or ``("cold_side", field)``; the
        field ``"emissivity"`` of a solid sets both faces (see :attr:`fields`).
    distribution
        The input distribution, in SI units.
    unit
        The user's unit text for display (``"mm"``), ``""`` for dimensionless.
    key_path
        Where it is in the config, e.g. ``"layer[0].thickness"``.
    """

    name: str
    group: str
    target: tuple
    distribution: Distribution
    unit: str
    key_path: str

    @property
    def quantity(self) -> str:
        """The quantity (config key) of the parameter, e.g. ``"thickness"``."""
        return self.target[-1]

    @property
    def fields(self) -> tuple[str, ...]:
        """The model dataclass fields this parameter sets."""
        if self.quantity == "emissivity" and self.target[0] == "layer":
            return ("emissivity_hot", "emissivity_cold")
        return (self.quantity,)

    @property
    def spec(self) -> QuantitySpec:
        """Dimension and physical bounds of the quantity."""
        return QUANTITIES[self.quantity]

    def to_unit(self, values: ArrayLike, *, difference: bool = False) -> np.ndarray:
        """Convert SI values (or differences, e.g. a std) to the user's unit [unit].

        Parameters
        ----------
        values
            Values in SI [SI].
        difference
            The values are differences or spreads: no temperature offset.
        """
        return np.asarray(from_si(values, self.unit, self.spec, difference=difference))

    def format(self, value: float, *, difference: bool = False, digits: int = 4) -> str:
        """An SI value shown in the user's unit, e.g. ``"0.5 mm"``."""
        return format_value(value, self.unit, self.spec, difference=difference, digits=digits)

    def describe(self) -> str:
        """The distribution as the user gave it, in the user's unit.

        E.g. ``"0.5 mm +/- 0.04 mm (normal, band = +/-3 sd)"`` or
        ``"lognormal(median 1 mm, gsd 1.4)"``.
        """
        d = self.distribution
        p = d.params

        def show(key: str) -> str:
            if key in _PLAIN:
                return f"{p[key]:.4g}"
            return self.format(p[key], difference=key in _SPREADS)

        if d.kind == "tolerance":
            band = f"+/-{p.get('coverage', 3.0):g} sd"
            if "tolerance" in p:
                text = f"{show('nominal')} +/- {show('tolerance')}"
            else:
                text = f"{show('nominal')} +{show('upper')} / -{show('lower')}"
            return f"{text} (normal, band = {band})"
        return f"{d.kind}(" + ", ".join(f"{k} {show(k)}" for k in p) + ")"

    def truncation(self) -> str:
        """Where the physical bounds cut the distribution and how much mass is cut.

        E.g. ``"truncated at 0 mm: 0.13 % of the mass cut"``; ``"none"`` when nothing is cut.
        """
        d = self.distribution
        if d.truncated_mass == 0.0:
            return "none"
        lo, hi = -math.inf, math.inf  # support before the physical bounds
        if d.kind == "truncnormal":
            lo, hi = d.params.get("low", -math.inf), d.params.get("high", math.inf)
        elif d.kind == "lognormal":
            lo = 0.0
        cuts = [b for b, active in ((d.bounds.lower, d.bounds.lower > lo),
                                    (d.bounds.upper, d.bounds.upper < hi)) if active]
        where = " and ".join(self.format(b) for b in cuts)
        mass = 100.0 * d.truncated_mass
        amount = "< 0.0001 %" if mass < 1e-4 else f"{mass:.2g} %"
        return f"truncated at {where}: {amount} of the mass cut"


@dataclass(frozen=True)
class Scenarios:
    """A sweep of one hot-side quantity.

    Parameters
    ----------
    quantity
        Hot-side field swept, e.g. ``"incident_flux"``.
    values
        The levels in SI, shape ``(k,)`` [SI].
    labels
        The levels as the user wrote them.
    unit
        The user's unit text of the first level.
    """

    quantity: str
    values: np.ndarray
    labels: tuple[str, ...]
    unit: str


@dataclass(frozen=True)
class ModelOptions:
    """Options of the network solve (see :func:`plyrisk.models.network.solve_network`).

    Parameters
    ----------
    radiation
        ``"exact"`` or ``"linearized"`` gap radiation.
    convection
        Natural convection in gaps on or off.
    tolerance
        Newton convergence tolerance on the face temperatures [K].
    max_iterations
        Newton iterations before a sample is declared not converged.
    """

    radiation: str = "exact"
    convection: bool = False
    tolerance: float = 1e-6
    max_iterations: int = 100

    def solver_kwargs(self) -> dict[str, Any]:
        """Keyword arguments for :func:`plyrisk.models.network.solve_network`."""
        return {
            "radiation": self.radiation,
            "convection_enabled": self.convection,
            "tolerance": self.tolerance,
            "max_iterations": self.max_iterations,
        }


@dataclass(frozen=True)
class Analysis:
    """What to compute.

    Parameters
    ----------
    method
        Analysis method: ``"saltelli"`` (Sobol indices from a Saltelli design), ``"pce"``
        (polynomial-chaos surrogate) or ``"morris"`` (elementary-effects screening).
    samples
        Saltelli: base rows ``N``; pce: number of samples; morris: number of trajectories.
    seed
        Seed of every random draw.
    limit
        Limit of the per-sample output ``limit_output`` (SI: [K] for a temperature, [W m-2]
        for the heat flux).
    percentiles
        Percentiles to report, as fractions in (0, 1).
    confidence
        Level of the confidence intervals.
    bootstrap
        Bootstrap resamples for the index intervals.
    index_ci_threshold
        Interval half-width above which an index is flagged unconverged.
    chunk_size
        Samples per evaluation chunk.
    lhs_optimization
        ``None``, ``"random-cd"`` or ``"lloyd"`` (pce with the lhs design only).
    outputs
        Outputs analysed besides the inner-surface temperature: ``"heat_flux"`` and/or
        interface names.
    design
        Design type: ``"sobol"`` (saltelli; for pce a plain scrambled Sobol' sequence),
        ``"lhs"``, ``"random"`` (pce) or ``"morris"`` (morris).
    levels
        Grid levels of the Morris trajectories (morris only).
    screening_threshold
        Share of the largest mu* below which (mu* and sigma both) an input is marked safe to fix
        at nominal (morris).
    pce_max_loo_error
        Largest relative leave-one-out error of the surrogate for which percentiles are taken
        from it (pce).
    replicates
        Independently scrambled replicates R of the Saltelli design (saltelli); ``samples`` is
        R times a power of 2, and every interval comes from the spread of the replicates.
    permutations
        Random permutations of the Shapley estimator (shapley); 0 = as many as ``samples``.
    limit_output
        The per-sample output the limit applies to: ``"inner_surface_temperature"``
        (default), ``"heat_flux"`` (the heat flux through the assembly, in steady state also
        the net flux the cold surface absorbs) or a face name (its temperature).
    criterion
        The study's criterion in the target grammar (:mod:`plyrisk.study.targets`), e.g.
        ``"P95 <= limit"``; ``""`` for the default
        (:func:`plyrisk.study.targets.default_criterion`).
    """

    method: str
    samples: int
    seed: int
    limit: float
    percentiles: tuple[float, ...] = (0.05, 0.50, 0.95)
    confidence: float = 0.90
    bootstrap: int = 200
    index_ci_threshold: float = 0.05
    chunk_size: int = 65536
    lhs_optimization: str | None = None
    outputs: tuple[str, ...] = ()
    design: str = "sobol"
    levels: int = 4
    screening_threshold: float = 0.1
    pce_max_loo_error: float = 1e-3
    replicates: int = 8
    permutations: int = 0
    limit_output: str = "inner_surface_temperature"
    criterion: str = ""


@dataclass(frozen=True)
class ComputeOptions:
    """Where a study's chunks are solved and kept (the ``[compute]`` section).

    Parameters
    ----------
    workers
        Worker processes of a local dask cluster; 1 solves in this process.
    scheduler
        Address of an existing dask scheduler, e.g. ``"tcp://10.0.0.5:8786"``.
    store
        Zarr store folder the per-sample results stream to (out of core).
    """

    workers: int = 1
    scheduler: str | None = None
    store: str | None = None


EXPOSURE_FIELDS = {"duration": "exposure_duration"}
"""``[exposure]`` keys whose :class:`~plyrisk.models.exposure.TransientExposure` field is named
differently (every other key is the field's name)."""


def exposure_field(key: str) -> str:
    """The :class:`~plyrisk.models.exposure.TransientExposure` field of an ``[exposure]`` key."""
    return EXPOSURE_FIELDS.get(key, key)


def sensor_disc(inputs: Mapping[str, Any]) -> CopperDisc:
    """The copper disc of a ``[wearer] kind = "sensor"`` section.

    Parameters
    ----------
    inputs
        ``diameter`` [m], ``thickness`` [m], ``mass`` [kg] (``None``: copper of that diameter
        and thickness), ``specific_heat`` [J kg-1 K-1], ``emissivity`` [-],
        ``initial_temperature`` [K] (or ``None``); each a scalar or one value per sample.

    Returns
    -------
    CopperDisc
        With the mass per exposed area of the disc [kg m-2].
    """
    from plyrisk.models.sensor import COPPER_DENSITY

    area = np.pi * np.asarray(inputs["diameter"], dtype=float) ** 2 / 4.0
    mass = inputs.get("mass")
    if mass is None:
        per_area = COPPER_DENSITY * np.asarray(inputs["thickness"], dtype=float)
    else:
        per_area = np.asarray(mass, dtype=float) / area
    return CopperDisc(per_area, inputs["specific_heat"], inputs["emissivity"],
                      inputs.get("initial_temperature"))


@dataclass(frozen=True)
class TransientSetup:
    """What makes a study transient (the ``[exposure]`` and ``[wearer]`` sections), SI units.

    Parameters
    ----------
    exposure
        The nominal exposure, cool-down and horizon (uncertain values at their nominal) [-].
    wearer
        The nominal wearer side: a :class:`~plyrisk.models.wearer.SkinWearer`,
        :class:`~plyrisk.models.wearer.SensorWearer` or
        :class:`~plyrisk.models.wearer.PrescribedWearer` [-].
    damage_model
        Damage parameter set at the basal depth (skin) [-].
    third_degree
        Third-degree rule, ``"basal"`` or ``"dermis_base"`` (skin) [-].
    output_times
        The history grid, from 0 to the horizon [s].
    acceptable_burn_probability
        Target for P(second-degree burn) within the horizon (sensor: P(criterion reached)) [-].
    layout
        The one grid layout every chunk of the study is solved on (from the nominal study), so
        results do not depend on how samples are chunked; ``None`` only while the config is
        being read [-].
    skin_properties
        Name of the skin property set (skin wearer), else ``None`` [-].
    sensor_inputs
        The sensor's ``diameter``, ``thickness``, ``mass``, ``specific_heat``, ``emissivity``,
        ``initial_temperature`` (sensor wearer; see :func:`sensor_disc`), else empty [SI].
    units
        The unit text the user wrote for each ``[exposure]`` key, for display [-].
    """

    exposure: TransientExposure
    wearer: SkinWearer | SensorWearer | PrescribedWearer
    damage_model: str
    third_degree: str
    output_times: np.ndarray
    acceptable_burn_probability: float
    layout: MeshLayout | None
    skin_properties: str | None = None
    sensor_inputs: Mapping[str, Any] = field(default_factory=dict)
    units: Mapping[str, str] = field(default_factory=dict)

    @property
    def wearer_kind(self) -> str:
        """``"skin"``, ``"sensor"`` or ``"prescribed"`` [-]."""
        return self.wearer.kind

    @property
    def horizon(self) -> float:
        """End of the simulated time, from the start of the exposure [s]."""
        return float(self.exposure.horizon)

    def solver_kwargs(self) -> dict[str, Any]:
        """Keyword arguments for :func:`plyrisk.models.transient.solve_transient` [-]."""
        return {"output_times": self.output_times, "damage_model": self.damage_model,
                "third_degree": self.third_degree, "layout": self.layout}


@dataclass(frozen=True)
class Study:
    """A validated study, all values SI.

    ``layers``, ``hot_side`` and ``cold_side`` are the nominal model objects: every uncertain
    value is replaced by its distribution's nominal. A transient study has ``transient`` (its
    :class:`TransientSetup`) and no ``hot_side`` or ``cold_side`` (``None``). ``parameters``
    lists the uncertain inputs, hot side first, then the layers hot → cold, then the cold side
    (transient: the exposure, the layers, the wearer). ``tolerances`` holds the
    ``[tolerances]`` settings (:class:`plyrisk.study.settings.ToleranceSettings`) and ``screening``
    the ``[screening]`` settings (:class:`plyrisk.study.settings.ScreeningSettings`), ``None``
    when the
    section is absent. ``correlations`` holds the ``[correlations]`` section
    (:class:`plyrisk.study.correlations.Correlations`), ``None`` for independent inputs.
    ``max_temperatures`` holds each layer's rated maximum temperature
    (``max_temperature`` of a solid layer) [K], ``None`` where the layer has none.
    ``report_formats`` lists the figure file formats of the report (``[report] formats``; PNG
    first, always).
    """

    source: str
    text: str
    title: str
    layers: tuple[Solid | Gap, ...]
    hot_side: HotSide | None
    cold_side: ColdSide | None
    parameters: tuple[Parameter, ...]
    model: ModelOptions
    analysis: Analysis
    limit_unit: str
    scenarios: Scenarios | None = None
    tolerances: ToleranceSettings | None = None
    compute: ComputeOptions = ComputeOptions()
    screening: ScreeningSettings | None = None
    max_temperatures: tuple[float | None, ...] = ()
    transient: TransientSetup | None = None
    correlations: Correlations | None = None
    report_formats: tuple[str, ...] = ("png",)
    limit_output_unit: str = ""

    def steady_sides(self) -> tuple[HotSide, ColdSide]:
        """The hot and cold sides of a steady study (a transient study has none) [-]."""
        if self.hot_side is None or self.cold_side is None:
            raise ValueError("a transient study has no hot or cold side; see study.transient")
        return self.hot_side, self.cold_side

    @property
    def is_transient(self) -> bool:
        """True for a transient study (time to burn), False for the steady network [-]."""
        return self.transient is not None

    @property
    def parameter_names(self) -> tuple[str, ...]:
        """Names of the uncertain parameters, in order."""
        return tuple(p.name for p in self.parameters)

    @property
    def groups(self) -> tuple[str, ...]:
        """Distinct parameter groups in order of first appearance."""
        return tuple(dict.fromkeys(p.group for p in self.parameters))

    def format_temperature(self, value: float, *, difference: bool = False) -> str:
        """A temperature [K] (or difference) shown in the limit's unit."""
        return format_value(value, self.limit_unit, TEMPERATURE, difference=difference)

    @property
    def limit_output_text(self) -> str:
        """Plain words for the limit output, e.g. ``"inner-surface temperature"``, ``"heat flux
        through the assembly"`` or ``"temperature of face 'gap | liner'"``."""
        from plyrisk.models.network import NETWORK_OUTPUTS
        from plyrisk.models.outputs import output_spec

        name = self.analysis.limit_output
        if name in ("inner_surface_temperature", "heat_flux"):
            return output_spec(NETWORK_OUTPUTS, name).long_name
        return f"temperature of face {name!r}"

    def format_limit_value(self, value: float) -> str:
        """A value of the limit's output (SI) shown in the unit the limit was given in."""
        if self.analysis.limit_output == "heat_flux":
            return format_value(value, self.limit_output_unit or "W/m^2", HEAT_FLUX)
        return self.format_temperature(value)


def assemble(
    study: Study,
    values: Mapping[str, ArrayLike],
    *,
    scenario: int | None = None,
) -> tuple[list[Solid | Gap], Any, Any]:
    """Model objects with sampled values in place of the nominal ones.

    Parameters
    ----------
    study
        The study.
    values
        Parameter name → SI samples, each shape ``(n,)``; parameters left out keep their
        nominal value [SI].
    scenario
        Index into ``study.scenarios.values`` to apply, or ``None`` for the base hot side.

    Returns
    -------
    layers, hot_side, cold_side
        Ready for :func:`plyrisk.models.network.solve_network`; for a transient study
        ``layers, exposure, wearer``, ready for
        :func:`plyrisk.models.transient.solve_transient`.
    """
    by_name = {p.name: p for p in study.parameters}
    unknown = sorted(set(values) - set(by_name))
    if unknown:
        raise ValueError(f"unknown parameter(s) {unknown}; valid: {', '.join(by_name)}")
    if study.transient is not None:
        return _assemble_transient(study, values, by_name, scenario)
    layers = list(study.layers)
    sides: dict[str, dict[str, Any]] = {"hot_side": {}, "cold_side": {}}
    per_layer: dict[int, dict[str, Any]] = {}
    for name, v in values.items():
        p = by_name[name]
        arr = np.asarray(v, dtype=float)
        dest = per_layer.setdefault(p.target[1], {}) if p.target[0] == "layer" else sides[
            p.target[0]
        ]
        for f in p.fields:
            dest[f] = arr
    if scenario is not None:
        if study.scenarios is None:
            raise ValueError("the study has no scenarios")
        sides["hot_side"][study.scenarios.quantity] = float(study.scenarios.values[scenario])
    for i, changes in per_layer.items():
        layers[i] = replace(layers[i], **changes)
    hot_side, cold_side = study.steady_sides()
    hot = replace(hot_side, **sides["hot_side"])
    cold = replace(cold_side, **sides["cold_side"])
    return layers, hot, cold


def _assemble_transient(study: Study, values: Mapping[str, ArrayLike], by_name: dict,
                        scenario: int | None) -> tuple[list[Solid | Gap], Any, Any]:
    """Layers, exposure and wearer of a transient study with sampled values in place."""
    setup = study.transient
    assert setup is not None, "called for a transient study"
    layers = list(study.layers)
    per_layer: dict[int, dict] = {}
    exposure: dict[str, Any] = {}
    wearer: dict[str, Any] = {}
    skin_layers: dict[str, dict] = {}
    for name, v in values.items():
        p = by_name[name]
        arr = np.asarray(v, dtype=float)
        where = p.target[0]
        if where == "layer":
            for f in p.fields:
                per_layer.setdefault(p.target[1], {})[f] = arr
        elif where == "exposure":
            exposure[exposure_field(p.quantity)] = arr
        elif len(p.target) == 3:
            skin_layers.setdefault(p.target[1], {})[p.quantity] = arr
        else:
            wearer[p.quantity] = arr
    if scenario is not None:
        if study.scenarios is None:
            raise ValueError("the study has no scenarios")
        exposure[exposure_field(study.scenarios.quantity)] = float(
            study.scenarios.values[scenario])
    for i, changes in per_layer.items():
        layers[i] = replace(layers[i], **changes)
    return layers, replace(setup.exposure, **exposure), _wearer(setup, wearer, skin_layers)


def _wearer(setup: TransientSetup, values: dict[str, Any], skin_layers: dict[str, dict]
            ) -> SkinWearer | SensorWearer | PrescribedWearer:
    """The nominal wearer of ``setup`` with sampled values in place."""
    w = setup.wearer
    if isinstance(w, SkinWearer):
        skin = w.skin
        changes = {name: replace(getattr(skin, name), **c) for name, c in skin_layers.items()}
        if "core_temperature" in values:
            t = values.pop("core_temperature")
            changes.update(core_temperature=t, arterial_temperature=t)
        if "emissivity" in values:
            changes["emissivity"] = values.pop("emissivity")
        return replace(w, skin=replace(skin, **changes) if changes else skin, **values)
    if isinstance(w, SensorWearer):
        sensor = {k: values.pop(k) for k in list(values) if k in setup.sensor_inputs}
        if sensor:
            w = replace(w, sensor=sensor_disc({**setup.sensor_inputs, **sensor}))
        return replace(w, **values)
    return replace(w, **values)
