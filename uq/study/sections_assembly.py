"""Config sections that describe the assembly and its exposure: ``[hot_side]``,
``[[layer]]``, ``[cold_side]`` and ``[scenarios]``.

Each parser reads its raw TOML value and returns fields of
:class:`~plyrisk.study.definition.Study` (see :mod:`plyrisk.study.config`); uncertain values
become :class:`~plyrisk.study.definition.Parameter` entries.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import MISSING, fields
from typing import Any

import numpy as np

from plyrisk.models.stack import GAP_ORIENTATIONS, Gap, Solid
from plyrisk.study import values as cv
from plyrisk.study.definition import Parameter, Scenarios
from plyrisk.study.units import QUANTITIES, TEMPERATURE
from plyrisk.study.values import Context, join, show, suggest

LAYER_KINDS = {"solid": Solid, "gap": Gap}
RESERVED_NAMES = ("hot_side", "cold_side", "exposure", "wearer")
TRANSIENT_LAYER_KEYS = ("density", "specific_heat", "specific_heat_slope",
                        "radiant_transmissivity")
"""``[[layer]]`` keys used by transient studies only (refused in a steady study)."""

Parser = Callable[[Context, Any, dict], dict]
"""A section parser: ``parse(ctx, raw, parsed) -> dict`` of Study fields."""


# ----------------------------------------------------------------------------------------------
# [hot_side], [[layer]], [cold_side]
# ----------------------------------------------------------------------------------------------


def _model_fields(cls: type) -> tuple[list[str], list[str]]:
    """Numeric config keys of a model dataclass, and those that are required."""
    names, required = [], []
    for f in fields(cls):
        if f.name in ("name", "orientation"):
            continue
        names.append(f.name)
        if f.default is MISSING and f.default_factory is MISSING:
            required.append(f.name)
    return names, required


def _numeric(
    ctx: Context, t: dict, path: str, group: str, target: tuple, names: list[str]
) -> tuple[dict, list[Parameter]]:
    """The numeric keys ``names`` present in ``t`` → nominal keyword arguments, parameters.

    For a layer (``target[0] == "layer"``) the key ``emissivity`` sets both faces.
    """
    both = target[0] == "layer"
    kwargs: dict[str, Any] = {}
    params: list[Parameter] = []
    for key in names:
        if key not in t:
            continue
        kpath = join(path, key)
        q = cv.quantity(ctx, t[key], kpath, QUANTITIES[key])
        shorthand = both and key == "emissivity"
        for f in ("emissivity_hot", "emissivity_cold") if shorthand else (key,):
            kwargs[f] = q.nominal
        if q.distribution is not None:
            params.append(
                Parameter(f"{group}.{key}", group, (*target, key), q.distribution, q.unit, kpath)
            )
    return kwargs, params


def side_parser(side: str, kinds: dict[str, type]) -> Parser:
    def parse(ctx: Context, raw: Any, parsed: dict) -> dict:
        if parsed.get("_transient"):
            if raw is not None:
                instead = "[exposure]" if side == "hot_side" else "[wearer]"
                raise ctx.error(side, f"[{side}] belongs to a steady study; a transient study "
                                f"(one with [exposure]) describes this side in {instead}; "
                                "remove it")
            return {side: None}
        kinds_text = " | ".join(repr(k) for k in kinds)
        if raw is None:
            raise ctx.error(side, f"missing section [{side}]; add one with kind = {kinds_text}")
        t = cv.table(ctx, raw, side, f"[{side}]")
        if "kind" not in t:
            raise ctx.error(side, f"missing key 'kind' ({kinds_text})")
        cls = kinds[cv.choice(ctx, t["kind"], f"{side}.kind", kinds, f"{side} kind")]
        names, required = _model_fields(cls)
        cv.check_keys(ctx, t, side, ["kind", *names], required=required)
        kwargs, params = _numeric(ctx, t, side, side, (side,), names)
        return {side: cls(**kwargs), "parameters": params}

    return parse


def parse_layers(ctx: Context, raw: Any, parsed: dict) -> dict:
    if raw is None:
        raise ctx.error("layer", "missing [[layer]] tables; the stack needs at least one layer")
    if not isinstance(raw, list) or not raw:
        raise ctx.error("layer", "expected [[layer]] tables (an array of tables, one per "
                        f"layer, hot side first), got {show(raw)}")
    layers: list[Solid | Gap] = []
    params: list[Parameter] = []
    ratings: list[float | None] = []
    seen: dict[str, int] = {}
    for i, item in enumerate(raw):
        path = join("layer", i)
        t = cv.table(ctx, item, path, "[[layer]]")
        for key in ("name", "kind"):
            if key not in t:
                raise ctx.error(path, f"missing key {key!r}")
        name = cv.string(ctx, t["name"], f"{path}.name")
        if "." in name or "|" in name or name in RESERVED_NAMES:
            raise ctx.error(f"{path}.name", f"{name!r} is not allowed: names may not contain "
                            f"'.' or '|' nor be {' or '.join(RESERVED_NAMES)}")
        if name in seen:
            raise ctx.error(f"{path}.name", f"duplicate layer name {name!r} (also layer"
                            f"[{seen[name]}]); names must be unique")
        seen[name] = i
        cls = LAYER_KINDS[cv.choice(ctx, t["kind"], f"{path}.kind", LAYER_KINDS, "layer kind")]
        names, required = _model_fields(cls)
        extra = ["orientation"] if cls is Gap else ["max_temperature"]
        if cls is Solid:
            names.append("emissivity")
            if "emissivity" in t and ("emissivity_hot" in t or "emissivity_cold" in t):
                raise ctx.error(f"{path}.emissivity", "sets both faces; give either emissivity "
                                "or emissivity_hot/emissivity_cold, not both")
        cv.check_keys(ctx, t, path, ["name", "kind", *extra, *names], required=required)
        if not parsed.get("_transient"):
            for key in TRANSIENT_LAYER_KEYS:
                if key in t:
                    raise ctx.error(join(path, key), "used only by transient studies (with an "
                                    "[exposure] section); remove it from this steady study")
        kwargs, ps = _numeric(ctx, t, path, name, ("layer", i), names)
        if "orientation" in t:
            kwargs["orientation"] = cv.choice(ctx, t["orientation"], f"{path}.orientation",
                                              GAP_ORIENTATIONS, "orientation")
        ratings.append(cv.fixed(ctx, t["max_temperature"], f"{path}.max_temperature",
                                TEMPERATURE).si if "max_temperature" in t else None)
        layers.append(cls(name=name, **kwargs))
        params.extend(ps)
    return {"layers": tuple(layers), "parameters": params, "max_temperatures": tuple(ratings)}


# ----------------------------------------------------------------------------------------------
# [scenarios]
# ----------------------------------------------------------------------------------------------


def parse_scenarios(ctx: Context, raw: Any, parsed: dict) -> dict:
    if raw is None:
        return {"scenarios": None}
    t = cv.table(ctx, raw, "scenarios", "[scenarios]")
    cv.check_keys(ctx, t, "scenarios", ("quantity", "values"), required=("quantity", "values"))
    if parsed.get("_transient"):
        from plyrisk.study.sections_transient import parse_transient_scenarios

        return {"scenarios": parse_transient_scenarios(ctx, t, parsed)}
    hot = parsed["hot_side"]
    names, _ = _model_fields(type(hot))
    quantity = t["quantity"]
    if not isinstance(quantity, str) or quantity not in names:
        raise ctx.error(
            "scenarios.quantity",
            f"{show(quantity)} is not a quantity of a hot side of kind {hot.kind!r}; "
            f"{suggest(str(quantity), names)}valid: {', '.join(names)}",
        )
    if any(p.target == ("hot_side", quantity) for p in parsed["parameters"]):
        raise ctx.error("scenarios.quantity", f"hot_side.{quantity} is uncertain; a swept "
                        "quantity must have a fixed value in [hot_side]")
    levels, si = scenario_levels(ctx, t["values"], quantity)
    return {"scenarios": Scenarios(quantity, si, tuple(p.text for p in levels), levels[0].unit)}


def scenario_levels(ctx: Context, values: Any, quantity: str) -> tuple[list[Any], np.ndarray]:
    """The swept levels of ``[scenarios] values``: parsed, in SI, none repeated."""
    if not isinstance(values, list) or not values:
        raise ctx.error("scenarios.values", f"expected a non-empty list of values, got "
                        f"{show(values)}")
    spec = QUANTITIES[quantity]
    levels = [cv.fixed(ctx, v, join("scenarios.values", i), spec) for i, v in enumerate(values)]
    si = np.array([p.si for p in levels])
    for i in range(1, len(si)):
        if np.any(si[:i] == si[i]):
            raise ctx.error(join("scenarios.values", i), f"duplicate level {levels[i].text}")
    return levels, si
