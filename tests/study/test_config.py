"""The study config: validation messages, SI conversion, parameters, nominal model."""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import pytest
from scipy import stats

from plyrisk.models.boundary import ColdSurface, HotEnvironment
from plyrisk.models.stack import Gap, Solid, StackError
from plyrisk.study.config import (
    SECTIONS,
    ConfigError,
    assemble,
    load_study,
    loads_study,
    override,
    require_runnable,
    stack_key_path,
)

ROOT = Path(__file__).resolve().parents[2]
CONFIGS = sorted((ROOT / "configs").glob("*.toml"))
BAD = sorted((ROOT / "tests" / "data" / "bad_configs").glob("*.toml"))

BASE = """
[study]
title = "Invented test study"
method = "saltelli"
samples = 64
seed = 1
limit = "44 degC"

[hot_side]
kind = "environment"
incident_flux = "2 kW/m^2"
gas_temperature = "40 degC"
convection_coefficient = "10 W/m^2/K"

[[layer]]
name = "shell"
kind = "solid"
thickness = "0.5 mm"
conductivity = "0.05 W/m/K"
emissivity = 0.9

[[layer]]
name = "skin gap"
kind = "gap"
width = "2 mm"

[cold_side]
kind = "surface"
temperature = "34 degC"
"""


def study_with(old: str, new: str, base: str = BASE):
    assert old in base
    return loads_study(base.replace(old, new, 1), source="test.toml")


def expectation(path: Path) -> str:
    first = path.read_text().splitlines()[0]
    assert first.startswith("# expect: ")
    return first[len("# expect: "):]


# ----------------------------------------------------------------------------------------------
# Bad configs
# ----------------------------------------------------------------------------------------------


def test_there_are_enough_bad_configs():
    assert len(BAD) >= 20


@pytest.mark.parametrize("path", BAD, ids=[p.stem for p in BAD])
def test_bad_config_is_one_line_naming_the_key(path):
    with pytest.raises(ConfigError, match=expectation(path)) as info:
        load_study(path)
    text = str(info.value)
    assert "\n" not in text
    assert text.startswith(f"{path}: ")
    assert info.value.source == str(path)
    assert info.value.key_path  # every case names where the mistake is


def test_missing_file():
    with pytest.raises(ConfigError, match=r"^nope/missing\.toml: no such file$"):
        load_study("nope/missing.toml")


def test_directory_is_not_a_file(tmp_path):
    with pytest.raises(ConfigError, match=r"not a regular file \(a FIFO, device or folder\)"):
        load_study(tmp_path)


def test_malformed_toml_names_line():
    with pytest.raises(ConfigError, match=r"^test\.toml: line 3, column \d+: invalid TOML: "):
        loads_study('[study]\ntitle = "x"\nmethod = \n', source="test.toml")


def test_error_message_format():
    err = ConfigError("configs/x.toml", "layer[2].thickness", "must be positive,\n got -0.5 mm")
    assert str(err) == "configs/x.toml: layer[2].thickness: must be positive, got -0.5 mm"
    assert str(ConfigError("x.toml", "", "no such file")) == "x.toml: no such file"


