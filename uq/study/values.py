"""Reading values out of a parsed TOML config, each mistake a one-line :class:`ConfigError`.

The toolkit the section parsers of :mod:`plyrisk.study.config` are written with: key checks with
suggestions, plain values (choices, integers, fractions, strings), quantities with units, and
the distribution tables of uncertain quantities (see ``docs/config.md``). Every function takes
a :class:`Context` (the file name) and the key path of the value it reads.
"""

from __future__ import annotations

import difflib
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, replace
from typing import Any

import numpy as np

from plyrisk.errors import ConfigError
from plyrisk.study import distributions
from plyrisk.study.distributions import Bounds, Distribution, make_distribution
from plyrisk.study.units import DIMENSIONLESS, Parsed, QuantitySpec, UnitError, parse_value

TOP = "(top level)"
"""Key path shown for a problem with the top-level sections."""


@dataclass(frozen=True)
class Context:
    """Where the config came from, for error messages."""

    source: str

    def error(self, path: str, message: str) -> ConfigError:
        """A :class:`ConfigError` for the value at ``path``."""
        return ConfigError(self.source, path, message)


def join(path: str, key: str | int) -> str:
    """Key path of ``key`` inside ``path``: ``layer`` + 2 → ``layer[2]``."""
    if isinstance(key, int):
        return f"{path}[{key}]"
    return f"{path}.{key}" if path and path != TOP else key


def suggest(key: str, valid: Iterable[str]) -> str:
    """``"did you mean 'x'? "`` for the closest valid name, or ``""``."""
    close = difflib.get_close_matches(str(key), list(valid), n=1, cutoff=0.6)
    return f"did you mean {close[0]!r}? " if close else ""


def show(value: Any) -> str:
    """A short description of a raw TOML value for messages."""
    if isinstance(value, dict):
        return f"a table (keys: {', '.join(map(str, value)) or 'none'})"
    if isinstance(value, list):
        return f"a list {value!r}"
    return repr(value)


def check_keys(
    ctx: Context,
    table: dict,
    path: str,
    valid: Iterable[str],
    *,
    required: Iterable[str] = (),
    what: str = "key",
) -> None:
    """Reject unknown keys (suggesting the closest valid one) and missing required keys."""
    valid = list(valid)
    for key in table:
        if key not in valid:
            raise ctx.error(
                path, f"unknown {what} {key!r}; {suggest(key, valid)}valid: {', '.join(valid)}"
            )
    for key in required:
        if key not in table:
            raise ctx.error(path, f"missing key {key!r}")


def table(ctx: Context, raw: Any, path: str, hint: str) -> dict:
    """``raw`` if it is a TOML table, else an error naming ``hint`` (e.g. ``"[study]"``)."""
    if not isinstance(raw, dict):
        raise ctx.error(path, f"expected a table {hint}, got {show(raw)}")
    return raw


def choice(ctx: Context, raw: Any, path: str, valid: Iterable[str], what: str) -> str:
    """One of the strings ``valid``."""
    valid = list(valid)
    if not isinstance(raw, str) or raw not in valid:
        hint = suggest(raw, valid) if isinstance(raw, str) else ""
        raise ctx.error(path, f"unknown {what} {show(raw)}; {hint}valid: {', '.join(valid)}")
    return raw


def integer(ctx: Context, raw: Any, path: str, *, minimum: int,
            maximum: int | None = None) -> int:
    """A whole number ``>= minimum`` (and ``<= maximum`` when given)."""
    if isinstance(raw, bool) or not isinstance(raw, int):
        raise ctx.error(path, f"expected a whole number >= {minimum}, got {show(raw)}")
    if raw < minimum:
        raise ctx.error(path, f"must be at least {minimum}, got {raw}")
    if maximum is not None and raw > maximum:
        raise ctx.error(path, f"must be at most {maximum}, got {raw}")
    return raw


def number(ctx: Context, raw: Any, path: str, lo: float, hi: float) -> float:
    """A plain number strictly between ``lo`` and ``hi``."""
    if isinstance(raw, bool) or not isinstance(raw, int | float) or not lo < raw < hi:
        raise ctx.error(
            path, f"expected a number between {lo:g} and {hi:g} (exclusive), got {show(raw)}"
        )
    return float(raw)


def string(ctx: Context, raw: Any, path: str) -> str:
    """A non-empty string."""
    if not isinstance(raw, str) or not raw.strip():
        raise ctx.error(path, f"expected a non-empty string, got {show(raw)}")
    return raw


def boolean(ctx: Context, raw: Any, path: str) -> bool:
    """``true`` or ``false``."""
    if not isinstance(raw, bool):
        raise ctx.error(path, f"expected true or false, got {show(raw)}")
    return raw


