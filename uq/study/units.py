"""Units at the edge: parse the user's quantity strings to SI and convert SI results back.

One module-level :data:`ureg` (a :class:`pint.UnitRegistry`) serves the whole package. A config
value is a string ``"<number> <unit>"`` (``"0.5 mm"``, ``"8 kW/m^2"``, ``"34 degC"``) or, for a
dimensionless quantity only, a bare number. Every quantity the model knows has a
:class:`QuantitySpec` in :data:`QUANTITIES`: its dimension, its SI unit and its physical bounds.

Temperatures need care: a temperature *level* in ``degC`` carries an offset (``34 degC`` is
307.15 K) while a temperature *difference* (a spread such as a standard deviation or a
tolerance) does not (``2 degC`` of spread is 2 K). Functions here take ``difference=True`` for
the latter; a lone offset unit (``degC``, ``degF``) is then read as its ``delta_`` unit.
"""

from __future__ import annotations

import math
import re
import sys
from dataclasses import dataclass
from types import ModuleType
from typing import TYPE_CHECKING

import numpy as np
from numpy.typing import ArrayLike

from plyrisk.errors import PlyriskError


def _import_pint_without_dask() -> ModuleType:
    """Import pint without its dask integration.

    pint imports ``dask.base`` at import time whenever dask is installed (for quantities that
    wrap dask arrays, which plyrisk never makes); that alone costs about a third of a second
    and most of the memory of ``plyrisk check``. A ``None`` entry in ``sys.modules`` makes
    ``importlib.util.find_spec("dask")`` report it absent while pint is imported; the entry is
    removed straight after, so dask imports normally later.
    """
    if "pint" in sys.modules or "dask" in sys.modules:
        import pint

        return pint
    sys.modules["dask"] = None  # type: ignore[assignment]
    try:
        import pint
    finally:
        del sys.modules["dask"]
    return pint


if TYPE_CHECKING:  # pragma: no cover - type checkers see the module itself
    import pint
else:
    pint = _import_pint_without_dask()

def _registry() -> pint.UnitRegistry:
    """pint's registry, its parsed definitions cached in the user's cache folder (pint's own
    cache, like matplotlib's font cache: 0.02 s instead of 0.17 s at every start), or without
    the cache where that folder cannot be used."""
    try:
        return pint.UnitRegistry(cache_folder=":auto:")
    except Exception:  # e.g. a read-only home: the same registry, parsed anew
        return pint.UnitRegistry()


ureg: pint.UnitRegistry = _registry()
"""The one unit registry of plyrisk."""

_EXPONENT = re.compile(r"(?<=[A-Za-z])(-?\d+)(?![\w.])")
_NUMBER = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(.*?)\s*$")


class UnitError(PlyriskError, ValueError):
    """A value that is not a number with a suitable unit; the message has no key path."""


@dataclass(frozen=True)
class QuantitySpec:
    """Dimension, SI unit and physical bounds of one kind of model quantity.

    Parameters
    ----------
    what
        Description used in error messages, e.g. ``"a length"``.
    si_unit
        The SI unit values are converted to, as a pint unit string.
    example
        An example value with a unit, for error messages.
    lower, upper
        Physical bounds, in ``si_unit``.
    lower_open, upper_open
        Whether the bound itself is excluded.
    level
        A temperature level (offset units such as degC apply), not a difference.
    """

    what: str
    si_unit: str
    example: str
    lower: float = -math.inf
    upper: float = math.inf
    lower_open: bool = True
    upper_open: bool = True
    level: bool = False

    @property
    def dimensionless(self) -> bool:
        """True for a quantity that may be given as a bare number."""
        return self.si_unit == ""

    @property
    def is_temperature(self) -> bool:
        """True for a temperature level (offset units apply)."""
        return self.level

    def bounds_text(self) -> str:
        """The bounds in words, e.g. ``"positive"`` or ``"in (0, 1]"``."""
        lo, hi = self.lower, self.upper
        if self.is_temperature and lo == 0 and hi == math.inf:
            return "above absolute zero (0 K)"
        if lo == 0 and hi == math.inf:
            return "positive" if self.lower_open else "zero or positive"
        if lo == -math.inf and hi == math.inf:
            return "finite"
        left = "(" if self.lower_open else "["
        right = ")" if self.upper_open else "]"
        return f"in {left}{_g(lo)}, {_g(hi)}{right}"

    def within(self, value: ArrayLike) -> np.ndarray:
        """Elementwise: is ``value`` [SI] inside the bounds and finite."""
        v = np.asarray(value, dtype=float)
        ok = np.isfinite(v)
        ok &= (v > self.lower) if self.lower_open else (v >= self.lower)
        ok &= (v < self.upper) if self.upper_open else (v <= self.upper)
        return ok


