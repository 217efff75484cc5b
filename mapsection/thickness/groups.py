"""The planes one contact fits: connected stretches grouped by the plane they share,
seeds from the attitudes, k-planes refinement and merging (see :mod:`mapsection.thickness`)."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .planes import MIN_POINTS, pole_angle, robust_plane, svd_normal
from .results import Plane


@dataclass
class ContactGroup:
    """Points of one contact in one block and dip domain that one plane fits."""

    upper: str
    lower: str
    block: str
    domain: int
    xyz: np.ndarray
    run: np.ndarray
    plane: Plane | None = None
    keep: np.ndarray | None = None
    name: str = ""


def connected_pieces(xy: np.ndarray, step: float) -> list[np.ndarray]:
    """Connected stretches of contact points (neighbours closer than 2.5 spacings)."""
    from scipy.sparse import coo_matrix
    from scipy.sparse.csgraph import connected_components
    from scipy.spatial import cKDTree

    pairs = cKDTree(xy).query_pairs(2.5 * step, output_type="ndarray")
    g = coo_matrix((np.ones(len(pairs)), (pairs[:, 0], pairs[:, 1])), shape=(len(xy),) * 2)
    _, comp = connected_components(g, directed=False)
    order = np.argsort(comp, kind="stable")
    return np.split(order, np.flatnonzero(np.diff(comp[order])) + 1)


def _determined(xyz: np.ndarray, plane: Plane, pixel: float) -> bool:
    """True when points are spread off one line enough to fix a plane's tilt about it
    (the three-point problem needs points that are not on one line)."""
    if len(xyz) < MIN_POINTS:
        return False
    _, _, s = svd_normal(xyz)
    return s[1] / math.sqrt(len(xyz)) >= max(3.0 * plane.rms, pixel)


def stretch_planes(xyz: np.ndarray, pieces: list[np.ndarray], pixel: float
            ) -> list[tuple[np.ndarray, Plane, np.ndarray]]:
    """Stretches of one contact grouped by the plane they share: (indices, plane, kept).

    Stretches are taken largest first; one joins a group when its points lie
    within three times the larger RMS (at least one pixel) of the group's plane,
    else it starts a group. Stretches too small for a plane of their own join
    the group they fit best, if they fit one.
    """
    floor = 0.5 * pixel
    groups: list[list] = []
    small = []
    for p in sorted(pieces, key=len, reverse=True):
        if len(p) < MIN_POINTS:
            small.append(p)
            continue
        plane, keep = robust_plane(xyz[p], floor)
        for g in groups:
            r = g[1].height(*xyz[p][keep].T)
            if math.sqrt(float(np.mean(r**2))) <= max(3.0 * max(g[1].rms, plane.rms), pixel):
                idx = np.concatenate([g[0], p])
                g[1], k2 = robust_plane(xyz[idx], floor)
                g[0], g[2] = idx, k2
                break
        else:
            if _determined(xyz[p][keep], plane, pixel):
                groups.append([p, plane, keep])
            else:
                small.append(p)
    for p in small:
        best = None
        for g in groups:
            r = g[1].height(*xyz[p].T)
            rms = math.sqrt(float(np.mean(r**2)))
            if rms <= max(3.0 * g[1].rms, pixel) and (best is None or rms < best[0]):
                best = (rms, g)
        if best is not None:
            g = best[1]
            g[0] = np.concatenate([g[0], p])
            g[1], g[2] = robust_plane(xyz[g[0]], floor)
    return [(g[0], g[1], g[2]) for g in groups if _determined(xyz[g[0]][g[2]], g[1], pixel)]


def refine_planes(xyz: np.ndarray, blocks: np.ndarray, seeds: list, pixel: float) -> list:
    """Each contact point of a block given to the plane it fits best (k-planes, 3 rounds).

    ``seeds``: (block, domain, indices) of the groups found from the attitudes. Near a
    hinge the nearest attitude may lie across it; a point goes to the plane of its
    block within three RMS (at least one pixel) of which it lies closest, and the
    planes are refitted. Returns (block, domain, indices, plane, kept) of each plane.
    """
    out = []
    floor = 0.5 * pixel
    for b in dict.fromkeys(s[0] for s in seeds):
        pts = np.flatnonzero(blocks == b)
        fitted = []
        for _, d, idx in (s for s in seeds if s[0] == b):
            plane, keep = robust_plane(xyz[idx], floor)
            fitted.append((d, idx, plane, keep))
        for _ in range(3):
            if not fitted:
                break
            res = np.column_stack([np.abs(f[2].height(*xyz[pts].T)) for f in fitted])
            thr = np.array([max(3.0 * f[2].rms, 0.5 * pixel) for f in fitted])
            best = res.argmin(axis=1)
            ok = res[np.arange(len(pts)), best] <= thr[best]
            new = []
            for k, (d, _, _, _) in enumerate(fitted):
                idx = pts[ok & (best == k)]
                if len(idx) >= MIN_POINTS:
                    new.append((d, idx, *robust_plane(xyz[idx], floor)))
            fitted = new
        out += [(b, d, idx, plane, keep) for d, idx, plane, keep in fitted
                if _determined(xyz[idx][keep], plane, pixel)]
    return out


def attitude_seeds(xyz: np.ndarray, blocks: np.ndarray, means: dict, pixel: float,
                    most: int = 3) -> list:
    """Seed groups of contact points that lie on a plane of a domain's mean attitude.

    For each attitude cluster of a block, the points' offsets along its mean pole
    are binned; the fullest bins (up to ``most``, each with MIN_POINTS points within
    one pixel) give planes of that attitude through the contact (a Hough-like vote),
    whatever the nearest attitude of each point.
    """
    seeds = []
    for (b, c), n in means.items():
        pts = np.flatnonzero(blocks == b)
        if len(pts) < MIN_POINTS:
            continue
        h = xyz[pts] @ n
        free = np.ones(len(pts), bool)
        for _ in range(most):
            if free.sum() < MIN_POINTS:
                break
            hs = np.sort(h[free])
            # the densest window one pixel wide either side
            counts = np.searchsorted(hs, hs + 2 * pixel) - np.arange(len(hs))
            k = int(np.argmax(counts))
            if counts[k] < MIN_POINTS:
                break
            centre = hs[k] + pixel
            near = free & (np.abs(h - centre) <= pixel)
            seeds.append((b, c, pts[near]))
            free &= ~near
    return seeds


def closest_cluster(plane: Plane, block: str, means: dict) -> tuple[int, float | None]:
    """The attitude cluster of ``block`` closest in orientation to a plane, and the angle."""
    cands = [(c, pole_angle(plane.normal, v)) for (b, c), v in means.items() if b == block]
    if not cands:
        return -1, None
    return min(cands, key=lambda t: t[1])


def merge_coplanar(xyz: np.ndarray, planes: list, pixel: float) -> list:
    """Planes of one domain that are one plane (each one's points within three RMS, at least
    one pixel, of the other's), merged and refitted."""
    planes = sorted(planes, key=lambda p: -len(p[0]))
    out: list = []
    for idx, plane, keep in planes:
        for k, (idx2, plane2, _) in enumerate(out):
            r = plane2.height(*xyz[idx][keep].T)
            if math.sqrt(float(np.mean(r**2))) <= max(3.0 * max(plane.rms, plane2.rms), pixel):
                both = np.sort(np.concatenate([idx2, idx]))
                out[k] = (both, *robust_plane(xyz[both], 0.5 * pixel))
                break
        else:
            out.append((idx, plane, keep))
    return out


__all__ = ["ContactGroup", "attitude_seeds", "closest_cluster", "connected_pieces",
           "merge_coplanar", "refine_planes", "stretch_planes"]