@pytest.mark.parametrize(
    ("old", "new", "match"),
    [
        ('method = "saltelli"', 'method = "pce"\nlhs_optimization = "annealing"',
         r"study\.lhs_optimization: unknown lhs_optimization 'annealing'"),
        ("seed = 1", "seed = -1", r"study\.seed: must be at least 0, got -1"),
        ("seed = 1", "seed = 1.5", r"study\.seed: expected a whole number >= 0, got 1\.5"),
        ("samples = 64", "samples = 0", r"study\.samples: must be at least 8, got 0"),
        ('limit = "44 degC"', "limit = 44", r"study\.limit: a bare number needs a unit"),
        ('limit = "44 degC"', 'limit = "44 degC"\npercentiles = [95, 5]',
         r"study\.percentiles: must be strictly increasing"),
        ('limit = "44 degC"', 'limit = "44 degC"\npercentiles = [0, 50]',
         r"study\.percentiles\[0\]: expected a number between 0 and 100 \(exclusive\), got 0"),
        ('limit = "44 degC"', 'limit = "44 degC"\nconfidence = 90',
         r"study\.confidence: expected a number between 0 and 1"),
        ('limit = "44 degC"', 'limit = "44 degC"\noutputs = ["inner_surface_temperature"]',
         r"study\.outputs\[0\]: 'inner_surface_temperature' is always analysed"),
        ('limit = "44 degC"', 'limit = "44 degC"\noutputs = ["heat_flux", "heat_flux"]',
         r"study\.outputs\[1\]: duplicate output 'heat_flux'"),
        ('title = "Invented test study"', 'title = ""', r"study\.title: expected a non-empty"),
        ('title = "Invented test study"\n', "", r"study: missing key 'title'"),
        ("[study]", "[model]\nradiation = \"approximate\"\n\n[study]",
         r"model\.radiation: unknown radiation 'approximate'; valid: exact, linearized"),
        ("[study]", "[model]\nconvection = \"yes\"\n\n[study]",
         r"model\.convection: expected true or false, got 'yes'"),
        ("[study]", "[model]\ntolerance = \"0 K\"\n\n[study]",
         r"model\.tolerance: must be positive, got 0 K"),
        ("[study]", "[model]\nmax_iteration = 5\n\n[study]",
         r"model: unknown key 'max_iteration'; did you mean 'max_iterations'\?"),
        ('width = "2 mm"', 'width = "2 mm"\norientation = "sideways"',
         r"layer\[1\]\.orientation: unknown orientation 'sideways'; valid: vertical, "
         r"horizontal-up, horizontal-down"),
        ('width = "2 mm"', 'width = { uniform = ["2 mm"] }',
         r"layer\[1\]\.width\.uniform: expected a list \[low, high\], got a list"),
        ('width = "2 mm"', 'width = { triangular = ["1 mm", "4 mm", "3 mm"] }',
         r"layer\[1\]\.width\.triangular: mode 4 mm must lie between low 1 mm and high 3 mm"),
        ('width = "2 mm"', 'width = { lognormal = { median = "2 mm", sd = "1 mm" } }',
         r"layer\[1\]\.width\.lognormal: unknown key 'sd'"),
        ('width = "2 mm"', 'width = { lognormal = { median = "2 mm" } }',
         r"layer\[1\]\.width\.lognormal: lognormal needs \{median, gsd\} or \{mean, cv\}"),
        ('width = "2 mm"', 'width = { normal = { mean = "2 mm", sd = "1 mm" }, uniform = [1, 2] }',
         r"layer\[1\]\.width: expected a distribution table with one key"),
        ('width = "2 mm"', 'width = { uniform = ["-1 mm", "2 mm"] }',
         r"layer\[1\]\.width\.uniform\.low: must be positive, got -1 mm"),
        ("emissivity = 0.9", "emissivity = { uniform = [0.8, 1.1] }",
         r"layer\[0\]\.emissivity\.uniform\.high: must be in \(0, 1\], got 1\.1"),
        ("emissivity = 0.9", "emissivity = { beta = { mean = 0.5, sd = 0.6 } }",
         r"layer\[0\]\.emissivity\.beta: beta mean=0\.5, sd=0\.6 is impossible"),
        ("emissivity = 0.9", "emissivity = { nominal = 0.9, tolerance = 0.2 }",
         r"layer\[0\]\.emissivity\.tolerance: the tolerance band 0\.9 \+ 0\.2 leaves the "
         r"physical range"),
        ('thickness = "0.5 mm"', 'thickness = { nominal = "0.5 mm", upper = "0.1 mm" }',
         r"layer\[0\]\.thickness: tolerance needs \{nominal, tolerance, coverage\?\} or "
         r"\{nominal, upper, lower, coverage\?\}"),
        ('thickness = "0.5 mm"', 'thickness = { nominal = "0.5 mm", tolerance = "0.1 mm", '
         "coverage = 0 }", r"layer\[0\]\.thickness\.coverage: must be greater than 0, got 0"),
        ('name = "shell"', 'name = "shell.outer"', r"layer\[0\]\.name: 'shell\.outer' is not "
         r"allowed"),
        ('name = "shell"', 'name = "hot_side"', r"layer\[0\]\.name: 'hot_side' is not allowed"),
        ('kind = "surface"', 'kind = "surfce"',
         r"cold_side\.kind: unknown cold_side kind 'surfce'; did you mean 'surface'\?"),
        ('[cold_side]\nkind = "surface"\n', '[cold_side]\n', r"cold_side: missing key 'kind'"),
        ('incident_flux = "2 kW/m^2"', 'incident_flux = "-2 kW/m^2"',
         r"hot_side\.incident_flux: must be zero or positive, got -2 kW/m\^2"),
        ('gas_temperature = "40 degC"\n', "", r"hot_side: missing key 'gas_temperature'"),
    ],
)
def test_more_bad_values(old, new, match):
    with pytest.raises(ConfigError, match=match) as info:
        study_with(old, new)
    assert "\n" not in str(info.value)
    assert str(info.value).startswith("test.toml: ")


