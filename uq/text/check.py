"""The text of ``plyrisk check``: the study, its uncertain parameters and the nominal solution.

Pure formatting of a nominal solve (every uncertain input at its nominal value); printing is
left to :mod:`plyrisk.cli`.
"""

from __future__ import annotations

import warnings
from dataclasses import replace
from typing import Any

import numpy as np

from plyrisk.cautions import cautions_text
from plyrisk.errors import ConfigError
from plyrisk.methods import get_method
from plyrisk.models.network import NetworkSolution, solve_network
from plyrisk.models.stack import StackError
from plyrisk.study.config import require_runnable, stack_key_path
from plyrisk.study.definition import Study
from plyrisk.study.values import truncation_warnings
from plyrisk.text.tables import text_table


def check_text(study: Study) -> tuple[str, bool]:
    """The report of ``plyrisk check`` for a parsed study.

    Parameters
    ----------
    study
        The parsed study.

    Returns
    -------
    text, converged
        The text to print, and whether the nominal solve (and every scenario) converged.

    Raises
    ------
    plyrisk.errors.ConfigError
        When the nominal stack is invalid (naming the key path).
    """
    if study.transient is not None:
        from plyrisk.text.check_transient import transient_check_text

        return transient_check_text(study, _parameter_lines(study))
    solution, notes = _nominal_solve(study)
    hot_side, cold_side = study.steady_sides()
    if cold_side.kind == "temperature":
        notes.append("the cold side prescribes the innermost face's temperature, so the "
                     "inner-surface temperature is fixed; use a cold side of kind 'surface' or "
                     "'environment' to study it, or analyse other outputs")
    flux = solution.heat_flux[0]
    if np.isfinite(flux) and flux < 0:
        notes.append("the heat flows from the cold side toward the exposed face (negative heat "
                     "flux): check the exposure and the cold-side temperatures")
    out: list[str] = [f"Study: {study.title}", f"Config: {study.source}", ""]
    out += _analysis_lines(study)
    out += [""] + _parameter_lines(study)
    out += [""] + _solution_lines(study, solution)
    converged = bool(np.all(solution.converged))
    if study.scenarios is not None:
        scen, scen_ok = _scenario_lines(study, notes)
        out += [""] + scen
        converged &= scen_ok
    if notes:
        out += ["", "Notes"] + [f"  - {n}" for n in dict.fromkeys(notes)]
    out += ["", cautions_text()]
    return "\n".join(out), converged


def _solve(study: Study, layers, hot, cold, notes: list[str]) -> NetworkSolution:
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        try:
            solution = solve_network(layers, hot, cold, **study.model.solver_kwargs())
        except StackError as err:
            raise ConfigError(study.source, stack_key_path(err), str(err)) from None
    notes.extend(" ".join(str(w.message).split()) for w in caught)
    return solution


def _nominal_solve(study: Study) -> tuple[NetworkSolution, list[str]]:
    notes: list[str] = []
    solution = _solve(study, study.layers, study.hot_side, study.cold_side, notes)
    return solution, notes


def _analysis_lines(study: Study) -> list[str]:
    a, m = study.analysis, study.model
    method = get_method(a.method).describe(study)
    lines = [
        f"Analysis: {method}; seed {a.seed}",
        f"  limit: {_limit_words(study)} {study.format_limit_value(a.limit)}; criterion "
        f"{a.criterion or 'P95 <= limit (the default)'}",
        "  percentiles: " + ", ".join(f"{100 * q:g}" for q in a.percentiles)
        + f"; confidence {100 * a.confidence:g} %",
        f"Model: radiation {m.radiation}; natural convection in gaps "
        f"{'on' if m.convection else 'off'}; tolerance {m.tolerance:g} K; "
        f"at most {m.max_iterations} iterations",
    ]
    if a.outputs:
        lines.insert(3, "  extra outputs: " + ", ".join(a.outputs))
    try:
        require_runnable(study)
    except ConfigError as err:
        lines.append(f"  NOTE: this study cannot be run yet: {err.key_path}: {err.message}")
    return lines


def _parameter_lines(study: Study) -> list[str]:
    if not study.parameters:
        return ["Uncertain parameters: none (every input is fixed)"]
    width = max(len(p.name) for p in study.parameters)
    lines = [f"Uncertain parameters ({len(study.parameters)}): the distribution as given, then "
             "its mean, 5-95 % range and truncation"]
    for p in study.parameters:
        d = p.distribution
        lo, hi = d.interval(0.90)
        lo_u, hi_u = p.to_unit([lo, hi])
        cut = p.truncation()
        lines += [f"  {p.name:<{width}}  {p.describe()}",
                  f"  {'':<{width}}    mean {p.format(d.mean)}; 5-95 % "
                  f"{lo_u:.4g} .. {hi_u:.4g} {p.unit}".rstrip()]
        if cut != "none":
            lines.append(f"  {'':<{width}}    {cut}")
    from plyrisk.text.correlations import correlation_lines

    return (lines
            + [f"  {w}" for w in truncation_warnings(study.parameters)]
            + correlation_lines(study))


