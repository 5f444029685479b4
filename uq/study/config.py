"""Read a study config (TOML) into a validated :class:`~plyrisk.study.definition.Study`, in SI
units.

The parse is organised per top-level section: :data:`SECTIONS` maps each section name, in parse
order, to a function ``parse(ctx, raw, parsed) -> dict`` that reads its raw TOML value
(``None`` when the section is absent) and returns fields of
:class:`~plyrisk.study.definition.Study`; a
returned ``"parameters"`` list is appended to the study's parameters. To add a section (e.g.
``[tolerances]``): write its parser with the helpers of :mod:`plyrisk.study.values`, add it to
:data:`SECTIONS` and give :class:`~plyrisk.study.definition.Study` a field with a default. Rules
spanning
sections are checked afterwards in :func:`_check_study`. The key reference is
``docs/config.md``.

Every mistake raises :class:`~plyrisk.errors.ConfigError`, one line:
``"<file>: <key path>: <what was wrong and what was expected>"``.
"""

from __future__ import annotations

import os
import re
import stat
import tomllib
from collections.abc import Callable
from dataclasses import MISSING, fields, replace
from pathlib import Path
from typing import Any

import numpy as np

from plyrisk.analysis.morris import ScreeningSettings
from plyrisk.errors import ConfigError
from plyrisk.models.boundary import COLD_SIDE_KINDS, HOT_SIDE_KINDS
from plyrisk.models.stack import GAP_ORIENTATIONS, Gap, Solid, StackError, validate_stack
from plyrisk.study import values as cv
from plyrisk.study.definition import (
    Analysis,
    ComputeOptions,
    ModelOptions,
    Parameter,
    Scenarios,
    Study,
    assemble,
)
from plyrisk.study.targets import parse_target
from plyrisk.study.units import QUANTITIES, TEMPERATURE, TEMPERATURE_DIFFERENCE
from plyrisk.study.values import Context, join, show, suggest
from plyrisk.tolerances.core import BASES, ToleranceSettings
from plyrisk.tolerances.core import METHODS as TOLERANCE_METHODS

__all__ = [
    "METHODS",
    "SECTIONS",
    "Analysis",
    "ConfigError",
    "ModelOptions",
    "Parameter",
    "Scenarios",
    "Study",
    "assemble",
    "load_study",
    "loads_study",
    "require_runnable",
    "stack_key_path",
]

METHODS = ("saltelli", "pce", "morris")
"""Analysis methods of ``[study] method``."""
PCE_DESIGNS = ("lhs", "sobol", "random")
"""Designs of ``[study] design`` (method = "pce" only; the first is the default)."""
RENAMED_METHODS = {
    "sobol": 'is now "saltelli"',
    "lhs": 'is now method = "pce" with design = "lhs"',
    "random": 'is now method = "pce" with design = "random"',
}
"""Former ``[study] method`` values and their new spelling."""
RADIATION = ("exact", "linearized")
LHS_OPTIMIZATIONS = ("none", "random-cd", "lloyd")
LAYER_KINDS = {"solid": Solid, "gap": Gap}
PRIMARY_OUTPUT = "inner_surface_temperature"
RESERVED_NAMES = ("hot_side", "cold_side")

Parser = Callable[[Context, Any, dict], dict]


def load_study(path: str | Path) -> Study:
    """Read and validate a study config file.

    Parameters
    ----------
    path
        The TOML file [-].

    Raises
    ------
    ConfigError
        For a missing or unreadable file or any mistake in it.
    """
    source = str(path)
    try:  # a FIFO, device or folder would hang or fail half-way when read
        if not stat.S_ISREG(os.stat(path).st_mode):
            raise ConfigError(source, "", "not a regular file (a FIFO, device or folder); give "
                              "a TOML config file")
    except FileNotFoundError:
        raise ConfigError(source, "", "no such file") from None
    except OSError as err:
        raise ConfigError(source, "", f"cannot read the file ({err.strerror or err})") from None
    try:
        text = Path(path).read_text(encoding="utf-8")
    except FileNotFoundError:
        raise ConfigError(source, "", "no such file") from None
    except UnicodeDecodeError as err:
        raise ConfigError(source, "", f"not UTF-8 text ({err.reason})") from None
    except OSError as err:
        raise ConfigError(source, "", f"cannot read the file ({err.strerror or err})") from None
    return loads_study(text, source=source)


