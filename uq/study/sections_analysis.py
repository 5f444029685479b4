"""Config sections that say how a study is analysed and run: ``[study]``, ``[model]``,
``[screening]``, ``[tolerances]``, ``[compute]``, ``[report]``.

Each parser reads its raw TOML value and returns fields of
:class:`~plyrisk.study.definition.Study` (see :mod:`plyrisk.study.config`).
"""

from __future__ import annotations

import re
from dataclasses import fields
from typing import Any

from plyrisk.methods import METHODS, RENAMED_METHODS, Method
from plyrisk.study import values as cv
from plyrisk.study.definition import Analysis, ComputeOptions, ModelOptions, Parameter
from plyrisk.study.settings import (
    BASES,
    REPORT_FORMATS,
    ScreeningSettings,
    ToleranceSettings,
    report_formats_error,
)
from plyrisk.study.settings import DESIGNS as TOLERANCE_DESIGNS
from plyrisk.study.targets import limit_quantity, parse_target
from plyrisk.study.units import TEMPERATURE, TEMPERATURE_DIFFERENCE, Parsed
from plyrisk.study.values import Context, join, show, suggest

RADIATION = ("exact", "linearized")
LHS_OPTIMIZATIONS = ("none", "random-cd", "lloyd")
PRIMARY_OUTPUT = "inner_surface_temperature"
MAX_SEED = 2**64 - 1
"""Largest seed of ``[study]`` and ``[tolerances]``: seeds are stored as unsigned 64-bit
integers in ``results.nc`` (``--seed`` is checked against the same bound)."""


# ----------------------------------------------------------------------------------------------
# [study]
# ----------------------------------------------------------------------------------------------

_STUDY_REQUIRED = ("title", "method", "samples", "seed", "limit")
_STUDY_OPTIONAL = (
    "percentiles", "confidence", "bootstrap", "index_ci_threshold", "chunk_size",
    "lhs_optimization", "outputs", "design", "levels", "screening_threshold",
    "pce_max_loo_error", "replicates", "permutations", "limit_output", "criterion",
)  # fmt: skip
_TRANSIENT_OPTIONAL = ("acceptable_burn_probability",)
TRANSIENT_CHUNK_SIZE = 1024
"""Default ``study.chunk_size`` of a transient study: a chunk keeps its samples' histories
(``face_temperature`` is samples x times x faces, about 12 MB for 1024 samples of 241 times
and 6 faces), so chunks stay small enough for bounded memory; local workers share a chunk as
threads of the compiled time loop, so a chunk need not be small for them [-]."""
TRANSIENT_TEMPERATURE_UNIT = "degC"
"""Display unit of temperatures in a transient study (which has no ``limit`` to take it from)."""


def _method(ctx: Context, raw: Any) -> Method:
    if isinstance(raw, str) and raw in RENAMED_METHODS:
        raise ctx.error("study.method", f'"{raw}" {RENAMED_METHODS[raw]}')
    return METHODS[cv.choice(ctx, raw, "study.method", tuple(METHODS), "method")]


def check_dependence(ctx: Context, method: Method) -> None:
    """Refuse a ``[correlations]`` section unless ``method`` handles dependent inputs."""
    if not method.handles_dependence:
        able = [m.name for m in METHODS.values() if m.handles_dependence]
        raise ctx.error("study.method", f"method {method.name!r} {method.independence}; with "
                        f"[correlations] use method = {able[0]!r} (Shapley effects)")


def _only_for(key: str) -> tuple[Method, ...]:
    """The methods a ``[study]`` key applies to (empty: every method)."""
    return tuple(m for m in METHODS.values() if key in m.only_keys)


def levels_value(ctx: Context, raw: Any, path: str) -> int:
    """Morris grid levels: an even whole number >= 2 [-]."""
    n = cv.integer(ctx, raw, path, minimum=2)
    if n % 2:
        raise ctx.error(path, f"must be even (Morris 1991: an even number of levels with a step "
                        f"of levels / (2 (levels - 1)) samples every level equally), got {n}; "
                        f"use {n - 1} or {n + 1}")
    return n


