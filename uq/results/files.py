"""Safe output folders: atomic files, one writer per folder, a manifest, make-like reruns.

Every file plyrisk writes into an output folder is first written under a temporary name inside
that folder (a staging folder ``.plyrisk-staging-<pid>`` for a run's set of files, or a
``.<name>.plyrisk-tmp-<pid>`` file for a single one), flushed to disk and renamed into place
with :func:`os.replace`, so a reader sees either the earlier file or the complete new one,
never a truncated one.

A run's files are replaced as a set and described by :data:`MANIFEST`, written last: the
study's fingerprint, seed, method, plyrisk version and every file with its size and SHA-256.
The manifest is how plyrisk knows which files it wrote:

- a folder whose manifest holds the same fingerprint (and intact files) is *up to date*;
- a folder holding a different earlier result is refused unless ``overwrite`` is given, and
  then only the files of the earlier manifest are removed (each only if unchanged since);
- a file plyrisk did not write (not listed, or changed since) is never removed or overwritten:
  a name clash with one is refused, other foreign files stay where they are.

While the set is being swapped the manifest is marked ``"replacing"`` and lists both the new
and the earlier files; a run killed in that instant leaves a folder that is reported as
incomplete and can be replaced with ``overwrite``.

:func:`folder_lock` is an advisory lock (``fcntl.flock``) on :data:`LOCK_NAME` inside a folder:
a second plyrisk process that wants the same folder fails at once with one line naming the
holder (pid, host, start time). A run that created the lock file removes it when it lets go (still
holding the lock, so a run that opened it in the meantime sees it gone and tries again); a lock
file that was there before the run is left in place.
"""

from __future__ import annotations

import errno
import hashlib
import json
import os
import shutil
import socket
import time
from collections.abc import Iterable, Iterator, Mapping
from contextlib import contextmanager
from dataclasses import dataclass, field
from importlib import metadata
from pathlib import Path
from typing import Any

from plyrisk.errors import PlyriskError

MANIFEST = "plyrisk-manifest.json"
"""Name of the manifest of an output folder."""

LOCK_NAME = ".plyrisk-lock"
"""Name of the lock file inside a locked folder (removed at the end by the run that created it)."""

STAGING_PREFIX = ".plyrisk-staging-"
"""Prefix of the folder a run's files are written to before they are moved into place."""

TEMP_MARK = ".plyrisk-tmp-"
"""Part of the temporary name of a single file being written."""

MANIFEST_FORMAT = 1
"""Version of the manifest layout."""


class OutputError(PlyriskError, ValueError):
    """An output folder that cannot be written as asked (one line)."""


class FolderBusy(OutputError):
    """Another plyrisk process holds the folder's lock (one line naming the holder)."""


def plyrisk_version() -> str:
    """The installed plyrisk version."""
    try:
        return metadata.version("plyrisk")
    except metadata.PackageNotFoundError:  # pragma: no cover - a bare checkout
        return "unknown"


def fingerprint_of(parts: Mapping[str, Any]) -> str:
    """SHA-256 of everything that fixes a result (JSON of ``parts``, keys sorted).

    Examples
    --------
    >>> fingerprint_of({"seed": 1}) == fingerprint_of({"seed": 1})
    True
    >>> fingerprint_of({"seed": 1}) == fingerprint_of({"seed": 2})
    False
    """
    text = json.dumps(dict(parts), sort_keys=True, default=str)
    return hashlib.sha256(text.encode()).hexdigest()


# ----------------------------------------------------------------------------------------------
# Atomic single files
# ----------------------------------------------------------------------------------------------


def _fsync_dir(folder: Path) -> None:
    try:
        fd = os.open(folder, os.O_RDONLY)
    except OSError:  # pragma: no cover - platforms without directory handles
        return
    try:
        os.fsync(fd)
    except OSError:  # pragma: no cover - file systems that refuse it
        pass
    finally:
        os.close(fd)


def _fsync_file(path: Path) -> None:
    with open(path, "rb+") as fh:
        os.fsync(fh.fileno())


