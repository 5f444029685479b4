"""A limit on the heat flux, end to end: exceedance, verdict, summary, report, CSV, JSON and the
tolerance engine all follow the chosen output.

The study is the invented small demo with its limit moved to the heat flux; its numbers are
inputs, not check values: the checks compare plyrisk with itself (the exceedance against a
direct count of the stored heat-flux samples) and the units against the SI definition.
"""

from __future__ import annotations

import json

import numpy as np
import pytest

from plyrisk.cli import main
from plyrisk.pipeline.run import run_study, summary_text
from plyrisk.study.config import loads_study
from tests.conftest import CONFIGS

LIMIT_W = 150.0  # W m-2 (0.15 kW/m^2 below); Source: SI prefix kilo = 10^3 (BIPM SI Brochure)
TEXT = (CONFIGS / "small_demo.toml").read_text(encoding="utf-8").replace(
    'limit = "44 degC"\n',
    'limit = "0.15 kW/m^2"\nlimit_output = "heat_flux"\ncriterion = "P(exceed) <= 50 %"\n', 1)


@pytest.fixture(scope="module")
def flux_result():
    study = loads_study(TEXT, source="flux.toml")
    from dataclasses import replace

    return run_study(replace(study, analysis=replace(study.analysis, samples=64)), quiet=True)


def test_exceedance_counts_the_heat_flux_samples(flux_result):
    ds = flux_result.dataset.isel(scenario=0)  # unswept: its one scenario
    assert ds.attrs["limit"] == pytest.approx(LIMIT_W)
    assert ds.attrs["limit_output"] == "heat_flux" and ds.attrs["limit_units"] == "W m-2"
    independent = np.isin(ds["sample_block"].values, (0, 1))     # A and B rows
    q = ds["heat_flux"].values[independent]
    q = q[np.isfinite(q)]
    assert ds["exceedance_probability"].item() == pytest.approx(np.mean(q > LIMIT_W))
    assert ds["exceedance_probability"].attrs["output"] == "heat_flux"
    assert "heat flux" in ds["exceedance_probability"].attrs["long_name"]
    assert "heat_flux_quantile" in ds and ds["heat_flux_quantile"].attrs["units"] == "W m-2"
    assert "heat_flux" in list(ds["output"].values)                # indices of it too
    assert ds.attrs["criterion_output"] == "heat_flux"
    assert ds.attrs["verdict"] in ("MET", "NOT MET", "UNDECIDED")


def test_the_summary_names_the_heat_flux(flux_result):
    text = summary_text(flux_result)
    head = text[:text.index("method:")]
    assert "VERDICT:" in head and "heat flux through the assembly > 0.15 kW/m^2" in head
    assert "P(heat flux through the assembly > 0.15 kW/m^2) =" in text
    assert "most influential parameters for the heat flux" in text


@pytest.mark.slow
def test_report_csv_json_and_tolerances_follow_the_heat_flux(tmp_path, capsys):
    config = tmp_path / "flux.toml"
    config.write_text(TEXT + '\n[tolerances]\ntarget = "P95 <= limit"\nsamples = 64\n'
                      'basis = "estimate"\n', encoding="utf-8")
    out = tmp_path / "out"
    assert main(["run", str(config), "--out", str(out), "--samples", "64", "--quiet"]) == 0
    capsys.readouterr()
    md = (out / "summary.md").read_text(encoding="utf-8")
    assert "heat flux through the assembly > 0.15 kW/m^2" in md
    html = (out / "report.html").read_text(encoding="utf-8")
    assert "The limit applies to the heat flux through the assembly" in html
    rows = (out / "quantiles.csv").read_text(encoding="utf-8").splitlines()
    assert rows[0].endswith("limit_applies")
    flux_rows = [r for r in rows if r.startswith(",heat_flux,")]
    assert flux_rows and all(r.endswith("W m-2,,true") for r in flux_rows)
    data = json.loads((out / "summary.json").read_text(encoding="utf-8"))
    assert data["limit_output"] == "heat_flux" and data["verdict"]["output"] == "heat_flux"
    assert "heat flux" in (out / "tolerances.csv").read_text(encoding="utf-8")
    assert main(["tolerances", str(config), "--out", str(tmp_path / "tol"), "--quiet"]) == 0
    text = capsys.readouterr().out
    assert "on the heat flux through the assembly" in text and "kW/m^2" in text
