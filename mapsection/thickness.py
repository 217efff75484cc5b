"""Unit thicknesses measured from the map: mapped contacts on the DEM, fitted by planes.

A geologic contact is a surface. Where it meets the ground its trace on the map,
with each point's elevation taken from the DEM, is a set of 3D points on that
surface. Three such points fix the plane of a planar contact (the three-point
problem); many points are fitted here by least squares, as the plane that
minimises the sum of squared perpendicular distances (orthogonal regression: the
normal is the singular vector of the centred points with the smallest singular
value). A unit's thickness is the distance, perpendicular to bedding, between
the planes of its top and base contacts. On level ground this reduces to
thickness from outcrop width, ``t = w sin(d)``, and on ground sloping ``s``
across the strike to ``t = w |sin(d +/- s)|`` (see :func:`outcrop_thickness`).
Both constructions: Ragan, D. M., *Structural Geology: An Introduction to
Geometrical Techniques* (Cambridge University Press), the chapters on the
three-point problem and on thickness and depth of strata.

Folded and faulted ground: one plane does not fit a contact that crosses a
hinge or a fault. Each contact is therefore fitted by several planes:

- *fault blocks*: a point belongs to the side of each mapped fault trace
  (extended straight past its ends to the map's edge) it lies on; a side is
  named the hanging wall where the fault's dip direction points into it. Points
  within two pixels of a fault trace are left out (units juxtaposed across a
  fault are no contact).
- *dip domains*: the bedding attitudes are clustered by orientation (poles
  within ``tolerance`` degrees, average linkage).
- *seeds*: in each block the contact points are grouped by the cluster of their
  nearest attitude, and split into connected stretches that share a plane; and
  for each cluster, the points lying on a plane of the cluster's mean attitude
  are found by a vote over their offsets along its pole (a Hough transform), so
  that a stretch whose nearest attitudes lie across a hinge still finds its limb.
- *k-planes refinement*: each point of a block goes to the plane it lies closest
  to (within three RMS, at least half a pixel) and the planes are refitted,
  three times (the k-planes scheme: Bradley & Mangasarian 2000, J. Global
  Optimization 16). A plane's dip domain is the attitude cluster closest to it
  in orientation; a plane more than ``tolerance`` degrees from every cluster
  (points of two limbs, or a contact bent through a hinge) is left out, and
  planes of one domain that coincide are merged.

Each plane is fitted robustly (points further than three robust standard
deviations, at least half a pixel, are dropped until none changes). A unit's
top and base planes of one block and domain that are each other's nearest face
each other across its outcrop; its thickness is measured between them, then
averaged over such pairs weighted by their uncertainty.

Uncertainty: a moving-block bootstrap (Kunsch 1989, Annals of Statistics 17):
the points of each contact are resampled in runs of ten consecutive points along
the trace (neighbouring points share the same DEM and mapping errors, so single points
are not independent), both planes are refitted and the thickness recomputed, 200
times with a fixed seed; the uncertainty is twice the standard deviation of
those thicknesses (about a 95 % interval). Combined over groups (weights: one
over its square) it is the larger of the weighted mean's own uncertainty and
twice the standard error from the scatter between groups, and at least 1 % of
the thickness (the tool's default: a map's contacts resolve no better).

Where a unit has only one mapped contact (the youngest unit, whose top is the
ground, or the oldest exposed unit) the map gives only a lower bound: the unit's
outcrop reaches that far from its one contact, measured perpendicular to it.

The estimator reads no file: the map, the attitudes and a DEM sampling function
come in loaded (:func:`estimate_column`; :func:`project_estimate` and
:func:`resolve_map_thicknesses` for a project's loaded inputs). The one edge that
reads a project's files is :func:`measure_column`.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np
import shapely

from .errors import ProjectFileError
from .stratigraphy import Column, Unit

if TYPE_CHECKING:  # pragma: no cover - typing only
    from .attitudes import Attitudes
    from .mapdata import MapData
    from .project import Project
    from .session import ProjectInputs

Warn = Callable[[str], None]
Elevation = Callable[[np.ndarray, np.ndarray], np.ndarray]

DOMAIN_TOLERANCE = 10.0  # degrees between poles of one dip domain (the tool's default)
MIN_POINTS = 20  # contact points a plane needs (the tool's default)
BOOTSTRAP = 200  # bootstrap resamples (the tool's default)
CHUNK_PIXELS = 10  # run length of the block bootstrap, in sample spacings (the tool's default)
RESOLUTION = 0.01  # least relative uncertainty of a thickness from the map (the tool's default)
MIN_PERCENTILE = 99.0  # of outcrop heights, for a lower bound (the tool's default)


# ---------------------------------------------------------------- closed forms
def outcrop_thickness(width: float, dip: float, slope: float = 0.0,
                      slope_with_dip: bool = False) -> float:
    """Thickness of a bed from its outcrop width measured across the strike.

    Parameters
    ----------
    width : float
        Outcrop width measured on the ground surface, perpendicular to the strike
        (along the slope), metres.
    dip : float
        True dip of the bed, degrees.
    slope : float
        Slope of the ground across the strike, degrees (0: level ground).
    slope_with_dip : bool
        True where the ground slopes the same way as the beds dip.

    Returns
    -------
    float
        ``w sin(d)`` on level ground; ``w |sin(d + s)|`` where ground and beds
        slope opposite ways, ``w |sin(d - s)|`` where they slope the same way
        (Ragan, Structural Geology: An Introduction to Geometrical Techniques).

    Examples
    --------
    >>> round(outcrop_thickness(200.0, 30.0), 6)
    100.0
    """
    d, s = math.radians(dip), math.radians(slope)
    return abs(width * math.sin(d - s if slope_with_dip else d + s))


# ---------------------------------------------------------------- results
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


# ---------------------------------------------------------------- planes
def fit_plane(xyz: np.ndarray) -> Plane:
    """Least-squares plane through 3D points (orthogonal regression, by SVD).

    Three points give the plane of the three-point problem exactly (Ragan).

    Examples
    --------
    >>> p = fit_plane(np.array([[0, 0, 0], [100, 0, 0], [0, 100, -100.0]]))
    >>> round(p.dip, 6), round(p.dip_direction, 6)
    (45.0, 0.0)
    """
    xyz = np.asarray(xyz, float)
    c = xyz.mean(axis=0)
    _, s, vt = np.linalg.svd(xyz - c, full_matrices=False)
    n = vt[-1]
    if n[2] < 0:
        n = -n
    r = (xyz - c) @ n
    return Plane(tuple(map(float, n)), tuple(map(float, c)), float(np.sqrt(np.mean(r**2))),
                 len(xyz))


def _normal(xyz: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(upward normal, centroid, singular values) of points."""
    c = xyz.mean(axis=0)
    _, s, vt = np.linalg.svd(xyz - c, full_matrices=False)
    n = vt[-1] if vt[-1][2] >= 0 else -vt[-1]
    return n, c, s


