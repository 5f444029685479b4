"""Summary lines of the Sobol indices of one exposure (Saltelli or polynomial chaos), every
index with its convergence status, and of the surrogate's percentiles."""

from __future__ import annotations

from collections.abc import Callable
from typing import TYPE_CHECKING

import numpy as np

from plyrisk.analysis.sobol import RankedIndex, not_resolved
from plyrisk.analysis.transient import CONDITION_GROUPS

NOT_RESOLVED = "not resolved: more samples"
"""Status of an index estimate outside [0, 1] by more than its interval."""

if TYPE_CHECKING:  # pragma: no cover - for type checkers only
    from plyrisk.study.definition import Study


def _flag(value: float, half: float, converged: bool) -> str:
    if not_resolved(value, half):
        return NOT_RESOLVED
    return "ok" if converged else ("n/a" if not np.isfinite(half) else "WIDE")


def _index(label: str, value: float, half: float, converged: bool) -> str:
    return f"{label}{value:6.3f} ± {half:.3f} {_flag(value, half, converged):<4}"


def unresolved(item: RankedIndex) -> bool:
    """Whether the total or first-order estimate of a ranked index is not resolved."""
    return not_resolved(item.total, item.total_ci) or not_resolved(item.first, item.first_ci)


def _terms(surrogate) -> str:
    """How many terms the surrogate has, and the candidate set they were selected from."""
    if surrogate.candidates > surrogate.terms:
        return (f"{surrogate.terms} terms selected from {surrogate.candidates} by least-angle "
                "regression")
    return f"{surrogate.terms} terms"


def layer_label(group: str, *, spaced: bool = False) -> str:
    """A parameter group as a ranking of layers shows it: a group of conditions rather than of
    a layer (:data:`plyrisk.analysis.transient.CONDITION_GROUPS`: the hot or cold side, the
    exposure, the wearer) is marked "(not a layer)".

    Parameters
    ----------
    group
        The group's name (a layer name, ``hot_side``, ``exposure`` ...).
    spaced
        Spell underscores as spaces, as the report does.

    Examples
    --------
    >>> layer_label("hot_side"), layer_label("hot_side", spaced=True), layer_label("liner")
    ('hot_side (not a layer)', 'hot side (not a layer)', 'liner')
    """
    shown = group.replace("_", " ") if spaced else group
    return f"{shown} (not a layer)" if group in CONDITION_GROUPS else shown


def first_layer(groups: list[RankedIndex]) -> RankedIndex | None:
    """The first ranked group that is a layer (never a group of conditions), else ``None``."""
    return next((g for g in groups if g.name not in CONDITION_GROUPS), None)


def ranked_line(rank: int, item: RankedIndex, *, first: bool = True,
                name: str | None = None) -> str:
    """One ranked parameter or layer: total (and first-order) index, half-width, status.

    Parameters
    ----------
    rank
        Position, 1 = most influential.
    item
        The ranked index.
    first
        Show the first-order index too.
    name
        The name shown (default ``item.name``), e.g. :func:`layer_label` of a group.
    """
    text = f"  {rank}. {name or item.name:<32} " + _index("", item.total, item.total_ci,
                                                            item.total_converged)
    if first:
        text += "   " + _index("first ", item.first, item.first_ci, item.first_converged)
        if item.first_negative:
            text += " (negative estimate)"
    return text


def index_lines(study: Study, sc, *, top: int, temperature: Callable[[float], str]) -> list[str]:
    """Lines of the ranking of the inner-surface temperature of one exposure.

    Parameters
    ----------
    study
        The study.
    sc
        Its :class:`plyrisk.analysis.study.ScenarioAnalysis`.
    top
        Parameters and layers listed.
    temperature
        Formats a temperature [K] in the display unit.
    """
    a = study.analysis
    ranking = sc.ranking.get("inner_surface_temperature")
    if not ranking:
        return []
    if getattr(sc, "shapley", None):
        from plyrisk.text.shapley import shapley_lines

        return shapley_lines(study, sc, top=top)
    lines = []
    thr = f"±{a.index_ci_threshold:g}"
    if sc.surrogate is not None:
        s = sc.surrogate
        lines.append(
            f"polynomial-chaos surrogate: order {s.order}, q-norm {s.q_norm:g}, {_terms(s)}, "
            f"{s.samples} samples; leave-one-out error {s.loo_error:.2g} (Q2 = {s.q2:.4f})"
            + (f", cross-validation error {s.cross_validation_error:.2g} (terms selected anew "
               "in each fold)" if s.candidates > s.terms else ""))
        lines.append(f"most influential parameters (total Sobol index from the surrogate ± "
                     f"bootstrap CI half-width; first-order; ok = half-width ≤ {thr}, WIDE = "
                     "not converged):")
    else:
        lines.append(f"most influential parameters (total Sobol index ± CI half-width; "
                     f"first-order; ok = half-width ≤ {thr}, WIDE = not converged):")
    lines += [ranked_line(r, item) for r, item in enumerate(ranking[:top], start=1)]
    groups = sc.group_ranking.get("inner_surface_temperature", [])
    if groups:
        lines.append("layers (grouped total index ± CI half-width):")
        lines += [ranked_line(r, item, first=False, name=layer_label(item.name))
                  for r, item in enumerate(groups[:top], start=1)]
    bad = [i.name for i in (*ranking, *groups) if unresolved(i)]
    if bad:
        lines.append(
            f"  WARNING: {len(bad)} index estimate(s) outside [0, 1] by more than their "
            f"interval ({', '.join(bad[:3])}{', ...' if len(bad) > 3 else ''}): {NOT_RESOLVED} "
            "— a Sobol index is a share of the variance, so these are no estimates yet; rerun "
            "with more samples (or --until-converged) before reading the ranking")
    unconv = [i for i in (*ranking, *groups) if not i.converged]
    if unconv:
        if sc.surrogate is None:
            need = max(i.suggested_base_samples or 0 for i in unconv)
            lines.append(
                f"  {len(unconv)} index interval(s) wider than {thr}: rerun with --samples "
                f"{need} or more, or with --until-converged, to settle the ranking")
        else:
            lines.append(f"  {len(unconv)} index interval(s) wider than {thr}: rerun with more "
                         "samples to settle the ranking")
    negative = [i.name for i in ranking if i.first_negative]
    if negative:
        lines.append(
            f"  {len(negative)} first-order estimate(s) below zero ({', '.join(negative[:3])}"
            + (", ..." if len(negative) > 3 else "") + "): a Sobol index is never negative; "
            "this is the estimator's noise around a small index, shown as estimated (not "
            "clipped); treat it as 0 within its interval")
    if sc.surrogate is not None:
        status = sc.surrogate_quantile_status
        if sc.surrogate_quantiles is not None:
            probs = np.asarray(sc.inner_quantiles.probabilities)
            shown = []
            for p in a.percentiles:
                i = int(np.argmin(np.abs(probs - p)))
                shown.append(f"P{100 * p:g} {temperature(sc.surrogate_quantiles[i])}")
            lines.append("percentiles from the surrogate: " + ", ".join(shown) + f" ({status})")
        elif status:
            lines.append(f"percentiles from the surrogate: {status}")
    return lines
