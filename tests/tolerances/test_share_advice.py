"""A share that is not resolved points to the samples that resolve it (the tolerance design for
shares held at nominal, the study's samples and permutations for Shapley effects), and an effect
just below zero whose interval reaches zero reads as 0, as in the study's rankings."""

from __future__ import annotations

import math
from dataclasses import asdict, replace

import pytest

from plyrisk.report.tables import tolerance_tables
from plyrisk.tolerances.output import (
    manufacturing_rows,
    manufacturing_table,
    read_tolerance_csv,
    share_resolved,
    share_text,
    write_tolerance_csv,
)


@pytest.mark.parametrize(("share", "ci", "resolved", "shown"), [
    (-0.0133, 0.121, True, "0 within its interval (-1.33 % ± 12.1 %)"),
    (1.02, 0.05, True, "100 % within its interval (102 % ± 5 %)"),
    (-0.3, 0.1, False, "not resolved (-30 %)"),
    (-0.013, math.nan, False, "not resolved (-1.3 %)"),
    (0.12, 0.1, True, "12 %")])
def test_an_interval_reaching_into_0_to_100_percent_is_read_as_its_nearer_end(share, ci,
                                                                            resolved, shown):
    # Source: the definition: a share of the variance lies in [0, 1]; an estimate whose
    # interval reaches into [0, 1] is consistent with a share at the nearer end
    assert share_resolved(share, ci) is resolved
    assert share_text(share, ci) == shown


def _shapley_rows(linear_time_report, shares):
    study, report = linear_time_report("P5(time_to_second_degree_burn) >= 7 s")
    name = study.parameters[0].name
    rows = manufacturing_table(report, study, indices={name: shares[0]},
                               index_name="Shapley effect", index_ci={name: shares[1]})
    return rows


def test_a_shapley_share_reads_as_0_within_its_interval(linear_time_report, tmp_path):
    rows = _shapley_rows(linear_time_report, (-0.0133, 0.121))
    assert rows[0].variance_share_resolved and rows[0].variance_share_ci == 0.121
    records, _ = read_tolerance_csv(write_tolerance_csv(rows, tmp_path / "t.csv"))
    assert manufacturing_rows(records)[0].variance_share_ci == pytest.approx(0.121)
    effect = tolerance_tables(list(records[0]), records)[0]
    assert effect.rows[0][2] == "0 within its interval (-1.33 % ± 12.1 %)"
    assert "not resolved" not in effect.caption and "read as 0" in effect.caption


def test_an_unresolved_shapley_share_points_to_the_study_samples(linear_time_report):
    rows = _shapley_rows(linear_time_report, (-0.3, 0.1))
    assert not rows[0].variance_share_resolved
    effect = tolerance_tables(list(asdict(rows[0])), [asdict(rows[0])])[0]
    assert "raise [study] samples and permutations" in effect.caption
    assert "[tolerances] samples" not in effect.caption
    held = replace(rows[0], share_source="held at nominal (CRN)")
    effect = tolerance_tables(list(asdict(held)), [asdict(held)])[0]
    assert "raise [tolerances] samples" in effect.caption
