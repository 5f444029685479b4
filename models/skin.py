"""Three-layer skin (epidermis, dermis, subcutis) for the Pennes bioheat equation.

Each layer is a slab with constant properties; blood perfusion acts as a distributed heat sink
toward the arterial temperature,

    rho c dT/dt = d/dx (k dT/dx) + w_b rho_b c_b (T_a - T),                         (S.1)

(Pennes 1948, J Appl Physiol 1:93-122, doi:10.1152/jappl.1948.1.2.93), with the base of the
subcutis held at the core temperature. The basal layer, where the damage integral of
:mod:`plyrisk.models.burn` is evaluated, is the epidermis-dermis interface.

Every numeric field is a scalar or an array of shape ``(n,)``: one entry per sample. The
definitions carry no behaviour beyond validation; the transient solve lives elsewhere.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike

from plyrisk.errors import PlyriskError


class SkinPropertyError(PlyriskError, ValueError):
    """An unknown skin property set or a property outside its physical range.

    ``layer`` names the layer (``None`` for a whole-skin quantity) and ``quantity`` the field.
    """

    def __init__(self, message: str, *, layer: str | None = None, quantity: str | None = None):
        super().__init__(message)
        self.layer = layer
        self.quantity = quantity


@dataclass(frozen=True)
class SkinLayer:
    """One layer of the skin model.

    Parameters
    ----------
    name
        Layer label: ``"epidermis"``, ``"dermis"`` or ``"subcutis"``.
    thickness
        Layer thickness [m].
    conductivity
        Thermal conductivity ``k`` [W m-1 K-1].
    density
        Density ``rho`` [kg m-3].
    specific_heat
        Specific heat capacity ``c`` [J kg-1 K-1].
    perfusion_rate
        Volumetric blood perfusion rate ``w_b`` (blood volume per tissue volume per second)
        [s-1]; 0 for the avascular epidermis.
    """

    name: str
    thickness: ArrayLike
    conductivity: ArrayLike
    density: ArrayLike
    specific_heat: ArrayLike
    perfusion_rate: ArrayLike


@dataclass(frozen=True)
class Skin:
    """Three-layer skin with blood perfusion, its core temperature and surface emissivity.

    Parameters
    ----------
    epidermis, dermis, subcutis
        The layers, outermost first.
    blood_density
        Density of blood ``rho_b`` [kg m-3].
    blood_specific_heat
        Specific heat capacity of blood ``c_b`` [J kg-1 K-1].
    arterial_temperature
        Temperature of the arterial blood ``T_a`` [K].
    core_temperature
        Temperature held at the base of the subcutis [K].
    emissivity
        Total hemispherical emissivity of the skin surface, for radiation across the last
        gap [-].
    """

    epidermis: SkinLayer
    dermis: SkinLayer
    subcutis: SkinLayer
    blood_density: ArrayLike = 1060.0
    blood_specific_heat: ArrayLike = 3770.0
    arterial_temperature: ArrayLike = 310.15
    core_temperature: ArrayLike = 310.15
    emissivity: ArrayLike = 0.95

    @property
    def layers(self) -> tuple[SkinLayer, SkinLayer, SkinLayer]:
        """The three layers, outermost first."""
        return (self.epidermis, self.dermis, self.subcutis)

    @property
    def basal_depth(self) -> np.ndarray:
        """Depth of the basal layer (epidermis-dermis interface) below the surface [m]."""
        return np.asarray(self.epidermis.thickness, dtype=float)

    @property
    def dermis_base_depth(self) -> np.ndarray:
        """Depth of the dermis-subcutis interface below the surface [m]."""
        return np.asarray(self.epidermis.thickness, dtype=float) + np.asarray(
            self.dermis.thickness, dtype=float
        )


def _layers(
    epidermis: tuple[float, float, float, float],
    dermis: tuple[float, float, float, float],
    subcutis: tuple[float, float, float, float],
) -> tuple[SkinLayer, SkinLayer, SkinLayer]:
    # (conductivity, density, specific_heat, perfusion_rate); thicknesses 80 um, 2 mm, 10 mm.
    thickness = {"epidermis": 80e-6, "dermis": 2e-3, "subcutis": 10e-3}
    out = []
    for name, (k, rho, c, w) in zip(
        ("epidermis", "dermis", "subcutis"), (epidermis, dermis, subcutis), strict=True
    ):
        out.append(SkinLayer(name, thickness[name], k, rho, c, w))
    return tuple(out)  # type: ignore[return-value]


SKIN_PROPERTY_SETS: dict[str, Skin] = {
    # Torvi DA, Dale JD. A finite element model of skin subjected to a flash fire.
    # J Biomech Eng 1994;116(3):250-255, doi:10.1115/1.2895727 (values from memory).
    "torvi_dale_1994": Skin(
        *_layers(
            (0.255, 1200.0, 3598.0, 0.0),
            (0.523, 1200.0, 3222.0, 1.25e-3),
            (0.167, 1000.0, 2760.0, 1.25e-3),
        )
    ),
    # Jiang SC, Ma N, Li HJ, Zhang XX. Effects of thermal properties and geometrical
    # dimensions on skin burn injuries. Burns 2002;28(8):713-717,
    # doi:10.1016/S0305-4179(02)00104-3.
    "jiang_2002": Skin(
        *_layers(
            (0.24, 1200.0, 3590.0, 0.0),
            (0.45, 1200.0, 3300.0, 1.25e-3),
            (0.19, 1000.0, 2500.0, 1.25e-3),
        )
    ),
}
"""Published three-layer skin property sets (thickness 80 um / 2 mm / 10 mm; blood 1060 kg m-3,
3770 J kg-1 K-1; arterial and core temperature 37 degC; surface emissivity 0.95).