def parse_study_section(ctx: Context, raw: Any, parsed: dict) -> dict:
    if raw is None:
        raise ctx.error("study", f"missing section [study] ({', '.join(_STUDY_REQUIRED)})")
    t = cv.table(ctx, raw, "study", "[study]")
    transient = bool(parsed.get("_transient"))
    required = tuple(k for k in _STUDY_REQUIRED if k != "limit" or not transient)
    cv.check_keys(ctx, t, "study", (*_STUDY_REQUIRED, *_STUDY_OPTIONAL, *_TRANSIENT_OPTIONAL),
                  required=required)
    extra: dict[str, Any] = {}
    if transient and "limit" in t:
        raise ctx.error("study.limit", "a transient study has no temperature limit; its target "
                        "is study.acceptable_burn_probability (P(second-degree burn) within the "
                        "horizon, default 5 %); remove limit")
    if "acceptable_burn_probability" in t:
        if not transient:
            raise ctx.error("study.acceptable_burn_probability", "applies only to transient "
                            "studies (with an [exposure] section); a steady study's target is "
                            "study.limit")
        from plyrisk.study.sections_transient import probability

        extra["_acceptable_burn_probability"] = probability(
            ctx, t["acceptable_burn_probability"], "study.acceptable_burn_probability")
    title = cv.string(ctx, t["title"], "study.title")
    method = _method(ctx, t["method"])
    if transient and not method.supports_transient:
        raise ctx.error("study.method", f"method {method.name!r} applies to steady studies "
                        "only (a study without [exposure]); use saltelli, pce or morris")
    if parsed.get("_correlated"):  # before the keys of another method, which hide it
        check_dependence(ctx, method)
    for key in t:
        only = _only_for(key)
        if only and method not in only:
            names = " or ".join(f"'{m.name}'" for m in only)
            raise ctx.error(f"study.{key}", f"applies only to method = {names}, not "
                            f"{method.name!r}; remove it")
    design = (cv.choice(ctx, t["design"], "study.design", method.designs, "design")
              if "design" in t else method.default_design)
    limit_output = PRIMARY_OUTPUT
    if "limit_output" in t:
        if transient:
            raise ctx.error("study.limit_output", "applies only to steady studies (a transient "
                            "study's criterion is study.criterion); remove it")
        limit_output = cv.string(ctx, t["limit_output"], "study.limit_output")
    limit = (cv.fixed(ctx, t["limit"], "study.limit", limit_quantity(limit_output))
             if not transient else Parsed(float("nan"), TRANSIENT_TEMPERATURE_UNIT, "none"))
    criterion = ""
    if "criterion" in t:
        criterion = _criterion(ctx, t["criterion"], limit_output, transient)
    replicates = (cv.integer(ctx, t["replicates"], "study.replicates", minimum=2)
                  if "replicates" in t else Analysis.replicates)
    kw: dict[str, Any] = {
        "method": method.name,
        "design": design,
        "samples": _samples(ctx, t["samples"], method, design, replicates),
        "seed": cv.integer(ctx, t["seed"], "study.seed", minimum=0, maximum=MAX_SEED),
        "limit": limit.si,
    }
    if "replicates" in t:
        kw["replicates"] = replicates
    if "permutations" in t:
        kw["permutations"] = cv.integer(ctx, t["permutations"], "study.permutations",
                                        minimum=MIN_SAMPLES)
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
    elif transient:
        kw["chunk_size"] = TRANSIENT_CHUNK_SIZE
    if "lhs_optimization" in t:
        path = "study.lhs_optimization"
        opt = cv.choice(ctx, t["lhs_optimization"], path, LHS_OPTIMIZATIONS, "lhs_optimization")
        if design != "lhs":
            raise ctx.error(path, "applies only to method = 'pce' with design = 'lhs', not "
                            f"method = {method.name!r}"
                            + (f" with design = {design!r}" if len(method.designs) > 1 else "")
                            + "; remove it")
        kw["lhs_optimization"] = None if opt == "none" else opt
    if "outputs" in t:
        kw["outputs"] = _outputs(ctx, t["outputs"], "study.outputs")
    kw["limit_output"] = limit_output
    kw["criterion"] = criterion
    temperature_unit = (limit.unit if limit_quantity(limit_output) is TEMPERATURE
                        else TRANSIENT_TEMPERATURE_UNIT)
    return {"title": title, "analysis": Analysis(**kw), "limit_unit": temperature_unit,
            "limit_output_unit": limit.unit, **extra}


def _criterion(ctx: Context, raw: Any, limit_output: str, transient: bool) -> str:
    """``[study] criterion``: a target (:mod:`plyrisk.study.targets`) of the study's kind."""
    text = cv.string(ctx, raw, "study.criterion")
    try:
        target = parse_target(text, output=limit_output)
    except ValueError as err:
        raise ctx.error("study.criterion", str(err)) from None
    if target.transient and not transient:
        raise ctx.error("study.criterion", f"{target.text!r} is about a transient study's "
                        "event; a steady study's criterion is about its limit output, e.g. "
                        "'P95 <= limit' or 'P(exceed) <= 1 %'")
    if transient and not target.transient:
        raise ctx.error("study.criterion", f"{target.text!r} is about a steady study's limit; "
                        "a transient study's criterion is about an event, e.g. "
                        "'P(second_degree_burn) <= 5 %' or "
                        "'P5(time_to_second_degree_burn) >= 12 s'")
    return target.text


