"""Shared pieces of the construction: dip domains, contacts as constraints, the
section frame and the polygon helpers.

Angles: a bed's *travel angle* ``phi`` (degrees, counter-clockwise from +x in
section space) is the direction along the bed that keeps the younger side on
the left. For upright beds with signed apparent dip ``a`` (positive descends
toward increasing distance) ``phi = -a``; overturned beds (younging reversed)
travel the other way, ``phi = 180 - a``. The younging normal is then
``n = (-sin phi, cos phi)``; stratigraphic depth grows along ``-n``.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
import shapely
from shapely.geometry import LineString, Polygon

from ..dips import ProjectedDips
from ..errors import ConstructionError
from ..geology import SurfaceGeology
from ..profile import Profile
from ..stratigraphy import Column


def wrap180(a):
    """Angles into (-180, 180]."""
    return -((-np.asarray(a, float) + 180.0) % 360.0 - 180.0)


def travel_angle(apparent_dip, overturned) -> np.ndarray:
    a = np.asarray(apparent_dip, float)
    return wrap180(np.where(np.asarray(overturned, bool), 180.0 - a, -a))


def plane_dip(phi) -> np.ndarray:
    """Signed apparent dip of the bedding plane for a travel angle (younging dropped)."""
    a = wrap180(-np.asarray(phi, float))
    return np.where(a > 90.0, a - 180.0, np.where(a <= -90.0, a + 180.0, a))


def unit_vectors(phi_deg) -> tuple[np.ndarray, np.ndarray]:
    """(travel direction t, younging normal n) as (..., 2) arrays."""
    p = np.radians(np.asarray(phi_deg, float))
    t = np.stack([np.cos(p), np.sin(p)], axis=-1)
    n = np.stack([-np.sin(p), np.cos(p)], axis=-1)
    return t, n


@dataclass(frozen=True)
class Domain:
    """A dip domain of one fault block: consecutive dips within the tolerance."""

    start: float  # distance of its first dip
    end: float  # distance of its last dip
    phi: float  # weighted mean travel angle, degrees
    n_dips: int

    @property
    def dip(self) -> float:
        return float(plane_dip(self.phi))


def group_domains(distance, phi, weight, tolerance: float) -> list[Domain]:
    """Dip domains: walk the dips by distance; a dip joins the current domain when it
    lies within ``tolerance`` degrees of the domain's running (weighted) mean."""
    order = np.argsort(distance, kind="stable")
    d, p, w = (np.asarray(v, float)[order] for v in (distance, phi, weight))
    domains: list[Domain] = []
    start = 0
    ref = p[0]  # angles are averaged relative to the domain's first dip (no wrap trouble)
    sw = w[0]
    sx = 0.0
    for i in range(1, len(d)):  # sequential by nature: each dip compares with the running mean
        mean = ref + sx / sw
        if abs(float(wrap180(p[i] - mean))) <= tolerance:
            sx += w[i] * float(wrap180(p[i] - ref))
            sw += w[i]
            continue
        domains.append(Domain(d[start], d[i - 1], float(wrap180(mean)), i - start))
        start, ref, sw, sx = i, p[i], w[i], 0.0
    domains.append(Domain(d[start], d[-1], float(wrap180(ref + sx / sw)), len(d) - start))
    return merge_parallel(domains)


def merge_parallel(domains: list[Domain], min_angle: float = 0.5) -> list[Domain]:
    """Adjacent domains closer than ``min_angle`` cannot meet on an axial surface: merge them."""
    out = [domains[0]]
    for dm in domains[1:]:
        last = out[-1]
        if abs(float(wrap180(dm.phi - last.phi))) < min_angle:
            n = last.n_dips + dm.n_dips
            phi = last.phi + float(wrap180(dm.phi - last.phi)) * dm.n_dips / n
            out[-1] = Domain(last.start, dm.end, float(wrap180(phi)), n)
        else:
            out.append(dm)
    return out


