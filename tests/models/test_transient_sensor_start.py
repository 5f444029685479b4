"""A copper-disc sensor's ``initial_temperature``: the disc starts there and heats linearly under
a constant absorbed flux (the lumped balance), in both time-stepping paths and through a
study config."""

from __future__ import annotations

import numpy as np
import pytest

from plyrisk.models.exposure import TransientExposure
from plyrisk.models.sensor import copper_disc
from plyrisk.models.transient import solve_transient
from plyrisk.models.wearer import SensorWearer

FLUX = 10e3  # absorbed flux [W m-2] (an arbitrary test level)
START = 293.15  # disc temperature when the exposure starts [K]
AMBIENT = 303.15  # ambient before the exposure, 10 K warmer than the disc [K]
# Source: copper 1.6 mm thick, 385 J/kg/K, 8960 kg/m3 (handbook values, from memory); any
# positive values serve the closed form.
THICKNESS, SPECIFIC_HEAT, DENSITY = 1.6e-3, 385.0, 8960.0


@pytest.mark.parametrize("compiled", [True, False])
def test_disc_starts_at_its_initial_temperature_and_heats_linearly(compiled):
    disc = copper_disc(thickness=THICKNESS, mass=None, specific_heat=SPECIFIC_HEAT,
                       initial_temperature=START)
    exposure = TransientExposure(incident_flux=FLUX, gas_temperature=AMBIENT,
                                 convection_coefficient=0.0, exposure_duration=10.0,
                                 horizon=10.0, ambient_temperature=AMBIENT,
                                 mode="absorbed_flux")
    times = np.array([0.0, 2.5, 5.0, 10.0])
    sol = solve_transient([], exposure, SensorWearer(disc), output_times=times,
                          compiled=compiled)
    assert bool(sol.converged[0])
    assert float(sol.initial_surface_temperature[0]) == pytest.approx(START, abs=1e-9)
    # Source: lumped-capacitance energy balance of the disc, rho c L dT/dt = q, so
    # T(t) = T0 + q t / (rho c L).
    expected = START + FLUX * times / (DENSITY * SPECIFIC_HEAT * THICKNESS)
    np.testing.assert_allclose(sol.surface_temperature[0], expected, rtol=0, atol=1e-6)
    # the absorbed energy counts from the initial temperature: q t at the end
    assert float(sol.absorbed_energy[0]) == pytest.approx(FLUX * 10.0, rel=1e-9)


def test_without_initial_temperature_the_disc_starts_at_the_ambient():
    disc = copper_disc(thickness=THICKNESS, mass=None, specific_heat=SPECIFIC_HEAT)
    exposure = TransientExposure(incident_flux=FLUX, gas_temperature=AMBIENT,
                                 convection_coefficient=0.0, exposure_duration=5.0,
                                 horizon=5.0, ambient_temperature=AMBIENT,
                                 mode="absorbed_flux")
    sol = solve_transient([], exposure, SensorWearer(disc), output_times=[0.0])
    assert float(sol.initial_surface_temperature[0]) == pytest.approx(AMBIENT, abs=1e-6)


def test_the_config_key_reaches_the_solution():
    # the [wearer] key of a study (invented values), through the study reader to the solve
    from plyrisk.propagate.evaluate import nominal_solution
    from plyrisk.study.config import loads_study

    text = """
[study]
title = "Invented test: bare copper disc"
method = "saltelli"
samples = 16
seed = 1

[exposure]
incident_flux = { uniform = ["9 kW/m^2", "11 kW/m^2"] }
gas_temperature = "30 degC"
convection_coefficient = "0 W/m^2/K"
duration = "10 s"
horizon = "10 s"
ambient_temperature = "30 degC"

[[layer]]
name = "fabric"
kind = "solid"
thickness = "0.5 mm"
conductivity = "0.05 W/m/K"
density = "300 kg/m^3"
specific_heat = "1300 J/kg/K"

[wearer]
kind = "sensor"
initial_temperature = "20 degC"
"""
    study = loads_study(text, source="disc.toml")
    sol = nominal_solution(study)
    # Source: the definition of the key (the disc's temperature when the exposure starts);
    # 20 degC = 293.15 K (SI Brochure, 9th ed., sec. 2.3.1).
    assert float(sol.initial_surface_temperature[0]) == pytest.approx(293.15, abs=1e-9)
    assert float(sol.surface_temperature[0, 0]) == pytest.approx(293.15, abs=1e-9)
