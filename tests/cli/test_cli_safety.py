"""Nothing lost, nothing mixed up: kills at every stage, two runs at once, reruns, Ctrl-C.

The kills are real: ``stage_hook.py`` runs ``plyrisk`` in a subprocess that sends itself
SIGKILL (or waits for a SIGINT) at a chosen function call.
"""

from __future__ import annotations

import json
import os
import shlex
import signal
import subprocess
import sys
from pathlib import Path

import pytest
import xarray as xr

from plyrisk.cli import main
from plyrisk.results.files import LOCK_NAME, MANIFEST

ROOT = Path(__file__).resolve().parents[2]
SMALL = ROOT / "configs" / "small_demo.toml"
HOOK = Path(__file__).with_name("stage_hook.py")
ARGS = ["--samples", "16", "--chunk-size", "16", "--quiet"]  # 112 runs in 7 chunks


def one_line(err: str) -> str:
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    assert "Traceback" not in err
    return lines[0]


def _staged(action: str, target: str, nth: int, *argv: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, str(HOOK), action, target, str(nth), *argv],
                          capture_output=True, text=True, timeout=600)


def _snapshot(folder: Path) -> dict[str, bytes]:
    """Every file of ``folder`` except the lock and what a killed run left in its staging
    folder (plyrisk's own, removed by the next run)."""
    return {p.relative_to(folder).as_posix(): p.read_bytes() for p in folder.rglob("*")
            if p.is_file() and p.name != LOCK_NAME
            and not p.relative_to(folder).parts[0].startswith(".plyrisk-staging-")}


def _chunks_done(store: Path) -> int:
    import numpy as np
    import zarr

    return int(np.sum(zarr.open_group(str(store), mode="r")["chunk_done"][:]))


def _same_results(a: Path, b: Path) -> None:
    with xr.open_dataset(a) as x, xr.open_dataset(b) as y:
        xr.testing.assert_equal(x, y)  # every variable and coordinate, bit for bit
        assert x.attrs["seed"] == y.attrs["seed"]


@pytest.mark.slow
def test_a_kill_at_any_stage_keeps_the_earlier_result_and_a_resumable_store(tmp_path, capsys):
    ref, out, store = tmp_path / "ref", tmp_path / "out", tmp_path / "s.zarr"
    run = ["run", str(SMALL), "--out", str(out), "--store", str(store), *ARGS]
    # the uninterrupted result, and an earlier result of another seed in the folder
    assert main(["run", str(SMALL), "--out", str(ref), *ARGS]) == 0
    assert main(["run", str(SMALL), "--out", str(out), "--seed", "12", *ARGS]) == 0
    capsys.readouterr()
    earlier = _snapshot(out)
    # a rerun without --overwrite is refused before any computing
    assert main(run) == 2
    assert "holds an earlier plyrisk result (method saltelli, seed 12" in one_line(
        capsys.readouterr().err)
    assert not store.exists() and _snapshot(out) == earlier

    stages = [  # (what is killed, hook); each run resumes the store the previous one left
        ("solve", "kill", "plyrisk.propagate.store:store_chunk", 2),
        ("store write", "kill", "zarr:Array.__setitem__", 3),
        ("analysis", "kill", "plyrisk.analysis.study:analyse", 1),
        ("analysis stored", "kill-after", "plyrisk.pipeline.run:write_store_analysis", 1),
        ("results write", "kill-after", "plyrisk.results.dataset:write_results", 1),
    ]
    for k, (stage, action, target, nth) in enumerate(stages):
        argv = [*run, "--overwrite"] + (["--resume"] if k else [])
        run_ = _staged(action, target, nth, *argv)
        assert run_.returncode == -signal.SIGKILL, (stage, run_.stderr)
        assert _snapshot(out) == earlier, stage  # the earlier result, untouched
        done = _chunks_done(store)
        assert 0 < done or stage == "solve", stage
    assert done == 7  # the store was finished before the analysis stage
    # a kill in the middle of swapping the set: reported, and --overwrite recovers
    run_ = _staged("kill", "plyrisk.results.files:_fsync_dir", 2, *run, "--overwrite",
                   "--resume")
    assert run_.returncode == -signal.SIGKILL
    assert json.loads((out / MANIFEST).read_text())["state"] == "replacing"
    assert main([*run, "--resume"]) == 2
    assert "interrupted while replacing its files" in one_line(capsys.readouterr().err)
    assert main([*run, "--resume", "--overwrite"]) == 0
    capsys.readouterr()
    _same_results(out / "results.nc", ref / "results.nc")
    assert not [p for p in out.iterdir() if p.name.startswith(".plyrisk-staging")]
    files = {f["name"] for f in json.loads((out / MANIFEST).read_text())["files"]}
    assert files == set(_snapshot(out)) - {MANIFEST}  # every file listed, nothing left over
    # the same study again: up to date, nothing recomputed
    assert main([*run, "--resume"]) == 0
    text = capsys.readouterr().out
    assert text.startswith(f"{out}: up to date")
    assert "P(inner surface >" in text


