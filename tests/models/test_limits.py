"""Limits and orderings that the physics guarantees, checked with hypothesis.

Every element law here carries more heat when its hot face is hotter and less when its cold
face is hotter, and every boundary delivers (hot side) or removes (cold side) heat monotonically.
For a series network that gives, under a fixed exposure and a fixed cold side:

* a thicker or less conductive layer never raises the heat flux reaching the cold side;
* with a fire environment or a prescribed exposed-face temperature, such a layer never raises
  the inner-surface temperature either — unless the layer is the gap between the inner surface
  and a skin-like surface (then the inner surface is on the hot side of the change and warms);
* with a prescribed flux the heat flux is fixed, so the inner-surface temperature (set by the
  flux and the cold side alone) does not change, while the exposed face does not cool;
* a stronger exposure (incident flux, prescribed flux) never lowers the inner-surface
  temperature.

The solver stops within 1e-6 K of the solution, so orderings are checked to 2e-6 K.

Source of the orderings: common practice — monotonicity of steady series conduction networks
with monotone element laws (the comparison principle for steady heat conduction); the
emissivity → 0 limit is Fourier's law plus the still-air conduction of each gap (common
practice).
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.constants import Stefan_Boltzmann as SIGMA
from scipy.optimize import brentq

from plyrisk.models import air
from plyrisk.models.boundary import (
    ColdEnvironment,
    ColdSurface,
    ColdTemperature,
    HotEnvironment,
    HotFlux,
    HotTemperature,
)
from plyrisk.models.network import solve_network
from plyrisk.models.stack import Gap, Solid

SOLVER_SLACK = 2e-6  # [K], two solves each within the 1e-6 K default tolerance
CHECKS = settings(max_examples=60, deadline=None, derandomize=True, database=None)

thickness = st.floats(0.2e-3, 5e-3)
conductivity = st.floats(0.03, 1.0)
emissivity = st.floats(0.1, 1.0)
width = st.floats(0.5e-3, 10e-3)
orientation = st.sampled_from(["vertical", "horizontal-up", "horizontal-down"])


# --- Emissivity -> 0: pure conduction -------------------------------------------------------


def conduction_only(layers, t_hot, t_cold):
    """Series conduction with gaps as still air, k_air(T_m) dT / w: march cold → hot for a
    trial flux and find the flux that reproduces the hot temperature (brentq)."""

    def hot_face(q):
        tb = t_cold
        for layer in reversed(layers):
            if isinstance(layer, Solid):
                tb = tb + q * layer.thickness / layer.conductivity
            else:
                w = layer.width

                def balance(ta, tb=tb, w=w):
                    tm = 0.5 * (ta + tb)
                    return air.thermal_conductivity(tm, check_range=False) * (ta - tb) / w - q

                tb = brentq(balance, tb, tb + q * w / 0.02 + 1.0, xtol=1e-13, rtol=1e-15)
        return tb

    q = brentq(lambda q: hot_face(q) - t_hot, 0.0, 1e6, xtol=1e-12, rtol=1e-15)
    return q


@CHECKS
@given(
    l1=thickness, k1=conductivity, w1=width, l2=thickness, k2=conductivity, w2=width,
    t_hot=st.floats(320.0, 1000.0), t_cold=st.floats(290.0, 310.0), to_surface=st.booleans(),
)
def test_vanishing_emissivity_gives_pure_conduction(l1, k1, w1, l2, k2, w2, t_hot, t_cold,
                                                    to_surface):
    eps = 1e-9
    layers = [
        Solid("outer", l1, k1, emissivity_hot=eps, emissivity_cold=eps),
        Gap("gap 1", w1, "horizontal-down"),
        Solid("inner", l2, k2, emissivity_hot=eps, emissivity_cold=eps),
    ]
    if to_surface:
        layers.append(Gap("gap 2", w2, "vertical"))
        cold = ColdSurface(t_cold, emissivity=eps)
    else:
        cold = ColdTemperature(t_cold)
    sol = solve_network(layers, HotTemperature(t_hot), cold)
    assert sol.converged.all()
    q = conduction_only(layers, t_hot, t_cold)
    # What radiation is left is at most eps_eff sigma T_hot^4 per gap, eps_eff = 1/(2/eps - 1);
    # the rest is rounding in the two solves (1e-9 of the flux).
    gaps = 2 if to_surface else 1
    leftover = gaps * SIGMA * t_hot**4 / (2.0 / eps - 1.0)
    assert abs(sol.heat_flux[0] - q) <= leftover + 1e-9 * q
    assert np.all(sol.radiative_share[0, [1, 3] if to_surface else [1]] < 1e-6)


# --- Thicker or less conductive layers ------------------------------------------------------


def build(l_shell, k_shell, w_gap, orient, l_liner, k_liner, w_skin, cold_kind):
    layers = [
        Solid("shell", l_shell, k_shell, emissivity_hot=0.85, emissivity_cold=0.8),
        Gap("air", w_gap, orient, height=0.5),
        Solid("liner", l_liner, k_liner, emissivity_hot=0.9, emissivity_cold=0.9),
    ]
    if cold_kind == "surface":
        layers.append(Gap("air to skin", w_skin, "vertical", height=0.5))
        return layers, ColdSurface(306.0, emissivity=0.97)
    if cold_kind == "temperature":
        return layers, ColdTemperature(306.0)
    return layers, ColdEnvironment(300.0, convection_coefficient=8.0)


def hot_side(kind, strength):
    if kind == "environment":
        return HotEnvironment(strength, gas_temperature=900.0, convection_coefficient=30.0)
    if kind == "temperature":
        return HotTemperature(400.0 + strength / 100.0)
    return HotFlux(strength / 10.0)


def thicken(layers, index, factor, what):
    layer = layers[index]
    if isinstance(layer, Gap):
        return [*layers[:index], replace(layer, width=layer.width * factor), *layers[index + 1:]]
    if what == "thickness":
        changed = replace(layer, thickness=layer.thickness * factor)
    else:
        changed = replace(layer, conductivity=layer.conductivity / factor)
    return [*layers[:index], changed, *layers[index + 1:]]


stack = {
    "l_shell": thickness, "k_shell": conductivity, "w_gap": width, "orient": orientation,
    "l_liner": thickness, "k_liner": conductivity, "w_skin": width,
}


@CHECKS
@given(
    **stack,
    hot_kind=st.sampled_from(["environment", "temperature", "flux"]),
    cold_kind=st.sampled_from(["temperature", "surface", "environment"]),
    strength=st.floats(5e3, 60e3),
    index=st.integers(0, 3),
    factor=st.floats(1.01, 3.0),
    what=st.sampled_from(["thickness", "conductivity"]),
    convection_enabled=st.booleans(),
)
def test_more_insulation_never_warms_the_inner_surface(
    l_shell, k_shell, w_gap, orient, l_liner, k_liner, w_skin, hot_kind, cold_kind, strength,
    index, factor, what, convection_enabled,
):
    layers, cold = build(l_shell, k_shell, w_gap, orient, l_liner, k_liner, w_skin, cold_kind)
    index = min(index, len(layers) - 1)
    hot = hot_side(hot_kind, strength)
    kw = {"convection_enabled": convection_enabled}
    base = solve_network(layers, hot, cold, **kw)
    more = solve_network(thicken(layers, index, factor, what), hot, cold, **kw)
    assert base.converged.all() and more.converged.all()
    t0, t1 = base.inner_surface_temperature[0], more.inner_surface_temperature[0]
    q0, q1 = base.heat_flux[0], more.heat_flux[0]
    skin_gap = cold_kind == "surface" and index == len(layers) - 1
    conductance = 1e4  # [W m-2 K-1], a bound on any element's conductance here
    if hot_kind == "flux":
        assert abs(q1 - q0) <= 1e-9 * q0
        if not skin_gap:
            assert abs(t1 - t0) <= SOLVER_SLACK
        else:
            assert t1 >= t0 - SOLVER_SLACK  # the inner surface is on the hot side of the change
        assert more.interface_temperature[0, 0] >= base.interface_temperature[0, 0] - SOLVER_SLACK
    else:
        assert q1 <= q0 + conductance * SOLVER_SLACK
        if not skin_gap:
            assert t1 <= t0 + SOLVER_SLACK


@CHECKS
@given(
    **stack,
    hot_kind=st.sampled_from(["environment", "flux"]),
    cold_kind=st.sampled_from(["temperature", "surface", "environment"]),
    strength=st.floats(0.0, 50e3),
    extra=st.floats(1.0, 20e3),
    convection_enabled=st.booleans(),
)
def test_stronger_exposure_never_cools_the_inner_surface(
    l_shell, k_shell, w_gap, orient, l_liner, k_liner, w_skin, hot_kind, cold_kind, strength,
    extra, convection_enabled,
):
    layers, cold = build(l_shell, k_shell, w_gap, orient, l_liner, k_liner, w_skin, cold_kind)
    kw = {"convection_enabled": convection_enabled}
    base = solve_network(layers, hot_side(hot_kind, strength), cold, **kw)
    more = solve_network(layers, hot_side(hot_kind, strength + extra), cold, **kw)
    assert base.converged.all() and more.converged.all()
    assert more.inner_surface_temperature[0] >= base.inner_surface_temperature[0] - SOLVER_SLACK
    assert more.heat_flux[0] >= base.heat_flux[0] - 1e4 * SOLVER_SLACK
    if cold_kind != "temperature":
        # the cold side is not pinned, so more heat through it must warm the inner surface
        assert more.inner_surface_temperature[0] > base.inner_surface_temperature[0]

