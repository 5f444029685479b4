"""The store never deletes what plyrisk did not write; its fingerprint lives as long as it does."""

from __future__ import annotations

import subprocess
import sys
import textwrap
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest
import xarray as xr

from plyrisk.pipeline.run import run_study
from plyrisk.propagate import store
from plyrisk.study.config import load_study

ROOT = Path(__file__).resolve().parents[2]
SMALL = ROOT / "configs" / "small_demo.toml"


def _small(samples: int = 16):
    study = load_study(SMALL)
    return replace(study, analysis=replace(study.analysis, samples=samples))


def _tree(path: Path) -> dict[str, bytes]:
    return {p.relative_to(path).as_posix(): p.read_bytes() for p in path.rglob("*")
            if p.is_file()}


def test_a_foreign_zarr_store_is_refused_and_left_as_it_was(tmp_path):
    import zarr

    theirs = tmp_path / "their.zarr"
    group = zarr.open_group(str(theirs), mode="w", zarr_format=3)
    group.create_array("measurements", shape=(4,), dtype="f8")[:] = [1.0, 2.0, 3.0, 4.0]
    group.attrs["owner"] = "a user's own dataset"
    before = _tree(theirs)
    for kwargs in ({}, {"overwrite": True}, {"resume": True}):
        with pytest.raises(store.StoreError, match=r"their.zarr: --store: holds something other "
                                                   r"than a plyrisk store \(a Zarr store that "
                                                   r"plyrisk did not write\)") as err:
            store.solve_to_store(_small(), theirs, chunk_size=100, quiet=True, **kwargs)
        assert "\n" not in str(err.value)
    assert _tree(theirs) == before


def test_a_plain_file_or_a_folder_with_other_files_is_refused(tmp_path):
    (tmp_path / "file").write_text("x")
    with pytest.raises(store.StoreError, match="not a folder"):
        store.store_state(tmp_path / "file")
    run_study(_small(), quiet=True, store=tmp_path / "s.zarr")
    (tmp_path / "s.zarr" / "notes.txt").write_text("mine")
    with pytest.raises(store.StoreError, match=r"a plyrisk store with other files in it "
                                               r"\(notes.txt\)"):
        store.solve_to_store(_small(), tmp_path / "s.zarr", overwrite=True, quiet=True)
    assert (tmp_path / "s.zarr" / "notes.txt").read_text() == "mine"


def test_resume_on_a_missing_store_is_an_error(tmp_path):
    with pytest.raises(store.StoreError, match="--resume: no store there to resume"):
        store.solve_to_store(_small(), tmp_path / "none.zarr", resume=True, quiet=True)
    assert not (tmp_path / "none.zarr").exists()
    with pytest.raises(store.StoreError, match="--resume: no store there to resume"), \
            store.store_lock(tmp_path / "none.zarr", resume=True):
        pass  # pragma: no cover
    assert not (tmp_path / "none.zarr").exists()


def test_an_existing_store_needs_resume_or_overwrite(tmp_path):
    path = tmp_path / "s.zarr"
    store.solve_to_store(_small(), path, chunk_size=100, quiet=True)
    with pytest.raises(store.StoreError, match=r"holds a plyrisk store \(of this study, 2 of 2 "
                                               r"chunks stored\); add --resume"):
        store.solve_to_store(_small(), path, chunk_size=100, quiet=True)
    rows = store.StoreReader(path).n_rows
    store.solve_to_store(_small(32), path, chunk_size=100, overwrite=True, quiet=True)
    assert store.StoreReader(path).n_rows == 2 * rows


def test_the_fingerprint_outlives_the_analysis_and_resume_redoes_only_the_analysis(
        tmp_path, monkeypatch):
    import zarr

    path = tmp_path / "s.zarr"
    first = run_study(_small(), quiet=True, store=path).dataset
    attrs = zarr.open_group(str(path), mode="r").attrs
    assert attrs["plyrisk_study"] == store.fingerprint(_small(), _small().analysis.chunk_size)
    assert "sobol_total" in xr.open_zarr(path, consolidated=False)
    solved = []
    real = store.store_chunk
    monkeypatch.setattr(store, "store_chunk", lambda *a, **k: solved.append(a[3]) or real(*a, **k))
    again = run_study(_small(), quiet=True, store=path, resume=True).dataset
    assert solved == []
    xr.testing.assert_identical(first, again)
    np.testing.assert_array_equal(
        xr.open_zarr(path, consolidated=False)["sobol_total"].values, first["sobol_total"].values)


def test_one_run_at_a_time_per_store(tmp_path):
    path = tmp_path / "s.zarr"
    holder = subprocess.Popen([sys.executable, "-c", textwrap.dedent(f"""
        import time
        from plyrisk.propagate.store import store_lock
        with store_lock({str(path)!r}):
            print("locked", flush=True)
            time.sleep(60)
    """)], stdout=subprocess.PIPE, text=True)
    try:
        assert holder.stdout.readline().strip() == "locked"
        with pytest.raises(store.StoreError,
                           match=rf"in use by another plyrisk run \(pid {holder.pid} on "), \
                store.store_lock(path):
            pass  # pragma: no cover
    finally:
        holder.kill()
        holder.wait()
    # A killed holder leaves its holder file; the lock is free and the folder still counts as
    # empty (the file is ours and is not mistaken for foreign content).
    assert store.store_state(path) == "empty"
    with store.store_lock(path):
        pass
    assert not (path / store.HOLDER_NAME).exists()
