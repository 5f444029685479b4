"""Scale-out: the same dataset in one process, in chunks, on dask workers, and after a resume.

Every comparison is exact (bit for bit): chunks are independent tasks whose values depend only
on the study, its seed and the chunk's rows (see uq/compute.py and uq/sampling.DesignPlan).
"""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest
import xarray as xr

from plyrisk.cli import main
from plyrisk.pipeline.run import run_study
from plyrisk.propagate import compute, store
from plyrisk.propagate.evaluate import study_plan

pytestmark = pytest.mark.slow  # dask clusters and Zarr stores

ROOT = Path(__file__).resolve().parents[2]
SMALL = ROOT / "configs" / "small_demo.toml"


def _samples(study, samples: int):
    return replace(study, analysis=replace(study.analysis, samples=samples))


def _stored(path) -> dict[str, np.ndarray]:
    reader = store.StoreReader(path)
    return {name: reader.read(name) for name in ("input", "sample_block", *reader.output_names)}


def _assert_same(a: dict, b: dict) -> None:
    assert a.keys() == b.keys()
    for name in a:
        np.testing.assert_array_equal(a[name], b[name], err_msg=name)


def _without_provenance(ds: xr.Dataset) -> xr.Dataset:
    ds = ds.copy()
    ds.attrs.pop("sample_store", None)
    return ds


@pytest.fixture
def in_process(small_demo_64_dataset):
    return small_demo_64_dataset


def test_two_worker_local_cluster_gives_the_in_process_dataset(in_process, small_demo_64):
    on_dask = run_study(small_demo_64, quiet=True, workers=2, chunk_size=50).dataset
    xr.testing.assert_identical(on_dask, in_process)


def test_existing_scheduler_gives_the_in_process_dataset(in_process, small_demo_64):
    from distributed import LocalCluster

    with LocalCluster(n_workers=1, threads_per_worker=1, processes=True, host="127.0.0.1",
                      dashboard_address=None) as cluster:
        on_dask = run_study(small_demo_64, quiet=True, scheduler=cluster.scheduler_address,
                            chunk_size=100).dataset
    xr.testing.assert_identical(on_dask, in_process)


def test_store_gives_the_in_memory_dataset(in_process, tmp_path, small_demo_64):
    stored = run_study(small_demo_64, quiet=True, store=tmp_path / "s.zarr", chunk_size=77).dataset
    xr.testing.assert_identical(_without_provenance(stored), in_process)
    opened = xr.open_zarr(tmp_path / "s.zarr", consolidated=False)
    np.testing.assert_array_equal(opened["inner_surface_temperature"].values,
                                  in_process["inner_surface_temperature"].values)
    np.testing.assert_array_equal(opened["sobol_total"].values, in_process["sobol_total"].values)


def test_store_is_the_same_whatever_the_chunking_and_workers(tmp_path, reflective_garment):
    study = _samples(reflective_garment, 32)  # a sweep of three exposures: the scenario axis
    runs = []
    for k, (chunk, workers) in enumerate(((1000, 1), (97, 1), (250, 1), (250, 2))):
        store.solve_to_store(study, tmp_path / f"{k}.zarr", chunk_size=chunk,
                             workers=workers, quiet=True)
        runs.append(_stored(tmp_path / f"{k}.zarr"))
    for other in runs[1:]:
        _assert_same(runs[0], other)


