"""The Design line says what its model runs count and on how many rows the verification ran."""

from __future__ import annotations

from plyrisk.tolerances.allocation import VERIFICATION_SCALE
from plyrisk.tolerances.output import tolerance_text


def test_the_design_line_counts_runs_and_the_verification_rows(linear_time_report):
    study, report = linear_time_report("P5(time_to_second_degree_burn) >= 7 s", samples=64)
    # Source: the rule of the code (VERIFICATION_SCALE = 4): the verification design is four
    # times the search design; the count is every call on the design plus that one run
    assert VERIFICATION_SCALE == 4
    assert report.allocation.verification.samples == 4 * 64
    text = " ".join(tolerance_text(report, study).split())
    assert (f"{report.runs} model runs ({report.runs - 1} over the 64-row design, each with one "
            "set of spreads, + 1 verification run over a new design of 256 rows)") in text
    assert "256 samples" in text.split("Independent verification")[1]
