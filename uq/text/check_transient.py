"""The text of ``plyrisk check`` for a transient study: the nominal history in a few lines.

Pure formatting of a nominal solve of the transient model (every uncertain input at its
nominal value, on the study's grid layout); printing is left to :mod:`plyrisk.cli`. Imports
no dask, xarray, SALib or matplotlib (``benchmarks/startup.py``).
"""

from __future__ import annotations

import warnings

import numpy as np

from plyrisk.cautions import cautions_text
from plyrisk.errors import ConfigError
from plyrisk.methods import get_method
from plyrisk.models.stack import Solid, StackError
from plyrisk.models.transient import solve_transient
from plyrisk.models.transient_outputs import TransientSolution
from plyrisk.models.wearer import SensorWearer, SkinWearer
from plyrisk.study.config import require_runnable, stack_key_path
from plyrisk.study.definition import Scenarios, Study, TransientSetup, assemble
from plyrisk.study.units import format_value
from plyrisk.text.tables import text_table

_BURNS = (("first", "time_to_first_degree_burn"), ("second", "time_to_second_degree_burn"),
          ("third", "time_to_third_degree_burn"))


def transient_check_text(study: Study, parameter_lines: list[str]) -> tuple[str, bool]:
    """The report of ``plyrisk check`` for a transient study.

    Parameters
    ----------
    study
        The parsed transient study [-].
    parameter_lines
        The table of uncertain parameters, as the steady check prints it [-].

    Returns
    -------
    text, converged
        The text to print, and whether the nominal solve (and every scenario) converged [-].

    Raises
    ------
    plyrisk.errors.ConfigError
        When the nominal model is invalid (naming the key path).
    """
    notes: list[str] = []
    solution = _solve(study, None, notes)
    out = [f"Study: {study.title}", f"Config: {study.source}", ""]
    out += _setup_lines(study)
    out += [""] + parameter_lines
    out += [""] + _layer_lines(study)
    out += [""] + _history_lines(study, solution)
    converged = bool(np.all(solution.converged))
    if study.scenarios is not None:
        swept = _solve(study, _scenarios(study).values, notes)
        out += [""] + _scenario_lines(study, swept)
        converged &= bool(np.all(swept.converged))
    if notes:
        out += ["", "Notes"] + [f"  - {n}" for n in dict.fromkeys(notes)]
    out += ["", cautions_text(transient=True)]
    return "\n".join(out), converged


def _setup(study: Study) -> TransientSetup:
    assert study.transient is not None, "called for a transient study"
    return study.transient


def _scenarios(study: Study) -> Scenarios:
    assert study.scenarios is not None, "called for a study with [scenarios]"
    return study.scenarios


def _solve(study: Study, levels: np.ndarray | None, notes: list[str]) -> TransientSolution:
    """The nominal solve, or one nominal sample per scenario level."""
    from dataclasses import replace

    from plyrisk.study.definition import exposure_field

    setup = _setup(study)
    layers, exposure, wearer = assemble(study, {})
    if levels is not None:
        field = exposure_field(_scenarios(study).quantity)
        exposure = replace(exposure, **{field: np.asarray(levels, dtype=float)})
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        try:
            solution = solve_transient(layers, exposure, wearer,
                                       radiation=study.model.radiation,
                                       convection_enabled=study.model.convection,
                                       **setup.solver_kwargs())
        except StackError as err:
            raise ConfigError(study.source, stack_key_path(err), str(err)) from None
    notes.extend(" ".join(str(w.message).split()) for w in caught)
    return solution


def _slices(setup: TransientSetup) -> int:
    return 0 if setup.layout is None else sum(setup.layout.cells().values())


def _mean(value: object) -> float:
    """A scalar of a nominal model value (a scalar, or the mean of one per sample) [SI]."""
    return float(np.mean(np.asarray(value, dtype=float)))


def _t(study: Study, kelvin: float) -> str:
    if not np.isfinite(kelvin):
        return "n/a"
    return study.format_temperature(kelvin)


def _s(seconds: float) -> str:
    return f"{seconds:.3g} s" if np.isfinite(seconds) else "n/a"