def test_uncertain_contact_resistance_before_a_gap():
    # an arrangement error, reported at the uncertain key
    with pytest.raises(ConfigError, match=r"layer\[0\]\.contact_resistance: .*needs a solid"):
        study_with("emissivity = 0.9", 'emissivity = 0.9\ncontact_resistance = { uniform = '
                   '["0.001 m^2*K/W", "0.01 m^2*K/W"] }')


def test_stack_key_path():
    assert stack_key_path(StackError("x", index=2, quantity="thickness")) == "layer[2].thickness"
    assert stack_key_path(StackError("x", index=3)) == "layer[3]"
    assert stack_key_path(StackError("x", side="hot_side", quantity="temperature")) == (
        "hot_side.temperature"
    )
    assert stack_key_path(StackError("x")) == "layer"


# ----------------------------------------------------------------------------------------------
# Good configs
# ----------------------------------------------------------------------------------------------


@pytest.mark.parametrize("path", CONFIGS, ids=[p.stem for p in CONFIGS])
def test_demo_configs_load_and_are_labelled_invented(path):
    study = load_study(path)
    assert "invented" in study.title.lower()
    assert "INVENTED" in path.read_text()
    assert study.parameters
    assert study.text == path.read_text()
    require_runnable(study)


def test_demo_configs_exist():
    assert {p.stem for p in CONFIGS} >= {"reflective_garment", "equipment_blanket",
                                         "small_demo"}


def test_reflective_garment():
    study = load_study(ROOT / "configs" / "reflective_garment.toml")
    assert study.analysis.method == "saltelli"
    assert study.analysis.samples == 2048
    assert study.analysis.outputs == ("heat_flux",)
    assert study.analysis.limit == pytest.approx(44 + 273.15)  # Source: BIPM SI Brochure 9th ed.
    assert study.limit_unit == "degC"
    assert isinstance(study.hot_side, HotEnvironment)
    assert isinstance(study.cold_side, ColdSurface)
    assert [type(x) for x in study.layers] == [Solid, Gap, Solid, Solid, Gap]
    names = study.parameter_names
    assert names[0] == "hot_side.convection_coefficient"
    assert "aluminised shell.thickness" in names
    assert "outer gap.width" in names
    p = {q.name: q for q in study.parameters}["aluminised shell.emissivity_hot"]
    assert p.group == "aluminised shell"
    assert p.target == ("layer", 0, "emissivity_hot")
    assert p.key_path == "layer[0].emissivity_hot"
    assert p.unit == ""
    w = {q.name: q for q in study.parameters}["outer gap.width"]
    assert (w.unit, w.target, w.group) == ("mm", ("layer", 1, "width"), "outer gap")
    assert study.groups[0] == "hot_side"
    sc = study.scenarios
    assert sc.quantity == "incident_flux"
    np.testing.assert_allclose(sc.values, [500.0, 1000.0, 1500.0])  # Source: SI prefix k = 1e3
    assert sc.labels == ("0.5 kW/m^2", "1 kW/m^2", "1.5 kW/m^2")
    assert sc.unit == "kW/m^2"


