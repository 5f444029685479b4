"""``plyrisk run``: end to end on a small demo, and one-line errors for user mistakes."""

from __future__ import annotations

from pathlib import Path

import pytest
import xarray as xr

from plyrisk.cautions import CAUTIONS
from plyrisk.cli import main

ROOT = Path(__file__).resolve().parents[2]
SMALL = ROOT / "configs" / "small_demo.toml"
BAD = sorted((ROOT / "tests" / "data" / "bad_configs").glob("*.toml"))


def one_line(err: str) -> str:
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    assert "Traceback" not in err
    return lines[0]


@pytest.fixture(scope="module")
def demo_run(tmp_path_factory):
    out = tmp_path_factory.mktemp("run")
    import contextlib
    import io

    buf = io.StringIO()
    with contextlib.redirect_stdout(buf):
        code = main(["run", str(SMALL), "--out", str(out), "--samples", "64", "--quiet"])
    return code, buf.getvalue(), out


@pytest.mark.slow
def test_run_writes_the_dataset_and_prints_the_summary(demo_run):
    code, text, out = demo_run
    assert code == 0
    ds = xr.open_dataset(out / "results.nc")
    for name in ("inner_surface_temperature", "sobol_total", "exceedance_probability",
                 "inner_surface_temperature_quantile"):
        assert name in ds
    assert ds.attrs["base_samples"] == 64
    ds.close()
    for needle in ("P5", "P50", "P95", "P(inner surface >", "most influential parameters",
                   "layers (grouped total index", "non-converged samples: 0"):
        assert needle in text, needle
    flat = " ".join(text.split())
    for caution in CAUTIONS:
        assert " ".join(caution.split()) in flat


