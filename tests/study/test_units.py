"""Units at the edge: parsing user strings to SI and converting back."""

from __future__ import annotations

import math
from dataclasses import fields

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from plyrisk.models import boundary, stack
from plyrisk.study.units import (
    COEFFICIENT,
    CONDUCTIVITY,
    CONTACT_RESISTANCE,
    EMISSIVITY,
    HEAT_FLUX,
    LENGTH,
    QUANTITIES,
    TEMPERATURE,
    UnitError,
    format_value,
    from_si,
    parse_value,
    to_si,
    ureg,
)

# Source: BIPM SI Brochure, 9th ed. (2019), sec. 2.3.1: t/degC = T/K - 273.15.
ZERO_CELSIUS = 273.15


def test_celsius_level_has_offset():
    p = parse_value("34 degC", TEMPERATURE)
    assert p.si == pytest.approx(34 + ZERO_CELSIUS, abs=1e-12)  # 307.15 K
    assert p.unit == "degC"
    assert p.text == "34 degC"


def test_kelvin_level_is_unchanged():
    assert parse_value("300 K", TEMPERATURE).si == 300.0


@pytest.mark.parametrize("text", ["2 degC", "2 delta_degC", "2 K", "2 kelvin"])
def test_temperature_spread_is_a_difference(text):
    # Source: BIPM SI Brochure, 9th ed., sec. 2.3.1: a temperature difference has the same
    # numerical value in degC and in K.
    assert parse_value(text, TEMPERATURE, difference=True).si == pytest.approx(2.0, abs=1e-12)


def test_fahrenheit_level_and_difference():
    # Source: NIST SP 811 (2008), App. B.8: T/K = (t/degF + 459.67)/1.8; a difference of
    # 1 degF is 1/1.8 K (section from memory).
    assert parse_value("90 degF", TEMPERATURE).si == pytest.approx((90 + 459.67) / 1.8)
    assert parse_value("2 degF", TEMPERATURE, difference=True).si == pytest.approx(2 / 1.8)


def test_prefixes_and_compound_units():
    # Source: BIPM SI Brochure, 9th ed., Table 7 (SI prefixes): kilo = 1e3, milli = 1e-3.
    assert parse_value("8 kW/m^2", HEAT_FLUX).si == pytest.approx(8000.0)
    assert parse_value("0.5 mm", LENGTH).si == pytest.approx(5e-4)
    assert parse_value("0.5mm", LENGTH).si == pytest.approx(5e-4)
    assert parse_value("0.05 m^2*K/W", CONTACT_RESISTANCE).si == pytest.approx(0.05)
    assert parse_value("12 W/m^2/K", COEFFICIENT).si == pytest.approx(12.0)


@pytest.mark.parametrize("text", ["12 W/m^2/K", "12 W m-2 K-1", "12 W/(m^2*K)", "12 W/m2/K"])
def test_equivalent_spellings(text):
    assert parse_value(text, COEFFICIENT).si == pytest.approx(12.0)
    assert parse_value(text, COEFFICIENT).unit == text[3:]


def test_degc_inside_a_compound_unit_is_a_difference():
    # Source: BIPM SI Brochure, 9th ed., sec. 2.3.1 (W/(m degC) = W/(m K) for differences).
    assert parse_value("0.05 W/m/degC", CONDUCTIVITY).si == pytest.approx(0.05)


def test_inch_is_exact():
    # Source: NIST SP 811 (2008), App. B.8: 1 in = 2.54e-2 m exactly (section from memory).
    assert parse_value("1 in", LENGTH).si == pytest.approx(0.0254, rel=1e-15)


def test_dimensionless_bare_number_and_percent():
    assert parse_value(0.9, EMISSIVITY).si == 0.9
    assert parse_value(1, EMISSIVITY).si == 1.0
    assert parse_value("0.9", EMISSIVITY).si == 0.9
    # Source: BIPM SI Brochure, 9th ed., sec. 5.4.7: % = 0.01 (section from memory).
    p = parse_value("85 %", EMISSIVITY)
    assert p.si == pytest.approx(0.85)
    assert p.unit == "%"


