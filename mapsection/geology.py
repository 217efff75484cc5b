"""Surface geology along the section line: unit intervals, contacts and fault crossings.

:func:`surface_geology` measures, along a :class:`~mapsection.line.SectionLine`,
which map unit is at the ground (:class:`UnitInterval`), where the line crosses
a contact (:class:`Contact`) and where it crosses a mapped fault
(:class:`FaultCrossing`); :func:`geology_frames` turns the result into
GeoDataFrames for the map.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import geopandas as gpd
import numpy as np
import pandas as pd
import shapely
from shapely import STRtree
from shapely.geometry import LineString

from ._messages import default_warn as _default_warn
from .crs import same_crs
from .line import SectionLine
from .mapdata import MapData
from .topo_profile import Profile


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
    apparent_dip: float  # signed, section plane; positive descends toward increasing distance
    sense: str | None = None  # e.g. "thrust", "reverse", "normal", as mapped
    name: str | None = None
    # Names of the mapped faults this fault's trace ends against (it is the older).
    ends_against: tuple[str, ...] = ()


@dataclass(frozen=True)
class SurfaceGeology:
    intervals: tuple[UnitInterval, ...]
    contacts: tuple[Contact, ...]
    faults: tuple[FaultCrossing, ...]


# --- surface geology along a line ------------------------------------------------------

_TOL = 1e-6  # metres: breakpoints closer than this are one point; pieces shorter are dropped




def _map_geoms_for_line(map_data: MapData, line: SectionLine, geoms: np.ndarray,
                        idx: np.ndarray) -> np.ndarray:
    """Map geometries ``geoms[idx]`` in the line's CRS (reprojected only if they differ)."""
    sub = geoms[idx]
    if same_crs(line.crs, map_data.crs):
        return sub
    return np.asarray(gpd.GeoSeries(sub, crs=map_data.crs).to_crs(line.crs).values, dtype=object)


def _query_line(map_data: MapData, tree, line: SectionLine) -> np.ndarray:
    """Indices of the tree geometries the line meets (in the map's CRS).

    Only the geometries the line itself intersects (GEOS, through the tree's prepared
    predicate), not every one whose bounding box meets the line's: a long diagonal
    line's box holds many polygons the line never crosses, and each would cost an
    intersection. A line in another CRS keeps the bounding-box candidates, as its
    exact intersections are taken after the map is reprojected to that CRS.
    """
    if not same_crs(line.crs, map_data.crs):
        return tree.query(line.to_crs(map_data.crs).linestring)
    return tree.query(line.linestring, predicate="intersects")


def unit_runs(map_data: MapData, line: SectionLine, warn: Callable[[str], None] | None = None) \
        -> tuple[np.ndarray, list[str | None]]:
    """Breakpoints along the line and the map unit (or None for a gap) between each pair.

    The line is intersected with every candidate polygon from the STRtree (one
    vectorised shapely call); the coordinates of the intersection pieces are
    measured along the line with ``shapely.line_locate_point``. Between two
    consecutive breakpoints the unit is the polygon whose interior holds the
    midpoint; a midpoint lying on a boundary (the line running along a contact)
    takes the unit of its neighbour when that polygon touches it, so a shared
    boundary never makes a unit of its own. Equal neighbours are merged.
    Returns ``edges`` (k+1 distances from 0 to the length) and k units.
    """
    ls = line.linestring
    length = line.length
    cand = _query_line(map_data, map_data.unit_tree, line)
    if not same_crs(line.crs, map_data.crs) and warn is not None:
        warn(f"section line {line.name}: its CRS differs from the map's; map features "
             "reprojected to the line's CRS")
    geoms = _map_geoms_for_line(map_data, line, map_data.unit_geoms, cand)
    pieces = shapely.intersection(ls, geoms)
    coords = shapely.get_coordinates(pieces)
    d = shapely.line_locate_point(ls, shapely.points(coords)) if len(coords) else np.empty(0)
    edges = np.unique(np.concatenate([[0.0, length], np.clip(d, 0.0, length)]))
    edges = edges[np.concatenate([[True], np.diff(edges) > _TOL])]
    edges[-1] = length
    if len(edges) < 2:
        edges = np.array([0.0, length])
    mid = 0.5 * (edges[:-1] + edges[1:])
    units: list[str | None] = [None] * len(mid)
    if len(cand):
        units = _units_at(shapely.points(*line.point_at(mid)), geoms, cand,
                          map_data.unit_names[cand])
    # Merge consecutive equal units (split or multipart polygons, vertices of the line).
    u = np.array(units, dtype=object)
    starts = np.flatnonzero(np.concatenate([[True], u[1:] != u[:-1]]))
    merged_edges = np.append(edges[starts], edges[-1])
    return merged_edges, [units[i] for i in starts]