@dataclass(frozen=True)
class Constraints:
    """Ground points of known stratigraphic depth that position a stack of horizons.

    ``depth`` is metres below the top of the column (the reference horizon);
    ``weight`` 1 for map contacts, less for pseudo-constraints (a unit's middle,
    a neighbouring block's level at a fault).
    """

    distance: np.ndarray
    elevation: np.ndarray
    depth: np.ndarray
    weight: np.ndarray
    top_of: tuple[str, ...]
    is_contact: np.ndarray  # bool: a real map contact (gets a ContactResidual)
    before: tuple[str | None, ...] = ()
    after: tuple[str | None, ...] = ()

    def __len__(self) -> int:
        return len(self.distance)

    def subset(self, mask) -> Constraints:
        m = np.asarray(mask, bool)
        idx = np.flatnonzero(m)
        pick = (lambda seq: tuple(seq[i] for i in idx) if seq else ())  # noqa: E731
        return Constraints(self.distance[m], self.elevation[m], self.depth[m], self.weight[m],
                           pick(self.top_of), self.is_contact[m], pick(self.before),
                           pick(self.after))

    @staticmethod
    def concat(parts: list[Constraints]) -> Constraints:
        parts = [p for p in parts if len(p)]
        if not parts:
            return empty_constraints()
        cat = np.concatenate
        return Constraints(cat([p.distance for p in parts]), cat([p.elevation for p in parts]),
                           cat([p.depth for p in parts]), cat([p.weight for p in parts]),
                           sum((p.top_of for p in parts), ()), cat([p.is_contact for p in parts]),
                           sum((p.before or (None,) * len(p) for p in parts), ()),
                           sum((p.after or (None,) * len(p) for p in parts), ()))


def empty_constraints() -> Constraints:
    e = np.zeros(0)
    return Constraints(e, e, e, e, (), np.zeros(0, bool), (), ())


def contact_constraints(geology: SurfaceGeology, column: Column, ground: Callable,
                        log: list[str]) -> Constraints:
    """Map contacts as constraints. A contact between two units is the top of the OLDER
    one (the younger lies above it), at stratigraphic depth ``depth_to_top[older]``."""
    rows = []
    depth_to_top = column.depth_to_top
    for c in geology.contacts:
        if c.unit_before is None or c.unit_after is None or c.unit_before == c.unit_after:
            continue
        ib, ia = column.index(c.unit_before), column.index(c.unit_after)
        older = max(ib, ia)
        if abs(ib - ia) > 1:
            log.append(f"contact {c.unit_before}|{c.unit_after} at {c.distance_m:.0f} m joins "
                       f"units not adjacent in the column: taken as the top of "
                       f"{column.names[older]}")
        z = c.elevation_m if np.isfinite(c.elevation_m) else float(ground(c.distance_m))
        rows.append((c.distance_m, z, depth_to_top[older], column.names[older],
                     c.unit_before, c.unit_after))
    if not rows:
        return empty_constraints()
    d, z, s, top, b, a = zip(*rows, strict=True)
    n = len(rows)
    return Constraints(np.array(d, float), np.array(z, float), np.array(s, float), np.ones(n),
                       tuple(top), np.ones(n, bool), tuple(b), tuple(a))


def interval_constraints(geology: SurfaceGeology, column: Column, ground: Callable,
                         lo: float, hi: float, weight: float = 0.1) -> Constraints:
    """Fallback where a block has no contact: the middle of each mapped unit's stretch of
    ground lies at the middle of that unit's thickness."""
    rows = []
    for iv in geology.intervals:
        a, b = max(iv.start_m, lo), min(iv.end_m, hi)
        if iv.unit is None or b <= a:
            continue
        i = column.index(iv.unit)
        m = 0.5 * (a + b)
        rows.append((m, float(ground(m)), column.depth_to_top[i] + 0.5 * column.thicknesses[i]))
    if not rows:
        return empty_constraints()
    d, z, s = (np.array(v, float) for v in zip(*rows, strict=True))
    n = len(d)
    return Constraints(d, z, s, np.full(n, weight), ("",) * n, np.zeros(n, bool),
                       (None,) * n, (None,) * n)