def test_nominal_model_is_si():
    study = loads_study(BASE)
    shell, gap = study.layers
    assert shell.thickness == pytest.approx(5e-4)
    assert shell.emissivity_hot == shell.emissivity_cold == 0.9
    assert gap.width == pytest.approx(2e-3)
    assert gap.orientation == "vertical"
    assert study.hot_side.incident_flux == pytest.approx(2000.0)
    assert study.hot_side.gas_temperature == pytest.approx(313.15)
    assert study.hot_side.surroundings_temperature is None
    assert study.cold_side.temperature == pytest.approx(307.15)
    assert study.parameters == ()
    assert study.scenarios is None
    with pytest.raises(ConfigError, match=r"study\.method: method 'saltelli' needs at least one "
                       "uncertain parameter"):
        require_runnable(study)


def test_defaults():
    study = loads_study(BASE)
    a, m = study.analysis, study.model
    assert a.percentiles == (0.05, 0.50, 0.95)
    assert (a.confidence, a.bootstrap, a.index_ci_threshold) == (0.90, 200, 0.05)
    assert (a.chunk_size, a.lhs_optimization, a.outputs) == (65536, None, ())
    assert (m.radiation, m.convection, m.tolerance, m.max_iterations) == (
        "exact", False, 1e-6, 100)
    assert m.solver_kwargs() == {"radiation": "exact", "convection_enabled": False,
                                 "tolerance": 1e-6, "max_iterations": 100}


def test_options_are_read():
    text = BASE.replace('limit = "44 degC"', 'limit = "110 degF"\npercentiles = [2.5, 97.5]\n'
                        'confidence = 0.95\nbootstrap = 50\nchunk_size = 1000\n'
                        'lhs_optimization = "lloyd"\noutputs = ["heat_flux", "shell | skin gap"]'
                        ).replace('method = "saltelli"', 'method = "pce"').replace(
        "[study]", '[model]\nradiation = "linearized"\nconvection = true\n'
        'tolerance = "1e-4 delta_degC"\nmax_iterations = 30\n\n[study]')
    study = loads_study(text)
    a, m = study.analysis, study.model
    assert a.percentiles == (0.025, 0.975)
    assert a.limit == pytest.approx((110 + 459.67) / 1.8)  # Source: NIST SP 811 (2008), B.8
    assert study.limit_unit == "degF"
    assert (a.confidence, a.bootstrap, a.chunk_size, a.lhs_optimization) == (
        0.95, 50, 1000, "lloyd")
    assert a.outputs == ("heat_flux", "shell | skin gap")
    assert (m.radiation, m.convection, m.max_iterations) == ("linearized", True, 30)
    assert m.tolerance == pytest.approx(1e-4)


def test_temperature_distribution_spread_is_a_difference():
    study = study_with('temperature = "34 degC"',
                       'temperature = { normal = { mean = "34 degC", sd = "2 degC" } }')
    (p,) = study.parameters
    assert p.name == "cold_side.temperature"
    assert p.target == ("cold_side", "temperature")
    assert p.group == "cold_side"
    assert p.distribution.params["mean"] == pytest.approx(307.15)  # Source: BIPM SI Brochure
    assert p.distribution.params["sd"] == pytest.approx(2.0)  # a difference: 2 degC = 2 K
    np.testing.assert_allclose(p.to_unit([307.15]), [34.0])
    assert p.to_unit(2.0, difference=True) == pytest.approx(2.0)
    assert p.describe() == "normal(mean 34 degC, sd 2 K)"  # a spread: K


def test_emissivity_shorthand_is_one_parameter_for_both_faces():
    study = study_with("emissivity = 0.9", "emissivity = { triangular = [0.8, 0.85, 0.9] }")
    (p,) = study.parameters
    assert p.name == "shell.emissivity"
    assert p.fields == ("emissivity_hot", "emissivity_cold")
    assert study.layers[0].emissivity_hot == study.layers[0].emissivity_cold == 0.85
    layers, _, _ = assemble(study, {"shell.emissivity": np.array([0.81, 0.89])})
    np.testing.assert_array_equal(layers[0].emissivity_hot, [0.81, 0.89])
    np.testing.assert_array_equal(layers[0].emissivity_cold, [0.81, 0.89])


