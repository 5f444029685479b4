"""Rankings of layers on the terminal: groups of conditions (hot side, cold side, exposure,
wearer) are ranked with the layers but marked as not a layer, and never named the dominant
layer."""

from __future__ import annotations

from types import SimpleNamespace

from plyrisk.analysis.sobol import RankedIndex
from plyrisk.text.indices import first_layer, index_lines, layer_label
from plyrisk.text.shapley import shapley_lines

OUT = "inner_surface_temperature"


def _item(name: str, total: float) -> RankedIndex:
    # invented index values (display only; no check value rests on them)
    return RankedIndex(name, total, 0.01, total, 0.01, True, None)


def _scenario(**extra):
    groups = [_item("hot_side", 0.6), _item("skin gap", 0.3), _item("cold_side", 0.1)]
    params = [_item("hot_side.incident_flux", 0.6), _item("skin gap.width", 0.3)]
    return SimpleNamespace(ranking={OUT: params}, group_ranking={OUT: groups}, surrogate=None,
                           **extra)


def _study():
    return SimpleNamespace(analysis=SimpleNamespace(index_ci_threshold=0.05, confidence=0.9,
                                                    samples=256), correlations=None)


def test_layer_label_and_first_layer():
    assert layer_label("cold_side", spaced=True) == "cold side (not a layer)"
    assert layer_label("skin gap") == "skin gap"
    assert first_layer(_scenario().group_ranking[OUT]).name == "skin gap"
    assert first_layer([_item("exposure", 1.0)]) is None


def test_steady_layer_ranking_marks_the_hot_and_cold_side():
    lines = index_lines(_study(), _scenario(), top=5, temperature=str)
    layers = lines[lines.index("layers (grouped total index ± CI half-width):") + 1:][:3]
    assert [line.split(". ", 1)[1].split("  ")[0].strip() for line in layers] == [
        "hot_side (not a layer)", "skin gap", "cold_side (not a layer)"]


def test_shapley_dominant_layer_is_never_a_side():
    lines = shapley_lines(_study(), _scenario(shapley={}), top=5)
    dominant = [line for line in lines if line.startswith("dominant layer:")]
    assert len(dominant) == 1
    assert dominant[0].startswith("dominant layer: skin gap (Shapley effect 0.30 ± 0.01; "
                                  "the hot_side itself moves it more: Shapley effect 0.60")
    assert "  1. hot_side (not a layer)" in "\n".join(lines)