def loads_study(text: str, *, source: str = "<string>") -> Study:
    """Validate a study config given as TOML text.

    Parameters
    ----------
    text
        The TOML document [-].
    source
        Name shown in error messages [-].

    Raises
    ------
    ConfigError
        For any mistake, naming ``source`` and the key path.
    """
    ctx = Context(source)
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as err:
        msg = str(err)
        where = re.search(r"\(at line (\d+), column (\d+)\)", msg)
        path = f"line {where.group(1)}, column {where.group(2)}" if where else "end of file"
        msg = re.sub(r"\s*\(at (line \d+, column \d+|end of document)\)", "", msg)
        raise ConfigError(source, path, f"invalid TOML: {msg}") from None
    cv.check_keys(ctx, data, cv.TOP, SECTIONS, what="section")
    parsed: dict[str, Any] = {"source": source, "text": text, "parameters": []}
    for name, parse in SECTIONS.items():
        for key, value in parse(ctx, data.get(name), parsed).items():
            if key == "parameters":
                parsed["parameters"].extend(value)
            else:
                parsed[key] = value
    parsed["parameters"] = tuple(parsed["parameters"])
    study = Study(**parsed)
    _check_study(ctx, study)
    return study


# ----------------------------------------------------------------------------------------------
# [study]
# ----------------------------------------------------------------------------------------------

_STUDY_REQUIRED = ("title", "method", "samples", "seed", "limit")
_STUDY_OPTIONAL = (
    "percentiles", "confidence", "bootstrap", "index_ci_threshold", "chunk_size",
    "lhs_optimization", "outputs", "design", "levels", "screening_threshold",
    "pce_max_loo_error",
)  # fmt: skip
_METHOD_ONLY = {"design": "pce", "pce_max_loo_error": "pce", "levels": "morris",
                "screening_threshold": "morris"}
"""Keys of ``[study]`` that apply to one method only."""


def _method(ctx: Context, raw: Any) -> str:
    if isinstance(raw, str) and raw in RENAMED_METHODS:
        raise ctx.error("study.method", f'"{raw}" {RENAMED_METHODS[raw]}')
    return cv.choice(ctx, raw, "study.method", METHODS, "method")


def design_of(method: str, design: str | None = None) -> str:
    """The design type of an analysis method: saltelli → sobol, morris → morris, pce → design.

    Parameters
    ----------
    method
        ``"saltelli"``, ``"pce"`` or ``"morris"`` [-].
    design
        The ``[study] design`` of a pce study (default ``"lhs"``) [-].

    Returns
    -------
    str
        The :attr:`plyrisk.design.sampling.Design.method` to draw [-].
    """
    if method not in METHODS:
        raise ValueError(f"unknown method {method!r}; valid: {', '.join(METHODS)}")
    if method == "pce":
        return design or PCE_DESIGNS[0]
    return "sobol" if method == "saltelli" else "morris"


def levels_value(ctx: Context, raw: Any, path: str) -> int:
    """Morris grid levels: an even whole number >= 2 [-]."""
    n = cv.integer(ctx, raw, path, minimum=2)
    if n % 2:
        raise ctx.error(path, f"must be even (Morris 1991: an even number of levels with a step "
                        f"of levels / (2 (levels - 1)) samples every level equally), got {n}; "
                        f"use {n - 1} or {n + 1}")
    return n


