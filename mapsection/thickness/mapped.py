"""The map's side of the estimate: contact points along the units' shared boundaries,
fault blocks, and the attitudes clustered into dip domains (see :mod:`mapsection.thickness`)."""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np
import shapely

from .planes import DOMAIN_TOLERANCE, poles_of


def contact_points(geoms_upper, geoms_lower, spacing: float, tolerance: float,
                   avoid=None, avoid_distance: float = 0.0
                   ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Points every ``spacing`` m along the contact of two units' polygons.

    The boundary of the upper unit's polygons is sampled and the points within
    ``tolerance`` m of the lower unit's polygons kept (so small gaps or overlaps
    between the two do not matter), except those within ``avoid_distance`` of
    ``avoid`` (the fault traces: a unit juxtaposed across a fault is no contact).
    Returns x, y and a run number (consecutive points of one stretch of contact).
    """
    e = np.empty(0)
    up = shapely.union_all(np.asarray(geoms_upper, dtype=object))
    lo = shapely.union_all(np.asarray(geoms_lower, dtype=object))
    if up.is_empty or lo.is_empty:
        return e, e, e.astype(int)
    lines = shapely.get_parts(shapely.line_merge(up.boundary))
    x, y, line = sample_lines(lines, spacing)
    pts = shapely.points(x, y)
    keep = _near(pts, lo.boundary, tolerance)
    if avoid is not None and not avoid.is_empty:
        keep &= ~_near(pts, avoid, avoid_distance)
    start = np.ones(len(x), bool)
    start[1:] = (line[1:] != line[:-1]) | (keep[1:] != keep[:-1])
    run = np.cumsum(start)
    return x[keep], y[keep], run[keep]


def _near(points: np.ndarray, lines, distance: float) -> np.ndarray:
    """True where a point lies within ``distance`` of the lines (an STRtree of their segments)."""
    segs = []
    for part in shapely.get_parts(lines):
        xy = shapely.get_coordinates(part)
        if len(xy) > 1:
            segs.append(np.stack([xy[:-1], xy[1:]], axis=1))
    hit = np.zeros(len(points), bool)
    if segs:
        tree = shapely.STRtree(shapely.linestrings(np.concatenate(segs)))
        hit[tree.query(points, predicate="dwithin", distance=distance)[0]] = True
    return hit


def sample_lines(lines: Sequence, spacing: float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Points every ``spacing`` m along each line: x, y and the line's index."""
    xs, ys, ids = [], [], []
    for k, line in enumerate(lines):
        xy = shapely.get_coordinates(line)
        cum = np.concatenate([[0.0], np.cumsum(np.hypot(*np.diff(xy, axis=0).T))])
        n = max(int(math.ceil(cum[-1] / spacing)), 1)
        d = (np.arange(n) + 0.5) * cum[-1] / n
        xs.append(np.interp(d, cum, xy[:, 0]))
        ys.append(np.interp(d, cum, xy[:, 1]))
        ids.append(np.full(n, k))
    if not xs:
        e = np.empty(0)
        return e, e, e.astype(int)
    return np.concatenate(xs), np.concatenate(ys), np.concatenate(ids)


