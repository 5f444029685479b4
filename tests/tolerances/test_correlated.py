"""The tolerance engine with correlated inputs: its common design goes through the copula."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from plyrisk.study.correlations import linear_from_rank
from plyrisk.study.distributions import make_distribution
from plyrisk.tolerances.core import Runner, ToleranceProblem, ToleranceSettings


def problem(rank: float) -> ToleranceProblem:
    dists = [make_distribution("normal", {"mean": 0.0, "sd": 1.0}) for _ in range(3)]
    rho = float(linear_from_rank(rank))
    r = np.eye(3)
    r[0, 1] = r[1, 0] = rho
    return ToleranceProblem(("a", "b", "c"), dists, lambda x: x[:, 0] + x[:, 1], 10.0, (), r)


@pytest.mark.parametrize("rank", [-0.6, 0.0, 0.8])
def test_the_common_design_carries_the_dependence(rank):
    settings = ToleranceSettings(target="P95 <= 3 K", samples=20000, design="random", seed=3)
    run = Runner(problem(rank), settings)
    y = run.output({})[0]
    rho = float(linear_from_rank(rank))
    # Source: the sum of two standard normals of correlation rho is normal with variance
    # 2 + 2 rho (a textbook identity of the bivariate normal, e.g. Anderson 2003, thm 2.4.1).
    assert np.std(y) == pytest.approx(np.sqrt(2 + 2 * rho), rel=0.02)
    assert stats.spearmanr(run.base[:, 0], run.base[:, 1]).statistic == pytest.approx(rank,
                                                                                      abs=0.02)
    # a halved spread of one input keeps the rank correlation (the copula is in the unit cube)
    x = run.inputs({0: make_distribution("normal", {"mean": 0.0, "sd": 0.5})})
    assert stats.spearmanr(x[:, 0], x[:, 1]).statistic == pytest.approx(rank, abs=0.02)
    assert np.array_equal(x[:, 2], run.base[:, 2])
