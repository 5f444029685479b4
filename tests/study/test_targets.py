"""The target grammar: valid forms parse to the right bound, bad forms raise one-line errors."""

import math

import pytest

from plyrisk.study.targets import Target, parse_target

ZERO_CELSIUS = 273.15  # Source: SI Brochure, 9th ed. (2019), sec. 2.3.1: t/degC = T/K - 273.15


def test_quantile_of_the_limit():
    t = parse_target("P95 <= limit")
    assert (t.kind, t.probability, t.uses_limit) == ("quantile", 0.95, True)
    assert math.isnan(t.threshold)
    assert t.bound(317.15) == 317.15
    assert t.label == "P95"


@pytest.mark.parametrize(("text", "level", "kelvin"), [
    ("P95 <= 44 degC", 0.95, 44.0 + ZERO_CELSIUS),
    ("p99<=317 K", 0.99, 317.0),
    ("P97.5 <= 317.15 K", 0.975, 317.15),
    # Source: SI Brochure, 9th ed.: degF = 5/9 K, 32 degF = 0 degC
    ("P99.9 <= 110 degF", 0.999, (110.0 - 32.0) * 5.0 / 9.0 + ZERO_CELSIUS),
    ("  P 95   <=   LIMIT ", 0.95, math.nan),
])
def test_quantile_forms(text, level, kelvin):
    t = parse_target(text)
    assert t.kind == "quantile"
    assert t.probability == pytest.approx(level, rel=1e-12)
    if math.isnan(kelvin):
        assert t.uses_limit
    else:
        assert t.threshold == pytest.approx(kelvin, rel=1e-12)
        assert not t.uses_limit and t.bound(300.0) == t.threshold


@pytest.mark.parametrize(("text", "p"), [
    ("P(exceed) <= 1 %", 0.01),
    ("P(exceed)<=1%", 0.01),
    ("p( EXCEED ) <= 0.01", 0.01),
    ("P(exceed) <= 2.5e-3", 0.0025),
])
def test_exceedance_forms(text, p):
    t = parse_target(text)
    assert isinstance(t, Target) and t.kind == "exceedance" and t.uses_limit
    assert t.threshold == pytest.approx(p, rel=1e-12)
    assert t.bound(1000.0) == t.threshold
    assert t.label == "P(exceed)"


def test_text_is_normalised():
    assert parse_target("  P95   <=  limit ").text == "P95 <= limit"


@pytest.mark.parametrize(("text", "why"), [
    ("P95 < limit", "expected '<='"),
    ("P95 >= limit", "expected '<='"),
    ("mean <= limit", "the metric must be"),
    ("P100 <= limit", "strictly between 0 and 100"),
    ("P0 <= limit", "strictly between 0 and 100"),
    ("P95 <= 317", "a bare number needs a unit"),
    ("P95 <= 3 mm", "not 'limit' or a temperature"),
    ("P95 <= lmit", "not 'limit' or a temperature"),
    ("P(exceed) <= 150 %", "between 0 % and 100 %"),
    ("P(exceed) <= 0 %", "between 0 % and 100 %"),
    ("P(exceed) <= 2", "strictly between 0 and 1"),
    ("P(exceed) <= abc", "must be a number"),
    ("", "empty"),
])
def test_bad_forms_raise_one_line(text, why):
    with pytest.raises(ValueError, match=r"bad target .*valid forms: 'P95 <= limit'") as info:
        parse_target(text)
    message = str(info.value)
    assert why in message and repr(text) in message and "\n" not in message


def test_not_a_string():
    with pytest.raises(ValueError, match="expected a string"):
        parse_target(95)


# ----------------------------------------------------------------------------------------------
# Transient targets
# ----------------------------------------------------------------------------------------------


def test_transient_event_probability_target():
    t = parse_target("P(second_degree_burn) <= 5 %")
    assert (t.kind, t.output, t.direction, t.event) == (
        "exceedance", "time_to_second_degree_burn", "<=", "second_degree_burn")
    assert t.threshold == pytest.approx(0.05) and t.transient


def test_transient_time_target_is_negated_for_the_engine():
    # P5(t) >= 12 s  <=>  P95(-t) <= -12 s
    t = parse_target("P5(time_to_second_degree_burn) >= 0.2 min")
    assert (t.kind, t.direction, t.probability) == ("quantile", ">=", 0.05)
    assert t.threshold == pytest.approx(12.0)
    assert t.engine_probability == pytest.approx(0.95)
    assert t.bound(float("nan")) == pytest.approx(-12.0)
    assert not parse_target("P95 <= limit").transient


@pytest.mark.parametrize("text,why", [
    ("P(burn) <= 5 %", "unknown event"),
    ("P5(time_to_burn) >= 12 s", "unknown time"),
    ("P5(time_to_second_degree_burn) >= 12 K", "not a time"),
    ("P5(time_to_second_degree_burn) >= -3 s", "must be positive"),
    ("P0(time_to_second_degree_burn) >= 3 s", "strictly between 0 and 100"),
])
def test_bad_transient_targets_raise_one_line(text, why):
    with pytest.raises(ValueError, match=why) as err:
        parse_target(text)
    assert "\n" not in str(err.value)
