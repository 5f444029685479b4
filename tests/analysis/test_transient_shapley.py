"""Shapley effects of the derived outputs of transient studies, with independent and with
correlated inputs (``method = "shapley"`` through :func:`analyse_transient`).

The studies are invented inputs (:mod:`tests.transient_study`); the check values are
properties of the estimands from the literature, or independent estimates of the same
quantity, never numbers of the invented assembly.
"""

from __future__ import annotations

import numpy as np
import pytest

import tests.transient_study as ts
from plyrisk.analysis.outputs import MemoryRows, output_column
from plyrisk.methods import get_method

SMOOTH = ("peak_basal_temperature", "log10_damage_at_end")
"""Derived outputs defined and varying in every sample of the fabric-on-skin study."""


@pytest.fixture(scope="module")
def shapley_analysis():
    study, prop = ts.skin_shapley()
    return study, prop, get_method("shapley").analyse(study, prop)


def test_every_derived_output_gets_effects_that_sum_to_one(shapley_analysis):
    # Source: Shapley (1953), efficiency; Song, Nelson & Staum (2016) doi:10.1137/15M1048070,
    # eq. 2: the effects of all inputs add up to Var(Y) / Var(Y) = 1 (exactly, by the
    # estimator's construction), and a layer's effect is the sum of its inputs' effects.
    study, _, an = shapley_analysis
    sc = an.scenarios[0]
    assert set(sc.shapley) == set(an.outputs)
    for o in an.outputs:
        ind, grp = sc.shapley[o]
        assert ind.names == study.parameter_names
        assert float(np.sum(ind.effect)) == pytest.approx(1.0, abs=1e-12)
        assert grp.names == an.group_names == ("fabric", "gap")
        assert grp.effect[0] == pytest.approx(ind.effect[0] + ind.effect[1], abs=1e-12)
        assert [r.name for r in sc.ranking[o]] == sorted(
            study.parameter_names, key=lambda n: -ind.effect[list(ind.names).index(n)])


def test_percentiles_and_burn_probability_come_from_the_joint_draws_only(shapley_analysis):
    # Source: closed form — the conditional and Rosenblatt rows are not draws from the joint
    # input distribution, so P(burn) must be the count over the N joint draws alone.
    study, prop, an = shapley_analysis
    joint = np.flatnonzero(prop.design.block == 0)
    assert joint.size == study.analysis.samples
    t = np.asarray(prop.outputs["time_to_second_degree_burn"][0])[joint]
    b = an.scenarios[0].burn["second_degree_burn"]
    assert (b.n, b.count) == (joint.size, int(np.sum(t <= 30.0)))
    assert an.scenarios[0].times["second_degree_burn"].n == joint.size


@pytest.mark.slow
def test_effects_lie_between_first_order_and_total_sobol_indices():
    # Source: Owen (2014) doi:10.1137/130936233, for independent inputs
    # S_i <= Sh_i <= T_i (first-order Sobol index <= Shapley effect <= total index). The Sobol
    # indices come from an independent Saltelli study of the same model (SALib estimators).
    # Tolerance: both estimates' interval half-widths added, at their 90 % level.
    sh_study, sh_prop = ts.skin_shapley()
    an = get_method("shapley").analyse(sh_study, sh_prop)
    sobol_study = ts.fabric_on_skin("saltelli", 256)
    sobol = get_method("saltelli").analyse(sobol_study, ts.propagate(sobol_study))
    for o in SMOOTH:
        sh = an.scenarios[0].shapley[o][0]
        s = sobol.scenarios[0].indices[o][0]
        assert s.names == sh.names
        for k in range(len(sh.names)):
            tol_lo = float(sh.effect_ci[k] + s.first_ci[k])
            tol_hi = float(sh.effect_ci[k] + s.total_ci[k])
            assert s.first[k] - tol_lo <= sh.effect[k] <= s.total[k] + tol_hi, (o, sh.names[k])


@pytest.mark.slow
def test_one_uncertain_layer_takes_the_whole_effect():
    # Source: Shapley (1953), efficiency: with every uncertain input in one layer the layer's
    # effect is the whole variance share, 1.
    study = ts.fabric_on_skin("shapley", 32, extra_group=False, permutations=16)
    an = get_method("shapley").analyse(study, ts.propagate(study))
    for o in SMOOTH:
        grp = an.scenarios[0].shapley[o][1]
        assert grp.names == ("fabric",)
        assert grp.effect[0] == pytest.approx(1.0, abs=1e-12)


def _correlation_ratio(x: np.ndarray, y: np.ndarray, classes: int) -> float:
    """Var(E[Y | X]) / Var(Y) from given data: the class means of Y over equal-count classes of
    X (Pearson's correlation ratio; Plischke, Borgonovo & Smith 2013,
    doi:10.1016/j.ejor.2012.11.047)."""
    order = np.argsort(x, kind="stable")
    parts = np.array_split(y[order], classes)
    means = np.array([p.mean() for p in parts])
    sizes = np.array([p.size for p in parts])
    return float(np.sum(sizes * (means - y.mean()) ** 2) / np.sum((y - y.mean()) ** 2))


@pytest.mark.slow
def test_correlated_full_first_index_matches_a_given_data_estimate():
    # Source: the 'full' first-order index Var(E[Y | X_i]) / Var(Y) (Mara, Tarantola & Annoni
    # 2015, doi:10.1016/j.envsoft.2015.07.010) is Pearson's correlation ratio of Y on X_i; an
    # independent estimate comes from the joint draws alone by equal-count classes of X_i
    # (Plischke, Borgonovo & Smith 2013). Tolerance: the Rosenblatt estimate's half-width plus
    # 0.1 for the class estimate (its bias is about (classes - 1) / N = 0.03 at N = 256 and its
    # spread a few hundredths).
    study = ts.correlated(ts.fabric_on_skin("shapley", 256, permutations=64),
                          {("fabric.thickness", "gap.width"): 0.7})
    prop = ts.propagate(study)
    an = get_method("shapley").analyse(study, prop)
    joint = np.flatnonzero(prop.design.block == 0)
    x = np.asarray(prop.inputs)[joint]
    r = np.corrcoef(np.argsort(np.argsort(x[:, 0])), np.argsort(np.argsort(x[:, 2])))[0, 1]
    assert r == pytest.approx(0.7, abs=0.1)  # the copula gave the configured rank correlation
    for o in SMOOTH:
        ind = an.scenarios[0].shapley[o][0]
        y = output_column(MemoryRows(prop, horizon=30.0), o, 0)[joint]
        for k in range(3):
            ratio = _correlation_ratio(x[:, k], y, 8)
            assert ind.full_first[k] == pytest.approx(ratio, abs=0.1 + ind.full_first_ci[k]), (
                o, ind.names[k])
        assert float(np.sum(ind.effect)) == pytest.approx(1.0, abs=1e-12)
