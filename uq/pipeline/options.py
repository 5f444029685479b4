"""How a study is run: one frozen set of options with one validation.

:class:`RunOptions` gathers what the command line (or a Python caller) may override or choose
for one run — sample count, seed, method, chunking, where chunks run, the store, sequential
growth — and :meth:`RunOptions.validate` checks all of it against the study at once, before
anything is computed. The command line only parses arguments into a :class:`RunOptions`.

Examples
--------
>>> opts = RunOptions(samples=64, seed=3)
>>> opts.samples, opts.workers
(64, None)
>>> RunOptions(chunk_size=0).check_values()
Traceback (most recent call last):
...
plyrisk.pipeline.options.OptionError: --chunk-size must be a positive integer, got 0
"""

from __future__ import annotations

import os
from dataclasses import dataclass, replace
from pathlib import Path
from typing import TYPE_CHECKING

from plyrisk.errors import PlyriskError
from plyrisk.methods import METHODS, get_method

if TYPE_CHECKING:  # pragma: no cover
    from plyrisk.study.definition import Study

MAX_SEED = 2**64 - 1
"""Largest seed: numpy's ``SeedSequence`` and the results file take 64-bit seeds."""

DEFAULT_MAX_RUNS = 1_000_000
"""Model-run budget of sequential growth when none is given (every exposure counted)."""

MEMORY_SHARE = 0.7
"""Largest share of this machine's memory a study may plan to use."""


def default_output_dir(config_path: str | Path) -> Path:
    """The default output folder: named after the config, next to where plyrisk runs."""
    return Path(Path(config_path).stem)


class OptionError(PlyriskError, ValueError):
    """A run option that does not fit the study; one line naming the option."""


@dataclass(frozen=True, kw_only=True)
class RunOptions:
    """Options of one run of a study (``None`` = the config's value or the default).

    Attributes
    ----------
    samples
        Base sample count (saltelli: base rows; pce: samples; morris: trajectories).
    seed
        Seed of every random draw, 0 … 2**64 - 1.
    method
        Analysis method, a name in :data:`plyrisk.methods.METHODS`.
    chunk_size
        Samples per evaluation chunk (memory bound; results do not depend on it).
    workers
        Worker processes of a local dask cluster (default ``[compute] workers``, else 1).
    scheduler
        Address of an existing dask scheduler (default ``[compute] scheduler``).
    store
        Zarr store folder for out-of-core runs (default ``[compute] store``).
    resume
        Keep the chunks an interrupted run of the same study already stored; on a finished
        store only the analysis runs again.
    overwrite
        Replace a plyrisk store already at ``store`` (ignored with ``resume``); on the command
        line also the earlier result in the output folder (:mod:`plyrisk.results.files`).
    until_converged
        Grow the study until every index interval is narrow enough (methods that grow).
    max_runs
        Model-run budget of ``until_converged`` (default :data:`DEFAULT_MAX_RUNS`).
    quiet
        No progress display.
    """

    samples: int | None = None
    seed: int | None = None
    method: str | None = None
    chunk_size: int | None = None
    workers: int | None = None
    scheduler: str | None = None
    store: str | Path | None = None
    resume: bool = False
    overwrite: bool = False
    until_converged: bool = False
    max_runs: int | None = None
    quiet: bool = False

    def with_defaults(self, study: Study) -> RunOptions:
        """These options with the config's ``[compute]`` section filling what is unset."""
        c = study.compute
        return replace(self, workers=self.workers or c.workers or 1,
                       scheduler=self.scheduler or c.scheduler,
                       store=self.store or c.store)

    def check_values(self) -> None:
        """Check each option on its own (ranges, combinations that never make sense)."""
        from plyrisk.study.config import MIN_SAMPLES

        if self.samples is not None and self.samples < MIN_SAMPLES:
            raise OptionError(f"--samples must be at least {MIN_SAMPLES}, got {self.samples}")
        if self.seed is not None and not 0 <= self.seed <= MAX_SEED:
            raise OptionError(f"--seed must be a whole number from 0 to 2**64 - 1, got "
                              f"{self.seed}")
        if self.chunk_size is not None and self.chunk_size < 1:
            raise OptionError(f"--chunk-size must be a positive integer, got {self.chunk_size}")
        if self.workers is not None and self.workers < 1:
            raise OptionError(f"--workers must be a positive integer, got {self.workers}")
        if self.max_runs is not None and not self.until_converged:
            raise OptionError("--max-runs applies to --until-converged only")
        if self.max_runs is not None and self.max_runs < 1:
            raise OptionError(f"--max-runs must be a positive integer, got {self.max_runs}")

    def validate(self, study: Study) -> Study:
        """Check every option against the study; return the study with the overrides applied.

        Parameters
        ----------
        study
            The parsed study.

        Returns
        -------
        Study
            With ``samples``, ``seed`` and ``method`` applied.

        Raises
        ------
        OptionError
            One line naming the option and what was expected.
        """
        from plyrisk.study.config import override

        self.check_values()
        opts = self.with_defaults(study)
        if opts.resume and not opts.store:
            raise OptionError("--resume needs a store: give --store DIR (or [compute] store)")
        try:
            study = override(study, samples=opts.samples, seed=opts.seed, method=opts.method)
        except ValueError as err:
            raise OptionError(str(err)) from None
        method = get_method(study.analysis.method)
        if opts.store:
            if opts.until_converged or not method.stores:
                raise OptionError("--store holds one fixed design: use it with method = "
                                  f"{_names('stores')}, without --until-converged")
            return study  # out of core: memory stays bounded by the chunk size
        n = opts.samples
        if opts.until_converged:
            if not method.grows:
                raise OptionError(f"--until-converged needs method = {_names('grows')}, not "
                                  f"{method.name!r}")
            budget = opts.max_runs if opts.max_runs is not None else DEFAULT_MAX_RUNS
            rows = planned_runs(study)
            if rows > budget:
                raise OptionError(f"--max-runs {budget}: the first step already needs {rows} "
                                  "model runs; raise --max-runs or lower --samples")
            largest = study.analysis.samples
            while planned_runs(study, 2 * largest) <= budget:
                largest *= 2
            n = largest  # the memory check below covers the largest step the budget allows
            if study.transient is not None:  # histories are large: check the first step; the
                n = opts.samples             # growth stops before a step that does not fit
        try:
            check_memory(study, n)
        except OptionError as err:
            where = "--samples" if n is not None else f"{study.source}: study.samples"
            raise OptionError(f"{where}: {err}") from None
        return study


