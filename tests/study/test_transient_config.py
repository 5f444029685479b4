"""Transient studies in the config: [exposure], [wearer], transient [study] keys and sweeps,
the nominal model objects and assemble()."""

from __future__ import annotations

import numpy as np
import pytest

from plyrisk.models.exposure import Table
from plyrisk.models.sensor import copper_disc
from plyrisk.models.skin import skin_properties
from plyrisk.models.wearer import PrescribedWearer, SensorWearer, SkinWearer
from plyrisk.study.config import ConfigError, assemble, loads_study
from plyrisk.study.sections_transient import DEFAULT_SKIN, SCALAR_OUTPUTS, output_grid

BASE = """
[study]
title = "Invented transient test"
method = "saltelli"
samples = 16
seed = 1

[exposure]
incident_flux = "40 kW/m^2"
gas_temperature = "800 degC"
convection_coefficient = "40 W/m^2/K"
duration = "6 s"
horizon = "30 s"

[[layer]]
name = "shell"
kind = "solid"
thickness = "0.8 mm"
conductivity = "0.06 W/m/K"
density = "300 kg/m^3"
specific_heat = "1300 J/kg/K"

[[layer]]
name = "skin gap"
kind = "gap"
width = "3 mm"

[wearer]
kind = "skin"
"""


def study_with(old: str, new: str, base: str = BASE):
    assert old in base
    return loads_study(base.replace(old, new, 1), source="t.toml")


def error_of(old: str, new: str, base: str = BASE) -> str:
    with pytest.raises(ConfigError) as info:
        study_with(old, new, base)
    text = str(info.value)
    assert "\n" not in text and text.startswith("t.toml: ")
    return text


def test_defaults():
    study = study_with("", "")
    setup = study.transient
    assert study.is_transient and study.hot_side is None and study.cold_side is None
    e = setup.exposure
    assert e.mode == "environment"
    assert e.incident_flux == pytest.approx(40e3)
    assert e.gas_temperature == pytest.approx(1073.15)
    assert e.exposure_duration == pytest.approx(6.0)
    assert e.horizon == pytest.approx(30.0)
    assert e.surroundings_temperature is None and e.cooldown_temperature is None
    assert setup.output_times.size == 241
    assert setup.output_times[0] == 0.0 and setup.output_times[-1] == 30.0
    assert setup.acceptable_burn_probability == pytest.approx(0.05)
    assert setup.damage_model == "henriques_1947" and setup.third_degree == "basal"
    assert setup.skin_properties == DEFAULT_SKIN == "jiang_2002"
    assert isinstance(setup.wearer, SkinWearer) and setup.wearer.perfusion
    assert setup.wearer.skin == skin_properties("jiang_2002")
    assert setup.wearer_kind == "skin" and setup.horizon == 30.0
    assert study.parameters == ()
    assert study.analysis.chunk_size == 1024 and np.isnan(study.analysis.limit)
    assert setup.layout.names == ("shell", "epidermis", "dermis", "subcutis")


def test_every_exposure_key():
    study = study_with('horizon = "30 s"\n', '''horizon = "0.5 min"
mode = "environment"
surroundings_temperature = "30 degC"
ambient_temperature = "20 degC"
ambient_convection_coefficient = "8 W/m^2/K"
cooldown_temperature = "25 degC"
cooldown_convection_coefficient = "12 W/m^2/K"
cooldown_surroundings_temperature = "26 degC"
output_step = "0.4 s"
''')
    e = study.transient.exposure
    assert e.horizon == pytest.approx(30.0)
    assert e.surroundings_temperature == pytest.approx(303.15)
    assert e.ambient_temperature == pytest.approx(293.15)
    assert e.ambient_convection_coefficient == pytest.approx(8.0)
    assert e.cooldown_temperature == pytest.approx(298.15)
    assert e.cooldown_convection_coefficient == pytest.approx(12.0)
    assert e.cooldown_surroundings_temperature == pytest.approx(299.15)
    t = study.transient.output_times
    assert t.size == 76 and t[-1] == 30.0
    np.testing.assert_allclose(np.diff(t), 0.4)


