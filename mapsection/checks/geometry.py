"""Section-space geometry every check shares: horizons joined per fault block, clipped
between two distances, sampled at distances, and the blocks each fault separates.

Pure functions over a :class:`mapsection.draft.Draft` (shapely and numpy only).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from shapely.geometry import LineString, Point

from ..draft import Draft

__all__ = [
    "FaultBlocks",
    "clip_x",
    "fault_blocks",
    "joined_horizons",
    "line_xy",
    "snap_tolerance",
    "y_at",
]


def line_xy(line: LineString) -> np.ndarray:
    """The (distance, elevation) vertices of a line as an (n, 2) array (any z dropped)."""
    return np.asarray(line.coords, float)[:, :2]


def snap_tolerance(draft: Draft) -> float:
    """How close two points of a section count as one (m): 1 m, or more on long sections."""
    return max(1.0, 1e-5 * float(draft.line.length))


def joined_horizons(draft: Draft) -> dict[tuple[str, int], LineString]:
    """Each horizon's below- and above-ground pieces joined, per (top_of, block).

    Pieces are ordered by distance and oriented toward increasing distance;
    repeated vertices where pieces meet are dropped.
    """
    groups: dict[tuple[str, int], list[np.ndarray]] = {}
    for h in draft.horizons:
        g = h.geometry
        if g is None or g.is_empty:
            continue
        parts = list(g.geoms) if hasattr(g, "geoms") else [g]
        for p in parts:
            c = line_xy(p)
            if len(c) < 2:
                continue
            if c[-1, 0] < c[0, 0]:
                c = c[::-1]
            groups.setdefault((h.top_of, int(h.block)), []).append(c)
    out = {}
    for key, pieces in groups.items():
        pieces.sort(key=lambda c: (c[0, 0], c[-1, 0]))
        c = np.concatenate(pieces)
        keep = np.concatenate([[True], np.any(np.abs(np.diff(c, axis=0)) > 1e-9, axis=1)])
        c = c[keep]
        if len(c) >= 2:
            out[key] = LineString(c)
    return out


def clip_x(line: LineString, x0: float, x1: float) -> LineString | None:
    """The part of an x-ordered line between distances x0 <= x1 (exact end points)."""
    c = line_xy(line)
    x = c[:, 0]
    lo, hi = max(x0, x[0]), min(x1, x[-1])
    if hi - lo <= 1e-9:
        return None
    inner = c[(x > lo) & (x < hi)]
    ya = np.interp(lo, x, c[:, 1])
    yb = np.interp(hi, x, c[:, 1])
    pts = np.vstack([[lo, ya], inner, [hi, yb]])
    return LineString(pts)


def y_at(line: LineString, xs) -> np.ndarray:
    """Elevation of an x-ordered line at distances (NaN outside it)."""
    c = line_xy(line)
    return np.interp(np.asarray(xs, float), c[:, 0], c[:, 1], left=np.nan, right=np.nan)


@dataclass(frozen=True)
class FaultBlocks:
    """The two blocks a fault separates, and which is the hanging wall."""

    name: str
    footwall: int
    hanging_wall: int
    dips_toward: int  # +1: the fault descends toward increasing distance; -1: decreasing
    ground_x: float  # distance of the fault's upper end
    # top_of -> ((x, y) of the hanging-wall cutoff, (x, y) of the footwall cutoff)
    cutoffs: dict[str, tuple[tuple[float, float] | None, tuple[float, float] | None]]


def fault_blocks(draft: Draft) -> dict[str, FaultBlocks]:
    """For each fault: its footwall and hanging-wall blocks and the horizon cutoffs on it.

    The hanging wall lies on the side toward which the fault trace descends. The
    blocks are those of the horizon ends lying on the fault (within 1 m); a fault
    no horizon touches separates block i and i+1, i its rank along the line.
    """
    joined = joined_horizons(draft)
    tol = snap_tolerance(draft)

    def ground_x(f) -> float:
        c = line_xy(f.geometry)
        return float(c[np.argmax(c[:, 1]), 0])

    ordered = sorted(draft.faults, key=ground_x)
    out = {}
    for rank, f in enumerate(ordered):
        c = line_xy(f.geometry)
        top, bot = c[np.argmax(c[:, 1])], c[np.argmin(c[:, 1])]
        dx = bot[0] - top[0]
        toward = int(np.sign(dx)) if abs(dx) > 1e-9 else int(np.sign(f.apparent_dip or 0.0))
        left: dict[int, int] = {}
        right: dict[int, int] = {}
        ends: dict[tuple[str, int], tuple[float, float]] = {}
        for (top_of, block), line in joined.items():
            lc = line_xy(line)
            for end, other in ((lc[0], lc[-1]), (lc[-1], lc[0])):
                if f.geometry.distance(Point(end)) <= tol:
                    side = right if other[0] > end[0] else left
                    side[block] = side.get(block, 0) + 1
                    ends[(top_of, block)] = (float(end[0]), float(end[1]))
        lb = max(left, key=left.get) if left else rank
        rb = max(right, key=right.get) if right else rank + 1
        hw, fw = (rb, lb) if toward >= 0 else (lb, rb)
        cut = {}
        for (top_of, block), pt in ends.items():
            if block not in (hw, fw):
                continue
            prev = cut.get(top_of, (None, None))
            cut[top_of] = (pt, prev[1]) if block == hw else (prev[0], pt)
        out[f.name] = FaultBlocks(f.name, fw, hw, toward, float(top[0]), cut)
    return out
