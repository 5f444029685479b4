"""Damage integral: published constants, closed forms at constant temperature, step integrals
against an independent quadrature, and threshold crossings against a root finder."""

from __future__ import annotations

import doctest
import math

import numpy as np
import pytest
from scipy.integrate import quad
from scipy.optimize import brentq

from plyrisk.models import burn

RNG_SEED = 20240917
SET_NAMES = ("henriques_1947", "weaver_stoll_1969", "takata_1974")


def _branches(name):
    return [
        (b.lower_temperature, b.upper_temperature, b.pre_exponential, b.activation_temperature)
        for b in burn.damage_parameters(name).branches
    ]


def test_parameter_sets_are_stored_as_printed():
    # Source: Henriques FC, Arch Pathol 1947;43:489-502: P = 3.1e98 1/s, dE/R = 75 000 K,
    # from 44 degC.
    assert _branches("henriques_1947") == [(317.15, math.inf, 3.1e98, 75000.0)]
    # Source: Weaver JA, Stoll AM, Aerospace Med 1969;40:24-30: 44 <= T < 50 degC and
    # T >= 50 degC.
    assert _branches("weaver_stoll_1969") == [
        (317.15, 323.15, 2.185e124, 93534.9),
        (323.15, math.inf, 1.823e51, 39109.8),
    ]
    # Source: Takata AN, Aerospace Med 1974;45:634-637: 44-50 degC and above 50 degC.
    assert _branches("takata_1974") == [
        (317.15, 323.15, 4.32e64, 50000.0),
        (323.15, math.inf, 9.39e104, 80000.0),
    ]
    assert set(burn.DAMAGE_PARAMETER_SETS) == set(SET_NAMES)
    for name in SET_NAMES:
        assert burn.DAMAGE_PARAMETER_SETS[name].name == name


def test_burn_thresholds():
    # Source: Henriques 1947 (0.53 first degree, 1 second degree at the basal layer);
    # Takata 1974 (1e4 third degree at the basal layer).
    assert burn.BURN_THRESHOLDS == {
        "first_degree": 0.53,
        "second_degree": 1.0,
        "third_degree": 1.0e4,
    }


@pytest.mark.parametrize(
    ("name", "times", "half_units"),
    [
        # Source: computed from the constants of Henriques 1947 (Omega = 1 at constant
        # temperature, t = 1 / (P exp(-(dE/R)/T))), as printed in the shared reference values
        # (16 260 s, 201.5 s, 5.87 s, 0.190 s); tolerance half a unit in the last digit.
        ("henriques_1947", (16260.0, 201.5, 5.87, 0.190), (5.0, 0.05, 0.005, 0.0005)),
        # Source: computed from the constants of Weaver & Stoll 1969, as above.
        ("weaver_stoll_1969", (5547.0, 19.97, 3.16, 0.528), (0.5, 0.005, 0.005, 0.0005)),
    ],
)
def test_time_to_second_degree_at_constant_temperature(name, times, half_units):
    temperatures = np.array([317.15, 323.15, 328.15, 333.15])  # 44, 50, 55, 60 degC
    got = burn.time_to_damage(temperatures, parameters=burn.damage_parameters(name))
    for value, expected, half_unit in zip(got, times, half_units, strict=True):
        assert abs(value - expected) <= half_unit


def test_time_to_damage_scales_with_damage_and_is_infinite_below_onset():
    p = burn.damage_parameters("henriques_1947")
    # Source: closed form t = Omega / rate (Henriques 1947); no damage below 44 degC.
    t1 = burn.time_to_damage(330.0, parameters=p)
    np.testing.assert_allclose(burn.time_to_damage(330.0, parameters=p, damage=1e4), 1e4 * t1,
                               rtol=1e-14)
    assert np.isinf(burn.time_to_damage(317.14, parameters=p))
    assert np.isnan(burn.time_to_damage(np.nan, parameters=p))


