"""Rayleigh number, onset of convection and the gap Nusselt-number correlations."""

from __future__ import annotations

import numpy as np
import pytest
from CoolProp.CoolProp import PropsSI

from plyrisk.models import convection
from plyrisk.models.boundary import ColdTemperature, HotTemperature
from plyrisk.models.network import solve_network
from plyrisk.models.stack import Gap, Solid

# Source: Chandrasekhar, Hydrodynamic and Hydromagnetic Stability (1961): a horizontal fluid
# layer between rigid plates heated from below becomes unstable at Ra = 1708 (1707.76).
RA_CRITICAL = 1708.0
G = 9.80665  # [m s-2] # Source: CGPM 1901 standard acceleration of gravity


# --- Rayleigh number ------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("t_hot", "t_cold", "width"),
    [(305.0, 295.0, 0.01), (520.0, 480.0, 0.005), (900.0, 700.0, 0.02), (320.0, 300.0, 0.03)],
)
def test_rayleigh_number_matches_coolprop_properties(t_hot, t_cold, width):
    tm = 0.5 * (t_hot + t_cold)
    p = 101325.0  # [Pa] # common practice (standard atmosphere)
    rho = PropsSI("D", "T", tm, "P", p, "Air")
    nu = PropsSI("V", "T", tm, "P", p, "Air") / rho
    alpha = PropsSI("L", "T", tm, "P", p, "Air") / (rho * PropsSI("C", "T", tm, "P", p, "Air"))
    beta = PropsSI("isobaric_expansion_coefficient", "T", tm, "P", p, "Air")
    # Source: Ra = g beta dT L^3 / (nu alpha) with CoolProp air properties (Lemmon et al. 2000,
    # Lemmon & Jacobsen 2004); 1 % covers the dilute-gas and ideal-gas simplifications.
    expected = G * beta * (t_hot - t_cold) * width**3 / (nu * alpha)
    got = convection.rayleigh_number(t_hot, t_cold, width)
    assert got == pytest.approx(expected, rel=0.01)
    # the Rayleigh number uses |dT|: it does not depend on which face is hotter
    assert convection.rayleigh_number(t_cold, t_hot, width) == pytest.approx(got, rel=1e-14)


# --- Horizontal layer heated from below -----------------------------------------------------


@pytest.mark.parametrize("ra", [0.0, 1e-3, 10.0, 1000.0, 1700.0, RA_CRITICAL])
def test_horizontal_up_is_conduction_up_to_critical(ra):
    # Source: Chandrasekhar 1961 (no convection below Ra_c); Hollands et al. 1976 (Nu = 1).
    assert convection.nusselt_horizontal_up(ra) == 1.0


@pytest.mark.parametrize("ra", [RA_CRITICAL * (1 + 1e-9), 1720.0, 5000.0, 5e4])
def test_horizontal_up_convects_above_critical(ra):
    # Source: Chandrasekhar 1961 (convection above Ra_c = 1708)
    assert convection.nusselt_horizontal_up(ra) > 1.0


@pytest.mark.parametrize("ra", [2000.0, 5830.0, 1e4, 5e4, 1e5])
def test_horizontal_up_matches_hollands_formula(ra):
    # Source: Hollands, Unny, Raithby & Konicek, J. Heat Transfer 98 (1976) 189-193, at zero
    # tilt: Nu = 1 + 1.44 [1 - 1708/Ra]+ + [(Ra/5830)^(1/3) - 1]+ (re-implemented here).
    expected = 1.0 + 1.44 * max(1.0 - 1708.0 / ra, 0.0) + max((ra / 5830.0) ** (1 / 3) - 1, 0.0)
    assert convection.nusselt_horizontal_up(ra) == pytest.approx(expected, rel=1e-13)


def test_onset_flag_at_critical_rayleigh():
    # Source: Chandrasekhar 1961, Ra_c = 1708
    kw = {"orientation": "horizontal-up", "aspect_ratio": 50.0}
    assert not convection.convection_onset(1700.0, **kw)
    assert convection.convection_onset(1720.0, **kw)
    # common practice: a layer heated from above is stably stratified and never convects
    down = {"orientation": "horizontal-down", "aspect_ratio": 50.0}
    assert not np.any(convection.convection_onset(np.array([1e3, 1e5, 1e7]), **down))
    assert np.all(convection.nusselt(np.array([1e3, 1e5]), **down) == 1.0)


def test_network_onset_flag_flips_where_solver_rayleigh_crosses_critical():
    # A horizontal gap heated from below between two thin, highly conducting plates; the
    # temperature difference is swept so that the solved Rayleigh number crosses 1708.
    dt = np.linspace(2.0, 60.0, 59)
    layers = [
        Solid("lower plate", 1e-4, 50.0, emissivity_cold=0.5),
        Gap("layer", 0.012, "horizontal-up"),
        Solid("upper plate", 1e-4, 50.0, emissivity_hot=0.5),
    ]
    for enabled in (False, True):
        sol = solve_network(
            layers,
            HotTemperature(300.0 + dt),
            ColdTemperature(300.0),
            convection_enabled=enabled,
        )
        assert sol.converged.all()
        ra = sol.rayleigh_number[:, 1]
        t = sol.interface_temperature
        np.testing.assert_allclose(ra, convection.rayleigh_number(t[:, 1], t[:, 2], 0.012))
        flag = sol.convection_onset[:, 1]
        # Source: Chandrasekhar 1961, Ra_c = 1708
        np.testing.assert_array_equal(flag, ra > RA_CRITICAL)
        assert ra.min() < RA_CRITICAL < ra.max()
        assert not flag[0] and flag[-1]
        assert np.all(np.diff(flag.astype(int)) >= 0)  # flips once, from False to True
        assert not sol.convection_onset[:, [0, 2]].any()  # solids never carry the flag
        if enabled:
            # convection raises the gap's conductance only past the onset
            r_gap = sol.layer_resistance[:, 1]
            r_off = solve_network(
                layers, HotTemperature(300.0 + dt), ColdTemperature(300.0)
            ).layer_resistance[:, 1]
            np.testing.assert_allclose(r_gap[~flag], r_off[~flag], rtol=1e-9)
            assert np.all(r_gap[flag] < r_off[flag])


