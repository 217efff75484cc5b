"""Where the section meets the ground: the DEM profile as lines, the horizons' crossings of
it, the faults' ground points, and the unit just below the ground in the map and in the
section (topography test, :mod:`mapsection.checks.topography`)."""

from __future__ import annotations

import numpy as np
import shapely
from shapely.geometry import MultiLineString

from ...draft import Draft
from ..kinds import unlayered_units

BELOW_GROUND_M = 0.01  # the unit "at the ground" is the one 1 cm below it


def ground_line(draft: Draft) -> MultiLineString:
    """The DEM profile as lines in section space; NaN gaps split it."""
    d = np.asarray(draft.profile.distance, float)
    z = np.asarray(draft.profile.z, float)
    ok = np.isfinite(z) & np.isfinite(d)
    # Runs of consecutive finite samples.
    edges = np.flatnonzero(np.diff(np.concatenate([[0], ok.astype(np.int8), [0]])))
    runs = [(a, b) for a, b in zip(edges[::2], edges[1::2], strict=True) if b - a >= 2]
    return MultiLineString([np.column_stack([d[a:b], z[a:b]]) for a, b in runs])


def _point_distances(geom) -> np.ndarray:
    """x of every point of an intersection result (the middle of any overlap)."""
    parts = shapely.get_parts(geom)
    if len(parts) == 0:
        return np.empty(0)
    xs = [
        shapely.get_coordinates(p)[:, 0]
        if p.geom_type == "Point"
        else [shapely.centroid(p).x]
        for p in parts
        if not p.is_empty
    ]
    return np.concatenate(xs) if xs else np.empty(0)


def _dedupe(x: np.ndarray, tol: float) -> np.ndarray:
    x = np.sort(x)
    if len(x) < 2:
        return x
    keep = np.concatenate([[True], np.diff(x) > tol])
    return x[keep]


def section_ground_contacts(draft: Draft, ground: MultiLineString) -> dict[str, np.ndarray]:
    """top_of -> distances where that horizon meets the ground line.

    A horizon's below-ground and projected above-ground pieces meet on the
    ground; crossings and touching ends are both counted, once each.
    """
    snap = 0.01  # metres: a piece ending this close to the ground ends on it
    out: dict[str, list[np.ndarray]] = {}
    for h in draft.horizons:
        g = h.geometry
        if g is None or g.is_empty:
            continue
        xs = [_point_distances(shapely.intersection(g, ground))]
        if not h.above_ground:
            ends = shapely.points(shapely.get_coordinates(g)[[0, -1]])
            near = shapely.distance(ends, ground) <= snap
            xs.append(shapely.get_coordinates(ends[near])[:, 0])
        out.setdefault(h.top_of, []).extend(xs)
    return {k: _dedupe(np.concatenate(v), 0.5) for k, v in out.items()}


def fault_ground_distances(draft: Draft, ground: MultiLineString) -> np.ndarray:
    xs = [np.array([f.distance_m for f in draft.geology.faults], float)]
    for f in draft.faults:
        if f.geometry is not None and not f.geometry.is_empty:
            xs.append(_point_distances(shapely.intersection(f.geometry, ground)))
    x = np.concatenate(xs) if xs else np.empty(0)
    return x[np.isfinite(x)]


def near(x: np.ndarray, ref: np.ndarray, tol: float) -> np.ndarray:
    if len(ref) == 0 or len(x) == 0:
        return np.zeros(len(x), bool)
    return np.min(np.abs(x[:, None] - ref[None, :]), axis=1) <= tol


def map_unit_at(draft: Draft, d: np.ndarray) -> np.ndarray:
    """The map's unit at distances (object array; None in map gaps)."""
    iv = sorted(draft.geology.intervals, key=lambda i: i.start_m)
    out = np.full(len(d), None, dtype=object)
    if not iv:
        return out
    starts = np.array([i.start_m for i in iv])
    ends = np.array([i.end_m for i in iv])
    units = np.array([i.unit for i in iv], dtype=object)
    k = np.searchsorted(starts, d, side="right") - 1
    inside = (k >= 0) & (d <= ends[np.clip(k, 0, None)])
    out[inside] = units[k[inside]]
    return out


def _unit_from_polygons(draft: Draft, x: np.ndarray, y: np.ndarray) -> np.ndarray:
    out = np.full(len(x), None, dtype=object)
    other = unlayered_units(draft)  # drawn over the layered section: not its units
    for up in draft.units:
        if up.geometry is None or up.geometry.is_empty or up.unit in other:
            continue
        shapely.prepare(up.geometry)
        inside = shapely.contains_xy(up.geometry, x, y) & (out == None)  # noqa: E711
        out[inside] = up.unit
    return out