def temp_name(path: Path) -> Path:
    """The temporary name ``path`` is written under before the rename."""
    return path.with_name(f".{path.name}{TEMP_MARK}{os.getpid()}")


@contextmanager
def atomic_path(path: str | Path) -> Iterator[Path]:
    """Yield a temporary path beside ``path``; on success flush it and rename it into place.

    Whatever writes to the yielded path, ``path`` itself changes only at the rename: a reader
    (or a run killed half-way) sees the earlier file or the complete new one. On an exception
    the temporary file is removed and ``path`` is left as it was.

    Parameters
    ----------
    path
        The final file name.

    Examples
    --------
    >>> import tempfile
    >>> folder = Path(tempfile.mkdtemp())
    >>> with atomic_path(folder / "a.txt") as tmp:
    ...     _ = tmp.write_text("done")
    >>> (folder / "a.txt").read_text(), sorted(p.name for p in folder.iterdir())
    ('done', ['a.txt'])
    """
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    tmp = temp_name(path)
    try:
        yield tmp
        _fsync_file(tmp)
        os.replace(tmp, path)
    except BaseException:
        tmp.unlink(missing_ok=True)
        raise
    _fsync_dir(path.parent)


def atomic_write(path: str | Path, data: str | bytes) -> Path:
    """Write ``data`` (text as UTF-8) to ``path`` atomically; return ``path``."""
    path = Path(path)
    with atomic_path(path) as tmp:
        tmp.write_bytes(data.encode("utf-8") if isinstance(data, str) else data)
    return path


# ----------------------------------------------------------------------------------------------
# The lock
# ----------------------------------------------------------------------------------------------


def _describe_holder(text: str) -> str:
    try:
        h = json.loads(text)
        return f"pid {h['pid']} on {h['host']}, started {h['started']}"
    except (ValueError, KeyError, TypeError):
        return "holder unknown"


@contextmanager
def folder_lock(folder: str | Path, *, what: str = "output folder") -> Iterator[Path]:
    """Hold an advisory lock on ``folder`` (created if missing) for the ``with`` block.

    Parameters
    ----------
    folder
        The folder to lock; the lock file :data:`LOCK_NAME` is created inside it.
    what
        How the folder is named in the error ("output folder", "--out").

    Raises
    ------
    FolderBusy
        At once when another process holds the lock: one line naming its pid, host and start
        time.
    OutputError
        When the folder cannot be created or written.

    Notes
    -----
    The lock file is removed at the end only when this call created it, and while the lock is
    still held. A process that opened the file before it was removed and locks it afterwards
    holds a lock on a file no longer in the folder: it compares the file it locked with the one
    at :data:`LOCK_NAME` (device and inode) and starts again on a mismatch, so two runs never
    hold the folder at once. A lock file found in place (another run's, or one left by a killed
    run) is used and left there.

    Examples
    --------
    >>> import tempfile
    >>> folder = Path(tempfile.mkdtemp())
    >>> with folder_lock(folder):
    ...     (folder / LOCK_NAME).is_file()
    True
    >>> (folder / LOCK_NAME).exists()
    False
    """
    import fcntl

    folder = Path(folder)
    path = folder / LOCK_NAME
    while True:
        try:
            folder.mkdir(parents=True, exist_ok=True)
            fh, created = _open_lock_file(path)  # held to the end
        except OSError as err:
            raise OutputError(f"{what} {folder}: cannot write there ({err.strerror or err})"
                              ) from None
        try:
            fcntl.flock(fh.fileno(), fcntl.LOCK_EX | fcntl.LOCK_NB)
        except OSError as err:
            fh.seek(0)
            holder = _describe_holder(fh.read())
            fh.close()
            if err.errno not in (errno.EWOULDBLOCK, errno.EACCES, errno.EAGAIN):
                raise OutputError(f"{what} {folder}: cannot lock it ({err.strerror or err})"
                                  ) from None
            raise FolderBusy(f"{what} {folder}: in use by another plyrisk run ({holder}); wait "
                             "for it to finish or choose another folder") from None
        if _same_file(fh, path):
            break
        fh.close()  # locked a lock file its run removed meanwhile: start again
    try:
        fh.seek(0)
        fh.truncate()
        fh.write(json.dumps({"pid": os.getpid(), "host": socket.gethostname(),
                             "started": time.strftime("%Y-%m-%d %H:%M:%S %Z")}))
        fh.flush()
        try:
            yield folder
        finally:
            fh.seek(0)
            fh.truncate()
            fh.flush()
            if created and _same_file(fh, path):
                path.unlink(missing_ok=True)  # still locked: see the Notes
            fcntl.flock(fh.fileno(), fcntl.LOCK_UN)
    finally:
        fh.close()


