"""The verdict of a study's criterion: MET, NOT MET or UNDECIDED, per exposure and overall.

The datasets below are hand-made to exercise the decision rule (an interval wholly on one side
of the bound, or straddling it); their numbers are invented inputs, not check values.
"""

from __future__ import annotations

import numpy as np
import pytest
import xarray as xr

from plyrisk.results.verdict import MET, NOT_MET, UNDECIDED, add_verdict, verdict_of

LIMIT = 317.15  # 44 degC in K; Source: the definition of the degree Celsius (0 degC = 273.15 K)


def _steady(est, lo, hi, *, criterion="P95 <= limit", exceed=(0.0, 0.0, 0.01)) -> xr.Dataset:
    n = len(est)
    q = [0.05, 0.5, 0.95]

    def at95(values):
        arr = np.full((n, 3), np.nan)
        arr[:, 2] = values
        return (("scenario", "quantile"), arr)

    return xr.Dataset(
        {"inner_surface_temperature_quantile": at95(est),
         "inner_surface_temperature_quantile_lower": at95(lo),
         "inner_surface_temperature_quantile_upper": at95(hi),
         "exceedance_probability": (("scenario",), np.full(n, exceed[0])),
         "exceedance_probability_lower": (("scenario",), np.full(n, exceed[1])),
         "exceedance_probability_upper": (("scenario",), np.full(n, exceed[2]))},
        coords={"quantile": q, "scenario": np.arange(n, dtype=float),
                "scenario_label": ("scenario", [f"{k} kW/m^2" for k in range(n)])},
        attrs={"criterion": criterion, "limit": LIMIT, "limit_units": "K",
               "limit_display_unit": "degC", "confidence": 0.9,
               "scenario_quantity": "incident_flux"})


def test_interval_below_above_and_across_the_bound():
    ds = _steady([LIMIT - 3, LIMIT + 3, LIMIT - 0.5], [LIMIT - 4, LIMIT + 1, LIMIT - 1],
                 [LIMIT - 1, LIMIT + 5, LIMIT + 1])
    v = verdict_of(ds)
    assert [s.verdict for s in v.scenarios] == [MET, NOT_MET, UNDECIDED]
    assert v.overall == NOT_MET                      # the worst exposure decides
    assert "straddles" in v.scenarios[2].reason
    assert verdict_of(ds.isel(scenario=[0, 2])).overall == UNDECIDED
    assert verdict_of(ds.isel(scenario=[0])).overall == MET


def test_exceedance_criterion_and_an_interval_open_on_one_side():
    ds = _steady([LIMIT - 3], [LIMIT - 4], [LIMIT - 1], criterion="P(exceed) <= 1 %",
                 exceed=(0.004, 0.001, 0.02))
    assert verdict_of(ds).overall == UNDECIDED      # 1 % lies inside [0.1 %, 2 %]
    ds = _steady([LIMIT + 2], [LIMIT + 1], [np.nan])  # no upper bound: the lower one decides
    assert verdict_of(ds).overall == NOT_MET
    ds = _steady([LIMIT - 2], [np.nan], [LIMIT - 1])
    assert verdict_of(ds).overall == MET


def test_a_percentile_the_study_did_not_compute_is_undecided_not_guessed():
    v = verdict_of(_steady([LIMIT - 3], [LIMIT - 4], [LIMIT - 1], criterion="P99 <= limit"))
    assert v.overall == UNDECIDED and "not computed" in v.scenarios[0].reason


def test_add_verdict_records_the_criterion_and_the_verdict():
    ds = add_verdict(_steady([LIMIT - 3, LIMIT + 3], [LIMIT - 4, LIMIT + 1],
                             [LIMIT - 1, LIMIT + 5]), "P95 <= limit", default=True)
    assert ds.attrs["verdict"] == NOT_MET and ds.attrs["criterion"] == "P95 <= limit"
    assert list(ds["verdict"].values) == [MET, NOT_MET]
    assert ds["criterion_bound"].item() == LIMIT
    assert ds["criterion_value"].attrs["units"] == "K"


def _transient(times_lo, times_hi, criterion):
    q = [0.05, 0.5]
    arr = lambda v: (("event", "quantile"), np.array([[v, np.inf]]))  # noqa: E731
    return xr.Dataset(
        {"event_time_quantile": arr(0.5 * (times_lo + times_hi)),
         "event_time_quantile_lower": arr(times_lo), "event_time_quantile_upper": arr(times_hi),
         "event_probability": (("event",), [0.1]),
         "event_probability_lower": (("event",), [0.06]),
         "event_probability_upper": (("event",), [0.2])},
        coords={"quantile": q, "event": ["second_degree_burn"]},
        attrs={"study_kind": "transient", "wearer_kind": "skin", "confidence": 0.9,
               "acceptable_burn_probability": 0.05, **({"criterion": criterion}
                                                        if criterion else {})})


def test_transient_default_criterion_and_a_time_target():
    v = verdict_of(_transient(8.0, 10.0, None))
    assert v.criterion == "P(second_degree_burn) <= 5 %" and v.default
    assert v.overall == NOT_MET                     # [6 %, 20 %] above 5 %
    v = verdict_of(_transient(13.0, np.inf, "P5(time_to_second_degree_burn) >= 12 s"))
    assert v.overall == MET and v.comparison == ">="
    assert v.to_dict()["scenarios"][0]["upper"] == "beyond_horizon"
    assert verdict_of(_transient(8.0, 13.0, "P5(time_to_second_degree_burn) >= 12 s")
                      ).overall == UNDECIDED


def test_morris_gives_no_distribution_so_its_verdict_is_undecided():
    ds = xr.Dataset(attrs={"method": "morris", "confidence": 0.9})
    v = verdict_of(ds)
    assert v.overall == UNDECIDED and "Morris" in v.scenarios[0].reason


@pytest.mark.slow
@pytest.mark.parametrize("fixture", ["steady_run", "transient_run"])
def test_the_verdict_comes_first_with_the_cautions_below(fixture, request):
    run = request.getfixturevalue(fixture)
    assert run.code == 0, run.stderr
    out = run.stdout
    assert out.index("VERDICT:") < out.index("CAUTION:") < out.index("method:")
    md = (run.out / "summary.md").read_text(encoding="utf-8")
    assert md.index("## Verdict") < md.index("**Caution:**") < md.index("## ", md.index(
        "**Caution:**"))
    html = (run.out / "report.html").read_text(encoding="utf-8")
    body = html[html.index("<body>"):]
    assert body.index('class="verdict"') < body.index("cautions compact") < body.index("<h2 ",
                                                                                     body.index(
        "cautions compact"))
    word = next(w for w in (NOT_MET, UNDECIDED, MET) if f"VERDICT: {w}" in out)
    assert f"{word}</strong>" in body[:body.index("cautions compact")]   # the word, not colour
