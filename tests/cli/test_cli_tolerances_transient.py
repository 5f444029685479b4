"""``plyrisk tolerances`` end to end on a small transient study (time to burn, P(burn))."""

from __future__ import annotations

import csv
from pathlib import Path

import pytest

from plyrisk.cautions import cautions_text
from plyrisk.cli import main
from plyrisk.study.config import loads_study

pytestmark = pytest.mark.slow

# INVENTED test study: one fabric over an air gap on skin, three uncertain inputs; every value
# is invented and none is a check value.
FLASH = """
[study]
title = "Invented test: one fabric in a short flash"
method = "saltelli"
samples = 16
seed = 11
acceptable_burn_probability = "5 %"

[exposure]
incident_flux = "40 kW/m^2"
gas_temperature = "25 degC"
convection_coefficient = "0 W/m^2/K"
duration = { uniform = ["4 s", "10 s"] }
horizon = "30 s"
ambient_temperature = "25 degC"

[[layer]]
name = "fabric"
kind = "solid"
thickness = { nominal = "1.2 mm", tolerance = "0.2 mm" }
conductivity = "0.05 W/m/K"
density = "300 kg/m^3"
specific_heat = "1300 J/kg/K"
emissivity = 0.9

[[layer]]
name = "gap"
kind = "gap"
width = { uniform = ["1 mm", "4 mm"] }

[wearer]
kind = "skin"
properties = "jiang_2002"

[tolerances]
samples = 64
"""


def read_table(path: Path) -> list[dict]:
    lines = path.read_text(encoding="utf-8").splitlines()
    assert lines[0] == "# CAUTIONS"
    return list(csv.DictReader(line for line in lines if not line.startswith("#")))


@pytest.mark.parametrize("target", ["P(second_degree_burn) <= 5 %",
                                    "P5(time_to_second_degree_burn) >= 12 s"])
def test_tolerances_verb_on_a_transient_study(tmp_path, capsys, target):
    config = tmp_path / "flash.toml"
    config.write_text(FLASH, encoding="utf-8")
    code = main(["tolerances", str(config), "--target", target, "--out", str(tmp_path / "out"),
                 "--quiet"])
    out, err = capsys.readouterr()
    assert code == 0, err
    for heading in ("Baseline (current spreads)", "What-if:", "Allowable spread:",
                    "Independent verification", "For manufacturing"):
        assert heading in out
    assert f"Target: {target} (within the horizon 30 s)" in out
    assert "P(second_degree_burn within 30 s) = " in out
    # the cautious side of the interval: lower for a time kept above a bound
    side = "lower" if ">=" in target else "upper"
    assert f", {side} confidence bound " in out.replace("\n    ", " ")
    assert out.rstrip().endswith(cautions_text(transient=True))
    rows = read_table(tmp_path / "out" / "tolerances.csv")
    study = loads_study(FLASH, source=str(config))
    assert [r["parameter"] for r in rows] == list(study.parameter_names)
    assert all(r["target"].startswith(target) for r in rows)


def test_default_transient_target_is_the_acceptable_burn_probability(tmp_path, capsys):
    config = tmp_path / "flash.toml"
    config.write_text(FLASH, encoding="utf-8")
    code = main(["tolerances", str(config), "--out", str(tmp_path / "out"), "--quiet"])
    out, err = capsys.readouterr()
    assert code == 0, err
    assert "Target: P(second_degree_burn) <= 5 %" in out


def test_a_steady_target_on_a_transient_study_is_one_line(tmp_path, capsys):
    config = tmp_path / "flash.toml"
    config.write_text(FLASH, encoding="utf-8")
    code = main(["tolerances", str(config), "--target", "P95 <= 44 degC", "--out",
                 str(tmp_path / "out"), "--quiet"])
    _, err = capsys.readouterr()
    assert code == 2
    assert len(err.strip().splitlines()) == 1 and "Traceback" not in err
    assert "transient study takes" in err


@pytest.mark.parametrize(("options", "blamed"), [
    (["--target", "P(exceed) <= 1 %"], "--target: target 'P(exceed) <= 1 %' is about"),
    (["--samples", "3"], "--samples: samples = 3 is too small"),
])
def test_a_refused_option_is_named_not_the_config(tmp_path, capsys, options, blamed):
    config = tmp_path / "flash.toml"
    config.write_text(FLASH.replace("[tolerances]\n", '[tolerances]\ntarget = '
                                    '"P5(time_to_second_degree_burn) >= 5 s"\n'),
                      encoding="utf-8")
    code = main(["tolerances", str(config), *options, "--out", str(tmp_path / "out"),
                 "--quiet"])
    _, err = capsys.readouterr()
    assert code == 2
    assert err.strip() == err.strip().splitlines()[0] and "Traceback" not in err
    assert f"plyrisk: error: {blamed}" in err
    assert "tolerances:" not in err.split(blamed)[0]
    assert not (tmp_path / "out").exists()