def test_weaver_stoll_branches_differ_at_the_switch():
    p = burn.damage_parameters("weaver_stoll_1969")
    below, at = burn.damage_rate([323.15 - 1e-9, 323.15], parameters=p)
    # Source: computed from the constants of Weaver & Stoll 1969 (0.0431 vs 0.0501 1/s at
    # 50 degC), printed to 3 significant digits.
    assert below == pytest.approx(0.0431, abs=5e-5)
    assert at == pytest.approx(0.0501, abs=5e-5)


def test_activation_temperature_is_the_printed_one_not_a_converted_energy():
    p = burn.damage_parameters("henriques_1947")
    stored = float(burn.damage_rate(328.15, parameters=p))
    # Source: Henriques 1947 prints dE/R = 75 000 K; carrying dE = 6.28e5 J/mol through
    # R = 8.314 J/mol/K gives 75 535 K and, with the same P, a rate about 5x lower at 55 degC
    # (shared reference values: "about 5x lower").
    converted = 3.1e98 * math.exp(-6.28e5 / 8.314 / 328.15)
    ratio = stored / converted
    assert 4.5 < ratio < 5.5
    assert ratio == pytest.approx(math.exp((6.28e5 / 8.314 - 75000.0) / 328.15), rel=1e-9)


@pytest.mark.parametrize("name", SET_NAMES)
def test_no_damage_below_44_celsius(name):
    p = burn.damage_parameters(name)
    t = np.array([300.0, 310.15, 317.1499])
    # Source: Henriques 1947 (no damage below 44 degC).
    assert np.all(burn.damage_rate(t, parameters=p) == 0.0)
    assert np.all(burn.damage_increment(t, t[::-1], 10.0, parameters=p) == 0.0)
    assert burn.damage_rate(317.15, parameters=p) > 0.0


def test_nan_temperatures_give_nan():
    p = burn.damage_parameters("weaver_stoll_1969")
    assert np.isnan(burn.damage_rate(np.nan, parameters=p))
    assert np.isnan(burn.damage_increment(np.nan, 330.0, 1.0, parameters=p))
    assert np.isnan(burn.damage_increment(330.0, 330.0, np.nan, parameters=p))


def _quad_increment(t0, t1, dt, p):
    """Independent reference: scipy's adaptive quadrature of the rate along the ramp."""

    def rate(s):
        return float(burn.damage_rate(t0 + (t1 - t0) * s / dt, parameters=p))

    breaks = []
    if t1 != t0:
        for b in p.branches:
            for edge in (b.lower_temperature, b.upper_temperature):
                s = (edge - t0) * dt / (t1 - t0)
                if 0.0 < s < dt:
                    breaks.append(s)
    value, _ = quad(rate, 0.0, dt, points=breaks or None, epsabs=0.0, epsrel=1e-12, limit=500)
    return value


@pytest.mark.parametrize("name", SET_NAMES)
def test_damage_increment_matches_quadrature_on_ramps(name):
    p = burn.damage_parameters(name)
    rng = np.random.default_rng(RNG_SEED)
    n = 60
    t0 = rng.uniform(312.0, 345.0, n)
    change = rng.choice([0.0, 1e-7, 1e-3, 0.3, 2.0, 8.0, 25.0], n) * rng.choice([-1.0, 1.0], n)
    t1 = t0 + change
    dt = rng.uniform(1e-3, 5.0, n)
    got = burn.damage_increment(t0, t1, dt, parameters=p)
    expected = np.array([_quad_increment(a, b, h, p) for a, b, h in zip(t0, t1, dt, strict=True)])
    # Source: scipy.integrate.quad (independent adaptive quadrature), tolerance 1e-9 relative.
    np.testing.assert_allclose(got, expected, rtol=1e-9, atol=1e-300)


def test_damage_increment_over_a_large_jump_and_across_the_switch():
    p = burn.damage_parameters("weaver_stoll_1969")
    for t0, t1 in [(300.0, 400.0), (322.0, 324.0), (323.15, 330.0), (330.0, 323.15)]:
        got = float(burn.damage_increment(t0, t1, 2.0, parameters=p))
        # Source: scipy.integrate.quad, as above.
        assert got == pytest.approx(_quad_increment(t0, t1, 2.0, p), rel=1e-9)


