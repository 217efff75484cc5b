"""The thickness estimate's results: fitted planes, contact fits, and each unit's
thickness (see :mod:`mapsection.thickness`)."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class Plane:
    """A plane fitted to 3D points: ``normal . (p - point) = 0``; ``normal`` points up."""

    normal: tuple[float, float, float]
    point: tuple[float, float, float]
    rms: float  # RMS perpendicular residual of the points used, metres
    n_points: int

    @property
    def dip(self) -> float:
        return float(np.degrees(np.arccos(np.clip(self.normal[2], -1.0, 1.0))))

    @property
    def dip_direction(self) -> float:
        return float(np.degrees(np.arctan2(self.normal[0], self.normal[1])) % 360.0)

    @property
    def strike(self) -> float:
        """Right-hand-rule strike (dip direction - 90)."""
        return (self.dip_direction - 90.0) % 360.0

    def height(self, x, y, z) -> np.ndarray:
        """Signed distance of points above the plane (along its upward normal)."""
        n, p = np.asarray(self.normal), np.asarray(self.point)
        return (np.asarray(x) - p[0]) * n[0] + (np.asarray(y) - p[1]) * n[1] \
            + (np.asarray(z) - p[2]) * n[2]


@dataclass(frozen=True)
class ContactFit:
    """The plane of the contact between ``upper`` (younger) and ``lower`` in one group."""

    upper: str
    lower: str
    block: str
    domain: str
    plane: Plane
    n_dropped: int  # points dropped as outliers
    misfit_deg: float | None  # mean angle between the plane and the domain's attitudes
    n_attitudes: int

    @property
    def group(self) -> str:
        return f"{self.block}, {self.domain}"


@dataclass(frozen=True)
class GroupThickness:
    """A unit's thickness between its top and base planes in one group."""

    block: str
    domain: str
    thickness: float
    uncertainty: float
    n_points: int
    angle_deg: float  # angle between the top and base planes


@dataclass(frozen=True)
class UnitThickness:
    """A unit's thickness measured from the map.

    ``kind``: ``"measured"`` (between its top and base contacts), ``"minimum"``
    (one contact mapped: a lower bound from the outcrop) or ``"none"`` (``why``
    says why). ``spread`` is the RMS residual of the contact points about the
    planes used; ``misfit_deg`` the mean angle between those planes and the
    attitudes of their dip domains.
    """

    unit: str
    kind: str
    thickness: float | None = None
    uncertainty: float | None = None
    n_points: int = 0
    spread: float | None = None
    blocks: tuple[str, ...] = ()
    misfit_deg: float | None = None
    groups: tuple[GroupThickness, ...] = ()
    why: str = ""


@dataclass(frozen=True)
class ColumnEstimate:
    """Every unit's thickness from the map and every contact plane fitted."""

    units: tuple[UnitThickness, ...]
    contacts: tuple[ContactFit, ...]
    spacing: float  # metres between contact points

    def unit(self, name: str) -> UnitThickness:
        for u in self.units:
            if u.unit == name:
                return u
        raise KeyError(name)


__all__ = ["ColumnEstimate", "ContactFit", "GroupThickness", "Plane", "UnitThickness"]
