"""Safe output folders: atomic files, the lock (two real processes), manifest and rerun policy."""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest

from plyrisk.results import files
from plyrisk.results.files import (
    MANIFEST,
    FolderBusy,
    OutputError,
    OutputSet,
    atomic_path,
    atomic_write,
    decide,
    folder_lock,
    read_manifest,
)


def _write_set(folder: Path, contents: dict[str, str], *, fingerprint: str = "a",
               keep_earlier: bool = False, overwrite: bool = False):
    decision = decide(folder, fingerprint=fingerprint, overwrite=overwrite, names=contents)
    with OutputSet(folder, decision.manifest, keep_earlier=keep_earlier) as out:
        for name, text in contents.items():
            (out.staging / name).parent.mkdir(parents=True, exist_ok=True)
            (out.staging / name).write_text(text)
        return out.commit(fingerprint=fingerprint, seed=1, method="saltelli", config="x.toml",
                          details={"report": True})


def test_atomic_write_replaces_whole_files_and_leaves_no_temporaries(tmp_path):
    target = tmp_path / "results.nc"
    atomic_write(target, "old")
    with pytest.raises(RuntimeError), atomic_path(target) as tmp:
        tmp.write_text("half")
        raise RuntimeError("killed half-way")
    assert target.read_text() == "old"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["results.nc"]


def test_a_killed_writer_leaves_the_earlier_file(tmp_path):
    """A real process killed by SIGKILL in the middle of a write: the earlier file is whole."""
    target = tmp_path / "results.nc"
    atomic_write(target, "earlier result")
    code = textwrap.dedent(f"""
        import os, signal
        from plyrisk.results.files import atomic_path
        with atomic_path({str(target)!r}) as tmp:
            with open(tmp, "w") as fh:
                fh.write("partial")
                fh.flush()
                os.kill(os.getpid(), signal.SIGKILL)
    """)
    run = subprocess.run([sys.executable, "-c", code], capture_output=True)
    assert run.returncode == -signal.SIGKILL
    assert target.read_text() == "earlier result"
    files.clear_stale(tmp_path)  # the temporary name of the killed writer is plyrisk's own
    assert sorted(p.name for p in tmp_path.iterdir()) == ["results.nc"]


def test_a_second_process_is_refused_at_once_naming_the_holder(tmp_path):
    holder = subprocess.Popen(
        [sys.executable, "-c", textwrap.dedent(f"""
            import sys, time
            from plyrisk.results.files import folder_lock
            with folder_lock({str(tmp_path)!r}):
                print("locked", flush=True)
                time.sleep(60)
        """)], stdout=subprocess.PIPE, text=True)
    try:
        assert holder.stdout.readline().strip() == "locked"
        with pytest.raises(FolderBusy, match=rf"in use by another plyrisk run \(pid "
                                             rf"{holder.pid} on .*, started .*\)") as err:
            with folder_lock(tmp_path):
                pass  # pragma: no cover
        assert "\n" not in str(err.value)
    finally:
        holder.kill()
        holder.wait()
    with folder_lock(tmp_path):  # released when the holder died
        pass


def test_the_lock_file_a_run_created_is_removed_at_the_end(tmp_path):
    folder = tmp_path / "out"
    with folder_lock(folder):
        assert (folder / files.LOCK_NAME).is_file()
        (folder / "results.nc").write_text("r")
    assert sorted(p.name for p in folder.iterdir()) == ["results.nc"]


def test_a_lock_file_found_in_place_is_left_there(tmp_path):
    # plyrisk did not create it in this run (an older run's, or a killed run's): never removed
    (tmp_path / files.LOCK_NAME).write_text("")
    with folder_lock(tmp_path):
        pass
    assert (tmp_path / files.LOCK_NAME).is_file()


def test_a_run_that_locked_a_removed_lock_file_starts_again_and_is_refused(tmp_path,
                                                                        monkeypatch):
    # B opens the lock file of run A, A ends (removes the file, then unlocks), C creates and
    # locks a new one; B's lock on A's removed file must not let B in beside C.
    with folder_lock(tmp_path):
        stale, created = files._open_lock_file(tmp_path / files.LOCK_NAME)  # B, before A ends
    assert not created and not (tmp_path / files.LOCK_NAME).exists()
    opened = []
    real = files._open_lock_file

    def stale_first(path):
        opened.append(path)
        return (stale, False) if len(opened) == 1 else real(path)

    with folder_lock(tmp_path):  # C
        monkeypatch.setattr(files, "_open_lock_file", stale_first)
        with pytest.raises(FolderBusy, match="in use by another plyrisk run"):
            with folder_lock(tmp_path):  # B
                pass  # pragma: no cover
        monkeypatch.setattr(files, "_open_lock_file", real)
        assert len(opened) == 2 and stale.closed
        assert (tmp_path / files.LOCK_NAME).is_file()  # C's, untouched by B
    assert not (tmp_path / files.LOCK_NAME).exists()


def test_manifest_lists_the_set_with_sizes_and_hashes(tmp_path):
    m = _write_set(tmp_path, {"results.nc": "r", "figures/a.png": "png"})
    on_disk = json.loads((tmp_path / MANIFEST).read_text())
    assert on_disk["state"] == "complete"
    assert [f["name"] for f in on_disk["files"]] == ["figures/a.png", "results.nc"]
    assert on_disk["files"][1]["size"] == 1
    assert on_disk["seed"] == 1 and on_disk["method"] == "saltelli"
    assert read_manifest(tmp_path) == m
    assert not any(p.name.startswith(files.STAGING_PREFIX) for p in tmp_path.iterdir())


