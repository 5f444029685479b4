"""Air properties at atmospheric pressure against CoolProp's implementation of the same models."""

from __future__ import annotations

import warnings

import numpy as np
import pytest
from CoolProp.CoolProp import PropsSI

from plyrisk.models import air

P_ATM = 101325.0  # [Pa] # common practice (standard atmosphere)
GRID = np.linspace(250.0, 1500.0, 26)  # [K], the documented range of plyrisk.models.air


def coolprop(quantity: str, temperature: np.ndarray) -> np.ndarray:
    """CoolProp values for air (Lemmon et al. 2000 EOS, Lemmon & Jacobsen 2004 transport)."""
    return np.array([PropsSI(quantity, "T", float(t), "P", P_ATM, "Air") for t in temperature])


@pytest.mark.parametrize(
    ("function", "quantity", "rtol"),
    [
        # Source: Lemmon & Jacobsen, Int. J. Thermophys. 25 (2004) 21-69, as implemented in
        # CoolProp ("L"); 1 % covers the residual terms the dilute-gas model leaves out.
        (air.thermal_conductivity, "L", 0.01),
        # Source: Lemmon & Jacobsen 2004 viscosity, as implemented in CoolProp ("V").
        (air.viscosity, "V", 0.01),
        # Source: Lemmon et al., J. Phys. Chem. Ref. Data 29 (2000) 331-385, in CoolProp ("D").
        (air.density, "D", 0.005),
        # Source: Lemmon et al. 2000 equation of state, in CoolProp ("C").
        (air.heat_capacity, "C", 0.005),
    ],
)
def test_property_matches_coolprop(function, quantity, rtol):
    np.testing.assert_allclose(function(GRID), coolprop(quantity, GRID), rtol=rtol)


def test_derived_transport_properties_match_coolprop():
    rho = coolprop("D", GRID)
    # Source: CoolProp (Lemmon & Jacobsen 2004; Lemmon et al. 2000): nu = eta / rho,
    # alpha = k / (rho cp); 1.5 % = the sum of the component tolerances above.
    np.testing.assert_allclose(
        air.kinematic_viscosity(GRID), coolprop("V", GRID) / rho, rtol=0.015
    )
    np.testing.assert_allclose(
        air.thermal_diffusivity(GRID),
        coolprop("L", GRID) / (rho * coolprop("C", GRID)),
        rtol=0.015,
    )


def test_expansion_coefficient_is_ideal_gas():
    # common practice: an ideal gas has beta = 1 / T
    np.testing.assert_allclose(air.expansion_coefficient(GRID), 1.0 / GRID, rtol=1e-15)
    # Source: CoolProp isobaric expansion coefficient of air (Lemmon et al. 2000); the ideal
    # gas is within 0.5 % at one atmosphere over 250-1500 K.
    np.testing.assert_allclose(
        air.expansion_coefficient(GRID),
        coolprop("isobaric_expansion_coefficient", GRID),
        rtol=0.005,
    )


@pytest.mark.parametrize(
    "function",
    [
        air.thermal_conductivity,
        air.viscosity,
        air.density,
        air.heat_capacity,
        air.expansion_coefficient,
        air.thermal_diffusivity,
        air.kinematic_viscosity,
    ],
)
@pytest.mark.parametrize("temperature", [200.0, 1600.0])
def test_warns_outside_range(function, temperature):
    with pytest.warns(RuntimeWarning, match="outside the checked range 250–1500 K"):
        function(np.array([300.0, temperature]))


def test_no_warning_inside_range_or_when_unchecked():
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        air.thermal_conductivity(GRID)
        air.thermal_conductivity(np.array([100.0, 3000.0]), check_range=False)


def test_conductivity_with_slope_matches_function_and_finite_difference():
    t = np.linspace(250.0, 1500.0, 101)
    k, dk = air.thermal_conductivity_with_slope(t)
    np.testing.assert_allclose(k, air.thermal_conductivity(t), rtol=1e-13)
    h = 1e-3  # [K]
    kw = {"check_range": False}
    fd = (air.thermal_conductivity(t + h, **kw) - air.thermal_conductivity(t - h, **kw)) / (2 * h)
    # common practice: a central difference has O(h^2) truncation, far below 1e-6 here
    np.testing.assert_allclose(dk, fd, rtol=1e-6)


def test_rayleigh_property_slope_matches_finite_difference():
    t = np.linspace(250.0, 1500.0, 101)
    kw = {"check_range": False}

    def log_group(temperature):
        nu = air.kinematic_viscosity(temperature, **kw)
        return np.log(temperature * nu * air.thermal_diffusivity(temperature, **kw))

    h = 1e-5  # step in ln T
    fd = (log_group(t * np.exp(h)) - log_group(t * np.exp(-h))) / (2 * h)
    # common practice: central difference, O(h^2) truncation
    np.testing.assert_allclose(air.rayleigh_property_slope(t), fd, rtol=1e-7)


def test_properties_broadcast_and_keep_shape():
    t = np.full((3, 4), 300.0)
    for function in (air.thermal_conductivity, air.viscosity, air.heat_capacity):
        assert function(t).shape == (3, 4)
    assert np.ndim(air.thermal_conductivity(300.0)) == 0