def _open_lock_file(path: Path) -> tuple[Any, bool]:
    """The lock file opened for reading and writing, and whether this call created it."""
    while True:
        try:
            fd = os.open(path, os.O_RDWR | os.O_CREAT | os.O_EXCL, 0o666)
            created = True
        except FileExistsError:
            try:
                fd = os.open(path, os.O_RDWR)
            except FileNotFoundError:  # its run removed it in between: create it
                continue
            created = False
        return os.fdopen(fd, "r+", encoding="utf-8"), created


def _same_file(fh: Any, path: Path) -> bool:
    """Whether the open file ``fh`` is the file now at ``path``."""
    try:
        here = os.stat(path)
    except FileNotFoundError:
        return False
    mine = os.fstat(fh.fileno())
    return (here.st_dev, here.st_ino) == (mine.st_dev, mine.st_ino)


# ----------------------------------------------------------------------------------------------
# The manifest
# ----------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class FileEntry:
    """One file of a manifest: path relative to the folder, size [B] and SHA-256."""

    name: str
    size: int
    sha256: str


@dataclass(frozen=True)
class Manifest:
    """What a folder's :data:`MANIFEST` says about the result in it.

    Attributes
    ----------
    fingerprint
        Digest of everything that fixes the result (config, seed, samples, method, version)
       ; empty when unknown (e.g. a report written from a results file).
    seed, method, config, version, created
        Provenance of the result.
    state
        ``"complete"``, or ``"replacing"`` while (or when a run was killed while) the set was
        being swapped.
    files
        The result's files.
    earlier
        While replacing: the earlier set's files, which may still be there.
    details
        Further facts about the result (e.g. whether a report was written).
    """

    fingerprint: str
    seed: int | None
    method: str
    config: str
    version: str
    created: str
    state: str = "complete"
    files: tuple[FileEntry, ...] = ()
    earlier: tuple[FileEntry, ...] = ()
    details: Mapping[str, Any] = field(default_factory=dict)

    @property
    def names(self) -> set[str]:
        """Every file name the manifest vouches for (the new and, while replacing, the
        earlier set)."""
        return {f.name for f in (*self.files, *self.earlier)}

    def describe(self) -> str:
        """A short description for messages."""
        seed = "" if self.seed is None else f", seed {self.seed}"
        return f"method {self.method or 'unknown'}{seed}, written {self.created}"

    def to_json(self) -> str:
        """The manifest as JSON text."""
        d = {"plyrisk_manifest": MANIFEST_FORMAT, "state": self.state,
             "fingerprint": self.fingerprint, "seed": self.seed, "method": self.method,
             "config": self.config, "plyrisk_version": self.version, "created": self.created,
             "details": dict(self.details),
             "files": [vars(f) for f in self.files]}
        if self.earlier:
            d["earlier_files"] = [vars(f) for f in self.earlier]
        return json.dumps(d, indent=1) + "\n"


