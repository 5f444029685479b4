"""Correlated inputs end to end: ``plyrisk check`` shows target and achieved rank correlations;
``plyrisk run`` with method = "shapley" writes Shapley effects to results.nc, the summary and the
report; the other methods are refused on the command line."""

from __future__ import annotations

import contextlib
import io
import re
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
    assert "hot_side (not a layer)" in text and "dominant layer: hot_side" not in text
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
    assert "hot side (not a layer)" in report  # ranked with the layers, marked as conditions
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
    _check_summary_json(tmp_path / "out", "inner_surface_temperature")
    # the percentiles come from the 128 joint draws, all converged: no lost-samples warning
    assert "did not converge" not in (tmp_path / "out" / "quantiles.csv").read_text()


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


def transient_config(tmp: Path) -> Path:
    """The small invented flash study (skin) with method shapley, two correlated inputs and a
    tolerance target on the time to burn."""
    from tests.study_texts import flash

    text = flash(64, study="permutations = 32", tail=(
        '\n[correlations]\npairs = [["exposure.incident_flux", "exposure.duration", -0.5]]\n'
        '\n[tolerances]\nsamples = 64\ntarget = "P(second_degree_burn) <= 5 %"\n'))
    text = text.replace('method = "saltelli"', 'method = "shapley"\ndesign = "lhs"')
    path = tmp / "flash_correlated.toml"
    path.write_text(text)
    return path


