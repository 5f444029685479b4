"""The ``Examples`` sections of the installed package run as doctests, one test per module.

The modules are found by walking the installed ``plyrisk`` package (``uq/`` and ``models/`` are
folders of the source tree, not importable under their own names), so the doctests run against
what users import.
"""

from __future__ import annotations

import doctest
import importlib
import pkgutil

import numpy as np
import pytest

import plyrisk
import plyrisk.models

# Both roots are walked: in an editable install plyrisk.models is mapped by an import hook and
# does not appear among the folders of plyrisk.__path__ (in a regular install it does).
MODULES = sorted({
    info.name
    for root in (plyrisk, plyrisk.models)
    for info in pkgutil.walk_packages(root.__path__, prefix=root.__name__ + ".")
    if info.name != "plyrisk.__main__"  # runs the command line when imported
} | {"plyrisk", "plyrisk.models"})
FLAGS = doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE


def test_the_walk_finds_both_folders():
    assert "plyrisk.study.config" in MODULES and "plyrisk.models.network" in MODULES


@pytest.mark.parametrize("name", MODULES)
def test_doctests(name):
    module = importlib.import_module(name)
    finder = doctest.DocTestFinder(exclude_empty=True)
    runner = doctest.DocTestRunner(optionflags=FLAGS)
    with np.printoptions(legacy="1.25"):  # numpy scalars print as plain numbers
        for test in finder.find(module, name):  # globals: a copy of the module's
            runner.run(test)
    result = runner.summarize(verbose=False)
    assert result.failed == 0, f"{result.failed} of {result.attempted} doctest examples failed"