def test_tolerance_convention():
    study = study_with('thickness = "0.5 mm"',
                       'thickness = { nominal = "0.5 mm", tolerance = "0.06 mm" }')
    d = study.parameters[0].distribution
    assert d.kind == "tolerance"
    assert d.nominal == pytest.approx(5e-4)
    assert d.std == pytest.approx(0.06e-3 / 3, rel=1e-9)  # documented: band = +/-3 sd
    assert study.parameters[0].describe() == "0.5 mm +/- 0.06 mm (normal, band = +/-3 sd)"


def test_normal_range_and_truncation_report():
    study = study_with('thickness = "0.5 mm"',
                       'thickness = { normal = { mean = "0.3 mm", sd = "0.1 mm" } }')
    p = study.parameters[0]
    # Source: standard normal distribution, P(Z < -3) = 0.00135 (NIST/SEMATECH e-Handbook of
    # Statistical Methods, sec. 1.3.6.7.1, table of the normal cdf).
    assert p.distribution.truncated_mass == pytest.approx(0.00135, abs=5e-6)
    assert p.truncation() == "truncated at 0 mm: 0.13 % of the mass cut"
    lo, hi = p.distribution.interval(0.90)
    # Source: NIST/SEMATECH e-Handbook, sec. 1.3.6.7.1: z(0.95) = 1.645; cross-checked with
    # scipy.stats.truncnorm for the truncated distribution.
    ref = stats.truncnorm(-3.0, np.inf, loc=0.3e-3, scale=0.1e-3)
    np.testing.assert_allclose([lo, hi], ref.ppf([0.05, 0.95]), rtol=1e-9)
    assert hi == pytest.approx(0.3e-3 + 1.645 * 0.1e-3, rel=2e-3)


def test_lognormal_forms_and_units():
    study = study_with('width = "2 mm"', 'width = { lognormal = { mean = "2 mm", cv = 0.3 } }')
    p = study.parameters[0]
    assert p.unit == "mm"
    assert p.distribution.mean == pytest.approx(2e-3, rel=1e-9)
    # Source: lognormal moments, cv^2 = exp(sigma^2) - 1 (cross-checked with scipy.stats.lognorm)
    assert p.distribution.std / p.distribution.mean == pytest.approx(0.3, rel=1e-9)


def test_bounded_support_may_touch_an_open_bound():
    study = study_with('width = "2 mm"', 'width = { uniform = ["0 mm", "4 mm"] }')
    assert study.parameters[0].distribution.interval(0.90)[0] > 0


def test_assemble_and_scenarios():
    text = BASE.replace('width = "2 mm"', 'width = { uniform = ["1 mm", "3 mm"] }') + (
        '\n[scenarios]\nquantity = "incident_flux"\nvalues = ["1 kW/m^2", "3 kW/m^2"]\n')
    study = loads_study(text)
    layers, hot, cold = assemble(study, {"skin gap.width": np.array([1e-3, 2e-3])}, scenario=1)
    np.testing.assert_array_equal(layers[1].width, [1e-3, 2e-3])
    assert hot.incident_flux == pytest.approx(3000.0)
    assert cold == study.cold_side
    assert study.layers[1].width == pytest.approx(2e-3)  # nominal untouched
    with pytest.raises(ValueError, match=r"unknown parameter\(s\) \['nope'\]"):
        assemble(study, {"nope": np.ones(2)})


def test_duplicate_scenario_level():
    with pytest.raises(ConfigError, match=r"scenarios\.values\[1\]: duplicate level 2000 W/m\^2"):
        loads_study(BASE + '\n[scenarios]\nquantity = "incident_flux"\n'
                    'values = ["2 kW/m^2", "2000 W/m^2"]\n', source="t")