def _parse_study_section(ctx: Context, raw: Any, parsed: dict) -> dict:
    if raw is None:
        raise ctx.error("study", f"missing section [study] ({', '.join(_STUDY_REQUIRED)})")
    t = cv.table(ctx, raw, "study", "[study]")
    cv.check_keys(ctx, t, "study", (*_STUDY_REQUIRED, *_STUDY_OPTIONAL),
                  required=_STUDY_REQUIRED)
    title = cv.string(ctx, t["title"], "study.title")
    method = _method(ctx, t["method"])
    for key, only in _METHOD_ONLY.items():
        if key in t and method != only:
            raise ctx.error(f"study.{key}", f"applies only to method = '{only}', not "
                            f"{method!r}; remove it")
    design = design_of(method, cv.choice(ctx, t["design"], "study.design", PCE_DESIGNS,
                                         "design") if "design" in t else None)
    limit = cv.fixed(ctx, t["limit"], "study.limit", TEMPERATURE)
    kw: dict[str, Any] = {
        "method": method,
        "design": design,
        "samples": _samples(ctx, t["samples"], method, design),
        "seed": cv.integer(ctx, t["seed"], "study.seed", minimum=0, maximum=MAX_SEED),
        "limit": limit.si,
    }
    if "levels" in t:
        kw["levels"] = levels_value(ctx, t["levels"], "study.levels")
    if "screening_threshold" in t:
        kw["screening_threshold"] = cv.number(ctx, t["screening_threshold"],
                                              "study.screening_threshold", 0.0, 1.0)
    if "pce_max_loo_error" in t:
        kw["pce_max_loo_error"] = cv.number(ctx, t["pce_max_loo_error"],
                                            "study.pce_max_loo_error", 0.0, 1.0)
    if "percentiles" in t:
        kw["percentiles"] = _percentiles(ctx, t["percentiles"], "study.percentiles")
    if "confidence" in t:
        kw["confidence"] = cv.number(ctx, t["confidence"], "study.confidence", 0.0, 1.0)
    if "bootstrap" in t:
        kw["bootstrap"] = cv.integer(ctx, t["bootstrap"], "study.bootstrap", minimum=1)
    if "index_ci_threshold" in t:
        kw["index_ci_threshold"] = cv.number(
            ctx, t["index_ci_threshold"], "study.index_ci_threshold", 0.0, 1.0
        )
    if "chunk_size" in t:
        kw["chunk_size"] = cv.integer(ctx, t["chunk_size"], "study.chunk_size", minimum=1)
    if "lhs_optimization" in t:
        path = "study.lhs_optimization"
        opt = cv.choice(ctx, t["lhs_optimization"], path, LHS_OPTIMIZATIONS, "lhs_optimization")
        if design != "lhs":
            raise ctx.error(path, "applies only to method = 'pce' with design = 'lhs', not "
                            f"method = {method!r}" + (f" with design = {design!r}"
                                                      if method == "pce" else "")
                            + "; remove it")
        kw["lhs_optimization"] = None if opt == "none" else opt
    if "outputs" in t:
        kw["outputs"] = _outputs(ctx, t["outputs"], "study.outputs")
    return {"title": title, "analysis": Analysis(**kw), "limit_unit": limit.unit}


MIN_SAMPLES = 8
"""Fewest samples (Sobol: base rows) a study may ask for: fewer give no usable interval [-]."""

MAX_SEED = 2**64 - 1
"""Largest seed: seeds are stored as unsigned 64-bit integers in ``results.nc`` [-]."""


