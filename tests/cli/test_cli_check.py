"""``plyrisk check``: exit codes, the one-line errors and the printed nominal solution."""

from __future__ import annotations

import re
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from plyrisk.cautions import CAUTIONS, cautions_text
from plyrisk.cli import main

ROOT = Path(__file__).resolve().parents[2]
BAD = sorted((ROOT / "tests" / "data" / "bad_configs").glob("*.toml"))
GARMENT = ROOT / "configs" / "reflective_garment.toml"

SLAB = """
[study]
title = "Invented test: one slab between two temperatures"
method = "pce"
design = "random"
samples = 8
seed = 3
limit = "44 degC"

[hot_side]
kind = "temperature"
temperature = "100 degC"

[[layer]]
name = "slab"
kind = "solid"
thickness = "10 mm"
conductivity = "0.05 W/m/K"

[cold_side]
kind = "temperature"
temperature = "20 degC"
"""


def expectation(path: Path) -> str:
    return path.read_text().splitlines()[0][len("# expect: "):]


def run_check(capsys, path) -> tuple[int, str, str]:
    code = main(["check", str(path)])
    out, err = capsys.readouterr()
    return code, out, err


def one_line(err: str) -> str:
    lines = err.splitlines()
    assert len(lines) == 1, err
    assert "Traceback" not in err
    return lines[0]


@pytest.mark.parametrize("path", BAD, ids=[p.stem for p in BAD])
def test_bad_config_exits_2_with_one_line(capsys, path):
    code, out, err = run_check(capsys, path)
    assert code == 2
    assert out == ""
    line = one_line(err)
    assert line.startswith(f"plyrisk: error: {path}: ")
    assert re.search(expectation(path), line), line


def test_at_least_fifteen_distinct_bad_configs():
    assert len({expectation(p) for p in BAD}) >= 15


def test_missing_file(capsys, tmp_path):
    missing = tmp_path / "nope.toml"
    code, out, err = run_check(capsys, missing)
    assert code == 2
    assert one_line(err) == f"plyrisk: error: {missing}: no such file"


@pytest.mark.parametrize(
    ("argv", "match"),
    [
        ([], r"^plyrisk: error: missing VERB; choose from: check"),
        (["frobnicate"], r"^plyrisk: error: argument VERB: invalid choice: 'frobnicate'"),
        (["check"], r"^plyrisk: error: the following arguments are required: config"),
        (["check", "a.toml", "b.toml"], r"^plyrisk: error: unrecognized arguments: b\.toml"),
    ],
)
def test_usage_errors_are_one_line(capsys, argv, match):
    assert main(argv) == 2
    out, err = capsys.readouterr()
    assert re.search(match, one_line(err))


def test_help_exits_0(capsys):
    assert main(["--help"]) == 0
    assert "check" in capsys.readouterr().out
    assert main(["check", "--help"]) == 0
    text = capsys.readouterr().out
    assert "CONFIG" in text.upper()
    assert "compiles the time loop once" in " ".join(text.split())


def test_check_reflective_garment(capsys):
    code, out, err = run_check(capsys, GARMENT)
    assert code == 0, err
    assert err == ""
    assert "Study: Invented demo: reflective garment for sustained work near a furnace" in out
    for name in ("aluminised shell.thickness", "outer gap.width", "skin gap.width",
                 "hot_side.convection_coefficient"):
        assert name in out
    assert "lognormal(median 1 mm, gsd 1.4)" in out
    assert "Nominal solution" in out
    for element in ("aluminised shell", "outer gap", "moisture barrier", "thermal liner"):
        assert re.search(rf"^  {element} +(solid|gap) +\d", out, re.M), element
    assert re.search(r"^Heat flux: [\d.]+ W/m\^2$", out, re.M)
    assert re.search(r"^Inner-surface temperature: [\d.]+ degC$", out, re.M)
    assert re.search(r"^Margin to the limit \(44 degC\): ", out, re.M)
    assert "Scenarios: hot_side.incident_flux swept" in out
    for label in ("0.5 kW/m^2", "1 kW/m^2", "1.5 kW/m^2"):
        assert label in out
    assert cautions_text() in out
    assert out.rstrip().endswith(cautions_text().splitlines()[-1])