def read_manifest(folder: str | Path) -> Manifest | None:
    """The manifest of ``folder``, or ``None`` when it has none.

    Raises
    ------
    OutputError
        When the manifest cannot be read (one line).
    """
    path = Path(folder) / MANIFEST
    if not path.exists():
        return None
    try:
        d = json.loads(path.read_text(encoding="utf-8"))
        if d.get("plyrisk_manifest") != MANIFEST_FORMAT:
            raise ValueError(f"unknown manifest format {d.get('plyrisk_manifest')!r}")

        def entries(key):
            return tuple(FileEntry(str(f["name"]), int(f["size"]), str(f["sha256"]))
                         for f in d.get(key, []))

        return Manifest(str(d["fingerprint"]), d.get("seed"), str(d.get("method", "")),
                        str(d.get("config", "")), str(d.get("plyrisk_version", "")),
                        str(d.get("created", "")), str(d["state"]), entries("files"),
                        entries("earlier_files"), dict(d.get("details", {})))
    except (OSError, ValueError, KeyError, TypeError) as err:
        raise OutputError(f"{path}: not a readable plyrisk manifest ({err}); move the folder's "
                          "files away or choose another folder") from None


def _sha256(path: Path) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


def _entry(root: Path, path: Path) -> FileEntry:
    return FileEntry(path.relative_to(root).as_posix(), path.stat().st_size, _sha256(path))


def _unchanged(folder: Path, entries: Iterable[FileEntry]) -> bool:
    """Whether the file each entry names is there with the recorded size and hash."""
    by_name: dict[str, set[tuple[int, str]]] = {}
    for e in entries:
        by_name.setdefault(e.name, set()).add((e.size, e.sha256))
    for name, allowed in by_name.items():
        p = folder / name
        if not p.is_file() or p.is_symlink():
            return False
        size = p.stat().st_size
        if not any(size == s for s, _ in allowed) or _sha256(p) not in {h for _, h in allowed}:
            return False
    return True


# ----------------------------------------------------------------------------------------------
# A run's set of files
# ----------------------------------------------------------------------------------------------


def clear_stale(folder: str | Path) -> None:
    """Remove staging folders and temporary files that killed plyrisk runs left in ``folder``.

    Only names plyrisk gives its own temporary files are touched; call it holding the folder's
    lock (no other run can be writing them then).
    """
    folder = Path(folder)
    if not folder.is_dir():
        return
    for p in folder.iterdir():
        if p.name.startswith(STAGING_PREFIX) and p.is_dir() and not p.is_symlink():
            shutil.rmtree(p)
    for parent in (folder, folder / "figures"):
        if parent.is_dir():
            for p in parent.iterdir():
                if p.name.startswith(".") and TEMP_MARK in p.name and p.is_file():
                    p.unlink()


@dataclass(frozen=True)
class Decision:
    """What to do with an output folder: ``up_to_date`` (with the manifest) or write."""

    up_to_date: bool
    manifest: Manifest | None
    keep_earlier: bool = False
    """The earlier set holds no study result (e.g. only a tolerance table written by
    ``plyrisk tolerances`` into a fresh folder): the run adds to it instead of replacing it."""


def decide(folder: str | Path, *, fingerprint: str, overwrite: bool,
           names: Iterable[str] = (), needs: Mapping[str, Any] | None = None) -> Decision:
    """Decide whether a run into ``folder`` is up to date, may write, or is refused.

    Call it holding :func:`folder_lock`.

    Parameters
    ----------
    folder
        The output folder.
    fingerprint
        The new result's fingerprint.
    overwrite
        Replace an earlier, different result (its listed files only).
    names
        File names the run will write, relative to the folder, checked now for clashes with
        files plyrisk did not write.
    needs
        Details the earlier result must have to count as up to date (e.g. ``{"report":
        True}``).

    Returns
    -------
    Decision

    Raises
    ------
    OutputError
        One line: an earlier different result without ``overwrite``, an interrupted
        replacement without ``overwrite``, a changed file of the earlier result, or a clash
        with a file plyrisk did not write.
    """
    folder = Path(folder)
    clear_stale(folder)
    m = read_manifest(folder)
    if m is not None:
        complete = m.state == "complete"
        same = complete and m.fingerprint == fingerprint
        intact = complete and _unchanged(folder, m.files)
        if (same and intact and not overwrite
                and all(m.details.get(k) == v for k, v in (needs or {}).items())):
            return Decision(True, m)  # --overwrite recomputes even an up-to-date result
        if complete and not m.fingerprint:  # files of ours but no result: add to them
            _refuse_changed(folder, m)
            _refuse_foreign(folder, names, m)
            return Decision(False, m, keep_earlier=True)
        if not complete and not overwrite:
            raise OutputError(f"{folder}: an earlier run was interrupted while replacing "
                              f"its files ({MANIFEST} is marked incomplete); add "
                              "--overwrite to replace them, or choose another folder")
        if complete and not (same and intact) and not overwrite:
            why = ("the same study, but its files changed since" if same
                   else "a different study, seed, sample count, method or plyrisk version")
            raise OutputError(f"{folder}: holds an earlier plyrisk result ({m.describe()}; "
                              f"{why}); add --overwrite to replace it (only the files its "
                              f"{MANIFEST} lists are removed), or choose another folder")
        _refuse_changed(folder, m)
    _refuse_foreign(folder, names, m)
    return Decision(False, m)


