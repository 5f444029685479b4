"""Read a study config (TOML) into a validated :class:`~plyrisk.study.definition.Study`, in SI
units.

The parse is organised per top-level section: :data:`SECTIONS` maps each section name, in parse
order, to a function ``parse(ctx, raw, parsed) -> dict`` that reads its raw TOML value
(``None`` when the section is absent) and returns fields of
:class:`~plyrisk.study.definition.Study`; a
returned ``"parameters"`` list is appended to the study's parameters. To add a section (e.g.
``[tolerances]``): write its parser with the helpers of :mod:`plyrisk.study.values` (in
:mod:`plyrisk.study.sections_analysis` for how a study is analysed and run, in
:mod:`plyrisk.study.sections_assembly` for the assembly and its exposure), add it to
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
from collections.abc import Sequence
from dataclasses import replace
from pathlib import Path
from typing import Any

import numpy as np

from plyrisk.errors import ConfigError
from plyrisk.methods import METHODS, get_method
from plyrisk.models.boundary import COLD_SIDE_KINDS, HOT_SIDE_KINDS
from plyrisk.models.stack import Gap, Solid, StackError, validate_stack
from plyrisk.models.wearer import Wearer
from plyrisk.study import values as cv
from plyrisk.study.correlations import parse_correlations
from plyrisk.study.definition import (
    Analysis,
    ModelOptions,
    Parameter,
    Scenarios,
    Study,
    assemble,
)
from plyrisk.study.sections_analysis import (
    MIN_SAMPLES,
    parse_compute,
    parse_model_section,
    parse_report,
    parse_screening,
    parse_study_section,
    parse_tolerances,
    replicate_rule,
)
from plyrisk.study.sections_assembly import Parser, parse_layers, parse_scenarios, side_parser
from plyrisk.study.sections_transient import (
    check_outputs,
    parse_exposure,
    parse_wearer,
    with_layout,
)
from plyrisk.study.values import Context, join, suggest

__all__ = [
    "METHODS",
    "MIN_SAMPLES",
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




def load_study(path: str | Path) -> Study:
    """Read and validate a study config file.

    Parameters
    ----------
    path
        The TOML file.

    Raises
    ------
    ConfigError
        For a missing or unreadable file or any mistake in it.

    Examples
    --------
    >>> import pathlib, tempfile
    >>> from plyrisk.study.config import load_study
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> path = folder / "panel.toml"
    >>> _ = path.write_text('''
    ... [study]
    ... title = "Invented example: one fabric"
    ... method = "saltelli"
    ... samples = 64
    ... seed = 1
    ... limit = "44 degC"
    ... [hot_side]
    ... kind = "flux"
    ... heat_flux = "1 kW/m^2"
    ... [[layer]]
    ... name = "fabric"
    ... kind = "solid"
    ... thickness = "1 mm"
    ... conductivity = { uniform = ["0.04 W/m/K", "0.06 W/m/K"] }
    ... [cold_side]
    ... kind = "temperature"
    ... temperature = "34 degC"
    ... ''')
    >>> load_study(path).parameter_names
    ('fabric.conductivity',)
    >>> load_study(folder / "missing.toml")
    Traceback (most recent call last):
    ...
    plyrisk.errors.ConfigError: .../missing.toml: no such file
    >>> import shutil
    >>> shutil.rmtree(folder)
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
        The TOML document.
    source
        Name shown in error messages.

    Raises
    ------
    ConfigError
        For any mistake, naming ``source`` and the key path.

    Examples
    --------
    An invented study: one fabric over the skin, its thickness 1 mm +- 0.1 mm.

    >>> from plyrisk.study.config import loads_study
    >>> text = '''
    ... [study]
    ... title = "Invented example: one fabric over the skin"
    ... method = "saltelli"
    ... samples = 64
    ... seed = 1
    ... limit = "44 degC"
    ...
    ... [hot_side]
    ... kind = "flux"
    ... heat_flux = "1 kW/m^2"
    ...
    ... [[layer]]
    ... name = "fabric"
    ... kind = "solid"
    ... thickness = { nominal = "1 mm", tolerance = "0.1 mm" }
    ... conductivity = "0.05 W/m/K"
    ...
    ... [cold_side]
    ... kind = "temperature"
    ... temperature = "34 degC"
    ... '''
    >>> study = loads_study(text, source="example.toml")
    >>> study.parameter_names
    ('fabric.thickness',)
    >>> round(study.analysis.limit, 6), study.limit_unit
    (317.15, 'degC')

    Mistakes are one-line errors naming the source and the key path:

    >>> loads_study(text.replace('"0.05 W/m/K"', '"0.05 W/m"'), source="example.toml")
    Traceback (most recent call last):
    ...
    plyrisk.errors.ConfigError: example.toml: layer[0].conductivity: unit 'W/m' has dimension ...
    """
    ctx = Context(source)
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as err:
        msg = str(err)
        where = re.search(r"\(at line (\d+), column (\d+)\)", msg)
        path = f"line {where.group(1)}, column {where.group(2)}" if where else "end of file"
        msg = re.sub(r"\s*\(at (line \d+, column \d+|end of document)\)", "", msg)
        if where and msg.lower().startswith("invalid value"):
            # the usual cause: a word or a quantity without quotes (kind = gap)
            lines = text.splitlines()
            row = lines[int(where.group(1)) - 1] if int(where.group(1)) <= len(lines) else ""
            key = row.split("=", 1)[0].strip() if "=" in row else ""
            msg += (f" for {key!r}" if key else "") + ("; words and quantities need quotes, "
                                                       'e.g. kind = "gap", thickness = "0.7 mm"')
        raise ConfigError(source, path, f"invalid TOML: {msg}") from None
    cv.check_keys(ctx, data, cv.TOP, SECTIONS, what="section")
    parsed: dict[str, Any] = {"source": source, "text": text, "parameters": [],
                              "_transient": "exposure" in data,
                              "_correlated": "correlations" in data}
    for name, parse in SECTIONS.items():
        for key, value in parse(ctx, data.get(name), parsed).items():
            if key == "parameters":
                parsed["parameters"].extend(value)
            else:
                parsed[key] = value
    parsed["parameters"] = tuple(parsed["parameters"])
    study = Study(**{k: v for k, v in parsed.items() if not k.startswith("_")})
    _check_study(ctx, study)
    if study.transient is not None:
        study = with_layout(study)
    return study


SECTIONS: dict[str, Parser] = {
    "study": parse_study_section,
    "model": parse_model_section,
    "exposure": parse_exposure,
    "hot_side": side_parser("hot_side", HOT_SIDE_KINDS),
    "layer": parse_layers,
    "wearer": parse_wearer,
    "cold_side": side_parser("cold_side", COLD_SIDE_KINDS),
    "scenarios": parse_scenarios,
    "tolerances": parse_tolerances,
    "screening": parse_screening,
    "compute": parse_compute,
    "correlations": parse_correlations,
    "report": parse_report,
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
    if study.transient is not None:
        _check_transient(ctx, study)
        return
    try:
        validate_stack(study.layers, *study.steady_sides())
    except StackError as err:
        raise ctx.error(stack_key_path(err), str(err)) from None
    _check_support(ctx, study)
    limit_output = study.analysis.limit_output
    if limit_output not in ("inner_surface_temperature", "heat_flux"):
        faces = _interface_names(study)
        if limit_output not in faces:
            valid = ("inner_surface_temperature", "heat_flux", *faces)
            raise ctx.error("study.limit_output", f"unknown output {limit_output!r}; "
                            f"{suggest(limit_output, valid)}valid: "
                            f"{', '.join(repr(v) for v in valid)}")
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


def _check_transient(ctx: Context, study: Study) -> None:
    """Rules of a transient study spanning sections: the layers, the wearer, the supports."""
    assert study.transient is not None, "called for a transient study"
    check_transient_models(ctx, study.layers, study.transient.wearer)
    if study.parameters:
        u = np.array([1e-9, 1.0 - 1e-9])
        values = {p.name: np.asarray(p.distribution.ppf(u), dtype=float)
                  for p in study.parameters}
        layers, _, wearer = assemble(study, values)
        check_transient_models(ctx, layers, wearer, prefix="the distribution reaches invalid "
                               "values: ")
    check_outputs(ctx, study.analysis.outputs)


def check_transient_models(ctx: Context, layers: Sequence[Solid | Gap], wearer: Wearer, *,
                           prefix: str = "") -> None:
    """Validate the layers and wearer of a transient study, as one-line config errors.

    Parameters
    ----------
    ctx
        The config [-].
    layers, wearer
        Model objects (nominal, or sampled values) [-].
    prefix
        Text put before the model's message [-].
    """
    from plyrisk.models.skin import SkinPropertyError
    from plyrisk.models.transient import validate_transient_stack
    from plyrisk.models.wearer import check_wearer

    try:
        check_wearer(wearer)
    except SkinPropertyError as err:
        path = ".".join(x for x in ("wearer", err.layer, err.quantity) if x)
        raise ctx.error(path, f"{prefix}{err}") from None
    except ValueError as err:
        quantity = getattr(err, "quantity", None)
        raise ctx.error(f"wearer.{quantity}" if quantity else "wearer", f"{prefix}{err}"
                        ) from None
    try:
        validate_transient_stack(list(layers), wearer)
    except StackError as err:
        raise ctx.error(stack_key_path(err), f"{prefix}{err}") from None
    if (not prefix and layers and isinstance(layers[-1], Gap)
            and getattr(wearer, "contact_resistance", None) is not None):
        # nothing given is silently ignored: behind a gap the wearer touches no layer
        raise ctx.error("wearer.contact_resistance", f"applies only when the last layer (a "
                        f"solid) touches the wearer, but the last layer {layers[-1].name!r} is "
                        "a gap; remove it (the gap's conduction and radiation reach the wearer)")


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

    return interface_names(study.layers, study.steady_sides()[1])


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
        try:
            chosen = get_method(method)
        except ValueError as err:
            raise ValueError(f"--method: {err}") from None
        design = chosen.default_design
        if study.correlations is not None and not chosen.handles_dependence:
            raise ValueError(f"--method {method}: the config has a [correlations] section and "
                             f"method {method!r} {chosen.independence}; use a method for "
                             "dependent inputs (shapley)")
        if a.lhs_optimization is not None and design != "lhs":
            raise ValueError(f"--method {method}: the config's study.lhs_optimization applies "
                             "to method = pce with design = lhs only; remove it from the config")
        if not chosen.allows_screening and study.screening is not None:
            allowed = " or ".join(m.name for m in METHODS.values() if m.allows_screening)
            raise ValueError(f"--method {method}: the config has a [screening] section, which "
                             f"screens before a {allowed} study (method {method!r} "
                             f"{chosen.no_screening}); remove it")
        changes.update(method=method, design=design)
    if samples is not None:
        changes["samples"] = int(samples)
    if seed is not None:
        changes["seed"] = int(seed)
    if not changes:
        return study
    new = replace(a, **changes)
    n = new.samples
    if n < MIN_SAMPLES:
        raise ValueError(f"--samples must be at least {MIN_SAMPLES}, got {n}")
    if "replicates" in METHODS[new.method].only_keys:
        problem = replicate_rule(n, new.replicates)
        if problem:
            where = f"--samples {n}" if samples is not None else f"study.samples = {n}"
            raise ValueError(f"{where}: {problem}")
    elif new.design == "sobol" and n & (n - 1):
        lo = 1 << (n.bit_length() - 1)
        what = (f"method = {new.method}" if len(METHODS[new.method].designs) == 1
                else "design = sobol")
        where = f"--samples {n}" if samples is not None else f"study.samples = {n}"
        raise ValueError(f"{where}: {what} needs a power of two (e.g. {lo} or {2 * lo})")
    return replace(study, analysis=new)
