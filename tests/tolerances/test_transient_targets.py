"""The tolerance engine on transient targets (time to burn, P(burn)), with a closed-form check."""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest

from plyrisk.study.settings import ToleranceSettings
from plyrisk.study.targets import parse_target
from plyrisk.tolerances.study import analyse_tolerances, problem_from_study, settings_for_study
from tests import transient_study as ts

SCALE = 1.5e4
"""Invented response for the engine check: time to burn = SCALE * thickness [s/m]."""


def _linear(study, values):
    t = SCALE * values[:, 0]
    t = np.where(t > study.transient.exposure.horizon, np.inf, t)
    return {"time_to_second_degree_burn": t[None], "converged": np.ones((1, t.size), bool)}


def _study(target: str):
    study = ts.fabric_on_skin("pce", 16, extra_group=False)
    study = replace(study, parameters=study.parameters[:1])  # thickness uniform 0.5-1.2 mm
    return replace(study, tolerances=ToleranceSettings(target=target, samples=1024,
                                                       basis="estimate"))


def test_allowable_spread_of_a_time_target_matches_the_closed_form():
    # Source: closed form for t = c x with x uniform on [m - f h, m + f h] (the spread factor f
    # scales the half-width h about the nominal m): P5(t) = c (m - 0.9 f h), so P5(t) >= 10 s
    # holds for f <= (m - 10 / c) / (0.9 h). Tolerance: the design's quantile noise (1024 LHS
    # samples) and the bisection's step.
    study = _study("P5(time_to_second_degree_burn) >= 10 s")
    settings = settings_for_study(study)
    report = analyse_tolerances(problem_from_study(study, settings.target, evaluate=_linear),
                                settings)
    m, h = 0.85e-3, 0.35e-3
    expected = (m - 10.0 / SCALE) / (0.9 * h)
    assert report.allowable[0].factor == pytest.approx(expected, rel=0.01)
    # the baseline P5 of the time, through the negation: c (m - 0.9 h)
    assert -report.whatif.baseline.quantile[0] == pytest.approx(SCALE * (m - 0.9 * h),
                                                                rel=0.005)


def test_burn_probability_target_is_the_share_burning_within_the_horizon():
    # Source: closed form: P(burn within 30 s) = P(c x < 30 s) = P(x < 2 mm) = 1 for
    # x uniform on 0.5-1.2 mm, and P(t < 9 s) with a 9 s horizon is (0.6 - 0.5) / 0.7.
    study = _study("P(second_degree_burn) <= 5 %")
    study = replace(study, transient=replace(study.transient, exposure=replace(
        study.transient.exposure, horizon=9.0, exposure_duration=6.0)))
    settings = settings_for_study(study)
    problem = problem_from_study(study, settings.target, evaluate=_linear)
    assert problem.limit == -9.0
    report = analyse_tolerances(problem, settings)
    assert report.whatif.baseline.exceedance[0] == pytest.approx(0.1 / 0.7, abs=0.01)


def test_transient_problems_refuse_targets_of_the_wrong_kind():
    study = _study("P5(time_to_second_degree_burn) >= 40 s")
    with pytest.raises(ValueError, match="not below the horizon"):  # before any model run
        settings_for_study(study)
    target = parse_target("P5(time_to_second_degree_burn) >= 40 s")
    with pytest.raises(ValueError, match="not below the horizon"):
        problem_from_study(study, target, evaluate=_linear)
    with pytest.raises(ValueError, match="transient study takes"):
        problem_from_study(study, replace(target, output="inner_surface_temperature"),
                           evaluate=_linear)
    with pytest.raises(ValueError, match="transient study takes"):
        settings_for_study(study, target="P95 <= 44 degC")


def test_default_target_of_a_transient_study_is_its_acceptable_burn_probability():
    study = replace(_study("P95 <= limit"), tolerances=None)
    settings = settings_for_study(study)
    assert settings.target.text == "P(second_degree_burn) <= 5 %"