def test_damage_increment_is_additive_and_broadcasts():
    p = burn.damage_parameters("henriques_1947")
    t0 = np.array([[318.0], [335.0]])
    t1 = np.array([[340.0, 330.0, 318.0]])
    whole = burn.damage_increment(t0, t1, 3.0, parameters=p)
    assert whole.shape == (2, 3)
    mid = 0.5 * (t0 + t1)
    halves = burn.damage_increment(t0, mid, 1.5, parameters=p) + burn.damage_increment(
        mid, t1, 1.5, parameters=p
    )
    # common practice: the integral over a step is the sum over its halves
    np.testing.assert_allclose(whole, halves, rtol=1e-12)
    # common practice: a constant temperature gives rate * dt
    flat = burn.damage_increment(330.0, 330.0, 2.5, parameters=p)
    np.testing.assert_allclose(flat, 2.5 * burn.damage_rate(330.0, parameters=p), rtol=1e-14)


@pytest.mark.parametrize("name", SET_NAMES)
def test_crossing_fraction_matches_root_find(name):
    p = burn.damage_parameters(name)
    rng = np.random.default_rng(RNG_SEED + 1)
    n = 40
    t0 = rng.uniform(316.0, 345.0, n)
    t1 = t0 + rng.uniform(-12.0, 12.0, n)
    dt = rng.uniform(0.01, 20.0, n)
    increment = burn.damage_increment(t0, t1, dt, parameters=p)
    d0 = 1.0 - rng.uniform(0.05, 0.95, n) * increment
    got = burn.crossing_fraction(t0, t1, dt, d0, 1.0, parameters=p)
    for i in range(n):
        if increment[i] == 0.0:
            assert np.isnan(got[i])
            continue

        def residual(theta, i=i):
            return d0[i] + float(
                burn.damage_increment(t0[i], t0[i] + theta * (t1[i] - t0[i]), theta * dt[i],
                                      parameters=p)
            ) - 1.0

        # Source: scipy.optimize.brentq on the same step integral (independent root finder).
        expected = brentq(residual, 0.0, 1.0, xtol=1e-15, rtol=1e-14)
        assert got[i] == pytest.approx(expected, abs=1e-10)


def test_crossing_fraction_nan_where_not_crossed_in_the_step():
    p = burn.damage_parameters("henriques_1947")
    inc = float(burn.damage_increment(330.0, 335.0, 1.0, parameters=p))
    theta = burn.crossing_fraction(
        330.0, 335.0, 1.0, np.array([1.0 - 2.0 * inc, 1.0, 1.5, 1.0 - inc]), 1.0, parameters=p
    )
    # common practice: not reached, already past, already past, reached exactly at the end
    assert np.isnan(theta[0]) and np.isnan(theta[1]) and np.isnan(theta[2])
    assert theta[3] == pytest.approx(1.0, abs=1e-12)
    # below 44 degC nothing is crossed
    assert np.isnan(burn.crossing_fraction(310.0, 315.0, 1.0, 0.9, 1.0, parameters=p))


def test_crossing_fraction_at_constant_temperature_is_linear():
    p = burn.damage_parameters("weaver_stoll_1969")
    rate = float(burn.damage_rate(328.0, parameters=p))
    theta = burn.crossing_fraction(328.0, 328.0, 4.0 / rate, 0.2, [0.53, 1.0, 4.5], parameters=p)
    # Source: closed form at constant temperature, theta = (threshold - Omega0) / (rate dt)
    np.testing.assert_allclose(theta[:2], [0.33 / 4.0, 0.8 / 4.0], rtol=1e-12)
    assert np.isnan(theta[2])


@pytest.mark.parametrize("bad", ["henriques", "Henriques_1947", "", None])
def test_unknown_parameter_set_is_a_one_line_error_listing_choices(bad):
    with pytest.raises(ValueError) as info:
        burn.damage_parameters(bad)
    message = str(info.value)
    assert "\n" not in message
    assert repr(bad) in message
    for name in SET_NAMES:
        assert name in message


def test_docstring_examples():
    result = doctest.testmod(burn, optionflags=doctest.ELLIPSIS)
    assert result.attempted > 0 and result.failed == 0
