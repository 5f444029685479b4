"""Out-of-core results: a Zarr store filled chunk by chunk, resumable.

The store is laid out as the results dataset (``xarray.open_zarr`` opens it): per-sample
variables ``input``, ``sample_block`` and every model output with dimensions as in
``results.nc``, chunked along ``sample`` by the study's chunk size, so each task writes whole
Zarr chunks of its own and no two writers touch one chunk. After its region is written a task
sets its entry of ``chunk_done`` (one Zarr chunk per entry); a killed run leaves the entries of
unfinished chunks unset and :func:`open_store` with ``resume=True`` solves only those again.

The store's ``plyrisk_study`` attribute is a fingerprint of everything that fixes the values
(config text, method, samples, seed, chunk size, plyrisk version), kept for the store's life
(also after the analysis is added); resuming a store written for anything else is refused, so a
resumed run always equals an uninterrupted one.

Safety rules (:func:`store_state`, :func:`open_store`, :func:`store_lock`):

- a path holding anything other than a plyrisk store (a file, a foreign Zarr store, a folder
  with other files) is refused; plyrisk never writes into it nor removes it;
- an existing plyrisk store is continued only with ``resume`` and replaced only with
  ``overwrite`` (then only its own Zarr nodes are removed);
- ``resume`` on a missing store is an error; on a finished store nothing is solved again;
- one run at a time: the store's folder is locked (``fcntl.flock`` on the folder itself).
"""

from __future__ import annotations

import hashlib
import json
import os
import shutil
import socket
import time
from contextlib import contextmanager
from dataclasses import dataclass, replace
from importlib import metadata
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from plyrisk.design.sampling import Design, DesignPlan
from plyrisk.errors import PlyriskError
from plyrisk.models.network import NETWORK_OUTPUTS
from plyrisk.models.outputs import OutputSpec
from plyrisk.propagate.compute import run_tasks
from plyrisk.propagate.evaluate import (
    Outputs,
    Propagation,
    _evaluate_block,
    output_table,
    progress_bar,
    scenario_count,
    solution_labels,
    study_plan,
    unit_to_inputs,
)

STORE_MARK = "plyrisk_store"
"""Root attribute that marks a Zarr group as a plyrisk store (value: layout version) [-]."""

STORE_OWN_ATTRS = (STORE_MARK, "plyrisk_study", "chunk_size", "evaluations", "interface_names",
                   "element_names", "element_kinds", "element_layers", "inner_surface_index",
                   "output_names", "study_kind")
"""Root attributes of a store itself, kept for the store's life whatever the analysis adds:
the fingerprint above all, so that a finished store can be resumed [-]."""
if TYPE_CHECKING:  # pragma: no cover - for type checkers only
    from plyrisk.study.definition import Study

COMPRESSION = {"cname": "lz4", "clevel": 1, "shuffle": "shuffle"}
"""Blosc settings of every stored array: on the demo outputs about 1.7 x faster to write than
zarr's default zstd and slightly smaller (measured here) [-]."""


class StoreError(PlyriskError, ValueError):
    """A store that cannot be used for this study (one line)."""


HOLDER_NAME = ".plyrisk-holder"
"""File inside a store naming the run that holds its lock (pid, host, start); written when the
lock is taken, removed when it is released, and ignored when judging what a folder holds [-]."""


def _node_kind(folder: Path) -> str | None:
    """``node_type`` of the Zarr v3 node in ``folder`` (``None`` when it is not one)."""
    try:
        meta = json.loads((folder / "zarr.json").read_text(encoding="utf-8"))
        return str(meta.get("node_type")) if meta.get("zarr_format") == 3 else None
    except (OSError, ValueError, AttributeError):
        return None


