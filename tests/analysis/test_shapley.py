"""Shapley effects against closed forms: a linear model of Gaussian inputs (correlated and
not), an additive model with independent inputs, and the steady network itself (the exposed
face of an all-solid stack under a prescribed flux is linear in the thicknesses)."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import special

from plyrisk.analysis.shapley import (
    linear_gaussian_indices,
    linear_gaussian_shapley,
    rosenblatt_indices,
    shapley_effects,
)
from plyrisk.design.copula import rosenblatt_rows, shapley_permutations, shapley_rows
from plyrisk.design.sampling import random_design


def estimate(model, linear: np.ndarray, *, n: int, m: int, seed: int, confidence: float = 0.9,
             groups=None, group_names=(), blocks: bool = True):
    """Run the estimator on a model of the normal scores."""
    d = linear.shape[0]
    lower = np.linalg.cholesky(linear)
    joint = np.clip(special.ndtr(special.ndtri(random_design(n, d, seed=seed).unit) @ lower.T),
                    1e-16, 1 - 1e-16)
    rows = shapley_rows(joint, linear, permutations=m, seed=seed)
    rows = np.vstack([rows, rosenblatt_rows(joint, linear, seed=seed)])
    y = model(special.ndtri(rows))
    stop = n + m * (d - 1) * 3
    return shapley_effects(y[:n], y[n:stop], shapley_permutations(m, d, seed=seed),
                           names=[f"x{i}" for i in range(d)], confidence=confidence,
                           groups=groups, group_names=group_names, seed=seed,
                           y_rosenblatt=y[stop:] if blocks else None)


def test_closed_form_of_the_three_input_linear_model():
    # Source: Iooss & Prieur 2019, doi:10.1615/Int.J.UncertaintyQuantification.2019028372,
    # sec. 3.1 (from memory): Y = X1 + X2 + X3, X1 independent, corr(X2, X3) = rho:
    # Sh1 = s1^2 / V, Sh2 = [s2^2 (1 - rho^2/2) + rho s2 s3 + rho^2 s3^2 / 2] / V, Sh3 likewise,
    # V = s1^2 + s2^2 + s3^2 + 2 rho s2 s3.
    s1, s2, s3, rho = 1.0, 2.0, 0.5, 0.6
    cov = np.array([[s1**2, 0, 0], [0, s2**2, rho * s2 * s3], [0, rho * s2 * s3, s3**2]])
    v = s1**2 + s2**2 + s3**2 + 2 * rho * s2 * s3
    expected = np.array([s1**2,
                         s2**2 * (1 - rho**2 / 2) + rho * s2 * s3 + rho**2 * s3**2 / 2,
                         s3**2 * (1 - rho**2 / 2) + rho * s2 * s3 + rho**2 * s2**2 / 2]) / v
    assert np.allclose(linear_gaussian_shapley([1, 1, 1], cov), expected, atol=1e-12)


def test_independent_gaussian_linear_model_has_variance_shares():
    # Source: Owen & Prieur 2017, doi:10.1137/16M1097717: with independent inputs the Shapley
    # effect of a linear model is b_i^2 s_i^2 / sum_j b_j^2 s_j^2.
    b, s = np.array([1.0, -2.0, 0.5, 3.0]), np.array([1.0, 0.5, 2.0, 0.2])
    assert np.allclose(linear_gaussian_shapley(b, np.diag(s**2)), b**2 * s**2 / np.sum(
        b**2 * s**2))


@pytest.mark.slow
def test_estimates_of_a_correlated_linear_model():
    b = np.array([1.0, 1.0, 1.0, 0.0, 2.0])   # x3 has no effect of its own
    s = np.array([1.0, 1.5, 0.5, 1.0, 0.5])
    r = np.eye(5)
    r[1, 2] = r[2, 1] = 0.7
    r[3, 0] = r[0, 3] = -0.5                  # ... but is correlated with x0
    r[1, 4] = r[4, 1] = 0.3
    exact = linear_gaussian_shapley(b, r * np.outer(s, s))
    sh, grp = estimate(lambda z: (z * s) @ b, r, n=20_000, m=12_000, seed=7, confidence=0.99,
                       groups=[(0, 3), (1, 2), (4,)], group_names=["a", "b", "c"])
    assert sh.effect.sum() == pytest.approx(1.0, abs=1e-12)
    assert np.all(np.abs(sh.effect - exact) <= sh.effect_ci)
    assert np.max(np.abs(sh.effect - exact)) < 0.02
    assert exact[3] > 0.01                    # the correlated, inactive input gets a share
    assert np.allclose(grp.effect, [sh.effect[0] + sh.effect[3], sh.effect[1] + sh.effect[2],
                                    sh.effect[4]])


def test_additive_model_with_independent_inputs_gives_first_order_shares():
    # Source: Ishigami & Homma 1990 (Proc. ISUMA '90, 398-403); partial variances as in Sobol'
    # & Levitan 1999, Comput. Phys. Commun. 117, 52-61: for sin X1 + a sin^2 X2 (b = 0, X_i
    # uniform on (-pi, pi)) V1 = 1/2, V2 = a^2/8, no interaction; an additive model's Shapley
    # effects are its first-order Sobol indices (Owen 2014, doi:10.1137/130936233).
    a = 7.0
    first_order = np.array([0.5, a**2 / 8, 0.0]) / (0.5 + a**2 / 8)

    def model(z):
        x = (2 * special.ndtr(z) - 1) * np.pi
        return np.sin(x[:, 0]) + a * np.sin(x[:, 1]) ** 2 + 0.0 * x[:, 2]

    sh, _ = estimate(model, np.eye(3), n=20_000, m=6000, seed=3, confidence=0.99)
    assert np.all(np.abs(sh.effect - first_order) <= sh.effect_ci + 1e-12)
    assert np.max(np.abs(sh.effect - first_order)) < 0.02


def test_dropped_permutations_and_constant_output():
    r = np.eye(2)
    joint = random_design(64, 2, seed=1).unit
    rows = shapley_rows(joint, r, permutations=50, seed=1)
    y = special.ndtri(rows) @ np.array([1.0, 1.0])
    y[64 + 3] = np.nan                                   # permutation 1's conditional draw
    sh, _ = shapley_effects(y[:64], y[64:], shapley_permutations(50, 2, seed=1),
                            names=["a", "b"])
    assert sh.permutations_dropped == 1 and sh.permutations_used == 49
    flat, _ = shapley_effects(np.ones(64), np.ones(150), shapley_permutations(50, 2, seed=1),
                              names=["a", "b"])
    assert flat.constant_output and np.all(np.isnan(flat.effect))


STACK = """
[study]
title = "Invented test study: three solids under a prescribed flux"
method = "shapley"
samples = 4096
permutations = 12000
seed = 11
limit = "44 degC"
design = "random"
outputs = ["exposed face"]