def fault_blocks(x, y, faults: Sequence, names: Sequence | None = None,
                 dip_directions: Sequence | None = None, reach: float = 1e6,
                 simplify: float = 0.0) -> np.ndarray:
    """The fault block of each point: its side of every fault trace, as a name.

    Each trace is extended straight past its ends by ``reach`` metres. A side is
    the hanging wall where the fault's dip direction points into it, else the
    left or right side (facing along the trace as digitised). Without faults
    every point is on "the map".
    """
    x, y = np.asarray(x, float), np.asarray(y, float)
    if not len(faults) or not len(x):
        return np.full(len(x), "the map", dtype=object)
    pts = shapely.points(x, y)
    sides = []
    for k, f in enumerate(faults):
        name = str(names[k]) if names is not None and names[k] is not None else f"fault {k + 1}"
        dd = float(dip_directions[k]) if dip_directions is not None and \
            dip_directions[k] is not None else math.nan
        for part in shapely.get_parts(shapely.simplify(f, simplify) if simplify else f):
            xy = np.asarray(part.coords)[:, :2]
            if len(xy) < 2:
                continue
            a, b = xy[1] - xy[0], xy[-1] - xy[-2]
            a, b = a / np.linalg.norm(a), b / np.linalg.norm(b)
            ext = shapely.LineString(np.vstack([xy[0] - reach * a, xy, xy[-1] + reach * b]))
            s = shapely.line_locate_point(ext, pts)
            q = shapely.line_interpolate_point(ext, s)
            dx, dy = x - shapely.get_x(q), y - shapely.get_y(q)
            if math.isfinite(dd):
                toward = dx * math.sin(math.radians(dd)) + dy * math.cos(math.radians(dd))
                sides.append(np.where(toward > 0, f"hanging wall of {name}",
                                      f"footwall of {name}"))
            else:
                q1 = shapely.line_interpolate_point(ext, s + 1.0)
                tx, ty = shapely.get_x(q1) - shapely.get_x(q), shapely.get_y(q1) - shapely.get_y(q)
                sides.append(np.where(tx * dy - ty * dx > 0, f"left of {name}",
                                      f"right of {name}"))
    if not sides:
        return np.full(len(x), "the map", dtype=object)
    return np.array([", ".join(s) for s in zip(*sides, strict=True)], dtype=object)


MAX_CLUSTERED = 2000  # the tool's default: more poles join the clusters of a sample of them


def orientation_clusters(strike, dip, tolerance: float = DOMAIN_TOLERANCE) -> np.ndarray:
    """Cluster number of each attitude: poles closer than ``tolerance`` degrees
    (average linkage; scipy.cluster.hierarchy).

    The linkage needs every pair of poles, so beyond ``MAX_CLUSTERED`` attitudes a fixed
    random sample of them is clustered and every attitude joins the cluster whose mean pole
    is nearest (memory stays bounded on attitude databases of any size).
    """
    poles = poles_of(strike, dip)
    if len(poles) < 2:
        return np.zeros(len(poles), int)
    if len(poles) <= MAX_CLUSTERED:
        return _linkage_clusters(poles, tolerance)
    pick = np.random.default_rng(0).choice(len(poles), MAX_CLUSTERED, replace=False)
    labels = _linkage_clusters(poles[pick], tolerance)
    means = []
    for k in np.unique(labels):
        p = poles[pick][labels == k]
        p = p * np.sign(p @ p[0])[:, None]  # axial data: one sense before averaging
        means.append(p.sum(axis=0) / np.linalg.norm(p.sum(axis=0)))
    return np.argmax(np.abs(poles @ np.array(means).T), axis=1).astype(int) + 1


def _linkage_clusters(poles: np.ndarray, tolerance: float) -> np.ndarray:
    from scipy.cluster.hierarchy import fcluster, linkage

    dots = np.clip(np.abs(poles @ poles.T), 0.0, 1.0)
    ang = np.degrees(np.arccos(dots[np.triu_indices(len(poles), 1)]))
    return fcluster(linkage(ang, "average"), tolerance, criterion="distance").astype(int)


def domain_label(poles: np.ndarray) -> str:
    """A dip domain's name: its mean attitude, right-hand-rule strike/dip."""
    if not len(poles):
        return "no attitudes"
    m = poles.sum(axis=0)
    m = m / np.linalg.norm(m)
    dd = math.degrees(math.atan2(m[0], m[1])) % 360.0
    d = math.degrees(math.acos(min(max(m[2], -1.0), 1.0)))
    return f"dips {(dd - 90.0) % 360.0:03.0f}/{d:.0f}"


__all__ = ["MAX_CLUSTERED", "contact_points", "domain_label", "fault_blocks",
           "orientation_clusters", "sample_lines"]