def test_same_fingerprint_is_up_to_date(tmp_path):
    _write_set(tmp_path, {"results.nc": "r"})
    assert decide(tmp_path, fingerprint="a", overwrite=False).up_to_date
    # --overwrite recomputes even an up-to-date result (the message of 'run' says so)
    assert not decide(tmp_path, fingerprint="a", overwrite=True).up_to_date
    assert not decide(tmp_path, fingerprint="a", overwrite=False,
                      needs={"report": False}).up_to_date
    (tmp_path / "results.nc").write_text("edited by hand")
    with pytest.raises(OutputError, match="files changed since"):
        decide(tmp_path, fingerprint="a", overwrite=False)


def test_a_different_result_needs_overwrite_which_removes_only_listed_files(tmp_path):
    _write_set(tmp_path, {"results.nc": "r", "figures/old.png": "x"})
    (tmp_path / "mine.txt").write_text("a user's file")
    (tmp_path / "figures" / "notes.txt").write_text("a user's note")
    with pytest.raises(OutputError, match=r"holds an earlier plyrisk result \(method saltelli, "
                                          r"seed 1, .*add --overwrite"):
        decide(tmp_path, fingerprint="b", overwrite=False)
    _write_set(tmp_path, {"results.nc": "new"}, fingerprint="b", overwrite=True)
    assert (tmp_path / "results.nc").read_text() == "new"
    assert not (tmp_path / "figures" / "old.png").exists()
    assert (tmp_path / "mine.txt").read_text() == "a user's file"
    assert (tmp_path / "figures" / "notes.txt").read_text() == "a user's note"
    assert [f.name for f in read_manifest(tmp_path).files] == ["results.nc"]


def test_a_foreign_file_is_never_written_over(tmp_path):
    (tmp_path / "report.html").write_text("a user's own report")
    with pytest.raises(OutputError, match=r"report.html: exists and was not written by plyrisk"):
        decide(tmp_path, fingerprint="a", overwrite=True, names=["report.html"])
    decision = decide(tmp_path, fingerprint="a", overwrite=True, names=["results.nc"])
    with OutputSet(tmp_path, decision.manifest) as out, \
            pytest.raises(OutputError, match="report.html: exists and was not written"):
        (out.staging / "report.html").write_text("ours")
        out.commit(fingerprint="a", seed=1, method="pce", config="x")
    assert (tmp_path / "report.html").read_text() == "a user's own report"
    assert not (tmp_path / MANIFEST).exists()


def test_a_changed_file_of_the_earlier_set_is_not_removed(tmp_path):
    _write_set(tmp_path, {"results.nc": "r", "summary.md": "s"})
    (tmp_path / "summary.md").write_text("my edits")
    with pytest.raises(OutputError, match=r"summary.md: changed since plyrisk wrote it"):
        decide(tmp_path, fingerprint="b", overwrite=True)
    assert (tmp_path / "summary.md").read_text() == "my edits"


def test_an_update_keeps_the_earlier_files(tmp_path):
    _write_set(tmp_path, {"results.nc": "r"})
    m = _write_set(tmp_path, {"report.html": "h"}, keep_earlier=True)
    assert [f.name for f in m.files] == ["report.html", "results.nc"]
    assert (tmp_path / "results.nc").read_text() == "r"


def test_a_kill_while_replacing_is_reported_and_overwrite_recovers(tmp_path, monkeypatch):
    _write_set(tmp_path, {"results.nc": "old", "figures/a.png": "a"})
    calls = []
    real = os.replace

    def dies_after_one(src, dst):
        if Path(dst).name != MANIFEST and calls:
            raise KeyboardInterrupt  # a kill between two renames
        calls.append(dst)
        real(src, dst)

    monkeypatch.setattr(files.os, "replace", dies_after_one)
    with pytest.raises(KeyboardInterrupt):
        _write_set(tmp_path, {"results.nc": "new", "figures/b.png": "b", "figures/c.png": "c"},
                   fingerprint="b", overwrite=True)
    monkeypatch.setattr(files.os, "replace", real)
    assert read_manifest(tmp_path).state == "replacing"
    with pytest.raises(OutputError, match="interrupted while replacing"):
        decide(tmp_path, fingerprint="b", overwrite=False)
    _write_set(tmp_path, {"results.nc": "new", "figures/b.png": "b", "figures/c.png": "c"},
               fingerprint="b", overwrite=True)
    assert sorted(p.relative_to(tmp_path).as_posix() for p in tmp_path.rglob("*")
                  if p.is_file() and p.name != files.LOCK_NAME) == [
        "figures/b.png", "figures/c.png", MANIFEST, "results.nc"]


def test_unreadable_manifest_is_one_line(tmp_path):
    (tmp_path / MANIFEST).write_text("{not json")
    with pytest.raises(OutputError, match="not a readable plyrisk manifest") as err:
        decide(tmp_path, fingerprint="a", overwrite=True)
    assert "\n" not in str(err.value)