@pytest.mark.slow
def test_two_runs_into_one_folder_and_ctrl_c(tmp_path):
    out, store = tmp_path / "out", tmp_path / "s.zarr"
    argv = ["run", str(SMALL), "--out", str(out), "--store", str(store), *ARGS]
    first = subprocess.Popen([sys.executable, str(HOOK), "pause",
                              "plyrisk.propagate.store:store_chunk", "3", *argv],
                             stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    try:
        assert first.stdout.readline().startswith("paused")
        second = subprocess.run([sys.executable, "-m", "plyrisk", *argv, "--seed", "5"],
                                capture_output=True, text=True, timeout=600)
        assert second.returncode == 2
        line = one_line(second.stderr)
        assert f"--out {out}: in use by another plyrisk run (pid {first.pid} on " in line
        assert (out / LOCK_NAME).is_file()  # the refused run leaves the first one's lock alone
        first.send_signal(signal.SIGINT)  # Ctrl-C while solving
        _, err = first.communicate(timeout=120)
    finally:
        first.kill()
    assert first.returncode == 130
    line = one_line(err)
    assert line.startswith(f"plyrisk: interrupted: nothing was written to {out}; the store "
                           f"{store} keeps every chunk solved so far: continue with plyrisk run ")
    assert _chunks_done(store) == 2
    assert not (out / MANIFEST).exists()
    command = shlex.split(line.split("continue with ", 1)[1])
    assert command[:2] == ["plyrisk", "run"] and "--resume" in command
    assert main(command[1:]) == 0
    assert _chunks_done(store) == 7
    assert not (out / LOCK_NAME).exists()  # the run that created it removed it


def test_seed_of_2_to_the_64_is_refused_before_computing(tmp_path, capsys):
    assert main(["run", str(SMALL), "--out", str(tmp_path / "o"), "--seed", str(2**64),
                 "--quiet"]) == 2
    assert "--seed must be a whole number from 0 to 2**64 - 1" in one_line(
        capsys.readouterr().err)
    assert not (tmp_path / "o").exists()
    config = tmp_path / "big_seed.toml"
    config.write_text(SMALL.read_text().replace("seed = 11", f"seed = {2**64}"))
    assert main(["check", str(config)]) == 2
    assert f"study.seed: must be at most {2**64 - 1}, got {2**64}" in one_line(
        capsys.readouterr().err)


def test_largest_seed_runs_and_is_stored(tmp_path, capsys):
    assert main(["run", str(SMALL), "--out", str(tmp_path), "--seed", str(2**64 - 1),
                 "--samples", "16", "--quiet", "--no-report"]) == 0
    with xr.open_dataset(tmp_path / "results.nc") as ds:
        assert int(ds.attrs["seed"]) == 2**64 - 1


def test_a_fifo_config_is_refused_at_once(tmp_path, capsys):
    fifo = tmp_path / "config.toml"
    os.mkfifo(fifo)
    assert main(["check", str(fifo)]) == 2
    assert "not a regular file" in one_line(capsys.readouterr().err)


def test_a_foreign_zarr_store_is_refused_and_untouched(tmp_path, capsys):
    import zarr

    theirs = tmp_path / "their.zarr"
    zarr.open_group(str(theirs), mode="w", zarr_format=3).attrs["owner"] = "someone"
    before = _snapshot(theirs)
    for extra in ([], ["--overwrite"]):
        assert main(["run", str(SMALL), "--out", str(tmp_path / "o"), "--store", str(theirs),
                     "--quiet", *extra]) == 2
        assert "holds something other than a plyrisk store" in one_line(
            capsys.readouterr().err)
    assert _snapshot(theirs) == before


def test_resume_on_a_missing_store_is_an_error(tmp_path, capsys):
    assert main(["run", str(SMALL), "--out", str(tmp_path / "o"), "--store",
                 str(tmp_path / "none.zarr"), "--resume", "--quiet"]) == 2
    assert "--resume: no store there to resume" in one_line(capsys.readouterr().err)
    assert not (tmp_path / "none.zarr").exists()


def test_foreign_files_in_the_folder_are_never_touched(tmp_path, capsys):
    (tmp_path / "report.html").write_text("my own report")
    argv = ["run", str(SMALL), "--out", str(tmp_path), "--samples", "16", "--quiet"]
    assert main(argv) == 2
    assert "report.html: exists and was not written by plyrisk" in one_line(
        capsys.readouterr().err)
    assert main([*argv, "--overwrite"]) == 2  # --overwrite never covers a foreign file
    capsys.readouterr()
    (tmp_path / "report.html").rename(tmp_path / "notes.html")
    assert main([*argv, "--seed", "3"]) == 0
    assert main([*argv, "--seed", "4", "--overwrite"]) == 0
    assert (tmp_path / "notes.html").read_text() == "my own report"
    assert not (tmp_path / LOCK_NAME).exists()
    with xr.open_dataset(tmp_path / "results.nc") as ds:
        assert int(ds.attrs["seed"]) == 4


def test_abbreviated_options_are_errors(tmp_path, capsys):
    assert main(["run", str(SMALL), "--out", str(tmp_path), "--sample", "512"]) == 2
    assert "unrecognized arguments: --sample 512" in one_line(capsys.readouterr().err)


def test_a_plain_line_per_phase_unless_quiet(tmp_path, capsys):
    assert main(["run", str(SMALL), "--out", str(tmp_path / "a"), "--samples", "16"]) == 0
    err = capsys.readouterr().err
    phases = [line for line in err.splitlines() if line.startswith("plyrisk: ")]
    assert phases == ["plyrisk: solving ...",
                      "plyrisk: analysis (percentiles, exceedance, sensitivity indices or "
                      "surrogate fit) ...",
                      "plyrisk: report: figures (png) ...",
                      "plyrisk: report: CSV tables, report.html, summary.md ..."]
    assert main(["run", str(SMALL), "--out", str(tmp_path / "b"), "--samples", "16",
                 "--quiet"]) == 0
    assert capsys.readouterr().err == ""


def test_a_bad_scheduler_address_fails_at_once_with_one_line(tmp_path, capsys):
    import time

    start = time.monotonic()
    assert main(["run", str(SMALL), "--out", str(tmp_path), "--samples", "16", "--quiet",
                 "--scheduler", "notanaddress"]) == 2
    line = one_line(capsys.readouterr().err)
    assert "--scheduler notanaddress: not a scheduler address" in line
    assert time.monotonic() - start < 60  # no 20 s client shutdown, no dask traceback
    assert not (tmp_path / "results.nc").exists()
