"""Definitions of the elements of a multilayer assembly, ordered hot (exposed) side → cold side.

Every numeric field is a scalar or an array of shape ``(n,)``: one entry per sample. The
definitions carry no behaviour beyond validation; the physics lives in
:mod:`plyrisk.models.elements`
and the solve in :mod:`plyrisk.models.network`.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, fields
from typing import TYPE_CHECKING, Any, Literal

import numpy as np
from numpy.typing import ArrayLike

from plyrisk.errors import PlyriskError

if TYPE_CHECKING:  # pragma: no cover - boundary imports this module
    from _typeshed import DataclassInstance

    from plyrisk.models.boundary import ColdSide, HotSide

GAP_ORIENTATIONS = ("vertical", "horizontal-up", "horizontal-down")
"""Gap orientations: a vertical gap (heat flows horizontally), a horizontal gap with heat flowing
upward (heated from below: unstable) or downward (heated from above: stable)."""

Orientation = Literal["vertical", "horizontal-up", "horizontal-down"]


@dataclass(frozen=True)
class Solid:
    """A solid layer: fabric, membrane, batt, foil, board.

    Parameters
    ----------
    name
        Label used in tables and parameter names.
    thickness
        Layer thickness [m].
    conductivity
        Effective thermal conductivity at ``reference_temperature`` [W m-1 K-1].
    conductivity_slope
        Slope of a conductivity linear in temperature, ``k(T) = k_ref + slope (T - T_ref)``
        [W m-1 K-2]; 0 for a constant conductivity.
    reference_temperature
        Temperature at which ``conductivity`` applies [K].
    emissivity_hot
        Total hemispherical emissivity of the face toward the hot side [-].
    emissivity_cold
        Total hemispherical emissivity of the face toward the cold side [-].
    contact_resistance
        Thermal contact resistance to the next solid when the two touch [m2 K W-1]; ``None``
        for perfect contact (or where the next element is a gap).
    density
        Density, for the transient model [kg m-3]; ``None`` where only the steady network is
        solved.
    specific_heat
        Specific heat capacity at ``reference_temperature``, for the transient model
        [J kg-1 K-1]; ``None`` where only the steady network is solved.
    specific_heat_slope
        Slope of a specific heat linear in temperature,
        ``c(T) = c_ref + slope (T - T_ref)`` [J kg-1 K-2].
    radiant_transmissivity
        Fraction of the radiation absorbed by the exposed face that passes through the layer
        [-]; ``None`` (the default) absorbs it all at the face. When given, the part
        ``1 - radiant_transmissivity`` is absorbed in depth along an exponential (Beer–Lambert)
        profile and the rest at the layer's cold face; only used for the exposed layer of the
        transient model.
    """

    name: str
    thickness: ArrayLike
    conductivity: ArrayLike
    conductivity_slope: ArrayLike = 0.0
    reference_temperature: ArrayLike = 293.15
    emissivity_hot: ArrayLike = 0.9
    emissivity_cold: ArrayLike = 0.9
    contact_resistance: ArrayLike | None = None
    density: ArrayLike | None = None
    specific_heat: ArrayLike | None = None
    specific_heat_slope: ArrayLike = 0.0
    radiant_transmissivity: ArrayLike | None = None

    kind = "solid"

    def validate(self) -> None:
        """Raise ``ValueError`` naming the layer, the quantity and the bad value."""
        _positive(self, "thickness")
        _positive(self, "conductivity")
        _positive(self, "reference_temperature")
        _emissivity(self, "emissivity_hot")
        _emissivity(self, "emissivity_cold")
        if self.contact_resistance is not None:
            _positive(self, "contact_resistance")
        if self.density is not None:
            _positive(self, "density")
        if self.specific_heat is not None:
            _positive(self, "specific_heat")
        _finite(self, "specific_heat_slope")
        if self.radiant_transmissivity is not None:
            v = _values(self, "radiant_transmissivity")
            bad = ~((v > 0) & (v < 1))
            if np.any(bad):
                raise StackError(
                    f"{_label(self)}: radiant_transmissivity must be in (0, 1), got "
                    f"{_first_bad(v, bad)!r}",
                    quantity="radiant_transmissivity",
                )

    def validate_transient(self) -> None:
        """Also require what the transient model needs: density and specific heat.

        Raises
        ------
        StackError
            Naming the layer and the missing or bad quantity.
        """
        self.validate()
        for quantity in ("density", "specific_heat"):
            if getattr(self, quantity) is None:
                raise StackError(
                    f"layer {self.name!r}: {quantity} is missing; the transient model needs "
                    "density and specific_heat for every solid",
                    quantity=quantity,
                )


@dataclass(frozen=True)
class Gap:
    """A still-air gap between two faces.

    Parameters
    ----------
    name
        Label used in tables and parameter names.
    width
        Gap width, face to face [m].
    orientation
        One of ``GAP_ORIENTATIONS``.
    height
        Height of a vertical gap, for the aspect ratio of the natural-convection correlation
        [m]; unused for horizontal gaps.
    """

    name: str
    width: ArrayLike
    orientation: Orientation = "vertical"
    height: ArrayLike = 0.5

    kind = "gap"

    def validate(self) -> None:
        """Raise ``ValueError`` naming the layer, the quantity and the bad value."""
        _positive(self, "width")
        _positive(self, "height")
        if self.orientation not in GAP_ORIENTATIONS:
            raise StackError(
                f"layer {self.name!r}: orientation {self.orientation!r} is not one of "
                f"{', '.join(GAP_ORIENTATIONS)}",
                quantity="orientation",
            )


Element = Solid | Gap


class StackError(PlyriskError, ValueError):
    """An invalid element, boundary or arrangement.

    ``index`` is the position of the offending element in the stack (hot → cold) or ``None``;
    ``side`` is ``"hot_side"``/``"cold_side"`` for a boundary, else ``None``; ``quantity`` is the
    offending field or ``None`` for an arrangement problem.
    """

    def __init__(
        self,
        message: str,
        *,
        index: int | None = None,
        side: str | None = None,
        quantity: str | None = None,
    ) -> None:
        super().__init__(message)
        self.index = index
        self.side = side
        self.quantity = quantity


def validate_stack(layers: Sequence[Element], hot_side: HotSide, cold_side: ColdSide) -> None:
    """Check every element and boundary and the arrangement of the stack.

    Parameters
    ----------
    layers
        Solids and gaps, hot (exposed) side first.
    hot_side
        The exposed-face boundary condition.
    cold_side
        The wearer-side boundary condition.

    Raises
    ------
    StackError
        Naming the element (``index``), the quantity and the bad value, or the arrangement rule
        broken: the stack must start with a solid (the exposed face); two gaps may not follow
        each other; a gap needs a solid face on its hot side and a solid or a ``surface`` cold
        side on its cold side; a contact resistance needs a solid after it.
    """
    layers = list(layers)
    if not layers:
        raise StackError("the stack has no layers")
    for i, layer in enumerate(layers):
        try:
            layer.validate()
        except StackError as err:
            err.index = i
            raise
    for side in (hot_side, cold_side):
        try:
            side.validate()
        except StackError as err:
            err.side = side.name
            raise
    if layers[0].kind != "solid":
        raise StackError(
            f"layer {layers[0].name!r}: the first layer (the exposed face) must be a solid, "
            "not a gap",
            index=0,
        )
    for i, (a, b) in enumerate(zip(layers[:-1], layers[1:], strict=True)):
        if a.kind == "gap" and b.kind == "gap":
            raise StackError(
                f"layers {a.name!r} and {b.name!r}: two gaps in a row; merge them into one gap "
                "or put a solid between them",
                index=i + 1,
            )
        if isinstance(a, Solid) and a.contact_resistance is not None and b.kind != "solid":
            raise StackError(
                f"layer {a.name!r}: contact_resistance needs a solid after it, but "
                f"{b.name!r} is a {b.kind}",
                index=i,
                quantity="contact_resistance",
            )
    last = layers[-1]
    if last.kind == "gap" and cold_side.kind != "surface":
        raise StackError(
            f"layer {last.name!r}: a gap at the cold end needs a solid face beyond it; use a "
            f"cold side of kind 'surface' (e.g. skin) or end the stack with a solid "
            f"(cold side is {cold_side.kind!r})",
            index=len(layers) - 1,
        )
    if last.kind == "solid" and cold_side.kind == "surface":
        raise StackError(
            f"layer {last.name!r}: a cold side of kind 'surface' is reached across a gap; end "
            "the stack with a gap or use a cold side of kind 'temperature'",
            index=len(layers) - 1,
        )
    if isinstance(last, Solid) and last.contact_resistance is not None:
        raise StackError(
            f"layer {last.name!r}: contact_resistance needs a solid after it",
            index=len(layers) - 1,
            quantity="contact_resistance",
        )


def numeric_fields(element: DataclassInstance) -> list[str]:
    """Names of the numeric (possibly uncertain) fields of an element or boundary.

    Parameters
    ----------
    element
        A :class:`Solid`, :class:`Gap` or boundary dataclass.

    Returns
    -------
    list of str
    """
    return [f.name for f in fields(element) if f.name not in ("name", "orientation")]


def _values(obj: Any, quantity: str) -> np.ndarray:
    return np.asarray(getattr(obj, quantity), dtype=float)


def _label(obj: object) -> str:
    name = getattr(obj, "name", None)
    return f"layer {name!r}" if name is not None else type(obj).__name__


def _first_bad(values: np.ndarray, bad: np.ndarray) -> float:
    return float(np.atleast_1d(values)[np.atleast_1d(bad)][0])


def _positive(obj: object, quantity: str) -> None:
    v = _values(obj, quantity)
    bad = ~(v > 0) | ~np.isfinite(v)
    if np.any(bad):
        raise StackError(
            f"{_label(obj)}: {quantity} must be positive and finite, got {_first_bad(v, bad)!r}",
            quantity=quantity,
        )


def _finite(obj: object, quantity: str) -> None:
    v = _values(obj, quantity)
    bad = ~np.isfinite(v)
    if np.any(bad):
        raise StackError(
            f"{_label(obj)}: {quantity} must be finite, got {_first_bad(v, bad)!r}",
            quantity=quantity,
        )


def _emissivity(obj: object, quantity: str) -> None:
    v = _values(obj, quantity)
    bad = ~((v > 0) & (v <= 1))
    if np.any(bad):
        raise StackError(
            f"{_label(obj)}: {quantity} must be in (0, 1], got {_first_bad(v, bad)!r}",
            quantity=quantity,
        )


def check_temperature(obj: object, quantity: str) -> None:
    """Raise ``ValueError`` when a temperature is at or below 0 K or not finite.

    Parameters
    ----------
    obj
        The element or boundary holding the value.
    quantity
        Name of the field to check.
    """
    v = _values(obj, quantity)
    bad = ~(v > 0) | ~np.isfinite(v)
    if np.any(bad):
        raise StackError(
            f"{_label(obj)}: {quantity} must be above 0 K, got {_first_bad(v, bad)!r} K",
            quantity=quantity,
        )


def check_nonnegative(obj: object, quantity: str) -> None:
    """Raise ``ValueError`` when a quantity is negative or not finite.

    Parameters
    ----------
    obj
        The element or boundary holding the value.
    quantity
        Name of the field to check.
    """
    v = _values(obj, quantity)
    bad = ~(v >= 0) | ~np.isfinite(v)
    if np.any(bad):
        raise StackError(
            f"{_label(obj)}: {quantity} must be zero or positive, got {_first_bad(v, bad)!r}",
            quantity=quantity,
        )


check_emissivity = _emissivity
check_positive = _positive
