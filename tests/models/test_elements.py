"""Element heat-flow laws against analytic results, and their derivatives."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.constants import Stefan_Boltzmann as SIGMA

from plyrisk.models import air, elements

RNG_SEED = 20240611


def test_solid_constant_conductivity_is_fourier():
    rng = np.random.default_rng(RNG_SEED)
    ta = rng.uniform(300.0, 1200.0, 200)
    tb = rng.uniform(250.0, 400.0, 200)
    thickness = rng.uniform(1e-4, 2e-2, 200)
    k = rng.uniform(0.02, 50.0, 200)
    q, _, _ = elements.solid_heat_flux(ta, tb, thickness=thickness, conductivity=k)
    # common practice: Fourier's law, q = k (Ta - Tb) / L
    np.testing.assert_allclose(q, k * (ta - tb) / thickness, rtol=1e-13)


def test_solid_linear_conductivity_is_kirchhoff_integral():
    rng = np.random.default_rng(RNG_SEED + 1)
    ta = rng.uniform(300.0, 1200.0, 200)
    tb = rng.uniform(250.0, 400.0, 200)
    thickness = rng.uniform(1e-4, 2e-2, 200)
    k_ref = rng.uniform(0.05, 1.0, 200)
    slope = rng.uniform(-2e-5, 5e-4, 200)
    t_ref = rng.uniform(250.0, 400.0, 200)
    q, _, _ = elements.solid_heat_flux(
        ta,
        tb,
        thickness=thickness,
        conductivity=k_ref,
        conductivity_slope=slope,
        reference_temperature=t_ref,
    )
    # common practice (Kirchhoff transformation): q L = integral of k(T) dT from Tb to Ta
    integral = k_ref * (ta - tb) + slope * (0.5 * (ta**2 - tb**2) - t_ref * (ta - tb))
    np.testing.assert_allclose(q, integral / thickness, rtol=1e-12)


def test_contact_flux():
    q, dqa, dqb = elements.contact_heat_flux(
        np.array([310.0, 400.0]), np.array([300.0, 300.0]), contact_resistance=0.01
    )
    # common practice: q = dT / R_c
    np.testing.assert_allclose(q, [1000.0, 10000.0], rtol=1e-14)
    np.testing.assert_allclose(dqa, 100.0)
    np.testing.assert_allclose(dqb, -100.0)


def test_effective_emissivity_of_parallel_plates():
    # common practice: parallel grey diffuse plates, 1 / (1/e1 + 1/e2 - 1)
    assert elements.effective_emissivity(1.0, 1.0) == pytest.approx(1.0)
    assert elements.effective_emissivity(0.9, 0.9) == pytest.approx(0.9 / 1.1, rel=1e-14)
    assert elements.effective_emissivity(0.5, 1.0) == pytest.approx(0.5, rel=1e-14)


@pytest.mark.parametrize("radiation", ["exact", "linearized"])
def test_gap_flux_is_conduction_plus_grey_radiation(radiation):
    ta, tb, w = 600.0, 350.0, 0.004
    q, _, _ = elements.gap_heat_flux(
        ta, tb, gap_width=w, emissivity_hot_face=0.8, emissivity_cold_face=0.6,
        radiation=radiation,
    )
    tm = 0.5 * (ta + tb)
    e = 1.0 / (1 / 0.8 + 1 / 0.6 - 1)
    cond = air.thermal_conductivity(tm) * (ta - tb) / w
    # common practice: parallel-plate grey radiation, exact or linearized about the mean
    rad = e * SIGMA * (ta**4 - tb**4) if radiation == "exact" else 4 * e * SIGMA * tm**3 * (ta - tb)
    assert q == pytest.approx(cond + rad, rel=1e-13)


@pytest.mark.parametrize("radiation", ["exact", "linearized"])
@pytest.mark.parametrize("orientation", ["vertical", "horizontal-up", "horizontal-down"])
@pytest.mark.parametrize("convection_enabled", [False, True])
def test_element_derivatives_match_finite_differences(radiation, orientation,
                                                      convection_enabled):
    rng = np.random.default_rng(RNG_SEED + 2)
    ta = rng.uniform(300.5, 1200.0, 50)  # Ra from ~10 to ~1e4: below and past the onset
    tb = rng.uniform(280.0, 300.0, 50)
    h = 1e-4  # [K]
    laws = {
        "solid": lambda a, b: elements.solid_heat_flux(
            a, b, thickness=2e-3, conductivity=0.1, conductivity_slope=2e-4
        ),
        "gap": lambda a, b: elements.gap_heat_flux(
            a, b, gap_width=5e-3, emissivity_hot_face=0.7, emissivity_cold_face=0.9,
            radiation=radiation, orientation=orientation, convection_enabled=convection_enabled,
        ),
    }
    for law in laws.values():
        _, dqa, dqb = law(ta, tb)
        fda = (law(ta + h, tb)[0] - law(ta - h, tb)[0]) / (2 * h)
        fdb = (law(ta, tb + h)[0] - law(ta, tb - h)[0]) / (2 * h)
        # common practice: central differences, truncation O(h^2) and rounding ~1e-9 relative
        np.testing.assert_allclose(dqa, fda, rtol=1e-6)
        np.testing.assert_allclose(dqb, fdb, rtol=1e-6)


def test_gap_parts_add_up_and_report_rayleigh():
    ta = np.array([320.0, 700.0])
    tb = np.array([300.0, 320.0])
    parts = elements.gap_heat_flow_parts(
        ta, tb, gap_width=0.01, emissivity_hot_face=0.9, emissivity_cold_face=0.9,
        convection_enabled=True, orientation="horizontal-up",
    )
    q, _, _ = elements.gap_heat_flux(
        ta, tb, gap_width=0.01, emissivity_hot_face=0.9, emissivity_cold_face=0.9,
        convection_enabled=True, orientation="horizontal-up",
    )
    np.testing.assert_allclose(parts.total, q, rtol=1e-13)
    np.testing.assert_allclose(parts.conduction + parts.radiation, parts.total, rtol=1e-13)
    assert np.all(parts.nusselt >= 1.0)


def test_bad_radiation_mode_is_rejected():
    with pytest.raises(ValueError, match="radiation 'grey' is not one of exact, linearized"):
        elements.gap_heat_flux(
            400.0, 300.0, gap_width=0.01, emissivity_hot_face=0.9, emissivity_cold_face=0.9,
            radiation="grey",
        )