def _names(flag: str) -> str:
    """The methods with a capability, for messages: ``"saltelli or pce"``."""
    return " or ".join(m.name for m in METHODS.values() if getattr(m, flag))


def planned_runs(study: Study, samples: int | None = None) -> int:
    """Model runs of a study, every exposure counted.

    Parameters
    ----------
    study
        The parsed study.
    samples
        Sample count overriding the config.
    """
    from plyrisk.propagate.evaluate import scenario_count

    return get_method(study.analysis.method).runs(study, samples) * scenario_count(study)


def memory_estimate(study: Study, samples: int | None = None) -> int:
    """Bytes a run will hold at its peak: the design, the inputs and every output [B].

    Parameters
    ----------
    study
        The parsed study.
    samples
        Base sample count overriding the config.

    Returns
    -------
    int
        Estimated peak memory [B] (with a 50 % margin for the analysis and the dataset).
    """
    from plyrisk.models.network import interface_names
    from plyrisk.propagate.evaluate import scenario_count

    rows = planned_runs(study, samples) // scenario_count(study)
    d = len(study.parameters)
    if study.transient is not None:  # histories: (time, face) and two (time) per sample
        faces = 2 * len(study.layers) + 1
        times = len(study.transient.output_times)
        per_row = 16 * d + scenario_count(study) * 8 * (times * (faces + 2) + 24)
        return int(1.5 * rows * per_row)
    faces = len(interface_names(study.layers, study.steady_sides()[1]))
    per_row = 16 * d + scenario_count(study) * 8 * (6 * faces + 4)
    return int(1.5 * rows * per_row)


def check_memory(study: Study, samples: int | None = None) -> None:
    """Raise :class:`OptionError` when a run would not fit in this machine's memory.

    Parameters
    ----------
    study
        The parsed study.
    samples
        Base sample count overriding the config.
    """
    need = memory_estimate(study, samples)
    try:
        have = os.sysconf("SC_PHYS_PAGES") * os.sysconf("SC_PAGE_SIZE")
    except (ValueError, OSError, AttributeError):  # not available: do not guess
        return
    if need > MEMORY_SHARE * have:
        n = samples if samples is not None else study.analysis.samples
        raise OptionError(
            f"{n} samples need about {need / 2**30:.1f} GiB of memory and this machine has "
            f"{have / 2**30:.1f} GiB; use fewer samples"
        )
