"""The report of a transient study: figures draw, the answer comes first, cautions present."""

from __future__ import annotations

import pytest
from matplotlib.figure import Figure

from plyrisk.report.figures import transient as tf
from plyrisk.report.html import write_report
from plyrisk.results.dataset import read_results, write_results
from plyrisk.study.config import load_study
from tests import transient_study as ts
from tests.conftest import CONFIGS


def _dataset(which):
    return ts.dataset_of(which)


@pytest.mark.slow
def test_transient_figures_draw():
    skin, sweep, sensor = (_dataset(w) for w in (ts.skin_saltelli, ts.skin_sweep,
                                                 ts.sensor_pce))
    figs = [tf.bands_figure(skin), tf.burn_time_figure(skin), tf.layer_indices_figure(skin),
            tf.layer_indices_figure(skin, groups=False), tf.bands_figure(sensor),
            tf.burn_time_figure(sensor), tf.bands_figure(sweep, scenario=3),
            tf.burn_sweep_figure(sweep)]
    for f in figs:
        assert isinstance(f, Figure) and f.axes
    labels = {a.get_label() for a in figs[0].axes}
    assert labels == {"bands", "exposure"}
    with pytest.raises(ValueError, match="sweeps no exposure"):
        tf.burn_sweep_figure(skin)


@pytest.mark.slow
def test_transient_report_answers_first_and_carries_the_cautions(tmp_path):
    ds = read_results(write_results(_dataset(ts.skin_sweep), tmp_path / "results.nc"))
    files = write_report(ds, tmp_path / "report")
    html = files.html.read_text(encoding="utf-8")
    assert html.index('<h2 id="answer">Answer</h2>') < html.index('<h2 id="figures">Figures</h2>')
    assert "Time to second-degree burn: P5" in html and "P(second-degree burn within 30 s)" \
        in html
    assert "scatter widely" in html and "not a substitute for certification" in html
    assert "Dominant layer" in html
    md = files.markdown.read_text(encoding="utf-8")
    assert md.index("## Answer") < md.index("## Cautions") < md.index("## Times to burn")
    assert {p.name for p in files.tables} >= {"event_times.csv", "event_probabilities.csv"}
    assert any(p.name == "burn_probability_sweep.png" for p in files.figures)


@pytest.mark.slow
def test_turnout_demo_runs_end_to_end(tmp_path):
    # the invented demo, at a small sample count: run, dataset, summary, report
    from plyrisk.pipeline.run import run_study, summary_text

    study = load_study(CONFIGS / "turnout_flash.toml")
    result = run_study(study, out_dir=tmp_path, samples=16, quiet=True)
    text = summary_text(result)
    assert text.index("ANSWER") < text.index("CAUTIONS")
    assert "time to second-degree burn: P5" in text and "dominant layer:" in text
    files = write_report(read_results(result.path), tmp_path)
    assert files.html.exists() and files.markdown.exists()
    html = files.html.read_text(encoding="utf-8")
    # what was studied: every uncertain input with its distribution, as written
    assert html.index(">What was studied</h2>") < html.index(">Figures</h2>")
    for text in ("The exposure and the cool-down", "The assembly, exposed side first",
                 "uniform(low 6 s, high 18 s)", "lognormal(median 3 mm, gsd 1.5)",
                 "thermal liner", "jiang_2002"):
        assert text in html
    assert "## What was studied" in files.markdown.read_text(encoding="utf-8")


@pytest.mark.slow
def test_event_tables_show_the_requested_percentiles_only():
    # [study] percentiles (docs/config.md), as the steady percentile table; the band levels 1
    # and 99 % stay in event_times.csv only
    from plyrisk.report.transient import _event_tables

    ds = _dataset(ts.skin_saltelli)
    wanted = [f"P{100 * p:g}" for p in ds.attrs["percentiles"]]
    events, peaks = _event_tables(ds)
    assert events.header == ["event", *wanted, "P(within 30 s)"]
    assert peaks.header == ["output", *wanted]
    fewer = ds.copy()
    fewer.attrs["percentiles"] = [0.05, 0.5]
    assert [t.header[1:3] for t in _event_tables(fewer)] == [["P5", "P50"]] * 2


def test_derived_output_temperatures_are_shown_in_the_display_unit():
    # common practice: temperatures in the unit the study's limit is written in (°C on pages,
    # plyrisk.display), not the kelvin the dataset stores
    import numpy as np
    import xarray as xr

    from plyrisk.report.transient import _rules_table

    def rows(unit):
        ds = xr.Dataset(
            {"peak_basal_temperature": ("sample", np.zeros(2), {"units": "K", "rule": "r"}),
             "second_degree_burn": ("sample", np.zeros(2), {"units": "1", "rule": "r"})},
            coords={"output": ["second_degree_burn", "peak_basal_temperature"]},
            attrs={"limit_display_unit": unit})
        return [r[:2] for r in _rules_table(ds).rows]

    assert rows("degC") == [["second_degree_burn", "1"], ["peak_basal_temperature", "°C"]]
    assert rows("degF")[1] == ["peak_basal_temperature", "°F"]


def test_unresolved_indices_are_flagged_not_shown_as_values():
    from plyrisk.analysis.sobol import RankedIndex
    from plyrisk.text.indices import NOT_RESOLVED
    from plyrisk.text.transient import _status, index_resolved

    def item(total, ci, converged=True):
        return RankedIndex("liner", 0.1, 0.05, total, ci, converged, None, True, converged)

    assert _status(item(0.5, 0.05)) == "ok"
    assert _status(item(0.86, 1.19, converged=False)) == NOT_RESOLVED  # too wide
    assert _status(item(1.4, 0.2)) == NOT_RESOLVED  # above 1 beyond its interval
    assert _status(item(-0.3, 0.1)) == NOT_RESOLVED  # below 0 beyond its interval
    assert index_resolved(1.05, 0.1, True)  # above 1 within its interval: noise
