"""The CF conventions rules the results files rely on, as one check shared by the tests.

Source: NetCDF Climate and Forecast (CF) Metadata Conventions, version 1.10 (2022):
section 2.6.1 (``Conventions``), 2.6.2 (``history``), 3.1 (``units``: one UDUNITS string per
variable), 3.2 (``long_name``), 5 and 2.5.1 (coordinate variables hold no missing values, so
they carry no ``_FillValue``). No CF checker on PyPI runs here without the UDUNITS-2 C library,
so the rules are tested directly.
"""

from __future__ import annotations

from pathlib import Path

import xarray as xr

NOT_UNITS = ("SI", "output units", "")
"""``units`` values that are no UDUNITS string (what the old files carried)."""


def cf_problems(ds: xr.Dataset, path: Path | None = None) -> list[str]:
    """Every breach of the rules above in ``ds`` (and in the written file ``path``)."""
    problems = []
    if not str(ds.attrs.get("Conventions", "")).startswith("CF-"):
        problems.append("global attribute Conventions is not 'CF-<version>'")
    if not str(ds.attrs.get("history", "")).strip():
        problems.append("global attribute history is missing")
    for name, var in {**ds.coords, **ds.data_vars}.items():
        if "long_name" not in var.attrs:
            problems.append(f"{name}: no long_name")
        units = var.attrs.get("units")
        if units is None:
            if not str(var.attrs.get("comment", "")).startswith("units differ per"):
                problems.append(f"{name}: no units and no comment saying where they are")
        elif str(units) in NOT_UNITS:
            problems.append(f"{name}: units {units!r} is not a UDUNITS string")
    if path is not None:
        import netCDF4

        with netCDF4.Dataset(path) as nc:
            coords = set(nc.dimensions) | {
                c for v in nc.variables.values() if "coordinates" in v.ncattrs()
                for c in str(v.getncattr("coordinates")).split()}
            for name in sorted(coords & set(nc.variables)):
                if "_FillValue" in nc.variables[name].ncattrs():
                    problems.append(f"{name}: a coordinate with a _FillValue")
    return problems