def test_output_grid_ends_at_the_horizon():
    np.testing.assert_allclose(output_grid(1.0, 0.3), [0.0, 0.3, 0.6, 0.9, 1.0])
    np.testing.assert_allclose(output_grid(1.0, 0.25), [0.0, 0.25, 0.5, 0.75, 1.0])


def test_table_in_time():
    study = study_with('incident_flux = "40 kW/m^2"', 'incident_flux = { time = ["0 s", "2 s", '
                       '"8 s"], value = ["80 kW/m^2", "84 kW/m^2", "84 kW/m^2"] }')
    table = study.transient.exposure.incident_flux
    assert isinstance(table, Table)
    assert float(table(1.0)) == pytest.approx(82e3)
    assert study.transient.units["incident_flux"] == "kW/m^2"


def test_absorbed_flux_mode_needs_no_gas():
    text = BASE.replace('gas_temperature = "800 degC"\nconvection_coefficient = "40 W/m^2/K"\n',
                        'mode = "absorbed_flux"\n')
    study = loads_study(text, source="t.toml")
    assert study.transient.exposure.mode == "absorbed_flux"


def test_uncertain_exposure_wearer_and_layer_values_become_named_parameters():
    text = BASE.replace('duration = "6 s"', 'duration = { uniform = ["4 s", "8 s"] }')
    # the shell touches the skin (a wearer contact resistance behind a gap is refused)
    text = text.replace('[[layer]]\nname = "skin gap"\nkind = "gap"\nwidth = "3 mm"\n\n', "")
    text = text.replace('density = "300 kg/m^3"',
                        'density = { normal = { mean = "300 kg/m^3", sd = "20 kg/m^3" } }')
    text += '''contact_resistance = { uniform = ["0.001 m^2*K/W", "0.003 m^2*K/W"] }
core_temperature = { uniform = ["36.5 degC", "37.5 degC"] }
[wearer.epidermis]
thickness = { uniform = ["60 um", "100 um"] }
'''
    study = loads_study(text, source="t.toml")
    assert study.parameter_names == ("exposure.duration", "shell.density",
                                     "wearer.core_temperature", "wearer.contact_resistance",
                                     "wearer.epidermis.thickness")
    assert study.groups == ("exposure", "shell", "wearer")
    assert len(study.layers) == 1
    p = study.parameters[-1]
    assert p.target == ("wearer", "epidermis", "thickness") and p.unit == "um"
    assert p.key_path == "wearer.epidermis.thickness"
    values = {"exposure.duration": [4.5, 7.5], "shell.density": [280.0, 320.0],
              "wearer.contact_resistance": [0.002, 0.0025],
              "wearer.core_temperature": [310.0, 310.5],
              "wearer.epidermis.thickness": [7e-5, 9e-5]}
    layers, exposure, wearer = assemble(study, values)
    np.testing.assert_array_equal(exposure.exposure_duration, [4.5, 7.5])
    np.testing.assert_array_equal(layers[0].density, [280.0, 320.0])
    np.testing.assert_array_equal(wearer.contact_resistance, [0.002, 0.0025])
    np.testing.assert_array_equal(wearer.skin.core_temperature, [310.0, 310.5])
    np.testing.assert_array_equal(wearer.skin.arterial_temperature, [310.0, 310.5])
    np.testing.assert_array_equal(wearer.skin.epidermis.thickness, [7e-5, 9e-5])
    assert wearer.skin.dermis == skin_properties("jiang_2002").dermis
    # the nominal objects are untouched
    assert study.transient.exposure.exposure_duration == pytest.approx(6.0)
    assert study.transient.wearer.skin.epidermis.thickness == pytest.approx(80e-6)