def dip_arrays(dips: ProjectedDips):
    """Finite dips as (distance, elevation, phi, weight, poorly) arrays, sorted by distance."""
    if dips is None or len(dips) == 0:
        e = np.zeros(0)
        return e, e, e, e, np.zeros(0, bool)
    d = np.asarray(dips.distance_m, float)
    a = np.asarray(dips.apparent_dip, float)
    ok = np.isfinite(d) & np.isfinite(a)
    poor = np.asarray(dips.poorly_constrained, bool)[ok]
    phi = travel_angle(a[ok], np.asarray(dips.overturned, bool)[ok])
    z = np.asarray(dips.elevation_m, float)[ok]
    d = d[ok]
    order = np.argsort(d, kind="stable")
    w = np.where(poor, 0.1, 1.0)
    return d[order], z[order], phi[order], w[order], poor[order]


@dataclass(frozen=True)
class Frame:
    """The section's drawing frame in section space."""

    length: float
    base: float
    top: float
    ground_min: float
    ground_max: float

    @property
    def box(self) -> Polygon:
        return shapely.box(0.0, self.base, self.length, self.top)

    @property
    def centre(self) -> np.ndarray:
        return np.array([0.5 * self.length, 0.5 * (self.base + self.top)])

    @property
    def size(self) -> float:
        """A length comfortably larger than the frame (for extending lines)."""
        return 4.0 * (self.length + (self.top - self.base))


def ground_function(profile: Profile) -> Callable:
    """Ground elevation at distances: linear between finite samples, constant beyond."""
    d = np.asarray(profile.distance, float)
    z = np.asarray(profile.z, float)
    ok = np.isfinite(z) & np.isfinite(d)
    if not ok.any():
        raise ConstructionError("profile: the DEM gives no elevation anywhere along the line")
    dd, zz = d[ok], z[ok]

    def ground(x):
        return np.interp(np.asarray(x, float), dd, zz)

    return ground


def ground_below_polygon(profile: Profile, frame: Frame) -> Polygon:
    """The region under the topographic profile (finite samples, ends held level)."""
    d = np.asarray(profile.distance, float)
    z = np.asarray(profile.z, float)
    ok = np.isfinite(z) & np.isfinite(d)
    d, z = d[ok], z[ok]
    far = frame.size
    low = frame.base - far
    xs = np.concatenate([[-far], d, [frame.length + far]])
    zs = np.concatenate([[z[0]], z, [z[-1]]])
    ring = np.column_stack([np.concatenate([xs, [xs[-1], xs[0]]]),
                            np.concatenate([zs, [low, low]])])
    poly = Polygon(ring)
    return poly if poly.is_valid else shapely.make_valid(poly).buffer(0)


def below_polygon(path: np.ndarray, frame: Frame) -> Polygon:
    """The older side of a horizon path (the path travels with younger on its left):
    closed far below the frame."""
    low = min(float(path[:, 1].min()), frame.base) - frame.size
    ring = np.vstack([path, [[path[-1, 0], low], [path[0, 0], low]]])
    poly = Polygon(ring)
    if not poly.is_valid:
        poly = shapely.make_valid(poly)
        poly = shapely.union_all([g for g in getattr(poly, "geoms", [poly])
                                  if g.geom_type in ("Polygon", "MultiPolygon")])
    return poly


def line_parts(geom) -> list[LineString]:
    """The LineString parts of a (multi)line result, contiguous pieces merged."""
    if geom is None or geom.is_empty:
        return []
    if geom.geom_type == "GeometryCollection":
        geom = shapely.union_all([g for g in geom.geoms if "LineString" in g.geom_type])
        if geom.is_empty:
            return []
    if geom.geom_type == "MultiLineString":
        geom = shapely.line_merge(geom)
    parts = list(getattr(geom, "geoms", [geom]))
    return [g for g in parts if g.geom_type == "LineString" and g.length > 1e-6]


def poly_parts(geom):
    """The polygonal part of an overlay result (None if empty)."""
    if geom is None or geom.is_empty:
        return None
    if geom.geom_type == "GeometryCollection":
        polys = [g for g in geom.geoms if g.geom_type in ("Polygon", "MultiPolygon")]
        if not polys:
            return None
        geom = shapely.union_all(polys)
    if geom.geom_type not in ("Polygon", "MultiPolygon") or geom.area <= 1e-6:
        return None
    return geom