# --- Vertical gaps --------------------------------------------------------------------------


def elsherbiny_vertical(ra: float, aspect: float) -> float:
    """ElSherbiny, Raithby & Hollands 1982, 90° tilt, re-implemented from the paper's formulas.

    Source: S. M. ElSherbiny, G. D. Raithby, K. G. T. Hollands, J. Heat Transfer 104 (1982)
    96-102: Nu = max(Nu1, Nu2, Nu3), Nu1 = 0.0605 Ra^(1/3),
    Nu2 = [1 + (0.104 Ra^0.293 / (1 + (6310/Ra)^1.36))^3]^(1/3), Nu3 = 0.242 (Ra/A)^0.272.
    """
    nu1 = 0.0605 * ra ** (1.0 / 3.0)
    nu2 = (1.0 + (0.104 * ra**0.293 / (1.0 + (6310.0 / ra) ** 1.36)) ** 3) ** (1.0 / 3.0)
    nu3 = 0.242 * (ra / aspect) ** 0.272
    return max(nu1, nu2, nu3, 1.0)


@pytest.mark.parametrize(
    ("ra", "aspect"),
    [(500.0, 20.0), (5e3, 40.0), (1e4, 10.0), (5e4, 100.0), (1e5, 20.0), (1e6, 40.0),
     (1e7, 5.0), (2e7, 110.0)],
)
def test_vertical_matches_elsherbiny_formula(ra, aspect):
    # Source: ElSherbiny, Raithby & Hollands 1982 (formula re-implemented above)
    assert convection.nusselt_vertical(ra, aspect) == pytest.approx(
        elsherbiny_vertical(ra, aspect), rel=1e-12
    )


def test_vertical_at_least_one_and_continuous():
    ra = np.logspace(0, 7.3, 20001)
    for aspect in (5.0, 20.0, 60.0, 110.0):
        nu = convection.nusselt_vertical(ra, aspect)
        assert np.all(nu >= 1.0)
        # more buoyancy never lowers the heat transfer (to within rounding of the power laws)
        assert np.all(np.diff(nu) >= -4 * np.finfo(float).eps * nu[1:])
        # Continuity across the branch switches: on this grid (d ln Ra = 8.4e-4) a continuous
        # Nu with d ln Nu / d ln Ra below 1 changes by less than 1e-3 relative per step; a jump
        # where the max() switches branch would show as a larger change.
        assert np.max(np.abs(np.diff(nu)) / nu[:-1]) < 1e-3
    ra_small = np.array([1.0, 10.0, 100.0])
    # Source: ElSherbiny et al. 1982: conduction regime (Nu within 1 %) at low Ra
    assert np.all(convection.nusselt_vertical(ra_small, 20.0) < 1.01)


def test_vertical_onset_flag_uses_excess_over_conduction():
    ra = np.array([100.0, 1e3, 1e4, 1e5])
    aspect = 20.0
    nu = convection.nusselt_vertical(ra, aspect)
    flag = convection.convection_onset(ra, orientation="vertical", aspect_ratio=aspect)
    np.testing.assert_array_equal(flag, nu > 1.0 + convection.VERTICAL_ONSET_EXCESS)
    assert not flag[0] and flag[-1]


@pytest.mark.parametrize("orientation", ["vertical", "horizontal-up", "horizontal-down"])
def test_nusselt_slope_matches_function_and_finite_difference(orientation):
    ra = np.logspace(0.0, 7.3, 997)
    kw = {"orientation": orientation, "aspect_ratio": 20.0}
    nu, slope = convection.nusselt_with_slope(ra, **kw)
    np.testing.assert_array_equal(nu, convection.nusselt(ra, **kw))
    h = 1e-6  # step in ln Ra
    fd = (convection.nusselt(ra * np.exp(h), **kw) - convection.nusselt(ra * np.exp(-h), **kw))
    fd /= 2 * h
    # common practice: central differences; away from branch switches, O(h^2) truncation
    np.testing.assert_allclose(slope, fd, rtol=1e-5, atol=1e-9)
    nu0, slope0 = convection.nusselt_with_slope(np.array([0.0]), **kw)
    assert nu0[0] == 1.0 and slope0[0] == 0.0  # finite at Ra = 0 (equal face temperatures)


def test_bad_orientation_is_rejected():
    with pytest.raises(ValueError, match="orientation 'sideways' is not one of vertical"):
        convection.nusselt(1e4, orientation="sideways", aspect_ratio=10.0)
    with pytest.raises(ValueError, match="orientation 'sideways' is not one of vertical"):
        convection.convection_onset(1e4, orientation="sideways", aspect_ratio=10.0)
    with pytest.raises(ValueError, match="orientation 'sideways' is not one of vertical"):
        convection.nusselt_with_slope(1e4, orientation="sideways", aspect_ratio=10.0)
