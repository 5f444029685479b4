"""Terminal lines of Shapley effects (``method = "shapley"``): the ranking per parameter and
per layer, the dominant layer, the convergence and how to read the effects."""

from __future__ import annotations

import textwrap
from typing import Any

__all__ = ["shapley_lines"]


def _line(rank: int, item: Any, extra: str = "") -> str:
    ok = "ok" if item.converged else "WIDE"
    return (f"  {rank}. {item.name:<32} {item.total:6.3f} ± {item.total_ci:.3f}  {ok:<4}"
            f"{extra}").rstrip()


def _extra(effects: Any, name: str) -> str:
    """The full first-order and independent total index of one parameter, as text."""
    if effects is None or effects.full_first is None:
        return ""
    k = list(effects.names).index(name)
    return (f"   full first {effects.full_first[k]:6.3f} ± {effects.full_first_ci[k]:.3f}"
            f"   independent total {effects.independent_total[k]:6.3f} ± "
            f"{effects.independent_total_ci[k]:.3f}")


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
                     "WIDE = not converged; they sum to one; beside them the 'full' first-order "
                     "and 'independent' total index, Var(E[Y|X_i]) / Var(Y) and "
                     "E[Var(Y|X_-i)] / Var(Y)):")
    lines += [_line(r, item, _extra(effects, item.name))
              for r, item in enumerate(ranking[:top], start=1)]
    if groups:
        lines.append("layers (sum of their parameters' Shapley effects):")
        lines += [_line(r, item) for r, item in enumerate(groups[:top], start=1)]
        first = groups[0]
        lines.append(f"dominant layer: {first.name} (Shapley effect {first.total:.2f} ± "
                     f"{first.total_ci:.2f})")
    unconv = [i for i in (*ranking, *groups) if not i.converged]
    if unconv:
        need = max(i.suggested_base_samples or 0 for i in unconv)
        lines.append(f"  {len(unconv)} effect interval(s) wider than {thr}: rerun with "
                     f"[study] permutations = {need} or more to settle the ranking")
    lines += ["  " + t for t in textwrap.wrap(HOW_TO_READ, 96)]
    return lines