def parse(
    ctx: Context, raw: Any, path: str, spec: QuantitySpec, *, difference: bool = False
) -> Parsed:
    """A number with a unit (see :func:`plyrisk.study.units.parse_value`), no bounds check."""
    try:
        return parse_value(raw, spec, difference=difference)
    except UnitError as err:
        raise ctx.error(path, str(err)) from None


def check_range(
    ctx: Context, p: Parsed, path: str, spec: QuantitySpec, *, touch: bool = False
) -> None:
    """Physical bounds of ``spec``; ``touch`` lets a support end equal an open bound."""
    closed = replace(spec, lower_open=False, upper_open=False) if touch else spec
    if not closed.within(p.si):
        raise ctx.error(path, f"must be {spec.bounds_text()}, got {p.text}")


def fixed(ctx: Context, raw: Any, path: str, spec: QuantitySpec) -> Parsed:
    """A fixed number with a unit, inside the physical bounds."""
    p = parse(ctx, raw, path, spec)
    check_range(ctx, p, path, spec)
    return p


# ----------------------------------------------------------------------------------------------
# Uncertain quantities: distribution tables
# ----------------------------------------------------------------------------------------------

ROLES = {
    # value: a value of the quantity; end: a support end (may touch an open bound);
    # spread: a positive difference in the quantity's unit; others: dimensionless
    "mean": "value", "median": "value", "mode": "value", "nominal": "value",
    "low": "end", "high": "end",
    "sd": "spread", "tolerance": "spread", "upper": "spread", "lower": "spread",
    "gsd": "gsd", "cv": "positive", "a": "positive", "b": "positive", "coverage": "positive",
}  # fmt: skip

FORMS = {kind: forms for kind, forms in distributions.FORMS.items() if kind != "fixed"}
"""Distribution forms a config may write (a fixed value is written as a plain value)."""
LIST_FORMS = ("uniform", "triangular")
DISTRIBUTIONS = tuple(k for k in FORMS if k != "tolerance")
"""Distribution names of a ``{name = ...}`` table; the tolerance form has no name."""


@dataclass(frozen=True)
class Quantity:
    """A parsed numeric config value.

    Parameters
    ----------
    nominal
        The fixed value, or the distribution's nominal [SI].
    distribution
        ``None`` for a fixed value.
    unit
        The user's unit text, ``""`` for dimensionless.
    """

    nominal: float
    distribution: Distribution | None
    unit: str


def quantity(ctx: Context, raw: Any, path: str, spec: QuantitySpec) -> Quantity:
    """A fixed value or a distribution table of the quantity ``spec``."""
    if not isinstance(raw, dict):
        p = fixed(ctx, raw, path, spec)
        return Quantity(p.si, None, p.unit)
    raw = dict(raw)
    accept_cut = boolean(ctx, raw.pop("truncated"), join(path, "truncated")) \
        if "truncated" in raw else False
    if "nominal" in raw:
        kind, params, ppath = "tolerance", raw, path
    else:
        if len(raw) != 1:
            raise ctx.error(
                path,
                f"expected a distribution table with one key ({', '.join(DISTRIBUTIONS)}) or "
                f"{{nominal, tolerance}}, got {show(raw)}",
            )
        ((kind, params),) = raw.items()
        if kind not in DISTRIBUTIONS:
            raise ctx.error(
                path,
                f"unknown distribution {kind!r}; {suggest(kind, DISTRIBUTIONS)}valid: "
                f"{', '.join(DISTRIBUTIONS)}, or {{nominal = ..., tolerance = ...}}",
            )
        ppath = join(path, kind)
    params = _params(ctx, kind, params, ppath)
    parsed = {k: _role(ctx, k, v, join(ppath, k), spec) for k, v in params.items()}
    _relations(ctx, kind, parsed, ppath, spec)
    bounds = Bounds(
        spec.lower,
        spec.upper,
        lower_closed=not spec.lower_open,
        upper_closed=not spec.upper_open,
    )
    try:
        dist = make_distribution(kind, {k: p.si for k, p in parsed.items()}, bounds=bounds)
    except ValueError as err:
        raise ctx.error(ppath, f"{err} (SI units)") from None
    unit = next((p.unit for k, p in parsed.items() if ROLES[k] in ("value", "end")), "")
    if dist.truncated_mass > TRUNCATION_ERROR and not accept_cut:
        raise ctx.error(
            path, f"the physical bounds cut {100 * dist.truncated_mass:.3g} % of this "
            f"distribution's mass (more than {100 * TRUNCATION_ERROR:g} %), so the values "
            "sampled differ much from the distribution written; narrow it, or add "
            "truncated = true to its table to accept the cut")
    return Quantity(float(dist.nominal), dist, unit)


