"""Heat flow through the elements of the network: solids, contact resistances and air gaps.

Each function is pure and broadcasts over samples. It takes the temperatures of the element's
hot-side face ``Ta`` and cold-side face ``Tb`` and returns the heat flux from ``a`` to ``b`` and
its partial derivatives, ``(q, dq/dTa, dq/dTb)``, for the Newton solve in
:mod:`plyrisk.models.network`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike
from scipy.constants import Stefan_Boltzmann as SIGMA
from scipy.constants import g as STANDARD_GRAVITY

from plyrisk.models import air, convection
from plyrisk.models.boundary import FloatArray

RADIATION_MODES = ("exact", "linearized")


def solid_heat_flux(
    hot_face_temperature: np.ndarray,
    cold_face_temperature: np.ndarray,
    *,
    thickness: FloatArray,
    conductivity: FloatArray,
    conductivity_slope: FloatArray = 0.0,
    reference_temperature: FloatArray = 293.15,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Conduction through a slab whose conductivity is linear in temperature.

    ``q = k(T_m) (Ta - Tb) / L`` with ``k(T) = k_ref + s (T - T_ref)`` and ``T_m`` the mean face
    temperature. For a linear ``k(T)`` this is exact (Kirchhoff transform); for ``s = 0`` it is
    Fourier's law.                                                                       (E.1)

    Parameters
    ----------
    hot_face_temperature
        Temperature of the hot-side face, ``Ta`` [K].
    cold_face_temperature
        Temperature of the cold-side face, ``Tb`` [K].
    thickness
        Slab thickness, ``L`` [m].
    conductivity
        Conductivity at the reference temperature, ``k_ref`` [W m-1 K-1].
    conductivity_slope
        Slope ``s`` of the conductivity with temperature [W m-1 K-2].
    reference_temperature
        Reference temperature ``T_ref`` [K].

    Returns
    -------
    q, dq_dTa, dq_dTb
        Heat flux [W m-2] and its derivatives [W m-2 K-1].

    Examples
    --------
    Fourier's law (``s = 0``) for a 1 mm fabric with 10 K across it; the derivatives are
    ``+-k/L``:

    >>> import numpy as np
    >>> from plyrisk.models.elements import solid_heat_flux
    >>> q, dq_dta, dq_dtb = solid_heat_flux(np.array(310.0), np.array(300.0),
    ...                                      thickness=1e-3, conductivity=0.05)
    >>> round(float(q), 6), round(float(dq_dta), 6), round(float(dq_dtb), 6)
    (500.0, 50.0, -50.0)
    """
    return conduction_law(hot_face_temperature, cold_face_temperature, thickness, conductivity,
                          conductivity_slope, reference_temperature)


