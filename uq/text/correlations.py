"""Terminal lines of a study's ``[correlations]``: target against achieved rank correlations
of a test draw (``plyrisk check``)."""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np
from scipy import stats

from plyrisk.text.tables import text_table

if TYPE_CHECKING:  # pragma: no cover
    from plyrisk.study.definition import Study

__all__ = ["TEST_DRAWS", "correlation_lines"]

TEST_DRAWS = 8192
"""Rows of the test draw behind the achieved rank correlations."""


def correlation_lines(study: Study, *, draws: int = TEST_DRAWS) -> list[str]:
    """Target and achieved Spearman rank correlation of every correlated pair.

    Parameters
    ----------
    study
        The study (nothing is printed without a ``[correlations]`` section).
    draws
        Rows of the test draw (the study's design kind and seed, through the copula, mapped
        to the inputs).

    Returns
    -------
    list of str
    """
    from plyrisk.design.copula import joint_design
    from plyrisk.propagate.evaluate import unit_to_inputs

    c = study.correlations
    if c is None:
        return []
    a = study.analysis
    names = list(study.parameter_names)
    n = draws if a.design != "sobol" else 1 << (max(draws, 2) - 1).bit_length()
    unit = joint_design(a.design, n, names, seed=int(a.seed), correlations=c,
                        optimization=a.lhs_optimization)
    x = unit_to_inputs(study.parameters, unit)
    rows = []
    k = len(c.names)
    for i in range(k):
        for j in range(i + 1, k):
            p, q = names.index(c.names[i]), names.index(c.names[j])
            got = stats.spearmanr(x[:, p], x[:, q]).statistic
            rows.append([c.names[i], c.names[j], f"{c.rank[i, j]:+.3f}", f"{got:+.3f}",
                         f"{c.linear[i, j]:+.3f}"])
    how = ("Iman-Conover reordering of the Latin hypercube"
           if c.lhs_reordering == "iman-conover" and a.design == "lhs" else "Gaussian copula")
    out = [f"Rank correlations ({how}; achieved in a test draw of {n} {a.design} rows):"]
    out += text_table(["parameter", "with", "target rho_s", "achieved rho_s",
                       "normal-score rho"], rows)
    if c.repair_note:
        out.append(f"  NOTE: {c.repair_note}")
    smallest = float(np.linalg.eigvalsh(c.linear).min())
    out.append(f"  smallest eigenvalue of the normal-score correlation matrix: {smallest:.3g}")
    return out
