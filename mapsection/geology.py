"""Surface geology along the section line: unit intervals, contacts and fault crossings.

(Data model fixed here; functions are filled in by the surface-geology work.)
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class UnitInterval:
    """A stretch of the line where the map shows one unit at the ground."""

    start_m: float
    end_m: float
    unit: str


@dataclass(frozen=True)
class Contact:
    """Where the line crosses a contact between two map units.

    ``unit_before`` is the unit toward smaller distance, ``unit_after`` toward
    larger distance; either may be ``None`` at the edge of a mapped gap.
    """

    distance_m: float
    elevation_m: float
    unit_before: str | None
    unit_after: str | None


@dataclass(frozen=True)
class FaultCrossing:
    """Where the line crosses a mapped fault trace."""

    distance_m: float
    elevation_m: float
    dip: float  # true dip of the fault plane, degrees
    dip_direction: float  # degrees clockwise from north
    apparent_dip: float  # signed, in the section plane; positive descends toward increasing distance
    sense: str | None = None  # e.g. "thrust", "reverse", "normal", as mapped
    name: str | None = None


@dataclass(frozen=True)
class SurfaceGeology:
    intervals: tuple[UnitInterval, ...]
    contacts: tuple[Contact, ...]
    faults: tuple[FaultCrossing, ...]