def conduction_law(ta: np.ndarray, tb: np.ndarray, thickness: FloatArray, conductivity: FloatArray,
                   conductivity_slope: FloatArray, reference_temperature: FloatArray,
                   ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Eq. (E.1) with positional arguments (the form compiled for the transient kernels).

    Parameters and returns as for :func:`solid_heat_flux`.
    """
    dt = ta - tb
    k = conductivity + conductivity_slope * (0.5 * (ta + tb) - reference_temperature)
    g = k / thickness
    half_slope = 0.5 * conductivity_slope / thickness * dt
    return g * dt, g + half_slope, half_slope - g


def contact_heat_flux(
    hot_face_temperature: np.ndarray,
    cold_face_temperature: np.ndarray,
    *,
    contact_resistance: FloatArray,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Heat flow across a contact resistance, ``q = (Ta - Tb) / R_c``.                  (E.2)

    Parameters
    ----------
    hot_face_temperature
        Temperature on the hot side of the contact, ``Ta`` [K].
    cold_face_temperature
        Temperature on the cold side of the contact, ``Tb`` [K].
    contact_resistance
        Contact resistance ``R_c`` [m2 K W-1].

    Returns
    -------
    q, dq_dTa, dq_dTb
        Heat flux [W m-2] and its derivatives [W m-2 K-1].
    """
    g = 1.0 / np.asarray(contact_resistance, dtype=float)
    g = np.broadcast_to(g, np.broadcast_shapes(np.shape(g), np.shape(hot_face_temperature)))
    return g * (hot_face_temperature - cold_face_temperature), g, -g


def effective_emissivity(emissivity_a: ArrayLike, emissivity_b: ArrayLike) -> np.ndarray:
    """Effective emissivity of two parallel grey diffuse surfaces.

    ``eps_eff = 1 / (1/eps_a + 1/eps_b - 1)``.                                           (E.3)

    Parameters
    ----------
    emissivity_a
        Emissivity of the first surface [-].
    emissivity_b
        Emissivity of the second surface [-].

    Returns
    -------
    numpy.ndarray
        Effective emissivity [-].
    """
    return 1.0 / (1.0 / np.asarray(emissivity_a) + 1.0 / np.asarray(emissivity_b) - 1.0)


@dataclass(frozen=True)
class GapFlow:
    """Heat flow across a gap split into its parts, at given face temperatures.

    Attributes
    ----------
    total, conduction, radiation
        Heat fluxes [W m-2]; ``conduction`` includes natural convection when enabled.
    rayleigh
        Rayleigh number [-].
    nusselt
        Nusselt number applied to the still-air conduction [-] (1 with convection off).
    onset
        Whether the gap is past the onset of convection.
    """

    total: np.ndarray
    conduction: np.ndarray
    radiation: np.ndarray
    rayleigh: np.ndarray
    nusselt: np.ndarray
    onset: np.ndarray


def gap_heat_flux(
    hot_face_temperature: np.ndarray,
    cold_face_temperature: np.ndarray,
    *,
    gap_width: ArrayLike,
    emissivity_hot_face: ArrayLike,
    emissivity_cold_face: ArrayLike,
    radiation: str = "exact",
    convection_enabled: bool = False,
    orientation: str = "vertical",
    gap_height: ArrayLike = 0.5,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Heat flow across a still-air gap: conduction in parallel with grey radiation.

    ``q = Nu k_air(T_m) (Ta - Tb) / w + eps_eff sigma (Ta^4 - Tb^4)``                 (E.4)

    with ``radiation="linearized"`` replacing the radiative term by
    ``4 eps_eff sigma T_m^3 (Ta - Tb)``. ``Nu = 1`` unless convection is enabled, in which case
    the correlation of :func:`plyrisk.models.convection.nusselt` for the orientation applies; its
    dependence on the face temperatures through the Rayleigh number is part of the derivatives.

    Parameters
    ----------
    hot_face_temperature
        Temperature of the face on the hot side of the gap, ``Ta`` [K].
    cold_face_temperature
        Temperature of the face on the cold side of the gap, ``Tb`` [K].
    gap_width
        Face-to-face width, ``w`` [m].
    emissivity_hot_face
        Emissivity of the face on the hot side [-].
    emissivity_cold_face
        Emissivity of the face on the cold side [-].
    radiation
        ``"exact"`` or ``"linearized"``.
    convection_enabled
        Apply the natural-convection correlation.
    orientation
        Gap orientation, see :data:`plyrisk.models.stack.GAP_ORIENTATIONS`.
    gap_height
        Height of a vertical gap [m].

    Returns
    -------
    q, dq_dTa, dq_dTb
        Heat flux [W m-2] and its derivatives [W m-2 K-1].

    Examples
    --------
    A 2 mm gap with 10 K across it: air conduction at the mean temperature plus grey radiation
    between two faces of emissivity 0.9 (E.4):

    >>> import numpy as np
    >>> from scipy.constants import Stefan_Boltzmann as sigma
    >>> from plyrisk.models.air import thermal_conductivity
    >>> from plyrisk.models.elements import gap_heat_flux
    >>> q, dq_dta, dq_dtb = gap_heat_flux(np.array(320.0), np.array(310.0), gap_width=2e-3,
    ...                                   emissivity_hot_face=0.9, emissivity_cold_face=0.9)
    >>> round(float(q), 1)
    195.3
    >>> conduction = thermal_conductivity(315.0) * (320.0 - 310.0) / 2e-3
    >>> radiation = 0.9 / (2.0 - 0.9) * sigma * (320.0**4 - 310.0**4)
    >>> round(float(conduction + radiation), 1)
    195.3
    """
    es = effective_emissivity(emissivity_hot_face, emissivity_cold_face) * SIGMA
    return gap_kernel(
        hot_face_temperature,
        cold_face_temperature,
        inverse_width=1.0 / np.asarray(gap_width, dtype=float),
        radiative_factor=es,
        aspect_ratio=np.asarray(gap_height) / np.asarray(gap_width),
        radiation=radiation,
        convection_enabled=convection_enabled,
        orientation=orientation,
    )


def gap_kernel(
    ta: np.ndarray,
    tb: np.ndarray,
    *,
    inverse_width: np.ndarray,
    radiative_factor: np.ndarray,
    aspect_ratio: np.ndarray,
    radiation: str,
    convection_enabled: bool,
    orientation: str,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Eq. (E.4) with its per-sample constants precomputed, for the inner Newton loop.

    Parameters
    ----------
    ta, tb
        Face temperatures on the hot and cold side of the gap [K].
    inverse_width
        ``1 / w`` [m-1].
    radiative_factor
        ``eps_eff * sigma`` [W m-2 K-4].
    aspect_ratio
        Gap height over width [-].
    radiation, convection_enabled, orientation
        As for :func:`gap_heat_flux`.

    Returns
    -------
    q, dq_dTa, dq_dTb
        Heat flux [W m-2] and its derivatives [W m-2 K-1].
    """
    dt = ta - tb
    tm = 0.5 * (ta + tb)
    k, dk = air.thermal_conductivity_with_slope(tm)
    g = k * inverse_width
    dg = (0.5 * dt) * dk * inverse_width
    cross_a = cross_b = 0.0
    if convection_enabled:
        ra = convection.rayleigh_number(ta, tb, 1.0 / inverse_width)
        nu, dnu = convection.nusselt_with_slope(
            ra, orientation=orientation, aspect_ratio=aspect_ratio
        )
        # d(Nu)/dTa = dNu/dlnRa * dlnRa/dTa with dlnRa/dTa = 1/dt - p/(2 Tm) and
        # dlnRa/dTb = -1/dt - p/(2 Tm), p = dln(T nu alpha)/dlnT; times g dt, no 1/dt left.
        half = (0.5 * dt / tm) * air.rayleigh_property_slope(tm)
        gs = g * dnu
        cross_a = gs * (1.0 - half)
        cross_b = -gs * (1.0 + half)
        g = g * nu
        dg = dg * nu
    es = radiative_factor
    if radiation == "exact":
        ta3 = ta * ta * ta
        tb3 = tb * tb * tb
        q = g * dt + es * (ta3 * ta - tb3 * tb)
        return q, g + dg + cross_a + 4.0 * es * ta3, dg - g + cross_b - 4.0 * es * tb3
    if radiation == "linearized":
        tm2 = tm * tm
        hr = 4.0 * es * tm2 * tm
        dhr = 6.0 * es * tm2 * dt  # d(hr)/dTa * dt = d(hr)/dTb * dt
        q = (g + hr) * dt
        return q, g + hr + dg + dhr + cross_a, dg + dhr - g - hr + cross_b
    raise ValueError(f"radiation {radiation!r} is not one of {', '.join(RADIATION_MODES)}")


def gap_heat_flow_parts(
    hot_face_temperature: np.ndarray,
    cold_face_temperature: np.ndarray,
    *,
    gap_width: ArrayLike,
    emissivity_hot_face: ArrayLike,
    emissivity_cold_face: ArrayLike,
    radiation: str = "exact",
    convection_enabled: bool = False,
    orientation: str = "vertical",
    gap_height: ArrayLike = 0.5,
) -> GapFlow:
    """The parts of Eq. (E.4) at given face temperatures, for reporting.

    Parameters are those of :func:`gap_heat_flux`.

    Returns
    -------
    GapFlow
    """
    ta, tb = hot_face_temperature, cold_face_temperature
    dt = ta - tb
    tm = 0.5 * (ta + tb)
    width = np.asarray(gap_width, dtype=float)
    k, group = air.conductivity_and_rayleigh_group(tm)
    ra = STANDARD_GRAVITY * np.abs(dt) * width**3 / group  # as convection.rayleigh_number
    aspect = np.asarray(gap_height) / width
    if convection_enabled:
        nu = convection.nusselt(ra, orientation=orientation, aspect_ratio=aspect)
    else:
        nu = np.ones_like(ra)
    cond = nu * k / width * dt
    es = effective_emissivity(emissivity_hot_face, emissivity_cold_face) * SIGMA
    if radiation == "exact":
        rad = es * (ta**4 - tb**4)
    elif radiation == "linearized":
        rad = 4.0 * es * tm**3 * dt
    else:
        raise ValueError(f"radiation {radiation!r} is not one of {', '.join(RADIATION_MODES)}")
    onset = convection.convection_onset(ra, orientation=orientation, aspect_ratio=aspect)
    return GapFlow(cond + rad, cond, rad, ra, nu, onset)
