"""mapsection: draft geological cross-sections from a geologic map, a DEM and
strike/dip data, with balance checks.

A draft section is an interpretation. It must be reviewed by a qualified
geologist (licensed where local rules require it) before it informs drilling,
tunnelling, slope or groundwater decisions; local codes and practice prevail.
"""

from __future__ import annotations

from importlib.metadata import PackageNotFoundError, version

try:
    __version__ = version("mapsection")
except PackageNotFoundError:  # running from a source tree
    __version__ = "0.1.0"

CAUTION = (
    "A draft section is an interpretation, not a survey: have it reviewed by a qualified "
    "geologist (licensed where local rules require it) before it informs drilling, "
    "tunnelling, slope or groundwater decisions; local codes and practice prevail."
)


def __getattr__(name: str):
    # Lazy top-level API so that `import mapsection` stays fast for the CLI.
    if name in ("load_project", "Project"):
        from . import project

        return getattr(project, name)
    if name in ("SectionLine", "read_line"):
        from . import line

        return getattr(line, name)
    raise AttributeError(f"module 'mapsection' has no attribute {name!r}")


# Bound eagerly: importing the submodule would otherwise shadow the function with the module.
from .profile import profile  # noqa: E402

__all__ = [
    "CAUTION", "__version__", "load_project", "profile", "read_line", "Project", "SectionLine",
]
