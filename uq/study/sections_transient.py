"""Config sections of a transient study: ``[exposure]``, ``[wearer]`` and a transient sweep.

A config with an ``[exposure]`` section is a *transient* study: the assembly starts in the
steady state of the pre-exposure ambient, is exposed for ``duration``, cools down until
``horizon``, and the wearer behind it (skin, a copper-disc sensor or a prescribed surface) is
followed through time (:func:`plyrisk.models.transient.solve_transient`). ``[hot_side]`` and
``[cold_side]`` belong to steady studies and are refused in a transient one.

Each parser reads its raw TOML value and returns fields of
:class:`~plyrisk.study.definition.Study` (see :mod:`plyrisk.study.config`); keys starting with
``_`` are handed from one parser to the next and are not Study fields. The key reference is
``docs/config.md``.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import replace
from inspect import signature
from typing import TYPE_CHECKING, Any

import numpy as np

from plyrisk.models.burn import DAMAGE_PARAMETER_SETS
from plyrisk.models.exposure import EXPOSURE_MODES, Table, TransientExposure
from plyrisk.models.mesh import mesh_layout
from plyrisk.models.sensor import copper_disc
from plyrisk.models.skin import SKIN_PROPERTY_SETS, skin_properties
from plyrisk.models.transient_outputs import TRANSIENT_OUTPUTS
from plyrisk.models.wearer import PrescribedWearer, SensorWearer, SkinWearer
from plyrisk.study import values as cv
from plyrisk.study.definition import Parameter, Scenarios, TransientSetup, sensor_disc
from plyrisk.study.sections_assembly import scenario_levels
from plyrisk.study.units import DIMENSIONLESS, QUANTITIES, TIME_POINT
from plyrisk.study.values import Context, join, show, suggest

if TYPE_CHECKING:  # pragma: no cover
    from plyrisk.study.definition import Study

DEFAULT_SKIN = "jiang_2002"
"""Skin property set used when ``[wearer] properties`` is not given: the set whose values are
confirmed against the paper (see docs/model.md; the other set's values are recalled)."""
DEFAULT_DAMAGE_MODEL = "henriques_1947"
DEFAULT_BURN_PROBABILITY = 0.05
"""Default ``[study] acceptable_burn_probability`` [-]."""
DEFAULT_POINTS = 241
"""Points of the default history grid: ``horizon / 240`` apart [-]."""
MAX_POINTS = 2000
"""Most points of the history grid (``output_step`` no finer) [-]."""
SUPPORT_TAIL = 1e-9
"""Tail probability at which an uncertain value's extreme is taken for checks [-]."""

TABLE_KEYS = ("incident_flux", "gas_temperature", "convection_coefficient",
              "surroundings_temperature")
"""``[exposure]`` keys that may be a table in time ``{time = [...], value = [...]}``."""
UNCERTAIN_KEYS = (*TABLE_KEYS, "duration", "ambient_temperature",
                  "ambient_convection_coefficient", "cooldown_temperature",
                  "cooldown_convection_coefficient", "cooldown_surroundings_temperature")
"""``[exposure]`` keys that take a value or a distribution."""
EXPOSURE_KEYS = ("mode", *UNCERTAIN_KEYS, "horizon", "output_step")
ENVIRONMENT_ONLY = ("gas_temperature", "convection_coefficient", "surroundings_temperature",
                    "cooldown_temperature", "cooldown_convection_coefficient",
                    "cooldown_surroundings_temperature")
"""Keys not used with ``mode = "absorbed_flux"`` (the face absorbs exactly the given flux)."""
SWEEPABLE = tuple(k for k in UNCERTAIN_KEYS)
"""``[exposure]`` quantities a transient ``[scenarios]`` section may sweep."""

SKIN_LAYERS = ("epidermis", "dermis", "subcutis")
SKIN_LAYER_KEYS = ("thickness", "conductivity", "density", "specific_heat", "perfusion_rate")
SKIN_KEYS = ("properties", "damage_model", "third_degree", "emissivity", "core_temperature",
             "perfusion", "contact_resistance")
SENSOR_KEYS = ("diameter", "thickness", "mass", "specific_heat", "emissivity",
               "initial_temperature", "contact_resistance")
PRESCRIBED_KEYS = ("temperature", "emissivity", "contact_resistance")
WEARER_KINDS = {"skin": SKIN_KEYS, "sensor": SENSOR_KEYS, "prescribed": PRESCRIBED_KEYS}

LAYER_KEYS = ("density", "specific_heat", "specific_heat_slope", "radiant_transmissivity")
"""``[[layer]]`` keys used by transient studies only."""

SCALAR_OUTPUTS = tuple(s.name for s in TRANSIENT_OUTPUTS
                       if not s.dims and s.name not in ("converged", "steps", "rejected_steps"))
"""Transient outputs ``[study] outputs`` may list."""


def is_transient(parsed: dict) -> bool:
    """Whether the config being parsed is a transient study (has ``[exposure]``) [-]."""
    return bool(parsed.get("_transient"))


# ----------------------------------------------------------------------------------------------
# [exposure]
# ----------------------------------------------------------------------------------------------


def _is_table(raw: Any) -> bool:
    return isinstance(raw, dict) and ("time" in raw or "value" in raw)


def _table(ctx: Context, raw: dict, path: str, key: str) -> tuple[Table, str]:
    cv.check_keys(ctx, raw, path, ("time", "value"), required=("time", "value"))
    times, values = raw["time"], raw["value"]
    for name, lst in (("time", times), ("value", values)):
        if not isinstance(lst, list) or not lst:
            raise ctx.error(join(path, name), f"expected a non-empty list, got {show(lst)}")
    if len(times) != len(values):
        raise ctx.error(path, f"time has {len(times)} entries and value {len(values)}; expected "
                        "one value per time")
    t = [cv.fixed(ctx, v, join(join(path, "time"), i), TIME_POINT) for i, v in enumerate(times)]
    spec = QUANTITIES[key]
    v = [cv.fixed(ctx, x, join(join(path, "value"), i), spec) for i, x in enumerate(values)]
    if t[0].si != 0.0:
        raise ctx.error(join(join(path, "time"), 0), f"a table starts at the start of the "
                        f"exposure: expected 0 s, got {t[0].text}")
    for i in range(1, len(t)):
        if not t[i].si > t[i - 1].si:
            raise ctx.error(join(join(path, "time"), i), f"times must increase: {t[i].text} "
                            f"follows {t[i - 1].text}")
    return Table([p.si for p in t], [p.si for p in v], name=f"exposure.{key}"), v[0].unit


def _longest(q: cv.Quantity) -> float:
    """The largest value an uncertain quantity reaches (its nominal when fixed) [SI]."""
    if q.distribution is None:
        return q.nominal
    return float(q.distribution.ppf(np.array([1.0 - SUPPORT_TAIL]))[0])


def parse_exposure(ctx: Context, raw: Any, parsed: dict) -> dict:
    """``[exposure]``: the exposure, its cool-down, the horizon and the history grid."""
    if raw is None:
        return {}
    t = cv.table(ctx, raw, "exposure", "[exposure]")
    mode = (cv.choice(ctx, t["mode"], "exposure.mode", EXPOSURE_MODES, "exposure mode")
            if "mode" in t else "environment")
    required = ["incident_flux", "duration", "horizon"]
    if mode == "environment":
        required += ["gas_temperature", "convection_coefficient"]
    cv.check_keys(ctx, t, "exposure", EXPOSURE_KEYS, required=required)
    if mode == "absorbed_flux":
        for key in ENVIRONMENT_ONLY:
            if key in t:
                raise ctx.error(f"exposure.{key}", "not used with mode = 'absorbed_flux' (the "
                                "face absorbs exactly incident_flux during the exposure and is "
                                "adiabatic after it); remove it or use mode = 'environment'")
    kwargs: dict[str, Any] = {"mode": mode}
    units: dict[str, str] = {}
    params: list[Parameter] = []
    quantities: dict[str, cv.Quantity] = {}
    tables: dict[str, str] = {}
    for key in UNCERTAIN_KEYS:
        if key not in t:
            continue
        path = f"exposure.{key}"
        if key in TABLE_KEYS and _is_table(t[key]):
            if not isinstance(t[key], dict):  # pragma: no cover - _is_table checked
                raise ctx.error(path, "expected a table")
            kwargs[key], units[key] = _table(ctx, t[key], path, key)
            tables[key] = path
            continue
        q = cv.quantity(ctx, t[key], path, QUANTITIES[key])
        quantities[key] = q
        kwargs[key] = q.nominal
        units[key] = q.unit
        if q.distribution is not None:
            params.append(Parameter(path, "exposure", ("exposure", key), q.distribution,
                                    q.unit, path))
    duration = quantities["duration"]
    kwargs["exposure_duration"] = kwargs.pop("duration")
    horizon = cv.fixed(ctx, t["horizon"], "exposure.horizon", QUANTITIES["horizon"])
    units["horizon"] = horizon.unit
    longest = _longest(duration)
    if horizon.si < longest:
        reach = "reaches" if duration.distribution is not None else "is"
        raise ctx.error("exposure.horizon", f"{horizon.text} is shorter than the exposure "
                        f"(exposure.duration {reach} {longest:.4g} s); expected a horizon at "
                        "least as long as the longest exposure, plus the cool-down to follow")
    for key, path in tables.items():
        end = kwargs[key].end
        if end < longest:
            raise ctx.error(join(path, "time"), f"the table ends at {end:.4g} s, before the "
                            f"exposure does ({longest:.4g} s); extend it to cover the whole "
                            "exposure")
    if "output_step" in t:
        step = cv.fixed(ctx, t["output_step"], "exposure.output_step",
                        QUANTITIES["output_step"])
        points = int(np.floor(horizon.si / step.si * (1 + 1e-12))) + 1
        if points > MAX_POINTS:
            raise ctx.error("exposure.output_step", f"{step.text} gives {points} history points "
                            f"over the horizon {horizon.text}; at most {MAX_POINTS} are kept "
                            f"(use at least {horizon.si / (MAX_POINTS - 1):.3g} s)")
        output_times = output_grid(horizon.si, step.si)
    else:
        output_times = output_grid(horizon.si, horizon.si / (DEFAULT_POINTS - 1))
    if mode == "absorbed_flux":  # not used in this mode; the model's fields need a value
        kwargs.update(gas_temperature=kwargs.get("ambient_temperature", 297.15),
                      convection_coefficient=0.0)
    exposure = TransientExposure(horizon=horizon.si, **kwargs)
    return {"_exposure": exposure, "_exposure_units": units, "_output_times": output_times,
            "parameters": params}


def output_grid(horizon: float, step: float) -> np.ndarray:
    """History times ``0, step, 2 step, ...`` up to and including the horizon [s].

    Parameters
    ----------
    horizon
        End of the simulated time [s].
    step
        Spacing [s]; the horizon is added when it is not a multiple of it.
    """
    k = int(np.floor(horizon / step * (1 + 1e-12)))
    times = step * np.arange(k + 1, dtype=float)
    times = times[times <= horizon]
    if horizon - times[-1] > 1e-9 * horizon:
        times = np.append(times, horizon)
    else:
        times[-1] = horizon
    return times


# ----------------------------------------------------------------------------------------------
# [wearer]
# ----------------------------------------------------------------------------------------------


def _numeric(ctx: Context, t: dict, path: str, keys: Sequence[str], target: tuple,
             params: list[Parameter]) -> dict[str, float]:
    """Values of ``keys`` present in ``t`` (nominal), appending uncertain ones to ``params``."""
    out: dict[str, float] = {}
    for key in keys:
        if key not in t:
            continue
        kpath = join(path, key)
        q = cv.quantity(ctx, t[key], kpath, QUANTITIES[key])
        out[key] = q.nominal
        if q.distribution is not None:
            params.append(Parameter(kpath, "wearer", (*target, key), q.distribution, q.unit,
                                    kpath))
    return out


def parse_wearer(ctx: Context, raw: Any, parsed: dict) -> dict:
    """``[wearer]``: the skin, sensor or prescribed surface behind the assembly."""
    if not is_transient(parsed):
        if raw is not None:
            raise ctx.error("wearer", "[wearer] belongs to a transient study; add an [exposure] "
                            "section (or, for a steady study, use [cold_side])")
        return {}
    kinds_text = " | ".join(repr(k) for k in WEARER_KINDS)
    if raw is None:
        raise ctx.error("wearer", f"missing section [wearer]; a transient study needs one with "
                        f"kind = {kinds_text}")
    t = cv.table(ctx, raw, "wearer", "[wearer]")
    if "kind" not in t:
        raise ctx.error("wearer", f"missing key 'kind' ({kinds_text})")
    kind = cv.choice(ctx, t["kind"], "wearer.kind", WEARER_KINDS, "wearer kind")
    keys = WEARER_KINDS[kind]
    extra = SKIN_LAYERS if kind == "skin" else ()
    cv.check_keys(ctx, t, "wearer", ("kind", *keys, *extra),
                  required=("temperature",) if kind == "prescribed" else ())
    params: list[Parameter] = []
    values = _numeric(ctx, t, "wearer", [k for k in keys if k in QUANTITIES], ("wearer",),
                      params)
    damage, third, skin_name, sensor_inputs = DEFAULT_DAMAGE_MODEL, "basal", None, {}
    if kind == "skin":
        skin_name = (cv.choice(ctx, t["properties"], "wearer.properties", SKIN_PROPERTY_SETS,
                               "skin property set") if "properties" in t else DEFAULT_SKIN)
        if "damage_model" in t:
            damage = cv.choice(ctx, t["damage_model"], "wearer.damage_model",
                               DAMAGE_PARAMETER_SETS, "damage model")
        if "third_degree" in t:
            from plyrisk.models.transient import THIRD_DEGREE_RULES  # loads numba: only here

            third = cv.choice(ctx, t["third_degree"], "wearer.third_degree", THIRD_DEGREE_RULES,
                              "third-degree rule")
        perfusion = (cv.boolean(ctx, t["perfusion"], "wearer.perfusion")
                     if "perfusion" in t else True)
        skin = skin_properties(skin_name)
        changes: dict[str, Any] = {}
        for name in SKIN_LAYERS:
            if name not in t:
                continue
            path = f"wearer.{name}"
            sub = cv.table(ctx, t[name], path, f"[wearer.{name}]")
            cv.check_keys(ctx, sub, path, SKIN_LAYER_KEYS)
            layer_values = _numeric(ctx, sub, path, SKIN_LAYER_KEYS, ("wearer", name), params)
            changes[name] = replace(getattr(skin, name), **layer_values)
        if "core_temperature" in values:
            core = values.pop("core_temperature")
            changes.update(core_temperature=core, arterial_temperature=core)
        if "emissivity" in values:
            changes["emissivity"] = values.pop("emissivity")
        wearer: Any = SkinWearer(skin=replace(skin, **changes), perfusion=perfusion, **values)
    elif kind == "sensor":
        defaults = {k: v.default for k, v in signature(copper_disc).parameters.items()}
        sensor_inputs = {k: defaults[k] for k in ("diameter", "thickness", "mass",
                                                   "specific_heat", "emissivity",
                                                   "initial_temperature")}
        if "thickness" in values or "diameter" in values:
            sensor_inputs["mass"] = None  # copper of the given size, unless a mass is given
        for key in SENSOR_KEYS:
            if key in values and key != "contact_resistance":
                sensor_inputs[key] = values.pop(key)
        wearer = SensorWearer(sensor=sensor_disc(sensor_inputs), **values)
    else:
        wearer = PrescribedWearer(**values)
    exposure = parsed["_exposure"]
    setup = TransientSetup(
        exposure=exposure, wearer=wearer, damage_model=damage, third_degree=third,
        output_times=parsed["_output_times"],
        acceptable_burn_probability=parsed.get("_acceptable_burn_probability",
                                               DEFAULT_BURN_PROBABILITY),
        layout=None, skin_properties=skin_name, sensor_inputs=sensor_inputs,
        units=parsed["_exposure_units"])
    return {"transient": setup, "parameters": params}


def with_layout(study: Study) -> Study:
    """The study with the grid layout of its transient model set, from the nominal study.

    Called once the layers and the wearer are validated. Every chunk of the study is solved on
    this one layout, so results do not depend on how samples are chunked or distributed.
    """
    setup = study.transient
    assert setup is not None, "called for a transient study"
    layout = mesh_layout(list(study.layers), setup.wearer, setup.exposure.horizon)
    return replace(study, transient=replace(setup, layout=layout))


# ----------------------------------------------------------------------------------------------
# [study] keys and [scenarios] of a transient study
# ----------------------------------------------------------------------------------------------


def probability(ctx: Context, raw: Any, path: str) -> float:
    """A probability strictly between 0 and 1, e.g. ``"5 %"`` or ``0.05`` [-]."""
    p = cv.parse(ctx, raw, path, DIMENSIONLESS)
    if not 0.0 < p.si < 1.0:
        raise ctx.error(path, f"expected a probability between 0 and 1 (exclusive), e.g. "
                        f"\"5 %\", got {p.text}")
    return p.si


def parse_transient_scenarios(ctx: Context, t: dict, parsed: dict) -> Scenarios:
    """``[scenarios]`` of a transient study: a sweep of one ``[exposure]`` quantity."""
    quantity = t["quantity"]
    if not isinstance(quantity, str) or quantity not in SWEEPABLE:
        raise ctx.error("scenarios.quantity", f"{show(quantity)} is not an [exposure] quantity "
                        f"that can be swept; {suggest(str(quantity), SWEEPABLE)}valid: "
                        f"{', '.join(SWEEPABLE)}")
    if any(p.target == ("exposure", quantity) for p in parsed["parameters"]):
        raise ctx.error("scenarios.quantity", f"exposure.{quantity} is uncertain; a swept "
                        "quantity must have a fixed value in [exposure]")
    exposure = parsed["_exposure"]
    if quantity in TABLE_KEYS and isinstance(getattr(exposure, quantity), Table):
        raise ctx.error("scenarios.quantity", f"exposure.{quantity} is a table in time; a swept "
                        "quantity must be a single fixed value in [exposure]")
    if exposure.mode == "absorbed_flux" and quantity in ENVIRONMENT_ONLY:
        raise ctx.error("scenarios.quantity", f"{quantity!r} is not used with mode = "
                        "'absorbed_flux'")
    levels, si = scenario_levels(ctx, t["values"], quantity)
    if quantity == "duration":
        horizon = float(exposure.horizon)
        for i, p in enumerate(levels):
            if p.si > horizon:
                raise ctx.error(join("scenarios.values", i), f"{p.text} is longer than "
                                f"exposure.horizon ({horizon:.4g} s); expected durations up to "
                                "the horizon")
            for key, table in exposure.tables().items():
                if table.end < p.si:
                    raise ctx.error(join("scenarios.values", i), f"{p.text} is longer than the "
                                    f"exposure.{key} table ({table.end:.4g} s); extend the "
                                    "table")
    return Scenarios(quantity, si, tuple(p.text for p in levels), levels[0].unit)


def check_outputs(ctx: Context, outputs: tuple[str, ...]) -> None:
    """``[study] outputs`` of a transient study: names of scalar transient outputs."""
    for i, name in enumerate(outputs):
        if name not in SCALAR_OUTPUTS:
            raise ctx.error(join("study.outputs", i), f"unknown transient output {name!r}; "
                            f"{suggest(name, SCALAR_OUTPUTS)}valid: {', '.join(SCALAR_OUTPUTS)}")
