"""Bad input to the transient model: one-line ValueErrors naming element, quantity and value."""

from __future__ import annotations

from dataclasses import replace

import pytest

from plyrisk.models.exposure import Table, TransientExposure
from plyrisk.models.skin import skin_properties
from plyrisk.models.stack import Gap, Solid
from plyrisk.models.transient import solve_transient
from plyrisk.models.wearer import PrescribedWearer, SkinWearer

FABRIC = Solid("shell", thickness=1e-3, conductivity=0.05, density=300.0, specific_heat=1300.0)
EXPOSURE = TransientExposure(incident_flux=40e3, gas_temperature=1200.0,
                             convection_coefficient=40.0, exposure_duration=4.0, horizon=10.0)
WALL = PrescribedWearer(temperature=306.15)


def _one_line(err: pytest.ExceptionInfo, *words: str) -> None:
    text = str(err.value)
    assert "\n" not in text
    for word in words:
        assert word in text, text


def test_missing_density_or_specific_heat_names_layer_and_quantity():
    for missing in ("density", "specific_heat"):
        with pytest.raises(ValueError) as err:
            solve_transient([replace(FABRIC, **{missing: None})], EXPOSURE, WALL)
        _one_line(err, "'shell'", missing, "missing")


def test_non_positive_density_is_named_with_its_value():
    with pytest.raises(ValueError) as err:
        solve_transient([replace(FABRIC, density=-5.0)], EXPOSURE, WALL)
    _one_line(err, "'shell'", "density", "-5.0")


@pytest.mark.parametrize("duration", [0.0, -1.0])
def test_non_positive_exposure_duration(duration):
    with pytest.raises(ValueError) as err:
        solve_transient([FABRIC], replace(EXPOSURE, exposure_duration=duration), WALL)
    _one_line(err, "exposure_duration", repr(duration))


def test_exposure_longer_than_horizon():
    with pytest.raises(ValueError) as err:
        solve_transient([FABRIC], replace(EXPOSURE, exposure_duration=20.0), WALL)
    _one_line(err, "exposure_duration", "20.0", "horizon")


@pytest.mark.parametrize("option", ["first_step", "max_step", "temperature_tolerance"])
def test_non_positive_steps_and_tolerances(option):
    with pytest.raises(ValueError) as err:
        solve_transient([FABRIC], EXPOSURE, WALL, **{option: 0.0})
    _one_line(err, option, "0.0")


def test_table_whose_times_do_not_increase():
    with pytest.raises(ValueError) as err:
        Table([0.0, 2.0, 2.0], [1.0, 2.0, 3.0], name="incident_flux")
    _one_line(err, "incident_flux", "increase", "2.0")


def test_table_ending_before_the_exposure_ends():
    table = Table([0.0, 3.0], [40e3, 40e3], name="incident_flux")
    with pytest.raises(ValueError) as err:
        solve_transient([FABRIC], replace(EXPOSURE, incident_flux=table), WALL)
    _one_line(err, "incident_flux", "3.0", "before the end of the exposure")


def test_skin_property_out_of_range_names_layer_quantity_and_value():
    skin = skin_properties("jiang_2002")
    bad = replace(skin, dermis=replace(skin.dermis, conductivity=5.0))
    with pytest.raises(ValueError) as err:
        solve_transient([FABRIC, Gap("gap", width=3e-3)], EXPOSURE, SkinWearer(bad))
    _one_line(err, "dermis", "conductivity", "5")


def test_output_times_outside_the_horizon_or_not_increasing():
    with pytest.raises(ValueError) as err:
        solve_transient([FABRIC], EXPOSURE, WALL, output_times=[0.0, 11.0])
    _one_line(err, "output_times", "11.0")
    with pytest.raises(ValueError) as err:
        solve_transient([FABRIC], EXPOSURE, WALL, output_times=[0.0, 2.0, 1.0])
    _one_line(err, "output_times", "increase")


def test_unknown_third_degree_rule_and_damage_set():
    with pytest.raises(ValueError) as err:
        solve_transient([FABRIC], EXPOSURE, WALL, third_degree="deep")
    _one_line(err, "third_degree", "'deep'", "basal")
    with pytest.raises(ValueError):
        solve_transient([FABRIC], EXPOSURE, WALL, damage_model="nobody_2000")


def test_transmissivity_out_of_range_and_on_an_inner_layer():
    with pytest.raises(ValueError) as err:
        solve_transient([replace(FABRIC, radiant_transmissivity=1.5)], EXPOSURE, WALL)
    _one_line(err, "radiant_transmissivity", "1.5")
    inner = replace(FABRIC, name="liner", radiant_transmissivity=0.2)
    with pytest.raises(ValueError) as err:
        solve_transient([FABRIC, Gap("gap", width=2e-3), inner], EXPOSURE, WALL)
    _one_line(err, "'liner'", "radiant_transmissivity")


def test_steady_solver_ignores_the_transient_fields():
    # the steady network is unaffected by density, specific heat and transmissivity
    from plyrisk.models.boundary import ColdTemperature, HotFlux
    from plyrisk.models.network import solve_network

    plain = Solid("shell", thickness=1e-3, conductivity=0.05)
    a = solve_network([plain], HotFlux(heat_flux=1e3), ColdTemperature(temperature=300.0))
    b = solve_network([replace(FABRIC, radiant_transmissivity=0.3)], HotFlux(heat_flux=1e3),
                      ColdTemperature(temperature=300.0))
    assert (a.interface_temperature == b.interface_temperature).all()


def test_semi_transparent_exposed_layer_conserves_energy():
    # Source: first law; in-depth absorption (Torvi & Dale 1999 form) moves heat, not creates it.
    fabric = replace(FABRIC, radiant_transmissivity=0.2)
    sol = solve_transient([fabric, Gap("gap", width=3e-3)], EXPOSURE,
                          SkinWearer(skin_properties("jiang_2002")))
    balance = sol.heat_in - sol.heat_to_core + sol.heat_from_perfusion
    assert abs(balance[0] - sol.stored_energy_change[0]) <= 1e-6 * abs(sol.heat_in[0])
