"""Rated layer temperatures (``max_temperature``): per sample and as P(exceeded)."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from plyrisk.errors import ConfigError
from plyrisk.pipeline.run import run_study, summary_text
from plyrisk.study.config import loads_study

ROOT = Path(__file__).resolve().parents[2]
SMALL = ROOT / "configs" / "small_demo.toml"


def _rated(rating: str):
    text = SMALL.read_text().replace('emissivity = { triangular = [0.80, 0.88, 0.92] }',
                                     'emissivity = { triangular = [0.80, 0.88, 0.92] }\n'
                                     f'max_temperature = "{rating}"')
    return loads_study(text, source="rated.toml")


def test_p_exceeded_counts_samples_whose_hotter_face_is_above_the_rating():
    study = _rated("43 degC")
    assert study.max_temperatures[0] == pytest.approx(316.15)  # Source: 0 degC = 273.15 K (SI)
    result = run_study(study, samples=32, quiet=True)
    ds = result.dataset.isel(scenario=0)  # unswept: its one scenario
    # by hand: a solid's highest temperature is at one of its faces (steady conduction
    # without heat generation — Carslaw & Jaeger 1959, sec. 1.6: linear or monotone profile)
    faces = ds["interface_temperature"].values[:, :2]
    independent = np.isin(ds["sample_block"].values, (0, 1))
    above = np.max(faces, axis=1)[independent] > 316.15
    assert 0 < above.sum() < above.size  # a rating inside the spread of the hot face
    assert int(np.isfinite(faces[independent, 0]).sum()) == 64
    p = float(ds["rating_exceedance_probability"])
    assert p == pytest.approx(above.mean())
    text = summary_text(result)
    assert f"P(a layer above its max_temperature) = {100 * above.mean():.3g} %" in text
    assert ds.attrs["rated_layers"] == "shirt fabric (43 degC)"


def test_a_gap_has_no_rating():
    text = SMALL.read_text().replace('width = { lognormal = { median = "2 mm", gsd = 1.3 } }',
                                     'width = { lognormal = { median = "2 mm", gsd = 1.3 } }\n'
                                     'max_temperature = "43 degC"')
    with pytest.raises(ConfigError, match=r"layer\[1\]"):
        loads_study(text, source="gap.toml")


def test_unrated_studies_carry_no_rating_variables():
    ds = run_study(loads_study(SMALL.read_text(), source="s.toml"), samples=16,
                   quiet=True).dataset
    assert "rating_exceedance_probability" not in ds
