"""One scalar output per sample, read from either row source: memory or a store.

A *row source* has ``read(name, start, stop)`` returning the rows ``[start, stop)`` of a
per-sample array with the scenario axis first (``(n_scenarios, rows, ...)``; ``input`` has no
scenario axis) and ``interface_names``. :class:`MemoryRows` wraps a propagation held in memory;
:class:`plyrisk.propagate.store.StoreReader` reads a Zarr store. :func:`output_column` is the
one way the analysis picks a scalar output (the inner-surface temperature, the heat flux or a
face temperature) out of either.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import numpy as np

if TYPE_CHECKING:  # pragma: no cover
    from plyrisk.propagate.evaluate import Propagation

SCALAR_OUTPUTS = ("inner_surface_temperature", "heat_flux")
"""Per-sample outputs that are one number per sample and exposure."""


class MemoryRows:
    """A propagation held in memory, read like a store.

    Parameters
    ----------
    propagation
        The propagated study.
    """

    def __init__(self, propagation: Propagation) -> None:
        self.propagation = propagation
        self.interface_names = tuple(propagation.outputs.interface_names)

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
        ``inner_surface_temperature``, ``heat_flux`` or a face name.
    scenario
        Scenario index.
    start, stop
        Row range (default: all rows).

    Returns
    -------
    numpy.ndarray
        Shape ``(rows,)``, SI.
    """
    if output in SCALAR_OUTPUTS:
        return source.read(output, start, stop)[scenario]
    faces = list(source.interface_names)
    if output in faces:
        return source.read("interface_temperature", start, stop)[scenario][:, faces.index(output)]
    raise ValueError(f"output {output!r} is not one of {', '.join(SCALAR_OUTPUTS)}, "
                     + ", ".join(faces))


def output_values(propagation: Propagation, output: str, scenario: int) -> np.ndarray:
    """Every sample of one scalar output of one exposure of a propagation in memory.

    Parameters
    ----------
    propagation
        The propagated study.
    output
        ``inner_surface_temperature``, ``heat_flux`` or a face name.
    scenario
        Scenario index.

    Returns
    -------
    numpy.ndarray
        Shape ``(n_samples,)``, SI.
    """
    return output_column(MemoryRows(propagation), output, scenario)