@pytest.mark.slow
def test_default_output_folder_is_named_after_the_config(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    assert main(["run", str(SMALL), "--samples", "16", "--quiet", "--no-report"]) == 0
    assert (tmp_path / "small_demo" / "results.nc").is_file()


@pytest.mark.parametrize("path", BAD, ids=[p.stem for p in BAD])
def test_bad_configs_exit_2_with_one_line(capsys, path):
    code = main(["run", str(path), "--quiet"])
    _, err = capsys.readouterr()
    assert code == 2
    line = one_line(err)
    assert line.startswith("plyrisk: error: ")
    assert path.name in line


@pytest.mark.parametrize(
    ("argv", "match"),
    [
        (["--samples", "100"],
         r"--samples 100: must be replicates \(8\) x a power of 2.*use 64 or 128"),
        (["--samples", "0"], r"--samples must be at least 8, got 0"),
        (["--samples", "1099511627776"], r"--samples: 1099511627776 samples need about .* GiB"),
        (["--seed", "-1"], r"--seed must be a whole number from 0 to 2\*\*64 - 1, got -1"),
        (["--seed", str(2**64)], r"--seed must be a whole number from 0 to 2\*\*64 - 1, got 1844"),
        (["--samples", "many"], r"argument --samples: invalid int value: 'many'"),
        (["--method", "sobol"], r'--method: "sobol" is now "saltelli"'),
        (["--method", "fast"], r"--method: unknown method 'fast'; valid: saltelli, pce, morris"),
        (["--method", "pce", "--until-converged"],
         r"--until-converged needs method = saltelli, not 'pce'"),
        (["--max-runs", "100"], r"--max-runs applies to --until-converged only"),
        (["--until-converged", "--max-runs", "10"],
         r"--max-runs 10: the first step already needs 1792 model runs"),
    ],
)
def test_bad_options_exit_2_with_one_line(capsys, tmp_path, argv, match):
    code = main(["run", str(SMALL), "--out", str(tmp_path), "--quiet", *argv])
    _, err = capsys.readouterr()
    assert code == 2
    assert pytest.importorskip("re").search(match, one_line(err))


def test_missing_config_file(capsys, tmp_path):
    code = main(["run", str(tmp_path / "nope.toml")])
    _, err = capsys.readouterr()
    assert code == 2
    assert "nope.toml" in one_line(err)


def test_summary_warns_when_a_gap_passes_the_onset_of_convection():
    from plyrisk.pipeline.run import run_study, summary_text
    from plyrisk.study.config import loads_study
    from tests.study_texts import panel

    # A 20 mm vertical gap with tens of kelvin across it is far past the onset (Ra >> 1e3).
    study = loads_study(panel(samples=16, gap_width='{ uniform = ["18 mm", "22 mm"] }'))
    result = run_study(study, quiet=True)
    assert result.analysis.scenarios[0].onset_samples > 0
    text = summary_text(result)
    assert "past the onset of natural convection" in text
    assert "not conservative" in text


@pytest.mark.slow
def test_report_verb_rewrites_the_report_of_a_results_file(demo_run, tmp_path, capsys):
    _, _, out = demo_run
    assert (out / "report.html").is_file() and (out / "summary.md").is_file()
    assert main(["report", str(out / "results.nc"), "--out", str(tmp_path)]) == 0
    text = capsys.readouterr().out
    assert "report:" in text and "CAUTIONS" in text
    for name in ("report.html", "summary.md", "quantiles.csv", "indices.csv", "ranking.csv"):
        assert (tmp_path / name).stat().st_size > 0, name


def test_report_verb_on_a_missing_or_foreign_file(capsys, tmp_path):
    assert main(["report", str(tmp_path / "none.nc")]) == 2
    assert "no such results file" in one_line(capsys.readouterr().err)
    bogus = tmp_path / "bogus.nc"
    bogus.write_text("not netcdf")
    assert main(["report", str(bogus)]) == 2
    assert "not a readable NetCDF results file" in one_line(capsys.readouterr().err)


def test_unwritable_output_folder_is_one_line(capsys):
    code = main(["run", str(SMALL), "--out", "/proc/plyrisk-cannot-write", "--quiet"])
    assert code == 2
    assert "--out /proc/plyrisk-cannot-write: cannot write there" in one_line(
        capsys.readouterr().err)


@pytest.mark.slow
def test_incomplete_results_file_is_one_line(demo_run, tmp_path, capsys):
    _, _, out = demo_run
    ds = xr.open_dataset(out / "results.nc").load()
    broken = tmp_path / "broken.nc"
    ds.drop_vars(["input"]).to_netcdf(broken)
    assert main(["report", str(broken), "--out", str(tmp_path)]) == 2
    assert "not a complete plyrisk results file" in one_line(capsys.readouterr().err)


@pytest.mark.parametrize("method", ["pce", "morris"])
@pytest.mark.slow
def test_method_option_overrides_the_config(tmp_path, capsys, method):
    assert main(["run", str(SMALL), "--out", str(tmp_path), "--method", method, "--samples",
                 "16", "--quiet"]) == 0
    out = capsys.readouterr().out
    assert f"method: {method}" in out
    ds = xr.open_dataset(tmp_path / "results.nc")
    assert ds.attrs["method"] == method
    ds.close()
    if method == "morris":
        assert "report: not written for method = morris" in out


@pytest.mark.slow
def test_until_converged_prints_the_path(tmp_path, capsys):
    assert main(["run", str(SMALL), "--out", str(tmp_path), "--samples", "16",
                 "--until-converged", "--max-runs", "3000", "--quiet", "--no-report"]) == 0
    out = capsys.readouterr().out
    assert "sequential growth (--until-converged" in out
    assert "N =      16:" in out and "N =     256:" in out


@pytest.mark.slow
def test_report_verb_reads_a_file_written_before_scenario_was_always_a_dimension(
        demo_run, tmp_path, capsys):
    from plyrisk.results.dataset import read_results, write_results

    _, _, out = demo_run
    new = read_results(out / "results.nc")
    old = tmp_path / "old" / "results.nc"
    write_results(new.isel(scenario=0, drop=True), old)  # the layout of earlier files
    with xr.open_dataset(old) as raw:
        assert "scenario" not in raw.dims
    assert main(["report", str(old), "--out", str(tmp_path / "again")]) == 0
    assert main(["report", str(out / "results.nc"), "--out", str(tmp_path / "now")]) == 0
    capsys.readouterr()
    for name in ("summary.md", "quantiles.csv", "indices.csv", "ranking.csv"):
        text = (tmp_path / "again" / name).read_text(encoding="utf-8")
        assert text == (tmp_path / "now" / name).read_text(encoding="utf-8"), name