def _energy(value: float) -> str:
    return f"{value / 1e3:.4g} kJ/m^2" if np.isfinite(value) else "n/a"


def _quantity(study: Study, key: str, value: object) -> str:
    from plyrisk.models.exposure import Table
    from plyrisk.study.units import QUANTITIES

    unit = _setup(study).units.get(key, "")
    spec = QUANTITIES[key]
    if isinstance(value, Table):
        t = np.asarray(value.times, dtype=float)
        v = np.asarray(value.values, dtype=float)
        shown = ", ".join(f"{ti:g} s: {format_value(float(vi), unit, spec)}" for ti, vi in
                          zip(t, v, strict=True))
        return f"table ({shown})"
    uncertain = any(p.target == ("exposure", key) for p in study.parameters)
    return format_value(_mean(value), unit, spec) + (" (nominal; uncertain)" if uncertain else "")


def _setup_lines(study: Study) -> list[str]:
    a, setup = study.analysis, _setup(study)
    e, w = setup.exposure, setup.wearer
    method = get_method(a.method).describe(study)
    target = ("P(criterion reached)" if w.kind == "sensor" else "P(second-degree burn)")
    t = setup.output_times
    lines = [
        f"Analysis: {method}; seed {a.seed}",
        (f"  verdict criterion: {a.criterion}; also reported: {target} within the horizon "
         f"(acceptable: at most {100 * setup.acceptable_burn_probability:g} %)"
         if a.criterion else
         f"  target: {target} within the horizon at most "
         f"{100 * setup.acceptable_burn_probability:g} %"),
        "  percentiles: " + ", ".join(f"{100 * q:g}" for q in a.percentiles)
        + f"; confidence {100 * a.confidence:g} %",
        f"Model: transient; gap radiation {study.model.radiation}; natural convection in gaps "
        f"{'on' if study.model.convection else 'off'}; histories every "
        f"{t[1] - t[0]:.3g} s to the horizon ({t.size} times); grid of "
        f"{_slices(setup)} slices",
    ]
    if a.outputs:
        lines.insert(3, "  extra outputs: " + ", ".join(a.outputs))
    try:
        require_runnable(study)
    except ConfigError as err:
        lines.append(f"  NOTE: this study cannot be run yet: {err.key_path}: {err.message}")
    parts = [f"mode {e.mode}",
             "incident flux " + _quantity(study, "incident_flux", e.incident_flux)]
    if e.mode == "environment":
        parts += ["gas " + _quantity(study, "gas_temperature", e.gas_temperature),
                  "convection " + _quantity(study, "convection_coefficient",
                                            e.convection_coefficient)]
    lines.append("Exposure: " + "; ".join(parts))
    lines.append(f"  duration {_quantity(study, 'duration', e.exposure_duration)}; horizon "
                 f"{_s(e.horizon)}; before it: ambient {_t(study, _mean(e.ambient_temperature))}")
    if isinstance(w, SkinWearer):
        skin = w.skin
        third = ("the basal depth (damage 1e4)" if setup.third_degree == "basal"
                 else "the dermis base (damage 1, Takata 1974)")
        lines.append(f"Wearer: skin, property set {setup.skin_properties}; damage model "
                     f"{setup.damage_model}; third degree at {third}"
                     f"; perfusion {'on' if w.perfusion else 'off'}; core "
                     f"{_t(study, _mean(skin.core_temperature))}")
    elif isinstance(w, SensorWearer):
        d = w.sensor
        lines.append(f"Wearer: copper-disc sensor, m c / A = "
                     f"{_mean(d.heat_capacity_per_area) / 1e3:.4g} kJ/(m^2 K); "
                     "criterion: Stoll & Chianta (1969) second-degree curve")
    else:
        lines.append(f"Wearer: surface held at {_t(study, _mean(w.temperature))}")
    return lines