MIN_SAMPLES = 8
"""Fewest samples (Sobol: base rows) a study may ask for: fewer give no usable interval [-]."""


def replicate_rule(samples: int, replicates: int) -> str | None:
    """Why ``samples`` base rows cannot be split into ``replicates`` Saltelli designs of a power
    of 2 base rows each, with the nearest valid counts; ``None`` when they can [-]."""
    per, rest = divmod(samples, replicates)
    if not rest and per >= 2 and not per & (per - 1):
        return None
    low = replicates << max(per.bit_length() - 1, 1)
    near = f"{low} or {2 * low}" if low < samples else f"{low}"
    return (f"must be replicates ({replicates}) x a power of 2 of at least 2 (each "
            f"independently scrambled replicate a Sobol' design of a power of 2 base rows, two "
            f"at least for its estimators), got {samples}; use {near}")


def _samples(ctx: Context, raw: Any, method: Method, design: str, replicates: int) -> int:
    n = cv.integer(ctx, raw, "study.samples", minimum=MIN_SAMPLES)
    if "replicates" in method.only_keys:
        problem = replicate_rule(n, replicates)
        if problem:
            raise ctx.error("study.samples", problem)
        return n
    if design == "sobol" and n & (n - 1):
        low = 1 << (n.bit_length() - 1)
        what = (f"method = '{method.name}'" if len(method.designs) == 1
                else f"design = '{design}'")
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


def parse_model_section(ctx: Context, raw: Any, parsed: dict) -> dict:
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
# [tolerances]
# ----------------------------------------------------------------------------------------------

_TOLERANCE_KEYS = (
    "target", "samples", "design", "method", "seed", "cost", "max_factor", "allow_loosening",
    "keep", "basis", "confidence", "nominal_shift", "nominal_range",
)  # fmt: skip


def parse_tolerances(ctx: Context, raw: Any, parsed: dict) -> dict:
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
    if "method" in t:  # the former name: one word (design) for one concept in every section
        old = t["method"]
        new = f'"{old}"' if isinstance(old, str) else show(old)
        raise ctx.error("tolerances.method", f"is now design = {new} (the same key as [study] "
                        "design)")
    if "design" in t:
        kw["design"] = cv.choice(ctx, t["design"], "tolerances.design", TOLERANCE_DESIGNS,
                                 "design")
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


def parse_compute(ctx: Context, raw: Any, parsed: dict) -> dict:
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
# [report]
# ----------------------------------------------------------------------------------------------

_REPORT_KEYS = ("formats",)


def parse_report(ctx: Context, raw: Any, parsed: dict) -> dict:
    """The optional ``[report]`` section: the figure file formats (PNG always; SVG on request).
    """
    if raw is None:
        return {}
    t = cv.table(ctx, raw, "report", "[report]")
    cv.check_keys(ctx, t, "report", _REPORT_KEYS)
    if "formats" not in t:
        return {}
    problem = report_formats_error(t["formats"])
    if problem is not None:
        raise ctx.error("report.formats", problem)
    order = [f for f in REPORT_FORMATS if f in t["formats"]]   # PNG first, then SVG
    return {"report_formats": tuple(order)}


# ----------------------------------------------------------------------------------------------
# [screening]
# ----------------------------------------------------------------------------------------------

_SCREENING_KEYS = ("trajectories", "levels", "threshold", "keep")


def parse_screening(ctx: Context, raw: Any, parsed: dict) -> dict:
    """The optional ``[screening]`` section: Morris first, then the study's method."""
    if raw is None:
        return {"screening": None}
    t = cv.table(ctx, raw, "screening", "[screening]")
    cv.check_keys(ctx, t, "screening", _SCREENING_KEYS, required=("trajectories",))
    method = METHODS[parsed["analysis"].method]
    if not method.allows_screening:
        allowed = " or ".join(f"'{m.name}'" for m in METHODS.values() if m.allows_screening)
        raise ctx.error("screening", f"method = '{method.name}' {method.no_screening}; remove "
                        f"[screening] (it screens before a {allowed} study)")
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


