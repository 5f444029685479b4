"""``plyrisk run --fail-if-not-met`` and the documented exit codes."""

from __future__ import annotations

from pathlib import Path

import pytest

from plyrisk.cli import EXIT_CODES, EXIT_NOT_MET, main
from tests.conftest import CONFIGS

ROOT = Path(__file__).resolve().parents[2]


def test_help_and_docs_state_the_exit_codes(capsys):
    assert main(["run", "--help"]) == 0
    out = " ".join(capsys.readouterr().out.split())
    assert "--fail-if-not-met" in out
    for code in ("0 success", "1 internal error", "2 bad input", "3 the criterion", "130"):
        assert code in out, code
    for doc in (ROOT / "README.md", ROOT / "docs" / "results.md"):
        text = doc.read_text(encoding="utf-8")
        assert "--fail-if-not-met" in text and "| 3 |" in text, doc
    assert "3" in EXIT_CODES and EXIT_NOT_MET == 3


@pytest.mark.slow
def test_not_met_exits_3_only_when_asked(tmp_path, capsys):
    config = tmp_path / "hot.toml"  # invented: the small demo with a limit its P95 exceeds
    config.write_text((CONFIGS / "small_demo.toml").read_text(encoding="utf-8").replace(
        'limit = "44 degC"', 'limit = "38 degC"'), encoding="utf-8")
    out = tmp_path / "out"
    args = ["run", str(config), "--out", str(out), "--samples", "64", "--quiet", "--no-report"]
    assert main([*args, "--fail-if-not-met"]) == EXIT_NOT_MET
    captured = capsys.readouterr()
    assert "VERDICT: NOT MET" in captured.out and "exit code 3" in captured.err
    assert (out / "results.nc").is_file() and (out / "summary.json").is_file()
    assert main(args) == 0                                   # up to date; no flag: 0
    assert main([*args, "--fail-if-not-met"]) == EXIT_NOT_MET  # up to date: the stored verdict


@pytest.mark.slow
def test_met_exits_0(steady_run):
    assert steady_run.code == 0 and "VERDICT: MET" in steady_run.stdout
