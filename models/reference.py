"""Independent per-sample reference solve of the steady layer network, for checking.

This module solves the same steady equations as :func:`plyrisk.models.network.solve_network`,
written
afresh in scalar form: the unknowns are the face temperatures that are not prescribed, each
with an energy balance (heat in from the hot side = heat out toward the cold side), solved by
MINPACK's hybrid Powell method (:func:`scipy.optimize.root`, ``method="hybr"``) with a
finite-difference Jacobian. It is slow (one sample at a time) and exists only to check the
vectorized solver. It shares no code with :mod:`plyrisk.models.network` or
:mod:`plyrisk.models.elements`; it
takes air properties from :mod:`plyrisk.models.air` and Nusselt-number correlations from
:mod:`plyrisk.models.convection`.

Element laws, hot-side face ``a`` → cold-side face ``b``:

* solid, ``k(T) = k_ref + s (T - T_ref)``: ``q = (1/L) ∫_Tb^Ta k(T) dT`` (Kirchhoff integral);
* contact: ``q = (Ta - Tb) / R_c``;
* gap: ``q = Nu k_air(T_m) (Ta - Tb) / w + eps_eff sigma (Ta^4 - Tb^4)``, or
  ``4 eps_eff sigma T_m^3 (Ta - Tb)`` for the radiation term when linearized, with
  ``eps_eff = 1 / (1/eps_a + 1/eps_b - 1)`` and ``Nu = 1`` unless convection is enabled.

Boundaries: a prescribed flux, a prescribed face temperature, or a fire environment
``eps G + h (T_g - T) - eps sigma (T^4 - T_s^4)`` on the hot side; a prescribed face or skin
temperature, or an ambient ``h (T - T_a) + eps sigma (T^4 - T_s^4)`` on the cold side.

Starting guess: a linear ramp from an exposed-face estimate (the prescribed temperature, the
adiabatic face temperature of the environment, or the cold temperature plus the flux times the
series resistance at the cold temperature) down to the cold-side temperature; if ``hybr`` fails
from there, uniform fields are tried. A solution is accepted only when every face is above 0 K
(the ``T^4`` laws also have non-physical roots below) and one Newton correction computed from
the energy imbalance left and a finite-difference Jacobian moves no face by more than
``CORRECTION_TOLERANCE``: an a posteriori error estimate in kelvin, which unlike a flux
imbalance does not depend on how conductive the elements are.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import fields, replace
from typing import TYPE_CHECKING, Any, TypeVar, cast

import numpy as np
from numpy.typing import ArrayLike
from scipy.constants import Stefan_Boltzmann as SIGMA
from scipy.constants import g as GRAVITY
from scipy.optimize import brentq, root

from plyrisk.models import air, convection
from plyrisk.models.boundary import (
    ColdEnvironment,
    ColdSide,
    ColdSurface,
    HotEnvironment,
    HotFlux,
    HotSide,
    HotTemperature,
)
from plyrisk.models.stack import Element, Gap, Solid, validate_stack

REFERENCE_RADIATION_MODES = ("exact", "linearized")
"""Gap radiation treatments accepted by :func:`solve_reference`."""

DEFAULT_XTOL = 1e-13
"""Relative step tolerance passed to MINPACK ``hybrd``."""

CORRECTION_TOLERANCE = 1e-9
"""Largest accepted Newton correction of any face temperature at the solution [K]."""


if TYPE_CHECKING:  # pragma: no cover
    from _typeshed import DataclassInstance

_T = TypeVar("_T", bound="DataclassInstance")


class ReferenceSolveError(RuntimeError):
    """The reference solve failed to reach a solution from any of its starting guesses."""


def select_sample(obj: _T, index: int) -> _T:
    """Return a copy of an element or boundary with every per-sample array reduced to one entry.

    Parameters
    ----------
    obj
        A :class:`plyrisk.models.stack.Solid`, :class:`~plyrisk.models.stack.Gap` or boundary
        dataclass whose
        numeric fields are scalars or 1-D arrays of samples.
    index
        The sample to keep.

    Returns
    -------
    object
        The same dataclass type with scalar (Python ``float``) numeric fields.
    """
    changes = {}
    for f in fields(obj):
        v = getattr(obj, f.name)
        if v is None or isinstance(v, str):
            continue
        a = np.asarray(v, dtype=float)
        changes[f.name] = float(a[index] if a.ndim == 1 and a.shape[0] > 1 else a.reshape(-1)[0])
    return replace(obj, **changes)


def _scalar(value: ArrayLike) -> float:
    a = np.asarray(value, dtype=float)
    if a.size != 1:
        raise ValueError(
            f"solve_reference takes one sample: expected a scalar, got shape {a.shape}; use "
            "select_sample first"
        )
    return float(a.reshape(-1)[0])


def _flatten(layers: Sequence[Element], cold_side: ColdSide) -> list[tuple]:
    """The network elements as ``(kind, parameters)`` tuples, hot → cold."""
    out: list[tuple] = []
    for i, layer in enumerate(layers):
        if isinstance(layer, Solid):
            out.append(
                (
                    "solid",
                    _scalar(layer.thickness),
                    _scalar(layer.conductivity),
                    _scalar(layer.conductivity_slope),
                    _scalar(layer.reference_temperature),
                )
            )
            if layer.contact_resistance is not None:
                out.append(("contact", _scalar(layer.contact_resistance)))
        elif isinstance(layer, Gap):
            # a validated stack: a gap lies between solids, or ends at a surface cold side
            eps_a = _scalar(cast(Solid, layers[i - 1]).emissivity_cold)
            if i + 1 < len(layers):
                eps_b = _scalar(cast(Solid, layers[i + 1]).emissivity_hot)
            else:
                eps_b = _scalar(cast(ColdSurface, cold_side).emissivity)
            width = _scalar(layer.width)
            out.append(
                (
                    "gap",
                    width,
                    1.0 / (1.0 / eps_a + 1.0 / eps_b - 1.0),
                    layer.orientation,
                    _scalar(layer.height) / width,
                )
            )
        else:
            raise ValueError(f"layer {i} is not a Solid or a Gap")
    return out


def _gap_nusselt(ta: float, tb: float, width: float, orientation: str, aspect: float) -> float:
    tm = 0.5 * (ta + tb)
    nu_kin = float(air.kinematic_viscosity(tm, check_range=False))
    alpha = float(air.thermal_diffusivity(tm, check_range=False))
    ra = GRAVITY * abs(ta - tb) * width**3 / (tm * nu_kin * alpha)  # beta = 1 / T_m
    if orientation == "vertical":
        return float(convection.nusselt_vertical(ra, aspect))
    if orientation == "horizontal-up":
        return float(convection.nusselt_horizontal_up(ra))
    return 1.0


def element_flux(
    element: tuple, ta: float, tb: float, *, radiation: str, convection_enabled: bool
) -> float:
    """Heat flux through one flattened element from its hot-side face to its cold-side face.

    Parameters
    ----------
    element
        ``("solid", L, k_ref, slope, T_ref)``, ``("contact", R_c)`` or
        ``("gap", w, eps_eff, orientation, H/w)`` with SI values [m, W m-1 K-1, W m-1 K-2, K,
        m2 K W-1, -].
    ta
        Temperature of the hot-side face [K].
    tb
        Temperature of the cold-side face [K].
    radiation
        ``"exact"`` or ``"linearized"``.
    convection_enabled
        Apply the natural-convection Nusselt number in gaps.

    Returns
    -------
    float
        Heat flux [W m-2].
    """
    kind = element[0]
    if kind == "solid":
        _, thickness, k_ref, slope, t_ref = element
        # (1/L) * integral of k_ref + s (T - T_ref) from Tb to Ta
        integral = (k_ref - slope * t_ref) * (ta - tb) + 0.5 * slope * (ta * ta - tb * tb)
        return integral / thickness
    if kind == "contact":
        return (ta - tb) / element[1]
    _, width, eps_eff, orientation, aspect = element
    tm = 0.5 * (ta + tb)
    k_air = float(air.thermal_conductivity(tm, check_range=False))
    nu = _gap_nusselt(ta, tb, width, orientation, aspect) if convection_enabled else 1.0
    conduction = nu * k_air * (ta - tb) / width
    if radiation == "exact":
        rad = eps_eff * SIGMA * (ta**4 - tb**4)
    else:
        rad = 4.0 * eps_eff * SIGMA * tm**3 * (ta - tb)
    return conduction + rad


class _Problem:
    """Scalar boundary data and flattened elements of one sample."""

    def __init__(self, layers: Sequence[Element], hot_side: HotSide, cold_side: ColdSide,
                 radiation: str, convection_enabled: bool) -> None:
        self.elements = _flatten(layers, cold_side)
        self.nodes = len(self.elements) + 1
        self.kw: dict[str, Any] = {"radiation": radiation,
                                   "convection_enabled": convection_enabled}
        self.hot = hot_side
        self.cold = cold_side
        self.eps_exposed = _scalar(cast(Solid, layers[0]).emissivity_hot)
        last = layers[-1]
        self.eps_inner = _scalar(last.emissivity_cold) if isinstance(last, Solid) else math.nan
        self.hot_fixed = isinstance(hot_side, HotTemperature)
        self.cold_fixed = not isinstance(cold_side, ColdEnvironment)
        if isinstance(hot_side, HotEnvironment):
            self.g = _scalar(hot_side.incident_flux)
            self.t_gas = _scalar(hot_side.gas_temperature)
            self.h_hot = _scalar(hot_side.convection_coefficient)
            ts = hot_side.surroundings_temperature
            self.ts_hot = self.t_gas if ts is None else _scalar(ts)
        elif isinstance(hot_side, HotFlux):
            self.q_hot = _scalar(hot_side.heat_flux)
        if isinstance(cold_side, ColdEnvironment):
            self.t_amb = _scalar(cold_side.ambient_temperature)
            self.h_cold = _scalar(cold_side.convection_coefficient)
            ts = cold_side.surroundings_temperature
            self.ts_cold = self.t_amb if ts is None else _scalar(ts)
            self.t_cold = self.t_amb
        else:
            self.t_cold = _scalar(cold_side.temperature)
        self.free = [
            j
            for j in range(self.nodes)
            if not ((j == 0 and self.hot_fixed) or (j == self.nodes - 1 and self.cold_fixed))
        ]

    def flux_in(self, t0: float) -> float:
        """Net flux delivered to the exposed face [W m-2]."""
        if isinstance(self.hot, HotFlux):
            return self.q_hot
        eps = self.eps_exposed
        return (
            eps * self.g
            + self.h_hot * (self.t_gas - t0)
            - eps * SIGMA * (t0**4 - self.ts_hot**4)
        )

    def flux_out(self, tm: float) -> float:
        """Flux leaving the innermost face to the ambient [W m-2]."""
        return self.h_cold * (tm - self.t_amb) + self.eps_inner * SIGMA * (
            tm**4 - self.ts_cold**4
        )

    def temperatures(self, free_values: np.ndarray) -> list[float]:
        t = [0.0] * self.nodes
        if self.hot_fixed:
            t[0] = _scalar(cast(HotTemperature, self.hot).temperature)
        if self.cold_fixed:
            t[-1] = self.t_cold
        for j, v in zip(self.free, free_values, strict=True):
            t[j] = float(v)
        return t

    def fluxes(self, t: list[float]) -> list[float]:
        return [
            element_flux(el, t[j], t[j + 1], **self.kw) for j, el in enumerate(self.elements)
        ]

    def residual(self, t: list[float]) -> np.ndarray:
        """Energy imbalance at each free face [W m-2]."""
        q = self.fluxes(t)
        res = np.empty(len(self.free))
        for i, j in enumerate(self.free):
            q_before = self.flux_in(t[0]) if j == 0 else q[j - 1]
            q_after = self.flux_out(t[-1]) if j == self.nodes - 1 else q[j]
            res[i] = q_before - q_after
        return res

    def correction(self, t_free: np.ndarray) -> float:
        """Largest face-temperature change of one Newton step from ``t_free`` [K]."""
        res = self.residual(self.temperatures(t_free))
        step = 1e-4  # [K], forward difference; the Jacobian only scales the estimate
        jac = np.empty((res.size, res.size))
        for i in range(res.size):
            shifted = t_free.copy()
            shifted[i] += step
            jac[:, i] = (self.residual(self.temperatures(shifted)) - res) / step
        try:
            delta = np.linalg.solve(jac, -res)
        except np.linalg.LinAlgError:
            return math.inf
        size = float(np.max(np.abs(delta)))
        return size if math.isfinite(size) else math.inf

    def hot_estimate(self) -> float:
        """A rough exposed-face temperature for the starting ramp [K]."""
        if self.hot_fixed:
            return _scalar(cast(HotTemperature, self.hot).temperature)
        if isinstance(self.hot, HotEnvironment):
            # Adiabatic face temperature: heat flows inward, so the face is no hotter than this.
            lo = 1e-3
            hi = max(self.t_gas, self.ts_hot, (self.g / SIGMA + self.ts_hot**4) ** 0.25) + 1.0
            if self.flux_in(lo) <= 0.0:
                return self.t_cold
            return brentq(self.flux_in, lo, hi, xtol=1e-9)
        # Prescribed flux: series resistances with gaps evaluated at the cold temperature.
        total = 0.0
        tc = self.t_cold
        for el in self.elements:
            total += 1.0 / element_flux(el, tc + 0.5, tc - 0.5, **self.kw)
        return self.t_cold + self.q_hot * total


def solve_reference(
    layers: Sequence[Element],
    hot_side: HotSide,
    cold_side: ColdSide,
    *,
    radiation: str = "exact",
    convection_enabled: bool = False,
    xtol: float = DEFAULT_XTOL,
) -> np.ndarray:
    """Face temperatures of one sample of the layer network, solved one sample at a time.

    Parameters
    ----------
    layers
        Solids and gaps, hot (exposed) side first, with scalar numeric fields (see
        :func:`select_sample`).
    hot_side
        :class:`plyrisk.models.boundary.HotFlux`, :class:`~plyrisk.models.boundary.HotTemperature`
        or
        :class:`~plyrisk.models.boundary.HotEnvironment` with scalar fields.
    cold_side
        :class:`plyrisk.models.boundary.ColdTemperature`,
        :class:`~plyrisk.models.boundary.ColdSurface` or
        :class:`~plyrisk.models.boundary.ColdEnvironment` with scalar fields.
    radiation
        ``"exact"`` or ``"linearized"`` gap radiation.
    convection_enabled
        Apply natural-convection correlations in gaps.
    xtol
        Relative step tolerance of the hybrid Powell iteration.

    Returns
    -------
    numpy.ndarray
        Face temperatures hot → cold, shape ``(M + 1,)`` for ``M`` network elements (each solid
        with a contact resistance adds a contact element after it) [K].

    Raises
    ------
    plyrisk.models.stack.StackError
        For an invalid element, boundary or arrangement.
    ValueError
        For an unknown ``radiation`` mode or non-scalar inputs.
    ReferenceSolveError
        When no starting guess leads to a solution above 0 K whose Newton correction is below
        ``CORRECTION_TOLERANCE``.
    """
    if radiation not in REFERENCE_RADIATION_MODES:
        raise ValueError(
            f"radiation {radiation!r} is not one of {', '.join(REFERENCE_RADIATION_MODES)}"
        )
    layers = list(layers)
    validate_stack(layers, hot_side, cold_side)
    p = _Problem(layers, hot_side, cold_side, radiation, bool(convection_enabled))
    if not p.free:
        return np.array(p.temperatures(np.empty(0)))

    t_hot = p.hot_estimate()
    frac = np.linspace(0.0, 1.0, p.nodes)
    guesses = [
        t_hot + (p.t_cold - t_hot) * frac,  # a ramp from the hot estimate to the cold side
        np.full(p.nodes, t_hot),
        np.full(p.nodes, 0.5 * (t_hot + p.t_cold)),
        np.full(p.nodes, p.t_cold),
    ]
    barrier = np.empty(0)  # the huge imbalance, sized for each starting guess below

    def equations(x: np.ndarray) -> np.ndarray:
        # Trial points at or below 0 K (where T^4 has spurious roots and the air properties are
        # undefined) or so far out that T^4 overflows get a huge imbalance, so that hybrd
        # rejects the step and shrinks its trust region.
        if not np.all(x > 0.0):
            return barrier
        try:
            return p.residual(p.temperatures(x))
        except OverflowError:
            return barrier

    last = "no attempt"
    for guess in guesses:
        x0 = guess[p.free]
        barrier = np.full(x0.shape, 1e150)
        for factor in (1.0, 0.1):  # initial trust region: |x0| then |x0| / 10
            with np.errstate(all="ignore"):
                sol = root(
                    equations,
                    x0,
                    method="hybr",
                    options={"xtol": xtol, "maxfev": 200 * (x0.size + 1), "factor": factor},
                )
            if not np.all(sol.x > 0.0):
                continue
            with np.errstate(all="ignore"):
                correction = p.correction(np.asarray(sol.x, dtype=float))
            if correction <= CORRECTION_TOLERANCE:
                return np.array(p.temperatures(sol.x))
            last = f"{sol.message} (Newton correction left {correction:.3g} K)"
    raise ReferenceSolveError(f"reference solve did not converge: {last}")


def reference_fluxes(
    layers: Sequence[Element],
    cold_side: ColdSide,
    temperatures: Sequence[float],
    *,
    radiation: str = "exact",
    convection_enabled: bool = False,
) -> np.ndarray:
    """Heat flux through every network element at given face temperatures.

    Parameters
    ----------
    layers
        Solids and gaps with scalar fields, hot side first.
    cold_side
        The cold-side boundary (its emissivity faces the last gap when a surface).
    temperatures
        Face temperatures hot → cold, ``(M + 1,)`` [K].
    radiation
        ``"exact"`` or ``"linearized"``.
    convection_enabled
        Apply natural-convection correlations in gaps.

    Returns
    -------
    numpy.ndarray
        Heat flux through each element, ``(M,)`` [W m-2].
    """
    elements = _flatten(list(layers), cold_side)
    t = [float(v) for v in temperatures]
    if len(t) != len(elements) + 1:
        raise ValueError(f"expected {len(elements) + 1} face temperatures, got {len(t)}")
    return np.array([element_flux(el, t[j], t[j + 1], radiation=radiation,
                                  convection_enabled=bool(convection_enabled))
                     for j, el in enumerate(elements)])
