"""Sentences on inputs that matter through their correlated partners
(:func:`plyrisk.text.shapley.through_partners`)."""

from __future__ import annotations

import pytest

from plyrisk.text.shapley import through_partners


def _linear_pair(rho: float) -> tuple[list[float], list[float]]:
    # Source: closed form (Mara, Tarantola & Annoni 2015, doi:10.1016/j.envsoft.2015.07.010,
    # linear Gaussian case): Y = X1 + X2, standard normal inputs with correlation rho. Var(Y) =
    # 2 (1 + rho); the full total index of either input is (1 + rho)^2 / Var(Y) = (1 + rho) / 2,
    # its independent total index E[Var(Y | X_other)] / Var(Y) = (1 - rho^2) / Var(Y)
    # = (1 - rho) / 2.
    return [(1 + rho) / 2] * 2, [(1 - rho) / 2] * 2


@pytest.mark.parametrize("rho,named", [(0.0, 0), (0.2, 0), (0.8, 2), (-0.8, 0)])
def test_inputs_are_named_only_when_their_partners_carry_most_of_their_share(rho, named):
    full, independent = _linear_pair(rho)
    said = through_partners(["x1", "x2"], full, [0.01, 0.01], independent, [0.01, 0.01])
    assert len(said) == named
    if named:
        assert said[0].startswith("x1 matters largely through its correlated partners")
        assert "0.90 ± 0.01" in said[0] and "0.10 ± 0.01" in said[0]


def test_wide_intervals_or_missing_estimates_name_nothing():
    full, independent = _linear_pair(0.8)
    assert through_partners(["x1", "x2"], full, [0.5, 0.5], independent, [0.4, 0.4]) == []
    assert through_partners(["x1"], [float("nan")], [0.01], [0.1], [0.01]) == []