def _elevations_on(coords: np.ndarray, d: np.ndarray, chunk: int = 2_000_000) -> np.ndarray:
    """Elevation of a polyline at each distance, per segment (N x S, NaN where not spanned)."""
    x0, y0 = coords[:-1, 0], coords[:-1, 1]
    x1, y1 = coords[1:, 0], coords[1:, 1]
    lo, hi = np.minimum(x0, x1), np.maximum(x0, x1)
    dx = np.where(x1 != x0, x1 - x0, np.nan)
    rows = max(1, chunk // max(len(x0), 1))
    parts = []
    for s in range(0, len(d), rows):  # chunks only bound the memory
        dd = d[s : s + rows, None]
        t = (dd - x0) / dx
        yy = y0 + t * (y1 - y0)
        parts.append(np.where((dd >= lo) & (dd <= hi), yy, np.nan))
    return np.concatenate(parts) if parts else np.empty((0, len(x0)))


def _above_below(ys: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The nearest line elevation at or above each point, and the nearest below it."""
    with np.errstate(invalid="ignore"):
        a = np.nanmin(np.where(ys >= y[:, None], ys, np.nan), axis=1, initial=np.inf)
        b = np.nanmax(np.where(ys < y[:, None], ys, np.nan), axis=1, initial=-np.inf)
    return a, b


def _block_at(draft: Draft, x: np.ndarray, y: np.ndarray) -> np.ndarray:
    """Fault block of points: the number of fault traces passed from the start of the line.

    Blocks are numbered from the start of the line (0, 1, ...), as the draft's
    horizons are. A trace is passed when the point lies beyond it at the point's
    elevation (the trace's end distance is used above or below its extent).
    Without faults, or when all horizons share one block, every point is block 0.
    """
    out = np.zeros(len(x), int)
    if not draft.faults or len({h.block for h in draft.horizons}) < 2:
        return out
    for g in (f.geometry for f in draft.faults):
        if g is None or g.is_empty:
            continue
        c = shapely.get_coordinates(g)
        order = np.argsort(c[:, 1])
        # The trace's distance as a function of elevation, clamped beyond its ends.
        xf = np.interp(y, c[order, 1], c[order, 0])
        out += (x > xf).astype(int)
    return out


def _unit_from_horizons(draft: Draft, x: np.ndarray, y: np.ndarray) -> np.ndarray:
    """The unit at each point from the horizon stack.

    A point lies in unit U when the nearest horizon above it is the top of U;
    with no horizon above, it lies in the unit just younger than the nearest
    horizon below it.
    """
    names = draft.column.layered().names
    idx = {n: i for i, n in enumerate(names)}
    above_y = np.full(len(x), np.inf)
    above_u = np.full(len(x), -1)
    below_y = np.full(len(x), -np.inf)
    below_u = np.full(len(x), -1)
    blocks = _block_at(draft, x, y)
    for h in draft.horizons:
        if h.top_of not in idx or h.geometry is None or h.geometry.is_empty:
            continue
        mine = blocks == h.block  # a horizon says nothing about points in another fault block
        for part in shapely.get_parts(h.geometry):
            a, b = _above_below(_elevations_on(shapely.get_coordinates(part), x), y)
            upd = (a < above_y) & mine
            above_y[upd], above_u[upd] = a[upd], idx[h.top_of]
            upd = (b > below_y) & mine
            below_y[upd], below_u[upd] = b[upd], idx[h.top_of]
    # An unconformity bounds the stacks: below it a point lies in the older sequence (the
    # unit just younger than the horizon below it), above it in the younger one (its
    # oldest unit when no younger horizon lies above).
    for u in draft.unconformities:
        if u.unit not in idx or u.geometry is None or u.geometry.is_empty:
            continue
        mine = blocks == u.block
        a, b = _above_below(_elevations_on(shapely.get_coordinates(u.geometry), x), y)
        upd = (a < above_y) & mine
        above_y[upd], above_u[upd] = a[upd], -2
        upd = (b > below_y) & mine
        below_y[upd], below_u[upd] = b[upd], idx[u.unit] + 1
    unit = np.where(above_u >= 0, above_u, np.where(below_u > 0, below_u - 1, -1))
    out = np.full(len(x), None, dtype=object)
    out[unit >= 0] = np.asarray(names, dtype=object)[unit[unit >= 0]]
    return out


def section_unit_at_ground(draft: Draft, d: np.ndarray, z: np.ndarray) -> tuple[np.ndarray, str]:
    """The section's unit just below the ground at (d, z); and which source was used.

    A constructed draft's unit polygons are used; a draft read back from an
    edited file (method "edited") or one without polygons uses the horizon
    stack, because polygons in an edited file may no longer match its horizons.
    """
    y = z - BELOW_GROUND_M
    if draft.units and draft.method != "edited":
        out = _unit_from_polygons(draft, d, y)
        miss = out == None  # noqa: E711
        if miss.any():  # a sliver the polygons do not cover: ask the horizons there
            out[miss] = _unit_from_horizons(draft, d[miss], y[miss])
        return out, "unit polygons"
    return _unit_from_horizons(draft, d, y), "horizon stack"


__all__ = ["BELOW_GROUND_M", "fault_ground_distances", "ground_line", "map_unit_at", "near",
           "section_ground_contacts", "section_unit_at_ground"]