def test_skin_options_and_layer_overrides():
    study = study_with('kind = "skin"\n', '''kind = "skin"
properties = "torvi_dale_1994"
damage_model = "weaver_stoll_1969"
third_degree = "dermis_base"
emissivity = 0.97
perfusion = false
[wearer.dermis]
thickness = "1.5 mm"
conductivity = "0.5 W/m/K"
density = "1100 kg/m^3"
specific_heat = "3300 J/kg/K"
perfusion_rate = "1e-3 1/s"
''')
    s = study.transient
    assert (s.skin_properties, s.damage_model, s.third_degree) == (
        "torvi_dale_1994", "weaver_stoll_1969", "dermis_base")
    skin = s.wearer.skin
    assert skin.emissivity == pytest.approx(0.97) and not s.wearer.perfusion
    assert (skin.dermis.thickness, skin.dermis.conductivity, skin.dermis.density,
            skin.dermis.specific_heat, skin.dermis.perfusion_rate) == pytest.approx(
        (1.5e-3, 0.5, 1100.0, 3300.0, 1e-3))
    assert skin.epidermis == skin_properties("torvi_dale_1994").epidermis


def test_sensor_defaults_are_the_copper_disc_module():
    study = study_with('kind = "skin"\n', 'kind = "sensor"\n')
    w = study.transient.wearer
    assert isinstance(w, SensorWearer) and study.transient.wearer_kind == "sensor"
    assert float(w.heat_capacity) == pytest.approx(float(copper_disc().heat_capacity_per_area))


NO_GAP = BASE.replace('[[layer]]\nname = "skin gap"\nkind = "gap"\nwidth = "3 mm"\n\n', "")
"""The shell touching the wearer (a wearer contact resistance behind a gap is refused)."""


def test_sensor_keys():
    study = study_with('kind = "skin"\n', '''kind = "sensor"
diameter = "40 mm"
thickness = "1.6 mm"
specific_heat = "385 J/kg/K"
emissivity = 0.9
initial_temperature = "25 degC"
contact_resistance = "0.004 m^2*K/W"
''', base=NO_GAP)
    w = study.transient.wearer
    disc = copper_disc(thickness=1.6e-3, mass=None, initial_temperature=298.15)
    assert float(w.heat_capacity) == pytest.approx(float(disc.heat_capacity_per_area))
    assert w.sensor.initial_temperature == pytest.approx(298.15)
    assert w.contact_resistance == pytest.approx(0.004)
    mass = study_with('kind = "skin"\n', 'kind = "sensor"\nmass = "20 g"\n').transient.wearer
    assert float(mass.heat_capacity) == pytest.approx(
        float(copper_disc(mass=0.020).heat_capacity_per_area))


def test_uncertain_sensor_mass_is_assembled_per_sample():
    study = study_with('kind = "skin"\n', 'kind = "sensor"\nmass = { uniform = ["16 g", '
                       '"20 g"] }\n')
    _, _, w = assemble(study, {"wearer.mass": [0.016, 0.020]})
    expected = [float(copper_disc(mass=m).heat_capacity_per_area) for m in (0.016, 0.020)]
    np.testing.assert_allclose(w.heat_capacity, expected)


def test_prescribed_wearer():
    study = study_with('kind = "skin"\n', 'kind = "prescribed"\ntemperature = "34 degC"\n'
                       'emissivity = 0.95\n')
    w = study.transient.wearer
    assert isinstance(w, PrescribedWearer)
    assert w.temperature == pytest.approx(307.15) and w.emissivity == pytest.approx(0.95)
    assert "missing key 'temperature'" in error_of('kind = "skin"\n', 'kind = "prescribed"\n')


