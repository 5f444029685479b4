"""The time course of a transient exposure: tables of the exposure, a cool-down, a horizon.

Time ``t = 0`` is the start of the exposure. Before it the assembly and the wearer are in the
steady state of the *pre-exposure* conditions (the exposed face in an ambient); from ``0`` to
``exposure_duration`` the exposed face sees the fire or heater (incident radiant flux, hot gas);
after it, the *cool-down* ambient; the model runs to ``horizon``.

Numeric values are scalars or arrays of shape ``(n,)`` (one per sample, e.g. an uncertain
exposure duration or level); a :class:`Table` (piecewise linear in time) is shared by all
samples.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Literal

import numpy as np
from numpy.typing import ArrayLike

EXPOSURE_MODES = ("environment", "absorbed_flux")
"""How the exposed face is heated: ``"environment"`` (absorbs ``emissivity * incident_flux``,
gains convection from the gas and exchanges radiation with the surroundings) or
``"absorbed_flux"`` (absorbs exactly ``incident_flux`` during the exposure and nothing after:
an adiabatic face in the cool-down)."""


class ExposureError(ValueError):
    """An invalid exposure definition (one line naming the quantity and the bad value)."""


@dataclass(frozen=True)
class Table:
    """A quantity piecewise linear in time, shared by all samples.

    Parameters
    ----------
    times
        Strictly increasing times from the start of the exposure [s].
    values
        Values at ``times``, in the unit of the quantity the table stands for.
    name
        Label used in error messages [-].

    Examples
    --------
    >>> ramp = Table([0.0, 2.0, 10.0], [0.0, 80e3, 80e3], name="incident_flux")
    >>> float(ramp(1.0))
    40000.0
    >>> ramp.kinks
    (2.0,)
    """

    times: ArrayLike
    values: ArrayLike
    name: str = "table"
    _t: np.ndarray = field(init=False, repr=False, compare=False)
    _v: np.ndarray = field(init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        t = np.asarray(self.times, dtype=float)
        v = np.asarray(self.values, dtype=float)
        if t.ndim != 1 or t.shape != v.shape or t.size < 1:
            raise ExposureError(
                f"{self.name}: times and values must be 1-D of the same length, got shapes "
                f"{t.shape} and {v.shape}"
            )
        if not np.all(np.isfinite(t)) or not np.all(np.isfinite(v)):
            raise ExposureError(f"{self.name}: times and values must be finite")
        steps = np.diff(t)
        if np.any(steps <= 0):
            i = int(np.argmax(steps <= 0))
            raise ExposureError(
                f"{self.name}: times must increase, got {t[i]!r} s followed by {t[i + 1]!r} s"
            )
        object.__setattr__(self, "_t", t)
        object.__setattr__(self, "_v", v)

    def __call__(self, time: ArrayLike) -> np.ndarray:
        """The value at ``time`` [s], held constant beyond the ends of the table."""
        return np.interp(np.asarray(time, dtype=float), self._t, self._v)

    @property
    def kinks(self) -> tuple[float, ...]:
        """Inner times where the slope changes [s]."""
        return tuple(float(x) for x in self._t[1:-1])

    @property
    def end(self) -> float:
        """Last time of the table [s]."""
        return float(self._t[-1])

    @property
    def start(self) -> float:
        """First time of the table [s]."""
        return float(self._t[0])


def constant(value: ArrayLike) -> ArrayLike:
    """A quantity constant in time: the value itself (a scalar or one value per sample).

    Parameters
    ----------
    value
        The value, in the unit of the quantity.

    Returns
    -------
    ArrayLike
    """
    return value


Quantity = ArrayLike | Table


@dataclass(frozen=True)
class TransientExposure:
    """An exposure of the assembly's outer face, its cool-down and the horizon.

    Parameters
    ----------
    incident_flux
        Radiant flux from the source falling on the exposed face during the exposure, or the
        absorbed flux in mode ``"absorbed_flux"`` [W m-2].
    gas_temperature
        Temperature of the gas flowing over the face during the exposure [K].
    convection_coefficient
        Gas-to-face heat-transfer coefficient during the exposure [W m-2 K-1].
    exposure_duration
        Time the exposure lasts [s].
    horizon
        End of the simulated time, counted from the start of the exposure [s]; one value for all
        samples.
    surroundings_temperature
        Radiant temperature of the surroundings during the exposure [K]; ``None`` means the gas
        temperature.
    ambient_temperature
        Air and surroundings temperature before the exposure (defines the initial steady state)
        [K].
    ambient_convection_coefficient
        Face-to-air heat-transfer coefficient before the exposure [W m-2 K-1].
    cooldown_temperature
        Air temperature after the exposure [K]; ``None`` means ``ambient_temperature``.
    cooldown_convection_coefficient
        Face-to-air heat-transfer coefficient after the exposure [W m-2 K-1]; ``None`` means
        ``ambient_convection_coefficient``.
    cooldown_surroundings_temperature
        Radiant temperature of the surroundings after the exposure [K]; ``None`` means the
        cool-down air temperature.
    mode
        One of :data:`EXPOSURE_MODES` [-].

    Examples
    --------
    >>> exposure = TransientExposure(
    ...     incident_flux=42e3, gas_temperature=1300.0, convection_coefficient=40.0,
    ...     exposure_duration=8.0, horizon=68.0)
    >>> exposure.validate()
    >>> exposure.jump_times()
    (0.0,)
    """

    incident_flux: Quantity
    gas_temperature: Quantity
    convection_coefficient: Quantity
    exposure_duration: ArrayLike
    horizon: float
    surroundings_temperature: Quantity | None = None
    ambient_temperature: ArrayLike = 297.15
    ambient_convection_coefficient: ArrayLike = 10.0
    cooldown_temperature: ArrayLike | None = None
    cooldown_convection_coefficient: ArrayLike | None = None
    cooldown_surroundings_temperature: ArrayLike | None = None
    mode: Literal["environment", "absorbed_flux"] = "environment"

    def tables(self) -> dict[str, Table]:
        """The quantities given as tables, by name."""
        names = ("incident_flux", "gas_temperature", "convection_coefficient",
                 "surroundings_temperature")
        return {k: getattr(self, k) for k in names if isinstance(getattr(self, k), Table)}

    def jump_times(self) -> tuple[float, ...]:
        """Shared times where the exposure's slope or value jumps: the start and table kinks [s].

        The end of the exposure (``exposure_duration``, possibly one per sample) is the other
        jump; the stepper restarts with backward Euler after each.
        """
        kinks = {0.0}
        for table in self.tables().values():
            kinks.update(k for k in table.kinks if 0.0 < k < self.horizon)
        return tuple(sorted(kinks))

    def validate(self) -> None:
        """Raise :class:`ExposureError` naming the quantity, the bad value and what is expected."""
        if self.mode not in EXPOSURE_MODES:
            raise ExposureError(
                f"exposure: mode {self.mode!r} is not one of {', '.join(EXPOSURE_MODES)}"
            )
        horizon = np.asarray(self.horizon, dtype=float)
        if horizon.ndim != 0 or not (np.isfinite(horizon) and horizon > 0):
            raise ExposureError(
                f"exposure: horizon must be one positive finite time, got {self.horizon!r} s"
            )
        duration = np.asarray(self.exposure_duration, dtype=float)
        _check(duration, "exposure_duration", lambda v: v > 0, "positive", "s")
        _check(duration, "exposure_duration", lambda v: v <= horizon,
               f"at most the horizon {float(horizon)!r} s", "s")
        for name, table in self.tables().items():
            if table.start > 0.0:
                raise ExposureError(
                    f"exposure: {name} table starts at {table.start!r} s, after the start of "
                    "the exposure (0 s)"
                )
            if table.end < float(np.max(duration)):
                raise ExposureError(
                    f"exposure: {name} table ends at {table.end!r} s, before the end of the "
                    f"exposure ({float(np.max(duration))!r} s)"
                )
        checks = (
            ("incident_flux", lambda v: v >= 0, "zero or positive", "W m-2"),
            ("gas_temperature", lambda v: v > 0, "above 0 K", "K"),
            ("convection_coefficient", lambda v: v >= 0, "zero or positive", "W m-2 K-1"),
            ("surroundings_temperature", lambda v: v > 0, "above 0 K", "K"),
            ("ambient_temperature", lambda v: v > 0, "above 0 K", "K"),
            ("ambient_convection_coefficient", lambda v: v >= 0, "zero or positive",
             "W m-2 K-1"),
            ("cooldown_temperature", lambda v: v > 0, "above 0 K", "K"),
            ("cooldown_convection_coefficient", lambda v: v >= 0, "zero or positive",
             "W m-2 K-1"),
            ("cooldown_surroundings_temperature", lambda v: v > 0, "above 0 K", "K"),
        )
        for name, ok, expected, unit in checks:
            value = getattr(self, name)
            if value is None:
                continue
            values = value._v if isinstance(value, Table) else np.asarray(value, dtype=float)
            _check(values, name, ok, expected, unit)

    def sample_count(self) -> int:
        """Samples implied by the per-sample arrays (1 when every value is a scalar)."""
        n = 1
        for name in ("incident_flux", "gas_temperature", "convection_coefficient",
                     "exposure_duration", "surroundings_temperature", "ambient_temperature",
                     "ambient_convection_coefficient", "cooldown_temperature",
                     "cooldown_convection_coefficient", "cooldown_surroundings_temperature"):
            value = getattr(self, name)
            if value is None or isinstance(value, Table):
                continue
            shape = np.shape(value)
            if len(shape) > 1:
                raise ExposureError(
                    f"exposure: {name} must be a scalar or a 1-D array of samples, got shape "
                    f"{shape}"
                )
            if shape and shape[0] != 1:
                if n not in (1, shape[0]):
                    raise ExposureError(
                        f"exposure: {name} has {shape[0]} samples where others have {n}"
                    )
                n = shape[0]
        return n


def _check(values: np.ndarray, name: str, ok: Callable[[np.ndarray], np.ndarray],
           expected: str, unit: str) -> None:
    values = np.atleast_1d(values)
    with np.errstate(invalid="ignore"):
        bad = ~(ok(values) & np.isfinite(values))
    if np.any(bad):
        raise ExposureError(
            f"exposure: {name} must be {expected}, got {float(values[bad][0])!r} {unit}"
        )
