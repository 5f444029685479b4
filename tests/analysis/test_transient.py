"""Statistics of a transient study: censored percentiles, P(burn), the exposure read-off,
derived outputs and indices through the method objects."""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest
from scipy import optimize, stats

from plyrisk.analysis.outputs import DAMAGE_FLOOR, DERIVED_OUTPUTS, MemoryRows, output_column
from plyrisk.analysis.transient import (
    burn_probability,
    censored_quantiles,
    exposure_limit,
    temperature_bands,
)
from plyrisk.methods import get_method
from plyrisk.models.exposure import TransientExposure
from plyrisk.models.skin import skin_properties
from plyrisk.models.transient import solve_transient
from plyrisk.models.wearer import SkinWearer
from tests import transient_study as ts

# ----------------------------------------------------------------------------------------------
# Censored percentiles against a direct count
# ----------------------------------------------------------------------------------------------


def _direct_bounds(values: np.ndarray, p: float, confidence: float) -> tuple[float, float]:
    """Order-statistic interval by brute force over every rank (the definition, no search)."""
    v = np.sort(values)
    n, a = v.size, 0.5 * (1 - confidence)
    k = np.arange(1, n + 1)
    ok_low = k[stats.binom.cdf(k - 1, n, p) <= a]
    ok_high = k[stats.binom.sf(k - 1, n, p) <= a]
    lower = v[ok_low.max() - 1] if ok_low.size else np.nan
    upper = v[ok_high.min() - 1] if ok_high.size else np.nan
    return lower, upper


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_censored_percentiles_match_a_direct_count(seed):
    # Source: definition of the sample quantile (linear interpolation between order statistics,
    # numpy's default) and of the distribution-free order-statistic interval; the count is done
    # here directly over every rank.
    rng = np.random.default_rng(seed)
    horizon = 30.0
    true_times = rng.gamma(3.0, 8.0, size=257)            # invented event times
    t = np.where(true_times <= horizon, true_times, np.inf)  # what the model reports
    probs = [0.01, 0.05, 0.25, 0.5, 0.75, 0.95]
    q = censored_quantiles(t, probs, horizon=horizon, confidence=0.9)
    v = np.sort(t)
    n = v.size
    for i, p in enumerate(probs):
        h = (n - 1) * p
        hi = int(np.ceil(h))
        needs_inf = not np.isfinite(v[hi]) and h != np.floor(h)
        needs_inf |= not np.isfinite(v[int(np.floor(h))])
        assert bool(q.estimate_beyond[i]) == needs_inf
        if not needs_inf:
            # exact under censoring: the same number as from the uncensored times
            assert q.estimate[i] == pytest.approx(np.quantile(true_times, p), rel=1e-12)
        lo, up = _direct_bounds(t, p, 0.9)
        assert (np.isnan(lo) and np.isnan(q.lower[i])) or q.lower[i] == lo
        assert (np.isnan(up) and np.isnan(q.upper[i])) or q.upper[i] == up
        if np.isfinite(up):
            lo_u, up_u = _direct_bounds(true_times, p, 0.9)
            assert q.upper[i] == up_u
    assert q.events == int(np.isfinite(t).sum())
    assert q.no_event_fraction == pytest.approx(np.mean(~np.isfinite(t)))


def test_censored_percentiles_leave_out_nonconverged_and_reject_times_past_the_horizon():
    t = np.array([1.0, 2.0, np.nan, np.inf, 3.0])
    q = censored_quantiles(t, [0.5], horizon=10.0)
    assert q.n == 4 and q.events == 3
    with pytest.raises(ValueError, match="horizon"):
        censored_quantiles([1.0, 12.0], [0.5], horizon=10.0)
    with pytest.raises(ValueError, match="no converged"):
        censored_quantiles([np.nan], [0.5], horizon=10.0)


# ----------------------------------------------------------------------------------------------
# P(burn): interval coverage on a known probability
# ----------------------------------------------------------------------------------------------


def test_burn_probability_interval_covers_a_known_probability():
    # Source: the Wilson score interval (Wilson 1927, JASA 22:209) has coverage close to its
    # nominal level for n p (1 - p) of a few; checked here by repetition: with the burn decided
    # by a fixed duration threshold and a uniform duration, P(burn) = (8 - 5.3) / 6 exactly.
    rng = np.random.default_rng(3)
    truth = (8.0 - 5.3) / 6.0
    hits = 0
    reps = 400
    for _ in range(reps):
        d = rng.uniform(2.0, 8.0, 120)
        t = np.where(d >= 5.3, 10.0, np.inf)
        b = burn_probability(t, "second_degree_burn", horizon=30.0, confidence=0.9)
        hits += b.lower <= truth <= b.upper
    # binomial spread of the hit count at 90 %: sd = sqrt(400 * 0.9 * 0.1) = 6
    assert hits / reps > 0.9 - 3 * 6 / reps


def _bare_skin(duration, horizon=30.0):
    # Source of the setting: the bare-skin, absorbed-flux exposure of the Stoll & Chianta (1969)
    # tests (tests/models/test_transient_burn.py), here at 20 kW/m2 for a variable duration.
    exposure = TransientExposure(incident_flux=20e3, gas_temperature=297.15,
                                 convection_coefficient=0.0, exposure_duration=duration,
                                 horizon=horizon, mode="absorbed_flux")
    return solve_transient([], exposure, SkinWearer(skin_properties("jiang_2002")),
                           damage_model="weaver_stoll_1969")