def _units_at(pts: np.ndarray, geoms: np.ndarray, cand: np.ndarray, names: np.ndarray
              ) -> list[str | None]:
    """The unit holding each midpoint: the polygon whose interior holds it, else (on a
    boundary) a neighbour's unit that touches it."""
    units: list[str | None] = [None] * len(pts)
    tree = STRtree(geoms)
    # "within" is false on a boundary: these are the midpoints inside a unit.
    inside = tree.query(pts, predicate="within")
    # Where a map has overlapping polygons the first feature wins: sort, keep the first.
    order = np.lexsort((cand[inside[1]], inside[0]))
    rows, first = np.unique(inside[0][order], return_index=True)
    for i, j in zip(rows, inside[1][order][first], strict=True):
        units[i] = names[j]
    hit = np.zeros(len(pts), bool)
    hit[rows] = True
    on_edge = tree.query(pts[~hit], predicate="intersects")
    touching: dict[int, set] = {}
    rows = np.flatnonzero(~hit)
    for i, j in zip(rows[on_edge[0]], on_edge[1], strict=True):
        if names[j] is not None:
            touching.setdefault(int(i), set()).add(names[j])
    # Stretches along a boundary join a neighbouring unit that touches them.
    for i in sorted(touching):
        opts = touching[i]
        before = units[i - 1] if i > 0 else None
        after = units[i + 1] if i + 1 < len(units) else None
        if before in opts:
            units[i] = before
        elif after in opts:
            units[i] = after
        else:
            units[i] = sorted(opts)[0]
    return units


def fault_crossings(map_data: MapData, line: SectionLine, profile: Profile | None) \
        -> tuple[FaultCrossing, ...]:
    """Points where the line crosses the mapped fault lines, with the faults' attributes.

    Apparent dip: ``mapsection.dips.apparent_dip`` with strike = dip direction − 90
    (right-hand rule) and the azimuth of the segment crossed.
    """
    if map_data.fault_tree is None:
        return ()
    from .dips import apparent_dip

    ls = line.linestring
    cand = _query_line(map_data, map_data.fault_tree, line)
    if not len(cand):
        return ()
    geoms = _map_geoms_for_line(map_data, line, map_data.fault_geoms, cand)
    inter = shapely.intersection(ls, geoms)
    parts, owner = shapely.get_parts(inter, return_index=True)
    if not len(parts):
        return ()
    # A fault trace running along the line for a stretch crosses it at that stretch's middle.
    is_line = shapely.get_dimensions(parts) == 1
    pts = parts.copy()
    pts[is_line] = shapely.line_interpolate_point(parts[is_line], 0.5, normalized=True)
    keep = ~shapely.is_empty(pts)
    pts, owner = pts[keep], owner[keep]
    if not len(pts):  # the line comes near faults (candidates) but crosses none
        return ()
    dist = shapely.line_locate_point(ls, pts)
    rows = cand[owner]
    # Pieces of one fault meeting at the line give the same point twice: keep one.
    order = np.lexsort((dist, rows))
    dist, rows = dist[order], rows[order]
    dup = np.concatenate([[False], (np.diff(dist) < 1e-3) & (np.diff(rows) == 0)])
    dist, rows = dist[~dup], rows[~dup]
    order = np.argsort(dist, kind="stable")
    dist, rows = dist[order], rows[order]
    dip = np.asarray(map_data.fault_value("dip", rows), float)
    ddir = np.asarray(map_data.fault_value("dip_direction", rows), float)
    app = np.asarray(apparent_dip((ddir - 90.0) % 360.0, dip, line.azimuth_at(dist)), float)
    elev = _elevation(profile, dist)
    sense = map_data.fault_value("sense", rows)
    name = map_data.fault_value("name", rows)
    all_names = map_data.fault_value("name", np.arange(len(map_data.fault_geoms)))
    return tuple(
        FaultCrossing(float(dist[k]), float(elev[k]), float(dip[k]), float(ddir[k]),
                      float(app[k]), _text(sense[k]), _text(name[k]),
                      _ends_against(map_data, int(rows[k]), all_names))
        for k in range(len(dist))
    )


