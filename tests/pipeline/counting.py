"""A growth run with every model evaluation counted (shared by the growth tests)."""

from __future__ import annotations

import plyrisk.pipeline.sequential as sequential
from plyrisk.study.config import loads_study


def grow_counted(text: str, **options):
    """Grow the study of config ``text`` until converged; also the row count of each
    evaluation handed to the model (to check that runs are reused, not repeated)."""
    calls: list[int] = []
    original = sequential.evaluate

    def counting(study, values, **kw):
        calls.append(len(values))
        return original(study, values, **kw)

    sequential.evaluate = counting
    try:
        growth = sequential.grow_until_converged(loads_study(text, source="grow.toml"),
                                                 **options)
    finally:
        sequential.evaluate = original
    return growth, calls
