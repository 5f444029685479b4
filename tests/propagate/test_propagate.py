"""Propagation: chunk-size invariance, reproducibility, and the physics of grouped indices."""

import numpy as np
import pytest

from plyrisk.analysis.study import AnalysisError, analyse
from plyrisk.design.sampling import latin_hypercube_design
from plyrisk.propagate.evaluate import evaluate, model_objects, propagate, unit_to_inputs
from plyrisk.study.config import loads_study
from tests.study_texts import panel

UNCERTAIN = {
    "shell_thickness": '{ nominal = "0.8 mm", tolerance = "0.1 mm" }',
    "gap_width": '{ lognormal = { median = "3 mm", gsd = 1.3 } }',
    "liner_conductivity": '{ uniform = ["0.035 W/m/K", "0.045 W/m/K"] }',
}


def test_identical_results_whatever_the_chunk_size():
    study = loads_study(panel(**UNCERTAIN, samples=64))
    small = propagate(study, chunk_size=37, quiet=True)
    large = propagate(study, chunk_size=100_000, quiet=True)
    assert np.array_equal(small.inputs, large.inputs)
    for name, value in small.outputs.fields.items():
        assert np.array_equal(value, large.outputs.fields[name], equal_nan=True), name


def test_same_seed_same_result_other_seed_other_result():
    a = propagate(loads_study(panel(**UNCERTAIN, samples=32)), quiet=True)
    b = propagate(loads_study(panel(**UNCERTAIN, samples=32)), quiet=True)
    c = propagate(loads_study(panel(**UNCERTAIN, samples=32, seed=4)), quiet=True)
    assert np.array_equal(a.outputs["inner_surface_temperature"],
                          b.outputs["inner_surface_temperature"])
    assert not np.array_equal(a.inputs, c.inputs)


def test_inputs_follow_their_distributions_and_reach_the_model():
    study = loads_study(panel(**UNCERTAIN, samples=32))
    design = latin_hypercube_design(500, len(study.parameters), seed=1)
    values = unit_to_inputs(study.parameters, design.unit)
    for j, p in enumerate(study.parameters):
        assert np.array_equal(values[:, j], p.distribution.ppf(design.unit[:, j]))
    layers, _, _ = model_objects(study, values)
    names = [p.name for p in study.parameters]
    np.testing.assert_array_equal(layers[0].thickness, values[:, names.index("shell.thickness")])
    np.testing.assert_array_equal(layers[1].width, values[:, names.index("gap.width")])


def test_scenarios_add_a_leading_axis_and_order_by_exposure():
    extra = '[scenarios]\nquantity = "incident_flux"\nvalues = ["1 kW/m^2", "3 kW/m^2", "5 kW/m^2"]'
    study = loads_study(panel(**UNCERTAIN, samples=16, extra=extra))
    prop = propagate(study, quiet=True)
    t = prop.outputs["inner_surface_temperature"]
    assert t.shape[0] == 3
    # Higher exposure never lowers the inner-surface temperature (same inputs in each scenario).
    assert np.all(np.diff(t, axis=0) > 0)  # common practice: monotone in the absorbed flux


def test_nonconverged_samples_are_flagged_counted_and_excluded():
    # A steeply falling conductivity makes k(T) negative at the hot face of some samples: the
    # solver must flag those as not converged to a physically valid solution.
    study = loads_study(panel(**UNCERTAIN, samples=64, shell_conductivity=(
        '"0.06 W/m/K"\nconductivity_slope = { uniform = ["-0.0008 W/m/K^2", "0 W/m/K^2"] }')))
    prop = propagate(study, quiet=True)
    out = prop.outputs
    assert 0 < out.nonconverged[0] == np.sum(~out["converged"][0]) < out["converged"].size
    assert np.all(np.isnan(out["inner_surface_temperature"][0][~out["converged"][0]]))
    result = analyse(study, prop)
    sc = result.scenarios[0]
    assert sc.nonconverged == out.nonconverged[0]
    rows = prop.design.independent_rows()
    assert sc.exceedance.n == np.sum(out["converged"][0][rows])


def test_one_uncertain_layer_takes_the_whole_grouped_index():
    # Only the gap is materially uncertain; the shell's parameters have a negligible spread.
    study = loads_study(panel(
        samples=1024,
        gap_width='{ uniform = ["2 mm", "6 mm"] }',
        shell_thickness='{ nominal = "0.8 mm", tolerance = "0.0000008 mm" }',
        shell_conductivity='{ normal = { mean = "0.06 W/m/K", sd = "0.00000006 W/m/K" } }',
    ))
    result = analyse(study, propagate(study, quiet=True))
    grp = result.scenarios[0].indices["inner_surface_temperature"][1]
    by_name = dict(zip(grp.names, grp.total, strict=True))
    # By definition (Sobol 1993) the group holding all the variance has S_T = S = 1.
    assert by_name["gap"] == pytest.approx(1.0, abs=0.02)
    assert by_name["shell"] == pytest.approx(0.0, abs=0.02)
    first = dict(zip(grp.names, grp.first, strict=True))
    assert first["gap"] == pytest.approx(1.0, abs=0.02)


def test_nearly_linear_case_matches_linearized_variance_shares():
    # Small spreads make the network nearly linear in its inputs: first-order Sobol indices then
    # equal the first-order (FOSM) variance shares (df/dx_i)^2 var_i / sum (common practice).
    study = loads_study(panel(
        samples=2048,
        shell_thickness='{ normal = { mean = "0.8 mm", sd = "0.01 mm" } }',
        gap_width='{ normal = { mean = "3 mm", sd = "0.03 mm" } }',
        liner_thickness='{ normal = { mean = "2 mm", sd = "0.03 mm" } }',
        liner_conductivity='{ normal = { mean = "0.04 W/m/K", sd = "0.0004 W/m/K" } }',
    ))
    result = analyse(study, propagate(study, quiet=True))
    ind = result.scenarios[0].indices["inner_surface_temperature"][0]
    nominal = np.array([[p.distribution.nominal for p in study.parameters]])
    sd = np.array([p.distribution.std for p in study.parameters])
    grads = []
    for j in range(len(study.parameters)):
        h = 1e-3 * sd[j]
        up, down = nominal.copy(), nominal.copy()
        up[0, j] += h
        down[0, j] -= h
        pair = evaluate(study, np.vstack([up, down]))["inner_surface_temperature"][0]
        grads.append((pair[0] - pair[1]) / (2 * h))
    shares = (np.array(grads) * sd) ** 2
    shares /= shares.sum()
    np.testing.assert_allclose(ind.first, shares, atol=0.02)
    np.testing.assert_allclose(ind.total, shares, atol=0.02)


def test_a_study_where_nothing_converges_says_so():
    study = loads_study(panel(**UNCERTAIN, samples=16, extra="[model]\nmax_iterations = 1"))
    with pytest.raises(AnalysisError, match="no sample converged.*max_iterations"):
        analyse(study, propagate(study, quiet=True))


@pytest.mark.slow
def test_identical_results_whatever_the_number_of_workers():
    study = loads_study(panel(**UNCERTAIN, samples=32))
    one = propagate(study, chunk_size=50, quiet=True)
    two = propagate(study, chunk_size=23, quiet=True, workers=2)
    for name, value in one.outputs.fields.items():
        assert np.array_equal(value, two.outputs.fields[name], equal_nan=True), name


def test_bad_worker_count_is_rejected():
    study = loads_study(panel(**UNCERTAIN, samples=16))
    with pytest.raises(ValueError, match="workers must be at least 1, got 0"):
        evaluate(study, np.zeros((0, 3)), workers=0)