[hot_side]
kind = "flux"
heat_flux = "2 kW/m^2"

[[layer]]
name = "shell"
kind = "solid"
thickness = { normal = { mean = "0.6 mm", sd = "0.06 mm" } }
conductivity = "0.08 W/m/K"

[[layer]]
name = "batt"
kind = "solid"
thickness = { normal = { mean = "3 mm", sd = "0.3 mm" } }
conductivity = "0.04 W/m/K"

[[layer]]
name = "liner"
kind = "solid"
thickness = { normal = { mean = "1 mm", sd = "0.15 mm" } }
conductivity = "0.05 W/m/K"

[cold_side]
kind = "temperature"
temperature = "34 degC"

[correlations]
pairs = [["shell.thickness", "batt.thickness", 0.5], ["batt.thickness", "liner.thickness", -0.4]]
"""


@pytest.mark.slow
def test_exposed_face_of_a_solid_stack_end_to_end():
    from plyrisk.methods import get_method
    from plyrisk.models.network import solve_network
    from plyrisk.propagate.evaluate import model_objects, propagate
    from plyrisk.study.config import loads_study

    study = loads_study(STACK, source="stack.toml")
    q, k = 2000.0, np.array([0.08, 0.04, 0.05])
    # Source: Carslaw & Jaeger 1959, Conduction of Heat in Solids, sec. 1.6 (steady conduction
    # through a composite wall): T_exposed = T_cold + q sum(t_i / k_i) — linear in thicknesses.
    t = np.array([[0.6e-3, 3e-3, 1e-3], [0.5e-3, 3.4e-3, 0.8e-3]])
    layers, hot, cold = model_objects(study, t)
    sol = solve_network(layers, hot, cold, **study.model.solver_kwargs())
    face = list(sol.interface_names).index("exposed face")
    assert np.allclose(sol.interface_temperature[:, face] - 307.15, q * (t / k).sum(axis=1),
                       rtol=1e-9)
    prop = propagate(study, quiet=True)
    sc = get_method("shapley").analyse(study, prop).scenarios[0]
    sh, grp = sc.shapley["exposed face"]
    # normal scores of normal marginals: Pearson correlation 2 sin(pi rho_s / 6)
    sd = np.array([0.06e-3, 0.3e-3, 0.15e-3])
    r = study.correlations.full_linear(study.parameter_names)
    exact = linear_gaussian_shapley(q / k, r * np.outer(sd, sd))
    assert np.all(np.abs(sh.effect - exact) <= sh.effect_ci)
    assert np.max(np.abs(sh.effect - exact)) < 0.02
    # the four indices of dependent inputs (Mara, Tarantola & Annoni 2015,
    # doi:10.1016/j.envsoft.2015.07.010; closed forms of linear_gaussian_indices). N = 4096
    # rows give a standard error near 0.015 for the first-order estimator: within twice the
    # 90 % half-width (about 3.3 standard errors); the 0.02 checks are the tests above.
    idx = linear_gaussian_indices(q / k, r * np.outer(sd, sd))
    for attr in ("full_first", "independent_first", "full_total", "independent_total"):
        est, ci = getattr(sh, attr), getattr(sh, f"{attr}_ci")
        assert np.all(np.abs(est - getattr(idx, attr)) <= 2.0 * ci + 1e-3), attr
    assert np.allclose(grp.effect, sh.effect)          # one parameter per layer
    assert sc.group_ranking["exposed face"][0].name == "batt"
    # the inner surface is held by the cold side: no variance, no effects
    assert sc.shapley["inner_surface_temperature"][0].constant_output


def test_closed_forms_of_the_four_indices_of_a_linear_gaussian_model():
    # Source: Mara, Tarantola & Annoni 2015, doi:10.1016/j.envsoft.2015.07.010, and Iooss &
    # Prieur 2019, doi:10.1615/Int.J.UncertaintyQuantification.2019028372 (linear model of
    # Gaussian inputs): S_i^full = ST_i^full = (S b)_i^2 / (S_ii V) and
    # S_i^ind = ST_i^ind = b_i^2 / ((S^-1)_ii V), V = b^T S b.
    b = np.array([1.0, -1.0, 2.0])
    s = np.array([1.0, 1.5, 0.5])
    r = np.array([[1.0, 0.6, 0.0], [0.6, 1.0, -0.3], [0.0, -0.3, 1.0]])
    cov = r * np.outer(s, s)
    v = b @ cov @ b
    idx = linear_gaussian_indices(b, cov)
    assert np.allclose(idx.full_first, (cov @ b) ** 2 / np.diag(cov) / v, atol=1e-14)
    assert np.allclose(idx.full_total, idx.full_first, atol=1e-14)
    assert np.allclose(idx.independent_first, b**2 / np.diag(np.linalg.inv(cov)) / v)
    # the independent total index through the Shapley cost c({i}) = E[Var(Y | X_-i)] agrees
    # with the precision-matrix form (closed form derivation: Var(X_i | X_-i) = 1/(S^-1)_ii)
    assert np.allclose(idx.independent_total, idx.independent_first, atol=1e-14)


@pytest.mark.slow
def test_four_indices_of_a_correlated_linear_model():
    # Source: closed forms as in the test above (Mara, Tarantola & Annoni 2015,
    # doi:10.1016/j.envsoft.2015.07.010); tolerance 0.02, the precision asked of the indices.
    b = np.array([1.0, 1.0, 2.0])
    s = np.array([1.0, 1.5, 0.5])
    r = np.array([[1.0, 0.6, 0.0], [0.6, 1.0, -0.3], [0.0, -0.3, 1.0]])
    cov = r * np.outer(s, s)
    idx = linear_gaussian_indices(b, cov)
    v = b @ cov @ b
    assert idx.full_first[2] == pytest.approx((cov[2] @ b) ** 2 / cov[2, 2] / v)
    sh, _ = estimate(lambda z: (z * s) @ b, r, n=20_000, m=12_000, seed=5, confidence=0.99)
    assert sh.rosenblatt_used == 20_000
    for attr in ("full_first", "independent_first", "full_total", "independent_total"):
        est, ci, exact = getattr(sh, attr), getattr(sh, f"{attr}_ci"), getattr(idx, attr)
        assert np.all(np.abs(est - exact) <= ci), attr
        assert np.max(np.abs(est - exact)) < 0.02, attr
    assert not np.allclose(idx.full_first, idx.independent_first, atol=0.05)   # they differ
    # without the blocks: the two from the ends of the permutations (about m/d of them each)
    ends, _ = estimate(lambda z: (z * s) @ b, r, n=20_000, m=12_000, seed=5, confidence=0.99,
                       blocks=False)
    assert ends.independent_first is None and ends.full_total is None
    for attr in ("full_first", "independent_total"):
        est, ci, exact = getattr(ends, attr), getattr(ends, f"{attr}_ci"), getattr(idx, attr)
        assert np.all(np.abs(est - exact) <= ci), attr
        assert np.max(np.abs(est - exact)) < 0.03, attr


def test_four_indices_without_correlation_are_the_sobol_indices():
    # Source: Mara, Tarantola & Annoni 2015, doi:10.1016/j.envsoft.2015.07.010: with
    # independent inputs full and independent indices coincide with the Sobol indices; for the
    # additive Y = b^T X (closed form) S_i = ST_i = b_i^2 s_i^2 / sum_j b_j^2 s_j^2.
    b = np.array([1.0, -2.0, 0.5])
    s = np.array([1.0, 0.5, 2.0])
    sobol = b**2 * s**2 / np.sum(b**2 * s**2)
    idx = linear_gaussian_indices(b, np.diag(s**2))
    for values in idx:
        assert np.allclose(values, sobol)
    sh, _ = estimate(lambda z: (z * s) @ b, np.eye(3), n=8000, m=2000, seed=2, confidence=0.99)
    for attr in ("full_first", "independent_first", "full_total", "independent_total"):
        est, ci = getattr(sh, attr), getattr(sh, f"{attr}_ci")
        assert np.all(np.abs(est - sobol) <= ci), attr
        assert np.max(np.abs(est - sobol)) < 0.02


@pytest.mark.slow
def test_four_indices_of_the_ishigami_function_with_independent_inputs():
    # Source: Ishigami & Homma 1990 (Proc. ISUMA '90, 398-403); partial variances in closed
    # form as in Sobol' & Levitan 1999, Comput. Phys. Commun. 117, 52-61 (from memory), for
    # sin X1 + a sin^2 X2 + b X3^4 sin X1, X_i uniform on (-pi, pi), a = 7, b = 0.1:
    # V1 = (1 + b pi^4 / 5)^2 / 2, V2 = a^2 / 8, V13 = b^2 pi^8 (1/18 - 1/50), V3 = 0;
    # S = (0.3139, 0.4424, 0), ST = (0.5576, 0.4424, 0.2437). With independent inputs the
    # full and independent first-order indices are S and both total indices ST (Mara,
    # Tarantola & Annoni 2015, doi:10.1016/j.envsoft.2015.07.010).
    a, bb = 7.0, 0.1
    v1 = 0.5 * (1 + bb * np.pi**4 / 5) ** 2
    v2 = a**2 / 8
    v13 = bb**2 * np.pi**8 * (1 / 18 - 1 / 50)
    v = v1 + v2 + v13
    first = np.array([v1, v2, 0.0]) / v
    total = np.array([v1 + v13, v2, v13]) / v
    assert first.round(4).tolist() == [0.3139, 0.4424, 0.0]
    assert total.round(4).tolist() == [0.5576, 0.4424, 0.2437]

    def model(z):
        x = (2 * special.ndtr(z) - 1) * np.pi
        return np.sin(x[:, 0]) + a * np.sin(x[:, 1]) ** 2 + bb * x[:, 2] ** 4 * np.sin(x[:, 0])

    sh, _ = estimate(model, np.eye(3), n=40_000, m=4000, seed=9, confidence=0.99)
    for attr, exact in (("full_first", first), ("independent_first", first),
                        ("full_total", total), ("independent_total", total)):
        est, ci = getattr(sh, attr), getattr(sh, f"{attr}_ci")
        assert np.all(np.abs(est - exact) <= ci), attr
        assert np.max(np.abs(est - exact)) < 0.02, attr


def test_rosenblatt_rows_with_a_non_converged_run_are_dropped_whole():
    a = random_design(50, 2, seed=4).unit
    y = special.ndtri(np.vstack([a, rosenblatt_rows(a, np.eye(2), seed=4)])) @ [1.0, 1.0]
    y[50 + 50 * 3 + 7] = np.nan                          # row 7 of block D_1
    est, half, used = rosenblatt_indices(y[:50], y[50:], 2)
    assert used == 49
    assert all(np.all(np.isfinite(v)) for v in (*est, *half))
    flat, _, used = rosenblatt_indices(np.ones(50), np.ones(250), 2)
    assert all(np.all(np.isnan(v)) for v in flat) and used == 50


def test_results_do_not_depend_on_the_chunk_size():
    from plyrisk.methods import get_method
    from plyrisk.propagate.evaluate import propagate
    from plyrisk.study.config import loads_study

    text = STACK.replace("samples = 4096", "samples = 64").replace(
        "permutations = 12000", "permutations = 40")
    study = loads_study(text, source="stack.toml")
    method = get_method("shapley")
    effects = []
    for chunk in (None, 37):
        prop = propagate(study, chunk_size=chunk, quiet=True)
        effects.append(method.analyse(study, prop).scenarios[0].shapley["exposed face"][0])
    assert np.array_equal(effects[0].effect, effects[1].effect)
    assert np.array_equal(effects[0].effect_ci, effects[1].effect_ci)
    for attr in ("full_first", "full_first_ci", "independent_first", "independent_first_ci",
                 "full_total", "full_total_ci", "independent_total", "independent_total_ci"):
        assert np.array_equal(getattr(effects[0], attr), getattr(effects[1], attr)), attr
    assert effects[0].rosenblatt_used == 64


def test_rerun_counts_follow_the_source_of_the_width():
    # closed form derivation: the squared half-width is the sum of a permutation part
    # (1 - s) h^2 and a joint-draw part s h^2, each shrinking as 1 / count
    from plyrisk.analysis.shapley import ShapleyEffects, rerun_counts

    def eff(h, share):
        return ShapleyEffects(("x",), np.array([0.5]), np.array([h]), 0.9, 1000, 0, 2000, 1.0,
                              joint_share=np.array([share]))

    assert rerun_counts(eff(0.04, 0.5), ci_threshold=0.05) is None
    assert rerun_counts(eff(0.1, 0.0), ci_threshold=0.05) == (4000, 2000)
    assert rerun_counts(eff(0.1, 0.2), ci_threshold=0.05) == (16000, 2000)
    assert rerun_counts(eff(0.1, 0.5), ci_threshold=0.05) == (4000, 8000)


@pytest.mark.slow
def test_joint_share_tells_which_draws_set_the_width():
    b, r = np.array([1.0, 2.0, 0.5]), np.eye(3)
    few_joint, _ = estimate(lambda z: z @ b, r, n=200, m=20_000, seed=1, blocks=False)
    few_perms, _ = estimate(lambda z: z @ b, r, n=50_000, m=200, seed=1, blocks=False)
    assert few_joint.joint_share[1] > 0.8 and few_perms.joint_share[1] < 0.2
