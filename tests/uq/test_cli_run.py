"""``plyrisk run``: end to end on a small demo, and one-line errors for user mistakes."""

from __future__ import annotations

from pathlib import Path

import pytest
import xarray as xr

from uq.cautions import CAUTIONS
from uq.cli import main

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
        (["--samples", "100"], r"--samples 100: method = sobol needs a power of two \(e.g. 64"),
        (["--samples", "0"], r"--samples must be a positive integer, got 0"),
        (["--seed", "-1"], r"--seed must be zero or positive, got -1"),
        (["--samples", "many"], r"argument --samples: invalid int value: 'many'"),
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
