"""``plyrisk tolerances`` and the ``[tolerances]`` config section: output, CSV, one-line errors."""

from __future__ import annotations

import csv
import math
from pathlib import Path

import pytest

from plyrisk.cautions import cautions_text
from plyrisk.cli import main
from plyrisk.errors import ConfigError
from plyrisk.study.config import load_study, loads_study
from plyrisk.tolerances.output import manufacturing_table, write_tolerance_csv
from plyrisk.tolerances.study import run_tolerances

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "configs" / "small_demo.toml"
ZERO_CELSIUS = 273.15  # Source: SI Brochure, 9th ed. (2019), sec. 2.3.1


def demo_with(section: str) -> str:
    return DEMO.read_text() + "\n[tolerances]\n" + section


def one_line(err: str) -> str:
    lines = err.splitlines()
    assert len(lines) == 1, err
    assert "Traceback" not in err
    return lines[0]


def read_table(path: Path) -> list[dict]:
    lines = path.read_text(encoding="utf-8").splitlines()
    assert lines[0] == "# CAUTIONS"
    return list(csv.DictReader(line for line in lines if not line.startswith("#")))


# ----------------------------------------------------------------------------------------------
# The verb
# ----------------------------------------------------------------------------------------------


def test_tolerances_verb_prints_verification_and_cautions(capsys, tmp_path):
    code = main(["tolerances", str(DEMO), "--target", "P95 <= limit", "--samples", "256",
                 "--out", str(tmp_path), "--quiet"])
    out, err = capsys.readouterr()
    assert code == 0, err
    for heading in ("Baseline (current spreads)", "What-if:", "Allowable spread:",
                    "Allocation:", "Independent verification -> ", "For manufacturing"):
        assert heading in out
    assert "(90 % CI)" in out
    assert out.rstrip().endswith(cautions_text())
    rows = read_table(tmp_path / "tolerances.csv")
    study = load_study(DEMO)
    assert [r["parameter"] for r in rows] == list(study.parameter_names)
    assert {r["layer"] for r in rows} == {"shirt fabric", "air gap"}
    assert all(r["target"] == "P95 <= limit (44 degC)" for r in rows)
    assert all(r["temperature_unit"] == "degC" for r in rows)


def test_tighter_target_gives_a_verified_allocation(capsys, tmp_path):
    code = main(["tolerances", str(DEMO), "--target", "P95 <= 42 degC", "--samples", "256",
                 "--out", str(tmp_path)])
    out, _ = capsys.readouterr()
    assert code == 0
    assert "Allocation: meets the target at least cost" in out
    verification = next(line for line in out.splitlines() if "Independent verification" in line)
    assert "-> MET" in verification
    rows = read_table(tmp_path / "tolerances.csv")
    factors = {r["parameter"]: float(r["recommended_factor"]) for r in rows}
    assert factors["air gap.width"] < 1.0                    # the dominant input is tightened
    assert all(f <= 1.0 for f in factors.values())           # nothing is loosened by default


@pytest.mark.parametrize(("args", "match"), [
    (["--target", "P95 < limit"], "--target: bad target 'P95 < limit'"),
    (["--target", "P(exceed) <= 200 %"], "between 0 % and 100 %"),
    (["--samples", "1"], "--samples must be an integer >= 2, got 1"),
    (["--seed", "-3"], "--seed must be a whole number from 0 to 2**64 - 1, got -3"),
    (["--seed", str(2**64)], "--seed must be a whole number from 0 to 2**64 - 1, got 1844"),
])
def test_bad_arguments_exit_2_with_one_line(capsys, tmp_path, args, match):
    code = main(["tolerances", str(DEMO), "--out", str(tmp_path), *args])
    out, err = capsys.readouterr()
    assert code == 2 and out == ""
    line = one_line(err)
    assert line.startswith("plyrisk: error: ") and match in line
    assert not (tmp_path / "tolerances.csv").exists()


def test_config_error_in_the_section_exits_2(capsys, tmp_path):
    path = tmp_path / "bad.toml"
    path.write_text(demo_with('cost = { "shirt fabric.thicknes" = 2.0 }\n'))
    code = main(["tolerances", str(path), "--out", str(tmp_path)])
    _, err = capsys.readouterr()
    assert code == 2
    line = one_line(err)
    assert "bad.toml: tolerances.cost: unknown parameter 'shirt fabric.thicknes'" in line
    assert "did you mean 'shirt fabric.thickness'?" in line


def test_configured_section_with_nominal_shift(capsys, tmp_path):
    path = tmp_path / "shift.toml"
    path.write_text(demo_with(
        'target = "P95 <= 42 degC"\nsamples = 128\nseed = 4\ndesign = "random"\n'
        'cost = { "air gap.width" = 2.0 }\nnominal_shift = "shirt fabric.thickness"\n'
        'nominal_range = ["0.3 mm", "3 mm"]\n'))
    code = main(["tolerances", str(path), "--out", str(tmp_path)])
    out, _ = capsys.readouterr()
    assert code == 0
    assert "Design: random, 128 samples, seed 4" in out
    assert "Nominal shift of shirt fabric.thickness" in out
    assert (tmp_path / "tolerances.csv").exists()


# ----------------------------------------------------------------------------------------------
# The [tolerances] section
# ----------------------------------------------------------------------------------------------