def check_seed(seed: int, where: str) -> int:
    """Return ``seed`` when it is a whole number in 0 … 2^64 − 1, else raise ``ValueError``.

    Parameters
    ----------
    seed
        The seed [-].
    where
        How it is named in the message (``"--seed"``, ``"study.seed"``) [-].

    Examples
    --------
    >>> check_seed(2**64 - 1, "--seed")
    18446744073709551615
    >>> check_seed(2**64, "--seed")  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    ValueError: --seed must be a whole number from 0 to 2^64 - 1 (...), got 18446744073709551616
    """
    if isinstance(seed, bool) or not isinstance(seed, int) or not 0 <= seed <= MAX_SEED:
        raise ValueError(f"{where} must be a whole number from 0 to 2^64 - 1 ({MAX_SEED}), "
                         f"got {seed}")
    return seed


def _samples(ctx: Context, raw: Any, method: str, design: str) -> int:
    n = cv.integer(ctx, raw, "study.samples", minimum=MIN_SAMPLES)
    if design == "sobol" and n & (n - 1):
        low = 1 << (n.bit_length() - 1)
        what = "method = 'saltelli'" if method == "saltelli" else "design = 'sobol'"
        raise ctx.error("study.samples", f"must be a power of 2 for {what} (the balance of "
                        f"the Sobol' sequence needs it), got {n}; use {low} or {2 * low}")
    return n


def _percentiles(ctx: Context, raw: Any, path: str) -> tuple[float, ...]:
    if not isinstance(raw, list) or not raw:
        raise ctx.error(path, f"expected a non-empty list of percentiles in (0, 100), got "
                        f"{show(raw)}")
    values = [cv.number(ctx, v, join(path, i), 0.0, 100.0) for i, v in enumerate(raw)]
    if any(b <= a for a, b in zip(values[:-1], values[1:], strict=True)):
        raise ctx.error(path, f"must be strictly increasing, got {raw}")
    return tuple(v / 100.0 for v in values)


def _outputs(ctx: Context, raw: Any, path: str) -> tuple[str, ...]:
    if not isinstance(raw, list):
        raise ctx.error(path, f"expected a list of output names, got {show(raw)}")
    names = tuple(cv.string(ctx, v, join(path, i)) for i, v in enumerate(raw))
    for i, name in enumerate(names):
        if name == PRIMARY_OUTPUT:
            raise ctx.error(join(path, i), f"{PRIMARY_OUTPUT!r} is always analysed; list only "
                            "extra outputs")
        if name in names[:i]:
            raise ctx.error(join(path, i), f"duplicate output {name!r}")
    return names


# ----------------------------------------------------------------------------------------------
# [model]
# ----------------------------------------------------------------------------------------------


def _parse_model_section(ctx: Context, raw: Any, parsed: dict) -> dict:
    if raw is None:
        return {"model": ModelOptions()}
    t = cv.table(ctx, raw, "model", "[model]")
    cv.check_keys(ctx, t, "model", [f.name for f in fields(ModelOptions)])
    kw: dict[str, Any] = {}
    if "radiation" in t:
        kw["radiation"] = cv.choice(ctx, t["radiation"], "model.radiation", RADIATION,
                                    "radiation")
    if "convection" in t:
        kw["convection"] = cv.boolean(ctx, t["convection"], "model.convection")
    if "tolerance" in t:
        p = cv.parse(ctx, t["tolerance"], "model.tolerance", TEMPERATURE_DIFFERENCE,
                     difference=True)
        cv.check_range(ctx, p, "model.tolerance", TEMPERATURE_DIFFERENCE)
        kw["tolerance"] = p.si
    if "max_iterations" in t:
        kw["max_iterations"] = cv.integer(ctx, t["max_iterations"], "model.max_iterations",
                                          minimum=1)
    return {"model": ModelOptions(**kw)}


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


def _side_parser(side: str, kinds: dict[str, type]) -> Parser:
    def parse(ctx: Context, raw: Any, parsed: dict) -> dict:
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