def store_state(path: str | Path) -> str:
    """What is at a store path: ``"missing"``, ``"empty"`` (an empty folder) or
    ``"plyrisk"``.

    Raises
    ------
    StoreError
        One line when the path holds anything else (a file, a foreign Zarr store, a folder
        with other content): plyrisk neither writes into it nor removes it.
    """
    path = Path(path)
    if not path.exists() and not path.is_symlink():
        return "missing"
    if not path.is_dir() or path.is_symlink():
        raise StoreError(f"{path}: --store: not a folder; give a new path for the store")
    entries = [p for p in path.iterdir() if p.name != HOLDER_NAME]
    if not entries:
        return "empty"
    why = ""
    if _node_kind(path) != "group":
        why = "no Zarr v3 group there"
    else:
        try:
            attrs = json.loads((path / "zarr.json").read_text(encoding="utf-8"))["attributes"]
        except (OSError, ValueError, KeyError, TypeError):
            attrs = {}
        if STORE_MARK not in attrs or "plyrisk_study" not in attrs:
            why = "a Zarr store that plyrisk did not write"
        else:
            other = [p.name for p in entries if p.name != "zarr.json"
                     and not (p.is_dir() and not p.is_symlink() and _node_kind(p) is not None)]
            if other:
                why = f"a plyrisk store with other files in it ({', '.join(sorted(other)[:3])})"
    if why:
        raise StoreError(f"{path}: --store: holds something other than a plyrisk store ({why}); "
                         "plyrisk will not write into it or remove it: give a new path")
    return "plyrisk"


def _remove_store(path: Path) -> None:
    """Remove a plyrisk store's own nodes (checked by :func:`store_state`) and its folder."""
    for p in path.iterdir():
        if p.is_dir() and _node_kind(p) is not None:
            shutil.rmtree(p)
    (path / "zarr.json").unlink(missing_ok=True)


def _store_holder(path: Path) -> str:
    """'pid N on HOST, started T' from a store's holder file, or 'holder unknown'."""
    try:
        h = json.loads((path / HOLDER_NAME).read_text(encoding="utf-8"))
        return f"pid {h['pid']} on {h['host']}, started {h['started']}"
    except (OSError, ValueError, KeyError, TypeError):
        return "holder unknown"


@contextmanager
def store_lock(path: str | Path, *, resume: bool = False):
    """Hold the store folder's lock (created when missing and not ``resume``).

    Raises
    ------
    StoreError
        ``resume`` on a missing store, a path that is not a plyrisk store, or a store that
        another plyrisk run is using (one line).
    """
    import errno
    import fcntl

    path = Path(path)
    state = store_state(path)
    if resume and state in ("missing", "empty"):
        raise StoreError(f"{path}: --resume: no store there to resume; drop --resume to start "
                         "a new one")
    try:
        path.mkdir(parents=True, exist_ok=True)
        fd = os.open(path, os.O_RDONLY)
    except OSError as err:
        raise StoreError(f"{path}: --store: cannot create or open it "
                         f"({err.strerror or err})") from None
    try:
        try:
            fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except OSError as err:
            if err.errno not in (errno.EWOULDBLOCK, errno.EACCES, errno.EAGAIN):
                raise
            raise StoreError(f"{path}: --store: in use by another plyrisk run "
                             f"({_store_holder(path)}); wait for it to finish or give another "
                             "store path") from None
        holder = path / HOLDER_NAME
        try:
            holder.write_text(json.dumps({"pid": os.getpid(), "host": socket.gethostname(),
                                          "started": time.strftime("%Y-%m-%d %H:%M:%S %Z")}),
                              encoding="utf-8")
        except OSError:  # a read-only store can still be analysed; the holder stays unnamed
            pass
        try:
            yield path
        finally:
            holder.unlink(missing_ok=True)
            fcntl.flock(fd, fcntl.LOCK_UN)
    finally:
        os.close(fd)


