"""One scalar output per sample, read from either row source: memory or a store.

A *row source* has ``read(name, start, stop)`` returning the rows ``[start, stop)`` of a
per-sample array with the scenario axis first (``(n_scenarios, rows, ...)``; ``input`` has no
scenario axis) and ``interface_names``. :class:`MemoryRows` wraps a propagation held in memory;
:class:`plyrisk.propagate.store.StoreReader` reads a Zarr store. :func:`output_column` is the
one way the analysis picks a scalar output (the inner-surface temperature, the heat flux or a
face temperature) out of either.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np

if TYPE_CHECKING:  # pragma: no cover
    from plyrisk.propagate.evaluate import Propagation

SCALAR_OUTPUTS = ("inner_surface_temperature", "heat_flux")
"""Per-sample outputs that are one number per sample and exposure."""


DAMAGE_FLOOR = 1e-3
"""Floor of the damage integral before its logarithm is taken [-].

Samples whose basal layer never exceeds the damage onset (44 degC) end with a damage of exactly
zero, whose logarithm is -inf; a Sobol index of an output with -inf values is undefined. Damage
below a thousandth of the second-degree threshold (1) is far from any burn, so all such values
are set to the floor: the indices of ``log10_damage_at_end`` then apportion the spread of the
damage among the samples that approach a burn, not the many decades below it."""


@dataclass(frozen=True)
class DerivedOutput:
    """An output of a transient study defined for every converged sample (for indices).

    Attributes
    ----------
    name
        Output name (``[study] outputs``, the dataset's ``output`` coordinate).
    source
        The per-sample transient output it is computed from.
    units
        Units (UDUNITS spelling).
    long_name
        Description.
    rule
        How it is derived: said in the dataset and the report, since indices of a capped or
        floored output mean something different from those of the output itself.
    transform
        ``(values, horizon) -> values``; NaN (not converged) stays NaN.
    """

    name: str
    source: str
    units: str
    long_name: str
    rule: str
    transform: Callable[[np.ndarray, float], np.ndarray]


def _capped(t: np.ndarray, horizon: float) -> np.ndarray:
    return np.where(np.isnan(t), np.nan, np.minimum(t, horizon))


def _reached(t: np.ndarray, horizon: float) -> np.ndarray:
    return np.where(np.isnan(t), np.nan, (t <= horizon).astype(float))


def _log_damage(d: np.ndarray, horizon: float) -> np.ndarray:
    return np.where(np.isnan(d), np.nan, np.log10(np.maximum(d, DAMAGE_FLOOR)))


def _same(x: np.ndarray, horizon: float) -> np.ndarray:
    return np.asarray(x, dtype=float)


DERIVED_OUTPUTS: dict[str, DerivedOutput] = {d.name: d for d in (
    DerivedOutput("capped_time_to_second_degree_burn", "time_to_second_degree_burn", "s",
                  "time to second-degree burn, capped at the horizon",
                  "time to second-degree burn where it occurs within the horizon, else the "
                  "horizon itself: its indices rank what makes a burn come sooner, with every "
                  "sample that does not burn counted as burning at the horizon", _capped),
    DerivedOutput("second_degree_burn", "time_to_second_degree_burn", "1",
                  "second-degree burn within the horizon (1 = yes, 0 = no)",
                  "1 where the damage at the basal depth reaches 1 within the horizon, else 0: "
                  "its indices apportion the variance of the burn/no-burn outcome, "
                  "p (1 - p)", _reached),
    DerivedOutput("log10_damage_at_end", "damage_at_end", "1",
                  "decimal logarithm of the damage integral at the basal depth at the horizon",
                  f"log10(max(damage, {DAMAGE_FLOOR:g})): damage below {DAMAGE_FLOOR:g} (a "
                  "thousandth of the second-degree threshold, including the zero damage of "
                  "samples that never exceed 44 degC) is set to that floor", _log_damage),
    DerivedOutput("peak_basal_temperature", "peak_basal_temperature", "K",
                  "highest temperature at the basal depth", "as computed (no cap)", _same),
    DerivedOutput("capped_sensor_criterion_time", "sensor_criterion_time", "s",
                  "time at which the sensor reaches the second-degree criterion, capped at the "
                  "horizon",
                  "criterion time where the sensor reaches the criterion within the horizon, "
                  "else the horizon itself", _capped),
    DerivedOutput("sensor_criterion_reached", "sensor_criterion_time", "1",
                  "sensor reaches the second-degree criterion within the horizon (1 = yes)",
                  "1 where the sensor's absorbed energy reaches the criterion within the "
                  "horizon, else 0", _reached),
    DerivedOutput("peak_surface_temperature", "peak_surface_temperature", "K",
                  "highest temperature of the wearer's surface (skin surface, sensor or "
                  "prescribed surface)", "as computed (no cap)", _same),
    DerivedOutput("absorbed_energy", "absorbed_energy", "J m-2",
                  "heat absorbed by the skin or sensor from the start of the exposure to the "
                  "horizon", "as computed (no cap)", _same),
    DerivedOutput("stored_energy_at_exposure_end", "stored_energy_at_exposure_end", "J m-2",
                  "heat stored in the assembly at the end of the exposure",
                  "as computed (no cap)", _same),
)}
"""Every derived output of a transient study, by name."""

WEARER_OUTPUTS: dict[str, tuple[str, ...]] = {
    "skin": ("capped_time_to_second_degree_burn", "second_degree_burn", "log10_damage_at_end",
             "peak_basal_temperature"),
    "sensor": ("capped_sensor_criterion_time", "sensor_criterion_reached",
               "peak_surface_temperature", "absorbed_energy"),
    "prescribed": ("absorbed_energy", "stored_energy_at_exposure_end"),
}
"""The derived outputs a transient study analyses (indices), by wearer kind; the first carries
the headline ranking ("which layer buys the most time")."""


class MemoryRows:
    """A propagation held in memory, read like a store.

    Parameters
    ----------
    propagation
        The propagated study.
    horizon
        End of the simulated time of a transient study, for the capped outputs [s]; default
        the propagation's ``outputs.horizon`` when it has one.
    """

    def __init__(self, propagation: Propagation, *, horizon: float | None = None) -> None:
        self.propagation = propagation
        self.interface_names = tuple(propagation.outputs.interface_names)
        self.horizon = horizon if horizon is not None else getattr(propagation.outputs,
                                                                   "horizon", None)

    def read(self, name: str, start: int = 0, stop: int | None = None) -> np.ndarray:
        """Rows ``[start, stop)`` of a per-sample array (scenario axis first but for inputs)."""
        if name == "input":
            return self.propagation.inputs[start:stop]
        return self.propagation.outputs[name][:, start:stop]


def output_column(source: Any, output: str, scenario: int, start: int = 0,
                  stop: int | None = None) -> np.ndarray:
    """Rows ``[start, stop)`` of one scalar output of one exposure.

    Parameters
    ----------
    source
        A row source: :class:`MemoryRows` or :class:`plyrisk.propagate.store.StoreReader`.
    output
        ``inner_surface_temperature``, ``heat_flux`` or a face name; for a transient study a
        derived output (:data:`DERIVED_OUTPUTS`, which needs ``source.horizon``) or a scalar
        per-sample output of :data:`plyrisk.models.transient_outputs.TRANSIENT_OUTPUTS`.
    scenario
        Scenario index.
    start, stop
        Row range (default: all rows).

    Returns
    -------
    numpy.ndarray
        Shape ``(rows,)``, SI.
    """
    if output in DERIVED_OUTPUTS:
        spec = DERIVED_OUTPUTS[output]
        horizon = getattr(source, "horizon", None)
        if horizon is None:
            raise ValueError(f"output {output!r} needs the horizon of the transient study; the "
                             "row source has none")
        values = np.asarray(source.read(spec.source, start, stop)[scenario], dtype=float)
        with np.errstate(invalid="ignore"):
            return spec.transform(values, float(horizon))
    if output in SCALAR_OUTPUTS or output in _transient_scalars():
        return source.read(output, start, stop)[scenario]
    faces = list(source.interface_names)
    if output in faces:
        return source.read("interface_temperature", start, stop)[scenario][:, faces.index(output)]
    raise ValueError(f"output {output!r} is not one of {', '.join(SCALAR_OUTPUTS)}, "
                     + ", ".join(faces))


def _transient_scalars() -> tuple[str, ...]:
    from plyrisk.models.transient_outputs import TRANSIENT_OUTPUTS

    return tuple(o.name for o in TRANSIENT_OUTPUTS if tuple(o.dims) in ((), ("sample",)))


def output_values(propagation: Propagation, output: str, scenario: int, *,
                  horizon: float | None = None) -> np.ndarray:
    """Every sample of one scalar output of one exposure of a propagation in memory.

    Parameters
    ----------
    propagation
        The propagated study.
    output
        ``inner_surface_temperature``, ``heat_flux`` or a face name.
    scenario
        Scenario index.
    horizon
        Horizon of a transient study, for the capped outputs [s].

    Returns
    -------
    numpy.ndarray
        Shape ``(n_samples,)``, SI.
    """
    return output_column(MemoryRows(propagation, horizon=horizon), output, scenario)