def _parse_layers(ctx: Context, raw: Any, parsed: dict) -> dict:
    if raw is None:
        raise ctx.error("layer", "missing [[layer]] tables; the stack needs at least one layer")
    if not isinstance(raw, list) or not raw:
        raise ctx.error("layer", "expected [[layer]] tables (an array of tables, one per "
                        f"layer, hot side first), got {show(raw)}")
    layers: list[Solid | Gap] = []
    params: list[Parameter] = []
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
        extra = ["orientation"] if cls is Gap else []
        if cls is Solid:
            names.append("emissivity")
            if "emissivity" in t and ("emissivity_hot" in t or "emissivity_cold" in t):
                raise ctx.error(f"{path}.emissivity", "sets both faces; give either emissivity "
                                "or emissivity_hot/emissivity_cold, not both")
        cv.check_keys(ctx, t, path, ["name", "kind", *extra, *names], required=required)
        kwargs, ps = _numeric(ctx, t, path, name, ("layer", i), names)
        if "orientation" in t:
            kwargs["orientation"] = cv.choice(ctx, t["orientation"], f"{path}.orientation",
                                              GAP_ORIENTATIONS, "orientation")
        layers.append(cls(name=name, **kwargs))
        params.extend(ps)
    return {"layers": tuple(layers), "parameters": params}


# ----------------------------------------------------------------------------------------------
# [scenarios]
# ----------------------------------------------------------------------------------------------


def _parse_scenarios(ctx: Context, raw: Any, parsed: dict) -> dict:
    if raw is None:
        return {"scenarios": None}
    t = cv.table(ctx, raw, "scenarios", "[scenarios]")
    cv.check_keys(ctx, t, "scenarios", ("quantity", "values"), required=("quantity", "values"))
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
    values = t["values"]
    if not isinstance(values, list) or not values:
        raise ctx.error("scenarios.values", f"expected a non-empty list of values, got "
                        f"{show(values)}")
    spec = QUANTITIES[quantity]
    levels = [cv.fixed(ctx, v, join("scenarios.values", i), spec) for i, v in enumerate(values)]
    si = np.array([p.si for p in levels])
    for i in range(1, len(si)):
        if np.any(si[:i] == si[i]):
            raise ctx.error(join("scenarios.values", i), f"duplicate level {levels[i].text}")
    return {"scenarios": Scenarios(quantity, si, tuple(p.text for p in levels), levels[0].unit)}


# ----------------------------------------------------------------------------------------------
# [tolerances]
# ----------------------------------------------------------------------------------------------

_TOLERANCE_KEYS = (
    "target", "samples", "method", "seed", "cost", "max_factor", "allow_loosening", "keep",
    "basis", "confidence", "nominal_shift", "nominal_range",
)  # fmt: skip


