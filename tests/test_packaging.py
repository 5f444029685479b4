"""The distribution installs one import name, ``plyrisk``, mapped from ``uq/`` and ``models/``."""

from __future__ import annotations

import subprocess
import sys
import tomllib
from pathlib import Path

import pytest

import plyrisk

ROOT = Path(__file__).resolve().parents[1]


def test_every_package_folder_is_listed_in_pyproject():
    config = tomllib.loads((ROOT / "pyproject.toml").read_text())["tool"]["setuptools"]
    listed = set(config["packages"])
    mapping = config["package-dir"]
    found = set()
    for name, folder in mapping.items():
        for init in (ROOT / folder).rglob("__init__.py"):
            rel = init.parent.relative_to(ROOT / folder).parts
            found.add(".".join((name, *rel)))
    assert found == listed


@pytest.mark.slow
def test_only_plyrisk_is_importable_from_outside_the_source_tree(tmp_path):
    code = (
        "import importlib.util as u, plyrisk, plyrisk.models.network;"
        "print(u.find_spec('uq') is None, u.find_spec('models') is None)"
    )
    out = subprocess.run([sys.executable, "-c", code], cwd=tmp_path, capture_output=True,
                         text=True, check=True)
    assert out.stdout.split() == ["True", "True"]


def test_version_and_base_error():
    assert plyrisk.__version__ and plyrisk.__version__[0].isdigit()
    from plyrisk.errors import ConfigError
    from plyrisk.models.stack import StackError

    assert issubclass(ConfigError, plyrisk.PlyriskError)
    assert issubclass(StackError, plyrisk.PlyriskError)


@pytest.mark.slow
def test_python_dash_m_runs_the_command_line(tmp_path):
    out = subprocess.run([sys.executable, "-m", "plyrisk", "--help"], cwd=tmp_path,
                         capture_output=True, text=True, check=True)
    assert "usage: plyrisk" in out.stdout
