"""A tolerance target met while the study stays unacceptable says so: a time target judges only
that time, not P(burn), and a target other than the study's criterion does not decide its
verdict (terminal text, advice lines of the report and tolerances.csv)."""

from __future__ import annotations

import pytest

from plyrisk.tolerances.output import acceptance_note, tolerance_advice, tolerance_text


@pytest.fixture(scope="module")
def time_target(linear_time_report):
    return linear_time_report("P5(time_to_second_degree_burn) >= 7 s")


def test_a_met_time_target_with_a_high_burn_probability_says_so(time_target):
    study, report = time_target
    # Source: closed form: t = 1.5e4 x with x uniform on 0.5-1.2 mm: P5(t) = 1.5e4 * 0.535 mm
    # = 8.0 s >= 7 s (met), while P(t <= 9 s) = P(x <= 0.6 mm) = 0.1 / 0.7 = 14.3 % > 5 %
    assert report.whatif.baseline.met
    p = report.whatif.baseline.worst_exceedance
    assert p == pytest.approx(0.1 / 0.7, abs=0.01)
    note = acceptance_note(report, study)
    assert "judges only 'P5(time_to_second_degree_burn) >= 7 s'" in note
    assert "stays above the acceptable 5 %" in note
    assert "tolerances alone do not make the study acceptable" in note
    text = " ".join(tolerance_text(report, study).split())
    assert text.count("tolerances alone do not make the study acceptable") == 2  # baseline,
    # and beside the verification
    advice = tolerance_advice(report, study)
    assert any("tolerances alone do not make the study acceptable" in a for a in advice)
    # the study's own probability is quoted when given (the report of plyrisk run)
    own = tolerance_advice(report, study, probability=0.204)
    assert any("= 20.4 % (the study's run)" in a for a in own)


def test_an_acceptable_probability_gives_no_burn_note_but_names_the_criterion(time_target):
    study, report = time_target
    note = acceptance_note(report, study, probability=0.01)
    assert "stays above" not in note
    # Source: the study's default criterion, P(second_degree_burn) <= 5 %, is not this target
    assert "is not the study's criterion 'P(second_degree_burn) <= 5 %'" in note


def test_the_criterion_itself_as_target_needs_no_note(linear_time_report):
    study, report = linear_time_report("P(second_degree_burn) <= 5 %")
    assert acceptance_note(report, study) == ""
    assert not any(a.startswith("note:") for a in tolerance_advice(report, study))


def test_a_steady_target_other_than_the_criterion_says_it_does_not_decide_the_verdict(
        small_demo):
    from plyrisk.tolerances.study import run_tolerances

    # Source: the default criterion of a steady study, P95 <= limit (plyrisk.study.targets)
    report = run_tolerances(small_demo, target="P90 <= limit", samples=64)
    note = acceptance_note(report, small_demo)
    assert "'P90 <= limit' is not the study's criterion 'P95 <= limit'" in note
    same = run_tolerances(small_demo, target="P95 <= limit", samples=64)
    assert acceptance_note(same, small_demo) == ""
