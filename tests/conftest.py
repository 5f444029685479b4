"""Fixtures shared by the whole suite: the demo studies and small study results, built once.

Everything here is session-scoped and shared between test modules, so a test must never change
a shared object in place: studies are frozen dataclasses (use ``dataclasses.replace``), datasets
are copied first (``ds.copy(deep=True)``) by any test that edits them.

The studies are inputs only: the demo configs and the study below are invented, and their
numbers are never check values.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, replace
from pathlib import Path

import pytest
import xarray as xr

from plyrisk.study.config import load_study, loads_study
from plyrisk.study.definition import Study

ROOT = Path(__file__).resolve().parents[1]
CONFIGS = ROOT / "configs"


# ----------------------------------------------------------------------------------------------
# The demo studies of configs/
# ----------------------------------------------------------------------------------------------


@pytest.fixture(scope="session")
def small_demo() -> Study:
    """configs/small_demo.toml, loaded once."""
    return load_study(CONFIGS / "small_demo.toml")


@pytest.fixture(scope="session")
def reflective_garment() -> Study:
    """configs/reflective_garment.toml (a sweep of three exposures), loaded once."""
    return load_study(CONFIGS / "reflective_garment.toml")


@pytest.fixture(scope="session")
def small_demo_64(small_demo: Study) -> Study:
    """The small demo with 64 base samples."""
    return replace(small_demo, analysis=replace(small_demo.analysis, samples=64))


@pytest.fixture(scope="session")
def small_demo_64_dataset(small_demo_64: Study) -> xr.Dataset:
    """The results dataset of the 64-sample small demo, run in this process."""
    from plyrisk.pipeline.run import run_study

    return run_study(small_demo_64, quiet=True).dataset


# ----------------------------------------------------------------------------------------------
# The invented study behind the figure and report tests
# ----------------------------------------------------------------------------------------------

# INVENTED study for tests only: two fabrics with a contact resistance and a gap to the skin.
# It describes no real product; its numbers are never check values.
INVENTED = """
[study]
title = "Invented test: two fabrics, a contact and a skin gap"
method = "{method}"
samples = {samples}
seed = 5
limit = "44 degC"

[hot_side]
kind = "environment"
incident_flux = "1.5 kW/m^2"
gas_temperature = "35 degC"
convection_coefficient = {{ uniform = ["8 W/m^2/K", "14 W/m^2/K"] }}

[[layer]]
name = "outer fabric"
kind = "solid"
thickness = {{ nominal = "0.8 mm", tolerance = "0.08 mm" }}
conductivity = {{ uniform = ["0.04 W/m/K", "0.06 W/m/K"] }}
emissivity = {{ triangular = [0.6, 0.75, 0.85] }}
contact_resistance = {{ uniform = ["0.002 m^2*K/W", "0.006 m^2*K/W"] }}

[[layer]]
name = "liner"
kind = "solid"
thickness = "1.5 mm"
conductivity = "0.045 W/m/K"
emissivity = 0.9

[[layer]]
name = "skin gap"
kind = "gap"
width = {{ lognormal = {{ median = "2 mm", gsd = 1.4 }} }}

[cold_side]
kind = "surface"
temperature = "34 degC"
{scenarios}
"""
SWEEP = '[scenarios]\nquantity = "incident_flux"\nvalues = [{levels}]'

InventedDataset = Callable[..., xr.Dataset]


@pytest.fixture(scope="session")
def invented_dataset() -> InventedDataset:
    """``invented_dataset(method="saltelli", swept=False, levels=3)``: the results dataset of the
    invented study, each distinct study run once per session.

    ``swept`` adds an incident-flux sweep of ``levels`` exposures (0.5, 1.5, 3, 5 kW/m^2); the
    cache key is the study itself, so every spelling of the same call shares one run.
    """
    from plyrisk.pipeline.run import run_study

    built: dict[tuple[str, int], xr.Dataset] = {}

    def build(method: str = "saltelli", swept: bool = False, levels: int = 3) -> xr.Dataset:
        key = (method, levels if swept else 0)
        if key not in built:
            values = ", ".join(f'"{v} kW/m^2"' for v in (0.5, 1.5, 3.0, 5.0)[:levels])
            text = INVENTED.format(method=method, samples=64 if method == "saltelli" else 128,
                                   scenarios=SWEEP.format(levels=values) if swept else "")
            built[key] = run_study(loads_study(text, source="<invented test>"),
                                   quiet=True).dataset
        return built[key]

    return build


# ----------------------------------------------------------------------------------------------
# Output folders of `plyrisk run`, steady and transient (summary.txt, summary.json, report)
# ----------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class RunFolder:
    """A finished ``plyrisk run``: its folder, exit code and printed summary."""

    out: Path
    code: int
    stdout: str
    stderr: str


def _cli_run(config: Path, out: Path, *extra: str) -> RunFolder:
    import contextlib
    import io

    from plyrisk.cli import main

    stdout, stderr = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(stdout), contextlib.redirect_stderr(stderr):
        code = main(["run", str(config), "--out", str(out), "--quiet", *extra])
    return RunFolder(out, code, stdout.getvalue(), stderr.getvalue())


@pytest.fixture(scope="session")
def steady_run(tmp_path_factory) -> RunFolder:
    """``plyrisk run configs/small_demo.toml --samples 64`` with its report."""
    out = tmp_path_factory.mktemp("steady_run")
    return _cli_run(CONFIGS / "small_demo.toml", out / "out", "--samples", "64")


@pytest.fixture(scope="session")
def transient_run(tmp_path_factory) -> RunFolder:
    """``plyrisk run`` of the small invented transient test study (16 base samples)."""
    from tests.study_texts import FLASH

    folder = tmp_path_factory.mktemp("transient_run")
    config = folder / "flash.toml"
    config.write_text(FLASH.format(samples=16), encoding="utf-8")
    return _cli_run(config, folder / "out")