- ``torvi_dale_1994``: Torvi & Dale (1994), J Biomech Eng 116:250, doi:10.1115/1.2895727.
- ``jiang_2002``: Jiang, Ma, Li & Zhang (2002), Burns 28:713, doi:10.1016/S0305-4179(02)00104-3.
"""

# Plausibility ranges [low, high] (common practice: wide bounds around published skin data).
_LAYER_RANGES: dict[str, tuple[float, float, str]] = {
    "thickness": (0.0, 0.05, "m"),
    "conductivity": (0.1, 1.0, "W m-1 K-1"),
    "density": (800.0, 1400.0, "kg m-3"),
    "specific_heat": (1500.0, 4500.0, "J kg-1 K-1"),
    "perfusion_rate": (0.0, 0.05, "s-1"),
}
_SKIN_RANGES: dict[str, tuple[float, float, str]] = {
    "blood_density": (1000.0, 1100.0, "kg m-3"),
    "blood_specific_heat": (3000.0, 4500.0, "J kg-1 K-1"),
    "arterial_temperature": (303.15, 315.15, "K"),
    "core_temperature": (303.15, 315.15, "K"),
    "emissivity": (0.0, 1.0, "-"),
}
# Lower bounds that are exclusive (a zero thickness or emissivity is not a layer or surface).
_EXCLUSIVE_LOW = {"thickness", "emissivity"}


def _check(value: ArrayLike, quantity: str, bounds: tuple[float, float, str], where: str,
           layer: str | None) -> None:
    low, high, unit = bounds
    v = np.asarray(value, dtype=float)
    low_ok = v > low if quantity in _EXCLUSIVE_LOW else v >= low
    bad = ~(np.isfinite(v) & low_ok & (v <= high))
    if np.any(bad):
        first = float(v.reshape(-1)[np.flatnonzero(bad.reshape(-1))[0]])
        low_text = f"above {low:g}" if quantity in _EXCLUSIVE_LOW else f"from {low:g}"
        raise SkinPropertyError(
            f"{where}: {quantity} {first:g} {unit} is outside the physical range "
            f"({low_text} to {high:g} {unit})",
            layer=layer,
            quantity=quantity,
        )


def validate_skin(skin: Skin) -> None:
    """Check every property of a skin model against its physical range.

    Parameters
    ----------
    skin
        The skin model.

    Raises
    ------
    SkinPropertyError
        (a ``ValueError``) on one line naming the layer, the quantity, the bad value and the
        range expected, for the first offending entry.

    Examples
    --------
    >>> validate_skin(skin_properties("jiang_2002"))
    """
    expected = ("epidermis", "dermis", "subcutis")
    for position, layer in zip(expected, skin.layers, strict=True):
        if not isinstance(layer, SkinLayer):
            raise SkinPropertyError(
                f"skin {position}: expected a SkinLayer, got {type(layer).__name__}",
                layer=position,
            )
        where = f"skin layer {layer.name!r}"
        for quantity, bounds in _LAYER_RANGES.items():
            _check(getattr(layer, quantity), quantity, bounds, where, layer.name)
    for quantity, bounds in _SKIN_RANGES.items():
        _check(getattr(skin, quantity), quantity, bounds, "skin", None)


def skin_properties(name: str) -> Skin:
    """Return a published skin property set by name.

    Parameters
    ----------
    name
        One of the keys of :data:`SKIN_PROPERTY_SETS`.

    Returns
    -------
    Skin
        The property set.

    Raises
    ------
    SkinPropertyError
        (a ``ValueError``) naming the valid choices when ``name`` is unknown.

    Examples
    --------
    >>> skin_properties("torvi_dale_1994").dermis.conductivity
    0.523
    """
    try:
        return SKIN_PROPERTY_SETS[name]
    except (KeyError, TypeError):
        choices = ", ".join(sorted(SKIN_PROPERTY_SETS))
        raise SkinPropertyError(f"skin property set {name!r} is not one of {choices}") from None


def perfusion_heat_rate(
    temperature: ArrayLike, *, layer: SkinLayer, skin: Skin
) -> np.ndarray:
    """Heat delivered per unit volume by blood perfusion (the Pennes source term).

    Parameters
    ----------
    temperature
        Local tissue temperature ``T`` [K].
    layer
        The layer the tissue belongs to.
    skin
        The skin model (blood properties and arterial temperature).

    Returns
    -------
    numpy.ndarray
        ``w_b rho_b c_b (T_a - T)`` [W m-3]; negative where the tissue is hotter than blood.

    Notes
    -----
    Source term of (S.1) (Pennes 1948, doi:10.1152/jappl.1948.1.2.93).

    Examples
    --------
    >>> s = skin_properties("jiang_2002")
    >>> round(float(perfusion_heat_rate(320.15, layer=s.dermis, skin=s)), 1)
    -49952.5
    """
    w = np.asarray(layer.perfusion_rate, dtype=float)
    return w * np.asarray(skin.blood_density) * np.asarray(skin.blood_specific_heat) * (
        np.asarray(skin.arterial_temperature) - np.asarray(temperature, dtype=float)
    )
