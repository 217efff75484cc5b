"""Errors raised by mapsection.

Every error a user can cause carries a one-line message that names the file,
row or key at fault. The command line prints that line and exits with code 2;
``--debug`` shows the full traceback instead.
"""

from __future__ import annotations


class MapsectionError(Exception):
    """Base class for every error caused by the user's input."""


class ProjectFileError(MapsectionError):
    """The project file is missing, unreadable, or has a missing or wrong key."""


class DEMError(MapsectionError):
    """The DEM cannot be read, has no CRS, or does not cover the section line."""


class LineError(MapsectionError):
    """The section line is unreadable, too short, or has fewer than two vertices."""


class MapLayerError(MapsectionError):
    """A map layer or field is missing, or the map cannot be read."""


class AttitudeError(MapsectionError):
    """The attitudes file has no usable rows, or a convention is unknown."""


class StratigraphyError(MapsectionError):
    """The stratigraphic column is inconsistent with itself or with the map."""


class ConstructionError(MapsectionError):
    """The draft section cannot be constructed from the data given."""


class CheckError(MapsectionError):
    """A balance check cannot be run (a bad pin line, no horizons, bad thresholds)."""


class OutputError(MapsectionError):
    """An output path cannot be written (missing folder, not writable)."""


class ParameterError(MapsectionError):
    """A numeric or named option is out of range (a step <= 0, an unknown method)."""


class _KeyedError:
    """An error about one named setting: ``key`` and ``reason`` kept apart, so that the
    project reader can put the file name and the key path in front."""

    def __init__(self, key: str, reason: str) -> None:
        self.key, self.reason = key, reason
        super().__init__(f"{key}: {reason}")


class SettingError(_KeyedError, ParameterError):
    """A section setting (corridor, ve, depth, ...) is out of its documented range."""


class ThresholdError(_KeyedError, CheckError):
    """A pass threshold of the checks is out of its documented range."""
