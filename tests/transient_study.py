"""Transient studies for the analysis, dataset, report and tolerance tests, built directly.

A stand-in for a parsed transient study (the fields the analysis reads: ``analysis``,
``parameters``, ``scenarios``, ``transient`` with the exposure, wearer, damage model and
acceptable probability) and its propagation from
:func:`plyrisk.models.transient.solve_transient`, with the outputs in the propagation's layout
(``fields[name]`` of shape ``(n_scenarios, n_samples, ...)``, ``time``, ``interface_names``).
The assemblies are invented inputs, never check values. Propagations are cached per process:
several test modules share them.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass, field, replace

import numpy as np

from plyrisk.models.exposure import TransientExposure
from plyrisk.models.sensor import copper_disc
from plyrisk.models.skin import skin_properties
from plyrisk.models.stack import Gap, Solid
from plyrisk.models.transient import solve_transient
from plyrisk.models.wearer import SensorWearer, SkinWearer
from plyrisk.propagate.evaluate import Propagation, scenario_count, study_design, unit_to_inputs
from plyrisk.study.definition import Analysis, ComputeOptions, Parameter, Scenarios
from plyrisk.study.distributions import Bounds, make_distribution

SOLVER = {"temperature_tolerance": 0.05}
"""Looser step control than the default, for speed (the tests check the statistics)."""


@dataclass(frozen=True)
class StandInTransient:
    """What a transient study's ``transient`` setup carries for the analysis."""

    exposure: TransientExposure
    wearer: object
    damage_model: str = "weaver_stoll_1969"
    acceptable_burn_probability: float = 0.05
    output_times: tuple[float, ...] = ()

    @property
    def wearer_kind(self) -> str:
        return self.wearer.kind


@dataclass(frozen=True)
class StandInStudy:
    """The fields of a parsed transient study that the analysis, dataset and report read."""

    title: str
    layers: tuple
    parameters: tuple[Parameter, ...]
    analysis: Analysis
    transient: StandInTransient
    scenarios: Scenarios | None = None
    source: str = "<test>"
    text: str = ""
    limit_unit: str = "degC"
    tolerances: object = None
    screening: object = None
    correlations: object = None
    compute: ComputeOptions = field(default_factory=ComputeOptions)

    @property
    def parameter_names(self) -> tuple[str, ...]:
        return tuple(p.name for p in self.parameters)

    @property
    def groups(self) -> tuple[str, ...]:
        return tuple(dict.fromkeys(p.group for p in self.parameters))


@dataclass(frozen=True)
class StandInOutputs:
    """Transient outputs in the propagation's layout."""

    fields: dict
    time: np.ndarray
    interface_names: tuple[str, ...]
    horizon: float

    def __getitem__(self, name: str) -> np.ndarray:
        return self.fields[name]

    @property
    def nonconverged(self) -> np.ndarray:
        return np.sum(~self.fields["converged"], axis=1)


def uniform(name: str, group: str, target: tuple, low: float, high: float,
            unit: str = "") -> Parameter:
    """An uncertain input, uniform on [low, high] (SI)."""
    dist = make_distribution("uniform", {"low": low, "high": high},
                             bounds=Bounds(0.0, np.inf))
    return Parameter(name, group, target, dist, unit, name)


def evaluate(study: StandInStudy, values: np.ndarray, scenario: int | None = None):
    """Solve the transient model for input rows ``values`` (SI), one exposure."""
    layers = list(study.layers)
    exposure = study.transient.exposure
    per_layer: dict[int, dict] = {}
    exp_changes: dict = {}
    for j, p in enumerate(study.parameters):
        if p.target[0] == "layer":
            per_layer.setdefault(p.target[1], {})[p.target[2]] = values[:, j]
        else:
            exp_changes[p.target[1]] = values[:, j]
    if scenario is not None and study.scenarios is not None:
        exp_changes[study.scenarios.quantity] = float(study.scenarios.values[scenario])
    for i, ch in per_layer.items():
        layers[i] = replace(layers[i], **ch)
    exposure = replace(exposure, **exp_changes)
    return solve_transient(layers, exposure, study.transient.wearer,
                           output_times=study.transient.output_times,
                           damage_model=study.transient.damage_model, **SOLVER)


def propagate(study: StandInStudy) -> Propagation:
    """Design, inputs and the transient outputs of every exposure."""
    design = study_design(study)
    inputs = unit_to_inputs(study.parameters, design.unit)
    sols = [evaluate(study, inputs, s if study.scenarios is not None else None)
            for s in range(scenario_count(study))]
    from plyrisk.models.transient_outputs import TRANSIENT_OUTPUTS

    fields_ = {o.name: np.stack([getattr(sol, o.name) for sol in sols]) for o in
               TRANSIENT_OUTPUTS}
    out = StandInOutputs(fields_, sols[0].time, tuple(sols[0].face_names),
                         float(study.transient.exposure.horizon))
    return Propagation(design, inputs, out)


def analysis(method: str = "saltelli", samples: int = 32, *, design: str | None = None,
             **kw) -> Analysis:
    """Analysis settings of a transient test study."""
    return Analysis(method=method, samples=samples, seed=kw.pop("seed", 7), limit=317.15,
                    design=design or {"saltelli": "sobol", "pce": "lhs", "morris": "morris",
                                      "shapley": "lhs"}[method], **kw)


