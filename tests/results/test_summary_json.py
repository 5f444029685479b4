"""summary.json: real outputs of a steady and a transient run validate against the JSON Schema
``docs/summary.schema.json``; the file is listed in the manifest."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

jsonschema = pytest.importorskip("jsonschema")

SCHEMA = Path(__file__).resolve().parents[2] / "docs" / "summary.schema.json"


@pytest.fixture(scope="module")
def validator():
    schema = json.loads(SCHEMA.read_text(encoding="utf-8"))
    jsonschema.Draft202012Validator.check_schema(schema)
    return jsonschema.Draft202012Validator(schema)


@pytest.mark.slow
@pytest.mark.parametrize("fixture", ["steady_run", "transient_run"])
def test_real_summaries_validate_and_agree_with_the_run(fixture, request, validator):
    run = request.getfixturevalue(fixture)
    assert run.code == 0, run.stderr
    data = json.loads((run.out / "summary.json").read_text(encoding="utf-8"))
    validator.validate(data)
    manifest = json.loads((run.out / "plyrisk-manifest.json").read_text(encoding="utf-8"))
    assert "summary.json" in {f["name"] for f in manifest["files"]}
    assert data["study_fingerprint"] == manifest["fingerprint"]
    assert f"VERDICT: {data['verdict']['overall']}" in run.stdout
    assert data["counts"]["runs"] > data["counts"]["samples"] > 0
    assert data["cautions"] and "accredited laboratories" in data["cautions"][0]
    first = data["scenarios"][0]
    assert first["top_parameters"]["items"][0]["rank"] == 1
    if fixture == "steady_run":
        assert data["study_kind"] == "steady" and data["limit_output"] == (
            "inner_surface_temperature")
        assert first["statistics"]["outputs"][0]["limit_applies"]
        assert first["top_layers"]["items"]
    else:
        assert data["study_kind"] == "transient"
        assert "second_degree_burn" in {e["event"] for e in first["statistics"]["events"]}


def test_the_schema_refuses_a_summary_without_a_verdict(validator):
    bad = {"format": "plyrisk-summary", "format_version": 1}
    assert not validator.is_valid(bad)
