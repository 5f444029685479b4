"""The results dataset of a transient study: units, censoring, round trip, documentation."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from plyrisk.results.dataset import read_results, write_results
from tests import transient_study as ts

DOCS = Path(__file__).resolve().parents[2] / "docs" / "results.md"


def _dataset(which):
    return ts.dataset_of(which)


@pytest.mark.slow
@pytest.mark.parametrize("which", [ts.skin_saltelli, ts.skin_sweep, ts.sensor_pce])
def test_transient_dataset_round_trips_with_units_and_the_censoring_rule(which, tmp_path):
    from tests.results.cf_rules import cf_problems

    ds = _dataset(which).copy()
    ds.attrs["history"] = "made by the test"
    path = write_results(ds, tmp_path / "cf.nc")
    assert cf_problems(ds, path) == []
    assert ds.attrs["study_kind"] == "transient"
    assert "+inf" in ds.attrs["censoring"] and "horizon" in ds.attrs["censoring"]
    assert "scatter" in ds.attrs["cautions"]
    for o in ds["output"].values:
        assert ds[str(o)].attrs.get("rule"), o
    back = read_results(write_results(ds, tmp_path / "results.nc"))
    for name in ds.data_vars:
        a, b = ds[name].values, back[name].values
        if a.dtype.kind == "f":
            np.testing.assert_array_equal(a, b)          # +inf and NaN kept as they are
        else:
            assert (a == b).all(), name
    q = back["event_time_quantile"]
    beyond = back["event_time_quantile_beyond_horizon"].values
    assert np.array_equal(np.isposinf(q.values), beyond)


@pytest.mark.slow
def test_every_transient_variable_is_documented():
    text = DOCS.read_text(encoding="utf-8")
    names = set()
    for which in (ts.skin_sweep, ts.sensor_pce, ts.skin_saltelli):
        ds = _dataset(which)
        names |= set(ds.data_vars) | set(ds.coords) | {k for k in ds.attrs
                                                       if not k.startswith("version_")}
    missing = sorted(n for n in names if f"`{n}`" not in text)
    assert missing == []