def _parse_tolerances(ctx: Context, raw: Any, parsed: dict) -> dict:
    """The optional ``[tolerances]`` section (see ``docs/tolerances.md``)."""
    if raw is None:
        return {"tolerances": None}
    t = cv.table(ctx, raw, "tolerances", "[tolerances]")
    cv.check_keys(ctx, t, "tolerances", _TOLERANCE_KEYS)
    by_name = {p.name: p for p in parsed["parameters"]}
    kw: dict[str, Any] = {}
    if "target" in t:
        try:
            kw["target"] = parse_target(cv.string(ctx, t["target"], "tolerances.target"))
        except ValueError as err:
            raise ctx.error("tolerances.target", str(err)) from None
    if "samples" in t:
        kw["samples"] = cv.integer(ctx, t["samples"], "tolerances.samples", minimum=2)
    if "method" in t:
        kw["method"] = cv.choice(ctx, t["method"], "tolerances.method", TOLERANCE_METHODS,
                                 "method")
    if "seed" in t:
        kw["seed"] = cv.integer(ctx, t["seed"], "tolerances.seed", minimum=0,
                                maximum=MAX_SEED)
    if "cost" in t:
        cost = cv.table(ctx, t["cost"], "tolerances.cost",
                        '{ "<parameter name>" = <weight>, ... }')
        kw["cost"] = {_parameter_name(ctx, name, "tolerances.cost", by_name):
                      cv.number(ctx, w, join("tolerances.cost", name), 0.0, float("inf"))
                      for name, w in cost.items()}
    if "max_factor" in t:
        m = t["max_factor"]
        if isinstance(m, bool) or not isinstance(m, int | float) or not 1.0 <= m < 1e6:
            raise ctx.error("tolerances.max_factor", f"expected a number >= 1 (the largest "
                            f"spread factor), got {show(m)}")
        kw["max_factor"] = float(m)
    if "allow_loosening" in t:
        kw["allow_loosening"] = cv.boolean(ctx, t["allow_loosening"],
                                           "tolerances.allow_loosening")
    if "keep" in t:
        keep = t["keep"]
        if not isinstance(keep, list):
            raise ctx.error("tolerances.keep", f"expected a list of parameter names, got "
                            f"{show(keep)}")
        kw["keep"] = tuple(_parameter_name(ctx, n, join("tolerances.keep", i), by_name)
                           for i, n in enumerate(keep))
    if "basis" in t:
        kw["basis"] = cv.choice(ctx, t["basis"], "tolerances.basis", BASES, "basis")
    if "confidence" in t:
        kw["confidence"] = cv.number(ctx, t["confidence"], "tolerances.confidence", 0.0, 1.0)
    if "nominal_shift" in t:
        kw["nominal_shift"] = _parameter_name(ctx, t["nominal_shift"],
                                              "tolerances.nominal_shift", by_name)
    if "nominal_range" in t:
        kw["nominal_range"] = _nominal_range(ctx, t["nominal_range"], kw.get("nominal_shift"),
                                             by_name)
    return {"tolerances": ToleranceSettings(**kw)}


def _parameter_name(ctx: Context, name: Any, path: str, by_name: dict[str, Parameter]) -> str:
    if not isinstance(name, str) or name not in by_name:
        hint = suggest(name, by_name) if isinstance(name, str) else ""
        raise ctx.error(path, f"unknown parameter {show(name)}; {hint}valid (uncertain "
                        f"parameters): {', '.join(by_name) or 'none'}")
    return name


def _nominal_range(ctx: Context, raw: Any, name: str | None,
                   by_name: dict[str, Parameter]) -> tuple[float, float]:
    path = "tolerances.nominal_range"
    if name is None:
        raise ctx.error(path, "needs tolerances.nominal_shift (the parameter whose nominal is "
                        "searched)")
    if not isinstance(raw, list) or len(raw) != 2:
        raise ctx.error(path, f"expected a list [low, high] of two values, got {show(raw)}")
    p = by_name[name]
    lo, hi = (cv.fixed(ctx, v, join(path, i), p.spec) for i, v in enumerate(raw))
    nominal = p.distribution.nominal
    if not lo.si < hi.si:
        raise ctx.error(path, f"low must be below high, got [{lo.text}, {hi.text}]")
    if not lo.si <= nominal <= hi.si:
        raise ctx.error(path, f"[{lo.text}, {hi.text}] must contain the current nominal "
                        f"{p.format(nominal)} of {name!r}")
    return lo.si, hi.si


# ----------------------------------------------------------------------------------------------
# [compute]
# ----------------------------------------------------------------------------------------------

_COMPUTE_KEYS = ("workers", "scheduler", "store")


def _parse_compute(ctx: Context, raw: Any, parsed: dict) -> dict:
    """The optional ``[compute]`` section: where chunks are solved and stored."""
    if raw is None:
        return {}
    t = cv.table(ctx, raw, "compute", "[compute]")
    cv.check_keys(ctx, t, "compute", _COMPUTE_KEYS)
    kw: dict[str, Any] = {}
    if "workers" in t:
        kw["workers"] = cv.integer(ctx, t["workers"], "compute.workers", minimum=1)
    if "scheduler" in t:
        address = cv.string(ctx, t["scheduler"], "compute.scheduler")
        if not re.fullmatch(r"(tcp|tls|inproc|ucx|ws|wss)://\S+|[\w.\-]+:\d+", address):
            raise ctx.error("compute.scheduler", f"expected a scheduler address such as "
                            f"'tcp://10.0.0.5:8786', got {address!r}")
        kw["scheduler"] = address
    if "store" in t:
        kw["store"] = cv.string(ctx, t["store"], "compute.store")
    return {"compute": ComputeOptions(**kw)}