@pytest.mark.parametrize(
    ("value", "spec", "match"),
    [
        (3, LENGTH, r"a bare number needs a unit: expected a length such as '0\.5 mm', got 3"),
        ("3", LENGTH, r"a bare number needs a unit"),
        ("3 W", LENGTH, r"unit 'W' has dimension power \(like W\), not length \(like m\)"),
        ("34 degC", LENGTH,
         r"unit 'degC' has dimension temperature \(like K\), not length \(like m\)"),
        ("1 mmm", LENGTH, r"unknown unit 'mmm'"),
        ("1 (mm", LENGTH, r"unreadable unit '\(mm'"),
        ("thin", LENGTH, r"expected '<number> <unit>', i\.e\. a length such as '0\.5 mm', got "
                         r"'thin'"),
        (True, EMISSIVITY, r"expected an emissivity .* got True"),
        ([1, 2], LENGTH, r"expected a length such as '0\.5 mm', got a list"),
        (math.nan, EMISSIVITY, r"must be finite, got nan"),
        (math.inf, EMISSIVITY, r"must be finite, got inf"),
        ("0.5 mm", EMISSIVITY, r"unit 'mm' has dimension length \(like m\), not dimensionless"),
    ],
)
def test_bad_values(value, spec, match):
    with pytest.raises(UnitError, match=match):
        parse_value(value, spec)


def test_from_si_back_to_user_units():
    t = from_si(np.array([307.15, 317.15]), "degC", TEMPERATURE)
    np.testing.assert_allclose(t, [34.0, 44.0], atol=1e-12)
    assert from_si(2.0, "degC", TEMPERATURE, difference=True) == pytest.approx(2.0)
    assert from_si(5e-4, "mm", LENGTH) == pytest.approx(0.5)
    assert format_value(307.15, "degC", TEMPERATURE) == "34 degC"
    assert format_value(2.0, "degC", TEMPERATURE, difference=True) == "2 K"
    # Source: 1 K = 1.8 degF as an interval (NIST SP 811, 2008, sec. B.8).
    assert format_value(2.0, "degF", TEMPERATURE, difference=True) == "3.6 delta_degF"
    assert format_value(0.9, "", EMISSIVITY) == "0.9"


@given(st.floats(min_value=1e-3, max_value=1e4, allow_nan=False))
def test_round_trip_mm(x):
    assert from_si(to_si(x, "mm", LENGTH), "mm", LENGTH) == pytest.approx(x, rel=1e-12)


@given(st.floats(min_value=-200.0, max_value=2000.0, allow_nan=False))
def test_round_trip_celsius(x):
    si = to_si(x, "degC", TEMPERATURE)
    assert si == pytest.approx(x + ZERO_CELSIUS, rel=1e-12)
    assert from_si(si, "degC", TEMPERATURE) == pytest.approx(x, abs=1e-9)


def test_bounds_text_and_within():
    assert LENGTH.bounds_text() == "positive"
    assert HEAT_FLUX.bounds_text() == "zero or positive"
    assert EMISSIVITY.bounds_text() == "in (0, 1]"
    assert TEMPERATURE.bounds_text() == "above absolute zero (0 K)"
    np.testing.assert_array_equal(EMISSIVITY.within([0.0, 0.5, 1.0, 1.01, np.nan]),
                                  [False, True, True, False, False])
    np.testing.assert_array_equal(HEAT_FLUX.within([0.0, -1.0]), [True, False])


def test_every_model_field_has_a_spec():
    classes = [stack.Solid, stack.Gap, *boundary.HOT_SIDE_KINDS.values(),
               *boundary.COLD_SIDE_KINDS.values()]
    for cls in classes:
        for f in fields(cls):
            if f.name in ("name", "orientation"):
                continue
            assert f.name in QUANTITIES, (cls.__name__, f.name)
            ureg.parse_units(QUANTITIES[f.name].si_unit)  # the SI unit itself parses


@given(st.text(max_size=20), st.sampled_from(sorted(set(QUANTITIES.values()), key=str)))
def test_any_text_gives_a_value_or_a_unit_error(text, spec):
    # a config mistake must never surface as another exception type (a traceback)
    for value in (text, f"1 {text}"):
        try:
            parse_value(value, spec)
        except UnitError:
            pass
