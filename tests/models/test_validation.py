"""Input checks: bad values and bad arrangements are named in a one-line error."""

from __future__ import annotations

import numpy as np
import pytest

from plyrisk.models.boundary import (
    ColdEnvironment,
    ColdSurface,
    ColdTemperature,
    HotEnvironment,
    HotFlux,
    HotTemperature,
)
from plyrisk.models.network import solve_network
from plyrisk.models.stack import Gap, Solid, StackError

HOT = HotTemperature(500.0)
COLD = ColdTemperature(300.0)


def shell(**changes):
    values = {"name": "shell", "thickness": 1e-3, "conductivity": 0.2}
    values.update(changes)
    return Solid(**values)


@pytest.mark.parametrize(
    ("changes", "quantity", "message"),
    [
        ({"thickness": 0.0}, "thickness", r"layer 'shell': thickness must be positive .*got 0\.0"),
        ({"thickness": -2e-3}, "thickness", r"thickness must be positive .*got -0\.002"),
        ({"thickness": np.array([1e-3, -1e-3])}, "thickness", r"got -0\.001"),
        ({"thickness": np.inf}, "thickness", r"thickness must be positive and finite, got inf"),
        ({"conductivity": 0.0}, "conductivity", r"layer 'shell': conductivity .*got 0\.0"),
        ({"conductivity": -0.1}, "conductivity", r"conductivity must be positive .*got -0\.1"),
        ({"emissivity_hot": 0.0}, "emissivity_hot", r"emissivity_hot must be in \(0, 1\], got 0"),
        ({"emissivity_cold": 1.2}, "emissivity_cold", r"emissivity_cold must be in \(0, 1\], got"
                                                      r" 1\.2"),
        ({"emissivity_cold": -0.5}, "emissivity_cold", r"got -0\.5"),
        ({"reference_temperature": -10.0}, "reference_temperature", r"got -10\.0"),
    ],
)
def test_bad_solid_values(changes, quantity, message):
    layers = [shell(**changes)]
    with pytest.raises(StackError, match=message) as info:
        solve_network(layers, HOT, COLD)
    assert info.value.index == 0
    assert info.value.quantity == quantity


@pytest.mark.parametrize(
    ("gap", "quantity", "message"),
    [
        (Gap("air", 0.0), "width", r"layer 'air': width must be positive .*got 0\.0"),
        (Gap("air", -1e-3), "width", r"width must be positive .*got -0\.001"),
        (Gap("air", 3e-3, height=0.0), "height", r"height must be positive .*got 0\.0"),
        (Gap("air", 3e-3, "diagonal"), "orientation", r"orientation 'diagonal' is not one of "
                                                      r"vertical, horizontal-up, horizontal-down"),
    ],
)
def test_bad_gap_values(gap, quantity, message):
    with pytest.raises(StackError, match=message) as info:
        solve_network([shell(), gap, shell(name="liner")], HOT, COLD)
    assert info.value.index == 1
    assert info.value.quantity == quantity


@pytest.mark.parametrize(
    ("hot", "cold", "side", "message"),
    [
        (HotTemperature(0.0), COLD, "hot_side", r"temperature must be above 0 K, got 0\.0 K"),
        (HotTemperature(-5.0), COLD, "hot_side", r"temperature must be above 0 K, got -5\.0 K"),
        (HOT, ColdTemperature(-1.0), "cold_side", r"temperature must be above 0 K, got -1\.0 K"),
        (HotEnvironment(1e4, 0.0, 20.0), COLD, "hot_side",
         r"gas_temperature must be above 0 K, got 0\.0 K"),
        (HotEnvironment(1e4, 900.0, 20.0, surroundings_temperature=-3.0), COLD, "hot_side",
         r"surroundings_temperature must be above 0 K, got -3\.0 K"),
        (HotEnvironment(-1.0, 900.0, 20.0), COLD, "hot_side",
         r"incident_flux must be zero or positive, got -1\.0"),
        (HotFlux(-10.0), COLD, "hot_side", r"heat_flux must be zero or positive, got -10\.0"),
        (HOT, ColdEnvironment(0.0, 10.0), "cold_side",
         r"ambient_temperature must be above 0 K, got 0\.0 K"),
        (HOT, ColdEnvironment(300.0, -1.0), "cold_side",
         r"convection_coefficient must be zero or positive, got -1\.0"),
    ],
)
def test_bad_boundary_values(hot, cold, side, message):
    with pytest.raises(StackError, match=message) as info:
        solve_network([shell()], hot, cold)
    assert info.value.side == side


