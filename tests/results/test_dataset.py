"""The results dataset: every variable carries units and long_name; NetCDF round trip."""

import numpy as np
import pytest
import xarray as xr

from plyrisk.pipeline.run import run_study
from plyrisk.results.dataset import (
    NOMINAL_LABEL,
    is_swept,
    read_results,
    scenario_slices,
    with_scenario_dim,
    write_results,
)
from plyrisk.study.config import loads_study
from tests.study_texts import panel

UNCERTAIN = {
    "shell_thickness": '{ nominal = "0.8 mm", tolerance = "0.1 mm" }',
    "gap_width": '{ lognormal = { median = "3 mm", gsd = 1.3 } }',
}
SWEEP = '[scenarios]\nquantity = "incident_flux"\nvalues = ["2 kW/m^2", "4 kW/m^2"]'


@pytest.fixture(scope="module")
def swept(tmp_path_factory):
    out = tmp_path_factory.mktemp("swept")
    return run_study(loads_study(panel(**UNCERTAIN, samples=32, extra=SWEEP)), out_dir=out,
                     quiet=True)


def test_round_trip_is_identical(swept):
    back = read_results(swept.path)
    xr.testing.assert_identical(back, swept.dataset)


def test_every_variable_has_units_and_long_name(swept):
    from tests.results.cf_rules import cf_problems

    assert cf_problems(swept.dataset, swept.path) == []


def test_expected_dimensions_and_variables(swept):
    ds = swept.dataset
    for dim in ("sample", "parameter", "interface", "layer", "quantile", "scenario"):
        assert dim in ds.dims
    for name in ("inner_surface_temperature", "heat_flux", "interface_temperature", "converged",
                 "input", "sobol_first", "sobol_total", "sobol_first_ci", "sobol_total_ci",
                 "sobol_group_first", "sobol_group_total", "inner_surface_temperature_quantile",
                 "inner_surface_temperature_quantile_lower", "exceedance_probability",
                 "exceedance_probability_upper"):
        assert name in ds.data_vars, name
    assert ds["inner_surface_temperature"].dims == ("scenario", "sample")
    assert list(ds["parameter_group"].values) == ["shell", "gap"]
    assert ds.attrs["seed"] == 3 and ds.attrs["method"] == "saltelli"
    assert "[study]" in ds.attrs["config_text"]
    assert ds.attrs["version_numpy"] == np.__version__
    assert len(list(scenario_slices(ds))) == 2


@pytest.fixture(scope="module")
def unswept(tmp_path_factory):
    out = tmp_path_factory.mktemp("unswept")
    return run_study(loads_study(panel(**UNCERTAIN, samples=16)), out_dir=out, quiet=True)


def test_unswept_study_has_a_scenario_dimension_of_one(unswept):
    ds = unswept.dataset
    assert ds.sizes["scenario"] == 1
    assert list(ds["scenario_label"].values) == [NOMINAL_LABEL]
    assert "scenario" not in ds.coords  # nothing swept: no level to index by
    assert not is_swept(ds) and "scenario_quantity" not in ds.attrs
    assert ds["inner_surface_temperature"].dims == ("scenario", "sample")
    assert ds["sobol_total"].dims == ("scenario", "output", "parameter")
    assert ds["input"].dims == ("sample", "parameter")
    assert [label for label, _ in scenario_slices(ds)] == [""]
    xr.testing.assert_identical(read_results(unswept.path), ds)


def test_unswept_file_follows_the_cf_rules(unswept):
    from tests.results.cf_rules import cf_problems

    assert cf_problems(unswept.dataset, unswept.path) == []


def old_layout(ds: xr.Dataset) -> xr.Dataset:
    """A dataset as files of unswept studies were written before ``scenario`` was always a
    dimension: the dimension and its label dropped."""
    return ds.isel(scenario=0, drop=True)


def test_file_without_the_scenario_dimension_gets_it_on_load(unswept, tmp_path):
    path = tmp_path / "old.nc"
    write_results(old_layout(unswept.dataset), path)
    back = read_results(path)
    xr.testing.assert_identical(back, unswept.dataset)


def test_a_current_dataset_is_left_as_it_is(unswept, swept):
    assert with_scenario_dim(unswept.dataset) is unswept.dataset
    assert with_scenario_dim(swept.dataset) is swept.dataset


def test_same_config_and_seed_give_identical_datasets(tmp_path):
    text = panel(**UNCERTAIN, samples=32)
    a = run_study(loads_study(text), quiet=True, chunk_size=17).dataset
    b = run_study(loads_study(text), quiet=True, chunk_size=4096).dataset
    xr.testing.assert_identical(a, b)


@pytest.mark.slow
@pytest.mark.parametrize("method", ["saltelli", "pce", "morris", "shapley"])
def test_every_method_has_the_scenario_dimension(method, invented_dataset):
    unswept, swept = invented_dataset(method), invented_dataset(method, True, 2)
    assert unswept.sizes["scenario"] == 1 and swept.sizes["scenario"] == 2
    assert list(unswept["scenario_label"].values) == [NOMINAL_LABEL]
    assert not is_swept(unswept) and is_swept(swept)
    assert list(swept["scenario_label"].values) == ["0.5 kW/m^2", "1.5 kW/m^2"]
    # the same variables along the same dimensions, whether swept or not
    assert {n: v.dims for n, v in unswept.data_vars.items()} == {
        n: v.dims for n, v in swept.data_vars.items()}
    assert "scenario" in unswept["converged"].dims and "scenario" in unswept["verdict"].dims


@pytest.mark.slow
def test_transient_datasets_have_the_scenario_dimension():
    from tests import transient_study as ts

    unswept, swept = ts.dataset_of(ts.skin_saltelli), ts.dataset_of(ts.skin_sweep)
    assert unswept.sizes["scenario"] == 1 and swept.sizes["scenario"] > 1
    assert list(unswept["scenario_label"].values) == [NOMINAL_LABEL]
    assert not is_swept(unswept) and is_swept(swept)
    same = set(unswept.data_vars) & set(swept.data_vars)
    assert {n: unswept[n].dims for n in same} == {n: swept[n].dims for n in same}
    assert unswept["event_probability"].dims == ("scenario", "event")
