"""Shared fixtures of the tolerance tests."""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest

from plyrisk.study.settings import ToleranceSettings
from plyrisk.tolerances.study import analyse_tolerances, problem_from_study, settings_for_study
from tests import transient_study as ts

LINEAR_SCALE = 1.5e4
"""Invented response: time to burn = LINEAR_SCALE * fabric thickness [s/m]; the thickness is
uniform on 0.5-1.2 mm."""

LINEAR_HORIZON = 9.0
"""Invented horizon [s]."""


def linear_time(study, values):
    """The invented response of LINEAR_SCALE, censored at the study's horizon."""
    t = LINEAR_SCALE * values[:, 0]
    t = np.where(t > study.transient.exposure.horizon, np.inf, t)
    return {"time_to_second_degree_burn": t[None], "converged": np.ones((1, t.size), bool)}


@pytest.fixture(scope="module")
def linear_time_report():
    """``make(target, **settings) -> (study, report)``: tolerances of the invented linear time
    to burn (one fabric thickness, horizon 9 s, 256 samples, basis "estimate")."""
    def make(target, **settings):
        study = ts.fabric_on_skin("pce", 16, extra_group=False)
        study = replace(study, parameters=study.parameters[:1], transient=replace(
            study.transient, exposure=replace(study.transient.exposure,
                                              horizon=LINEAR_HORIZON, exposure_duration=6.0)))
        options = {"samples": 256, "basis": "estimate", **settings}
        study = replace(study, tolerances=ToleranceSettings(target=target, **options))
        resolved = settings_for_study(study)
        return study, analyse_tolerances(
            problem_from_study(study, resolved.target, evaluate=linear_time), resolved)
    return make
