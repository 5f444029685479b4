"""Command-line basics: examples in every --help, ``plyrisk init``, -q/-v, line width,
temperature differences, the convection note and the ``[tolerances] design`` key."""

from __future__ import annotations

import contextlib
import io
from pathlib import Path

import pytest

from plyrisk import cli
from plyrisk.cli import build_parser, main
from plyrisk.templates import TEMPLATES, template_text
from plyrisk.text.tables import WIDTH

ROOT = Path(__file__).resolve().parents[2]
CONFIGS = ROOT / "configs"
VERBS = sorted(build_parser()._subparsers._group_actions[0].choices)  # type: ignore[union-attr]


def run(argv: list[str]) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        code = main(argv)
    return code, out.getvalue(), err.getvalue()


def long_lines(text: str) -> list[str]:
    return [line for line in text.splitlines() if len(line) > WIDTH]


@pytest.mark.parametrize("verb", VERBS)
def test_every_verb_help_ends_with_examples(verb):
    code, out, _ = run([verb, "--help"])
    assert code == 0
    examples = out.split("examples:\n", 1)[1].splitlines()
    assert examples and all(line.startswith("  plyrisk ") for line in examples)
    assert not long_lines(out)


def test_top_level_help_lists_init_and_examples():
    code, out, _ = run(["--help"])
    assert code == 0 and "init" in out and "examples:" in out


def test_run_help_names_no_former_method():
    _, out, _ = run(["run", "--help"])
    assert "sobol\"" not in out and "method = sobol" not in out.lower()


# ----------------------------------------------------------------------------------------------
# init
# ----------------------------------------------------------------------------------------------


@pytest.mark.parametrize("name", list(TEMPLATES))
def test_templates_are_the_invented_demos(name):
    text = template_text(name)
    assert text == (CONFIGS / TEMPLATES[name][1]).read_text(encoding="utf-8")
    assert "INVENTED" in text


@pytest.mark.parametrize("name", list(TEMPLATES))
def test_init_writes_a_config_that_passes_check(tmp_path, name):
    path = tmp_path / f"{name}.toml"
    code, out, err = run(["init", "--template", name, str(path)])
    assert code == 0, err
    assert "plyrisk check" in out
    text = path.read_text(encoding="utf-8")
    assert text.startswith("# Starting config written by `plyrisk init")
    assert "INVENTED" in text and "engineering estimates only" in text.lower()
    code, out, err = run(["check", str(path)])
    assert code == 0, err
    assert not long_lines(out)


def test_init_default_template_is_the_garment(tmp_path):
    path = tmp_path / "study.toml"
    assert run(["init", str(path)])[0] == 0
    assert path.read_text(encoding="utf-8").endswith(template_text("garment"))


def test_init_never_overwrites(tmp_path):
    path = tmp_path / "mine.toml"
    path.write_text("# my own work\n", encoding="utf-8")
    code, out, err = run(["init", str(path)])
    assert code == 2 and out == ""
    assert len(err.strip().splitlines()) == 1 and "already exists" in err
    assert path.read_text(encoding="utf-8") == "# my own work\n"


def test_init_unknown_template_is_one_line(tmp_path):
    code, _, err = run(["init", "--template", "jacket", str(tmp_path / "x.toml")])
    assert code == 2 and len(err.strip().splitlines()) == 1 and "jacket" in err
    assert not (tmp_path / "x.toml").exists()


# ----------------------------------------------------------------------------------------------
# -q / -v, internal errors
# ----------------------------------------------------------------------------------------------


@pytest.mark.parametrize("verb", ["run", "tolerances"])
def test_quiet_and_verbose_exclude_each_other(verb):
    code, _, err = run([verb, str(CONFIGS / "small_demo.toml"), "-q", "-v"])
    assert code == 2 and "not allowed with" in err