@pytest.mark.parametrize(
    ("emissivity", "message"),
    [(0.0, r"emissivity must be in \(0, 1\], got 0\.0"),
     (1.5, r"emissivity must be in \(0, 1\], got 1\.5")],
)
def test_bad_surface_emissivity(emissivity, message):
    with pytest.raises(StackError, match=message):
        solve_network([shell(), Gap("air", 3e-3)], HOT, ColdSurface(306.0, emissivity))


@pytest.mark.parametrize(
    ("layers", "cold", "index", "message"),
    [
        ([], COLD, None, "the stack has no layers"),
        ([Gap("air", 3e-3), shell()], COLD, 0,
         r"layer 'air': the first layer \(the exposed face\) must be a solid, not a gap"),
        ([shell(), Gap("a1", 3e-3), Gap("a2", 3e-3), shell(name="liner")], COLD, 2,
         r"layers 'a1' and 'a2': two gaps in a row"),
        ([shell(), Gap("air", 3e-3)], COLD, 1,
         r"layer 'air': a gap at the cold end needs a solid face beyond it"),
        ([shell(), Gap("air", 3e-3)], ColdEnvironment(300.0, 10.0), 1,
         r"a gap at the cold end needs .*cold side is 'environment'"),
        ([shell()], ColdSurface(306.0), 0,
         r"layer 'shell': a cold side of kind 'surface' is reached across a gap"),
        ([shell(contact_resistance=1e-3), Gap("air", 3e-3), shell(name="liner")], COLD, 0,
         r"layer 'shell': contact_resistance needs a solid after it, but 'air' is a gap"),
        ([shell(), shell(name="liner", contact_resistance=1e-3)], COLD, 1,
         r"layer 'liner': contact_resistance needs a solid after it"),
    ],
)
def test_bad_arrangements(layers, cold, index, message):
    with pytest.raises(StackError, match=message) as info:
        solve_network(layers, HOT, cold)
    assert info.value.index == index


def test_bad_contact_resistance_value():
    with pytest.raises(StackError, match=r"contact_resistance must be positive .*got 0\.0"):
        solve_network([shell(contact_resistance=0.0), shell(name="liner")], HOT, COLD)


@pytest.mark.parametrize(
    ("options", "message"),
    [
        ({"radiation": "grey"}, r"radiation 'grey' is not one of exact, linearized"),
        ({"tolerance": 0.0}, r"tolerance must be positive, got 0\.0"),
        ({"max_iterations": 0}, r"max_iterations must be at least 1, got 0"),
        ({"chunk_size": 0}, r"chunk_size must be at least 1, got 0"),
    ],
)
def test_bad_solver_options(options, message):
    with pytest.raises(ValueError, match=message):
        solve_network([shell()], HOT, COLD, **options)


def test_mismatched_sample_counts():
    layers = [shell(thickness=np.full(3, 1e-3)), shell(name="liner", conductivity=np.ones(4))]
    with pytest.raises(StackError, match="liner: conductivity has 4 samples where others have 3"):
        solve_network(layers, HOT, COLD)
    with pytest.raises(StackError, match=r"must be a scalar or a 1-D array of samples"):
        solve_network([shell(thickness=np.full((2, 2), 1e-3))], HOT, COLD)
