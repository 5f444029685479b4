"""Propagation of transient studies: the direct solve, and the same values (histories too)
whatever the chunking, the number of workers, or an interruption and resume.

Every comparison is exact (bit for bit): the study solves every chunk on one grid layout (from
the nominal study), and the transient solver steps each sample on its own.
"""

from __future__ import annotations

import numpy as np
import pytest

from plyrisk.models.transient import solve_transient
from plyrisk.models.transient_outputs import TRANSIENT_OUTPUTS
from plyrisk.propagate import store
from plyrisk.propagate.evaluate import (
    model_objects,
    output_table,
    propagate,
    study_plan,
)
from plyrisk.study.config import loads_study
from tests.study_texts import FLASH


def _flash(samples: int = 16):
    return loads_study(FLASH.format(samples=samples), source="flash.toml")


def _stored(path) -> dict[str, np.ndarray]:
    reader = store.StoreReader(path)
    return {name: reader.read(name) for name in ("input", "sample_block", *reader.output_names)}


def _assert_same(a: dict, b: dict) -> None:
    assert a.keys() == b.keys()
    for name in a:
        np.testing.assert_array_equal(a[name], b[name], err_msg=name)


@pytest.fixture(scope="module")
def flash_propagation():
    study = _flash()
    return study, propagate(study, quiet=True)


def test_output_table_is_the_transient_table():
    assert output_table(_flash()) is TRANSIENT_OUTPUTS


def test_propagation_equals_the_direct_solve(flash_propagation):
    study, prop = flash_propagation
    layers, exposure, wearer = model_objects(study, prop.inputs)
    direct = solve_transient(layers, exposure, wearer, output_times=study.transient.output_times,
                             layout=study.transient.layout)
    for spec in TRANSIENT_OUTPUTS:
        np.testing.assert_array_equal(prop.outputs[spec.name][0], getattr(direct, spec.name),
                                      err_msg=spec.name)
    np.testing.assert_array_equal(prop.outputs.time, direct.time)
    assert prop.outputs.interface_names == direct.face_names
    assert prop.outputs.element_names == ()
    assert prop.outputs.inner_surface_index == -1


def test_outputs_carry_histories_on_the_study_grid(flash_propagation):
    study, prop = flash_propagation
    n = study_plan(study).n_rows
    k = study.transient.output_times.size
    assert prop.inputs.shape == (n, len(study.parameters))
    assert prop.outputs["face_temperature"].shape == (1, n, k, len(prop.outputs.interface_names))
    assert prop.outputs["basal_temperature"].shape == (1, n, k)
    assert prop.outputs["converged"].dtype == bool
    assert bool(np.all(prop.outputs["converged"]))
    assert prop.outputs.nonconverged.tolist() == [0]


def test_chunk_size_does_not_change_a_value(flash_propagation):
    study, prop = flash_propagation
    chunked = propagate(study, quiet=True, chunk_size=20)
    for name, values in prop.outputs.fields.items():
        np.testing.assert_array_equal(chunked.outputs[name], values, err_msg=name)


def test_layout_comes_from_the_nominal_study_not_the_chunk(flash_propagation):
    study, prop = flash_propagation
    # a chunk of one sample alone builds another grid by itself; the study passes its own
    layers, exposure, wearer = model_objects(study, prop.inputs[3:4])
    alone = solve_transient(layers, exposure, wearer, output_times=study.transient.output_times,
                            layout=study.transient.layout)
    np.testing.assert_array_equal(alone.basal_temperature[0],
                                  prop.outputs["basal_temperature"][0, 3])


