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

FLASH = """
[study]
title = "Invented test: one fabric over a gap to skin, short exposure"
method = "saltelli"
samples = {samples}
seed = 5

[exposure]
incident_flux = {{ uniform = ["20 kW/m^2", "40 kW/m^2"] }}
gas_temperature = "700 degC"
convection_coefficient = "30 W/m^2/K"
surroundings_temperature = "25 degC"
duration = {{ uniform = ["3 s", "6 s"] }}
horizon = "12 s"
output_step = "0.5 s"

[[layer]]
name = "fabric"
kind = "solid"
thickness = "0.6 mm"
conductivity = "0.05 W/m/K"
density = {{ uniform = ["250 kg/m^3", "350 kg/m^3"] }}
specific_heat = "1300 J/kg/K"

[[layer]]
name = "gap"
kind = "gap"
width = "2 mm"

[wearer]
kind = "skin"
"""
"""A small transient study (invented): 3 uncertain inputs, skin behind one fabric and a gap."""


def flash(samples: int = 16, *, flux: str = '["40 kW/m^2", "80 kW/m^2"]', study: str = "",
          tail: str = "", specific_heat: str = '"1300 J/kg/K"') -> str:
    """:data:`FLASH` with a stronger exposure by default (about half the samples burn within
    the horizon), extra ``[study]`` lines, a different fabric specific heat and sections
    appended (``tail``)."""
    text = FLASH.format(samples=samples).replace('["20 kW/m^2", "40 kW/m^2"]', flux)
    text = text.replace('specific_heat = "1300 J/kg/K"', f"specific_heat = {specific_heat}")
    return text.replace("seed = 5\n", f"seed = 5\n{study}\n" if study else "seed = 5\n") + tail