def robust_plane(xyz: np.ndarray, floor: float) -> tuple[Plane, np.ndarray]:
    """Plane fit dropping points beyond 3 robust standard deviations (and ``floor`` m).

    Returns the plane and the mask of the points kept.
    """
    keep = np.ones(len(xyz), bool)
    for _ in range(10):  # until no point changes side (a majority plane wins)
        n, c, _ = _normal(xyz[keep])
        r = (xyz - c) @ n
        mad = 1.4826 * float(np.median(np.abs(r[keep] - np.median(r[keep]))))
        new = np.abs(r - np.median(r[keep])) <= max(3.0 * mad, floor)
        if new.sum() < 3 or np.array_equal(new, keep):
            break
        keep = new
    return fit_plane(xyz[keep]), keep


def _angle(n1, n2) -> float:
    return float(np.degrees(np.arccos(np.clip(abs(float(np.dot(n1, n2))), 0.0, 1.0))))


def _poles(strike, dip) -> np.ndarray:
    """Upward unit normals of planes given by right-hand-rule strike and dip (degrees)."""
    dd = np.radians(np.asarray(strike, float) + 90.0)
    d = np.radians(np.asarray(dip, float))
    return np.column_stack([np.sin(d) * np.sin(dd), np.sin(d) * np.cos(dd), np.cos(d)])


# ---------------------------------------------------------------- the map
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
    poles = _poles(strike, dip)
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


def _domain_name(poles: np.ndarray) -> str:
    """A dip domain's name: its mean attitude, right-hand-rule strike/dip."""
    if not len(poles):
        return "no attitudes"
    m = poles.sum(axis=0)
    m = m / np.linalg.norm(m)
    dd = math.degrees(math.atan2(m[0], m[1])) % 360.0
    d = math.degrees(math.acos(min(max(m[2], -1.0), 1.0)))
    return f"dips {(dd - 90.0) % 360.0:03.0f}/{d:.0f}"


