"""The [correlations] section: reading, the rank-to-linear conversion, the opt-in repair."""

from __future__ import annotations

import numpy as np
import pytest

from plyrisk.study.config import ConfigError, loads_study, override
from plyrisk.study.correlations import (
    linear_from_rank,
    nearest_correlation,
    rank_from_linear,
)

BASE = """
[study]
title = "Invented test study: correlated inputs"
method = "shapley"
samples = 64
seed = 1
limit = "44 degC"

[hot_side]
kind = "environment"
incident_flux = "2 kW/m^2"
gas_temperature = "40 degC"
convection_coefficient = "10 W/m^2/K"

[[layer]]
name = "shell"
kind = "solid"
thickness = { nominal = "0.5 mm", tolerance = "0.05 mm" }
conductivity = { uniform = ["0.04 W/m/K", "0.06 W/m/K"] }
emissivity = { uniform = [0.8, 0.95] }

[[layer]]
name = "gap"
kind = "gap"
width = { lognormal = { median = "2 mm", gsd = 1.3 } }

[[layer]]
name = "liner"
kind = "solid"
thickness = "1 mm"
conductivity = "0.04 W/m/K"

[[layer]]
name = "skin gap"
kind = "gap"
width = { lognormal = { median = "2 mm", gsd = 1.3 } }

[cold_side]
kind = "surface"
temperature = "34 degC"

[correlations]
"""


def load(section: str, base: str = BASE):
    return loads_study(base + section, source="test.toml")


def test_rank_to_linear_round_trip():
    # Source: Kruskal 1958, J. Am. Stat. Assoc. 53, 814-861 (rho_s = 6/pi asin(rho/2) for a
    # bivariate normal pair); rho_s = 1 gives rho = 2 sin(pi/6) = 1 exactly.
    assert float(linear_from_rank(1.0)) == pytest.approx(1.0, abs=1e-15)
    rs = np.linspace(-0.95, 0.95, 39)
    assert np.allclose(rank_from_linear(linear_from_rank(rs)), rs, atol=1e-14)
    # the linear correlation is slightly larger in size than the rank one
    assert np.all(np.abs(linear_from_rank(rs[rs != 0])) > np.abs(rs[rs != 0]))


def test_pairs_and_matrix_are_merged_in_parameter_order():
    study = load('pairs = [["skin gap.width", "gap.width", 0.6]]\n'
                 'parameters = ["shell.conductivity", "shell.thickness"]\n'
                 'matrix = [[1.0, -0.3], [-0.3, 1.0]]\n')
    c = study.correlations
    assert c.names == ("shell.thickness", "shell.conductivity", "gap.width", "skin gap.width")
    assert c.rank[0, 1] == c.rank[1, 0] == -0.3
    assert c.rank[2, 3] == 0.6
    assert c.linear[2, 3] == pytest.approx(2 * np.sin(np.pi * 0.6 / 6))
    full = c.full_linear(study.parameter_names)
    assert full.shape == (5, 5)
    j = study.parameter_names.index("shell.emissivity")
    assert full[j, j] == 1.0 and np.count_nonzero(full[j]) == 1
    assert not c.is_independent
    assert c.pairs()[0] == ("shell.thickness", "shell.conductivity", -0.3)


def test_emissivity_of_both_faces_is_one_parameter():
    study = load('pairs = [["shell.emissivity", "shell.thickness", 0.2]]\n')
    assert study.correlations.names == ("shell.thickness", "shell.emissivity")


def test_all_zero_is_accepted_and_independent():
    c = load('pairs = [["gap.width", "skin gap.width", 0.0]]\n').correlations
    assert c.is_independent


INCONSISTENT = ('pairs = [["gap.width", "skin gap.width", 0.9], '
                '["gap.width", "shell.thickness", 0.9], '
                '["skin gap.width", "shell.thickness", -0.9]]\n')


def test_inconsistent_matrix_is_refused_naming_the_smallest_eigenvalue():
    with pytest.raises(ConfigError, match=r"smallest eigenvalue -0\.\d+.*repair = \"nearest\""):
        load(INCONSISTENT)


def test_repair_is_opt_in_and_reported():
    c = load(INCONSISTENT + 'repair = "nearest"\n').correlations
    assert np.linalg.eigvalsh(c.linear).min() > 0
    assert np.allclose(np.diag(c.linear), 1.0)
    assert np.allclose(c.linear, c.linear.T)
    assert "largest change" in c.repair_note and "->" in c.repair_note
    assert np.allclose(c.rank, rank_from_linear(c.linear) + np.eye(3) - np.diag(
        np.diag(rank_from_linear(c.linear))))


def test_nearest_correlation_keeps_a_valid_matrix():
    r = np.array([[1.0, 0.3], [0.3, 1.0]])
    assert np.allclose(nearest_correlation(r), r, atol=1e-12)


def test_nearest_correlation_of_a_known_case():
    # Source: Higham 2002, IMA J. Numer. Anal. 22, 329-343, sec. 4 (from memory): the nearest
    # correlation matrix to [[1,1,0],[1,1,1],[0,1,1]] has off-diagonals 0.7607 and 0.1573.
    a = np.array([[1.0, 1.0, 0.0], [1.0, 1.0, 1.0], [0.0, 1.0, 1.0]])
    x = nearest_correlation(a, floor=0.0, iterations=2000)
    assert x[0, 1] == pytest.approx(0.7607, abs=2e-4)
    assert x[0, 2] == pytest.approx(0.1573, abs=2e-4)


def test_nearest_correlation_against_an_independent_minimisation():
    # Source: the definition (Higham 2002, eq. 1.1): the correlation matrix nearest in the
    # Frobenius norm. Independent check: minimise ||V V^T - A||_F over factors V with unit rows
    # (every such V V^T is a correlation matrix) with scipy's BFGS from several starts.
    from scipy.optimize import minimize

    a = np.array([[1.0, 1.0, 0.0], [1.0, 1.0, 1.0], [0.0, 1.0, 1.0]])

    def corr(v):
        f = v.reshape(3, 3)
        f = f / np.linalg.norm(f, axis=1, keepdims=True)
        return f @ f.T

    best = min((minimize(lambda v: np.sum((corr(v) - a) ** 2),
                         np.random.default_rng(seed).normal(size=9), method="BFGS",
                         options={"gtol": 1e-10}) for seed in range(6)), key=lambda r: r.fun)
    x = nearest_correlation(a, floor=0.0, iterations=2000)
    assert np.allclose(x, corr(best.x), atol=2e-4)


def test_other_methods_are_refused_on_the_command_line_too():
    study = load('pairs = [["gap.width", "skin gap.width", 0.5]]\n')
    with pytest.raises(ValueError, match=r"--method saltelli: the config has a \[correlations\]"):
        override(study, method="saltelli")
    assert override(study, samples=128).analysis.samples == 128


def test_shapley_keys():
    study = load('pairs = [["gap.width", "skin gap.width", 0.5]]\n').analysis
    assert study.method == "shapley" and study.design == "lhs" and study.permutations == 0
    text = BASE.replace("seed = 1\n", 'seed = 1\npermutations = 32\ndesign = "random"\n')
    a = load('pairs = [["gap.width", "skin gap.width", 0.5]]\n', base=text).analysis
    assert a.permutations == 32 and a.design == "random"
    with pytest.raises(ConfigError, match=r"study\.permutations: applies only to method = "
                       r"'shapley', not 'saltelli'"):
        loads_study(text.replace('"shapley"', '"saltelli"').replace(
            'design = "random"\n', "").replace("[correlations]\n", ""), source="t.toml")