_ENDS_TOL = 1.0  # metres: a trace ending this close to another was drawn against it


def _ends_against(map_data: MapData, row: int, names: np.ndarray) -> tuple[str, ...]:
    """Names (of ``names``, one per mapped fault) of the other faults the trace of fault
    ``row`` ends against on the map."""
    own = _text(names[row])
    ends = []
    for part in shapely.get_parts(map_data.fault_geoms[row]):
        c = shapely.get_coordinates(part)
        if len(c):
            ends.extend([c[0], c[-1]])
    out = set()
    for p in ends:
        pt = shapely.points(p)
        for j in map_data.fault_tree.query(pt, predicate="dwithin", distance=_ENDS_TOL):
            other = _text(names[j])
            if int(j) != row and other is not None and other != own:
                out.add(other)
    return tuple(sorted(out))


def _text(value) -> str | None:
    if value is None or (isinstance(value, float) and np.isnan(value)):
        return None
    return str(value)


def _elevation(profile: Profile | None, distance: np.ndarray) -> np.ndarray:
    if profile is None:
        return np.full(len(distance), np.nan)
    return np.asarray(profile.elevation_at(distance), float)


def surface_geology(map_data: MapData, line: SectionLine, profile: Profile | None = None,
                    warn: Callable[[str], None] | None = None) -> SurfaceGeology:
    """The map units, contacts and fault crossings along a section line.

    Distances are metres along ``line`` from its first vertex; elevations come
    from ``profile.elevation_at`` (NaN without a profile or off the DEM).
    Stretches where the map has no unit stay gaps: they have no interval, and
    the contacts at their edges have ``None`` on the gap's side.
    """
    warn = warn or _default_warn
    edges, units = unit_runs(map_data, line, warn)
    intervals = tuple(UnitInterval(float(a), float(b), u)
                      for a, b, u in zip(edges[:-1], edges[1:], units, strict=True)
                      if u is not None)
    if not intervals:
        warn(f"section line {line.name or ''}: crosses no mapped unit".replace("line :", "line:"))
    inner = edges[1:-1]
    elev = _elevation(profile, inner)
    contacts = tuple(Contact(float(inner[k]), float(elev[k]), units[k], units[k + 1])
                     for k in range(len(inner)))
    return SurfaceGeology(intervals, contacts, fault_crossings(map_data, line, profile))


def _substring(line: SectionLine, start: float, end: float) -> LineString:
    """The part of the line between two distances, keeping its bends."""
    inner = (line.cumulative > start) & (line.cumulative < end)
    d = np.concatenate([[start], line.cumulative[inner], [end]])
    x, y = line.point_at(d)
    return LineString(np.column_stack([x, y]))


def geology_frames(geology: SurfaceGeology, line: SectionLine) -> dict[str, gpd.GeoDataFrame]:
    """The surface geology as GeoDataFrames on the map, in the line's CRS.

    ``intervals``: LineStrings with start_m, end_m, unit; ``contacts``: Points
    with distance_m, elevation_m, unit_before, unit_after; ``faults``: Points
    with the fault-crossing attributes.
    """
    iv = pd.DataFrame([vars(i) for i in geology.intervals],
                      columns=["start_m", "end_m", "unit"])
    iv_geom = [_substring(line, i.start_m, i.end_m) for i in geology.intervals]
    ct = pd.DataFrame([vars(c) for c in geology.contacts],
                      columns=["distance_m", "elevation_m", "unit_before", "unit_after"])
    ft = pd.DataFrame([vars(f) for f in geology.faults],
                      columns=["distance_m", "elevation_m", "dip", "dip_direction",
                               "apparent_dip", "sense", "name"])

    def points(df: pd.DataFrame) -> np.ndarray:
        x, y = line.point_at(df["distance_m"].to_numpy(float))
        return shapely.points(x, y) if len(df) else np.empty(0, dtype=object)

    return {
        "intervals": gpd.GeoDataFrame(iv, geometry=iv_geom, crs=line.crs),
        "contacts": gpd.GeoDataFrame(ct, geometry=points(ct), crs=line.crs),
        "faults": gpd.GeoDataFrame(ft, geometry=points(ft), crs=line.crs),
    }
