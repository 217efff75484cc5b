"""The layers of ``section.gpkg`` (see :mod:`mapsection.export`): a draft section, and its
restoration, as GeoDataFrames in section space."""

from __future__ import annotations

import json
from typing import TYPE_CHECKING

import geopandas as gpd
import numpy as np
import pandas as pd
import shapely
from shapely.geometry import LineString, MultiPolygon

from ..draft import Draft
from ..topo_profile import Profile

if TYPE_CHECKING:
    from ..checks.restore import Restoration

# layer -> (geometry type, fields that read_section_gpkg needs)
LAYERS: dict[str, tuple[str, tuple[str, ...]]] = {
    "profile": ("LineString", ("section", "start_m", "end_m")),
    "profile_points": ("Point", ("distance_m", "elevation_m", "x", "y")),
    "surface_geology": ("LineString", ("unit", "start_m", "end_m")),
    "contacts": ("Point", ("distance_m", "elevation_m", "unit_before", "unit_after")),
    "fault_crossings": ("Point", ("distance_m", "elevation_m", "dip", "dip_direction",
                                  "apparent_dip", "sense", "name")),
    "dips": ("Point", ("id", "apparent_dip", "strike", "dip", "offset_m", "poorly_constrained",
                       "overturned", "distance_m", "elevation_m", "x", "y")),
    "horizons": ("LineString", ("top_of", "above_ground", "block")),
    "faults": ("LineString", ("name", "dip", "dip_direction", "apparent_dip", "sense",
                              "separations", "segments")),
    "units": ("Polygon", ("unit", "block")),
    "axial_surfaces": ("LineString", ("ground_distance_m", "dip_left", "dip_right")),
    "dip_domains": ("LineString", ("start_m", "end_m", "dip", "n_dips", "block")),
}
# Written only for a column with unconformities (mapsection.construct.sequences): one line
# per piece of erosion surface, ``unit`` the unit whose base it is.
UNCONFORMITY_LAYER = ("unconformities", "LineString", ("unit", "above_ground", "block"))
# and the older beds above an unconformity, as constructed: eroded, not drawn; the checks
# report from them what was eroded.
ERODED_LAYER = ("eroded_horizons", "LineString", ("top_of", "block"))


def layer_frame(rows: dict, geoms, crs=None) -> gpd.GeoDataFrame:
    return gpd.GeoDataFrame(pd.DataFrame(rows), geometry=gpd.GeoSeries(list(geoms), crs=crs),
                            crs=crs)


def ground_pieces(profile: Profile) -> list[np.ndarray]:
    """Index runs of finite profile samples (the ground has gaps where the DEM has none)."""
    ok = np.isfinite(profile.z)
    if not ok.any():
        return []
    idx = np.flatnonzero(ok)
    breaks = np.flatnonzero(np.diff(idx) > 1) + 1
    return [r for r in np.split(idx, breaks) if len(r) >= 2]


def _along_ground(profile: Profile, start: np.ndarray, end: np.ndarray) -> list:
    """LineStrings following the ground between ``start`` and ``end`` distances."""
    d, z = profile.distance, profile.z
    out = []
    for s, e in zip(np.asarray(start, float), np.asarray(end, float), strict=True):
        inner = (d > s) & (d < e) & np.isfinite(z)
        xs = np.concatenate([[s], d[inner], [e]])
        zs = np.concatenate([profile.elevation_at(np.array([s])), z[inner],
                             profile.elevation_at(np.array([e]))])
        good = np.isfinite(zs)
        out.append(LineString(np.column_stack([xs[good], zs[good]])) if good.sum() >= 2
                   else None)
    return out


def section_frames(draft: Draft) -> dict[str, gpd.GeoDataFrame]:
    """Every section-space layer of ``draft`` as a GeoDataFrame (no CRS), in the order
    they are written: the ground and the map along it, the dips, then the construction."""
    return {**_ground_frames(draft), **_dip_frames(draft.dips), **_construction_frames(draft)}


