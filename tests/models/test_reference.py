"""The vectorized network solve against the independent per-sample reference solve."""

from __future__ import annotations

import itertools

import numpy as np
import pytest

from plyrisk.models.boundary import ColdTemperature, HotFlux, HotTemperature
from plyrisk.models.network import solve_network
from plyrisk.models.reference import select_sample, solve_reference
from plyrisk.models.stack import Gap, Solid, StackError
from tests.models.random_stacks import COLD_KINDS, HOT_KINDS, random_case

SEED = 5550123
CASES = list(
    itertools.product(HOT_KINDS, COLD_KINDS, ("exact", "linearized"), (False, True))
)


@pytest.mark.filterwarnings("ignore::RuntimeWarning")  # correlation / air range notices
@pytest.mark.parametrize(("hot_kind", "cold_kind", "radiation", "convection_enabled"), CASES)
def test_network_matches_reference(hot_kind, cold_kind, radiation, convection_enabled):
    rng = np.random.default_rng([SEED, CASES.index((hot_kind, cold_kind, radiation,
                                                    convection_enabled))])
    kw = {"radiation": radiation, "convection_enabled": convection_enabled}
    compared = 0
    for _ in range(3):  # three random stack structures of four samples each
        n = 4
        layers, hot, cold = random_case(rng, n, hot_kind=hot_kind, cold_kind=cold_kind)
        sol = solve_network(layers, hot, cold, **kw)
        assert sol.converged.all()
        for i in range(n):
            ref = solve_reference(
                [select_sample(layer, i) for layer in layers],
                select_sample(hot, i),
                select_sample(cold, i),
                **kw,
            )
            # The network stops at a 1e-6 K Newton step (its default tolerance); the reference
            # is solved to a relative step of 1e-13 and accepted only when a Newton correction
            # at its answer is below 1e-9 K, so 1e-6 K is the network's own tolerance.
            np.testing.assert_allclose(sol.interface_temperature[i], ref, rtol=0, atol=1e-6)
            compared += 1
    assert compared == 12


def test_reference_series_conduction_is_fourier():
    layers = [
        Solid("a", 2e-3, 0.1, contact_resistance=5e-3),
        Solid("b", 5e-3, 0.04),
        Solid("c", 1e-3, 1.5),
    ]
    t = solve_reference(layers, HotTemperature(800.0), ColdTemperature(300.0))
    # common practice: Fourier's law in series, q = dT / sum(R)
    resistances = np.array([2e-3 / 0.1, 5e-3, 5e-3 / 0.04, 1e-3 / 1.5])
    q = 500.0 / resistances.sum()
    expected = 800.0 - q * np.concatenate([[0.0], np.cumsum(resistances)])
    np.testing.assert_allclose(t, expected, rtol=1e-12)


def test_reference_rejects_bad_input():
    layers = [Solid("a", 2e-3, 0.1)]
    with pytest.raises(ValueError, match="radiation 'grey' is not one of exact, linearized"):
        solve_reference(layers, HotTemperature(400.0), ColdTemperature(300.0), radiation="grey")
    with pytest.raises(ValueError, match="solve_reference takes one sample"):
        solve_reference(
            [Solid("a", np.array([1e-3, 2e-3]), 0.1)],
            HotTemperature(400.0),
            ColdTemperature(300.0),
        )
    with pytest.raises(StackError, match="layer 'a': thickness must be positive"):
        solve_reference([Solid("a", -1e-3, 0.1)], HotTemperature(400.0), ColdTemperature(300.0))


def test_select_sample_keeps_scalars_and_picks_entries():
    solid = Solid("a", np.array([1e-3, 2e-3, 3e-3]), 0.1, contact_resistance=np.array([1, 2, 3]))
    one = select_sample(solid, 2)
    assert one.thickness == 3e-3 and one.conductivity == 0.1 and one.contact_resistance == 3.0
    assert select_sample(Solid("b", 1e-3, 0.1), 5).contact_resistance is None


def test_network_converges_through_the_convection_onset():
    # A low-emissivity horizontal gap heated from below, with the flux swept so that the solved
    # Rayleigh number passes 1708, where the Nusselt number's slope jumps from 0 to 1.44 per
    # unit ln Ra (Hollands et al. 1976). Every sample must converge to the reference answer.
    layers = [
        Solid("lower plate", 1e-4, 50.0, emissivity_cold=0.05),
        Gap("layer", 0.012, "horizontal-up"),
        Solid("upper plate", 1e-4, 50.0, emissivity_hot=0.05),
    ]
    flux = np.linspace(1.0, 200.0, 200)
    sol = solve_network(layers, HotFlux(flux), ColdTemperature(300.0), convection_enabled=True)
    assert sol.converged.all()
    ra = sol.rayleigh_number[:, 1]
    assert ra.min() < 1708.0 < ra.max()  # Source: Chandrasekhar 1961, onset at Ra = 1708
    for i in range(0, 200, 10):
        ref = solve_reference(layers, HotFlux(flux[i]), ColdTemperature(300.0),
                              convection_enabled=True)
        np.testing.assert_allclose(sol.interface_temperature[i], ref, rtol=0, atol=1e-6)
