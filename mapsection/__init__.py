"""mapsection: draft geological cross-sections from a geologic map, a DEM and
strike/dip data, with balance checks.

A draft section is an interpretation. It must be reviewed by a qualified
geologist (licensed where local rules require it) before it informs drilling,
tunnelling, slope or groundwater decisions; local codes and practice prevail.

Importing the package loads none of its heavy dependencies (rasterio, geopandas,
pyogrio, matplotlib, scipy, pyproj, shapely): the names below are bound on first use.
"""

from __future__ import annotations

from importlib.metadata import PackageNotFoundError, version

from .caution import CAUTION

try:
    __version__ = version("mapsection")
except PackageNotFoundError:  # running from a source tree
    __version__ = "0.1.0"

# Lazy top-level API: name -> module that defines it.
_LAZY = {
    "load_project": "project",
    "Project": "project",
    "SectionLine": "line",
    "read_line": "readers.line",
    "profile": "topo_profile",
    "Profile": "topo_profile",
}


def __getattr__(name: str):
    if name in _LAZY:
        import importlib

        return getattr(importlib.import_module(f".{_LAZY[name]}", __name__), name)
    raise AttributeError(f"module 'mapsection' has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted([*globals(), *_LAZY])


__all__ = [
    "CAUTION", "__version__", "load_project", "profile", "Profile", "read_line", "Project",
    "SectionLine",
]