def _ground_frames(draft: Draft) -> dict[str, gpd.GeoDataFrame]:
    """The ground line and its samples, and the map's units, contacts and faults on it."""
    prof, geo = draft.profile, draft.geology
    frames: dict[str, gpd.GeoDataFrame] = {}
    pieces = ground_pieces(prof)
    n = len(pieces)
    frames["profile"] = layer_frame(
        {"section": [draft.name] * n,
         "start_m": [float(prof.distance[r[0]]) for r in pieces],
         "end_m": [float(prof.distance[r[-1]]) for r in pieces],
         "method": [draft.method] * n, "ve": [float(draft.ve)] * n,
         "base_elevation_m": [float(draft.base_elevation_m)] * n,
         "pixel_size_m": [float(prof.pixel_size)] * n},
        [LineString(np.column_stack([prof.distance[r], prof.z[r]])) for r in pieces])
    okz = np.isfinite(prof.z)
    frames["profile_points"] = layer_frame(
        {"distance_m": prof.distance, "elevation_m": prof.z, "x": prof.x, "y": prof.y},
        np.where(okz, shapely.points(prof.distance, np.where(okz, prof.z, 0.0)), None))
    iv = geo.intervals
    frames["surface_geology"] = layer_frame(
        {"unit": [i.unit for i in iv], "start_m": [i.start_m for i in iv],
         "end_m": [i.end_m for i in iv]},
        _along_ground(prof, [i.start_m for i in iv], [i.end_m for i in iv]))
    cs = geo.contacts
    frames["contacts"] = layer_frame(
        {"distance_m": [c.distance_m for c in cs], "elevation_m": [c.elevation_m for c in cs],
         "unit_before": [c.unit_before for c in cs], "unit_after": [c.unit_after for c in cs]},
        _points([c.distance_m for c in cs], [c.elevation_m for c in cs]))
    fx = geo.faults
    frames["fault_crossings"] = layer_frame(
        {"distance_m": [f.distance_m for f in fx], "elevation_m": [f.elevation_m for f in fx],
         "dip": [f.dip for f in fx], "dip_direction": [f.dip_direction for f in fx],
         "apparent_dip": [f.apparent_dip for f in fx], "sense": [f.sense for f in fx],
         "name": [f.name for f in fx]},
        _points([f.distance_m for f in fx], [f.elevation_m for f in fx]))
    return frames


def _dip_frames(dips) -> dict[str, gpd.GeoDataFrame]:
    """The projected attitudes."""
    return {"dips": layer_frame(
        {"id": np.asarray(dips.id).astype(str),
         "apparent_dip": np.asarray(dips.apparent_dip, float),
         "strike": np.asarray(dips.strike, float), "dip": np.asarray(dips.dip, float),
         "offset_m": np.asarray(dips.offset_m, float),
         "poorly_constrained": np.asarray(dips.poorly_constrained, bool),
         "overturned": np.asarray(dips.overturned, bool),
         "distance_m": np.asarray(dips.distance_m, float),
         "elevation_m": np.asarray(dips.elevation_m, float),
         "x": np.asarray(dips.x, float), "y": np.asarray(dips.y, float)},
        _points(dips.distance_m, dips.elevation_m))}


