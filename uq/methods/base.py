"""The protocol every analysis method follows, and the defaults most methods share.

A method is one object (a subclass of :class:`Method`) in one module of :mod:`plyrisk.methods`,
listed once in the registry (:data:`plyrisk.methods.METHODS`). The config reader, ``override``,
the command line, the propagation, the analysis, the dataset and the summary ask the method
object; none of them tests a method's name.

The registry is read by the config reader, which sits low in the package; so a method module
imports only light things at module level and loads the engine parts its hooks need (designs,
estimators, dataset helpers) when a hook is called. That is the one place where a lower layer
reaches up, and only at call time.

Hooks and what calls them
-------------------------
``design_kind(study)``
    :func:`plyrisk.propagate.evaluate.study_plan`: which unit-hypercube design to draw.
``runs(study, samples)``
    Memory estimates and run budgets: model runs per exposure.
``independent_samples(study, evaluations)``
    The summary: how many samples are independent draws behind the percentiles.
``notes(study, base_samples)``
    Analysis notes (what the design can and cannot give).
``scenario_indices(...)``
    :func:`plyrisk.analysis.study.analyse` and :func:`plyrisk.analysis.streaming.stream_analyse`:
    the sensitivity indices of one exposure.
``transient_indices(study, scenario, *, source, design, probabilities)``
    :func:`plyrisk.analysis.transient.analyse_transient`: indices of the derived outputs of one
    exposure of a transient study (by default through ``scenario_indices``).
``analyse(study, propagation)``, ``dataset(study, propagation, analysis)``,
``summary_lines(result, top)``
    :func:`plyrisk.pipeline.run.run_study` and its summary.
``dataset_variables(study, analysis, outputs)``
    :func:`plyrisk.results.dataset.to_dataset`: the index variables the method adds, as plain
    ``name -> (dims, values, units, long_name, attrs)`` records (no xarray here).
``transient_variables(study, analysis, outputs)``
    :func:`plyrisk.results.transient.transient_dataset`: index variables a method adds to a
    transient dataset beyond the shared ``sobol_*`` and ``morris_*`` ones (the same records).
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import TYPE_CHECKING, Any, ClassVar

if TYPE_CHECKING:  # pragma: no cover
    import numpy as np

    from plyrisk.analysis.study import IndexResult, StudyAnalysis
    from plyrisk.propagate.evaluate import Propagation
    from plyrisk.study.definition import Study

VariableRecord = tuple[tuple[str, ...], Any, str, str, dict[str, Any]]
"""A dataset variable as plain data: dims, values, units, long name, extra attributes."""


class Method:
    """An analysis method: its config facts and its hooks (see the module docstring).

    Attributes
    ----------
    name
        The ``[study] method`` value.
    summary
        One line for ``--help`` and the docs.
    designs
        ``[study] design`` values it accepts; the first is the default.
    sample_noun
        What ``[study] samples`` counts ("base samples", "samples", "trajectories").
    only_keys
        ``[study]`` keys that apply to this method only.
    grows
        Can be grown sample by sample until converged (``--until-converged``).
    stores
        Can stream its samples to a store (one fixed design).
    allows_screening
        May be preceded by a ``[screening]`` section.
    no_screening
        Why a method with ``allows_screening`` False takes no ``[screening]`` (ends the
        one-line error ``method = '<name>' <no_screening>``).
    fits_surrogate
        Its indices come from a surrogate fitted to the samples.
    writes_report
        ``plyrisk run`` writes an HTML report for it.
    samples_distributions
        Its design samples the joint input distribution, so percentiles and probabilities come
        from it (False for a Morris grid).
    handles_dependence
        Correct for correlated inputs (a ``[correlations]`` section); the others are refused
        with ``independence`` (why) in a one-line error.
    supports_transient
        Applies to transient studies too.
    builds_design
        Builds its whole design itself (:meth:`make_design`) instead of a design plan.
    """

    name: ClassVar[str]
    summary: ClassVar[str]
    designs: ClassVar[tuple[str, ...]]
    sample_noun: ClassVar[str] = "samples"
    only_keys: ClassVar[tuple[str, ...]] = ()
    grows: ClassVar[bool] = False
    stores: ClassVar[bool] = True
    allows_screening: ClassVar[bool] = True
    no_screening: ClassVar[str] = ""
    fits_surrogate: ClassVar[bool] = False
    writes_report: ClassVar[bool] = True
    samples_distributions: ClassVar[bool] = True
    handles_dependence: ClassVar[bool] = False
    supports_transient: ClassVar[bool] = True
    builds_design: ClassVar[bool] = False
    independence: ClassVar[str] = "assumes independent inputs"

    # -- config facts -------------------------------------------------------------------------
    @property
    def default_design(self) -> str:
        """The design drawn when ``[study] design`` is not given."""
        return self.designs[0]

    def design_kind(self, study: Study) -> str:
        """The :class:`plyrisk.design.sampling.DesignPlan` kind of the study's design."""
        return study.analysis.design

    def make_design(self, study: Study) -> Any:
        """The whole design when the method builds its own (else ``None``: the design plan of
        :func:`plyrisk.propagate.evaluate.study_plan`)."""
        return None

    def describe(self, study: Study) -> str:
        """What the study computes and from which design, for ``plyrisk check``."""
        return f"{self.name}, {study.analysis.samples} {self.sample_noun}"

    # -- sizes ----------------------------------------------------------------------------------
    def runs(self, study: Study, samples: int | None = None) -> int:
        """Model runs per exposure for ``samples`` (default: the study's)."""
        return int(samples if samples is not None else study.analysis.samples)

    def independent_samples(self, study: Study, evaluations: int) -> int:
        """Samples drawn from the joint input distribution, behind percentiles."""
        return int(evaluations)

    # -- analysis -------------------------------------------------------------------------------
    def notes(self, study: Study, base_samples: int) -> list[str]:
        """Notes on what the design gives, for the summary and the dataset."""
        return []

    def scenario_indices(self, study: Study, scenario: int, *, source: Any, design: Any,
                         unit: np.ndarray, y: np.ndarray, probabilities: np.ndarray,
                         streamed: bool) -> IndexResult:
        """Sensitivity indices of one exposure (none by default)."""
        from plyrisk.analysis.study import IndexResult

        return IndexResult()

    def transient_indices(self, study: Study, scenario: int, *, source: Any, design: Any,
                          probabilities: np.ndarray) -> IndexResult:
        """Indices of the derived outputs of one exposure of a transient study.

        By default :meth:`scenario_indices` on the independent rows, the first derived output
        as ``y`` (a method that computes every analysed output from ``source`` needs nothing
        more).
        """
        from plyrisk.analysis.outputs import output_column
        from plyrisk.analysis.study import analysed_outputs

        rows = design.independent_rows()
        y = output_column(source, analysed_outputs(study)[0], scenario)[rows]
        return self.scenario_indices(study, scenario, source=source, design=design,
                                     unit=design.unit[rows], y=y, probabilities=probabilities,
                                     streamed=False)

    def analyse(self, study: Study, propagation: Propagation) -> Any:
        """Statistics of a propagated study (percentiles, exceedance or P(burn), indices).

        The study's kind picks the analysis (:func:`plyrisk.analysis.study.analysis_for`): the
        steady one, or :func:`plyrisk.analysis.transient.analyse_transient`.
        """
        from plyrisk.analysis.study import analysis_for

        return analysis_for(study)(study, propagation, method=self)

    def analyse_store(self, study: Study, reader: Any) -> StudyAnalysis:
        """Statistics of a stored study too large for memory, in passes."""
        from plyrisk.analysis.streaming import stream_analyse

        return stream_analyse(study, reader, method=self)

    # -- outputs ----------------------------------------------------------------------------------
    def dataset(self, study: Study, propagation: Propagation, analysis: Any) -> Any:
        """The results dataset (:func:`plyrisk.results.dataset.to_dataset`)."""
        from plyrisk.results.dataset import to_dataset

        return to_dataset(study, propagation, analysis, method=self)

    def dataset_variables(self, study: Study, analysis: StudyAnalysis,
                          outputs: Sequence[str]) -> dict[str, VariableRecord]:
        """Index variables this method adds to the dataset (none by default)."""
        return {}

    def transient_variables(self, study: Study, analysis: Any,
                            outputs: Sequence[str]) -> dict[str, VariableRecord]:
        """Index variables this method adds to a transient dataset (none by default: the
        ``sobol_*`` and ``morris_*`` variables are written from the analysis itself)."""
        return {}

    def summary_lines(self, result: Any, *, top: int) -> list[str] | None:
        """The whole method-specific summary, or ``None`` for the common one."""
        return None