def test_sections_registry_order():
    assert list(SECTIONS) == ["study", "model", "exposure", "hot_side", "layer", "wearer",
                             "cold_side", "scenarios", "tolerances", "screening", "compute",
                             "correlations", "report"]


def test_report_formats_default_png_and_svg_on_request():
    assert loads_study(BASE, source="t").report_formats == ("png",)
    text = BASE + '\n[report]\nformats = ["svg", "png"]\n'
    assert loads_study(text, source="t").report_formats == ("png", "svg")


@pytest.mark.parametrize("value", ['["svg"]', '["png", "pdf"]', '"png"', '["png", "png"]'])
def test_bad_report_formats_are_one_line_errors(value):
    with pytest.raises(ConfigError, match=r"^t: report\.formats: expected a list of figure "
                       r"formats from 'png', 'svg' that includes 'png'[^\n]*$"):
        loads_study(BASE + f"\n[report]\nformats = {value}\n", source="t")


def test_every_bad_config_is_labelled():
    for path in BAD:
        lines = path.read_text().splitlines()
        re.compile(expectation(path))
        assert lines[1].startswith("# Invented test input")


# ----------------------------------------------------------------------------------------------
# Methods: saltelli, pce, morris; [screening]
# ----------------------------------------------------------------------------------------------


@pytest.mark.parametrize(("old", "match"), [
    ("sobol", r'^test\.toml: study\.method: "sobol" is now "saltelli"$'),
    ("lhs", r'^test\.toml: study\.method: "lhs" is now method = "pce" with design = "lhs"$'),
    ("random", r'study\.method: "random" is now method = "pce" with design = "random"$'),
])
def test_former_method_names_give_the_new_spelling(old, match):
    with pytest.raises(ConfigError, match=match):
        study_with('method = "saltelli"', f'method = "{old}"')


def test_method_design_and_defaults():
    a = loads_study(BASE).analysis
    assert (a.method, a.design) == ("saltelli", "sobol")
    a = study_with('method = "saltelli"', 'method = "pce"').analysis
    assert (a.method, a.design, a.pce_max_loo_error) == ("pce", "lhs", 1e-3)
    a = study_with('method = "saltelli"', 'method = "pce"\ndesign = "sobol"\n'
                   'pce_max_loo_error = 0.01').analysis
    assert (a.design, a.pce_max_loo_error) == ("sobol", 0.01)
    a = study_with('method = "saltelli"', 'method = "morris"').analysis
    assert (a.method, a.design, a.levels, a.screening_threshold) == ("morris", "morris", 4, 0.1)
    a = study_with('method = "saltelli"', 'method = "morris"\nlevels = 6\n'
                   'screening_threshold = 0.2').analysis
    assert (a.levels, a.screening_threshold) == (6, 0.2)


@pytest.mark.parametrize(("old", "new", "match"), [
    ('method = "saltelli"', 'method = "pce"\ndesign = "sobol"\nsamples_ = 1',
     r"study: unknown key 'samples_'"),
    ("samples = 64", "samples = 100\ndesign = \"sobol\"\nmethod_ = 1",
     r"study: unknown key 'method_'"),
    ('method = "saltelli"', 'method = "pce"\ndesign = "random"\nlhs_optimization = "lloyd"',
     r"study\.lhs_optimization: applies only to method = 'pce' with design = 'lhs', not "
     r"method = 'pce' with design = 'random'"),
    ('method = "saltelli"\nsamples = 64', 'method = "pce"\ndesign = "sobol"\nsamples = 100',
     r"study\.samples: must be a power of 2 for design = 'sobol'.*use 64 or 128"),
    ('method = "saltelli"', 'screening_threshold = 0.1\nmethod = "saltelli"',
     r"study\.screening_threshold: applies only to method = 'morris', not 'saltelli'"),
    ('method = "saltelli"', 'method = "morris"\nlevels = 0',
     r"study\.levels: must be at least 2, got 0"),
])
def test_method_keys(old, new, match):
    with pytest.raises(ConfigError, match=match):
        study_with(old, new)


SCREENED = BASE.replace('width = "2 mm"', 'width = { uniform = ["1 mm", "3 mm"] }').replace(
    'thickness = "0.5 mm"', 'thickness = { nominal = "0.5 mm", tolerance = "0.05 mm" }')


