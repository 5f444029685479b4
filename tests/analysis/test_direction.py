"""The direction of the gap cautions: measured, not assumed (a skin gap and an inner gap)."""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import numpy as np

from plyrisk.analysis.direction import gap_directions
from plyrisk.models.network import solve_network
from plyrisk.propagate.evaluate import model_objects
from plyrisk.study.config import load_study

ROOT = Path(__file__).resolve().parents[2]
SMALL = ROOT / "configs" / "small_demo.toml"          # shirt, then a gap to the skin surface
GARMENT = ROOT / "configs" / "reflective_garment.toml"  # shell, outer gap, ..., skin gap


def _inner(study, **model) -> float:
    study = replace(study, model=replace(study.model, **model))
    layers, hot, cold = model_objects(study, None, scenario=0 if study.scenarios else None)
    sol = solve_network(layers, hot, cold, validate=False, **study.model.solver_kwargs())
    return float(np.asarray(sol.inner_surface_temperature).reshape(-1)[0])


def test_a_skin_gap_cools_the_inner_face_when_it_carries_more_heat():
    # common practice (series thermal resistances): a face on the hot side of a conductance
    # falls when the conductance rises, the heat flux through the chain rises
    study = load_study(SMALL)
    (skin,) = gap_directions(study)
    assert (skin.gap, skin.sign) == ("air gap", -1)
    (flux,) = gap_directions(study, output="heat_flux")
    assert flux.sign == +1
    # the model's own less-heat variant agrees: linearized radiation carries less heat across
    # the skin gap than the exact form, and the inner face comes out hotter, not cooler
    assert _inner(study, radiation="linearized") > _inner(study, radiation="exact")


def test_a_gap_inside_the_garment_warms_the_inner_face_when_it_carries_more_heat():
    # common practice (series thermal resistances): a face on the cold side of a conductance
    # rises with it
    study = load_study(GARMENT)
    signs = {d.gap: d.sign for d in gap_directions(study)}
    assert signs == {"outer gap": +1, "skin gap": -1}


def test_the_wording_follows_the_sign():
    study = load_study(GARMENT)
    outer, skin = gap_directions(study)
    assert "lower inner-surface temperature: not conservative" in outer.less_heat_effect(
        "inner-surface temperature")
    assert "higher inner-surface temperature (conservative for that limit; the heat reaching "\
           "the cold side is underestimated)" in skin.less_heat_effect("inner-surface temperature")
    unknown = replace(skin, sign=0)
    assert "not known" in unknown.less_heat_effect("inner-surface temperature")


def test_summary_of_a_skin_gap_study_with_linearized_radiation(tmp_path, capsys):
    from plyrisk.cli import main

    config = tmp_path / "linearized.toml"
    config.write_text(SMALL.read_text().replace("[cold_side]",
                                                '[model]\nradiation = "linearized"\n\n[cold_side]'))
    assert main(["run", str(config), "--out", str(tmp_path / "o"), "--samples", "8",
                 "--quiet", "--no-report"]) == 0
    text = " ".join(capsys.readouterr().out.split())
    assert ("gap 'air gap': too little heat across it gives a higher inner-surface temperature "
            "(conservative for that limit") in text
    assert "predicts a cooler inner surface" not in text


def test_the_limit_names_what_it_protects_when_a_gap_pulls_both_ways():
    from plyrisk.analysis.direction import limit_scope_note

    note = limit_scope_note(load_study(SMALL))
    assert note.startswith("the limit applies to the inner-surface temperature")
    assert "gap 'air gap' lowers this face but raises the heat flux to the cold side" in note
    blanket = load_study(ROOT / "configs" / "equipment_blanket.toml")  # no gap at all
    assert limit_scope_note(blanket) == ""