def test_resume_after_a_kill_equals_the_uninterrupted_run(tmp_path, monkeypatch, small_demo):
    study = _samples(small_demo, 128)
    store.solve_to_store(study, tmp_path / "whole.zarr", chunk_size=100, quiet=True)
    real = store.store_chunk
    calls = []

    def dies_at_the_fourth_chunk(*args, **kwargs):
        calls.append(args[3])
        if len(calls) == 4:
            raise KeyboardInterrupt  # the process is killed here
        return real(*args, **kwargs)

    monkeypatch.setattr(store, "store_chunk", dies_at_the_fourth_chunk)
    with pytest.raises(KeyboardInterrupt):
        store.solve_to_store(study, tmp_path / "cut.zarr", chunk_size=100, quiet=True)
    monkeypatch.setattr(store, "store_chunk", real)
    reader = store.StoreReader(tmp_path / "cut.zarr")
    n_chunks = -(-study_plan(study).n_rows // 100)
    assert reader.missing_chunks() == n_chunks - 3
    # a chunk whose writing was cut short: data half there, its done flag never set
    import zarr

    zarr.open_group(str(tmp_path / "cut.zarr"), mode="r+")[
        "inner_surface_temperature"][:, 300:350] = 1.0e9  # (scenario, sample)
    seen = []
    monkeypatch.setattr(store, "store_chunk",
                        lambda *a, **k: seen.append(a[3]) or real(*a, **k))
    store.solve_to_store(study, tmp_path / "cut.zarr", chunk_size=100, resume=True,
                         quiet=True)
    assert sorted(seen) == list(range(3, n_chunks))      # only the unfinished chunks again
    _assert_same(_stored(tmp_path / "whole.zarr"), _stored(tmp_path / "cut.zarr"))


def test_resume_continues_a_store_without_the_scenario_axis(tmp_path, monkeypatch,
                                                            small_demo_64):
    """A store of an unswept study written before every store had a scenario axis is
    continued in its own layout, and its results equal an uninterrupted run's."""
    study = small_demo_64
    real = store.StoreLayout
    monkeypatch.setattr(store, "StoreLayout", lambda p, c, n, swept: real(p, c, n, False))
    store.solve_to_store(study, tmp_path / "old.zarr", chunk_size=100, quiet=True)
    monkeypatch.setattr(store, "StoreLayout", real)
    import zarr

    group = zarr.open_group(str(tmp_path / "old.zarr"), mode="r+")
    assert group["converged"].metadata.dimension_names == ("sample",)  # the old layout
    group["chunk_done"][1] = 0  # as if the run had been killed before chunk 1 was stored
    group["inner_surface_temperature"][100:200] = np.nan
    store.solve_to_store(study, tmp_path / "old.zarr", chunk_size=100, resume=True, quiet=True)
    store.solve_to_store(study, tmp_path / "new.zarr", chunk_size=100, quiet=True)
    _assert_same(_stored(tmp_path / "old.zarr"), _stored(tmp_path / "new.zarr"))


def test_resume_refuses_a_store_of_another_study(tmp_path, small_demo_64):
    store.solve_to_store(small_demo_64, tmp_path / "s.zarr", chunk_size=100, quiet=True)
    other = small_demo_64
    other = replace(other, analysis=replace(other.analysis, seed=other.analysis.seed + 1))
    with pytest.raises(store.StoreError, match="written for another study, seed, sample count"):
        store.solve_to_store(other, tmp_path / "s.zarr", chunk_size=100, resume=True)
    with pytest.raises(store.StoreError, match="written for another study"):
        store.solve_to_store(small_demo_64, tmp_path / "s.zarr", chunk_size=50, resume=True)


def test_store_refuses_to_replace_a_folder_that_is_not_a_store(tmp_path, small_demo_64):
    (tmp_path / "mine").mkdir()
    (tmp_path / "mine" / "data.csv").write_text("1,2\n")
    with pytest.raises(store.StoreError, match="holds something other than a plyrisk store"):
        store.solve_to_store(small_demo_64, tmp_path / "mine", chunk_size=100)
    assert (tmp_path / "mine" / "data.csv").read_text() == "1,2\n"


def test_worker_code_leaves_the_global_random_state_alone(tmp_path, small_demo_64):
    study = small_demo_64
    plan = study_plan(study)
    layout, _ = store.open_store(study, plan, tmp_path / "s.zarr", chunk_size=100)
    np.random.seed(12345)  # noqa: NPY002 (the global state, on purpose)
    before = np.random.get_state()[1].copy()  # noqa: NPY002 (the global state, on purpose)
    store.store_chunk(study, plan, layout, 0)
    np.testing.assert_array_equal(np.random.get_state()[1], before)  # noqa: NPY002 (the global state, on purpose)
    np.random.seed(999)  # a library seeding the global state changes nothing of ours  # noqa: NPY002 (the global state, on purpose)
    store.store_chunk(study, plan, layout, 1)
    first = store.StoreReader(tmp_path / "s.zarr").read("inner_surface_temperature", 0, 200)
    np.random.seed(1)  # noqa: NPY002 (the global state, on purpose)
    store.store_chunk(study, plan, layout, 1)
    again = store.StoreReader(tmp_path / "s.zarr").read("inner_surface_temperature", 0, 200)
    np.testing.assert_array_equal(first, again)


def test_unreachable_scheduler_is_one_line_and_exit_2(tmp_path, capsys, monkeypatch):
    monkeypatch.setattr(compute, "CONNECT_TIMEOUT", "1s")
    code = main(["run", str(SMALL), "--out", str(tmp_path), "--samples", "16", "--quiet",
                 "--scheduler", "tcp://127.0.0.1:9"])
    err = capsys.readouterr().err.strip()
    assert code == 2
    assert len(err.splitlines()) == 1
    assert err.startswith("plyrisk: error: cannot reach the dask scheduler at tcp://127.0.0.1:9")


def test_resume_without_a_store_is_a_usage_error(tmp_path, capsys):
    code = main(["run", str(SMALL), "--out", str(tmp_path), "--resume", "--quiet"])
    assert code == 2
    assert "--resume needs a store" in capsys.readouterr().err


def test_cli_store_and_workers_end_to_end(tmp_path, capsys):
    code = main(["run", str(SMALL), "--out", str(tmp_path / "out"), "--samples", "32",
                 "--store", str(tmp_path / "s.zarr"), "--workers", "2", "--quiet",
                 "--no-report"])
    assert code == 0
    assert "results:" in capsys.readouterr().out
    ds = xr.open_dataset(tmp_path / "out" / "results.nc")
    assert ds.attrs["sample_store"] == str(tmp_path / "s.zarr")
    ds.close()