def test_screening_section_is_read():
    study = loads_study(SCREENED + '\n[screening]\ntrajectories = 12\nlevels = 6\n'
                        'threshold = 0.05\nkeep = ["skin gap.width"]\n')
    s = study.screening
    assert (s.trajectories, s.levels, s.threshold, s.keep) == (12, 6, 0.05, ("skin gap.width",))
    assert loads_study(SCREENED + "\n[screening]\ntrajectories = 8\n").screening.levels == 4
    assert loads_study(SCREENED).screening is None


def test_method_override_onto_a_screened_study_says_why_not():
    study = loads_study(SCREENED + "\n[screening]\ntrajectories = 8\n")
    with pytest.raises(ValueError, match=r"--method morris: the config has a \[screening\] "
                       r"section, which screens before a saltelli or pce study \(method 'morris' "
                       r"is a screening already\); remove it"):
        override(study, method="morris")
    with pytest.raises(ValueError, match=r"method 'shapley' takes no screening stage: the "
                       r"Morris screening moves one input at a time"):
        override(study, method="shapley")


@pytest.mark.parametrize(("extra", "match"), [
    ("trajectories = 4", r"screening\.trajectories: must be at least 8, got 4"),
    ("trajectories = 10\nthreshold = 1", r"screening\.threshold: expected a number between"),
    ("trajectories = 10\nlevels = 3", r"screening\.levels: must be even"),
    ("trajectories = 10\nkeep = \"skin gap.width\"", r"screening\.keep: expected a list"),
    ("trajectories = 10\nrepeats = 2", r"screening: unknown key 'repeats'"),
])
def test_screening_errors(extra, match):
    with pytest.raises(ConfigError, match=match):
        loads_study(SCREENED + f"\n[screening]\n{extra}\n", source="test.toml")


def test_screening_needs_two_parameters():
    study = loads_study(BASE.replace('width = "2 mm"', 'width = { uniform = ["1 mm", "3 mm"] }')
                        + "\n[screening]\ntrajectories = 10\n", source="t.toml")
    with pytest.raises(ConfigError, match=r"screening: screening needs at least 2 uncertain"):
        require_runnable(study)


TRUNCATION = Path(__file__).resolve().parents[1] / "data" / "truncation_invented.toml"


def test_a_cut_of_more_than_20_percent_needs_truncated_true(tmp_path):
    # Source: Abramowitz & Stegun (1964), Table 26.1: Phi(-0.75) = 0.2266 — the mass of
    # normal(0.6 mm, 0.8 mm) below zero
    with pytest.raises(ConfigError, match=r"layer\[0\]\.thickness: the physical bounds cut "
                                          r"22\.7 % of this distribution's mass \(more than "
                                          r"20 %\).*add truncated = true"):
        load_study(TRUNCATION)
    accepted = tmp_path / "accepted.toml"
    accepted.write_text(TRUNCATION.read_text().replace('sd = "0.8 mm" } }',
                                                       'sd = "0.8 mm" }, truncated = true }'))
    from plyrisk.study.values import truncation_warnings

    warnings = truncation_warnings(load_study(accepted).parameters)
    # Source: Abramowitz & Stegun (1964), Table 26.1: Phi(-2.22) = 0.0132 — normal(2 mm,
    # 0.9 mm) below zero, a cut of more than 1 %: a warning without an error
    assert len(warnings) == 2
    assert warnings[0].startswith("WARNING: fabric.thickness: truncated at 0 mm: 23 % of the "
                                  "mass cut")
    assert "accepted with truncated = true" in warnings[0]
    assert warnings[1].startswith("WARNING: gap.width: truncated at 0 mm: 1.3 % of the mass cut")
    bad = tmp_path / "bad.toml"
    bad.write_text(accepted.read_text().replace("truncated = true", 'truncated = "yes"'))
    with pytest.raises(ConfigError, match=r"layer\[0\]\.thickness\.truncated: expected true or "
                                          r"false"):
        load_study(bad)