LENGTH = QuantitySpec("a length", "m", "0.5 mm", lower=0.0)
CONDUCTIVITY = QuantitySpec("a thermal conductivity", "W/m/K", "0.05 W/m/K", lower=0.0)
CONDUCTIVITY_SLOPE = QuantitySpec(
    "a conductivity slope (conductivity per kelvin)", "W/m/K^2", "1e-4 W/m/K^2"
)
TEMPERATURE = QuantitySpec("a temperature", "K", "34 degC", lower=0.0, level=True)
EMISSIVITY = QuantitySpec(
    "an emissivity (dimensionless)", "", "0.9", lower=0.0, upper=1.0, upper_open=False
)
HEAT_FLUX = QuantitySpec("a heat flux", "W/m^2", "8 kW/m^2", lower=0.0, lower_open=False)
COEFFICIENT = QuantitySpec(
    "a heat-transfer coefficient", "W/m^2/K", "12 W/m^2/K", lower=0.0, lower_open=False
)
CONTACT_RESISTANCE = QuantitySpec(
    "a thermal contact resistance", "m^2*K/W", "0.002 m^2*K/W", lower=0.0
)
TEMPERATURE_DIFFERENCE = QuantitySpec(
    "a temperature difference", "K", "1e-6 K", lower=0.0
)
DIMENSIONLESS = QuantitySpec("a dimensionless number", "", "1.4")
DENSITY = QuantitySpec("a density", "kg/m^3", "300 kg/m^3", lower=0.0)
SPECIFIC_HEAT = QuantitySpec("a specific heat capacity", "J/kg/K", "1300 J/kg/K", lower=0.0)
SPECIFIC_HEAT_SLOPE = QuantitySpec(
    "a specific-heat slope (specific heat per kelvin)", "J/kg/K^2", "1 J/kg/K^2"
)
TRANSMISSIVITY = QuantitySpec(
    "a radiant transmissivity (dimensionless)", "", "0.2", lower=0.0, upper=1.0
)
TIME = QuantitySpec("a time", "s", "8 s", lower=0.0)
TIME_POINT = QuantitySpec("a time from the start of the exposure", "s", "2 s", lower=0.0,
                          lower_open=False)
PERFUSION_RATE = QuantitySpec(
    "a blood perfusion rate (blood volume per tissue volume per time)", "1/s", "1.25e-3 1/s",
    lower=0.0, lower_open=False,
)
MASS = QuantitySpec("a mass", "kg", "18 g", lower=0.0)

QUANTITIES: dict[str, QuantitySpec] = {
    "thickness": LENGTH,
    "width": LENGTH,
    "height": LENGTH,
    "conductivity": CONDUCTIVITY,
    "conductivity_slope": CONDUCTIVITY_SLOPE,
    "reference_temperature": TEMPERATURE,
    "emissivity_hot": EMISSIVITY,
    "emissivity_cold": EMISSIVITY,
    "emissivity": EMISSIVITY,
    "contact_resistance": CONTACT_RESISTANCE,
    "heat_flux": HEAT_FLUX,
    "incident_flux": HEAT_FLUX,
    "temperature": TEMPERATURE,
    "gas_temperature": TEMPERATURE,
    "surroundings_temperature": TEMPERATURE,
    "ambient_temperature": TEMPERATURE,
    "convection_coefficient": COEFFICIENT,
    # transient studies: layers
    "density": DENSITY,
    "specific_heat": SPECIFIC_HEAT,
    "specific_heat_slope": SPECIFIC_HEAT_SLOPE,
    "radiant_transmissivity": TRANSMISSIVITY,
    # transient studies: [exposure]
    "duration": TIME,
    "horizon": TIME,
    "output_step": TIME,
    "ambient_convection_coefficient": COEFFICIENT,
    "cooldown_temperature": TEMPERATURE,
    "cooldown_convection_coefficient": COEFFICIENT,
    "cooldown_surroundings_temperature": TEMPERATURE,
    # transient studies: [wearer]
    "core_temperature": TEMPERATURE,
    "initial_temperature": TEMPERATURE,
    "perfusion_rate": PERFUSION_RATE,
    "diameter": LENGTH,
    "mass": MASS,
}
"""Spec of every numeric config key by name: the fields of :mod:`plyrisk.models.stack` and
:mod:`plyrisk.models.boundary` (plus the ``emissivity`` shorthand of a solid) and the keys of a
transient study's ``[exposure]`` and ``[wearer]`` sections."""


