"""Terminal lines of Shapley effects (``method = "shapley"``): the ranking per parameter and
per layer, the dominant layer, the convergence and how to read the effects."""

from __future__ import annotations

import math
import textwrap
from typing import Any

__all__ = ["INDEX_COLUMNS", "dependent_index_lines", "rerun_line", "shapley_lines",
           "through_partners"]


def _line(rank: int, item: Any, name: str | None = None) -> str:
    ok = "ok" if item.converged else "WIDE"
    return (f"  {rank}. {name or item.name:<32} {item.total:6.3f} ± {item.total_ci:.3f}  "
            f"{ok:<4}").rstrip()


INDEX_COLUMNS = (("full_first", "full first"), ("independent_first", "indep. first"),
                 ("full_total", "full total"), ("independent_total", "indep. total"))
"""The four indices of dependent inputs, in the order the summary and the report show them."""


def _cell(value: float, half: float) -> str:
    if not math.isfinite(value):
        return "n/a"
    return f"{value:.3f} ± {half:.3f}" if math.isfinite(half) else f"{value:.3f}"


def dependent_index_lines(effects: Any, names: list[str]) -> list[str]:
    """The table of the four indices of dependent inputs for ``names``, in that order."""
    if effects is None or effects.full_first is None:
        return []
    cols = [(attr, label) for attr, label in INDEX_COLUMNS if getattr(effects, attr) is not None]
    out = ["  " + f"{'':<32}" + "".join(f"{label:>15}" for _, label in cols)]
    for name in names:
        k = list(effects.names).index(name)
        out.append(("  " + f"{name:<32}" + "".join(
            f"{_cell(float(getattr(effects, a)[k]), float(getattr(effects, a + '_ci')[k])):>15}"
            for a, _ in cols)).rstrip())
    return out


def through_partners(names: Any, full_total: Any, full_total_ci: Any,
                     independent_total: Any, independent_total_ci: Any, *,
                     margin: float = 0.1) -> list[str]:
    """Sentences naming the inputs that matter largely through their correlated partners.

    An input is named when its full total index exceeds its independent total index by more
    than ``margin``, by more than the two half-widths together and by more than a factor of
    two: most of what it is involved in is carried by the inputs it is correlated with.

    Parameters
    ----------
    names
        Parameter names [-].
    full_total, full_total_ci, independent_total, independent_total_ci
        The two total indices per parameter and their half-widths [-].
    margin
        Smallest difference worth a sentence [-].

    Returns
    -------
    list of str

    Examples
    --------
    >>> through_partners(["a.width", "b.width"], [0.37, 0.40], [0.09, 0.02], [0.08, 0.38],
    ...                  [0.03, 0.02])[0][:51]
    'a.width matters largely through its correlated part'
    """
    out = []
    for k, name in enumerate(names):
        f, i = float(full_total[k]), float(independent_total[k])
        fc, ic = float(full_total_ci[k]), float(independent_total_ci[k])
        if (all(math.isfinite(v) for v in (f, i, fc, ic)) and f - i > max(margin, fc + ic)
                and i < 0.5 * f):
            out.append(f"{name} matters largely through its correlated partners: full total "
                       f"index {f:.2f} ± {fc:.2f}, independent total index {i:.2f} ± {ic:.2f} "
                       "(what it adds once its partners are known)")
    return out