def test_transient_study_with_correlated_inputs_end_to_end(tmp_path):
    config = transient_config(tmp_path)
    code, text = run(["check", str(config)])
    assert code == 0, text
    assert "Rank correlations" in text and "exposure.incident_flux" in text
    outs = {}
    for name, extra in (("a", ["--chunk-size", "37"]), ("b", ["--workers", "2"])):
        code, text = run(["run", str(config), "--out", str(tmp_path / name), "--quiet",
                          *extra])
        assert code == 0, text
        outs[name] = xr.open_dataset(tmp_path / name / "results.nc").load()
    for needle in ("inputs ranked by Shapley effect of capped_time_to_second_degree_burn",
                   "layers ranked by Shapley effect", "dominant layer: fabric (for the time to "
                   "second-degree burn, capped at the horizon: Shapley effect",
                   "indices of dependent inputs of capped_time_to_second_degree_burn",
                   "How to read Shapley effects", "P(second-degree burn within 12 s)"):
        assert needle in text, needle
    a, b = outs["a"], outs["b"]
    # results do not depend on the chunking or the number of workers
    for v in ("shapley_effect", "shapley_group_effect", "full_total_index",
              "event_time_quantile", "event_probability"):
        np.testing.assert_array_equal(a[v].values, b[v].values, err_msg=v)
    ds = a.isel(scenario=0)
    outputs = [str(o) for o in ds["output"].values]
    assert outputs[0] == "capped_time_to_second_degree_burn"
    eff = ds["shapley_effect"].values
    assert np.allclose(np.nansum(eff, axis=-1), 1.0, atol=1e-9)
    assert ds["shapley_effect"].attrs["units"] == "1" and ds["shapley_effect"].attrs["long_name"]
    r = ds["input_rank_correlation"].values
    names = list(ds["parameter"].values)
    assert r[names.index("exposure.incident_flux"), names.index("exposure.duration")] == -0.5
    assert int(ds["samples_used"]) == 64  # statistics from the joint draws
    from plyrisk.report.figures.transient import independent_rows

    assert int(independent_rows(ds).sum()) == 64  # and so do the figures
    # the bands figure says the exposure it shades is nominal and how far it is uncertain
    # Source: closed form; the P5 and P95 of a uniform on [lo, hi] are lo + 0.05 (hi - lo) and
    # lo + 0.95 (hi - lo): 3.15-5.85 s for [3 s, 6 s], 42-78 kW/m2 for [40, 80] kW/m2. The
    # copula reorders the draws, so the tolerance is three standard errors of a sample
    # quantile from 64 draws, 3 sqrt(0.05 * 0.95 / 64) (hi - lo): 0.25 s and 3.3 kW/m2
    # (common practice)
    from plyrisk.report.figures import transient as tf

    fig = tf.bands_figure(a)
    legend = " ".join(t.get_text() for lg in fig.legends for t in lg.get_texts())
    assert "exposure, nominal duration (4.5 s)" in legend
    got = re.search(r"duration uncertain: P5–P95 ([\d.]+)–([\d.]+) s", legend)
    assert got, legend
    assert float(got[1]) == pytest.approx(3.15, abs=0.25)
    assert float(got[2]) == pytest.approx(5.85, abs=0.25)
    notes = " ".join(t.get_text() for ax in fig.axes for t in ax.texts)
    got = re.search(r"flux uncertain: P5–P95 ([\d.]+)–([\d.]+) kW/m²", notes)
    assert got, notes
    assert float(got[1]) == pytest.approx(42.0, abs=3.3)
    assert float(got[2]) == pytest.approx(78.0, abs=3.3)
    fig = tf.burn_time_figure(a)
    legend = [t.get_text() for t in fig.axes[0].get_legend().get_texts()]
    assert "5 % of samples (where the curve crosses it: P5)" in legend
    report = (tmp_path / "a" / "report.html").read_text()
    for needle in ("Inputs ranked by Shapley effect of capped_time_to_second_degree_burn",
                   "Layers ranked by Shapley effect", "How to read Shapley effects",
                   "Indices of dependent inputs of capped_time_to_second_degree_burn",
                   "dependent through a Gaussian copula", "Which layer buys the most time"):
        assert needle in report, needle
    # the copula of [correlations] is stated once among the notes, the pairs once too
    notes = report.split("Assumptions and limits of the model")[-1]
    assert notes.count("Gaussian copula of the rank correlations") == 1
    assert notes.count("exposure.incident_flux with exposure.duration -0.50") == 1
    md_notes = (tmp_path / "a" / "summary.md").read_text().split("## Notes")[-1]
    assert md_notes.count("Gaussian copula of the rank correlations") <= 1
    assert (tmp_path / "a" / "shapley.csv").read_text().startswith("scenario,output,kind")
    _check_summary_json(tmp_path / "a", "capped_time_to_second_degree_burn")
    assert "Shapley effect" in (tmp_path / "a" / "tolerances.csv").read_text()
    code, text = run(["report", str(tmp_path / "a"), "--out", str(tmp_path / "again")])
    assert code == 0, text  # the folder of a run stands for its results.nc
    assert "Times to burn are model estimates" in text  # the transient cautions
    assert "steady state (no exposure duration" not in text
    code, text = run(["tolerances", str(config), "--out", str(tmp_path / "tol"), "--quiet"])
    assert code == 0, text
    assert "inputs correlated ([correlations])" in text


def test_transient_shapley_refuses_growth_with_one_line(tmp_path, capsys):
    code = main(["run", str(transient_config(tmp_path)), "--until-converged", "--quiet"])
    _, err = capsys.readouterr()
    assert code == 2
    assert len(err.strip().splitlines()) == 1 and "--until-converged" in err


def _check_summary_json(out: Path, output: str) -> None:
    """summary.json ranks parameters and layers by Shapley effect and validates."""
    import json

    jsonschema = pytest.importorskip("jsonschema")
    data = json.loads((out / "summary.json").read_text(encoding="utf-8"))
    schema = json.loads((ROOT / "docs" / "summary.schema.json").read_text(encoding="utf-8"))
    jsonschema.Draft202012Validator(schema).validate(data)
    for key in ("top_parameters", "top_layers"):
        top = data["scenarios"][0][key]
        assert top["estimator"] == "shapley" and top["measure"] == "shapley_effect", key
        assert top["output"] == output and top["items"][0]["rank"] == 1
