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
    # at 16 base samples too few samples burn for any index: each output says so in one
    # plain line with the run's own counts, instead of rows of nan
    ds = read_results(result.path).isel(scenario=0)
    k = int(ds["event_count"].sel(event="second_degree_burn"))
    n, h = int(ds["samples_used"]), float(ds.attrs["horizon"])
    flat = " ".join(text.split())
    assert "nan" not in text.split()
    for o in ("capped_time_to_second_degree_burn", "second_degree_burn"):
        assert (f"no index for {o}: a second-degree burn within {h:g} s in only {k} of {n} "
                "samples, too few at this sample size; raise [study] samples") in flat
    files = write_report(read_results(result.path), tmp_path)
    assert files.html.exists() and files.markdown.exists()
    md = files.markdown.read_text(encoding="utf-8")
    assert f"no index for second_degree_burn: a second-degree burn within {h:g} s in only " \
           f"{k} of {n} samples" in md
    assert "the same in every converged sample" not in md
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


def test_no_index_line_says_how_few_samples_reach_the_event():
    # closed form: the counts are passed in; the line names the minority side
    from plyrisk.text.transient import no_index_line

    assert no_index_line("second_degree_burn", wearer_kind="skin", horizon=60.0, count=7,
                         n=64) == ("no index for second_degree_burn: a second-degree burn "
                                   "within 60 s in only 7 of 64 samples, too few at this "
                                   "sample size; raise [study] samples")
    assert "in all but 3 of 64 samples" in no_index_line(
        "capped_time_to_second_degree_burn", wearer_kind="skin", horizon=60.0, count=61, n=64)
    assert "the sensor reaching its second-degree criterion within 20 s in only 1 of 48" in \
        no_index_line("sensor_criterion_reached", wearer_kind="sensor", horizon=20.0, count=1,
                      n=48)
    assert "it varies in too few samples" in no_index_line(
        "peak_basal_temperature", wearer_kind="skin", horizon=60.0, count=None, n=64)


@pytest.mark.slow
def test_undefined_indices_in_the_report_say_why_constant_ones_say_so():
    import numpy as np

    from plyrisk.report.transient import _dominant, _ranking_tables

    ds = _dataset(ts.skin_saltelli).copy(deep=True)
    one = ds.isel(scenario=0)
    o = str(ds["output"].values[0])
    k = int(one["event_count"].sel(event="second_degree_burn"))
    n = int(one["samples_used"])
    for v in ("sobol_total", "sobol_total_ci", "sobol_first", "sobol_first_ci",
              "sobol_group_total", "sobol_group_total_ci"):
        ds[v].loc[{"output": o}] = np.nan
    rows = _ranking_tables(ds)[0].rows
    assert len(rows) == 1 and rows[0][-1].startswith(f"no index for {o}: ")
    assert f" of {n} samples" in rows[0][-1] and (f"only {k} " in rows[0][-1]
                                                  or f"all but {n - k} " in rows[0][-1])
    assert _dominant(ds.isel(scenario=0)).startswith(f"dominant layer: not determined (no "
                                                     f"index for {o}: ")
    ds[o][...] = 30.0  # the same in every sample: said as such
    assert "same in every converged sample" in _ranking_tables(ds)[0].rows[0][-1]


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