def shapley_lines(study: Any, sc: Any, *, top: int,
                  output: str = "inner_surface_temperature") -> list[str]:
    """Lines of the Shapley effects of one output of one exposure.

    Parameters
    ----------
    study
        The study.
    sc
        Its :class:`plyrisk.analysis.study.ScenarioAnalysis` with ``shapley`` effects.
    top
        Parameters and layers listed.
    output
        The output.
    """
    from plyrisk.methods.shapley import HOW_TO_READ
    from plyrisk.text.indices import first_layer, layer_label

    a = study.analysis
    ranking = sc.ranking.get(output) or []
    groups = sc.group_ranking.get(output) or []
    effects = sc.shapley.get(output, (None, None))[0]
    thr = f"±{a.index_ci_threshold:g}"
    lines = []
    if effects is not None and effects.constant_output:
        return [f"Shapley effects: {output} is the same in every sample; no effects"]
    if effects is not None:
        dropped = (f", {effects.permutations_dropped} dropped (non-converged draws)"
                   if effects.permutations_dropped else "")
        lines.append(f"Shapley effects ({'correlated' if study.correlations else 'independent'}"
                     f" inputs; {effects.permutations_used} permutations{dropped}; "
                     f"{100 * a.confidence:g} % bootstrap intervals; ok = half-width ≤ {thr}, "
                     "WIDE = not converged; they sum to one):")
    lines += [_line(r, item) for r, item in enumerate(ranking[:top], start=1)]
    table = dependent_index_lines(effects, [item.name for item in ranking[:top]])
    if table:
        lines.append("indices of dependent inputs (full: with what the correlated partners "
                     "carry; indep.: the input's own part; first-order and total; "
                     f"{100 * a.confidence:g} % bootstrap intervals):")
        lines += table
        lines += [f"  {t}" for t in _partners(effects)]
    if groups:
        lines.append("layers (sum of their parameters' Shapley effects):")
        lines += [_line(r, item, layer_label(item.name))
                  for r, item in enumerate(groups[:top], start=1)]
        first = first_layer(groups)  # never the hot or cold side
        if first is not None:
            text = (f"dominant layer: {first.name} (Shapley effect {first.total:.2f} ± "
                    f"{first.total_ci:.2f}")
            if groups[0] is not first:
                text += (f"; the {groups[0].name} itself moves it more: Shapley effect "
                         f"{groups[0].total:.2f} ± {groups[0].total_ci:.2f}")
            lines.append(text + ")")
    rerun = rerun_line(study, sc, output)
    if rerun:
        lines.append(f"  {rerun}")
    lines += ["  " + t for t in textwrap.wrap(HOW_TO_READ, 96)]
    return lines


def _partners(effects: Any) -> list[str]:
    """:func:`through_partners` of one output's effects (none without the four indices)."""
    if effects is None or effects.full_total is None or effects.independent_total is None:
        return []
    return through_partners(effects.names, effects.full_total, effects.full_total_ci,
                            effects.independent_total, effects.independent_total_ci)


def rerun_line(study: Any, sc: Any, output: str) -> str:
    """What to rerun with when some Shapley effects of ``output`` are wider than the study's
    ``index_ci_threshold`` ("" when none is, or no count would do)."""
    from plyrisk.analysis.shapley import rerun_counts

    a = study.analysis
    thr = f"±{a.index_ci_threshold:g}"
    unconv = [i for i in (*(sc.ranking.get(output) or []), *(sc.group_ranking.get(output) or []))
              if not i.converged]
    counts = [c for e in sc.shapley.get(output, (None, None)) if e is not None
              for c in (rerun_counts(e, ci_threshold=a.index_ci_threshold),) if c is not None]
    if not (unconv and counts):
        return ""
    from plyrisk.design.copula import shapley_layout

    perm, joint = max(c[0] for c in counts), max(c[1] for c in counts)
    samples = max(joint, int(a.samples))
    runs = shapley_layout(samples, perm, len(study.parameters)).n_rows
    cost = f" ({runs} model runs per exposure)"
    if joint > int(a.samples):
        return (f"{len(unconv)} effect interval(s) wider than {thr} (for some, the joint draws "
                f"behind Var(Y) alone exceed it): rerun with [study] samples = {joint} and "
                f"permutations = {perm} or more to settle the ranking{cost}")
    return (f"{len(unconv)} effect interval(s) wider than {thr}: rerun with [study] "
            f"permutations = {perm} or more to settle the ranking{cost}")
