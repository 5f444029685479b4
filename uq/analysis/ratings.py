"""Rated layer temperatures: per sample, whether any layer exceeds its ``max_temperature``.

A solid layer may carry a rated maximum temperature (``max_temperature`` in its
``[[layer]]`` table: the temperature the material is rated for — above it, degradation,
shrinkage, melting or charring, which the model does not represent, may begin). In steady
one-dimensional conduction without heat generation the temperature inside a solid lies between
its two face temperatures, so a layer's highest temperature is that of its hotter face.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from plyrisk.analysis.statistics import Exceedance, exceedance


@dataclass(frozen=True)
class RatingCheck:
    """Rated-temperature check of one exposure.

    Attributes
    ----------
    margin
        Per sample, the largest ``face temperature − rating`` over the rated layers [K]; NaN
        where the sample did not converge.
    exceedance
        P(some layer above its rating) from the independent converged samples, with its
        interval.
    per_layer
        Per rated layer (name), the count of independent converged samples above its rating
       .
    """

    margin: np.ndarray
    exceedance: Exceedance
    per_layer: dict[str, int]


def rating_margin(study, outputs, scenario: int) -> tuple[np.ndarray, dict[str, np.ndarray]]:
    """Per sample: the largest excess of a layer's hotter face over its rating [K], and the
    excess of each rated layer [K].

    Parameters
    ----------
    study
        The parsed study with ``max_temperatures``.
    outputs
        The model outputs (:class:`plyrisk.propagate.evaluate.Outputs`).
    scenario
        The exposure.
    """
    faces = np.asarray(outputs["interface_temperature"][scenario], dtype=float)  # (n, M + 1)
    per: dict[str, np.ndarray] = {}
    for e, (kind, layer) in enumerate(zip(outputs.element_kinds, outputs.element_layers,
                                          strict=True)):
        rating = study.max_temperatures[layer] if study.max_temperatures else None
        if kind != "solid" or rating is None:
            continue
        per[study.layers[layer].name] = np.maximum(faces[:, e], faces[:, e + 1]) - rating
    if not per:
        return np.full(faces.shape[0], np.nan), per
    return np.max(np.stack(list(per.values())), axis=0), per


def rating_check(study, propagation, scenario: int) -> RatingCheck | None:
    """The rated-temperature check of one exposure, or ``None`` when no layer is rated.

    Parameters
    ----------
    study
        The parsed study.
    propagation
        Design, inputs and outputs.
    scenario
        The exposure.
    """
    if not any(r is not None for r in study.max_temperatures):
        return None
    margin, per = rating_margin(study, propagation.outputs, scenario)
    rows = propagation.design.independent_rows()
    exc = exceedance(margin[rows], 0.0, confidence=study.analysis.confidence)
    counts = {name: int(np.count_nonzero(m[rows] > 0.0)) for name, m in per.items()}
    return RatingCheck(margin, exc, counts)
