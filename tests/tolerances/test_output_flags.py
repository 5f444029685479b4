"""Tolerance tables flag what is not a plain number: a time only known to lie beyond the
horizon (``> 9 s``) and a variance share estimated outside [0, 100 %] (estimation noise) — in
the terminal text, the CSV file and the report's tables (HTML and summary.md)."""

from __future__ import annotations

from dataclasses import asdict, replace

import numpy as np
import pytest

from plyrisk.report.tables import share_text as report_share_text
from plyrisk.report.tables import tolerance_tables
from plyrisk.study.settings import ToleranceSettings
from plyrisk.tolerances.output import (
    manufacturing_rows,
    manufacturing_table,
    read_tolerance_csv,
    share_resolved,
    share_text,
    tolerance_text,
    write_tolerance_csv,
)
from plyrisk.tolerances.study import analyse_tolerances, problem_from_study, settings_for_study
from tests import transient_study as ts
from tests.tolerances.conftest import LINEAR_HORIZON, linear_time

HORIZON = LINEAR_HORIZON
"""Invented horizon [s]: most samples reach no burn within it."""


@pytest.fixture(scope="module")
def censored():
    """A P50 time target whose percentile lies beyond the horizon."""
    study = ts.fabric_on_skin("pce", 16, extra_group=False)
    study = replace(study, parameters=study.parameters[:1], transient=replace(
        study.transient, exposure=replace(study.transient.exposure, horizon=HORIZON,
                                          exposure_duration=6.0)))
    study = replace(study, tolerances=ToleranceSettings(
        target="P50(time_to_second_degree_burn) >= 8 s", samples=256, basis="estimate"))
    settings = settings_for_study(study)
    report = analyse_tolerances(problem_from_study(study, settings.target, evaluate=linear_time),
                                settings)
    return study, report


def test_a_percentile_beyond_the_horizon_is_printed_as_a_bound(censored, tmp_path):
    study, report = censored
    # Source: closed form: P(t > 9 s) = P(x > 0.6 mm) = 0.6 / 0.7 = 0.86 > 0.5 for x uniform on
    # 0.5-1.2 mm, so the median time lies beyond the 9 s horizon, and with the spread halved
    # (x on 0.675-1.025 mm, t >= 10.1 s) every time does.
    assert -report.whatif.baseline.quantile[0] == pytest.approx(HORIZON)
    text = tolerance_text(report, study)
    assert "P50 time = > 9 s [> 9 s, > 9 s]" in text
    assert " 9 s " not in text.replace("> 9 s", "")  # never the bare horizon as a time
    rows = manufacturing_table(report, study)
    assert rows[0].quantile_if_halved == pytest.approx(HORIZON)
    assert rows[0].quantile_if_halved_beyond_horizon
    assert "> 9 s" in text.split("For manufacturing")[1]
    assert "only known to lie beyond" in text
    path = write_tolerance_csv(rows, tmp_path / "tolerances.csv")
    records, _ = read_tolerance_csv(path)
    assert records[0]["quantile_if_halved"] == "9"  # the CSV keeps the number ...
    assert records[0]["quantile_if_halved_beyond_horizon"] == "true"  # ... and the flag
    back = manufacturing_rows(records)[0]
    assert back.quantile_if_halved_beyond_horizon and back.variance_share_resolved
    effect = tolerance_tables(list(records[0]), records)[0]
    assert effect.rows[0][3] == "> 9"  # in the HTML and summary.md tables
    assert "only known to lie beyond the horizon" in effect.caption


def test_a_share_outside_0_to_100_percent_is_flagged_not_printed_plainly(censored, tmp_path):
    study, report = censored
    # 1.32: the estimate seen at 64 samples; a share is a fraction in [0, 1] (closed form:
    # Var(Y - Y0) / Var(Y) of an additive model), so anything outside is estimation noise
    row = replace(report.whatif.rows[0], variance_share=1.32)
    noisy = replace(report, whatif=replace(report.whatif, rows=(row,)))
    text = " ".join(tolerance_text(noisy, study).split())  # table cells may wrap
    assert "132 %" not in text.replace("not resolved (132 %)", "")
    whatif, manufacturing = text.split("For manufacturing")
    assert "not resolved (132 %)" in whatif
    assert "not resolved" in manufacturing and "(132" in manufacturing  # a narrower column
    assert "estimation noise" in text
    rows = manufacturing_table(noisy, study)
    assert rows[0].variance_share == 1.32 and not rows[0].variance_share_resolved
    records, _ = read_tolerance_csv(write_tolerance_csv(rows, tmp_path / "t.csv"))
    assert records[0]["variance_share"] == "1.32"
    assert records[0]["variance_share_resolved"] == "false"
    effect = tolerance_tables(list(asdict(rows[0])), [asdict(rows[0])])[0]
    assert effect.rows[0][2] == "not resolved (132 %)"
    assert "estimation noise" in effect.caption


@pytest.mark.parametrize(("share", "resolved", "shown"), [
    (0.0, True, "0 %"), (1.0, True, "100 %"), (0.25, True, "25 %"),
    (1.32, False, "not resolved (132 %)"), (-0.04, False, "not resolved (-4 %)"),
    (float("nan"), False, "n/a")])
def test_share_rule(share, resolved, shown):
    # Source: the definition: a share of the variance lies in [0, 1]
    assert share_resolved(share) is resolved
    assert share_text(share) == shown
    if np.isfinite(share) and not resolved:
        assert report_share_text(share) == shown


def test_an_older_csv_without_the_flag_columns_still_reads(censored, tmp_path):
    study, report = censored
    rows = manufacturing_table(report, study)
    records, _ = read_tolerance_csv(write_tolerance_csv(rows, tmp_path / "t.csv"))
    old = [{k: v for k, v in r.items() if k not in ("quantile_if_halved_beyond_horizon",
                                                    "variance_share_resolved")}
           for r in records]
    back = manufacturing_rows(old)
    assert not back[0].quantile_if_halved_beyond_horizon
    with pytest.raises(ValueError, match="expected true or false"):
        manufacturing_rows([{**records[0], "variance_share_resolved": "maybe"}])
