"""``[study] limit_output`` and ``[study] criterion``: which output the limit protects, in that
output's units, and the criterion in the target grammar."""

from __future__ import annotations

import pytest

from plyrisk.errors import ConfigError
from plyrisk.study.config import load_study, loads_study
from plyrisk.study.targets import default_criterion, parse_target
from tests.conftest import CONFIGS

SMALL = (CONFIGS / "small_demo.toml").read_text(encoding="utf-8")


def _with(lines: str) -> str:
    return SMALL.replace('limit = "44 degC"\n', lines + "\n", 1)


def test_default_is_the_inner_surface_temperature():
    a = loads_study(SMALL).analysis
    assert a.limit_output == "inner_surface_temperature" and a.criterion == ""
    assert default_criterion() == "P95 <= limit"


def test_a_heat_flux_limit_takes_flux_units():
    study = loads_study(_with('limit = "2.5 kW/m^2"\nlimit_output = "heat_flux"'))
    # Source: SI prefix kilo = 10^3 (BIPM SI Brochure, 9th ed., Table 7)
    assert study.analysis.limit == pytest.approx(2500.0)
    assert study.limit_output_unit == "kW/m^2" and study.limit_unit == "degC"
    assert study.format_limit_value(2500.0) == "2.5 kW/m^2"


def test_a_face_temperature_limit():
    study = loads_study(_with('limit = "45 degC"\nlimit_output = "shirt fabric | air gap"'))
    assert study.analysis.limit_output == "shirt fabric | air gap"


@pytest.mark.parametrize("lines, key, words", [
    ('limit = "44 degC"\nlimit_output = "heat_flux"', "study.limit", "heat flux"),
    ('limit = "2 kW/m^2"', "study.limit", "temperature"),
    ('limit = "44 degC"\nlimit_output = "skin"', "study.limit_output", "unknown output"),
    ('limit = "44 degC"\ncriterion = "P95 < limit"', "study.criterion", "'<='"),
    ('limit = "44 degC"\ncriterion = "P(second_degree_burn) <= 5 %"', "study.criterion",
     "transient"),
])
def test_bad_values_are_one_line_errors(lines, key, words):
    with pytest.raises(ConfigError, match=rf"{key}: .*{words}") as err:
        loads_study(_with(lines))
    assert "\n" not in str(err.value)


def test_a_percentile_bound_in_the_outputs_unit():
    t = parse_target("P99 <= 3 kW/m^2", output="heat_flux")
    assert t.threshold == pytest.approx(3000.0) and t.output == "heat_flux"
    assert not t.transient
    with pytest.raises(ValueError, match="heat flux"):
        parse_target("P99 <= 44 degC", output="heat_flux")


def test_the_garment_demo_keeps_its_reviewed_choice():
    study = load_study(CONFIGS / "reflective_garment.toml")
    assert study.analysis.limit_output == "inner_surface_temperature"
    assert "What this limit protects (reviewed)" in study.text


def test_check_names_the_output_and_its_margin(capsys):
    import tempfile
    from pathlib import Path

    from plyrisk.cli import main

    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "flux.toml"
        path.write_text(_with('limit = "2.5 kW/m^2"\nlimit_output = "heat_flux"'),
                        encoding="utf-8")
        assert main(["check", str(path)]) == 0
    out = capsys.readouterr().out
    assert "limit: heat flux through the assembly 2.5 kW/m^2" in out
    assert "Margin to the limit (2.5 kW/m^2 on the heat flux through the assembly): " in out
