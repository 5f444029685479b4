"""A spread factor at its cap (max_factor, or the widest the physical bounds allow) is marked:
the target holds up to it, and the spec is never presented as a recommendation; the numbers are
kept."""

from __future__ import annotations

import pytest

from plyrisk.tolerances.output import cap_note, manufacturing_table, tolerance_text


def _section(text, start, end):
    return " ".join(text.split(start, 1)[1].split(end, 1)[0].split())


def test_a_factor_at_max_factor_is_marked_not_recommended(linear_time_report):
    # Source: closed form: t = 1.5e4 x, x uniform on 0.85 mm +/- 0.35f mm: P5(t) = 1.5e4 (0.85 -
    # 0.315 f) mm >= 1 s for every f up to 2.49, so with max_factor = 2 the search stops at 2
    study, report = linear_time_report("P5(time_to_second_degree_burn) >= 1 s", max_factor=2.0,
                                       allow_loosening=True)
    a = report.allowable[0]
    assert a.status == "any" and a.factor == pytest.approx(2.0) and not a.bounded
    text = tolerance_text(report, study)
    allowable = _section(text, "Allowable spread", "Allocation")
    assert "2x" in allowable and "max_factor cap" in allowable  # the number is kept, marked
    assert "not a recommended spec" in allowable
    assert "a limit, not a recommendation" in allowable
    # the allocation loosens to the cap: its spec is marked, in the text and the table
    assert report.allocation.factors[0] == pytest.approx(2.0)
    assert "max_factor cap" in _section(text, "Allocation", "Independent verification")
    row = manufacturing_table(report, study)[0]
    assert row.recommended_spec.endswith(f"({cap_note(False)})")


def test_a_factor_at_the_physical_bounds_is_marked(linear_time_report):
    # Source: closed form: the lower end 0.85 - 0.35 f mm reaches zero at f = 2.43 < 2.49, so
    # the physical bounds stop the search below max_factor = 10
    study, report = linear_time_report("P5(time_to_second_degree_burn) >= 1 s")
    a = report.allowable[0]
    assert a.status == "any" and a.bounded and a.factor == pytest.approx(0.85 / 0.35, rel=1e-3)
    allowable = _section(tolerance_text(report, study), "Allowable spread", "Allocation")
    # the table wraps its cells; the words of the mark are there
    assert "bounds allow: the target holds up to it; not a recommended spec" in allowable