@pytest.mark.slow
def test_burn_probability_matches_the_duration_distribution():
    # Source: closed-form consequence of the model's monotone dependence on the exposure
    # duration with everything else fixed: a burn occurs exactly when D >= d*, where d* is the
    # duration whose damage at the horizon is 1 (found by a scalar root find on the same model),
    # so P(burn) = P(D >= d*) = (8 - d*) / 6 for D uniform on [2, 8] s.
    d_star = optimize.brentq(lambda d: np.log(_bare_skin(d).damage_at_end[0]), 2.0, 8.0,
                             xtol=1e-4)
    truth = (8.0 - d_star) / 6.0
    rng = np.random.default_rng(11)
    d = rng.uniform(2.0, 8.0, 200)
    sol = _bare_skin(d)
    t = sol.time_to_second_degree_burn
    far = np.abs(d - d_star) > 0.02
    np.testing.assert_array_equal(np.isfinite(t)[far], (d >= d_star)[far])
    assert np.count_nonzero(np.isfinite(t)) == pytest.approx(np.count_nonzero(d >= d_star),
                                                            abs=int(np.count_nonzero(~far)))
    # one draw: a 99 % interval (its coverage is checked by repetition above)
    b = burn_probability(t, "second_degree_burn", horizon=30.0, confidence=0.99)
    assert b.lower <= truth <= b.upper


# ----------------------------------------------------------------------------------------------
# The exposure read-off and the bands
# ----------------------------------------------------------------------------------------------


def test_exposure_limit_interpolates_and_reports_its_status():
    # Source: linear interpolation between (6, 0.02) and (8, 0.20) at 0.05: 6 + 2 * 0.03 / 0.18.
    lim = exposure_limit([8, 4, 6], [0.2, 0.0, 0.02], [0.3, 0.01, 0.06], 0.05)
    assert lim.status == "crosses"
    assert lim.value == pytest.approx(6 + 2 * 0.03 / 0.18)
    assert lim.cautious_value == pytest.approx(4 + 2 * 0.04 / 0.05)
    assert exposure_limit([1, 2], [0.0, 0.01], [0.02, 0.04], 0.05).status == "below"
    assert exposure_limit([1, 2], [0.1, 0.2], [0.2, 0.3], 0.05).status == "above"


def test_temperature_bands_are_per_time_percentiles_of_converged_rows():
    h = np.array([[300.0, 310.0], [302.0, 312.0], [np.nan, np.nan], [304.0, 314.0]])
    b = temperature_bands(h, np.array([0.0, 1.0]), "basal_temperature", (0.5,))
    assert b.n == 3
    np.testing.assert_allclose(b.values, [[302.0, 312.0]])


# ----------------------------------------------------------------------------------------------
# Derived outputs
# ----------------------------------------------------------------------------------------------


class _Out:
    def __init__(self, fields):
        self.fields = fields
        self.interface_names = ()

    def __getitem__(self, k):
        return self.fields[k]


class _Prop:
    def __init__(self, fields):
        self.outputs = _Out(fields)


def test_derived_outputs_follow_their_rules():
    t = np.array([[5.0, np.inf, np.nan]])
    damage = np.array([[3.0, 0.0, np.nan]])
    src = MemoryRows(_Prop({"time_to_second_degree_burn": t, "damage_at_end": damage}),
                     horizon=30.0)
    np.testing.assert_array_equal(output_column(src, "capped_time_to_second_degree_burn", 0),
                                  [5.0, 30.0, np.nan])
    np.testing.assert_array_equal(output_column(src, "second_degree_burn", 0), [1.0, 0.0, np.nan])
    np.testing.assert_allclose(output_column(src, "log10_damage_at_end", 0),
                               [np.log10(3.0), np.log10(DAMAGE_FLOOR), np.nan])
    assert all(d.rule and d.units and d.long_name for d in DERIVED_OUTPUTS.values())
    with pytest.raises(ValueError, match="horizon"):
        output_column(MemoryRows(_Prop({"time_to_second_degree_burn": t})),
                      "second_degree_burn", 0)


# ----------------------------------------------------------------------------------------------
# Indices through the method objects
# ----------------------------------------------------------------------------------------------


@pytest.mark.slow
@pytest.mark.parametrize("method,samples", [("saltelli", 32), ("pce", 40)])
def test_one_uncertain_layer_takes_the_whole_grouped_index(method, samples):
    # Source: Sobol (1993, Math Model Comput Exp 1:407): when the output depends only on the
    # inputs of one group, that group's first-order and total indices are 1. Tolerance: the
    # estimator's spread at this sample size (Saltelli: its bootstrap half-width).
    study = ts.fabric_on_skin(method, samples, extra_group=False)
    study = replace(study, transient=replace(study.transient, exposure=replace(
        study.transient.exposure, exposure_duration=9.0)))
    prop = ts.propagate(study)
    an = get_method(method).analyse(study, prop)
    sc = an.scenarios[0]
    for output in ("capped_time_to_second_degree_burn", "peak_basal_temperature"):
        group = sc.indices[output][1]
        assert group.names == ("fabric",)
        tol = max(0.05, 2 * float(group.total_ci[0]))
        assert group.total[0] == pytest.approx(1.0, abs=tol)
        assert group.first[0] == pytest.approx(1.0, abs=max(0.05, 2 * float(group.first_ci[0])))


@pytest.mark.slow
def test_morris_screens_the_derived_outputs_without_percentiles():
    study = ts.fabric_on_skin("morris", 4)
    prop = ts.propagate(study)
    an = get_method("morris").analyse(study, prop)
    assert not an.statistics
    sc = an.scenarios[0]
    assert sc.times == {} and sc.burn == {}
    m = sc.screening["peak_basal_temperature"]
    assert m.names == study.parameter_names
    assert np.all(np.isfinite(m.mu_star))