# ----------------------------------------------------------------------------------------------
# [screening]
# ----------------------------------------------------------------------------------------------

_SCREENING_KEYS = ("trajectories", "levels", "threshold", "keep")


def _parse_screening(ctx: Context, raw: Any, parsed: dict) -> dict:
    """The optional ``[screening]`` section: Morris first, then the study's method."""
    if raw is None:
        return {"screening": None}
    t = cv.table(ctx, raw, "screening", "[screening]")
    cv.check_keys(ctx, t, "screening", _SCREENING_KEYS, required=("trajectories",))
    method = parsed["analysis"].method
    if method == "morris":
        raise ctx.error("screening", "method = 'morris' is a screening already; remove "
                        "[screening] (it screens before a 'saltelli' or 'pce' study)")
    by_name = {p.name: p for p in parsed["parameters"]}
    kw: dict[str, Any] = {"trajectories": cv.integer(ctx, t["trajectories"],
                                                     "screening.trajectories",
                                                     minimum=MIN_SAMPLES)}
    if "levels" in t:
        kw["levels"] = levels_value(ctx, t["levels"], "screening.levels")
    if "threshold" in t:
        kw["threshold"] = cv.number(ctx, t["threshold"], "screening.threshold", 0.0, 1.0)
    if "keep" in t:
        keep = t["keep"]
        if not isinstance(keep, list):
            raise ctx.error("screening.keep", f"expected a list of parameter names, got "
                            f"{show(keep)}")
        kw["keep"] = tuple(_parameter_name(ctx, n, join("screening.keep", i), by_name)
                           for i, n in enumerate(keep))
    return {"screening": ScreeningSettings(**kw)}


SECTIONS: dict[str, Parser] = {
    "study": _parse_study_section,
    "model": _parse_model_section,
    "hot_side": _side_parser("hot_side", HOT_SIDE_KINDS),
    "layer": _parse_layers,
    "cold_side": _side_parser("cold_side", COLD_SIDE_KINDS),
    "scenarios": _parse_scenarios,
    "tolerances": _parse_tolerances,
    "screening": _parse_screening,
    "compute": _parse_compute,
}
"""Top-level sections in parse order: name → parser returning :class:`Study` fields."""


# ----------------------------------------------------------------------------------------------
# Rules spanning sections
# ----------------------------------------------------------------------------------------------


def stack_key_path(err: StackError) -> str:
    """Config key path of a :class:`plyrisk.models.stack.StackError`, e.g.
    ``layer[2].thickness``."""
    if err.side is not None:
        return f"{err.side}.{err.quantity}" if err.quantity else err.side
    if err.index is not None:
        return f"layer[{err.index}]" + (f".{err.quantity}" if err.quantity else "")
    return "layer"


def _check_study(ctx: Context, study: Study) -> None:
    try:
        validate_stack(study.layers, study.hot_side, study.cold_side)
    except StackError as err:
        raise ctx.error(stack_key_path(err), str(err)) from None
    _check_support(ctx, study)
    if study.analysis.outputs:
        valid = ("heat_flux", *_interface_names(study))
        for i, name in enumerate(study.analysis.outputs):
            if name not in valid:
                raise ctx.error(
                    join("study.outputs", i),
                    f"unknown output {name!r}; {suggest(name, valid)}valid: "
                    f"{', '.join(repr(v) for v in valid)}",
                )


