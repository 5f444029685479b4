"""The outputs of the transient model: one table of per-sample variables and the result type."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from plyrisk.models.mesh import MeshLayout


@dataclass(frozen=True)
class OutputSpec:
    """One output of the transient model.

    Attributes
    ----------
    name
        Field of :class:`TransientSolution` and dataset variable name [-].
    dims
        Dimension names (``sample`` first; ``time``, ``face`` for histories) [-].
    units
        Units (UDUNITS spelling; ``1`` for dimensionless) [-].
    long_name
        Human-readable description [-].
    """

    name: str
    dims: tuple[str, ...]
    units: str
    long_name: str


_S = ("sample",)
TRANSIENT_OUTPUTS: tuple[OutputSpec, ...] = (
    OutputSpec("time_to_first_degree_burn", _S, "s",
               "time to first-degree burn (damage 0.53 at the basal depth); inf if not reached"),
    OutputSpec("time_to_second_degree_burn", _S, "s",
               "time to second-degree burn (damage 1 at the basal depth); inf if not reached"),
    OutputSpec("time_to_third_degree_burn", _S, "s",
               "time to third-degree burn (damage 1e4 at the basal depth, or 1 at the dermis "
               "base); inf if not reached"),
    OutputSpec("damage_at_end", _S, "1", "damage integral at the basal depth at the horizon"),
    OutputSpec("peak_basal_temperature", _S, "K", "highest temperature at the basal depth"),
    OutputSpec("time_of_peak_basal_temperature", _S, "s",
               "time of the highest temperature at the basal depth"),
    OutputSpec("peak_surface_temperature", _S, "K",
               "highest temperature of the wearer's surface (skin surface or sensor)"),
    OutputSpec("time_of_peak_surface_temperature", _S, "s",
               "time of the highest wearer-surface temperature"),
    OutputSpec("absorbed_energy", _S, "J m-2",
               "heat absorbed by the skin or sensor from the start of the exposure to the "
               "horizon"),
    OutputSpec("stored_energy_at_exposure_end", _S, "J m-2",
               "heat stored in the assembly at the end of the exposure, relative to the "
               "initial state"),
    OutputSpec("sensor_criterion_time", _S, "s",
               "time at which the sensor's absorbed energy reaches the second-degree "
               "criterion; inf if not reached"),
    OutputSpec("exposure_energy_at_criterion", _S, "J m-2",
               "exposure energy (exposure flux x time) when the sensor reaches the criterion"),
    OutputSpec("heat_in", _S, "J m-2",
               "heat entering at the exposed side from the start of the exposure to the horizon"),
    OutputSpec("heat_to_core", _S, "J m-2",
               "heat leaving through fixed-temperature nodes (subcutis base, prescribed surface)"),
    OutputSpec("heat_from_perfusion", _S, "J m-2", "heat added by blood perfusion"),
    OutputSpec("stored_energy_change", _S, "J m-2",
               "change of the heat stored in the assembly and wearer, start to horizon"),
    OutputSpec("initial_surface_temperature", _S, "K",
               "wearer-surface temperature of the initial steady state"),
    OutputSpec("converged", _S, "1", "whether the sample's integration succeeded"),
    OutputSpec("steps", _S, "1", "accepted time steps"),
    OutputSpec("rejected_steps", _S, "1", "rejected time steps"),
    OutputSpec("face_temperature", ("sample", "time", "face"), "K",
               "temperature of every assembly face and the wearer surface"),
    OutputSpec("basal_temperature", ("sample", "time"), "K", "temperature at the basal depth"),
    OutputSpec("surface_temperature", ("sample", "time"), "K",
               "temperature of the wearer's surface (skin surface or sensor)"),
)
"""Every per-sample output of :func:`plyrisk.models.transient.solve_transient`."""

HISTORY_OUTPUTS = tuple(o.name for o in TRANSIENT_OUTPUTS if "time" in o.dims)


@dataclass(frozen=True)
class TransientSolution:
    """Result of :func:`plyrisk.models.transient.solve_transient` for ``n`` samples.

    Every field named in :data:`TRANSIENT_OUTPUTS` is an array with those dimensions (sample
    first). Samples that did not converge carry NaN in every float output. Outputs that do not
    apply to the wearer (burn times for a sensor, the sensor criterion for skin) are NaN.

    Attributes
    ----------
    time
        Output times of the histories [s].
    face_names
        Names of the faces in ``face_temperature`` [-].
    layout
        Slice layout used (pass it back to reproduce a sample alone) [-].
    damage_model, third_degree, wearer_kind
        Options the solution was computed with [-].
    """

    time_to_first_degree_burn: np.ndarray
    time_to_second_degree_burn: np.ndarray
    time_to_third_degree_burn: np.ndarray
    damage_at_end: np.ndarray
    peak_basal_temperature: np.ndarray
    time_of_peak_basal_temperature: np.ndarray
    peak_surface_temperature: np.ndarray
    time_of_peak_surface_temperature: np.ndarray
    absorbed_energy: np.ndarray
    stored_energy_at_exposure_end: np.ndarray
    sensor_criterion_time: np.ndarray
    exposure_energy_at_criterion: np.ndarray
    heat_in: np.ndarray
    heat_to_core: np.ndarray
    heat_from_perfusion: np.ndarray
    stored_energy_change: np.ndarray
    initial_surface_temperature: np.ndarray
    converged: np.ndarray
    steps: np.ndarray
    rejected_steps: np.ndarray
    face_temperature: np.ndarray
    basal_temperature: np.ndarray
    surface_temperature: np.ndarray
    time: np.ndarray
    face_names: tuple[str, ...]
    layout: MeshLayout
    damage_model: str
    third_degree: str
    wearer_kind: str


def empty_outputs(n: int, k_time: int, n_faces: int) -> dict[str, np.ndarray]:
    """Allocate every output of :data:`TRANSIENT_OUTPUTS` for ``n`` samples."""
    out: dict[str, np.ndarray] = {}
    for spec in TRANSIENT_OUTPUTS:
        shape = {"sample": n, "time": k_time, "face": n_faces}
        dims = tuple(shape[d] for d in spec.dims)
        if spec.name == "converged":
            out[spec.name] = np.zeros(dims, dtype=bool)
        elif spec.name in ("steps", "rejected_steps"):
            out[spec.name] = np.zeros(dims, dtype=np.int64)
        else:
            out[spec.name] = np.full(dims, np.nan)
    return out