def _layer_lines(study: Study) -> list[str]:
    rows = []
    for layer in study.layers:
        if isinstance(layer, Solid):
            L, rho, c = (_mean(x) for x in (layer.thickness, layer.density,
                                             layer.specific_heat))
            rows.append([layer.name, "solid", f"{1e3 * L:.4g}", f"{rho:.4g}", f"{c:.4g}",
                         f"{_mean(layer.conductivity):.4g}", f"{rho * c * L / 1e3:.4g}"])
        else:
            rows.append([layer.name, "gap", f"{1e3 * _mean(layer.width):.4g}", "-",
                         "-", "air", "-"])
    header = ["layer", "kind", "thickness [mm]", "density [kg/m^3]", "specific heat [J/(kg K)]",
              "conductivity [W/(m K)]", "heat capacity [kJ/(m^2 K)]"]
    return ["Layers (nominal; heat capacity per area = density x specific heat x thickness)",
            *text_table(header, rows)]


def _history_lines(study: Study, sol: TransientSolution) -> list[str]:
    horizon = _setup(study).horizon
    lines = ["Nominal history (every uncertain input at its nominal value)"]
    if not bool(sol.converged[0]):
        return lines + ["  WARNING: the nominal integration did not converge: no results.",
                        "  Check the inputs (the exposure, the layers' heat capacities)."]

    def when(t: float) -> str:
        return _s(t) if np.isfinite(t) else f"none within the horizon ({_s(horizon)})"

    kind = _setup(study).wearer_kind
    if kind == "skin":
        for label, name in _BURNS:
            lines.append(f"  time to {label}-degree burn: {when(float(getattr(sol, name)[0]))}")
        lines.append(f"  damage integral at the basal depth at the horizon: "
                     f"{float(sol.damage_at_end[0]):.3g}")
        lines.append(f"  peak basal temperature: {_t(study, float(sol.peak_basal_temperature[0]))}"
                     f" at {_s(float(sol.time_of_peak_basal_temperature[0]))}")
        surface = "skin-surface"
    elif kind == "sensor":
        tc = float(sol.sensor_criterion_time[0])
        lines.append(f"  sensor reaches the second-degree criterion at: {when(tc)}")
        if np.isfinite(tc):
            lines.append(f"  exposure energy at the criterion (the rating): "
                         f"{_energy(float(sol.exposure_energy_at_criterion[0]))}")
        surface = "sensor"
    else:
        surface = "prescribed-surface"
    lines.append(f"  peak {surface} temperature: "
                 f"{_t(study, float(sol.peak_surface_temperature[0]))} at "
                 f"{_s(float(sol.time_of_peak_surface_temperature[0]))}")
    lines.append(f"  heat stored in the assembly at the end of the exposure: "
                 f"{_energy(float(sol.stored_energy_at_exposure_end[0]))}")
    what = {"skin": "the skin", "sensor": "the sensor", "prescribed": "the surface"}[kind]
    lines.append(f"  heat absorbed by {what} (start of the exposure to the horizon): "
                 f"{_energy(float(sol.absorbed_energy[0]))}")
    return lines


def _scenario_lines(study: Study, sol: TransientSolution) -> list[str]:
    sc = _scenarios(study)
    kind = _setup(study).wearer_kind
    rows = []
    for k, label in enumerate(sc.labels):
        if not bool(sol.converged[k]):
            rows.append([label, "did not converge", "-", "-"])
            continue
        if kind == "sensor":
            first = _s(float(sol.sensor_criterion_time[k]))
            second = _energy(float(sol.exposure_energy_at_criterion[k]))
        else:
            first = _s(float(sol.time_to_second_degree_burn[k]))
            second = f"{float(sol.damage_at_end[k]):.3g}"
        rows.append([label, first, second, _t(study, float(sol.peak_surface_temperature[k]))])
    if kind == "sensor":
        header = [f"exposure.{sc.quantity}", "criterion time", "exposure energy then",
                  "peak sensor"]
    else:
        header = [f"exposure.{sc.quantity}", "time to 2nd-degree burn", "damage at horizon",
                  "peak surface"]
    title = (f"Scenarios: exposure.{sc.quantity} swept, nominal inputs (n/a: not reached "
             "within the horizon)")
    return [title, *text_table(header, rows)]