TRUNCATION_WARNING = 0.01
"""Share of a distribution's mass cut by the physical bounds above which ``run`` and ``check``
warn."""

TRUNCATION_ERROR = 0.20
"""Share above which the config is refused unless its table says ``truncated = true``."""


def forms_text(kind: str) -> str:
    """The accepted parameter sets of a kind, e.g. ``"{median, gsd} or {mean, cv}"``."""
    if kind in LIST_FORMS:
        return "[" + ", ".join(FORMS[kind][0][0]) + "]"
    parts = []
    for req, opt in FORMS[kind]:
        parts.append("{" + ", ".join([*req, *(f"{k}?" for k in opt)]) + "}")
    return " or ".join(parts)


def _params(ctx: Context, kind: str, params: Any, path: str) -> dict:
    forms = FORMS[kind]
    if kind in LIST_FORMS:
        names = forms[0][0]
        if not isinstance(params, list) or len(params) != len(names):
            raise ctx.error(path, f"expected a list {forms_text(kind)}, got {show(params)}")
        return dict(zip(names, params, strict=True))
    if not isinstance(params, dict):
        raise ctx.error(path, f"expected a table {forms_text(kind)}, got {show(params)}")
    check_keys(ctx, params, path, dict.fromkeys(k for req, opt in forms for k in (*req, *opt)))
    for req, opt in forms:
        if set(req) <= set(params) <= set(req) | set(opt):
            return params
    raise ctx.error(path, f"{kind} needs {forms_text(kind)}, got {show(params)}")


def _role(ctx: Context, key: str, raw: Any, path: str, spec: QuantitySpec) -> Parsed:
    role = ROLES[key]
    if role in ("gsd", "positive"):
        p = parse(ctx, raw, path, DIMENSIONLESS)
        least = 1.0 if role == "gsd" else 0.0
        if not p.si > least:
            raise ctx.error(path, f"must be greater than {least:g}, got {p.text}")
        return p
    if role == "spread":
        p = parse(ctx, raw, path, spec, difference=True)
        if not (p.si > 0 and np.isfinite(p.si)):
            raise ctx.error(path, f"must be positive (a spread), got {p.text}")
        return p
    p = parse(ctx, raw, path, spec)
    check_range(ctx, p, path, spec, touch=role == "end")
    return p


def _relations(
    ctx: Context, kind: str, p: dict[str, Parsed], path: str, spec: QuantitySpec
) -> None:
    if "low" in p and "high" in p and not p["low"].si < p["high"].si:
        raise ctx.error(
            path, f"low must be below high, got low = {p['low'].text}, high = {p['high'].text}"
        )
    if kind == "triangular" and not p["low"].si <= p["mode"].si <= p["high"].si:
        raise ctx.error(
            path, f"mode {p['mode'].text} must lie between low {p['low'].text} and high "
            f"{p['high'].text}"
        )
    if kind == "beta" and not spec.dimensionless and ("low" not in p or "high" not in p):
        raise ctx.error(
            path, f"beta of {spec.what} needs low and high (the default 0 to 1 applies only to "
            "dimensionless quantities)"
        )
    if kind == "tolerance":
        sides = (("lower", -1.0), ("upper", 1.0)) if "upper" in p else (("tolerance", -1.0),
                                                                          ("tolerance", 1.0))
        for key, sign in sides:
            edge = p["nominal"].si + sign * p[key].si
            if not spec.within(edge):
                band = f"{p['nominal'].text} {'-' if sign < 0 else '+'} {p[key].text}"
                raise ctx.error(
                    join(path, key),
                    f"the tolerance band {band} leaves the physical range ({spec.what} must be "
                    f"{spec.bounds_text()}): tolerance larger than the nominal allows",
                )


def truncation_warnings(parameters: Sequence[Any]) -> list[str]:
    """One warning per uncertain parameter whose distribution loses more than
    :data:`TRUNCATION_WARNING` of its mass to the physical bounds.

    Parameters
    ----------
    parameters
        The study's :class:`plyrisk.study.definition.Parameter` objects.
    """
    out = []
    for p in parameters:
        d = p.distribution
        if d is None or d.truncated_mass <= TRUNCATION_WARNING:
            continue
        accepted = d.truncated_mass > TRUNCATION_ERROR  # only when the config accepted it
        out.append(
            f"WARNING: {p.name}: {p.truncation()}; the values sampled follow the cut "
            f"distribution (mean {p.format(d.mean)}, not the {p.format(d.nominal)} written)"
            + (" — accepted with truncated = true" if accepted else ""))
    return out