def require_runnable(study: Study) -> None:
    """Check what a run needs beyond a valid config (``check`` accepts such studies).

    Raises
    ------
    ConfigError
        When there is no uncertain parameter to propagate, or ``lhs_optimization = "lloyd"``
        has fewer than two.
    """
    ctx = Context(study.source)
    d = len(study.parameters)
    if d == 0:
        raise ctx.error("study.method", f"method {study.analysis.method!r} needs at least one "
                        "uncertain parameter; every input is fixed")
    if study.screening is not None and d < 2:
        raise ctx.error("screening", f"screening needs at least 2 uncertain parameters, got "
                        f"{d}; remove [screening]")
    if study.analysis.lhs_optimization == "lloyd" and d < 2:
        raise ctx.error("study.lhs_optimization", f"'lloyd' needs at least 2 uncertain "
                        f"parameters, got {d}; use 'random-cd' or 'none'")


def _check_support(ctx: Context, study: Study) -> None:
    """Validate the stack with every parameter near both ends of its distribution."""
    if not study.parameters:
        return
    u = np.array([1e-9, 1.0 - 1e-9])
    values = {p.name: np.asarray(p.distribution.ppf(u), dtype=float) for p in study.parameters}
    layers, hot, cold = assemble(study, values)
    try:
        validate_stack(layers, hot, cold)
    except StackError as err:
        raise ctx.error(stack_key_path(err), f"the distribution reaches invalid values: {err}"
                        ) from None


def _interface_names(study: Study) -> tuple[str, ...]:
    """Face names as the solver labels them, for the nominal stack."""
    from plyrisk.models.network import interface_names

    return interface_names(study.layers, study.cold_side)


def override(study: Study, *, samples: int | None = None, seed: int | None = None,
             method: str | None = None) -> Study:
    """The study with command-line overrides of the sample count, seed and method applied.

    Parameters
    ----------
    study
        The parsed study [-].
    samples
        Sample count (saltelli: base rows; pce: samples; morris: trajectories) [-].
    seed
        Seed [-].
    method
        ``"saltelli"``, ``"pce"`` or ``"morris"``; a pce study keeps its ``design``, another
        method switching to pce gets the default design [-].

    Returns
    -------
    Study
        A new study; the original when nothing is overridden.

    Raises
    ------
    ValueError
        One line naming the option and what was expected.
    """
    a = study.analysis
    changes: dict[str, Any] = {}
    if method is not None and method != a.method:
        if method in RENAMED_METHODS:
            raise ValueError(f'--method: "{method}" {RENAMED_METHODS[method]}')
        if method not in METHODS:
            raise ValueError(f"--method: unknown method {method!r}; valid: {', '.join(METHODS)}")
        design = design_of(method)
        if a.lhs_optimization is not None and design != "lhs":
            raise ValueError(f"--method {method}: the config's study.lhs_optimization applies "
                             "to method = pce with design = lhs only; remove it from the config")
        if method == "morris" and study.screening is not None:
            raise ValueError("--method morris: the config has a [screening] section, which "
                             "screens before a saltelli or pce study; remove it")
        changes.update(method=method, design=design)
    if samples is not None:
        changes["samples"] = int(samples)
    if seed is not None:
        check_seed(seed, "--seed")
        changes["seed"] = int(seed)
    if not changes:
        return study
    new = replace(a, **changes)
    n = new.samples
    if n < MIN_SAMPLES:
        raise ValueError(f"--samples must be at least {MIN_SAMPLES}, got {n}")
    if new.design == "sobol" and n & (n - 1):
        lo = 1 << (n.bit_length() - 1)
        what = "method = saltelli" if new.method == "saltelli" else "design = sobol"
        where = f"--samples {n}" if samples is not None else f"study.samples = {n}"
        raise ValueError(f"{where}: {what} needs a power of two (e.g. {lo} or {2 * lo})")
    return replace(study, analysis=new)
