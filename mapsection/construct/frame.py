"""The section's frame in section space, the ground along it, and the polygon helpers
that cut horizons and units to it."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
import shapely
from shapely.geometry import LineString, Polygon

from ..errors import ConstructionError
from ..topo_profile import Profile


@dataclass(frozen=True)
class SectionFrame:
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


def ground_below_polygon(profile: Profile, frame: SectionFrame) -> Polygon:
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


def below_polygon(path: np.ndarray, frame: SectionFrame) -> Polygon:
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