def test_sweep_of_the_duration_adds_a_scenario_axis():
    text = FLASH.format(samples=16).replace('duration = { uniform = ["3 s", "6 s"] }',
                                           'duration = "4 s"')
    study = loads_study(text + '\n[scenarios]\nquantity = "duration"\nvalues = ["3 s", "8 s"]\n',
                        source="sweep.toml")
    prop = propagate(study, quiet=True)
    n = study_plan(study).n_rows
    assert prop.outputs["time_to_second_degree_burn"].shape == (2, n)
    layers, exposure, wearer = model_objects(study, prop.inputs, scenario=1)
    assert float(np.asarray(exposure.exposure_duration)) == 8.0
    # a longer exposure of the same samples: never less damage
    damage = prop.outputs["damage_at_end"]
    assert bool(np.all(damage[1] >= damage[0]))


@pytest.fixture(scope="module")
def whole_store(tmp_path_factory, flash_propagation):
    study, _ = flash_propagation
    path = tmp_path_factory.mktemp("transient") / "whole.zarr"
    store.solve_to_store(study, path, chunk_size=1000, quiet=True)
    return path


def test_store_holds_the_in_memory_values_and_the_history_grid(whole_store, flash_propagation):
    study, memory = flash_propagation
    reader = store.StoreReader(whole_store)
    np.testing.assert_array_equal(reader.time, study.transient.output_times)
    dims = reader.group["face_temperature"].metadata.dimension_names
    assert dims == ("scenario", "sample", "time", "face")
    assert reader.group["time"].attrs["units"] == "s"
    assert reader.group.attrs["study_kind"] == "transient"
    for name in reader.output_names:
        np.testing.assert_array_equal(reader.read(name)[0], memory.outputs[name][0], err_msg=name)
    loaded = store.load_propagation(study, reader)
    np.testing.assert_array_equal(loaded.outputs.time, memory.outputs.time)
    assert loaded.outputs.interface_names == memory.outputs.interface_names
    for name, values in memory.outputs.fields.items():
        np.testing.assert_array_equal(loaded.outputs[name], values, err_msg=name)
    np.testing.assert_array_equal(loaded.inputs, memory.inputs)


@pytest.mark.slow
def test_store_is_the_same_whatever_the_chunking_and_workers(tmp_path, whole_store,
                                                             flash_propagation):
    study, _ = flash_propagation   # 96 rows: one chunk of 1000, or five of 20 on two workers
    store.solve_to_store(study, tmp_path / "two.zarr", chunk_size=20, workers=2, quiet=True)
    _assert_same(_stored(whole_store), _stored(tmp_path / "two.zarr"))


@pytest.mark.slow
def test_resume_after_a_kill_equals_the_uninterrupted_run(tmp_path, monkeypatch,
                                                          flash_propagation):
    study, prop = flash_propagation   # 96 rows, chunks of 20
    chunks = -(-prop.inputs.shape[0] // 20)
    store.solve_to_store(study, tmp_path / "whole.zarr", chunk_size=20, quiet=True)
    real = store.store_chunk
    calls = []

    def dies_at_the_second_chunk(*args, **kwargs):
        calls.append(args[3])
        if len(calls) == 2:
            raise KeyboardInterrupt  # the process is killed here
        return real(*args, **kwargs)

    monkeypatch.setattr(store, "store_chunk", dies_at_the_second_chunk)
    with pytest.raises(KeyboardInterrupt):
        store.solve_to_store(study, tmp_path / "cut.zarr", chunk_size=20, quiet=True)
    monkeypatch.setattr(store, "store_chunk", real)
    assert store.StoreReader(tmp_path / "cut.zarr").missing_chunks() == chunks - 1
    import zarr

    # a chunk whose writing was cut short: data half there, its done flag never set
    zarr.open_group(str(tmp_path / "cut.zarr"), mode="r+")["basal_temperature"][25:30] = 1e9
    seen = []
    monkeypatch.setattr(store, "store_chunk", lambda *a, **k: seen.append(a[3]) or real(*a, **k))
    store.solve_to_store(study, tmp_path / "cut.zarr", chunk_size=20, resume=True, quiet=True)
    assert sorted(seen) == list(range(1, chunks))
    _assert_same(_stored(tmp_path / "whole.zarr"), _stored(tmp_path / "cut.zarr"))
