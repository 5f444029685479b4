"""The README's Python API session runs as written (in a scratch folder, results written there)."""

from __future__ import annotations

import shutil
from pathlib import Path

import matplotlib
import pytest

ROOT = Path(__file__).resolve().parents[1]


@pytest.mark.slow
def test_the_python_api_session_of_the_readme_runs(tmp_path, monkeypatch):
    matplotlib.use("Agg")
    text = (ROOT / "README.md").read_text()
    block = text.split("## Python API", 1)[1].split("```python", 1)[1].split("```", 1)[0]
    # the session reads back what it wrote: write it there
    block = block.replace("quiet=True)", 'quiet=True, out_dir="small_demo")', 1)
    shutil.copytree(ROOT / "configs", tmp_path / "configs")
    monkeypatch.chdir(tmp_path)
    namespace: dict = {}
    exec(compile(block, "README.md", "exec"), namespace)
    assert (tmp_path / "distribution.png").stat().st_size > 0
    assert (tmp_path / "small_demo_report" / "report.html").exists()
