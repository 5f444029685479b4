"""Declarations of per-sample model outputs: one record per output, next to its model.

A model module declares the outputs it produces once, as a tuple of :class:`OutputSpec`
(:data:`plyrisk.models.network.NETWORK_OUTPUTS` for the steady network). The engine derives
everything else from that table: which fields a propagation keeps, the arrays of the sample
store, the variables of the results dataset and their ``units`` and ``long_name``. Adding an
output to a model means adding one record here and the field to the model's solution.

Examples
--------
>>> from plyrisk.models.network import NETWORK_OUTPUTS
>>> spec = output_spec(NETWORK_OUTPUTS, "heat_flux")
>>> spec.units, spec.dims
('W m-2', ())
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass


@dataclass(frozen=True)
class OutputSpec:
    """One per-sample output of a model.

    Attributes
    ----------
    name
        Field name on the model's solution, and variable name in datasets and stores.
    dims
        Dimensions after the sample axis (e.g. ``("interface",)``; ``()`` for a scalar).
    units
        UDUNITS string of the SI values (``"1"`` for dimensionless and flags).
    long_name
        Plain-language description, as written to ``long_name``.
    dtype
        Storage type: ``"f8"``, ``"i4"`` or ``"bool"``.
    """

    name: str
    dims: tuple[str, ...]
    units: str
    long_name: str
    dtype: str = "f8"

    @property
    def fill_value(self) -> float | bool | int:
        """The value of a sample not (yet) computed: NaN, False or -1."""
        return {"f8": float("nan"), "bool": False}.get(self.dtype, -1)


def output_spec(table: Sequence[OutputSpec], name: str) -> OutputSpec:
    """The record of one output, with a one-line error naming the valid choices.

    Parameters
    ----------
    table
        A model's output table.
    name
        Output name.

    Returns
    -------
    OutputSpec
    """
    for spec in table:
        if spec.name == name:
            return spec
    raise ValueError(f"unknown output {name!r}; valid: {', '.join(s.name for s in table)}")
