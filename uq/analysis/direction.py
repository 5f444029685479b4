"""Which way an underestimated gap heat flow moves an output: the direction of the cautions.

Still-air conduction in a gap past the onset of natural convection, and linearized radiation,
both carry *less* heat across a gap than the physics would. Whether that makes a result hotter
(not conservative for an upper limit) or cooler depends on where the gap sits relative to the
output: a face on the cold side of the gap warms when more heat crosses it, a face on its hot
side cools (the garment's inner face in front of a skin gap is such a face), and the heat
flux through the assembly always rises.

:func:`gap_directions` does not assume this: it measures, at the nominal point, the sign of
the output's sensitivity to each gap's conductance by solving the nominal stack again with the
gap narrowed by a small step (more still-air conduction) and dividing the change of the output
by the change of the gap's conductance ``1 / R_gap``. Where the sign cannot be resolved (no
converged solve, a change below the solver's resolution, or signs that differ between swept
exposures) the direction is reported as unknown.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from plyrisk.models.stack import Gap

RELATIVE_STEP = 0.02
"""Relative narrowing of a gap's width for the sensitivity."""

RESOLUTION = 1e-7
"""Relative change of the output below which its sign is not trusted."""


@dataclass(frozen=True)
class GapDirection:
    """The sign of ``d output / d (gap conductance)`` at the nominal point.

    Attributes
    ----------
    gap
        The gap's layer name.
    sign
        +1: more heat across the gap raises the output; −1: lowers it; 0: not known.
    output
        The output's name, e.g. ``"inner_surface_temperature"``.
    """

    gap: str
    sign: int
    output: str

    def less_heat_effect(self, label: str) -> str:
        """What carrying too little heat across this gap does to the output, in words.

        Parameters
        ----------
        label
            How the output is named in the text, e.g. ``"inner-surface temperature"``.
        """
        if self.sign > 0:
            return (f"gap {self.gap!r}: too little heat across it gives a lower {label}: "
                    "not conservative")
        if self.sign < 0:
            return (f"gap {self.gap!r}: too little heat across it gives a higher {label} "
                    "(conservative for that limit; the heat reaching the cold side is "
                    "underestimated)")
        return (f"gap {self.gap!r}: the direction of its effect on the {label} is not known "
                "(not resolved at the nominal point)")


def _output(solution, output: str) -> float:
    value = np.asarray(getattr(solution, output), dtype=float)
    return float(value.reshape(-1)[0])


def _resistance(solution, element: int) -> float:
    r = np.asarray(solution.layer_resistance, dtype=float)
    return float(r.reshape(-1, len(solution.element_layers))[0, element])


def gap_directions(study, *, output: str = "inner_surface_temperature",
                   step: float = RELATIVE_STEP) -> tuple[GapDirection, ...]:
    """The sign of each gap's effect on ``output`` at the nominal point.

    Parameters
    ----------
    study
        The parsed study.
    output
        A per-sample scalar output of the network solution.
    step
        Relative narrowing of the gap's width.

    Returns
    -------
    tuple of GapDirection
        One per gap of the stack, in stack order.

    Examples
    --------
    >>> from plyrisk.study.config import load_study
    >>> study = load_study("configs/small_demo.toml")  # shirt, then an air gap to the skin
    >>> [(d.gap, d.sign) for d in gap_directions(study)]
    [('air gap', -1)]
    """
    from plyrisk.models.network import solve_network
    from plyrisk.propagate.evaluate import model_objects, scenario_count

    gaps = [i for i, layer in enumerate(study.layers) if isinstance(layer, Gap)]
    signs: dict[int, set[int]] = {i: set() for i in gaps}
    scenarios = [None] if study.scenarios is None else range(scenario_count(study))
    kwargs = study.model.solver_kwargs()
    for scenario in scenarios:
        layers, hot, cold = model_objects(study, None, scenario=scenario)
        base = solve_network(layers, hot, cold, validate=False, **kwargs)
        for i in gaps:
            moved = list(layers)
            moved[i] = replace(layers[i], width=np.asarray(layers[i].width) * (1.0 - step))
            new = solve_network(moved, hot, cold, validate=False, **kwargs)
            e = list(base.element_layers).index(i)
            if not (bool(np.all(base.converged)) and bool(np.all(new.converged))):
                signs[i].add(0)
                continue
            d_out = _output(new, output) - _output(base, output)
            d_h = 1.0 / _resistance(new, e) - 1.0 / _resistance(base, e)
            scale = max(abs(_output(base, output)), 1.0)
            if abs(d_out) <= RESOLUTION * scale or d_h == 0.0 or not np.isfinite(d_out * d_h):
                signs[i].add(0)
            else:
                signs[i].add(int(np.sign(d_out) * np.sign(d_h)))
    return tuple(GapDirection(study.layers[i].name, s.pop() if len(s) == 1 else 0, output)
                 for i, s in signs.items())


def limit_scope_note(study, *, label: str = "inner-surface temperature") -> str:
    """A note naming what the limit protects, and the gaps whose effect on it is opposite to
    their effect on the heat reaching the cold side; ``""`` when there is none.

    Parameters
    ----------
    study
        The parsed study.
    label
        How the limited output is named.
    """
    on_limit = gap_directions(study)
    on_flux = {d.gap: d.sign for d in gap_directions(study, output="heat_flux")}
    opposite = [d.gap for d in on_limit if d.sign and on_flux.get(d.gap) == -d.sign]
    if not opposite:
        return ""
    gaps = ", ".join(repr(g) for g in opposite)
    return (f"the limit applies to the {label} (the innermost face of the assembly), not to the "
            f"heat reaching the cold side: more heat across gap {gaps} lowers this face but "
            "raises the heat flux to the cold side (opposite signs at the nominal point), so "
            "the indices and tolerances of that gap rank its effect on the face, not on what "
            "reaches the cold side (the skin, where it is one); see heat_flux in results.nc")
