"""The vectorized network solve: analytic series conduction, energy balance, chunking."""

from __future__ import annotations

import itertools
from pathlib import Path

import numpy as np
import pytest
from scipy.constants import Stefan_Boltzmann as SIGMA

from plyrisk.models.boundary import (
    ColdEnvironment,
    ColdSurface,
    ColdTemperature,
    HotEnvironment,
    HotFlux,
    HotTemperature,
)
from plyrisk.models.network import solve_network
from plyrisk.models.reference import reference_fluxes, select_sample
from plyrisk.models.stack import Solid
from tests.models.random_stacks import COLD_KINDS, HOT_KINDS, random_case

SEED = 918273


def test_series_conduction_is_fourier():
    rng = np.random.default_rng(SEED)
    n = 300
    for count in range(1, 6):
        layers = []
        resistance = np.zeros(n)
        for i in range(count):
            thickness = rng.uniform(1e-4, 2e-2, n)
            k = np.exp(rng.uniform(np.log(0.02), np.log(200.0), n))
            contact = rng.uniform(1e-4, 1e-2, n) if i < count - 1 and i % 2 == 0 else None
            layers.append(Solid(f"s{i}", thickness, k, contact_resistance=contact))
            resistance += thickness / k + (0.0 if contact is None else contact)
        t_hot = rng.uniform(310.0, 1500.0, n)
        t_cold = rng.uniform(250.0, 310.0, n)
        sol = solve_network(layers, HotTemperature(t_hot), ColdTemperature(t_cold))
        assert sol.converged.all()
        # common practice: Fourier's law in series, q = dT / sum(L / k + R_c)
        np.testing.assert_allclose(sol.heat_flux, (t_hot - t_cold) / resistance, rtol=1e-9)
        np.testing.assert_allclose(sol.layer_resistance.sum(axis=1), resistance, rtol=1e-9)
        np.testing.assert_allclose(sol.interface_temperature[:, 0], t_hot, rtol=0, atol=0)
        np.testing.assert_allclose(sol.inner_surface_temperature, t_cold, rtol=0, atol=0)


def test_linear_conductivity_slab_matches_kirchhoff():
    # Slab 1 with k = k0 + s (T - Tref) in series with a constant-k slab 2. Kirchhoff:
    # q L1 = a (T1 - Ti) + s/2 (T1^2 - Ti^2), a = k0 - s Tref; q L2 = k2 (Ti - T2).
    rng = np.random.default_rng(SEED + 1)
    n = 200
    l1, l2 = rng.uniform(1e-3, 2e-2, n), rng.uniform(1e-3, 2e-2, n)
    k0, k2 = rng.uniform(0.05, 2.0, n), rng.uniform(0.05, 2.0, n)
    slope = rng.uniform(-5e-5, 2e-3, n)
    t_ref = rng.uniform(250.0, 400.0, n)
    t1, t2 = rng.uniform(400.0, 1200.0, n), rng.uniform(280.0, 320.0, n)
    layers = [
        Solid("graded", l1, k0, conductivity_slope=slope, reference_temperature=t_ref),
        Solid("plain", l2, k2),
    ]
    sol = solve_network(layers, HotTemperature(t1), ColdTemperature(t2))
    # common practice (Kirchhoff transformation): the quadratic for Ti,
    # s/2 Ti^2 + (a + c) Ti - (a T1 + s/2 T1^2 + c T2) = 0, c = k2 L1 / L2
    a = k0 - slope * t_ref
    c = k2 * l1 / l2
    qa, qb, qc = 0.5 * slope, a + c, -(a * t1 + 0.5 * slope * t1**2 + c * t2)
    ti = 2.0 * -qc / (qb + np.sqrt(qb**2 - 4.0 * qa * qc))  # stable root for any sign of s
    q = k2 * (ti - t2) / l2
    # the solve is iterative here (k depends on T): within its 1e-6 K tolerance
    np.testing.assert_allclose(sol.interface_temperature[:, 1], ti, rtol=0, atol=1e-6)
    np.testing.assert_allclose(sol.heat_flux, q, rtol=1e-9)


def _boundary_fluxes(hot, cold, layers, t0, tm):
    """Flux delivered by the hot boundary and taken by the cold one (None when prescribed)."""
    q_in = q_out = None
    eps = layers[0].emissivity_hot
    if isinstance(hot, HotFlux):
        q_in = hot.heat_flux
    elif isinstance(hot, HotEnvironment):
        ts = hot.gas_temperature if hot.surroundings_temperature is None else (
            hot.surroundings_temperature
        )
        q_in = (
            eps * hot.incident_flux
            + hot.convection_coefficient * (hot.gas_temperature - t0)
            - eps * SIGMA * (t0**4 - ts**4)
        )
    if isinstance(cold, ColdEnvironment):
        ts = cold.ambient_temperature if cold.surroundings_temperature is None else (
            cold.surroundings_temperature
        )
        q_out = cold.convection_coefficient * (tm - cold.ambient_temperature) + layers[
            -1
        ].emissivity_cold * SIGMA * (tm**4 - ts**4)
    return q_in, q_out


