"""Thermal resistance of unventilated air layers against the ISO 6946 table.

ISO 6946 tabulates the thermal resistance of unventilated air layers between high-emissivity
surfaces. Its conventions, used here: both surfaces of emissivity 0.9, radiation linearized
about a 10 °C mean (``hr = E 4 sigma Tm^3``), a small temperature difference across the layer
(5 K), and for horizontal heat flow (a vertical layer) the convective coefficient
``max(1.25, 0.025/d)`` W m-2 K-1. Our gap law uses still-air conduction ``k_air(Tm)/d``
(0.0251 W m-1 K-1 at 10 °C, i.e. ``0.025/d``) times the ElSherbiny et al. vertical-layer
Nusselt number when convection is enabled. The same table's rows for downward heat flow
(stable layer: our Nu = 1) and upward heat flow (our Hollands et al. correlation) are checked
too, within each correlation's range of validity.

The layer is built between two 1 µm plates of conductivity 1000 W m-1 K-1 (10^-9 m2 K W-1 each,
far below the table's 0.005 m2 K W-1 printed precision) held at 12.5 °C and 7.5 °C, and its
resistance is read from the gap element alone. Its height is 1 m, a wall-cavity scale where
length and width are many times the thickness as the table assumes; at 25 mm the convective
branch of the correlation that applies does not depend on the height (checked at 2 m too).
"""

from __future__ import annotations

import numpy as np
import pytest

from plyrisk.models.boundary import ColdTemperature, HotTemperature
from plyrisk.models.network import solve_network
from plyrisk.models.stack import Gap, Solid

CELSIUS = 273.15  # [K] # common practice
# Source: ISO 6946, table "Thermal resistance of unventilated air layers: high emissivity
# surfaces", horizontal heat flow [m2 K W-1] (from memory).
ISO_6946_HORIZONTAL_FLOW = {
    0.005: 0.11, 0.007: 0.13, 0.010: 0.15, 0.015: 0.17, 0.025: 0.18, 0.050: 0.18, 0.100: 0.18,
}
# Source: ISO 6946, same table, downward and upward heat flow [m2 K W-1] (from memory).
ISO_6946_DOWNWARD_FLOW = {
    0.005: 0.11, 0.007: 0.13, 0.010: 0.15, 0.015: 0.17, 0.025: 0.19, 0.050: 0.21, 0.100: 0.22,
    0.300: 0.23,
}
ISO_6946_UPWARD_FLOW = {0.005: 0.11, 0.007: 0.13, 0.010: 0.15, 0.015: 0.16, 0.025: 0.16,
                        0.050: 0.16}
PRINTED_PRECISION = 0.005  # [m2 K W-1], half a unit of the table's last printed digit


def air_layer_resistance(width, *, convection_enabled, height=1.0, orientation="vertical"):
    """Resistance of the gap element [m2 K W-1] under the standard's conditions."""
    layers = [
        Solid("plate 1", 1e-6, 1000.0, emissivity_cold=0.9),
        Gap("air layer", width, orientation=orientation, height=height),
        Solid("plate 2", 1e-6, 1000.0, emissivity_hot=0.9),
    ]
    sol = solve_network(
        layers,
        HotTemperature(CELSIUS + 12.5),
        ColdTemperature(CELSIUS + 7.5),
        radiation="linearized",
        convection_enabled=convection_enabled,
    )
    assert sol.converged.all()
    return sol.layer_temperature_drop[:, 1] / sol.heat_flux


@pytest.mark.parametrize("width", [0.005, 0.007, 0.010, 0.015])
@pytest.mark.parametrize("convection_enabled", [False, True])
def test_thin_layers_match_table_with_or_without_convection(width, convection_enabled):
    r = air_layer_resistance(np.array([width]), convection_enabled=convection_enabled)[0]
    assert abs(r - ISO_6946_HORIZONTAL_FLOW[width]) <= PRINTED_PRECISION


def test_25mm_layer_matches_table_only_with_convection():
    width = np.array([0.025])
    r_on = air_layer_resistance(width, convection_enabled=True)[0]
    assert abs(r_on - ISO_6946_HORIZONTAL_FLOW[0.025]) <= PRINTED_PRECISION
    r_on_tall = air_layer_resistance(width, convection_enabled=True, height=2.0)[0]
    assert abs(r_on_tall - ISO_6946_HORIZONTAL_FLOW[0.025]) <= PRINTED_PRECISION
    # Pure conduction (0.025/d = 1.0 W m-2 K-1 < the standard's 1.25 floor) overestimates R:
    # the table's 0.18 needs the convective enhancement.
    r_off = air_layer_resistance(width, convection_enabled=False)[0]
    assert r_off - ISO_6946_HORIZONTAL_FLOW[0.025] > PRINTED_PRECISION


@pytest.mark.parametrize("width", [0.050, 0.100])
def test_wide_vertical_layers_match_table_with_convection(width):
    # 300 mm is left out: its aspect ratio (3.3) is outside the correlation's 5-110 range.
    r = air_layer_resistance(np.array([width]), convection_enabled=True)[0]
    assert abs(r - ISO_6946_HORIZONTAL_FLOW[width]) <= PRINTED_PRECISION


@pytest.mark.parametrize("width", sorted(ISO_6946_DOWNWARD_FLOW))
@pytest.mark.parametrize("convection_enabled", [False, True])
def test_downward_flow_matches_table(width, convection_enabled):
    # heated from above: stable, Nu = 1, so convection on or off gives the same answer
    r = air_layer_resistance(
        np.array([width]), convection_enabled=convection_enabled, orientation="horizontal-down"
    )[0]
    assert abs(r - ISO_6946_DOWNWARD_FLOW[width]) <= PRINTED_PRECISION


@pytest.mark.parametrize(
    "width",
    [
        0.005, 0.007, 0.010, 0.015,
        # The Hollands et al. correlation gives Nu = 2.36 at Ra = 9.5e3 (R = 0.152), above the
        # standard's simplified 1.95 W m-2 K-1 upward coefficient (R = 0.16).
        pytest.param(0.025, marks=pytest.mark.xfail(strict=True, reason="R = 0.152 vs 0.16")),
        0.050,
    ],
)
def test_upward_flow_matches_table_with_convection(width):
    # 100 and 300 mm are left out: Ra > 1e5, outside the Hollands et al. correlation's range.
    r = air_layer_resistance(
        np.array([width]), convection_enabled=True, orientation="horizontal-up"
    )[0]
    assert abs(r - ISO_6946_UPWARD_FLOW[width]) <= PRINTED_PRECISION
