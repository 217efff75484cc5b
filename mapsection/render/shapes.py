"""Shapely geometries as matplotlib paths and vertex arrays, for every figure."""

from __future__ import annotations

import numpy as np
import shapely
from matplotlib.path import Path as MplPath


def polygon_path(geom) -> MplPath | None:
    """One matplotlib compound path (exteriors and holes) for a Polygon/MultiPolygon."""
    # Fills use the nonzero winding rule: holes must wind against their exterior,
    # whatever the source (clipping and simplification do not keep ring orientation).
    geom = shapely.orient_polygons(geom)
    polys = [p for p in shapely.get_parts(geom) if not p.is_empty and p.geom_type == "Polygon"]
    if not polys:
        return None
    verts, codes = [], []
    for p in polys:
        for ring in (p.exterior, *p.interiors):
            xy = np.asarray(ring.coords)
            if len(xy) < 3:
                continue
            c = np.full(len(xy), MplPath.LINETO, dtype=np.uint8)
            c[0], c[-1] = MplPath.MOVETO, MplPath.CLOSEPOLY
            verts.append(xy)
            codes.append(c)
    if not verts:
        return None
    return MplPath(np.concatenate(verts), np.concatenate(codes))


def polygons_path(geoms) -> MplPath | None:
    """One compound path of many Polygons/MultiPolygons, built without a Python loop over
    them (thousands of map polygons in one artist: drawn and written in one go)."""
    geoms = shapely.orient_polygons(np.asarray(geoms, dtype=object))
    polys = shapely.get_parts(geoms)
    polys = polys[shapely.get_type_id(polys) == 3]  # Polygon parts (clipping may give lines)
    if not len(polys):
        return None
    rings = shapely.get_rings(polys)
    xy, ring = shapely.get_coordinates(rings, return_index=True)
    counts = np.bincount(ring, minlength=len(rings))
    good = counts >= 3
    if not good.any():
        return None
    keep = good[ring]
    xy, ring = xy[keep], ring[keep]
    codes = np.full(len(xy), MplPath.LINETO, dtype=np.uint8)
    first = np.r_[True, ring[1:] != ring[:-1]]
    last = np.r_[ring[1:] != ring[:-1], True]
    codes[first] = MplPath.MOVETO
    codes[last] = MplPath.CLOSEPOLY
    return MplPath(xy, codes)


def lines_xy(geom) -> list[np.ndarray]:
    """The (x, y) vertices of each LineString part of a geometry."""
    return [np.asarray(g.coords)[:, :2] for g in shapely.get_parts(geom)
            if not g.is_empty and g.geom_type == "LineString"]
