"""Small study configs used as inputs by the pipeline tests (inputs only, not check values)."""

PANEL = """
[study]
title = "test panel"
method = "saltelli"
samples = {samples}
seed = {seed}
limit = "60 degC"

[hot_side]
kind = "environment"
incident_flux = "{flux}"
gas_temperature = "40 degC"
convection_coefficient = "10 W/m^2/K"

[[layer]]
name = "shell"
kind = "solid"
thickness = {shell_thickness}
conductivity = {shell_conductivity}
emissivity = 0.9

[[layer]]
name = "gap"
kind = "gap"
width = {gap_width}

[[layer]]
name = "liner"
kind = "solid"
thickness = {liner_thickness}
conductivity = {liner_conductivity}
emissivity = 0.9

[cold_side]
kind = "environment"
ambient_temperature = "30 degC"
convection_coefficient = "8 W/m^2/K"
{extra}
"""


def panel(**kw) -> str:
    """A three-layer panel; every value may be overridden with a TOML literal."""
    values = {
        "samples": 256,
        "seed": 3,
        "flux": "3 kW/m^2",
        "shell_thickness": '"0.8 mm"',
        "shell_conductivity": '"0.06 W/m/K"',
        "gap_width": '"3 mm"',
        "liner_thickness": '"2 mm"',
        "liner_conductivity": '"0.04 W/m/K"',
        "extra": "",
    }
    values.update(kw)
    return PANEL.format(**values)