def test_verbose_stamps_progress_lines(capsys):
    from plyrisk.pipeline import run as pipeline_run

    pipeline_run.set_progress_clock(True)
    try:
        pipeline_run.phase("solving", False)
    finally:
        pipeline_run.set_progress_clock(False)
    pipeline_run.phase("analysing", False)
    err = capsys.readouterr().err.splitlines()
    assert err[0].startswith("plyrisk: [") and " s] solving ..." in err[0]
    assert err[1] == "plyrisk: analysing ..."


def test_internal_error_is_one_line_and_verbose_shows_it(monkeypatch):
    import plyrisk.study.config as config

    def broken(*args, **kwargs):
        raise RuntimeError("a bug")

    monkeypatch.setattr(config, "load_study", broken)
    code, _, err = run(["tolerances", str(CONFIGS / "small_demo.toml")])
    assert code == 1 and len(err.strip().splitlines()) == 1 and "--verbose" in err
    with pytest.raises(RuntimeError, match="a bug"):
        main(["tolerances", str(CONFIGS / "small_demo.toml"), "--verbose"])
    assert cli.PROG == "plyrisk"


# ----------------------------------------------------------------------------------------------
# Terminal output
# ----------------------------------------------------------------------------------------------


@pytest.mark.parametrize("config", sorted(p.name for p in CONFIGS.glob("*.toml")))
def test_check_output_fits_the_width(config):
    code, out, err = run(["check", str(CONFIGS / config)])
    assert code == 0, err
    assert not long_lines(out), long_lines(out)


def test_temperature_differences_are_not_shown_as_levels(tmp_path):
    text = (CONFIGS / "small_demo.toml").read_text(encoding="utf-8")
    path = tmp_path / "f.toml"
    path.write_text(text.replace('limit = "44 degC"', 'limit = "111.2 degF"'), encoding="utf-8")
    code, out, err = run(["check", str(path)])
    assert code == 0, err
    margin = next(line for line in out.splitlines() if line.startswith("Margin to the limit"))
    assert "delta_degF" in margin  # a margin is a difference, never "x degF"
    rows = [line for line in out.splitlines()
            if line.startswith(("  shirt fabric ", "  air gap ")) and " solid " in line
            or " gap " in line and line.startswith("  air gap ")]
    assert len(rows) == 2 and all("delta_degF" in line for line in rows)  # the drops


@pytest.mark.slow
def test_run_and_tolerances_output_fit_the_width(tmp_path):
    code, out, err = run(["run", str(CONFIGS / "small_demo.toml"), "--samples", "64",
                          "--out", str(tmp_path / "a"), "--quiet", "--no-report"])
    assert code == 0, err
    assert not long_lines(out), long_lines(out)
    code, out, err = run(["tolerances", str(CONFIGS / "reflective_garment.toml"), "--samples",
                          "128", "--out", str(tmp_path / "b"), "--quiet"])
    assert code == 0, err
    assert not long_lines(out), long_lines(out)
    assert "Independent verification -> " in out and "Nominal shift of" in out


CONVECTING = """
[study]
title = "Invented test: a wide gap, convection on"
method = "pce"
design = "random"
samples = 8
seed = 3
limit = "60 degC"

[model]
convection = true

[hot_side]
kind = "temperature"
temperature = { uniform = ["140 degC", "160 degC"] }

[[layer]]
name = "shell"
kind = "solid"
thickness = "0.5 mm"
conductivity = "0.05 W/m/K"

[[layer]]
name = "wide gap"
kind = "gap"
width = "25 mm"

[cold_side]
kind = "surface"
temperature = "34 degC"
"""


@pytest.mark.slow
def test_no_convection_warning_when_the_user_turned_convection_on(tmp_path):
    path = tmp_path / "conv.toml"
    path.write_text(CONVECTING, encoding="utf-8")
    code, out, err = run(["run", str(path), "--out", str(tmp_path / "o"), "--quiet",
                          "--no-report"])
    assert code == 0, err
    assert "onset of natural convection" in out  # the samples past onset are counted
    assert not [line for line in out.splitlines()
                if "WARNING" in line and "convection" in line.lower()]
