"""Map contacts beside the line: the unit boundaries within the corridor, carried into the
section like the attitudes (perpendicular, along strike or down plunge).

The line crosses only some contacts; a fault block may have none on the line and still
hold a contact a few metres beside it. :func:`corridor_contacts` samples the map's
unit boundaries within the corridor (fault traces excluded: a boundary along a fault is
the fault), gives each sample point its own ground elevation (the DEM at the point),
and projects it into the section plane by the section's projection. Each point keeps
its offset from the line, so that the construction can weigh it by its distance from
the line (:func:`mapsection.construct.constraints.corridor_constraints`).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
import shapely
from shapely import STRtree

from .dips import STRIKE_SKIP_DEG, carry_to_line, in_corridor
from .foldaxis import FoldAxis
from .line import SectionLine
from .mapdata import MapData

Elevation = Callable[[np.ndarray, np.ndarray], np.ndarray]


@dataclass(frozen=True, eq=False)
class CorridorContacts:
    """Sample points of the map's unit boundaries within the corridor, in the section.

    Per point: the map position (``x``, ``y``), where it lands along the line
    (``distance_m``), its signed offset from the line (``offset_m``, right of travel
    positive), its elevation in the section (``elevation_m``: the DEM at the point,
    shifted down the plunge for the plunge projection) and the two units it separates
    (``unit_a``, ``unit_b``; no order).
    """

    x: np.ndarray
    y: np.ndarray
    distance_m: np.ndarray
    offset_m: np.ndarray
    elevation_m: np.ndarray
    unit_a: tuple[str, ...]
    unit_b: tuple[str, ...]
    spacing_m: float = 25.0
    corridor_m: float = float("nan")
    crosses_line: np.ndarray | None = None  # bool: its boundary also crosses the line

    def __len__(self) -> int:
        return len(self.distance_m)


def empty_corridor_contacts(spacing: float = 25.0, corridor: float = float("nan")
                            ) -> CorridorContacts:
    e = np.zeros(0)
    return CorridorContacts(e, e, e, e, e, (), (), spacing, corridor)


def boundary_lines(map_data: MapData, band, fault_margin: float = 1.0
                   ) -> list[tuple[object, str, str]]:
    """The boundaries between map polygons of different units that meet ``band``, as
    (line geometry, unit, unit); parts within ``fault_margin`` metres of a mapped fault
    left out. A boundary that
    crosses ``band`` more than once gives one part per crossing."""
    # In the map's order, not the index's: the result does not depend on how many other
    # polygons the index holds (a map read whole or through a window).
    cand = np.sort(map_data.unit_tree.query(band))
    names = map_data.unit_names[cand]
    ok = np.array([n is not None for n in names], bool)
    cand, names = cand[ok], names[ok]
    if len(cand) < 2:
        return []
    geoms = map_data.unit_geoms[cand]
    # Each polygon's boundary cut to the band first: the pairs then meet on short lines.
    bnd = shapely.intersection(shapely.clip_by_rect(shapely.boundary(geoms), *band.bounds),
                               band)
    tree = STRtree(bnd)
    left, right = tree.query(bnd, predicate="intersects")
    pairs = [(i, j) for i, j in zip(left, right, strict=True) if i < j and names[i] != names[j]]
    faults = None
    if map_data.fault_tree is not None and len(map_data.fault_geoms):
        # Near a fault the map's boundaries are cut-offs against it: left out.
        near = map_data.fault_geoms[map_data.fault_tree.query(band)]
        if len(near):
            faults = shapely.union_all(near).buffer(fault_margin)
    if not pairs:
        return []
    a = bnd[[i for i, _ in pairs]]
    b = bnd[[j for _, j in pairs]]
    shared = shapely.intersection(a, b)
    if faults is not None:
        shared = shapely.difference(shared, faults)
    out = []
    for (i, j), g in zip(pairs, shared, strict=True):
        merged = _lines_only(g)
        if merged.is_empty:
            continue
        out.extend((part, str(names[i]), str(names[j]))
                   for part in shapely.get_parts(shapely.line_merge(merged)) if part.length > 0)
    return out


def _lines_only(geom):
    """The line parts of an overlay result (points and empty parts dropped), as one
    MultiLineString."""
    parts = shapely.get_parts(geom)
    while True:
        kind = shapely.get_type_id(parts)
        multi = (kind == 5) | (kind == 7)  # MultiLineString, GeometryCollection
        if not multi.any():
            break
        parts = np.concatenate([parts[~multi], shapely.get_parts(parts[multi])])
    kind = shapely.get_type_id(parts)
    lines = parts[(kind == 1) | (kind == 2)]
    lines = lines[~shapely.is_empty(lines)]
    if not len(lines):
        return shapely.MultiLineString()
    lines = shapely.linestrings(shapely.get_coordinates(lines),
                                indices=np.repeat(np.arange(len(lines)),
                                                  shapely.get_num_coordinates(lines)))
    return shapely.multilinestrings(lines)


def corridor_contacts(map_data: MapData, line: SectionLine, corridor: float,
                      elevation: Elevation, *, method: str = "perpendicular",
                      axis: FoldAxis | None = None,
                      strike_at: Callable[[np.ndarray, np.ndarray], np.ndarray] | None = None,
                      spacing: float = 25.0) -> CorridorContacts:
    """The map's unit boundaries within ``corridor`` metres of the line, projected.

    Parameters
    ----------
    map_data, line
        The map (unit polygons, fault lines), in the line's CRS; the section line.
    corridor
        Half-width of the strip, metres (the section's corridor).
    elevation
        Ground elevation at map points (the DEM), ``elevation(x, y)``.
    method, axis, strike_at
        ``"perpendicular"`` (nearest point of the line), ``"strike"`` (along the strike
        of the nearest attitude, ``strike_at(x, y)``, right-hand rule) or ``"plunge"``
        (along the trend of the fold ``axis``, elevation shifted ``z' = z - s
        tan(plunge)`` as for the attitudes, :func:`mapsection.dips.project_attitudes`).
    spacing
        Metres between sample points along a boundary.

    Returns
    -------
    CorridorContacts
        Sorted by distance along the line; without the points within half a spacing of
        the line (its own contacts stand for them), within two spacings of a mapped fault
        (cut-offs against it) or parted from their place on the line by one (another block).

    Examples
    --------
    >>> import geopandas as gpd, numpy as np, shapely
    >>> from mapsection.mapdata import MapData; from mapsection.line import SectionLine
    >>> units = gpd.GeoDataFrame({"unit": ["A", "B"]}, geometry=[
    ...     shapely.box(0, -500, 1000, 500), shapely.box(1000, -500, 2000, 500)])
    >>> cc = corridor_contacts(MapData(units, "unit"), SectionLine(np.array([[0, 0],
    ...     [2000, 0.0]])), 100.0, lambda x, y: np.zeros_like(x), spacing=50.0)
    >>> sorted(set(np.round(cc.distance_m).tolist())), float(np.abs(cc.offset_m).max())
    ([1000.0], 75.0)
    """
    if not (np.isfinite(spacing) and spacing > 0):
        raise ValueError(f"spacing must be > 0 m, got {spacing}")
    samples = _sample_boundaries(map_data, line, corridor, spacing)
    if samples is None:
        return empty_corridor_contacts(spacing, corridor)
    x, y, ua_a, ub_a, crosses = samples
    inside, pos = in_corridor(x, y, line, corridor)
    inside &= np.abs(pos.offset) >= 0.5 * spacing
    z = np.asarray(elevation(x, y), float)
    distance = np.asarray(pos.distance, float).copy()
    if method in ("strike", "plunge"):
        ok, distance, z = _carried(line, x, y, distance, z, method, axis, strike_at)
        inside &= ok
    inside &= np.isfinite(z)
    inside &= ~_beyond_faults(map_data, line, x, y, distance, inside)
    keep = np.flatnonzero(inside)
    order = keep[np.argsort(distance[keep], kind="stable")]
    return CorridorContacts(x[order], y[order], distance[order], np.asarray(pos.offset)[order],
                            z[order], tuple(ua_a[order]), tuple(ub_a[order]), float(spacing),
                            float(corridor), crosses[order])


def _sample_boundaries(map_data: MapData, line: SectionLine, corridor: float, spacing: float):
    """Points every ``spacing`` metres (at the middle of equal steps) along each unit
    boundary within the corridor: x, y, the two units (object arrays) and whether the
    boundary crosses the line; None where no boundary is."""
    ls = line.linestring
    lines = boundary_lines(map_data, ls.buffer(corridor, cap_style="flat"), 2.0 * spacing)
    if not lines:
        return None
    xs, ys, ua, ub, cross = [], [], [], [], []
    for g, a, b in lines:
        n = max(int(np.ceil(g.length / spacing)), 1)
        pts = shapely.line_interpolate_point(g, (np.arange(n) + 0.5) / n, normalized=True)
        c = shapely.get_coordinates(pts)
        xs.append(c[:, 0])
        ys.append(c[:, 1])
        ua += [a] * len(c)
        ub += [b] * len(c)
        cross += [bool(g.intersects(ls))] * len(c)
    return (np.concatenate(xs), np.concatenate(ys), np.array(ua, dtype=object),
            np.array(ub, dtype=object), np.array(cross, bool))


def _carried(line: SectionLine, x: np.ndarray, y: np.ndarray, distance: np.ndarray,
             z: np.ndarray, method: str, axis: FoldAxis | None,
             strike_at: Callable | None) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Points carried to the line along strike or down plunge: which could be carried,
    their distances along the line and elevations (down the plunge for ``"plunge"``)."""
    if method == "strike":
        direction = np.asarray(strike_at(x, y), float) if strike_at is not None else \
            np.full(len(x), np.nan)
    else:
        direction = np.full(len(x), float(axis.trend) % 360.0)
    r = np.radians(np.nan_to_num(direction))
    ok, _, dist2, s = carry_to_line(line, x, y, np.sin(r), np.cos(r), STRIKE_SKIP_DEG,
                                    direction)
    ok &= np.isfinite(direction)
    distance = np.where(ok, dist2, distance)
    if method == "plunge":
        z = z - np.where(ok, s, 0.0) * np.tan(np.radians(float(axis.plunge)))
    return ok, distance, z


def _beyond_faults(map_data: MapData, line: SectionLine, x: np.ndarray, y: np.ndarray,
                   distance: np.ndarray, inside: np.ndarray) -> np.ndarray:
    """Which of the ``inside`` points reach their place on the line across a mapped fault:
    those lie in another fault block."""
    out = np.zeros(len(x), bool)
    if not inside.any() or map_data.fault_tree is None:
        return out
    fx, fy = line.point_at(distance)
    paths = shapely.linestrings(np.stack([np.column_stack([x, y]),
                                          np.column_stack([fx, fy])], axis=1))
    idx = np.flatnonzero(inside)
    hit = map_data.fault_tree.query(paths[idx], predicate="intersects")
    out[idx[np.unique(hit[0])]] = True
    return out


__all__ = ["CorridorContacts", "boundary_lines", "corridor_contacts", "empty_corridor_contacts"]
