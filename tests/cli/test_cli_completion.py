"""``plyrisk completion``: the script is generated from the parser and works in bash."""

from __future__ import annotations

import contextlib
import io
import shutil
import subprocess

import pytest

from plyrisk.cli import build_parser, main
from plyrisk.methods import METHODS
from plyrisk.text.completion import completion_script


def _script(shell: str) -> str:
    out = io.StringIO()
    with contextlib.redirect_stdout(out):
        assert main(["completion", shell]) == 0
    return out.getvalue()


def test_script_names_every_verb_and_option_of_the_parser():
    script = _script("bash")
    parser = build_parser()
    verbs = next(a for a in parser._actions if a.dest == "verb").choices
    for verb, sub in verbs.items():
        assert f"        {verb})" in script, verb
        for action in sub._actions:
            for option in action.option_strings:
                assert option in script, (verb, option)
    assert " ".join(METHODS) in script  # --method offers the methods


def test_zsh_loads_the_bash_function_through_bashcompinit():
    script = _script("zsh")
    assert "bashcompinit" in script and "complete -o filenames -F" in script


def test_unknown_shell_is_a_one_line_error(capsys):
    assert main(["completion", "fish"]) == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1 and "invalid choice: 'fish'" in err
    with pytest.raises(ValueError, match="shell must be one of bash, zsh, got 'fish'"):
        completion_script(build_parser(), "fish")


BASH = shutil.which("bash")


def _complete(script_path, folder, *words: str) -> list[str]:
    """COMPREPLY of the completion function for the command line ``words`` (the last word is
    the one being completed), run by bash in ``folder``."""
    quoted = " ".join(f"'{w}'" for w in words)
    command = (f"source '{script_path}'; complete -p plyrisk; COMP_WORDS=({quoted}); "
               f"COMP_CWORD={len(words) - 1}; _plyrisk_complete; "
               'printf "%s\\n" "${COMPREPLY[@]}"')
    done = subprocess.run([BASH, "--norc", "--noprofile", "-c", command], cwd=folder,
                          capture_output=True, text=True, check=True)
    lines = done.stdout.splitlines()
    assert lines[0] == "complete -o filenames -F _plyrisk_complete plyrisk"
    return sorted(line for line in lines[1:] if line)


@pytest.mark.skipif(BASH is None, reason="bash is not installed")
def test_bash_completes_verbs_options_and_files(tmp_path):
    script = tmp_path / "plyrisk.bash"
    script.write_text(_script("bash"), encoding="utf-8")
    folder = tmp_path / "work"
    (folder / "runs").mkdir(parents=True)
    for name in ("study.toml", "results.nc", "notes.txt"):
        (folder / name).write_text("", encoding="utf-8")
    assert _complete(script, folder, "plyrisk", "r") == ["report", "run"]
    assert _complete(script, folder, "plyrisk", "run", "") == ["runs", "study.toml"]
    assert _complete(script, folder, "plyrisk", "report", "") == ["results.nc", "runs"]
    assert _complete(script, folder, "plyrisk", "run", "study.toml", "--until") == [
        "--until-converged"]
    assert _complete(script, folder, "plyrisk", "run", "study.toml", "--method", "") == sorted(
        METHODS)
    assert _complete(script, folder, "plyrisk", "run", "study.toml", "--out", "") == ["runs"]
    assert _complete(script, folder, "plyrisk", "run", "study.toml", "--samples", "") == []
    assert _complete(script, folder, "plyrisk", "completion", "") == ["bash", "zsh"]