def decide_update(folder: str | Path, *, fingerprint: str,
                  names: Iterable[str] = ()) -> Manifest | None:
    """Check that files may be added to ``folder``'s result (a report, a tolerance table).

    Call it holding :func:`folder_lock`; commit with ``OutputSet(..., keep_earlier=True)``.

    Parameters
    ----------
    folder
        The output folder.
    fingerprint
        Fingerprint of the result the new files belong to; ``""`` when unknown.
    names
        File names to be written, checked for clashes with files plyrisk did not write.

    Returns
    -------
    Manifest or None
        The folder's manifest.

    Raises
    ------
    OutputError
        One line: an interrupted replacement, a folder holding another study's result, a
        changed or foreign file in the way.
    """
    folder = Path(folder)
    clear_stale(folder)
    m = read_manifest(folder)
    if m is not None:
        if m.state != "complete":
            raise OutputError(f"{folder}: an earlier run was interrupted while replacing its "
                              f"files ({MANIFEST} is marked incomplete); run it again with "
                              "--overwrite, or choose another folder")
        if fingerprint and m.fingerprint and m.fingerprint != fingerprint:
            raise OutputError(f"{folder}: holds the result of another study ({m.describe()}); "
                              "write into another folder")
        for name in set(names) & m.names:
            if (folder / name).exists() and not _unchanged(
                    folder, [e for e in m.files if e.name == name]):
                raise OutputError(f"{folder / name}: changed since plyrisk wrote it, so plyrisk "
                                  "will not replace it; move it away first")
    _refuse_foreign(folder, names, m)
    return m


def _refuse_changed(folder: Path, m: Manifest) -> None:
    """Refuse to remove a file of the earlier result that changed since plyrisk wrote it."""
    for name in sorted(m.names):
        p = folder / name
        if p.exists() and not _unchanged(folder, [e for e in (*m.files, *m.earlier)
                                                  if e.name == name]):
            raise OutputError(f"{p}: changed since plyrisk wrote it, so plyrisk will not "
                              "remove or replace it; move it away first")


def _refuse_foreign(folder: Path, names: Iterable[str], m: Manifest | None) -> None:
    """Refuse to write over a file plyrisk did not write."""
    ours = m.names if m is not None else set()
    for name in sorted(set(names)):
        p = folder / name
        if (p.exists() or p.is_symlink()) and name not in ours:
            raise OutputError(f"{p}: exists and was not written by plyrisk (no {MANIFEST} "
                              "lists it); move it away or choose another folder")


