"""Correlated inputs end to end: ``plyrisk check`` shows target and achieved rank correlations;
``plyrisk run`` with method = "shapley" writes Shapley effects to results.nc, the summary and the
report; the other methods are refused on the command line."""

from __future__ import annotations

import contextlib
import io
from pathlib import Path

import numpy as np
import pytest
import xarray as xr

from plyrisk.cautions import CAUTIONS
from plyrisk.cli import main

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "configs" / "correlated_fit.toml"

pytestmark = pytest.mark.slow


def small(tmp: Path) -> Path:
    text = DEMO.read_text().replace("samples = 2048 ", "samples = 128 ").replace(
        "permutations = 2048 ", "permutations = 128 ")
    assert "samples = 128 " in text and "permutations = 128 " in text
    path = tmp / "correlated_fit.toml"
    path.write_text(text + '\n[tolerances]\nsamples = 256\ntarget = "P95 <= 75 degC"\n')
    return path


def run(argv: list[str]) -> tuple[int, str]:
    buf = io.StringIO()
    with contextlib.redirect_stdout(buf):
        code = main(argv)
    return code, buf.getvalue()


def test_check_prints_target_and_achieved_rank_correlations():
    code, text = run(["check", str(DEMO)])
    assert code == 0
    assert "target rho_s" in text and "achieved rho_s" in text
    line = next(ln for ln in text.splitlines() if ln.strip().startswith("outer gap.width")
                and "skin gap.width" in ln)
    target, achieved = (float(v) for v in line.split()[4:6])
    assert target == 0.6 and abs(achieved - target) < 0.03


def test_run_writes_shapley_effects(tmp_path):
    code, text = run(["run", str(small(tmp_path)), "--out", str(tmp_path / "out"), "--quiet"])
    assert code == 0, text
    for needle in ("Shapley effects (correlated inputs", "dominant layer:",
                   "How to read Shapley effects", "method: shapley",
                   "indices of dependent inputs", "indep. first"):
        assert needle in text, needle
    flat = " ".join(text.split())
    assert all(" ".join(c.split()) in flat for c in CAUTIONS)
    ds = xr.open_dataset(tmp_path / "out" / "results.nc")
    ds = ds.isel(scenario=0)  # unswept: its one scenario
    eff = ds["shapley_effect"].sel(output="inner_surface_temperature").values
    assert eff.sum() == pytest.approx(1.0, abs=1e-9)
    assert ds["shapley_effect"].attrs["units"] == "1" and ds["shapley_effect"].attrs["long_name"]
    assert ds["shapley_group_effect"].sizes["group"] == 5
    r = ds["input_rank_correlation"].values
    names = list(ds["parameter"].values)
    assert r[names.index("outer gap.width"), names.index("skin gap.width")] == 0.6
    assert "sobol_total" not in ds
    for name in ("full_first_index", "independent_first_index", "full_total_index",
                 "independent_total_index"):
        assert name in ds and f"{name}_ci" in ds, name
        assert ds[name].attrs["units"] == "1" and ds[name].attrs["long_name"]
        assert np.isfinite(ds[name].sel(output="inner_surface_temperature").values).all()
    assert ds["full_total_index_ci"].attrs["interval_method"] == "bootstrap"
    # joint draws, m (d - 1) 3 conditional draws, (1 + 2 d) N rows of the Rosenblatt blocks
    assert int(ds.attrs["evaluations"]) == 128 + 128 * 6 * 3 + (1 + 2 * 7) * 128
    assert np.all(ds["sample_block"].values[-(1 + 2 * 7) * 128:] == 3)
    ds.close()
    report = (tmp_path / "out" / "report.html").read_text()
    assert "How to read Shapley effects" in report
    assert "Layers by Shapley effect" in report
    assert "Indices of dependent inputs of the inner-surface temperature" in report
    assert "dependent through a Gaussian copula" in report
    assert "sampled independently" not in report
    assert "Shapley effect" in (tmp_path / "out" / "tolerances.csv").read_text()
    csv_text = (tmp_path / "out" / "shapley.csv").read_text()
    assert csv_text.startswith("scenario,output,kind,name,shapley_effect")
    assert ",layer,skin gap," in csv_text
    assert csv_text.splitlines()[0].endswith("independent_total_index,"
                                             "independent_total_index_ci_half_width")
    assert np.isfinite(eff).all()


def test_tolerances_leave_out_the_variance_share(tmp_path):
    code, text = run(["tolerances", str(small(tmp_path)), "--samples", "256", "--out",
                      str(tmp_path / "tol"), "--quiet"])
    assert code == 0, text
    assert "inputs correlated ([correlations])" in text
    table = text[text.index("For manufacturing"):]
    assert "n/a" in table


def test_method_override_is_refused_with_one_line(capsys):
    code = main(["run", str(DEMO), "--method", "saltelli", "--quiet"])
    _, err = capsys.readouterr()
    assert code == 2
    assert len(err.strip().splitlines()) == 1
    assert "[correlations]" in err