@dataclass(frozen=True)
class StoreLayout:
    """What a task needs to write its region: the path and the store's shape.

    Attributes
    ----------
    path
        The Zarr store folder [-].
    chunk_size
        Rows per chunk [-].
    n_rows
        Rows of the design [-].
    swept
        Whether the outputs carry a ``scenario`` axis: always for a new store (length 1 for an
        unswept study); a store written before that was so has none when unswept [-].
    """

    path: str
    chunk_size: int
    n_rows: int
    swept: bool

    @property
    def n_chunks(self) -> int:
        """Number of chunks [-]."""
        return -(-self.n_rows // self.chunk_size)

    def bounds(self, index: int) -> tuple[int, int]:
        """Row range of chunk ``index`` [-]."""
        start = index * self.chunk_size
        return start, min(start + self.chunk_size, self.n_rows)


def fingerprint(study: Study, chunk_size: int) -> str:
    """Digest of everything that fixes the stored values [-]."""
    a = study.analysis
    try:
        version = metadata.version("plyrisk")
    except metadata.PackageNotFoundError:  # pragma: no cover - running from a bare checkout
        version = "unknown"
    text = json.dumps([study.text, a.method, int(a.samples), int(a.seed), int(chunk_size),
                       a.lhs_optimization, version])
    return hashlib.sha256(text.encode()).hexdigest()


def _dims(spec: OutputSpec, swept: bool) -> tuple[str, ...]:
    return (*(("scenario",) if swept else ()), "sample", *spec.dims)


def open_store(study: Study, plan: DesignPlan, path: str | Path, *, chunk_size: int,
               resume: bool = False, overwrite: bool = False
               ) -> tuple[StoreLayout, np.ndarray]:
    """Create a new store (or reopen one to resume) and return its layout and done flags.

    Parameters
    ----------
    study
        The parsed study [-].
    plan
        Its design [-].
    path
        Store folder: missing or empty for a new store [-].
    chunk_size
        Rows per chunk [-].
    resume
        Reuse the chunks an earlier run of the same study finished [-].
    overwrite
        Replace a plyrisk store already at ``path`` (ignored with ``resume``) [-].

    Returns
    -------
    layout, done
        The layout and a boolean flag per chunk, True where the chunk is already stored.

    Raises
    ------
    StoreError
        One line: a path holding anything but a plyrisk store; ``resume`` on a missing store or
        one written for another study; an existing store without ``resume`` or ``overwrite``.
    """
    import zarr

    path = Path(path)
    layout = StoreLayout(str(path), int(chunk_size), plan.n_rows, True)
    digest = fingerprint(study, chunk_size)
    state = store_state(path)
    if resume:
        if state != "plyrisk":
            raise StoreError(f"{path}: --resume: no store there to resume; drop --resume to "
                             "start a new one")
        group = zarr.open_group(str(path), mode="r")
        if group.attrs.get("plyrisk_study") != digest:
            raise StoreError(
                f"{path}: the store was written for another study, seed, sample count or "
                f"chunk size (or another plyrisk version); it cannot be resumed — use "
                "--overwrite instead of --resume to replace it, or give a new store path")
        dims = group["converged"].metadata.dimension_names or ()
        layout = replace(layout, swept="scenario" in dims)  # the store's own layout
        return layout, np.asarray(group["chunk_done"][:], dtype=bool)
    if state == "plyrisk":
        if not overwrite:
            group = zarr.open_group(str(path), mode="r")
            done = np.asarray(group["chunk_done"][:], dtype=bool)
            same = group.attrs.get("plyrisk_study") == digest
            raise StoreError(
                f"{path}: holds a plyrisk store ({'of this study' if same else 'of another study'}"
                f", {int(done.sum())} of {done.size} chunks stored); add --resume to continue "
                "it, --overwrite to replace it, or give a new store path")
        _remove_store(path)
    _create(study, plan, layout, digest)
    return layout, np.zeros(layout.n_chunks, dtype=bool)


def _create(study: Study, plan: DesignPlan, layout: StoreLayout, digest: str) -> None:
    """Write the store's metadata and coordinates (no sample data)."""
    import zarr
    from zarr.codecs import BloscCodec

    unit, _ = plan.rows(0, 1)
    first = _evaluate_block(study, unit_to_inputs(study.parameters, unit))[0]
    labels = solution_labels(first)
    time = labels.pop("time", None)
    n, c, n_s = layout.n_rows, layout.chunk_size, scenario_count(study)
    # Never clears a folder: "w-" refuses any content; a folder holding only the holder file of
    # our own lock (store_state has judged it empty) is opened for appending instead.
    folder = Path(layout.path)
    ours_only = folder.is_dir() and all(p.name == HOLDER_NAME for p in folder.iterdir())
    group = zarr.open_group(layout.path, mode="a" if ours_only else "w-", zarr_format=3)
    sizes = {"sample": n, "parameter": len(study.parameters), "scenario": n_s,
             "interface": len(labels["interface_names"]),
             "layer": len(labels["element_names"]), "chunk": layout.n_chunks,
             "face": len(labels["interface_names"]), "time": 0 if time is None else time.size}

    def array(name, dims, dtype, fill, **attrs):
        shape = tuple(sizes[d] for d in dims)
        chunks = tuple(c if d == "sample" else 1 if d == "chunk" else sizes[d] for d in dims)
        arr = group.create_array(name, shape=shape, chunks=chunks, dtype=dtype,
                                 fill_value=fill, dimension_names=list(dims),
                                 compressors=BloscCodec(**COMPRESSION))
        arr.attrs.update(attrs)

    array("input", ("sample", "parameter"), "f8", np.nan, units="SI",
          long_name="input value of each parameter (units: parameter_si_unit)")
    array("sample_block", ("sample",), "i2", -1, units="1",
          long_name="design block of each sample (0 = A, 1 = B, 2+j = A with column j "
          "from B, 2+d+g = A with group g from B)")
    for spec in output_table(study):
        array(spec.name, _dims(spec, layout.swept), spec.dtype, spec.fill_value,
              units=spec.units, long_name=spec.long_name)
    array("chunk_done", ("chunk",), "u1", 0, units="1",
          long_name="chunk of samples stored (1) or not yet (0)")
    if time is not None:
        array("time", ("time",), "f8", np.nan, units="s",
              long_name="time from the start of the exposure (history grid)")
        group["time"][:] = time
    group.attrs.update({
        STORE_MARK: 1, "plyrisk_study": digest, "chunk_size": c, "evaluations": n,
        "title": study.title,
        "config_text": study.text, "interface_names": list(labels["interface_names"]),
        "element_names": list(labels["element_names"]),
        "element_kinds": list(labels["element_kinds"]),
        "element_layers": [int(x) for x in labels["element_layers"]],
        "inner_surface_index": int(labels["inner_surface_index"]),
        "output_names": [spec.name for spec in output_table(study)],
        "study_kind": "steady" if time is None else "transient",
    })




def store_chunk(study: Study, plan: DesignPlan, layout: StoreLayout, index: int,
                unit: np.ndarray | None = None) -> tuple[int, int]:
    """A task: draw chunk ``index`` of the design, solve it, write its region, mark it done.

    Parameters
    ----------
    study
        The parsed study [-].
    plan
        Its design; the chunk's rows are drawn here unless ``unit`` is given [-].
    layout
        The store [-].
    index
        Chunk index [-].
    unit
        The chunk's unit-hypercube rows, for designs not drawn in pieces [-].

    Returns
    -------
    index, rows
        The chunk and its number of rows [-].
    """
    import zarr

    start, stop = layout.bounds(index)
    if unit is None:
        unit, block = plan.rows(start, stop)
    else:
        block = np.zeros(stop - start, dtype=np.int64)
    inputs = unit_to_inputs(study.parameters, unit)
    solutions = _evaluate_block(study, inputs)
    group = zarr.open_group(layout.path, mode="r+")
    group["input"][start:stop] = inputs
    group["sample_block"][start:stop] = block.astype(np.int16)
    for spec in output_table(study):
        name = spec.name
        values = np.stack([np.asarray(getattr(s, name)) for s in solutions]).astype(spec.dtype)
        if layout.swept:
            group[name][:, start:stop] = values
        else:
            group[name][start:stop] = values[0]
    group["chunk_done"][index] = 1
    return index, stop - start


class StoreReader:
    """Reads row ranges of a store's per-sample variables, scenario axis always first."""

    def __init__(self, path: str | Path) -> None:
        import zarr

        self.path = Path(path)
        self.group = zarr.open_group(str(path), mode="r")
        self.n_rows = int(self.group.attrs["evaluations"])
        self.chunk_size = int(self.group.attrs["chunk_size"])
        names = self.group.attrs.get("output_names", [s.name for s in NETWORK_OUTPUTS])
        self.output_names = tuple(str(n) for n in names)
        dims = self.group["converged"].metadata.dimension_names
        self.swept = "scenario" in dims
        self.time = np.asarray(self.group["time"][:]) if "time" in self.group else None
        self.interface_names = tuple(str(n) for n in self.group.attrs["interface_names"])

    def read(self, name: str, start: int = 0, stop: int | None = None) -> np.ndarray:
        """Rows ``[start, stop)`` of ``name``; outputs get a leading scenario axis [-]."""
        stop = self.n_rows if stop is None else stop
        arr = self.group[name]
        if name in ("input", "sample_block"):
            return np.asarray(arr[start:stop])
        if self.swept:
            return np.asarray(arr[:, start:stop])
        return np.asarray(arr[start:stop])[None]

    def missing_chunks(self) -> int:
        """Chunks not yet stored [-]."""
        return int(np.sum(np.asarray(self.group["chunk_done"][:]) == 0))

    def outputs(self, stop: int | None = None) -> Outputs:
        """The model outputs of rows ``[0, stop)`` in memory [-]."""
        attrs = self.group.attrs
        return Outputs(
            fields={name: self.read(name, 0, stop) for name in self.output_names},
            interface_names=tuple(attrs["interface_names"]),
            element_names=tuple(attrs["element_names"]),
            element_kinds=tuple(attrs["element_kinds"]),
            element_layers=tuple(int(x) for x in attrs["element_layers"]),
            inner_surface_index=int(attrs["inner_surface_index"]),
            time=self.time,
        )


def solve_to_store(study: Study, path: str | Path, *, chunk_size: int | None = None,
                   resume: bool = False, overwrite: bool = False, workers: int = 1,
                   scheduler: str | None = None, quiet: bool = False) -> StoreReader:
    """Solve every chunk of a study not yet in the store at ``path`` and write it there.

    Parameters
    ----------
    study
        The parsed study [-].
    path
        Zarr store folder [-].
    chunk_size
        Rows per chunk [-]; default from the study.
    resume
        Keep the chunks of an interrupted run of the same study [-].
    overwrite
        Replace a plyrisk store already at ``path`` [-].
    workers
        Worker processes of a local dask cluster [-].
    scheduler
        Address of an existing dask scheduler [-]; its workers must see ``path``.
    quiet
        No progress bar [-].

    Returns
    -------
    StoreReader
        The filled store.
    """
    plan = study_plan(study)
    chunk = int(chunk_size or study.analysis.chunk_size)
    layout, done = open_store(study, plan, path, chunk_size=chunk, resume=resume,
                              overwrite=overwrite)
    todo = [int(i) for i in np.flatnonzero(~done)]
    whole = None if plan.drawn_in_pieces else plan.design().unit
    args = [(i, None if whole is None else whole[slice(*layout.bounds(i))]) for i in todo]
    rows_left = sum(layout.bounds(i)[1] - layout.bounds(i)[0] for i in todo)
    with progress_bar(rows_left, quiet=quiet) as bar:
        run_tasks(store_chunk, args, lambda r: bar(r[1]) if bar else None,
                  shared=(study, plan, layout), workers=workers, scheduler=scheduler)
    reader = StoreReader(path)
    if reader.missing_chunks():
        raise StoreError(f"{path}: {reader.missing_chunks()} chunks were not stored")
    return reader


def load_propagation(study: Study, reader: StoreReader, *, stop: int | None = None) -> Propagation:
    """The stored rows ``[0, stop)`` as an in-memory
    :class:`plyrisk.propagate.evaluate.Propagation`.

    Parameters
    ----------
    study
        The parsed study [-].
    reader
        The store [-].
    stop
        Rows to load; all by default. A Sobol' design is cut at whole base rows [-].
    """
    plan = study_plan(study)
    n = plan.n_rows if stop is None else min(int(stop), plan.n_rows)
    n -= n % plan.rows_per_base
    block = reader.read("sample_block", 0, n).astype(np.int64)
    block.setflags(write=False)
    if plan.drawn_in_pieces:
        unit = plan.rows(0, n)[0]
    else:
        unit = plan.design().unit[:n]
    base = n // plan.rows_per_base
    design = Design(unit, block, plan.method, base, plan.groups, plan.replicates)
    return Propagation(design=design, inputs=reader.read("input", 0, n),
                       outputs=reader.outputs(n))
