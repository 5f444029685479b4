"""Random layer stacks and boundaries for the solver tests (inputs, not check values).

Every draw comes from the seeded ``numpy.random.Generator`` passed in. The ranges are wide
enough to exercise every element and boundary law (radiation-dominated hot gaps, thin contact
resistances, conductivity slopes of both signs) while keeping every solid's conductivity
positive at the temperatures reached.
"""

from __future__ import annotations

import numpy as np

from plyrisk.models.boundary import (
    ColdEnvironment,
    ColdSurface,
    ColdTemperature,
    HotEnvironment,
    HotFlux,
    HotTemperature,
)
from plyrisk.models.stack import GAP_ORIENTATIONS, Gap, Solid

HOT_KINDS = ("flux", "temperature", "environment")
COLD_KINDS = ("temperature", "surface", "environment")


def _log_uniform(rng: np.random.Generator, lo: float, hi: float, n: int) -> np.ndarray:
    return np.exp(rng.uniform(np.log(lo), np.log(hi), n))


def random_solid(rng: np.random.Generator, name: str, n: int, *, contact: bool) -> Solid:
    """A solid with per-sample thickness, conductivity, slope and emissivities."""
    return Solid(
        name=name,
        thickness=rng.uniform(0.2e-3, 3e-3, n),
        conductivity=_log_uniform(rng, 0.03, 0.5, n),
        conductivity_slope=rng.uniform(-1e-5, 1.5e-4, n),
        reference_temperature=rng.uniform(280.0, 400.0, n),
        emissivity_hot=rng.uniform(0.1, 1.0, n),
        emissivity_cold=rng.uniform(0.1, 1.0, n),
        contact_resistance=_log_uniform(rng, 1e-4, 1e-2, n) if contact else None,
    )


def random_gap(rng: np.random.Generator, name: str, n: int) -> Gap:
    """A gap of random orientation with per-sample width and height."""
    return Gap(
        name=name,
        width=rng.uniform(0.5e-3, 10e-3, n),
        orientation=GAP_ORIENTATIONS[int(rng.integers(len(GAP_ORIENTATIONS)))],
        height=rng.uniform(0.1, 1.0, n),
    )


def random_layers(rng: np.random.Generator, n: int, *, cold_kind: str) -> list:
    """1–4 solids, each followed by a gap, a contact resistance or perfect contact."""
    count = int(rng.integers(1, 5))
    layers: list = []
    for i in range(count):
        last = i == count - 1
        link = "end" if last else ("gap", "contact", "touch")[int(rng.integers(3))]
        layers.append(random_solid(rng, f"solid{i}", n, contact=link == "contact"))
        if link == "gap":
            layers.append(random_gap(rng, f"gap{i}", n))
    if cold_kind == "surface":
        layers.append(random_gap(rng, "gap to surface", n))
    return layers


def random_hot_side(rng: np.random.Generator, kind: str, n: int):
    """A hot-side boundary of the given kind with per-sample values."""
    if kind == "flux":
        return HotFlux(heat_flux=rng.uniform(0.0, 3000.0, n))
    if kind == "temperature":
        return HotTemperature(temperature=rng.uniform(310.0, 1100.0, n))
    return HotEnvironment(
        incident_flux=rng.uniform(0.0, 40e3, n),
        gas_temperature=rng.uniform(300.0, 1200.0, n),
        convection_coefficient=rng.uniform(5.0, 60.0, n),
        surroundings_temperature=rng.uniform(300.0, 1000.0, n) if rng.random() < 0.5 else None,
    )


def random_cold_side(rng: np.random.Generator, kind: str, n: int):
    """A cold-side boundary of the given kind with per-sample values."""
    if kind == "temperature":
        return ColdTemperature(temperature=rng.uniform(290.0, 310.0, n))
    if kind == "surface":
        return ColdSurface(
            temperature=rng.uniform(300.0, 310.0, n), emissivity=rng.uniform(0.9, 0.99, n)
        )
    return ColdEnvironment(
        ambient_temperature=rng.uniform(280.0, 310.0, n),
        convection_coefficient=rng.uniform(2.0, 20.0, n),
        surroundings_temperature=rng.uniform(280.0, 310.0, n) if rng.random() < 0.5 else None,
    )


def random_case(rng: np.random.Generator, n: int, *, hot_kind: str, cold_kind: str):
    """A random stack with ``n`` samples and boundaries of the given kinds."""
    layers = random_layers(rng, n, cold_kind=cold_kind)
    return layers, random_hot_side(rng, hot_kind, n), random_cold_side(rng, cold_kind, n)