@dataclass(frozen=True)
class Parsed:
    """One parsed value.

    Parameters
    ----------
    si
        The value in the spec's SI unit [SI].
    unit
        The user's unit text (``"mm"``), ``""`` for a bare number.
    text
        The value as the user wrote it, for messages.
    """

    si: float
    unit: str
    text: str


def parse_unit(unit: str) -> pint.Unit:
    """Parse a unit string with :data:`ureg`.

    Besides pint's syntax (``"W/m^2/K"``, ``"m^2*K/W"``) the SI exponent style
    ``"W m-2 K-1"`` is accepted.

    Raises
    ------
    UnitError
        For a unit pint does not know.
    """
    # SI exponent style "W m-2 K-1" (as in the docstrings) → "W m**-2 K**-1" for pint
    text = _EXPONENT.sub(r"**\1", unit)
    try:
        parsed = ureg.parse_units(text)
    except pint.UndefinedUnitError:
        raise UnitError(f"unknown unit {unit!r}") from None
    except Exception as err:  # pint raises several types for malformed unit text
        raise UnitError(f"unreadable unit {unit!r} ({type(err).__name__}: {err})") from None
    return parsed


def parse_value(value: object, spec: QuantitySpec, *, difference: bool = False) -> Parsed:
    """Convert a config value to SI.

    Parameters
    ----------
    value
        A string ``"<number> <unit>"``, or a bare ``int``/``float`` for a dimensionless spec.
    spec
        What the value must be.
    difference
        Read a temperature as a difference: ``"2 degC"`` is 2 K, not 275.15 K.

    Returns
    -------
    Parsed
        The SI value, the user's unit text and the original text.

    Raises
    ------
    UnitError
        For a missing unit, an unknown unit, a wrong dimension or a non-finite number.

    Examples
    --------
    >>> from plyrisk.study.units import LENGTH, TEMPERATURE, parse_value
    >>> parsed = parse_value("0.8 mm", LENGTH)
    >>> round(parsed.si, 9), parsed.unit
    (0.0008, 'mm')
    >>> round(parse_value("34 degC", TEMPERATURE).si, 6)
    307.15
    >>> round(parse_value("2 degC", TEMPERATURE, difference=True).si, 6)
    2.0
    >>> parse_value("0.8", LENGTH)
    Traceback (most recent call last):
    ...
    plyrisk.study.units.UnitError: a bare number needs a unit: expected a length such as ...
    """
    wanted = f"{spec.what} such as {spec.example!r}"
    if isinstance(value, bool) or not isinstance(value, int | float | str):
        raise UnitError(f"expected {wanted}, got {_show(value)}")
    if isinstance(value, int | float):
        if not spec.dimensionless:
            raise UnitError(
                f"a bare number needs a unit: expected {wanted}, got {value!r}"
            )
        if not math.isfinite(value):
            raise UnitError(f"must be finite, got {value!r}")
        return Parsed(float(value), "", repr(value))
    match = _NUMBER.match(value)
    if match is None:
        raise UnitError(f"expected '<number> <unit>', i.e. {wanted}, got {value!r}")
    magnitude, unit = float(match.group(1)), match.group(2)
    if not math.isfinite(magnitude):
        raise UnitError(f"must be finite, got {value!r}")
    if not unit and not spec.dimensionless:
        raise UnitError(f"a bare number needs a unit: expected {wanted}, got {value!r}")
    try:
        si = to_si(magnitude, unit, spec, difference=difference)
    except UnitError as err:
        raise UnitError(f"{err} in {value!r}; expected {wanted}") from None
    return Parsed(float(si), unit, value)


def to_si(
    values: ArrayLike, unit: str, spec: QuantitySpec, *, difference: bool = False
) -> np.ndarray | float:
    """Convert magnitudes in the user's ``unit`` to the spec's SI unit.

    Parameters
    ----------
    values
        Magnitudes in ``unit`` [unit].
    unit
        The user's unit text; ``""`` for dimensionless.
    spec
        Target quantity.
    difference
        Treat a temperature unit as a difference.

    Returns
    -------
    numpy.ndarray or float
        The values in ``spec.si_unit`` [SI].
    """
    target = ureg.parse_units(spec.si_unit)
    try:
        units = _units(unit, difference=difference)
        same = units.dimensionality == target.dimensionality
    except UnitError:
        raise
    except Exception as err:  # pint fails on some exotic (e.g. logarithmic) units
        raise UnitError(f"unusable unit {unit!r} ({type(err).__name__})") from None
    if not same:
        raise UnitError(
            f"unit {unit or '(none)'!r} has dimension {_dim(units)}, not {_dim(target)}"
        )
    try:
        return ureg.Quantity(_magnitudes(values), units).to(target).magnitude
    except Exception as err:  # e.g. an offset unit inside a product
        raise UnitError(f"cannot convert {unit!r} to {spec.si_unit} ({err})") from None