class OutputSet:
    """A run's files, staged in the folder and swapped in as one set with :meth:`commit`.

    Use it holding :func:`folder_lock` after :func:`decide`. Writers write into
    :attr:`staging` under the final relative names; nothing in the folder changes before
    :meth:`commit`. :meth:`discard` (also on leaving a ``with`` block by an exception) removes
    the staging folder.

    Parameters
    ----------
    folder
        The output folder.
    earlier
        The folder's manifest before the run (from :func:`decide`).
    keep_earlier
        Keep the earlier set's files that the new set does not replace (an update such as a
        report added to a run's results); otherwise they are removed.
    """

    def __init__(self, folder: str | Path, earlier: Manifest | None, *,
                 keep_earlier: bool = False) -> None:
        self.folder = Path(folder)
        self.earlier = earlier
        self.keep_earlier = keep_earlier
        self.staging = self.folder / f"{STAGING_PREFIX}{os.getpid()}"
        if self.staging.exists():
            shutil.rmtree(self.staging)
        self.staging.mkdir(parents=True)

    def __enter__(self) -> OutputSet:
        return self

    def __exit__(self, kind, value, tb) -> None:
        self.discard()

    def discard(self) -> None:
        """Remove the staging folder (nothing in the folder itself changes)."""
        if self.staging.exists():
            shutil.rmtree(self.staging)

    def staged(self) -> list[Path]:
        """Every staged file."""
        return sorted(p for p in self.staging.rglob("*") if p.is_file())

    def commit(self, *, fingerprint: str, seed: int | None, method: str, config: str,
               details: Mapping[str, Any] | None = None) -> Manifest:
        """Move the staged files into place, remove the earlier set's other files, and write
        the manifest last.

        Parameters
        ----------
        fingerprint, seed, method, config
            Provenance of the new result.
        details
            Further facts recorded in the manifest.

        Returns
        -------
        Manifest
            The manifest written.

        Raises
        ------
        OutputError
            When a staged name clashes with a file plyrisk did not write (nothing changed).
        """
        staged = self.staged()
        new = [_entry(self.staging, p) for p in staged]
        _refuse_foreign(self.folder, [e.name for e in new], self.earlier)
        old = list(self.earlier.files + self.earlier.earlier) if self.earlier else []
        new_names = {e.name for e in new}
        if self.keep_earlier and self.earlier is not None:
            kept = [e for e in self.earlier.files if e.name not in new_names]
        else:
            kept = []
        info: dict[str, Any] = dict(fingerprint=fingerprint, seed=seed, method=method,
                                    config=config,
                    version=plyrisk_version(), created=time.strftime("%Y-%m-%d %H:%M:%S %Z"),
                    details=dict(details or {}))
        if self.keep_earlier and self.earlier is not None:
            was = self.earlier
            info.update(fingerprint=was.fingerprint or fingerprint,
                        seed=was.seed if was.seed is not None else seed,
                        method=was.method or method, config=was.config or config,
                        details={**was.details, **info["details"]})
        for p in staged:
            _fsync_file(p)
        # 1. the manifest says: replacing, these files (new and earlier) are plyrisk's
        atomic_write(self.folder / MANIFEST, Manifest(
            **info, state="replacing", files=tuple(new + kept), earlier=tuple(old)).to_json())
        # 2. the earlier files that the new set does not replace or keep
        keep = new_names | {e.name for e in kept}
        for e in old:
            if e.name not in keep:
                (self.folder / e.name).unlink(missing_ok=True)
                _remove_if_empty(self.folder, (self.folder / e.name).parent)
        # 3. the new files, each renamed into place
        folders = set()
        for p, e in zip(staged, new, strict=True):
            target = self.folder / e.name
            target.parent.mkdir(parents=True, exist_ok=True)
            os.replace(p, target)
            folders.add(target.parent)
        for f in folders:
            _fsync_dir(f)
        # 4. the manifest, last
        final = Manifest(**info, state="complete", files=tuple(sorted(
            new + kept, key=lambda x: x.name)))
        atomic_write(self.folder / MANIFEST, final.to_json())
        self.discard()
        return final


def _remove_if_empty(root: Path, folder: Path) -> None:
    """Remove a subfolder the earlier set used once it is empty (never ``root`` itself)."""
    while folder != root and root in folder.parents:
        try:
            folder.rmdir()
        except OSError:  # not empty, or gone
            return
        folder = folder.parent