# ---------------------------------------------------------------- the estimate
@dataclass
class _Group:
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


def _pieces(xy: np.ndarray, step: float) -> list[np.ndarray]:
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
    _, _, s = _normal(xyz)
    return s[1] / math.sqrt(len(xyz)) >= max(3.0 * plane.rms, pixel)


def _planes(xyz: np.ndarray, pieces: list[np.ndarray], pixel: float
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


def _refine(xyz: np.ndarray, blocks: np.ndarray, seeds: list, pixel: float) -> list:
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


def _attitude_seeds(xyz: np.ndarray, blocks: np.ndarray, means: dict, pixel: float,
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


def _closest_cluster(plane: Plane, block: str, means: dict) -> tuple[int, float | None]:
    """The attitude cluster of ``block`` closest in orientation to a plane, and the angle."""
    cands = [(c, _angle(plane.normal, v)) for (b, c), v in means.items() if b == block]
    if not cands:
        return -1, None
    return min(cands, key=lambda t: t[1])


def _merge_coplanar(xyz: np.ndarray, planes: list, pixel: float) -> list:
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


def estimate_column(column: Column, map_data: MapData, elevation: Elevation,
                    attitudes: Attitudes, pixel_size: float, *,
                    tolerance: float = DOMAIN_TOLERANCE, spacing: float | None = None,
                    bootstrap: int = BOOTSTRAP, seed: int = 0) -> ColumnEstimate:
    """Every unit's thickness from the map's contacts on the DEM (see the module docstring).

    Parameters
    ----------
    column : Column
        The stratigraphic column, youngest first; only the contacts of layered units
        adjacent in it are used (cover and intrusive units are skipped: a contact with
        one is no bedding contact, and they get no thickness, kind ``"none"``).
    map_data : MapData
        The unit polygons and fault lines (in the same projected CRS as the attitudes).
    elevation : callable
        ``elevation(x, y)`` -> ground elevation (NaN off the DEM), e.g. ``Dem.sample``.
    attitudes : Attitudes
        Bedding attitudes (for the dip domains and the misfit).
    pixel_size : float
        DEM pixel size, metres: contacts are sampled at this spacing (or ``spacing``).
    tolerance : float
        Degrees between poles of one dip domain.
    bootstrap : int
        Block-bootstrap resamples for the uncertainty (0: none).
    seed : int
        Seed of the bootstrap (results are reproducible).

    Returns
    -------
    ColumnEstimate
    """
    from scipy.spatial import cKDTree

    step = float(spacing or pixel_size)
    rng = np.random.default_rng(seed)
    layered = column.layered().units
    names = [u.name for u in layered]  # adjacent layered units: cover and intrusive skipped
    faults = list(map_data.fault_geoms)
    rows = np.arange(len(faults))
    fnames = map_data.fault_value("name", rows) if faults else None
    fdd = map_data.fault_value("dip_direction", rows) if faults else None
    avoid = shapely.union_all(faults) if faults else None
    simple = 0.25 * pixel_size

    ax, ay = np.asarray(attitudes.x, float), np.asarray(attitudes.y, float)
    apoles = _poles(attitudes.strike, attitudes.dip)
    ablock = fault_blocks(ax, ay, faults, fnames, fdd, simplify=simple)
    acluster = orientation_clusters(attitudes.strike, attitudes.dip, tolerance)
    trees = {b: (cKDTree(np.column_stack([ax[ablock == b], ay[ablock == b]])),
                 np.flatnonzero(ablock == b)) for b in dict.fromkeys(ablock.tolist())}

    def label(x, y) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """(block, domain cluster, nearest attitude) of points; -1 where the block has none."""
        blk = fault_blocks(x, y, faults, fnames, fdd, simplify=simple)
        dom = np.full(len(x), -1, int)
        near = np.full(len(x), -1, int)
        for b in dict.fromkeys(blk.tolist()):
            if b in trees:
                m = blk == b
                _, i = trees[b][0].query(np.column_stack([x[m], y[m]]))
                near[m] = trees[b][1][i]
                dom[m] = acluster[near[m]]
        return blk, dom, near

    def domain_name(b: str, d: int) -> str:
        return _domain_name(apoles[(ablock == b) & (acluster == d)]) if d >= 0 else \
            "no attitudes"

    # mean pole of each attitude cluster in each block
    means = {}
    for b, c in dict.fromkeys(zip(ablock.tolist(), acluster.tolist(), strict=True)):
        v = apoles[(ablock == b) & (acluster == c)].sum(axis=0)
        means[(b, c)] = v / np.linalg.norm(v)
    ctrees = {k: (cKDTree(np.column_stack([ax[m], ay[m]])), np.flatnonzero(m))
              for k in means for m in [(ablock == k[0]) & (acluster == k[1])]}

    def near_of(b: str, d: int, pts: np.ndarray) -> np.ndarray:
        """The attitudes of a domain nearest to points (each point's nearest, once)."""
        if (b, d) not in ctrees or not len(pts):
            return np.empty(0, int)
        tree, rows = ctrees[(b, d)]
        return np.unique(rows[tree.query(pts[:, :2])[1]])

    geoms = {n: map_data.unit_geoms[map_data.unit_names == n] for n in names}
    everywhere: dict[tuple[str, str], tuple[np.ndarray, np.ndarray]] = {}
    groups: dict[tuple[str, str], list[_Group]] = {}
    fits: list[ContactFit] = []
    for upper, lower in zip(names[:-1], names[1:], strict=True):
        if column.unit(upper).unconformity:
            continue  # an erosion surface, not a conformable contact: it measures nothing
        x, y, run = contact_points(geoms[upper], geoms[lower], step, 0.5 * pixel_size,
                                   avoid, 2.0 * pixel_size)
        z = np.asarray(elevation(x, y), float) if len(x) else np.empty(0)
        ok = np.isfinite(z)
        x, y, z, run = x[ok], y[ok], z[ok], run[ok]
        blk, dom, near = label(x, y)
        found = []
        xyz = np.column_stack([x, y, z])
        seeds = []
        for b, d in dict.fromkeys(zip(blk.tolist(), dom.tolist(), strict=True)):
            m = np.flatnonzero((blk == b) & (dom == d))
            seeds += [(b, d, m[idx]) for idx, _, _ in
                      _planes(xyz[m], _pieces(xyz[m, :2], step), pixel_size)]
        seeds += _attitude_seeds(xyz, blk, means, pixel_size)
        by_domain: dict[tuple[str, int], list] = {}
        for b, _, idx, plane, keep in _refine(xyz, blk, seeds, pixel_size):
            # The plane's dip domain: the block's attitude cluster closest to it in
            # orientation; a plane far from all of them (points of two limbs, or a contact
            # bent in a hinge) measures nothing and is left out.
            d, angle = _closest_cluster(plane, b, means)
            if angle is None or angle <= tolerance:
                by_domain.setdefault((b, d), []).append((idx, plane, keep))
        owner = np.full(len(x), -1, int)
        for (b, d), planes in by_domain.items():
            planes = _merge_coplanar(xyz, planes, pixel_size)
            for k, (idx, plane, keep) in enumerate(planes):
                name = domain_name(b, d) + (f" #{k + 1}" if len(planes) > 1 else "")
                seen = near_of(b, d, xyz[idx][keep])
                mis = (float(np.mean([_angle(plane.normal, apoles[i]) for i in seen]))
                       if len(seen) else None)
                owner[idx] = len(found)
                found.append(_Group(upper, lower, b, d, xyz[idx], run[idx], plane, keep, name))
                fits.append(ContactFit(upper, lower, b, name, plane, int((~keep).sum()), mis,
                                       len(seen)))
        everywhere[(upper, lower)] = (xyz, owner)
        groups[(upper, lower)] = found
    fit_of = {id(f.plane): f for f in fits}

    units = []
    for i, name in enumerate(names):
        top = groups.get((names[i - 1], name), []) if i > 0 else []
        base = groups.get((name, names[i + 1]), []) if i + 1 < len(names) else []
        above = everywhere.get((names[i - 1], name)) if i > 0 else None
        below = everywhere.get((name, names[i + 1])) if i + 1 < len(names) else None
        u = _unit_thickness(name, top, base, fit_of, step, rng, bootstrap,
                            geoms[name], elevation, label, tolerance, above, below)
        for side, k in (("base", i), ("top", i - 1)):  # the erosion surface measures nothing
            if k >= 0 and layered[k].unconformity and u.why:
                u = dataclasses.replace(u, why=u.why.replace(
                    f"its {side} contact is not mapped",
                    f"its {side} is an unconformity (an erosion surface, not a conformable "
                    "contact)"))
        units.append(u)
    measured = {u.unit: _named_neighbours(u, names) for u in units}
    units = [measured.get(u.name) or UnitThickness(
        u.name, "none", why=f"{'an' if u.kind == 'intrusive' else 'a'} {u.kind} unit is not "
                            "a layer: it has no thickness between bedding contacts")
        for u in column.units]
    return ColumnEstimate(tuple(units), tuple(fits), step)


_NO_CONTACT = "no contact with the unit above or below it in the column is mapped"


def _named_neighbours(u: UnitThickness, names: list[str]) -> UnitThickness:
    """A unit without any mapped contact: its why names the units it was looked for with."""
    if u.kind != "none" or u.why != _NO_CONTACT:
        return u
    i = names.index(u.unit)
    near = [f"{names[i - 1]} (above)"] if i > 0 else []
    near += [f"{names[i + 1]} (below)"] if i + 1 < len(names) else []
    return dataclasses.replace(u, why=f"no contact with {' or '.join(near)}, its neighbours "
                                      "among the layered units of the column, is mapped")


def _chunks(g: _Group) -> list[np.ndarray]:
    """Indices of the kept points of a group in runs of CHUNK_PIXELS consecutive samples."""
    idx = np.flatnonzero(g.keep)
    if not len(idx):
        return []
    pos = np.arange(len(idx))
    start = np.ones(len(idx), bool)
    start[1:] = g.run[idx][1:] != g.run[idx][:-1]
    first = np.maximum.accumulate(np.where(start, pos, 0))
    key = np.cumsum(start | ((pos - first) % CHUNK_PIXELS == 0))
    return np.split(idx, np.flatnonzero(np.diff(key)) + 1)


def _between(nt, ct, nb, cb, centre) -> float:
    """Thickness between a top and a base plane along their mean normal, through ``centre``."""
    n = nt + nb
    n = n / np.linalg.norm(n)
    st = float(np.dot(nt, ct - centre)) / float(np.dot(nt, n))
    sb = float(np.dot(nb, cb - centre)) / float(np.dot(nb, n))
    return st - sb


def _pair(t: _Group, b: _Group, rng, bootstrap: int) -> tuple[float, float, int, float]:
    """(thickness, uncertainty, points, angle) between a top and a base plane."""
    pt, pb = t.xyz[t.keep], b.xyz[b.keep]
    centre = np.vstack([pt, pb]).mean(axis=0)
    nt, ct = np.asarray(t.plane.normal), np.asarray(t.plane.point)
    nb, cb = np.asarray(b.plane.normal), np.asarray(b.plane.point)
    thick = _between(nt, ct, nb, cb, centre)
    sigma = math.nan
    tc, bc = _chunks(t), _chunks(b)
    if bootstrap and len(tc) > 1 and len(bc) > 1:
        vals = []
        for _ in range(bootstrap):
            it = np.concatenate([tc[k] for k in rng.integers(len(tc), size=len(tc))])
            ib = np.concatenate([bc[k] for k in rng.integers(len(bc), size=len(bc))])
            n1, c1, _ = _normal(t.xyz[it])
            n2, c2, _ = _normal(b.xyz[ib])
            vals.append(_between(n1, c1, n2, c2, centre))
        sigma = 2.0 * float(np.std(vals, ddof=1))  # 95 % half-width
    return thick, sigma, len(pt) + len(pb), _angle(nt, nb)


def _facing(tops: list[_Group], bases: list[_Group]) -> list[tuple[_Group, _Group]]:
    """Top and base planes of one block and domain that face each other across the unit's
    outcrop: each is the other's nearest (median distance) among the other contact's."""
    from scipy.spatial import cKDTree

    def nearest(g: _Group, others: list[_Group]) -> _Group | None:
        cands = [o for o in others if (o.block, o.domain) == (g.block, g.domain)]
        if not cands:
            return None
        d = [float(np.median(cKDTree(o.xyz[:, :2]).query(g.xyz[:, :2])[0])) for o in cands]
        return cands[int(np.argmin(d))]

    pairs = []
    for t in tops:
        b = nearest(t, bases)
        if b is not None and nearest(b, tops) is t:
            pairs.append((t, b))
    return pairs


def _unit_thickness(name, top, base, fit_of, step, rng, bootstrap, unit_geoms,
                    elevation, label, tolerance, above, below) -> UnitThickness:
    if not len(unit_geoms):
        return UnitThickness(name, "none", why="it is not on the map")
    results, skipped = [], []
    for t, b in _facing(top, base):
        thick, sigma, n, angle = _pair(t, b, rng, bootstrap)
        where = f"{t.block}, {t.name}"
        if angle > 2 * tolerance:
            skipped.append(f"top and base {angle:.0f} degrees apart in {where}")
            continue
        if not thick > 0:
            skipped.append(f"base above top in {where}")
            continue
        results.append((t, b, GroupThickness(t.block, t.name, thick, sigma, n, angle)))
    if results:
        gt = [r[2] for r in results]
        th = np.array([g.thickness for g in gt])
        sg = np.array([g.uncertainty for g in gt])
        boot = bool(np.all(np.isfinite(sg) & (sg > 0)))
        w = 1.0 / sg**2 if boot else np.array([g.n_points for g in gt], float)
        mean = float(np.sum(w * th) / np.sum(w))
        unc = float(1.0 / math.sqrt(np.sum(w))) if boot else math.nan
        if len(th) > 1:
            between = 2.0 * math.sqrt(float(np.sum(w * (th - mean) ** 2))
                                      / ((len(th) - 1) * float(np.sum(w))))
            unc = between if not boot else max(unc, between)
        # Contacts drawn on a map do not resolve a thickness better than about 1 % (the
        # tool's default floor), whatever the bootstrap says about a near-perfect map.
        unc = max(unc, RESOLUTION * mean) if math.isfinite(unc) else unc
        planes = [g.plane for r in results for g in r[:2]]
        spread = math.sqrt(sum(p.rms**2 * p.n_points for p in planes)
                           / sum(p.n_points for p in planes))
        mis = [fit_of[id(p)] for p in planes if fit_of[id(p)].misfit_deg is not None]
        misfit = (float(np.average([f.misfit_deg for f in mis],
                                   weights=[max(f.n_attitudes, 1) for f in mis]))
                  if mis else None)
        return UnitThickness(name, "measured", mean, unc, int(sum(g.n_points for g in gt)),
                             float(spread), tuple(sorted({g.block for g in gt})), misfit,
                             tuple(gt))
    one, side = (base, "top") if base else (top, "base")
    if one:
        bound = _minimum(unit_geoms, one, below if base else above, step, elevation, label,
                         below=not base)
        if bound is not None:
            value, n, blocks = bound
            return UnitThickness(name, "minimum", value, None, n, None, blocks, None, (),
                                 f"its {side} contact is not mapped, and its outcrop reaches "
                                 f"{value:.0f} m from its other contact")
    if skipped:
        why = "its top and base planes disagree (" + "; ".join(skipped) + ")"
    elif one:
        why = (f"only its {'base' if base else 'top'} contact fits a plane, and too little of "
               "its outcrop lies near it to bound its thickness")
    elif above is not None and len(above[0]) or below is not None and len(below[0]):
        n = sum(len(c[0]) for c in (above, below) if c is not None)
        why = (f"its mapped contacts ({n} points) fit no plane in any fault block and dip "
               "domain (too few points, points nearly on one line, or planes at odds with "
               "the attitudes)")
    else:
        why = _NO_CONTACT
    return UnitThickness(name, "none", why=why)


def _minimum(unit_geoms, groups: list[_Group], contact: tuple[np.ndarray, np.ndarray], step,
             elevation, label, below: bool) -> tuple[float, int, tuple[str, ...]] | None:
    """Lower bound of a unit's thickness: how far its outcrop reaches from its one contact.

    The unit's ground is sampled on a grid; a point is measured against the plane
    of its nearest contact point, in its own fault block (points nearest to a stretch
    of contact that no plane fits are not measured); the bound is the largest, over
    planes, of the 99th percentile of the points' distance from the plane
    (perpendicular to it).
    """
    from scipy.spatial import cKDTree

    area = shapely.union_all(np.asarray(unit_geoms, dtype=object))
    x0, y0, x1, y1 = area.bounds
    grid = max(step, math.sqrt(max(area.area, 1.0) / 40_000.0))
    gx, gy = np.meshgrid(np.arange(x0 + grid / 2, x1, grid), np.arange(y0 + grid / 2, y1, grid))
    gx, gy = gx.ravel(), gy.ravel()
    inside = shapely.contains_xy(area, gx, gy)
    gx, gy = gx[inside], gy[inside]
    xyz, owner_of = contact
    if not len(gx) or not len(xyz):
        return None
    gz = np.asarray(elevation(gx, gy), float)
    blk, _, _ = label(gx, gy)
    owner = owner_of[cKDTree(xyz[:, :2]).query(np.column_stack([gx, gy]))[1]]
    best, count, blocks = None, 0, set()
    for k, g in enumerate(groups):
        m = (owner == k) & (blk == g.block) & np.isfinite(gz)
        if m.sum() < MIN_POINTS:
            continue
        h = g.plane.height(gx[m], gy[m], gz[m])
        value = float(np.percentile(-h if below else h, MIN_PERCENTILE))
        count += int(m.sum())
        blocks.add(g.block)
        if value > 0 and (best is None or value > best):
            best = value
    if best is None:
        return None
    return best, count, tuple(sorted(blocks))


# ---------------------------------------------------------------- the project
def project_estimate(project: Project, inputs: ProjectInputs) -> ColumnEstimate:
    """The column estimate of a loaded project (computed once per loaded inputs)."""
    cached = inputs._column_estimate
    if cached is not None:
        return cached
    dem = inputs.dem
    crs = project.crs

    def elevation(x, y):
        return dem.sample(x, y, crs=crs)

    map_data, attitudes = _near_inputs(inputs)
    inputs._near_partial = map_data.partial
    est = estimate_column(project.column, map_data, elevation, attitudes,
                          float(dem.pixel_size))
    inputs._column_estimate = est
    return est


def _near_inputs(inputs: ProjectInputs):
    """The map and attitudes a build compares the column with: for a build's read
    (``inputs.near``), the polygons meeting the box around its corridors and the attitudes
    inside it (mapsection.extent.THICKNESS_NEAR_M); otherwise all of them."""
    md, att = inputs.map_data, inputs.attitudes
    if inputs.near is None:
        return md, att
    box = shapely.box(*inputs.near)
    idx = np.sort(md.unit_tree.query(box, predicate="intersects"))
    if len(idx) < len(md.unit_geoms):
        from .mapdata import MapData

        md = MapData(md.units.iloc[idx].reset_index(drop=True), md.unit_field, md.faults,
                     dict(md.fault_fields), md.crs, window=inputs.near,
                     left_out=md.left_out + len(md.unit_geoms) - len(idx), extent=md.extent)
    x0, y0, x1, y1 = inputs.near
    x, y = np.asarray(att.x, float), np.asarray(att.y, float)
    inside = (x >= x0) & (x <= x1) & (y >= y0) & (y <= y1)
    if not inside.all():
        att = att.subset(np.flatnonzero(inside))
    return md, att


def measure_column(project: Project, warn: Warn | None = None) -> ColumnEstimate:
    """Read a project's map, attitudes and DEM and measure its column from the map (the edge).

    Examples
    --------
    >>> from mapsection.project import load_project
    >>> est = measure_column(load_project("sample_area/project.toml"))  # doctest: +SKIP
    >>> est.unit("Talvo Limestone").thickness  # doctest: +SKIP
    180.0...
    """
    from .session import load_inputs

    inputs = load_inputs(project, warn)
    try:
        return project_estimate(project, inputs)
    finally:
        inputs.close()


def suggestion(estimate: ColumnEstimate) -> float | None:
    """A thickness to suggest where the map gives none: the mean of those it measured."""
    vals = [u.thickness for u in estimate.units if u.kind == "measured"]
    return float(np.mean(vals)) if vals else None


def resolve_map_thicknesses(project: Project, inputs: ProjectInputs,
                            warn: Warn | None = None) -> Project:
    """The project with ``thickness = "map"`` replaced by the map's estimate.

    A number given in the project file is kept; where the map's estimate differs
    from it by more than the estimate's uncertainty, ``warn`` says so with both
    figures. A unit with only one contact mapped takes the lower bound its
    outcrop gives (said through ``warn``). A ``"map"`` unit without any usable
    contact is a :class:`ProjectFileError` naming the unit and suggesting a number.
    """
    from ._messages import default_warn

    warn = warn or default_warn
    column = project.column
    if not any(u.thickness_from_map for u in column.units) and inputs._thickness_said:
        return project
    est = project_estimate(project, inputs)
    say = not inputs._thickness_said
    inputs._thickness_said = True
    fname = project.path.name
    units = []
    for i, u in enumerate(column.units):
        e = est.unit(u.name)
        if not u.thickness_from_map:
            if (say and e.kind == "measured" and e.uncertainty is not None
                    and math.isfinite(e.uncertainty)
                    and abs(e.thickness - u.thickness) > e.uncertainty):
                near = " near the sections" if inputs._near_partial else ""
                warn(f"{fname}: stratigraphy[{i}] ({u.name}): thickness {u.thickness:g} m given; "
                     f"the map's contacts{near} give {e.thickness:.0f} +/- {_m(e.uncertainty)} m "
                     f"({e.n_points} points; see 'mapsection column')")
            units.append(u)
            continue
        if e.kind == "none":
            s = suggestion(est)
            hint = (f"give a number instead, e.g. thickness = {s:.0f}.0 (the mean of the "
                    f"thicknesses measured from the map)" if s is not None
                    else "give a number of metres instead")
            raise ProjectFileError(f"{fname}: stratigraphy[{i}].thickness: \"map\" for "
                                   f"{u.name}: {e.why}; {hint}")
        if e.kind == "minimum" and say:
            warn(f"{fname}: stratigraphy[{i}] ({u.name}): thickness \"map\": {e.why}; using "
                 f"{e.thickness:.0f} m, a lower bound")
        elif say:
            unc = (f" +/- {_m(e.uncertainty)}" if e.uncertainty is not None
                   and math.isfinite(e.uncertainty) else "")
            warn(f"{fname}: stratigraphy[{i}] ({u.name}): thickness from the map: "
                 f"{e.thickness:.0f}{unc} m ({e.n_points} points)")
        units.append(dataclasses.replace(u, thickness=round(float(e.thickness), 1),
                                         thickness_from_map=False))
    return dataclasses.replace(project, column=Column(tuple(units)))


def unit_line(u: Unit, e: UnitThickness) -> list[str]:
    """The ``[[stratigraphy]]`` entry of one unit, with the map's thickness where measured."""
    lines = ["[[stratigraphy]]", f"unit = {_toml_str(u.name)}"]
    measured = e.kind == "measured" and e.thickness is not None
    if not u.layered:  # cover and intrusive units: their own keys, no measured thickness
        lines.append(f"kind = {_toml_str(u.kind)}")
        lines.append(f"thickness = {u.thickness:.1f}" if u.kind == "cover"
                     else f"depth = {u.depth:.1f}")
    elif measured:
        unc = (f"+/- {_m(e.uncertainty)} m, " if e.uncertainty is not None
               and math.isfinite(e.uncertainty) else "")
        lines.append(f"thickness = {e.thickness:.1f}  # from the map: {unc}{e.n_points} points")
    elif not u.thickness_from_map:
        bound = f"at least {e.thickness:.0f} m" if e.kind == "minimum" else "no estimate"
        lines.append(f"thickness = {u.thickness:.1f}  # as given; the map: {bound} ({e.why})")
    elif e.kind == "minimum":
        lines.append(f"thickness = {e.thickness:.1f}  # from the map: a lower bound ({e.why})")
    else:
        lines.append(f'thickness = "map"  # not measured: {e.why}')
    for key, val in (("colour", u.colour), ("age", u.age), ("lithology", u.lithology)):
        if val is not None:
            lines.append(f"{key} = {_toml_str(val)}")
    return lines


def stratigraphy_toml(column: Column, estimate: ColumnEstimate) -> str:
    """A ``[[stratigraphy]]`` block, youngest first, with the map's thicknesses."""
    out = ["# Stratigraphic column, youngest first; thicknesses measured from the map",
           "# (mapsection column); check them before use.", ""]
    for u in column.units:
        out += unit_line(u, estimate.unit(u.name)) + [""]
    return "\n".join(out)


def _m(value: float) -> str:
    """Metres to show: one decimal below 10 m, none above."""
    return f"{value:.1f}" if value < 10 else f"{value:.0f}"


def _toml_str(text: str) -> str:
    return '"' + text.replace("\\", "\\\\").replace('"', '\\"') + '"'