def from_si(
    values: ArrayLike, unit: str, spec: QuantitySpec, *, difference: bool = False
) -> np.ndarray | float:
    """Convert SI values back to the user's unit, e.g. K → degC (with offset) [unit].

    Parameters
    ----------
    values
        Values in ``spec.si_unit`` [SI].
    unit
        The user's unit text.
    spec
        The quantity.
    difference
        The values are temperature differences: K → degC has no offset.
    """
    units = _units(unit, difference=difference)
    return ureg.Quantity(_magnitudes(values), ureg.parse_units(spec.si_unit)).to(units).magnitude


def format_value(
    value: float, unit: str, spec: QuantitySpec, *, difference: bool = False, digits: int = 4
) -> str:
    """An SI value shown in the user's unit, e.g. ``"0.5 mm"``.

    Parameters
    ----------
    value
        Value in ``spec.si_unit`` [SI].
    unit
        The user's unit text.
    spec
        The quantity.
    difference
        The value is a temperature difference: shown in ``K`` for a Celsius unit and as
        ``delta_<unit>`` for another offset unit (``delta_degF``), never with the offset
        unit's own name (a drop of 10 K is not "10 degC").
    digits
        Significant digits.

    Examples
    --------
    >>> from plyrisk.study.units import TEMPERATURE, format_value
    >>> format_value(10.0, "degC", TEMPERATURE, difference=True)
    '10 K'
    >>> format_value(10.0, "degF", TEMPERATURE, difference=True)
    '18 delta_degF'
    """
    shown = float(from_si(value, unit, spec, difference=difference))
    return f"{_g(shown, digits)} {difference_unit(unit) if difference else unit}".rstrip()


def difference_unit(unit: str) -> str:
    """The label of a difference in ``unit``: ``K`` for a Celsius unit, ``delta_<unit>`` for
    another offset unit (Fahrenheit), else ``unit`` itself."""
    try:
        units = parse_unit(unit)
    except Exception:  # not a unit pint knows: leave the text as it is
        return unit
    items = dict(units._units)
    if len(items) != 1 or ureg.Quantity(1, units)._is_multiplicative:
        return unit
    (name, _), = items.items()
    return "K" if name == "degree_Celsius" else f"delta_{unit.strip()}"


def _magnitudes(values: ArrayLike) -> float | np.ndarray:
    """Numbers stay numbers, anything else becomes a float array (as pint would make it)."""
    return values if isinstance(values, int | float) else np.asarray(values, dtype=float)


def _units(unit: str, *, difference: bool) -> pint.Unit:
    units = parse_unit(unit)
    items = dict(units._units)
    if difference and len(items) == 1:
        (name, power), = items.items()
        if power == 1 and not ureg.Quantity(1, units)._is_multiplicative:
            units = ureg.parse_units(f"delta_{name}")
    return units


_KINDS = (("W/m^2", "heat flux"), ("W", "power"), ("J/m^2", "energy per area"),
          ("J", "energy"), ("m", "length"), ("s", "time"), ("K", "temperature"),
          ("W/m/K", "thermal conductivity"), ("W/m/K^2", "conductivity per kelvin"),
          ("W/m^2/K", "heat transfer coefficient"), ("m^2*K/W", "thermal resistance per area"),
          ("kg/m^3", "density"), ("J/kg/K", "specific heat"), ("J/m^2/K", "heat capacity per "
          "area"), ("kg", "mass"), ("Pa", "pressure"), ("m^2", "area"), ("1/s", "rate"))
"""Dimensions named in words in error messages (the unit in brackets is an example)."""


def _dim(units: pint.Unit) -> str:
    dim = units.dimensionality
    if str(dim) in ("", "dimensionless"):
        return "dimensionless"
    for example, words in _KINDS:
        if ureg.parse_units(example).dimensionality == dim:
            return f"{words} (like {example})"
    return str(dim)


def _g(value: float, digits: int = 4) -> str:
    if value == math.inf:
        return "inf"
    if value == -math.inf:
        return "-inf"
    return f"{value:.{digits}g}"


def _show(value: object) -> str:
    if isinstance(value, dict):
        return f"a table with keys {', '.join(map(str, value)) or '(none)'}"
    if isinstance(value, list):
        return f"a list {value!r}"
    return repr(value)
