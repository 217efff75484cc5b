"""The section line: a polyline on the map, measured in metres along its length.

A :class:`SectionLine` is the one object every stage uses to go between map
coordinates (x, y in the line's CRS) and section coordinates (distance along
the line, signed offset from it). Azimuths are bearings in degrees clockwise
from grid north of the line's CRS.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np
import pyproj
import shapely
from shapely.geometry import LineString

from ._messages import default_note
from .crs import same_crs, transformer
from .errors import LineError


@dataclass(frozen=True)
class LinePosition:
    """Where map points fall relative to a section line (arrays, one per point)."""

    distance: np.ndarray  # metres along the line from its first vertex
    offset: np.ndarray  # signed metres from the line; positive to the right of travel
    segment: np.ndarray  # index of the segment each point projects onto
    azimuth: np.ndarray  # bearing of that segment, degrees clockwise from north


@dataclass(frozen=True, eq=False)
class SectionLine:
    """A section line of two or more vertices in a projected CRS (metres)."""

    vertices: np.ndarray  # shape (n, 2), n >= 2
    crs: pyproj.CRS | None = None
    name: str = ""
    cumulative: np.ndarray = field(init=False, repr=False)  # distance at each vertex

    def __post_init__(self) -> None:
        label = f"section line {self.name}".rstrip()
        try:
            v = np.asarray(self.vertices, dtype=float)
        except (TypeError, ValueError):
            raise LineError(f"{label}: vertices must be pairs of numbers") from None
        if v.ndim != 2 or v.shape[1] != 2 or len(v) < 2:
            raise LineError(f"{label}: needs at least two vertices")
        if not np.all(np.isfinite(v)):
            raise LineError(f"{label}: vertices must be finite numbers")
        seg = np.hypot(*np.diff(v, axis=0).T)
        # Repeated vertices give zero-length segments with no azimuth: drop them.
        keep = np.concatenate([[True], seg > 0])
        v = v[keep]
        if len(v) < 2:
            raise LineError(f"{label}: has zero length")
        crossing = self_crossing(v) if len(v) > 2 else None
        if crossing is not None:
            raise LineError(f"{label}: crosses itself at ({crossing[0]:.1f}, {crossing[1]:.1f}); "
                            "a section line must not")
        object.__setattr__(self, "vertices", v)
        object.__setattr__(
            self, "cumulative", np.concatenate([[0.0], np.cumsum(np.hypot(*np.diff(v, axis=0).T))])
        )

    # --- basic measures -------------------------------------------------
    @property
    def length(self) -> float:
        return float(self.cumulative[-1])

    @property
    def segment_azimuths(self) -> np.ndarray:
        d = np.diff(self.vertices, axis=0)
        return np.degrees(np.arctan2(d[:, 0], d[:, 1])) % 360.0

    @property
    def linestring(self) -> LineString:
        return LineString(self.vertices)

    @property
    def start_bearing(self) -> float:
        """Bearing from the first to the last vertex (the section's overall trend)."""
        d = self.vertices[-1] - self.vertices[0]
        return float(np.degrees(np.arctan2(d[0], d[1])) % 360.0)

    # --- section <-> map ------------------------------------------------
    def segment_at(self, distance: np.ndarray) -> np.ndarray:
        """Index of the segment holding each distance (ends clamp to the end segments)."""
        idx = np.searchsorted(self.cumulative, np.asarray(distance, float), side="right") - 1
        return np.clip(idx, 0, len(self.vertices) - 2)

    def azimuth_at(self, distance: np.ndarray) -> np.ndarray:
        return self.segment_azimuths[self.segment_at(distance)]

    def point_at(self, distance: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Map x, y at distances along the line (extrapolated along the end segments)."""
        d = np.asarray(distance, float)
        i = self.segment_at(d)
        v0, v1 = self.vertices[i], self.vertices[i + 1]
        seg = self.cumulative[i + 1] - self.cumulative[i]
        t = ((d - self.cumulative[i]) / seg)[..., None]
        p = v0 + t * (v1 - v0)
        return p[..., 0], p[..., 1]

    def locate(self, x: np.ndarray, y: np.ndarray) -> LinePosition:
        """Project map points perpendicularly onto the nearest point of the line."""
        x = np.atleast_1d(np.asarray(x, float))
        y = np.atleast_1d(np.asarray(y, float))
        v0 = self.vertices[:-1]  # (m, 2)
        dv = np.diff(self.vertices, axis=0)
        seg_len2 = np.einsum("ij,ij->i", dv, dv)
        px = x[:, None] - v0[None, :, 0]
        py = y[:, None] - v0[None, :, 1]
        t = np.clip((px * dv[None, :, 0] + py * dv[None, :, 1]) / seg_len2[None, :], 0.0, 1.0)
        cx = px - t * dv[None, :, 0]
        cy = py - t * dv[None, :, 1]
        dist2 = cx**2 + cy**2
        seg = np.argmin(dist2, axis=1)
        rows = np.arange(len(x))
        tt = t[rows, seg]
        seg_len = np.sqrt(seg_len2[seg])
        distance = self.cumulative[seg] + tt * seg_len
        # Cross product sign: positive when the point lies to the right of travel.
        cross = dv[seg, 0] * py[rows, seg] - dv[seg, 1] * px[rows, seg]
        offset = -np.sign(cross) * np.sqrt(dist2[rows, seg])
        return LinePosition(distance, offset, seg, self.segment_azimuths[seg])

    def densify(self, step: float) -> np.ndarray:
        """Distances from 0 to the length at ``step``, always including every vertex."""
        cum = self.cumulative
        grid = np.arange(0.0, self.length, step)
        # Drop grid points within round-off of a vertex; only the grid points next to a
        # vertex can be that close, so only those are compared.
        k = np.rint(cum / step).astype(np.intp)
        near = np.unique(np.clip(np.concatenate([k - 1, k, k + 1]), 0, len(grid) - 1))
        close = np.abs(grid[near][:, None] - cum[None, :]).min(axis=1) <= 1e-6 * step
        if close.any():
            grid = np.delete(grid, near[close])
        return np.insert(grid, np.searchsorted(grid, cum), cum)

    def moved(self, vertices: np.ndarray) -> SectionLine:
        return SectionLine(np.asarray(vertices, float), self.crs, self.name)

    def to_crs(self, crs: pyproj.CRS) -> SectionLine:
        if same_crs(self.crs, crs):
            return SectionLine(self.vertices, pyproj.CRS(crs), self.name)
        tr = transformer(self.crs, crs)
        x, y = tr.transform(self.vertices[:, 0], self.vertices[:, 1])
        return SectionLine(np.column_stack([x, y]), pyproj.CRS(crs), self.name)


def self_crossing(vertices) -> tuple[float, float] | None:
    """A point where a polyline crosses or retraces itself, or None when it is simple."""
    ls = shapely.LineString(vertices)
    if ls.is_simple:  # a closed ring that touches itself only at its ends counts as simple
        return None
    # Node the line: a point shared by more pieces than a plain vertex is where it crosses.
    pieces = shapely.get_parts(shapely.node(ls))
    ends = np.vstack([shapely.get_coordinates(shapely.get_point(pieces, 0)),
                      shapely.get_coordinates(shapely.get_point(pieces, -1))])
    rounded = [tuple(p) for p in ends.round(6)]
    counts: dict[tuple, int] = {}
    for p in rounded:
        counts[p] = counts.get(p, 0) + 1
    first, last = tuple(ls.coords[0]), tuple(ls.coords[-1])
    for p, n in counts.items():
        if n > 2 or (n > 1 and p in (first, last)):
            return float(p[0]), float(p[1])
    c = ls.coords[0]
    return float(c[0]), float(c[1])


def utm_crs_for(lon: float, lat: float) -> pyproj.CRS:
    """The WGS 84 / UTM zone CRS holding a geographic point."""
    zone = int((lon + 180.0) // 6.0) % 60 + 1
    return pyproj.CRS.from_epsg((32600 if lat >= 0 else 32700) + zone)


def projected_line(line: SectionLine, warn: Callable[[str], None] | None = None) -> SectionLine:
    """Return ``line`` in a projected CRS; a geographic line goes to its local UTM zone.

    Densifies first so that the projected polyline follows the geodesic closely.
    """
    if line.crs is None or not line.crs.is_geographic:
        return line
    lon, lat = line.vertices.mean(axis=0)
    utm = utm_crs_for(float(lon), float(lat))
    msg = (
        "section line is in a geographic CRS; "
        f"measuring in metres in {utm.name} (EPSG:{utm.to_epsg()})"
    )
    (warn or default_note)(msg)
    geod = pyproj.Geod(ellps="WGS84")
    pts = [line.vertices[0]]
    for a, b in zip(line.vertices[:-1], line.vertices[1:], strict=True):
        inner = geod.npts(a[0], a[1], b[0], b[1], 64)
        pts.extend(np.asarray(inner).reshape(-1, 2))
        pts.append(b)
    tr = transformer(line.crs, utm)
    pts = np.asarray(pts)
    x, y = tr.transform(pts[:, 0], pts[:, 1])
    return SectionLine(np.column_stack([x, y]), utm, line.name)
