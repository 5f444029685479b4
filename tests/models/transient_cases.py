"""Invented assemblies shared by the transient-model tests (not check values)."""

from __future__ import annotations

import numpy as np

from plyrisk.models.exposure import TransientExposure
from plyrisk.models.mesh import MeshLayout
from plyrisk.models.stack import Gap, Solid


def invented_garment(n: int, seed: int):
    """An invented two-fabric garment with two air gaps, ``n`` random samples."""
    rng = np.random.default_rng(seed)
    u = rng.uniform
    shell = Solid("shell", thickness=u(0.5e-3, 1.0e-3, n), conductivity=u(0.04, 0.09, n),
                  conductivity_slope=u(0.0, 1e-4, n), density=u(250, 550, n),
                  specific_heat=u(1100, 1500, n), specific_heat_slope=u(0.0, 1.0, n),
                  emissivity_hot=u(0.8, 0.95, n), emissivity_cold=u(0.8, 0.95, n))
    liner = Solid("liner", thickness=u(0.8e-3, 2.5e-3, n), conductivity=u(0.03, 0.06, n),
                  density=u(80, 250, n), specific_heat=u(1100, 1500, n),
                  emissivity_hot=u(0.8, 0.95, n), emissivity_cold=u(0.8, 0.95, n))
    layers = [shell, Gap("outer gap", width=u(1e-3, 5e-3, n)), liner,
              Gap("inner gap", width=u(1e-3, 6e-3, n))]
    exposure = TransientExposure(
        incident_flux=u(20e3, 60e3, n), gas_temperature=u(900.0, 1400.0, n),
        convection_coefficient=u(20.0, 60.0, n), exposure_duration=u(3.0, 10.0, n),
        horizon=30.0)
    return layers, exposure


def coarse_layout(layers) -> MeshLayout:
    """A coarse grid (for comparisons of two integrators on one grid, not of accuracy)."""
    def graded(cells: int, ratio: float, two_sided: bool):
        sizes = ratio ** np.arange(cells // 2 if two_sided else cells)
        if two_sided:
            sizes = np.concatenate([sizes, sizes[::-1]])
        edges = np.concatenate([[0.0], np.cumsum(sizes)])
        return tuple(float(x) for x in edges / edges[-1])

    names = [layer.name for layer in layers if isinstance(layer, Solid)]
    fractions = [graded(6, 1.3, True) for _ in names]
    names += ["epidermis", "dermis", "subcutis"]
    fractions += [graded(4, 1.3, True), graded(10, 1.3, False), graded(8, 1.6, False)]
    return MeshLayout(tuple(names), tuple(fractions))