def test_cautions_cover_the_rules():
    text = cautions_text().lower()
    for phrase in ("engineering estimates only", "certification testing", "accredited "
                   "laboratories", "local codes", "steady state", "dry fabrics",
                   "no compression", "no degradation", "no moisture", "still air in gaps",
                   "grey", "one-dimensional", "applicable standards", "burn-injury",
                   "opaque", "250-1500 k"):
        assert phrase in " ".join(text.split()), phrase
    assert len(CAUTIONS) == 3


def test_slab_between_two_temperatures_follows_fourier(capsys, tmp_path):
    path = tmp_path / "slab.toml"
    path.write_text(SLAB)
    code, out, err = run_check(capsys, path)
    assert code == 0, err
    # Source: Fourier's law for a plane wall, q = k (T1 - T2) / L (J. Fourier, Theorie
    # analytique de la chaleur, 1822; common practice): 0.05 * 80 / 0.010 = 400 W/m2,
    # R = L / k = 0.2 m2 K/W.
    assert re.search(r"^Heat flux: 400 W/m\^2$", out, re.M)
    assert re.search(r"^  slab +solid +0\.2 +80 K +100\.0", out, re.M)  # a drop: K
    assert "Inner-surface temperature: 20 degC" in out
    assert "Margin to the limit (44 degC): 24 K below the limit" in out
    assert "Uncertain parameters: none" in out
    assert "needs at least one uncertain parameter" in " ".join(out.split())  # wrapped
    assert "the inner-surface temperature is fixed" in " ".join(out.split())


def test_truncation_is_reported(capsys, tmp_path):
    path = tmp_path / "trunc.toml"
    path.write_text(SLAB.replace('thickness = "10 mm"',
                                 'thickness = { normal = { mean = "3 mm", sd = "1 mm" } }'))
    code, out, _ = run_check(capsys, path)
    assert code == 0
    # Source: standard normal table, P(Z < -3) = 0.00135 (NIST/SEMATECH e-Handbook of
    # Statistical Methods, sec. 1.3.6.7.1).
    assert "truncated at 0 mm: 0.13 % of the mass cut" in out
    assert "slab.thickness" in out


GAP = """
[study]
title = "Invented test: a wide gap"
method = "pce"
design = "random"
samples = 8
seed = 3
limit = "60 degC"

[hot_side]
kind = "temperature"
temperature = "150 degC"

[[layer]]
name = "shell"
kind = "solid"
thickness = "0.5 mm"
conductivity = "0.05 W/m/K"

[[layer]]
name = "wide gap"
kind = "gap"
width = "25 mm"

[cold_side]
kind = "surface"
temperature = "34 degC"
"""


def test_convection_onset_is_noted_when_convection_is_off(capsys, tmp_path):
    path = tmp_path / "gap.toml"
    path.write_text(GAP)
    code, out, _ = run_check(capsys, path)
    assert code == 0
    line = next(x for x in out.splitlines() if x.startswith("  wide gap:"))
    assert "past convection onset; convection is off" in line
    row = next(x for x in out.splitlines() if x.startswith("  wide gap "))
    ra = float(row.split()[-1])  # the Rayleigh column
    # Source: in a vertical air layer heat crosses by conduction alone below Ra ~ 1e3
    # (ElSherbiny, Raithby & Hollands 1982, J. Heat Transfer 104, conduction regime)
    # (from memory).
    assert ra > 1e3


def test_non_converged_nominal_exits_1(capsys, tmp_path):
    path = tmp_path / "gap.toml"
    path.write_text(GAP.replace("[study]", "[model]\nmax_iterations = 1\n\n[study]"))
    code, out, _ = run_check(capsys, path)
    assert code == 1
    assert "did not converge after 1 iteration" in out
    assert cautions_text() in out


def _console_script() -> str | None:
    candidate = Path(sys.executable).with_name("plyrisk")
    return str(candidate) if candidate.exists() else shutil.which("plyrisk")


@pytest.mark.skipif(_console_script() is None, reason="plyrisk console script not installed")
@pytest.mark.slow
def test_console_script(tmp_path):
    script = _console_script()
    ok = subprocess.run([script, "check", str(ROOT / "configs" / "small_demo.toml")],
                        capture_output=True, text=True, timeout=120)
    assert ok.returncode == 0, ok.stderr
    assert "Inner-surface temperature" in ok.stdout
    bad = BAD[0]
    fail = subprocess.run([script, "check", str(bad)], capture_output=True, text=True,
                          timeout=120)
    assert fail.returncode == 2
    assert fail.stdout == ""
    assert one_line(fail.stderr).startswith(f"plyrisk: error: {bad}: ")
