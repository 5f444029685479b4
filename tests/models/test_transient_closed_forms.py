"""Transient model against closed forms, the steady solver and the energy balance."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.special import erfc

from plyrisk.models.boundary import ColdTemperature, HotEnvironment
from plyrisk.models.exposure import TransientExposure
from plyrisk.models.mesh import MeshLayout, mesh_layout
from plyrisk.models.network import solve_network
from plyrisk.models.sensor import copper_disc, criterion_energy
from plyrisk.models.skin import skin_properties
from plyrisk.models.stack import Gap, Solid
from plyrisk.models.transient import solve_transient
from plyrisk.models.wearer import PrescribedWearer, SensorWearer, SkinWearer

from .transient_cases import invented_garment

Q, K, RHO, C = 20e3, 0.5, 1000.0, 4000.0  # rho c = 4e6 J m-3 K-1


def _semi_infinite(times):
    slab = Solid("slab", thickness=0.03, conductivity=K, density=RHO, specific_heat=C)
    exposure = TransientExposure(incident_flux=Q, gas_temperature=300.0,
                                 convection_coefficient=0.0, exposure_duration=5.0, horizon=5.0,
                                 ambient_temperature=300.0, mode="absorbed_flux")
    return solve_transient([slab], exposure, PrescribedWearer(temperature=300.0),
                           output_times=times)


def test_semi_infinite_solid_surface_matches_carslaw_jaeger():
    # Source: Carslaw HS, Jaeger JC, Conduction of Heat in Solids, 2nd ed. 1959, sec. 2.9,
    # constant flux q into a semi-infinite solid: T(0,t) - T0 = 2 q sqrt(t / (pi k rho c));
    # q = 20 kW/m2, k = 0.5 W/m/K, rho c = 4e6 J/m3/K -> 15.96 K at 1 s, 35.68 K at 5 s.
    sol = _semi_infinite([1.0, 5.0])
    rise = sol.face_temperature[0, :, 0] - 300.0
    assert rise == pytest.approx([15.96, 35.68], abs=0.05)
    exact = 2 * Q * np.sqrt(np.array([1.0, 5.0]) / (np.pi * K * RHO * C))
    assert np.max(np.abs(rise - exact)) < 0.05


def test_semi_infinite_solid_in_depth_matches_carslaw_jaeger():
    # Source: Carslaw & Jaeger 1959, sec. 2.9: T(x,t) - T0 = (2q/k) sqrt(a t/pi)
    # exp(-x^2/(4 a t)) - (q x / k) erfc(x / (2 sqrt(a t))), a = k / (rho c).
    # The slab is split into solids along the grid's own slices, so every node is a face.
    t = 5.0
    slab = Solid("slab", thickness=0.03, conductivity=K, density=RHO, specific_heat=C)
    wall = PrescribedWearer(temperature=300.0)
    edges = np.asarray(mesh_layout([slab], wall, t).fractions[0]) * 0.03
    parts = [Solid(f"s{i}", thickness=b - a, conductivity=K, density=RHO, specific_heat=C)
             for i, (a, b) in enumerate(zip(edges[:-1], edges[1:], strict=True))]
    one_slice = MeshLayout(tuple(p.name for p in parts), tuple((0.0, 1.0) for _ in parts))
    exposure = TransientExposure(incident_flux=Q, gas_temperature=300.0,
                                 convection_coefficient=0.0, exposure_duration=t, horizon=t,
                                 ambient_temperature=300.0, mode="absorbed_flux")
    sol = solve_transient(parts, exposure, wall, output_times=[1.0, t], layout=one_slice)
    for i, time in enumerate((1.0, t)):
        a = K / (RHO * C)
        exact = (2 * Q / K) * np.sqrt(a * time / np.pi) * np.exp(-edges**2 / (4 * a * time)) - (
            Q * edges / K) * erfc(edges / (2 * np.sqrt(a * time)))
        near = edges < 3e-3
        assert np.max(np.abs(sol.face_temperature[0, i][near] - 300.0 - exact[near])) < 0.05


def test_thin_slab_with_convective_face_follows_the_lumped_limit():
    # Source: Carslaw & Jaeger 1959, sec. 3.11 (slab with a convective face and an insulated
    # back) in the limit of small Biot number h L / k: a lumped body,
    # T - T_g = (T0 - T_g) exp(-h t / (rho c L)). Here Bi = 20 * 1e-3 / 50 = 4e-4, so the
    # lumped form holds to about Bi/3 of the rise.
    h, L, rho, c = 20.0, 1e-3, 2700.0, 900.0
    plate = Solid("plate", thickness=L, conductivity=50.0, density=rho, specific_heat=c,
                  emissivity_hot=1e-6, emissivity_cold=1e-6)
    exposure = TransientExposure(incident_flux=0.0, gas_temperature=400.0,
                                 convection_coefficient=h, exposure_duration=200.0,
                                 horizon=200.0, ambient_temperature=300.0,
                                 ambient_convection_coefficient=0.0)
    sensor = copper_disc()  # a disc of negligible capacity behind: adiabatic back
    disc = SensorWearer(type(sensor)(1e-9, 385.0, 1e-6, 300.0))
    times = np.array([20.0, 100.0, 200.0])
    sol = solve_transient([plate], exposure, disc, output_times=times)
    exact = 400.0 - 100.0 * np.exp(-h * times / (rho * c * L))
    assert sol.face_temperature[0, :, 0] == pytest.approx(exact, abs=0.05)


def test_constant_exposure_held_long_reaches_the_steady_network():
    # Source: a constant exposure held long reaches the steady solution of the same network
    # (models.network.solve_network, itself checked against the ISO 6946 and the reference).
    layers, _ = invented_garment(3, seed=11)
    exposure = TransientExposure(incident_flux=10e3, gas_temperature=700.0,
                                 convection_coefficient=30.0, exposure_duration=3000.0,
                                 horizon=3000.0)
    wall = 306.15
    sol = solve_transient(layers[:3], exposure, PrescribedWearer(temperature=wall,
                          contact_resistance=0.005), output_times=[3000.0], max_step=200.0)
    last = layers[2]
    steady_layers = layers[:2] + [
        Solid(last.name, thickness=last.thickness, conductivity=last.conductivity,
              emissivity_hot=last.emissivity_hot, emissivity_cold=last.emissivity_cold,
              contact_resistance=0.005),
        Solid("plate", thickness=1e-9, conductivity=1e3)]
    steady = solve_network(steady_layers,
                           HotEnvironment(incident_flux=10e3, gas_temperature=700.0,
                                          convection_coefficient=30.0),
                           ColdTemperature(temperature=wall))
    transient_faces = sol.face_temperature[:, 0, :]
    assert np.all(sol.converged)
    np.testing.assert_allclose(transient_faces[:, :5], steady.interface_temperature[:, :5],
                               atol=0.01)


def test_energy_is_conserved_over_the_whole_history():
    # Source: first law over the history (the scheme conserves it up to the Newton tolerance):
    # heat in at the exposed side - heat to the core + perfusion = change of stored heat.
    layers, exposure = invented_garment(4, seed=3)
    sol = solve_transient(layers, exposure, SkinWearer(skin_properties("jiang_2002")))
    balance = sol.heat_in - sol.heat_to_core + sol.heat_from_perfusion
    scale = np.abs(sol.heat_in) + np.abs(sol.heat_to_core) + np.abs(sol.heat_from_perfusion)
    assert np.all(np.abs(balance - sol.stored_energy_change) <= 1e-6 * scale)


@pytest.mark.parametrize("incident_flux", [84e3, 21e3])
def test_bare_sensor_crosses_the_criterion_as_the_lumped_balance_says(incident_flux):
    # Source: lumped energy balance of the disc under a constant absorbed flux alpha q
    # (E_abs = alpha q t) equated with the Stoll & Chianta (1969) criterion, E = C t^b;
    # with no losses t* = (alpha q / C)^(1 / (b - 1)). Exposure levels: bench-test practice of
    # the open standards (84 kW/m2 flame/radiant, 21 kW/m2 radiant).
    from plyrisk.models.sensor import CRITERION_COEFFICIENT, CRITERION_EXPONENT

    disc = copper_disc()
    exposure = TransientExposure(incident_flux=incident_flux * disc.emissivity,
                                 gas_temperature=297.15, convection_coefficient=0.0,
                                 exposure_duration=20.0, horizon=20.0, mode="absorbed_flux")
    sol = solve_transient([], exposure, SensorWearer(disc))
    absorbed = disc.emissivity * incident_flux
    exact = (absorbed / CRITERION_COEFFICIENT) ** (1.0 / (CRITERION_EXPONENT - 1.0))
    assert sol.sensor_criterion_time[0] == pytest.approx(exact, rel=1e-3)
    assert sol.exposure_energy_at_criterion[0] == pytest.approx(absorbed * exact, rel=1e-3)
    assert criterion_energy(exact) == pytest.approx(absorbed * exact, rel=1e-9)


def test_gap_between_assembly_and_sensor_uses_the_gap_law():
    # Source: energy balance of the disc (m c / A) dT = absorbed heat, checked at the horizon.
    fabric = Solid("fabric", thickness=1e-3, conductivity=0.05, density=300.0,
                   specific_heat=1300.0)
    exposure = TransientExposure(incident_flux=40e3, gas_temperature=1000.0,
                                 convection_coefficient=40.0, exposure_duration=6.0,
                                 horizon=20.0)
    sol = solve_transient([fabric, Gap("gap", width=6e-3)], exposure,
                          SensorWearer(copper_disc()), output_times=[0.0, 20.0])
    cap = float(copper_disc().heat_capacity_per_area)
    rise = sol.surface_temperature[0, 1] - sol.surface_temperature[0, 0]
    assert sol.absorbed_energy[0] == pytest.approx(cap * rise, rel=1e-12)
    assert rise > 1.0
