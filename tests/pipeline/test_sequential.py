"""Sequential growth of a Saltelli study: designs that extend one sequence, runs reused."""

import numpy as np
import pytest
import xarray as xr
from scipy.stats import qmc

from plyrisk.design.sampling import sobol_design
from plyrisk.pipeline.run import run_study, summary_text
from plyrisk.results.dataset import read_results
from plyrisk.study.config import loads_study
from tests.pipeline.counting import grow_counted
from tests.study_texts import panel


def test_scipy_sobol_prefix_and_fast_forward():
    # Source: scipy.stats.qmc.Sobol (reference library): one scrambled sequence, drawn in one
    # call or in two, or skipped with fast_forward, gives the same points.
    whole = qmc.Sobol(d=6, scramble=True, seed=4).random(16)
    np.testing.assert_array_equal(whole[:8], qmc.Sobol(d=6, scramble=True, seed=4).random(8))
    engine = qmc.Sobol(d=6, scramble=True, seed=4)
    engine.fast_forward(8)
    np.testing.assert_array_equal(whole[8:], engine.random(8))


def test_design_of_2n_base_rows_is_the_n_design_and_its_continuation():
    groups = [(0, 1), (2,), (3, 4)]
    whole = sobol_design(32, 5, seed=9, groups=groups)
    first = sobol_design(16, 5, seed=9, groups=groups)
    second = sobol_design(16, 5, seed=9, groups=groups, start=16)
    np.testing.assert_array_equal(whole.unit, np.vstack([first.unit, second.unit]))
    np.testing.assert_array_equal(whole.block, np.concatenate([first.block, second.block]))
    np.testing.assert_array_equal(sobol_design(16, 5, seed=9, groups=groups, start=0).unit,
                                  first.unit)


# ----------------------------------------------------------------------------------------------
# Growth of a study
# ----------------------------------------------------------------------------------------------

TEXT = panel(samples=16, gap_width='{ lognormal = { median = "3 mm", gsd = 1.3 } }',
             liner_conductivity='{ uniform = ["0.035 W/m/K", "0.045 W/m/K"] }').replace(
    'limit = "60 degC"', 'limit = "60 degC"\nindex_ci_threshold = 0.1\nbootstrap = 50')


@pytest.fixture(scope="module")
def counted():
    """A growth with every model evaluation counted (rows handed to evaluate)."""
    return grow_counted(TEXT)


def test_growth_stops_when_the_target_is_met(counted):
    growth, _ = counted
    steps = growth.steps
    assert growth.converged and len(steps) >= 2
    assert steps[-1].unconverged == 0 and steps[-1].widest <= 0.1
    assert all(s.unconverged > 0 for s in steps[:-1])  # it did not stop early nor go on
    assert [s.base_samples for s in steps] == [16 * 2**k for k in range(len(steps))]


def test_growth_reuses_every_earlier_run(counted):
    growth, calls = counted
    rows_per_base = growth.propagation.design.n_rows // growth.steps[-1].base_samples
    # every run made once: 16 base rows first, then only the new half at each doubling
    assert calls == [16 * rows_per_base * 2 ** max(k - 1, 0) for k in range(len(calls))]
    assert sum(calls) == growth.propagation.design.n_rows == growth.steps[-1].runs


def test_grown_study_equals_a_study_run_at_the_final_size(counted):
    growth, _ = counted
    direct = run_study(loads_study(TEXT), samples=growth.steps[-1].base_samples, quiet=True)
    # every one of the 8 scrambled replicates grew together: the grown design is the design
    # of the final size, replicate by replicate
    assert growth.propagation.design.replicates == direct.propagation.design.replicates == 8
    np.testing.assert_array_equal(direct.propagation.design.unit,
                                  growth.propagation.design.unit)
    assert a_interval(growth) == "replicates"
    a = direct.analysis.scenarios[0].indices["inner_surface_temperature"][0]
    b = growth.analysis.scenarios[0].indices["inner_surface_temperature"][0]
    np.testing.assert_array_equal(a.total, b.total)
    np.testing.assert_array_equal(a.first_ci, b.first_ci)


def a_interval(growth) -> str:
    return growth.analysis.scenarios[0].indices["inner_surface_temperature"][0].interval


def test_budget_stops_the_growth_and_the_path_is_printed_and_stored(tmp_path):
    result = run_study(loads_study(TEXT), until_converged=True, max_runs=200, out_dir=tmp_path,
                       quiet=True)
    g = result.growth
    assert not g.converged and "budget reached" in g.reason
    assert g.steps[-1].runs <= 200 < 2 * g.steps[-1].runs
    text = summary_text(result)
    assert "sequential growth" in text and "NOT converged" in text
    assert "N =      16:" in text
    ds = result.dataset
    assert list(ds["growth_base_samples"].values) == [s.base_samples for s in g.steps]
    xr.testing.assert_identical(read_results(result.path), ds)


def test_growth_needs_saltelli():
    study = loads_study(TEXT.replace('method = "saltelli"', 'method = "pce"'))
    with pytest.raises(ValueError, match="needs method = saltelli"):
        run_study(study, until_converged=True, quiet=True)
