"""The report's tolerance table carries the tolerance study's own baseline (value and design
size) and a change column, so that a halved value is not read against the study's percentile."""

from __future__ import annotations

from dataclasses import asdict

import pytest

from plyrisk.report.tables import tolerance_tables
from plyrisk.tolerances.output import (
    manufacturing_rows,
    manufacturing_table,
    read_tolerance_csv,
    write_tolerance_csv,
)


def test_the_table_shows_the_tolerance_baseline_and_the_change(linear_time_report, tmp_path):
    study, report = linear_time_report("P5(time_to_second_degree_burn) >= 7 s")
    rows = manufacturing_table(report, study)
    # Source: closed form: t = 1.5e4 x, x uniform on 0.5-1.2 mm: P5(t) = 1.5e4 * 0.535 mm =
    # 8.03 s; halving the spread (x on 0.675-1.025 mm): P5 = 1.5e4 * 0.6925 mm = 10.4 s, beyond
    # the 9 s horizon, so only known to exceed it: the change is a bound, > 9 - 8.03 s
    assert rows[0].quantile_baseline == pytest.approx(8.03, abs=0.05)
    assert rows[0].quantile_if_halved == pytest.approx(9.0)
    assert rows[0].quantile_if_halved_beyond_horizon
    assert rows[0].design_samples == 256
    records, _ = read_tolerance_csv(write_tolerance_csv(rows, tmp_path / "t.csv"))
    assert manufacturing_rows(records)[0].quantile_baseline == pytest.approx(
        rows[0].quantile_baseline, rel=1e-5)
    effect = tolerance_tables(list(records[0]), records)[0]
    assert effect.header[-1] == "Change from the tolerance baseline [s]"
    change = rows[0].quantile_if_halved - rows[0].quantile_baseline
    assert effect.rows[0][-1] == f"> {change:+.3g}"
    assert (f"baseline of the tolerance study: P5 time = {rows[0].quantile_baseline:.3g} s at the "
            "current spreads") in effect.caption
    assert "its own design of 256 samples" in effect.caption


def test_an_older_file_without_the_baseline_has_no_change_column(linear_time_report):
    study, report = linear_time_report("P5(time_to_second_degree_burn) >= 7 s")
    old = [{k: str(v) for k, v in asdict(r).items()
            if k not in ("quantile_baseline", "quantile_baseline_beyond_horizon",
                         "design_samples")} for r in manufacturing_table(report, study)]
    back = manufacturing_rows(old)[0]
    assert back.design_samples == 0 and back.quantile_baseline != back.quantile_baseline
    effect = tolerance_tables(list(old[0]), old)[0]
    assert len(effect.header) == 4 and "baseline" not in effect.caption