def _construction_frames(draft: Draft) -> dict[str, gpd.GeoDataFrame]:
    """What the construction drew: horizons, faults, units, axial surfaces, dip domains,
    and for a column with unconformities the erosion surfaces and the eroded beds."""
    frames: dict[str, gpd.GeoDataFrame] = {}
    hz = draft.horizons
    frames["horizons"] = layer_frame(
        {"top_of": [h.top_of for h in hz], "above_ground": [bool(h.above_ground) for h in hz],
         "block": np.array([h.block for h in hz], dtype=np.int32)},
        [h.geometry for h in hz])
    fs = draft.faults
    frames["faults"] = layer_frame(
        {"name": [f.name for f in fs], "dip": [f.dip for f in fs],
         "dip_direction": [f.dip_direction for f in fs],
         "apparent_dip": [f.apparent_dip for f in fs], "sense": [f.sense for f in fs],
         "separations": [json.dumps({k: float(v) for k, v in f.separations.items()})
                         for f in fs],
         "segments": [json.dumps([[k, round(float(m), 3)] for k, m in f.segments])
                      for f in fs]},
        [f.geometry for f in fs])
    us = draft.units
    frames["units"] = layer_frame(
        {"unit": [u.unit for u in us], "block": np.array([u.block for u in us], dtype=np.int32)},
        [_polygonal(u.geometry) for u in us])
    ax = draft.axial_surfaces
    frames["axial_surfaces"] = layer_frame(
        {"ground_distance_m": [a.ground_distance_m for a in ax],
         "dip_left": [a.dip_left for a in ax], "dip_right": [a.dip_right for a in ax]},
        [a.geometry for a in ax])
    dd = draft.domains
    frames["dip_domains"] = layer_frame(
        {"start_m": [d.start_m for d in dd], "end_m": [d.end_m for d in dd],
         "dip": [d.dip for d in dd], "n_dips": np.array([d.n_dips for d in dd], dtype=np.int32),
         "block": np.array([d.block for d in dd], dtype=np.int32)},
        _along_ground(draft.profile, [d.start_m for d in dd], [d.end_m for d in dd]))
    if draft.unconformities or len(draft.column.layered().sequences()) > 1:
        uc = draft.unconformities
        frames[UNCONFORMITY_LAYER[0]] = layer_frame(
            {"unit": [u.unit for u in uc], "above_ground": [bool(u.above_ground) for u in uc],
             "block": np.array([u.block for u in uc], dtype=np.int32)},
            [u.geometry for u in uc])
        eh = draft.eroded_horizons
        frames[ERODED_LAYER[0]] = layer_frame(
            {"top_of": [h.top_of for h in eh],
             "block": np.array([h.block for h in eh], dtype=np.int32)},
            [h.geometry for h in eh])
    return frames


def _polygonal(geom):
    """Only the polygons of a geometry (a clipped unit can carry stray lines or points)."""
    if geom is None or geom.geom_type in ("Polygon", "MultiPolygon"):
        return geom
    polys = [p for p in shapely.get_parts(geom) if p.geom_type == "Polygon" and not p.is_empty]
    return MultiPolygon(polys) if len(polys) != 1 else polys[0]


def _points(x, y):
    x = np.asarray(x, float)
    y = np.asarray(y, float)
    ok = np.isfinite(x) & np.isfinite(y)
    pts = shapely.points(np.where(ok, x, 0.0), np.where(ok, y, 0.0))
    return np.where(ok, pts, None)


def restoration_frames(restoration: Restoration) -> dict[str, gpd.GeoDataFrame]:
    """GeoDataFrames ``restored_horizons`` and ``restored_units`` in restored section space
    (for :func:`add_layers`; see :mod:`mapsection.checks.restore`)."""
    pieces, units = restoration.pieces, restoration.units
    hz = gpd.GeoDataFrame(
        {
            "top_of": [p.top_of for p in pieces],
            "block": [p.block for p in pieces],
            "bed_length_m": [p.bed_length_m for p in pieces],
            "restored_length_m": [p.restored_length_m for p in pieces],
        },
        geometry=[p.geometry for p in pieces],
    )
    un = gpd.GeoDataFrame(
        {
            "unit": [u.unit for u in units],
            "block": [u.block for u in units],
            "area_m2": [u.area_m2 for u in units],
        },
        geometry=[u.geometry for u in units],
    )
    return {"restored_horizons": hz, "restored_units": un}


__all__ = ["ERODED_LAYER", "LAYERS", "UNCONFORMITY_LAYER", "ground_pieces", "layer_frame",
           "restoration_frames", "section_frames"]
