"""Morris screening: the G-function's important inputs first; designs, validators, a study."""

import numpy as np
import pytest

from plyrisk.analysis.morris import morris_indices, safe_to_fix
from plyrisk.design.morris import morris_design
from plyrisk.pipeline.run import run_study, summary_text
from plyrisk.study.config import loads_study
from tests.study_texts import panel

G_A = np.array([0.0, 1.0, 4.5, 9.0, 99.0, 99.0, 99.0, 99.0])


def g_function(u, a=G_A):
    # Source: Saltelli & Sobol (1995), Reliab. Eng. Syst. Saf. 50, 225-239.
    return np.prod((np.abs(4 * u - 2) + a) / (1 + a), axis=1)


def test_g_function_ranks_the_important_inputs_first():
    # Source: Campolongo, Cariboni & Saltelli (2007), Environ. Model. Softw. 22, 1509-1518,
    # sec. 4 (G-function): mu* ranks the inputs by a_i, the small a_i (x1, x2) first, and
    # separates x1..x4 from the negligible a_i = 99 group; Saltelli & Sobol (1995) for the
    # analytic importance V_i = (1/3) / (1 + a_i)^2, decreasing with a_i.
    design = morris_design(20, 8, seed=3, levels=4)
    names = [f"x{i + 1}" for i in range(8)]
    m = morris_indices(g_function(design.unit), design, names=names, levels=4, seed=1)
    order = [names[j] for j in m.order()]
    assert order[:4] == ["x1", "x2", "x3", "x4"]
    fixable = safe_to_fix(m, threshold=0.1)
    np.testing.assert_array_equal(fixable, [False] * 4 + [True] * 4)
    assert m.trajectories_used == 20 and m.dropped_trajectories == 0
    assert m.converged(0.05).shape == (8,)  # 20 trajectories: intervals still wide


def test_linear_model_measures():
    # Source: Morris (1991), Technometrics 33, 161-174: for a linear model y = sum b_i u_i the
    # elementary effect of input i is b_i times the step on the sampled scale, every time:
    # mu = mu* = b_i (p - 1) / p here (levels at cell centres, step p / (2 (p - 1)) of the
    # grid), sigma = 0.
    b = np.array([3.0, -1.0, 0.5])
    design = morris_design(10, 3, seed=2, levels=4)
    m = morris_indices(design.unit @ b, design, names="abc", levels=4, seed=0)
    np.testing.assert_allclose(m.mu, b * 3 / 4, atol=1e-12)
    np.testing.assert_allclose(m.mu_star, np.abs(b) * 3 / 4, atol=1e-12)
    np.testing.assert_allclose(m.sigma, 0.0, atol=1e-12)


def test_design_is_in_the_open_cube_reproducible_and_one_at_a_time():
    design = morris_design(6, 4, seed=7, levels=6)
    again = morris_design(6, 4, seed=7, levels=6)
    np.testing.assert_array_equal(design.unit, again.unit)
    assert design.unit.shape == (6 * 5, 4) and design.method == "morris"
    assert np.all((design.unit > 0) & (design.unit < 1))
    steps = np.diff(design.unit.reshape(6, 5, 4), axis=1)
    np.testing.assert_array_equal(np.sum(steps != 0, axis=2), 1)  # one input moves per step


def test_trajectories_with_a_failed_run_are_dropped_and_counted():
    design = morris_design(8, 3, seed=1)
    y = design.unit.sum(axis=1)
    y[5] = np.nan  # second trajectory (rows 4..7)
    m = morris_indices(y, design, names="abc", seed=0)
    assert (m.trajectories_used, m.dropped_trajectories) == (7, 1)


@pytest.mark.parametrize(("call", "match"), [
    (lambda: morris_design(10, 3, seed=0, levels=5), r"levels must be an even integer >= 2"),
    (lambda: morris_design(1, 3, seed=0), r"trajectories must be an integer >= 2, got 1"),
    (lambda: morris_design(10, 0, seed=0), r"n_params must be an integer >= 1, got 0"),
    (lambda: morris_design(10, 2, seed=-1), r"seed must be a non-negative integer, got -1"),
    (lambda: safe_to_fix(None, threshold=1.5), r"threshold must lie in \(0, 1\), got 1\.5"),
])
def test_validators(call, match):
    with pytest.raises(ValueError, match=match):
        call()


def test_morris_study_end_to_end(tmp_path):
    text = panel(samples=12, gap_width='{ lognormal = { median = "3 mm", gsd = 1.3 } }',
                 liner_thickness='{ nominal = "2 mm", tolerance = "0.05 mm" }').replace(
        'method = "saltelli"', 'method = "morris"')
    result = run_study(loads_study(text), out_dir=tmp_path, quiet=True)
    ds = result.dataset
    assert ds.attrs["method"] == "morris"
    assert ds["morris_mu_star"].dims == ("scenario", "output", "parameter")
    assert "inner_surface_temperature_quantile" not in ds
    rank = ds["morris_rank"].isel(scenario=0).sel(output="inner_surface_temperature")
    assert list(rank.values) == [1, 2]
    from tests.results.cf_rules import cf_problems

    assert cf_problems(ds) == []
    text = summary_text(result)
    assert "ranked by Morris mu*" in text and "no percentiles" in text
    assert "CAUTIONS" in text