def test_section_is_parsed_into_settings():
    study = loads_study(demo_with(
        'target = "P99 <= 43 degC"\nsamples = 512\ndesign = "random"\nseed = 9\n'
        'cost = { "air gap.width" = 2.5 }\nmax_factor = 4\nallow_loosening = true\n'
        'keep = ["shirt fabric.emissivity"]\nbasis = "estimate"\nconfidence = 0.95\n'
        'nominal_shift = "shirt fabric.thickness"\nnominal_range = ["0.4 mm", "1.2 mm"]\n'))
    st = study.tolerances
    assert st.target.kind == "quantile" and st.target.probability == 0.99
    assert st.target.threshold == pytest.approx(43.0 + ZERO_CELSIUS, rel=1e-12)
    assert (st.samples, st.design, st.seed, st.max_factor) == (512, "random", 9, 4.0)
    assert st.cost == {"air gap.width": 2.5} and st.keep == ("shirt fabric.emissivity",)
    assert st.allow_loosening and st.basis == "estimate" and st.confidence == 0.95
    assert st.nominal_shift == "shirt fabric.thickness"
    # Source: SI prefixes, 1 mm = 1e-3 m (SI Brochure, 9th ed.)
    assert st.nominal_range == pytest.approx((0.4e-3, 1.2e-3), rel=1e-12)
    assert load_study(DEMO).tolerances is None


@pytest.mark.parametrize(("section", "path", "match"), [
    ('targt = "P95 <= limit"\n', "tolerances", "unknown key 'targt'; did you mean 'target'?"),
    ('target = "P95 < limit"\n', "tolerances.target", "bad target 'P95 < limit'"),
    ('design = "sobol"\n', "tolerances.design", "unknown design 'sobol'; valid: lhs, random"),
    ('method = "lhs"\n', "tolerances.method", 'is now design = "lhs"'),
    ("samples = 1\n", "tolerances.samples", "must be at least 2, got 1"),
    ("max_factor = 0.5\n", "tolerances.max_factor", "expected a number >= 1"),
    ('cost = { "air gap.width" = -1 }\n', 'tolerances.cost.air gap.width',
     "expected a number between 0 and inf"),
    ('keep = ["hot_side.flux"]\n', "tolerances.keep[0]", "unknown parameter 'hot_side.flux'"),
    ('basis = "median"\n', "tolerances.basis", "unknown basis 'median'"),
    ('nominal_shift = "liner.thickness"\n', "tolerances.nominal_shift",
     "unknown parameter 'liner.thickness'"),
    ('nominal_range = ["1 mm", "2 mm"]\n', "tolerances.nominal_range",
     "needs tolerances.nominal_shift"),
    ('nominal_shift = "shirt fabric.thickness"\nnominal_range = ["1 mm", "2 mm"]\n',
     "tolerances.nominal_range", "must contain the current nominal 0.6 mm"),
    ('nominal_shift = "shirt fabric.thickness"\nnominal_range = ["1 mm", "0.2 mm"]\n',
     "tolerances.nominal_range", "low must be below high"),
    ('nominal_shift = "shirt fabric.thickness"\nnominal_range = ["1 degC", "2 mm"]\n',
     "tolerances.nominal_range[0]", "has dimension"),
])
def test_section_errors_name_the_key(section, path, match):
    with pytest.raises(ConfigError, match=match) as info:
        loads_study(demo_with(section), source="x.toml")
    assert info.value.key_path == path
    assert str(info.value).startswith(f"x.toml: {path}: ")
    assert "\n" not in str(info.value)


# ----------------------------------------------------------------------------------------------
# The table for manufacturing
# ----------------------------------------------------------------------------------------------


def test_manufacturing_table_and_csv(tmp_path):
    study = load_study(DEMO)
    report = run_tolerances(study, target="P(exceed) <= 1 %", samples=128)
    rows = manufacturing_table(report, study, indices={"air gap.width": 0.9})
    assert len(rows) == len(study.parameters)
    gap = rows[-1]
    assert gap.share_source == "Sobol total index" and gap.variance_share == 0.9
    assert rows[0].share_source == "held at nominal (CRN)"
    assert gap.current_spec == "lognormal(median 2 mm, gsd 1.3)"
    assert gap.quantile_label == "P95" and math.isfinite(gap.quantile_if_halved)
    assert gap.target == "P(exceed) <= 1 % (limit 44 degC)"
    path = write_tolerance_csv(rows, tmp_path / "sub" / "t.csv")
    table = read_table(path)
    assert [r["parameter"] for r in table] == [r.parameter for r in rows]
    assert float(table[-1]["variance_share"]) == 0.9


def test_too_few_samples_for_the_percentile_is_one_line(capsys, tmp_path):
    # Source: the distribution-free upper bound of the p-quantile needs n >= ln(alpha/2)/ln(p);
    # for p = 0.999 and 90 % confidence that is 2995 (common practice).
    code = main(["tolerances", str(DEMO), "--target", "P99.9 <= limit", "--samples", "32",
                 "--out", str(tmp_path), "--quiet"])
    err = capsys.readouterr().err.strip().splitlines()
    assert code == 2 and len(err) == 1
    assert "--samples: samples = 32 is too small to bound P99.9 at 90 % confidence; need at " \
           "least 2995" in err[0]


def test_run_after_tolerances_into_a_fresh_folder_keeps_the_table(tmp_path, capsys):
    """A tolerance table alone is not a study result: ``run`` adds to the folder without
    ``--overwrite`` and keeps the table it does not replace."""
    out = tmp_path / "out"
    assert main(["tolerances", str(DEMO), "--out", str(out), "--samples", "64", "--quiet"]) == 0
    table = (out / "tolerances.csv").read_bytes()
    assert main(["run", str(DEMO), "--out", str(out), "--samples", "16", "--no-report",
                 "--quiet"]) == 0
    assert (out / "results.nc").is_file()
    assert (out / "tolerances.csv").read_bytes() == table
    assert main(["run", str(DEMO), "--out", str(out), "--samples", "16", "--no-report",
                 "--quiet"]) == 0
    assert "up to date" in capsys.readouterr().out
