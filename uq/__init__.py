"""plyrisk: uncertainty and sensitivity studies of multilayer heat-protective assemblies.

The public API is small and loaded lazily (PEP 562), so ``import plyrisk`` and the command line
start fast; each name imports its module on first use.

Results are engineering estimates only: they are no substitute for certification testing by
accredited laboratories; defer to the applicable standards, local codes and qualified practice.

Examples
--------
>>> import plyrisk
>>> plyrisk.__version__[0].isdigit()
True
>>> issubclass(plyrisk.ConfigError, plyrisk.PlyriskError)
True
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING, Any

from plyrisk.errors import PlyriskError
from plyrisk.provenance import package_version

__version__ = package_version()

# public name -> (module, attribute), imported on first access
_API = {
    "load_study": ("plyrisk.study.config", "load_study"),
    "loads_study": ("plyrisk.study.config", "loads_study"),
    "Study": ("plyrisk.study.definition", "Study"),
    "run_study": ("plyrisk.pipeline.run", "run_study"),
    "StudyResult": ("plyrisk.pipeline.run", "StudyResult"),
    "open_results": ("plyrisk.results.dataset", "read_results"),
    "write_report": ("plyrisk.report.html", "write_report"),
    "solve_network": ("plyrisk.models.network", "solve_network"),
    "NetworkSolution": ("plyrisk.models.network", "NetworkSolution"),
    "ConfigError": ("plyrisk.errors", "ConfigError"),
}

__all__ = [
    "ConfigError", "NetworkSolution", "PlyriskError", "Study", "StudyResult", "__version__",
    "load_study", "loads_study", "open_results", "run_study", "solve_network", "write_report",
]

if TYPE_CHECKING:  # pragma: no cover - for type checkers and editors only
    from plyrisk.errors import ConfigError
    from plyrisk.models.network import NetworkSolution, solve_network
    from plyrisk.pipeline.run import StudyResult, run_study
    from plyrisk.report.html import write_report
    from plyrisk.results.dataset import read_results as open_results
    from plyrisk.study.config import load_study, loads_study
    from plyrisk.study.definition import Study


def __getattr__(name: str) -> Any:
    try:
        module, attribute = _API[name]
    except KeyError:
        raise AttributeError(f"module 'plyrisk' has no attribute {name!r}") from None
    value = getattr(importlib.import_module(module), attribute)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(__all__)