def test_acceptable_burn_probability_and_outputs():
    study = study_with('seed = 1\n', 'seed = 1\nacceptable_burn_probability = "10 %"\n'
                       'outputs = ["peak_surface_temperature", "absorbed_energy"]\n')
    assert study.transient.acceptable_burn_probability == pytest.approx(0.10)
    assert study.analysis.outputs == ("peak_surface_temperature", "absorbed_energy")
    assert "time_to_second_degree_burn" in SCALAR_OUTPUTS
    assert "face_temperature" not in SCALAR_OUTPUTS
    msg = error_of('seed = 1\n', 'seed = 1\noutputs = ["heat_flux"]\n')
    assert "study.outputs[0]: unknown transient output 'heat_flux'" in msg


def test_duration_and_level_sweeps():
    study = study_with("", "", BASE + '\n[scenarios]\nquantity = "duration"\n'
                       'values = ["4 s", "10 s"]\n')
    assert study.scenarios.quantity == "duration"
    np.testing.assert_array_equal(study.scenarios.values, [4.0, 10.0])
    _, exposure, _ = assemble(study, {}, scenario=1)
    assert exposure.exposure_duration == 10.0
    level = study_with("", "", BASE + '\n[scenarios]\nquantity = "incident_flux"\n'
                       'values = ["20 kW/m^2", "60 kW/m^2"]\n')
    _, exposure, _ = assemble(level, {}, scenario=0)
    assert exposure.incident_flux == pytest.approx(20e3)


@pytest.mark.parametrize(("old", "new", "match"), [
    ('horizon = "30 s"\n', '', r"exposure: missing key 'horizon'"),
    ('duration = "6 s"', 'duration = "6 m"', r"exposure\.duration: .*time"),
    ('duration = "6 s"', 'duration = "-2 s"', r"exposure\.duration: must be positive"),
    ('horizon = "30 s"', 'horizon = { uniform = ["20 s", "30 s"] }',
     r"exposure\.horizon: "),
    ('horizon = "30 s"', 'horizon = "5 s"', r"exposure\.horizon: 5 s is shorter than the "
     r"exposure \(exposure\.duration is 6 s\)"),
    ('duration = "6 s"', 'duration = { normal = { mean = "25 s", sd = "2 s" } }',
     r"exposure\.horizon: 30 s is shorter than the exposure \(exposure\.duration reaches 3"),
    ('incident_flux = "40 kW/m^2"', 'incident_flux = { time = ["1 s", "8 s"], value = '
     '["40 kW/m^2", "40 kW/m^2"] }', r"exposure\.incident_flux\.time\[0\]: a table starts at "
     r"the start of the exposure: expected 0 s, got 1 s"),
    ('incident_flux = "40 kW/m^2"', 'incident_flux = { time = ["0 s", "8 s"], value = '
     '["40 kW/m^2"] }', r"exposure\.incident_flux: time has 2 entries and value 1"),
    ('incident_flux = "40 kW/m^2"', 'incident_flux = { time = ["0 s", "8 s"], value = '
     '["40 kW/m^2", "-1 kW/m^2"] }', r"exposure\.incident_flux\.value\[1\]: must be zero or "
     r"positive"),
    ('[exposure]\n', '[exposure]\nmode = "radiant"\n', r"exposure\.mode: unknown exposure mode "
     r"'radiant'; valid: environment, absorbed_flux"),
    ('kind = "skin"', 'kind = "mannequin"', r"wearer\.kind: unknown wearer kind 'mannequin'"),
    ('kind = "skin"\n', '', r"wearer: missing key 'kind'"),
    ('kind = "skin"\n', 'kind = "skin"\nthird_degree = "deep"\n', r"wearer\.third_degree: "
     r"unknown third-degree rule 'deep'; valid: basal, dermis_base"),
    ('kind = "skin"\n', 'kind = "skin"\nperfusion = "yes"\n', r"wearer\.perfusion: expected "
     r"true or false"),
    ('kind = "skin"\n', 'kind = "skin"\n[wearer.epidermis]\nthicknes = "1 mm"\n',
     r"wearer\.epidermis: unknown key 'thicknes'; did you mean 'thickness'\?"),
    ('kind = "skin"\n', 'kind = "skin"\n[wearer.dermis]\ndensity = "2000 kg/m^3"\n',
     r"wearer\.dermis\.density: skin layer 'dermis': density 2000 kg m-3 is outside the "
     r"physical range"),
    ('kind = "skin"\n', 'kind = "skin"\n[wearer.dermis]\nconductivity = { normal = { mean = '
     '"0.9 W/m/K", sd = "0.1 W/m/K" } }\n', r"wearer\.dermis\.conductivity: the distribution "
     r"reaches invalid values"),
    ('kind = "skin"\n', 'kind = "sensor"\nperfusion = true\n', r"wearer: unknown key "
     r"'perfusion'"),
    ('kind = "skin"\n', 'kind = "sensor"\nemissivity = 1.5\n', r"wearer\.emissivity: must be "
     r"in \(0, 1\]"),
    ('specific_heat = "1300 J/kg/K"\n', '', r"layer\[0\]\.specific_heat: layer 'shell': "
     r"specific_heat is missing"),
    ('specific_heat = "1300 J/kg/K"\n', 'specific_heat = "1300 J/kg/K"\n'
     'radiant_transmissivity = 1.2\n', r"layer\[0\]\.radiant_transmissivity: must be in "
     r"\(0, 1\)"),
    ('name = "shell"', 'name = "wearer"', r"layer\[0\]\.name: 'wearer' is not allowed"),
    ('seed = 1\n', 'seed = 1\nacceptable_burn_probability = 0\n',
     r"study\.acceptable_burn_probability: expected a probability between 0 and 1"),
])
def test_one_line_errors(old, new, match):
    assert re_search(match, error_of(old, new))