@pytest.mark.filterwarnings("ignore::RuntimeWarning")
@pytest.mark.parametrize(
    ("hot_kind", "cold_kind"), list(itertools.product(HOT_KINDS, COLD_KINDS))
)
@pytest.mark.parametrize(
    ("radiation", "convection_enabled"),
    [("exact", False), ("linearized", False), ("exact", True), ("linearized", True)],
)
def test_energy_balance_at_every_face(hot_kind, cold_kind, radiation, convection_enabled):
    # The imbalance left by the solve is an element conductance (up to 1e4 W m-2 K-1 for a
    # thin contact) times the temperature error; at the default 1e-6 K tolerance it can
    # exceed 1e-9 of the flux, so the balance is checked at a 1e-9 K tolerance.
    tolerance = 1e-9
    rng = np.random.default_rng([SEED, HOT_KINDS.index(hot_kind), COLD_KINDS.index(cold_kind)])
    checked = 0
    for _ in range(3):
        n = 12
        layers, hot, cold = random_case(rng, n, hot_kind=hot_kind, cold_kind=cold_kind)
        sol = solve_network(
            layers, hot, cold, radiation=radiation, convection_enabled=convection_enabled,
            tolerance=tolerance,
        )
        assert sol.converged.all()
        for i in range(n):
            lay = [select_sample(layer, i) for layer in layers]
            h, c = select_sample(hot, i), select_sample(cold, i)
            t = sol.interface_temperature[i]
            q = reference_fluxes(
                lay, c, t, radiation=radiation, convection_enabled=convection_enabled
            )
            q_in, q_out = _boundary_fluxes(h, c, lay, t[0], t[-1])
            flows = list(q) + [v for v in (q_in, q_out) if v is not None]
            scale = max(abs(q[0]), 1.0)
            # common practice: steady state, the same heat flux crosses every element
            assert max(flows) - min(flows) <= 1e-9 * scale
            assert sol.heat_flux[i] == pytest.approx(q[0], rel=1e-9, abs=1e-9)
            checked += 1
    assert checked == 36


@pytest.mark.filterwarnings("ignore::RuntimeWarning")
def test_chunk_size_does_not_change_results():
    rng = np.random.default_rng(SEED + 2)
    for hot_kind, cold_kind in itertools.product(HOT_KINDS, COLD_KINDS):
        layers, hot, cold = random_case(rng, 150, hot_kind=hot_kind, cold_kind=cold_kind)
        for convection_enabled in (False, True):
            runs = [
                solve_network(
                    layers, hot, cold, convection_enabled=convection_enabled, chunk_size=size
                )
                for size in (7, 64, 8192)
            ]
            for other in runs[1:]:
                for name in ("interface_temperature", "heat_flux", "layer_resistance",
                             "radiative_share", "rayleigh_number", "inner_surface_temperature"):
                    assert np.array_equal(
                        getattr(other, name), getattr(runs[0], name), equal_nan=True
                    ), name
                for name in ("converged", "iterations", "convection_onset"):
                    assert np.array_equal(getattr(other, name), getattr(runs[0], name)), name


def test_unconverged_samples_are_nan():
    rng = np.random.default_rng(SEED + 3)
    layers, hot, cold = random_case(rng, 20, hot_kind="environment", cold_kind="surface")
    sol = solve_network(layers, hot, cold, max_iterations=1)
    assert not sol.converged.any()
    np.testing.assert_array_equal(sol.iterations, 1)
    for name in ("interface_temperature", "heat_flux", "inner_surface_temperature",
                 "layer_resistance", "layer_temperature_drop", "rayleigh_number"):
        assert np.all(np.isnan(getattr(sol, name))), name
    assert not sol.convection_onset.any()
    assert not sol.air_range_exceeded.any()
    full = solve_network(layers, hot, cold)
    assert full.converged.all()


def test_solution_labels_and_inner_surface():
    layers = [
        Solid("shell", 1e-3, 0.2, contact_resistance=1e-3),
        Solid("liner", 1e-3, 0.05),
    ]
    sol = solve_network(
        layers, HotFlux(2000.0), ColdEnvironment(300.0, convection_coefficient=10.0)
    )
    assert sol.element_kinds == ("solid", "contact", "solid")
    assert sol.element_layers == (0, 0, 1)
    assert sol.interface_temperature.shape == (1, 4)
    assert sol.inner_surface_index == 3
    assert sol.inner_surface_temperature[0] == sol.interface_temperature[0, 3]
    assert len(sol.interface_names) == 4
    # common practice: layer temperature drops add up to the overall drop
    np.testing.assert_allclose(
        sol.layer_temperature_drop.sum(axis=1),
        sol.interface_temperature[:, 0] - sol.interface_temperature[:, -1],
        rtol=1e-12,
    )


def test_surface_cold_side_inner_face_is_last_solid():
    from plyrisk.models.stack import Gap

    layers = [Solid("shell", 1e-3, 0.2), Gap("air", 3e-3)]
    sol = solve_network(layers, HotTemperature(500.0), ColdSurface(306.0))
    assert sol.inner_surface_index == 1
    assert sol.interface_temperature[0, -1] == 306.0
    assert sol.inner_surface_temperature[0] == sol.interface_temperature[0, 1]


def test_output_table_declares_every_array_field_of_the_solution_once():
    # The table is what the engine derives the store and the dataset from (models/outputs.py).
    from dataclasses import fields

    from plyrisk.models.network import NETWORK_OUTPUTS, NetworkSolution

    labels = {"interface_names", "element_names", "element_kinds", "element_layers",
              "inner_surface_index"}
    arrays = [f.name for f in fields(NetworkSolution) if f.name not in labels]
    declared = [spec.name for spec in NETWORK_OUTPUTS]
    assert sorted(declared) == sorted(arrays)
    assert len(set(declared)) == len(declared)
    docs = (Path(__file__).resolve().parents[2] / "docs" / "results.md").read_text()
    assert [name for name in declared if f"`{name}`" not in docs] == []
