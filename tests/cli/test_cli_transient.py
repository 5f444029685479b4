"""``plyrisk check`` (and, until the transient analysis is in, ``run``) on transient studies."""

from __future__ import annotations

import re
import subprocess
import sys
from pathlib import Path

import pytest

from plyrisk.cautions import TRANSIENT_CAUTIONS
from plyrisk.cli import main
from plyrisk.display import text_units

ROOT = Path(__file__).resolve().parents[2]
TURNOUT = ROOT / "configs" / "turnout_flash.toml"
BENCH = ROOT / "configs" / "bench_sensor.toml"


@pytest.fixture(scope="module")
def turnout_check():
    out = subprocess.run([sys.executable, "-m", "plyrisk", "check", str(TURNOUT)],
                         capture_output=True, text=True, cwd=ROOT)
    return out


def test_demos_are_labelled_invented():
    for path in (TURNOUT, BENCH):
        assert path.read_text().startswith("# INVENTED demo study")


def test_check_turnout_prints_the_nominal_history(turnout_check):
    assert turnout_check.returncode == 0, turnout_check.stderr
    out = turnout_check.stdout
    for pattern in (r"time to first-degree burn: ", r"time to second-degree burn: ",
                    r"time to third-degree burn: ",
                    r"peak basal temperature: [\d.]+ degC at [\d.]+ s",
                    r"peak skin-surface temperature: [\d.]+ degC at [\d.]+ s",
                    r"heat stored in the assembly at the end of the exposure: [\d.]+ kJ/m\^2",
                    r"heat absorbed by the skin .*: [\d.]+ kJ/m\^2",
                    r"target: P\(second-degree burn\) within the horizon at most 5 %",
                    r"Uncertain parameters \(9\)", r"exposure\.duration",
                    r"thermal liner\.thickness", r"skin gap\.width"):
        assert re.search(pattern, out), pattern
    table = out[out.index("Layers (nominal"):out.index("Nominal history")]
    for name in ("outer shell", "shell gap", "moisture barrier", "thermal liner", "skin gap"):
        assert name in table
    # heat capacity per area of the outer shell: 320 kg/m^3 x 1300 J/(kg K) x 0.75 mm
    assert re.search(r"outer shell\s+solid\s+0\.75\s+320\s+1300\s+0\.065\s+0\.312", table)
    flat = "".join(out.split())  # wrapped lines may break at a hyphen
    for caution in TRANSIENT_CAUTIONS:  # the terminal spells units in ASCII (degC)
        assert "".join(text_units(caution).split()) in flat


def test_check_imports_no_heavy_library():
    code = ("import sys, contextlib, io; from plyrisk.cli import main\n"
            f"with contextlib.redirect_stdout(io.StringIO()): main(['check', {str(BENCH)!r}])\n"
            "print(' '.join(m for m in ('dask', 'matplotlib', 'SALib', 'xarray') "
            "if m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=ROOT)
    assert out.returncode == 0, out.stderr
    assert out.stdout.strip() == ""


def test_check_bench_prints_the_criterion_and_the_sweep(capsys):
    assert main(["check", str(BENCH)]) == 0
    out = capsys.readouterr().out
    assert re.search(r"sensor reaches the second-degree criterion at: [\d.]+ s", out)
    assert re.search(r"exposure energy at the criterion \(the rating\): [\d.]+ kJ/m\^2", out)
    assert "Wearer: copper-disc sensor, m c / A = 5.515 kJ/(m^2 K)" in out
    assert "target: P(criterion reached) within the horizon at most 5 %" in out
    sweep = out[out.index("Scenarios:"):]
    for level in ("25 kW/m^2", "40 kW/m^2", "60 kW/m^2"):
        assert level in sweep


def test_run_answers_with_the_time_to_burn(tmp_path, capsys):
    """run on a transient config: propagation, analysis, summary (answer first), report."""
    config = tmp_path / "tiny.toml"
    from tests.study_texts import FLASH

    config.write_text(FLASH.format(samples=16))
    code = main(["run", str(config), "--out", str(tmp_path / "out"), "--quiet"])
    out = capsys.readouterr().out
    assert code == 0
    assert out.index("ANSWER") < out.index("CAUTIONS")
    assert "time to second-degree burn: P5" in out
    assert (tmp_path / "out" / "results.nc").exists() and (tmp_path / "out" /
                                                           "report.html").exists()
    # the wearer the model used, also where the config gives only its kind
    md = (tmp_path / "out" / "summary.md").read_text(encoding="utf-8")
    wearer = md[md.index("**The wearer**"):]
    assert "| wearer | skin | properties | jiang_2002 | default |" in wearer
    assert "| damage_model | " in wearer and "| default |" in wearer