def test_sweep_errors():
    uncertain = BASE.replace('duration = "6 s"', 'duration = { uniform = ["4 s", "8 s"] }')
    msg = error_of("", "", uncertain + '\n[scenarios]\nquantity = "duration"\nvalues = ["4 s"]\n')
    assert "scenarios.quantity: exposure.duration is uncertain" in msg
    msg = error_of("", "", BASE + '\n[scenarios]\nquantity = "heat_flux"\nvalues = ["4 s"]\n')
    assert "scenarios.quantity: 'heat_flux' is not an [exposure] quantity" in msg
    table = BASE.replace('incident_flux = "40 kW/m^2"', 'incident_flux = { time = ["0 s", '
                         '"20 s"], value = ["40 kW/m^2", "40 kW/m^2"] }')
    msg = error_of("", "", table + '\n[scenarios]\nquantity = "duration"\nvalues = ["25 s"]\n')
    assert "scenarios.values[0]: 25 s is longer than the exposure.incident_flux table" in msg
    msg = error_of("", "", table + '\n[scenarios]\nquantity = "incident_flux"\n'
                   'values = ["1 kW/m^2"]\n')
    assert "exposure.incident_flux is a table in time" in msg


def test_steady_configs_refuse_transient_keys():
    from tests.study.test_config import BASE as STEADY

    msg = error_of("", "", STEADY.replace('[study]\n', '[study]\nacceptable_burn_probability '
                                          '= "5 %"\n'))
    assert "study.acceptable_burn_probability: applies only to transient studies" in msg
    msg = error_of("", "", STEADY.replace('emissivity = 0.9\n', 'emissivity = 0.9\n'
                                          'specific_heat_slope = "1 J/kg/K^2"\n'))
    assert "layer[0].specific_heat_slope: used only by transient studies" in msg
    msg = error_of("", "", STEADY + '\n[exposure]\nduration = "5 s"\n')
    assert "study.limit: a transient study has no temperature limit" in msg


def re_search(pattern: str, text: str) -> bool:
    import re

    assert re.search(pattern, text), text
    return True