def fabric_on_skin(method: str = "saltelli", samples: int = 32, *, scenarios=None,
                   extra_group: bool = True, **kw) -> StandInStudy:
    """An invented fabric over an air gap on skin, under a radiant exposure with cool-down.

    Uncertain: the fabric's thickness and density (one layer group) and, with
    ``extra_group``, the gap width.
    """
    fabric = Solid("fabric", thickness=0.8e-3, conductivity=0.05, density=300.0,
                   specific_heat=1300.0, emissivity_hot=0.9, emissivity_cold=0.9)
    gap = Gap("gap", width=2e-3)
    params = [uniform("fabric.thickness", "fabric", ("layer", 0, "thickness"), 0.5e-3, 1.2e-3,
                      "mm"),
              uniform("fabric.density", "fabric", ("layer", 0, "density"), 200.0, 450.0,
                      "kg/m^3")]
    if extra_group:
        params.append(uniform("gap.width", "gap", ("layer", 1, "width"), 1e-3, 4e-3, "mm"))
    exposure = TransientExposure(incident_flux=40e3, gas_temperature=297.15,
                                 convection_coefficient=0.0, exposure_duration=6.0,
                                 horizon=30.0)
    setup = StandInTransient(exposure, SkinWearer(skin_properties("jiang_2002")),
                             output_times=tuple(np.linspace(0.0, 30.0, 31)))
    return StandInStudy("invented fabric on skin (test)", (fabric, gap), tuple(params),
                        analysis(method, samples, **kw), setup, scenarios)


def correlated(study: StandInStudy, pairs: dict[tuple[str, str], float]) -> StandInStudy:
    """The same study with Spearman rank correlations between pairs of its inputs (a Gaussian
    copula, as ``[correlations]`` builds it)."""
    from plyrisk.study.correlations import Correlations, linear_from_rank

    names = tuple(n for n in study.parameter_names
                  if any(n in pair for pair in pairs))
    rank = np.eye(len(names))
    for (a, b), rho in pairs.items():
        i, j = names.index(a), names.index(b)
        rank[i, j] = rank[j, i] = rho
    return replace(study, correlations=Correlations(names, rank, linear_from_rank(rank)))


def duration_sweep(study: StandInStudy, levels=(3.0, 5.0, 7.0, 9.0)) -> StandInStudy:
    """The same study with the exposure duration swept."""
    sc = Scenarios("exposure_duration", np.asarray(levels, float),
                   tuple(f"{v:g} s" for v in levels), "s")
    return replace(study, scenarios=sc)


def fabric_on_sensor(samples: int = 64) -> StandInStudy:
    """An invented fabric on a copper-disc sensor (bench-test style), PCE on a Latin hypercube."""
    fabric = Solid("fabric", thickness=0.8e-3, conductivity=0.05, density=300.0,
                   specific_heat=1300.0, emissivity_hot=0.9, emissivity_cold=0.9)
    params = [uniform("fabric.thickness", "fabric", ("layer", 0, "thickness"), 0.5e-3, 1.2e-3,
                      "mm")]
    exposure = TransientExposure(incident_flux=80e3, gas_temperature=297.15,
                                 convection_coefficient=0.0, exposure_duration=10.0,
                                 horizon=20.0)
    setup = StandInTransient(exposure, SensorWearer(copper_disc(initial_temperature=305.15)),
                             output_times=tuple(np.linspace(0.0, 20.0, 21)))
    return StandInStudy("invented fabric on a sensor (test)", (fabric, Gap("gap", width=3e-3)),
                        tuple(params), analysis("pce", samples), setup)


@functools.cache
def skin_saltelli() -> tuple[StandInStudy, Propagation]:
    """Saltelli, N = 32, three inputs in two layer groups (192 runs)."""
    study = fabric_on_skin("saltelli", 32)
    return study, propagate(study)


@functools.cache
def skin_sweep() -> tuple[StandInStudy, Propagation]:
    """PCE on 48 Latin-hypercube samples at four exposure durations."""
    study = duration_sweep(fabric_on_skin("pce", 48))
    return study, propagate(study)


@functools.cache
def sensor_pce() -> tuple[StandInStudy, Propagation]:
    """PCE on 48 Latin-hypercube samples, sensor."""
    study = fabric_on_sensor(48)
    return study, propagate(study)


@functools.cache
def skin_shapley() -> tuple[StandInStudy, Propagation]:
    """Shapley effects, 128 joint draws and 64 permutations, three independent inputs in two
    layer groups (1408 runs)."""
    study = fabric_on_skin("shapley", 128, permutations=64)
    return study, propagate(study)


@functools.cache
def dataset_of(which):
    """The results dataset of one of the cached studies above (analysed once per process).

    Tests must not change it in place (``ds.copy(deep=True)`` first).
    """
    from plyrisk.methods import get_method

    study, prop = which()
    method = get_method(study.analysis.method)
    return method.dataset(study, prop, method.analyse(study, prop))
