"""Provenance of a result: the versions of the libraries that produced it."""

from __future__ import annotations

import platform
from importlib import metadata

_LIBRARIES = ("plyrisk", "numpy", "scipy", "SALib", "chaospy", "xarray", "netCDF4", "pint")


def library_versions() -> dict[str, str]:
    """Versions of the libraries that produced a result [-]."""
    out = {"python": platform.python_version()}
    for name in _LIBRARIES:
        try:
            out[name] = metadata.version(name)
        except metadata.PackageNotFoundError:
            out[name] = "not installed"
    return out


def package_version() -> str:
    """The installed version of plyrisk (``0+unknown`` for a source tree not installed)."""
    try:
        return metadata.version("plyrisk")
    except metadata.PackageNotFoundError:  # pragma: no cover - not installed
        return "0+unknown"