def _solution_lines(study: Study, sol: NetworkSolution) -> list[str]:
    unit = study.limit_unit
    fmt_t = study.format_temperature
    lines = ["Nominal solution (every uncertain input at its nominal value)"]
    if not bool(sol.converged[0]):
        n = int(sol.iterations[0])
        lines += [
            f"  WARNING: the nominal solve did not converge after {n} iteration"
            f"{'' if n == 1 else 's'} (or reached an unphysical state): no results.",
            "  Check the inputs, or raise [model] max_iterations.",
        ]
        return lines
    r = sol.layer_resistance[0]
    total = float(np.sum(r))
    rows, notes = [], []
    for j, name in enumerate(sol.element_names):
        kind = sol.element_kinds[j]
        gap = kind == "gap"
        note = ""
        if gap and bool(sol.convection_onset[0, j]):
            note = ("natural convection included" if study.model.convection else
                    "past convection onset; convection is off (set [model] convection = true)")
        rows.append([
            name, kind, f"{r[j]:.4g}",
            fmt_t(sol.layer_temperature_drop[0, j], difference=True),
            f"{100 * r[j] / total:.1f}",
            f"{100 * sol.radiative_share[0, j]:.1f}" if gap else "-",
            f"{sol.rayleigh_number[0, j]:.3g}" if gap else "-",
        ])
        if note:
            notes.append(f"  {name}: {note}")
    header = ["element", "kind", "R [m^2 K/W]", "drop", "share of R [%]", "radiative [%]",
              "Rayleigh"]
    lines += text_table(header, rows) + notes
    lines += ["", f"Interface temperatures [{unit or 'K'}] (hot side first)"]
    lines += text_table(["interface", "temperature"],
                    [[n, fmt_t(t)] for n, t in zip(sol.interface_names,
                                                   sol.interface_temperature[0], strict=True)])
    t_in = float(sol.inner_surface_temperature[0])
    lines += [
        "",
        f"Heat flux: {float(sol.heat_flux[0]):.4g} W/m^2",
        f"Total thermal resistance of the elements: {total:.4g} m^2 K/W",
        f"Inner-surface temperature: {fmt_t(t_in)}",
        _margin_text(study, _limit_value(study, sol, 0)),
    ]
    return lines


def _limit_words(study: Study) -> str:
    return study.limit_output_text


def _limit_value(study: Study, sol: Any, k: int) -> float:
    """The nominal value of the limit output (``[study] limit_output``) of sample ``k``."""
    name = study.analysis.limit_output
    if name in ("inner_surface_temperature", "heat_flux"):
        return float(getattr(sol, name)[k])
    return float(sol.interface_temperature[k, list(sol.interface_names).index(name)])


def _margin_shown(study: Study, margin: float) -> str:
    if study.analysis.limit_output == "heat_flux":
        return study.format_limit_value(abs(margin))
    return study.format_temperature(abs(margin), difference=True)


def _margin_text(study: Study, value: float) -> str:
    margin = study.analysis.limit - value
    shown = _margin_shown(study, margin)
    limit = study.format_limit_value(study.analysis.limit)
    if study.analysis.limit_output != "inner_surface_temperature":
        limit += f" on the {_limit_words(study)}"
    if margin >= 0:
        return f"Margin to the limit ({limit}): {shown} below the limit"
    return f"Margin to the limit ({limit}): EXCEEDS the limit by {shown}"


def _scenario_lines(study: Study, notes: list[str]) -> tuple[list[str], bool]:
    sc = study.scenarios
    assert sc is not None, "called for a study with [scenarios]"
    swept: dict[str, Any] = {sc.quantity: np.asarray(sc.values, dtype=float)}
    hot_side, cold_side = study.steady_sides()
    hot = replace(hot_side, **swept)
    sol = _solve(study, study.layers, hot, cold_side, notes)
    rows = []
    for k, label in enumerate(sc.labels):
        if not bool(sol.converged[k]):
            rows.append([label, "did not converge", "-", "-"])
            continue
        t_in = float(sol.inner_surface_temperature[k])
        margin = study.analysis.limit - _limit_value(study, sol, k)
        rows.append([label, study.format_temperature(t_in), f"{float(sol.heat_flux[k]):.4g}",
                     ("" if margin >= 0 else "-") + _margin_shown(study, margin)])
    header = [f"hot_side.{sc.quantity}", "inner surface", "heat flux [W/m^2]",
              "margin to limit"]
    title = f"Scenarios: hot_side.{sc.quantity} swept, nominal inputs (negative margin = over)"
    return [title] + text_table(header, rows), bool(np.all(sol.converged))
