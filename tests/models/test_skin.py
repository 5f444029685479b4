"""Skin property sets against their published tables, and validation messages."""

from __future__ import annotations

import doctest

import numpy as np
import pytest

from plyrisk.models import skin as skin_module
from plyrisk.models.skin import (
    SKIN_PROPERTY_SETS,
    Skin,
    SkinLayer,
    perfusion_heat_rate,
    skin_properties,
    validate_skin,
)


def _table(s: Skin):
    return [
        (
            layer.name,
            layer.thickness,
            layer.conductivity,
            layer.density,
            layer.specific_heat,
            layer.perfusion_rate,
        )
        for layer in s.layers
    ]


def test_jiang_2002_values():
    s = skin_properties("jiang_2002")
    # Source: Jiang SC, Ma N, Li HJ, Zhang XX, Burns 2002;28:713-717,
    # doi:10.1016/S0305-4179(02)00104-3 (layer thickness, k, rho, c, perfusion; blood
    # 1060 kg/m3 and 3770 J/kg/K).
    assert _table(s) == [
        ("epidermis", 80e-6, 0.24, 1200.0, 3590.0, 0.0),
        ("dermis", 2e-3, 0.45, 1200.0, 3300.0, 1.25e-3),
        ("subcutis", 10e-3, 0.19, 1000.0, 2500.0, 1.25e-3),
    ]
    assert (s.blood_density, s.blood_specific_heat) == (1060.0, 3770.0)


def test_torvi_dale_1994_values():
    s = skin_properties("torvi_dale_1994")
    # Source: Torvi DA, Dale JD, J Biomech Eng 1994;116:250-255, doi:10.1115/1.2895727
    # (from memory: not confirmed in a public copy).
    assert _table(s) == [
        ("epidermis", 80e-6, 0.255, 1200.0, 3598.0, 0.0),
        ("dermis", 2e-3, 0.523, 1200.0, 3222.0, 1.25e-3),
        ("subcutis", 10e-3, 0.167, 1000.0, 2760.0, 1.25e-3),
    ]


@pytest.mark.parametrize("name", sorted(SKIN_PROPERTY_SETS))
def test_common_fields_and_depths(name):
    s = skin_properties(name)
    # common practice: arterial and core temperature 37 degC, the base held at the core
    # temperature; skin emissivity 0.95 (from memory: Torvi & Dale use about 0.94-0.95)
    assert s.arterial_temperature == pytest.approx(310.15)
    assert s.core_temperature == pytest.approx(310.15)
    assert s.emissivity == 0.95
    assert float(s.basal_depth) == pytest.approx(80e-6)
    assert float(s.dermis_base_depth) == pytest.approx(2.08e-3)
    validate_skin(s)


def test_perfusion_heat_rate_is_the_pennes_source():
    s = skin_properties("jiang_2002")
    t = np.array([305.15, 310.15, 330.15])
    got = perfusion_heat_rate(t, layer=s.dermis, skin=s)
    # Source: Pennes 1948, doi:10.1152/jappl.1948.1.2.93: w_b rho_b c_b (T_a - T)
    np.testing.assert_allclose(got, 1.25e-3 * 1060.0 * 3770.0 * (310.15 - t), rtol=1e-14)
    assert np.all(perfusion_heat_rate(t, layer=s.epidermis, skin=s) == 0.0)


def _replace_layer(s: Skin, position: str, **changes) -> Skin:
    layer = getattr(s, position)
    fields = {f: getattr(layer, f) for f in
              ("name", "thickness", "conductivity", "density", "specific_heat", "perfusion_rate")}
    fields.update(changes)
    kwargs = {p: getattr(s, p) for p in ("epidermis", "dermis", "subcutis")}
    kwargs[position] = SkinLayer(**fields)
    return Skin(**kwargs)


@pytest.mark.parametrize(
    ("position", "quantity", "value", "shown"),
    [
        ("dermis", "conductivity", 1.5, "1.5"),
        ("epidermis", "thickness", 0.0, "0"),
        ("subcutis", "density", -1000.0, "-1000"),
        ("dermis", "specific_heat", np.nan, "nan"),
        ("subcutis", "perfusion_rate", -1e-3, "-0.001"),
        ("dermis", "conductivity", np.array([0.45, 0.05, 0.5]), "0.05"),
    ],
)
def test_bad_layer_property_is_a_one_line_error(position, quantity, value, shown):
    s = _replace_layer(skin_properties("jiang_2002"), position, **{quantity: value})
    with pytest.raises(ValueError) as info:
        validate_skin(s)
    message = str(info.value)
    assert "\n" not in message
    assert position in message and quantity in message and shown in message
    assert "physical range" in message
    assert info.value.layer == position and info.value.quantity == quantity


def test_conductivity_range_is_stated():
    s = _replace_layer(skin_properties("jiang_2002"), "dermis", conductivity=1.5)
    with pytest.raises(ValueError, match=r"from 0\.1 to 1 W m-1 K-1"):
        validate_skin(s)


@pytest.mark.parametrize(
    ("quantity", "value"),
    [("emissivity", 0.0), ("emissivity", 1.2), ("core_temperature", 37.0),
     ("blood_density", 0.0)],
)
def test_bad_skin_quantity_is_a_one_line_error(quantity, value):
    base = skin_properties("torvi_dale_1994")
    kwargs = {f: getattr(base, f) for f in (
        "epidermis", "dermis", "subcutis", "blood_density", "blood_specific_heat",
        "arterial_temperature", "core_temperature", "emissivity")}
    kwargs[quantity] = value
    with pytest.raises(ValueError) as info:
        validate_skin(Skin(**kwargs))
    message = str(info.value)
    assert "\n" not in message and quantity in message and f"{value:g}" in message


def test_per_sample_arrays_validate():
    s = _replace_layer(skin_properties("jiang_2002"), "dermis",
                       conductivity=np.array([0.4, 0.45, 0.5]))
    validate_skin(s)


def test_unknown_set_lists_choices():
    with pytest.raises(ValueError) as info:
        skin_properties("torvi_1994")
    message = str(info.value)
    assert "\n" not in message and "'torvi_1994'" in message
    assert "jiang_2002" in message and "torvi_dale_1994" in message


def test_docstring_examples():
    result = doctest.testmod(skin_module)
    assert result.attempted > 0 and result.failed == 0
