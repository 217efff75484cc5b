"""A Busk horizon where it passes beyond a centre of curvature: the loop it would draw
there is cut off at the point where the path crosses itself (a cusp), as the construction
cannot carry a horizon round a hinge tighter than its radius (Busk 1929; see
:mod:`mapsection.construct.arc`)."""

from __future__ import annotations

import numpy as np
import shapely


def _trim_loops(p: np.ndarray) -> tuple[np.ndarray, list[int]]:
    """Cut the loops out of a horizon path (where it passes beyond a centre of curvature
    the raw concentric path folds back on itself): each loop is replaced by the point
    where the path crosses itself. Returns the path and the indices of those points.

    The loops are cut one at a time, the first crossing along the path first (the
    segment ``i`` that crosses a later one, cut at the last segment ``j`` it crosses).
    Only the pairs of segments whose boxes meet (one STRtree query of the raw path) are
    tested for a crossing: a cut keeps the segments before ``i`` and from ``j`` on,
    shortening ``i`` and ``j``, so a pair of the cut path can cross only if the segments
    they are part of met in the raw path. A long horizon costs about its number of
    segments and its number of loops, not their product or its square."""
    cusps: list[int] = []
    if len(p) < 4:
        return p, cusps
    pairs = _box_pairs(p[:-1], p[1:])
    keep = pairs[1] >= pairs[0] + 2
    pi, pj = pairs[0][keep], pairs[1][keep]  # raw segment ids, pi < pj
    seg = np.arange(len(p) - 1)  # where each raw segment is in the path now (-1: cut away)
    for _ in range(len(p)):
        a, v = p[:-1], np.diff(p, axis=0)
        if len(a) < 3 or not pi.size:
            break
        i_s, j_s = seg[pi], seg[pj]
        live = (i_s >= 0) & (j_s >= i_s + 2)
        pi, pj, i_s, j_s = pi[live], pj[live], i_s[live], j_s[live]
        if not i_s.size:
            break
        den = v[i_s, 0] * v[j_s, 1] - v[i_s, 1] * v[j_s, 0]
        dx = a[j_s] - a[i_s]
        with np.errstate(divide="ignore", invalid="ignore"):
            t = (dx[:, 0] * v[j_s, 1] - dx[:, 1] * v[j_s, 0]) / den
            u = (dx[:, 0] * v[i_s, 1] - dx[:, 1] * v[i_s, 0]) / den
        eps = 1e-9
        hit = (np.abs(den) > 1e-12) & (t > eps) & (t < 1 - eps) & (u > eps) & (u < 1 - eps)
        if not hit.any():
            break
        i = int(i_s[hit].min())
        first = hit & (i_s == i)
        j = int(j_s[first].max())
        x = a[i] + t[first & (j_s == j)][0] * v[i]
        p = np.vstack([p[:i + 1], x[None, :], p[j + 1:]])
        # segments i+1 .. j-1 are cut away; j (from x on) becomes i+1, the rest move up
        seg = np.where(seg <= i, seg, np.where(seg < j, -1, seg - (j - i - 1)))
        cusps = [c if c <= i else c - (j - i - 1) for c in cusps if c <= i or c > j]
        cusps.append(i + 1)
    return p, sorted(cusps)

def _box_pairs(p0: np.ndarray, p1: np.ndarray) -> np.ndarray:
    """Index pairs (i, j), i < j, of the segments p0-p1 that may cross (they meet: an
    STRtree query, which tests the boxes first)."""

    segments = shapely.linestrings(np.stack([p0, p1], axis=1))
    pairs = shapely.STRtree(segments).query(segments, predicate="intersects")
    return pairs[:, pairs[0] < pairs[1]]

def _dedupe(p: np.ndarray) -> np.ndarray:
    keep = np.concatenate([[True], np.any(np.abs(np.diff(p, axis=0)) > 1e-9, axis=1)])
    return p[keep]
