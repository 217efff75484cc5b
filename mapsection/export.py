"""GeoPackages of a draft section: in section space, georeferenced in 3D, and read back.

``section.gpkg`` (:func:`write_section_gpkg`) holds the section in *section space*:
x = distance along the section line in metres (cumulative over bends), y =
elevation in metres. That plane has no geographic CRS, so its layers are written
without one (a GIS shows them as a plain metric drawing). Layers:

- ``profile``: the ground line (one LineString per stretch with elevations),
  fields ``section``, ``start_m``, ``end_m``, and the draft's ``method``, ``ve``,
  ``base_elevation_m`` and the DEM's ``pixel_size_m`` (read back by
  :func:`read_section_gpkg`; kept in a layer rather than as file metadata, which
  GDAL would mirror into a side-car file on reading);
- ``profile_points``: every profile sample, fields ``distance_m``, ``elevation_m``,
  ``x``, ``y`` (map coordinates in the project CRS);
- ``surface_geology``: the unit at the ground, LineStrings along the ground, fields
  ``unit``, ``start_m``, ``end_m``;
- ``contacts``: map contacts on the ground, points, fields ``distance_m``,
  ``elevation_m``, ``unit_before``, ``unit_after``;
- ``fault_crossings``: mapped faults on the ground, points, fields ``distance_m``,
  ``elevation_m``, ``dip``, ``dip_direction``, ``apparent_dip``, ``sense``, ``name``;
- ``dips``: projected attitudes, points, fields ``id``, ``apparent_dip``, ``strike``,
  ``dip``, ``offset_m``, ``poorly_constrained``, ``overturned``, ``distance_m``,
  ``elevation_m``, ``x``, ``y``;
- ``horizons``: LineStrings, fields ``top_of`` (the unit whose top it is),
  ``above_ground`` (true for the projected part above the ground), ``block``;
- ``faults``: LineStrings, one per fault, fields ``name``, ``dip``, ``dip_direction``,
  ``apparent_dip``, ``sense``, ``separations`` (JSON text: top_of -> metres),
  ``segments`` (JSON text: the trace's segments from the ground down as
  ``[kind, metres along the fault]``, kind ``ramp``, ``bend`` or ``flat``; optional on
  reading);
- ``units``: polygons, fields ``unit``, ``block``; the veneers of cover units and the
  intrusive bodies come after the layered units, which they overlie
  (:mod:`mapsection.construct.cover`);
- ``axial_surfaces``: LineStrings, fields ``ground_distance_m``, ``dip_left``,
  ``dip_right``;
- ``dip_domains``: the ground over each dip domain, LineStrings, fields ``start_m``,
  ``end_m``, ``dip``, ``n_dips``, ``block`` (read back so that the checks choose the same
  default pin line for an edited file as for the build);
- any ``extra_layers`` given; the checks' outputs add ``restored_horizons`` and
  ``restored_units`` (:func:`restoration_frames`, :func:`add_layers`).

``section_3d.gpkg`` (:func:`write_section_3d`) holds the ground, the horizons and
the faults as LineString Z in the project CRS, so the section stands in place in a
3D view. :func:`read_section_gpkg` reads a (possibly hand-edited) section.gpkg back
into a :class:`~mapsection.draft.Draft` with ``method="edited"``.

Example::

    from mapsection.export import write_section_gpkg, read_section_gpkg
    write_section_gpkg(draft, "out/A/section.gpkg")
    edited = read_section_gpkg("out/A/section.gpkg", draft.column, draft.line)
"""

from __future__ import annotations

import contextlib
import json
import os
import warnings
from collections.abc import Iterator
from pathlib import Path
from typing import TYPE_CHECKING

import geopandas as gpd
import numpy as np
import pandas as pd
import pyogrio
import shapely
from shapely.geometry import LineString, MultiPolygon, Polygon

from ._atomic import atomic_file
from ._messages import first_line
from .dips import ProjectedDips
from .draft import AxialSurface, DipDomain, Draft, FaultTrace, Horizon, UnitPolygon
from .errors import MapLayerError, OutputError
from .geology import Contact, FaultCrossing, SurfaceGeology, UnitInterval
from .line import SectionLine
from .stratigraphy import Column
from .topo_profile import Profile

if TYPE_CHECKING:
    from .checks.restore import Restoration

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


# --- section space -> GeoDataFrames ------------------------------------------------
def _frame(rows: dict, geoms, crs=None) -> gpd.GeoDataFrame:
    return gpd.GeoDataFrame(pd.DataFrame(rows), geometry=gpd.GeoSeries(list(geoms), crs=crs),
                            crs=crs)


def _ground_pieces(profile: Profile) -> list[np.ndarray]:
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
    """Every section-space layer of ``draft`` as a GeoDataFrame (no CRS)."""
    prof, geo, dips = draft.profile, draft.geology, draft.dips
    frames: dict[str, gpd.GeoDataFrame] = {}
    pieces = _ground_pieces(prof)
    n = len(pieces)
    frames["profile"] = _frame(
        {"section": [draft.name] * n,
         "start_m": [float(prof.distance[r[0]]) for r in pieces],
         "end_m": [float(prof.distance[r[-1]]) for r in pieces],
         "method": [draft.method] * n, "ve": [float(draft.ve)] * n,
         "base_elevation_m": [float(draft.base_elevation_m)] * n,
         "pixel_size_m": [float(prof.pixel_size)] * n},
        [LineString(np.column_stack([prof.distance[r], prof.z[r]])) for r in pieces])
    okz = np.isfinite(prof.z)
    frames["profile_points"] = _frame(
        {"distance_m": prof.distance, "elevation_m": prof.z, "x": prof.x, "y": prof.y},
        np.where(okz, shapely.points(prof.distance, np.where(okz, prof.z, 0.0)), None))
    iv = geo.intervals
    frames["surface_geology"] = _frame(
        {"unit": [i.unit for i in iv], "start_m": [i.start_m for i in iv],
         "end_m": [i.end_m for i in iv]},
        _along_ground(prof, [i.start_m for i in iv], [i.end_m for i in iv]))
    cs = geo.contacts
    frames["contacts"] = _frame(
        {"distance_m": [c.distance_m for c in cs], "elevation_m": [c.elevation_m for c in cs],
         "unit_before": [c.unit_before for c in cs], "unit_after": [c.unit_after for c in cs]},
        _points([c.distance_m for c in cs], [c.elevation_m for c in cs]))
    fx = geo.faults
    frames["fault_crossings"] = _frame(
        {"distance_m": [f.distance_m for f in fx], "elevation_m": [f.elevation_m for f in fx],
         "dip": [f.dip for f in fx], "dip_direction": [f.dip_direction for f in fx],
         "apparent_dip": [f.apparent_dip for f in fx], "sense": [f.sense for f in fx],
         "name": [f.name for f in fx]},
        _points([f.distance_m for f in fx], [f.elevation_m for f in fx]))
    frames["dips"] = _frame(
        {"id": np.asarray(dips.id).astype(str),
         "apparent_dip": np.asarray(dips.apparent_dip, float),
         "strike": np.asarray(dips.strike, float), "dip": np.asarray(dips.dip, float),
         "offset_m": np.asarray(dips.offset_m, float),
         "poorly_constrained": np.asarray(dips.poorly_constrained, bool),
         "overturned": np.asarray(dips.overturned, bool),
         "distance_m": np.asarray(dips.distance_m, float),
         "elevation_m": np.asarray(dips.elevation_m, float),
         "x": np.asarray(dips.x, float), "y": np.asarray(dips.y, float)},
        _points(dips.distance_m, dips.elevation_m))
    hz = draft.horizons
    frames["horizons"] = _frame(
        {"top_of": [h.top_of for h in hz], "above_ground": [bool(h.above_ground) for h in hz],
         "block": np.array([h.block for h in hz], dtype=np.int32)},
        [h.geometry for h in hz])
    fs = draft.faults
    frames["faults"] = _frame(
        {"name": [f.name for f in fs], "dip": [f.dip for f in fs],
         "dip_direction": [f.dip_direction for f in fs],
         "apparent_dip": [f.apparent_dip for f in fs], "sense": [f.sense for f in fs],
         "separations": [json.dumps({k: float(v) for k, v in f.separations.items()})
                         for f in fs],
         "segments": [json.dumps([[k, round(float(m), 3)] for k, m in f.segments])
                      for f in fs]},
        [f.geometry for f in fs])
    us = draft.units
    frames["units"] = _frame(
        {"unit": [u.unit for u in us], "block": np.array([u.block for u in us], dtype=np.int32)},
        [_polygonal(u.geometry) for u in us])
    ax = draft.axial_surfaces
    frames["axial_surfaces"] = _frame(
        {"ground_distance_m": [a.ground_distance_m for a in ax],
         "dip_left": [a.dip_left for a in ax], "dip_right": [a.dip_right for a in ax]},
        [a.geometry for a in ax])
    dd = draft.domains
    frames["dip_domains"] = _frame(
        {"start_m": [d.start_m for d in dd], "end_m": [d.end_m for d in dd],
         "dip": [d.dip for d in dd], "n_dips": np.array([d.n_dips for d in dd], dtype=np.int32),
         "block": np.array([d.block for d in dd], dtype=np.int32)},
        _along_ground(prof, [d.start_m for d in dd], [d.end_m for d in dd]))
    if draft.unconformities or len(draft.column.layered().sequences()) > 1:
        uc = draft.unconformities
        frames[UNCONFORMITY_LAYER[0]] = _frame(
            {"unit": [u.unit for u in uc], "above_ground": [bool(u.above_ground) for u in uc],
             "block": np.array([u.block for u in uc], dtype=np.int32)},
            [u.geometry for u in uc])
        eh = draft.eroded_horizons
        frames[ERODED_LAYER[0]] = _frame(
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


# SQLite settings while writing: no rollback journal on disk and no fsync after each
# layer. Safe here because every GeoPackage is written as a temporary file renamed
# into place when complete (or inside a build folder swapped in whole), so a crash
# leaves no half-written output either way; writing a build's layers is 2-3x faster.
_FAST_SQLITE = {"OGR_SQLITE_JOURNAL": "MEMORY", "OGR_SQLITE_SYNCHRONOUS": "OFF"}


@contextlib.contextmanager
def _fast_sqlite() -> Iterator[None]:
    """Set :data:`_FAST_SQLITE` as GDAL config options for the block, then restore them."""
    old = {k: pyogrio.get_gdal_config_option(k) for k in _FAST_SQLITE}
    pyogrio.set_gdal_config_options(_FAST_SQLITE)
    try:
        yield
    finally:
        pyogrio.set_gdal_config_options(old)


def _write_layers(path: Path, frames: dict[str, gpd.GeoDataFrame],
                  types: dict[str, str | None]) -> None:
    """Write every frame as a layer of a new GeoPackage at ``path`` (atomically)."""
    with atomic_file(path) as tmp, _fast_sqlite():
        tmp.unlink()  # the driver creates the file itself
        first = True
        for name, frame in frames.items():
            gtype = types.get(name) or _geometry_type(frame)
            try:
                with warnings.catch_warnings():
                    # Section space has no CRS by design (see the module docstring).
                    warnings.filterwarnings("ignore", message=".*crs.*not provided")
                    pyogrio.write_dataframe(
                        frame, tmp, layer=name, driver="GPKG", geometry_type=gtype,
                        promote_to_multi=bool(gtype and gtype.startswith("Multi")),
                        append=not first)
            except Exception as exc:  # disk full, bad path: one line naming the file
                raise OutputError(f"{path}: cannot write layer {name!r} "
                                  f"({first_line(exc)})") from None
            first = False


def _geometry_type(frame: gpd.GeoDataFrame) -> str:
    types = set(frame.geometry.dropna().geom_type)
    if not types:
        return "Unknown"
    if types <= {"Polygon", "MultiPolygon"}:
        return "MultiPolygon" if "MultiPolygon" in types else "Polygon"
    if types <= {"LineString", "MultiLineString"}:
        return "MultiLineString" if "MultiLineString" in types else "LineString"
    return types.pop() if len(types) == 1 else "Unknown"


def write_section_gpkg(draft: Draft, path: str | os.PathLike,
                       extra_layers: dict[str, gpd.GeoDataFrame] | None = None) -> Path:
    """Write the draft's section-space layers (and ``extra_layers``) to a GeoPackage.

    Section space has no real CRS, so layers are written with none (documented in
    docs/build.md). The file is written atomically: a failure leaves no file.
    """
    path = Path(path)
    frames = section_frames(draft)
    types: dict[str, str | None] = {}
    for name, (gtype, _fields) in LAYERS.items():
        # A layer holding any multipart geometry is declared multipart (parts promoted).
        multi = frames[name].geometry.dropna().geom_type.str.startswith("Multi").any()
        types[name] = f"Multi{gtype}" if multi and gtype != "Point" else gtype
    for name, gtype, _fields in (UNCONFORMITY_LAYER, ERODED_LAYER):
        if name in frames:
            types[name] = gtype
    for name, frame in (extra_layers or {}).items():
        if name in frames:
            raise OutputError(f"{path}: extra layer {name!r} clashes with a section layer")
        frames[name] = frame.set_crs(None, allow_override=True) if frame.crs else frame
        types[name] = None
    _write_layers(path, frames, types)
    return path


def add_layers(path: str | os.PathLike, frames: dict[str, gpd.GeoDataFrame]) -> Path:
    """Add layers to an existing section GeoPackage (no CRS: section space).

    Not atomic on its own: meant for a file inside a build folder that is swapped in
    whole (see :func:`mapsection._atomic.atomic_dir`).
    """
    path = Path(path)
    have = {str(r[0]) for r in pyogrio.list_layers(path)}
    with _fast_sqlite():
        _append_layers(path, frames, have)
    return path


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


def _append_layers(path: Path, frames: dict[str, gpd.GeoDataFrame], have: set[str]) -> None:
    for name, frame in frames.items():
        if name in have:
            raise OutputError(f"{path}: layer {name!r} is already there")
        frame = frame.set_crs(None, allow_override=True) if frame.crs else frame
        gtype = _geometry_type(frame)
        try:
            with warnings.catch_warnings():
                warnings.filterwarnings("ignore", message=".*crs.*not provided")
                pyogrio.write_dataframe(frame, path, layer=name, driver="GPKG",
                                        geometry_type=gtype, append=True,
                                        promote_to_multi=gtype.startswith("Multi"))
        except Exception as exc:
            raise OutputError(f"{path}: cannot write layer {name!r} "
                              f"({first_line(exc)})") from None


# --- 3D ---------------------------------------------------------------------------------
def to_map_3d(line: SectionLine, geom) -> list[LineString]:
    """Section-space lines as LineString Z on the map: x, y of the line, z = elevation.

    Every vertex of the section line that a segment spans is inserted (interpolated
    in section space), so the 3D line follows the bends of the section line.
    """
    out = []
    interior = line.cumulative[1:-1]
    for part in shapely.get_parts(geom):
        if part.is_empty or part.geom_type != "LineString":
            continue
        xy = np.asarray(part.coords)[:, :2]
        d0, d1 = xy[:-1, 0], xy[1:, 0]
        lo, hi = np.minimum(d0, d1), np.maximum(d0, d1)
        # (segment, bend) pairs where the bend lies strictly inside the segment.
        seg, k = np.nonzero((interior[None, :] > lo[:, None]) & (interior[None, :] < hi[:, None]))
        t = (interior[k] - d0[seg]) / (d1[seg] - d0[seg])
        ins = xy[seg] + t[:, None] * (xy[seg + 1] - xy[seg])
        order_key = np.concatenate([np.arange(len(xy), dtype=float), seg + t])
        pts = np.concatenate([xy, ins])[np.argsort(order_key, kind="stable")]
        x, y = line.point_at(pts[:, 0])
        out.append(LineString(np.column_stack([x, y, pts[:, 1]])))
    return out


def section_3d_frames(draft: Draft) -> dict[str, gpd.GeoDataFrame]:
    crs = draft.line.crs
    line = draft.line
    frames = {}
    pieces = _ground_pieces(draft.profile)
    prof = draft.profile
    ground = [LineString(np.column_stack([prof.x[r], prof.y[r], prof.z[r]])) for r in pieces]
    frames["ground"] = _frame({"section": [draft.name] * len(ground)}, ground, crs)
    rows: dict[str, list] = {"top_of": [], "above_ground": [], "block": []}
    geoms: list = []
    for h in draft.horizons:
        for g in to_map_3d(line, h.geometry):
            rows["top_of"].append(h.top_of)
            rows["above_ground"].append(bool(h.above_ground))
            rows["block"].append(int(h.block))
            geoms.append(g)
    frames["horizons"] = _frame(rows, geoms, crs)
    rows = {"name": [], "dip": [], "dip_direction": [], "sense": []}
    geoms = []
    for f in draft.faults:
        for g in to_map_3d(line, f.geometry):
            rows["name"].append(f.name)
            rows["dip"].append(f.dip)
            rows["dip_direction"].append(f.dip_direction)
            rows["sense"].append(f.sense)
            geoms.append(g)
    frames["faults"] = _frame(rows, geoms, crs)
    if draft.unconformities:  # the erosion surfaces standing in place too
        rows = {"unit": [], "above_ground": []}
        geoms = []
        for u in draft.unconformities:
            for g in to_map_3d(line, u.geometry):
                rows["unit"].append(u.unit)
                rows["above_ground"].append(bool(u.above_ground))
                geoms.append(g)
        frames["unconformities"] = _frame(rows, geoms, crs)
    return frames


def write_section_3d(draft: Draft, path: str | os.PathLike) -> Path:
    """Write the ground, horizons and faults as LineString Z in the project CRS."""
    path = Path(path)
    frames = section_3d_frames(draft)
    _write_layers(path, frames, {k: "LineString Z" for k in frames})
    return path


# --- reading back --------------------------------------------------------------------
# Fields written since a later version: files without them still read.
_OPTIONAL_FIELDS = {("faults", "segments")}


def _read_layer(path: Path, layer: str, layers: set[str], required: bool = True):
    if layer not in layers:
        if required:
            raise MapLayerError(f"{path}: no layer {layer!r} (layers: "
                                f"{', '.join(sorted(layers)) or 'none'})")
        return None
    frame = pyogrio.read_dataframe(path, layer=layer)
    need = LAYERS.get(layer, (None, ()))[1]
    missing = [f for f in need if f not in frame.columns and (layer, f) not in _OPTIONAL_FIELDS]
    if missing:
        raise MapLayerError(f"{path}: layer {layer!r} has no field {missing[0]!r}")
    return frame


def _lines(path: Path, layer: str, geom, row: int) -> list[LineString]:
    if geom is None or geom.is_empty:
        return []
    parts = [p for p in shapely.get_parts(geom) if not p.is_empty]
    if not all(p.geom_type == "LineString" for p in parts):
        raise MapLayerError(f"{path}: layer {layer!r} row {row}: holds a {geom.geom_type}; "
                            f"expected LineStrings")
    return [LineString(np.asarray(p.coords)[:, :2]) for p in parts]


def _text(v) -> str | None:
    if v is None or (isinstance(v, float) and np.isnan(v)) or v is pd.NA:
        return None
    return str(v)


def _num(v, default=float("nan")) -> float:
    try:
        f = float(v)
    except (TypeError, ValueError):
        return default
    return f if np.isfinite(f) else default


def _flag(v) -> bool:
    if isinstance(v, str):
        return v.strip().lower() in ("1", "true", "yes", "t", "y")
    return bool(_num(v, 0.0))


def read_section_gpkg(path: str | os.PathLike, column: Column, line: SectionLine, name: str = "",
                      profile: Profile | None = None, geology: SurfaceGeology | None = None,
                      dips: ProjectedDips | None = None) -> Draft:
    """Read a section.gpkg (possibly edited by hand in a GIS) back into a Draft.

    Horizons, faults and unit polygons come from the file (``method="edited"``);
    the profile, surface geology and dips come from the arguments when given, else
    from the file's ``profile_points``, ``surface_geology``/``contacts``/
    ``fault_crossings`` and ``dips`` layers. A missing layer or field raises
    MapLayerError naming the file and the layer/field.
    """
    path = Path(path)
    if not path.is_file():
        raise MapLayerError(f"{path}: no such section file")
    try:
        layers = {str(r[0]) for r in pyogrio.list_layers(path)}
    except Exception as exc:
        raise MapLayerError(f"{path}: not a readable GeoPackage "
                            f"({first_line(exc)})") from None
    # The base of the oldest unit is a horizon too (named by the construction).
    known = set(column.names) | {column.base_name}
    meta = section_info(path, layers)

    hz_frame = _read_layer(path, "horizons", layers)
    horizons = []
    for i, (top, above, block, g) in enumerate(zip(hz_frame["top_of"], hz_frame["above_ground"],
                                                   hz_frame["block"], hz_frame.geometry,
                                                   strict=True)):
        top = _text(top)
        if top is None:
            raise MapLayerError(f"{path}: layer 'horizons' row {i}: empty top_of")
        if top not in known:
            raise MapLayerError(f"{path}: layer 'horizons' row {i}: top_of {top!r} is not a unit "
                                f"of the column ({', '.join(column.names)})")
        for ls in _lines(path, "horizons", g, i):
            horizons.append(Horizon(top, ls, _flag(above), int(_num(block, 0.0))))

    f_frame = _read_layer(path, "faults", layers)
    faults = []
    for i, row in enumerate(f_frame.itertuples(index=False)):
        try:
            seps = json.loads(row.separations) if _text(row.separations) else {}
            seps = {str(k): float(v) for k, v in dict(seps).items()}
        except (ValueError, TypeError, AttributeError):
            raise MapLayerError(f"{path}: layer 'faults' row {i}: separations is not JSON "
                                f"{{unit: metres}}") from None
        text = _text(getattr(row, "segments", None))
        try:
            segs = tuple((str(k), float(m)) for k, m in json.loads(text)) if text else ()
        except (ValueError, TypeError):
            raise MapLayerError(f"{path}: layer 'faults' row {i}: segments is not JSON "
                                "[[kind, metres], ...]") from None
        for ls in _lines(path, "faults", row.geometry, i):
            faults.append(FaultTrace(_text(row.name) or f"fault {i + 1}", ls, _num(row.dip),
                                     _num(row.dip_direction), _num(row.apparent_dip),
                                     _text(row.sense), seps, segs))

    u_frame = _read_layer(path, "units", layers)
    units = []
    for i, (unit, block, g) in enumerate(zip(u_frame["unit"], u_frame["block"],
                                             u_frame.geometry, strict=True)):
        if g is None or g.is_empty:
            continue
        if not isinstance(g, Polygon | MultiPolygon):
            raise MapLayerError(f"{path}: layer 'units' row {i}: holds a {g.geom_type}; "
                                f"expected polygons")
        unit = _text(unit)
        if unit not in column.names:
            raise MapLayerError(f"{path}: layer 'units' row {i}: unit {unit!r} is not in the "
                                f"column")
        units.append(UnitPolygon(unit, shapely.force_2d(g), int(_num(block, 0.0))))

    axial = []
    a_frame = _read_layer(path, "axial_surfaces", layers, required=False)
    if a_frame is not None:
        for i, row in enumerate(a_frame.itertuples(index=False)):
            for ls in _lines(path, "axial_surfaces", row.geometry, i):
                axial.append(AxialSurface(ls, _num(row.ground_distance_m), _num(row.dip_left),
                                          _num(row.dip_right)))

    domains = []
    d_frame = _read_layer(path, "dip_domains", layers, required=False)
    if d_frame is not None:
        domains = [DipDomain(_num(r.start_m), _num(r.end_m), _num(r.dip),
                             int(_num(r.n_dips, 0.0)), int(_num(r.block, 0.0)))
                   for r in d_frame.itertuples(index=False)]

    unconformities = _read_unconformities(path, layers, column)
    eroded = []
    if ERODED_LAYER[0] in layers:
        e_frame = pyogrio.read_dataframe(path, layer=ERODED_LAYER[0])
        for i, row in enumerate(e_frame.itertuples(index=False)):
            top = _text(getattr(row, "top_of", None))
            if top not in known:
                raise MapLayerError(f"{path}: layer {ERODED_LAYER[0]!r} row {i}: top_of {top!r} "
                                    "is not a unit of the column")
            for ls in _lines(path, ERODED_LAYER[0], row.geometry, i):
                eroded.append(Horizon(top, ls, True, int(_num(getattr(row, "block", 0), 0.0))))

    if profile is None:
        profile = _read_profile(path, layers, line, meta.get("pixel_size_m"))
    if geology is None:
        geology = _read_geology(path, layers)
    if dips is None:
        dips = _read_dips(path, layers)
    base = min((g.geometry.bounds[1] for g in units), default=float("nan"))
    draft = Draft(
        name=name or meta.get("section") or line.name,
        method="edited",
        line=line,
        profile=profile,
        geology=geology,
        dips=dips,
        column=column,
        horizons=horizons,
        faults=faults,
        units=units,
        axial_surfaces=axial,
        domains=domains,
        ve=_num(meta.get("ve"), 1.0),
        base_elevation_m=_num(meta.get("base_elevation_m"), base),
        log=[f"read from {path.name} (edited section: horizons, faults and units as in the file)"],
        unconformities=unconformities,
        eroded_horizons=eroded,
    )
    if len(column.layered().sequences()) > 1:  # each sequence checked on its own
        from .construct.sequences import split_sequences

        draft.sequences = split_sequences(draft)
    return draft


def _read_unconformities(path: Path, layers: set[str], column: Column) -> list:
    """The ``unconformities`` layer (a column with unconformities), if any."""
    from .draft import Unconformity

    name, _gtype, need = UNCONFORMITY_LAYER
    if name not in layers:
        return []
    frame = pyogrio.read_dataframe(path, layer=name)
    missing = [f for f in need[:1] if f not in frame.columns]
    if missing:
        raise MapLayerError(f"{path}: layer {name!r} has no field {missing[0]!r}")
    out = []
    for i, row in enumerate(frame.itertuples(index=False)):
        unit = _text(row.unit)
        if unit not in column.names:
            raise MapLayerError(f"{path}: layer {name!r} row {i}: unit {unit!r} is not in the "
                                "column")
        above = _flag(getattr(row, "above_ground", False))
        block = int(_num(getattr(row, "block", 0), 0.0))
        for ls in _lines(path, name, row.geometry, i):
            out.append(Unconformity(unit, ls, above, block))
    return out


def section_info(path: Path, layers: set[str]) -> dict:
    """Section name, method, VE, base and pixel size from the ``profile`` layer, if any."""
    if "profile" not in layers:
        return {}
    frame = pyogrio.read_dataframe(path, layer="profile", read_geometry=False, max_features=1)
    if not len(frame):
        return {}
    row = frame.iloc[0]
    return {k: row[k] for k in ("section", "method", "ve", "base_elevation_m", "pixel_size_m")
            if k in frame.columns and _text(row[k]) is not None}


def _read_profile(path: Path, layers: set[str], line: SectionLine, pixel_size) -> Profile:
    pts = _read_layer(path, "profile_points", layers)
    order = np.argsort(pts["distance_m"].to_numpy(float), kind="stable")
    col = {k: pts[k].to_numpy(float)[order] for k in ("distance_m", "elevation_m", "x", "y")}
    return Profile(col["distance_m"], col["x"], col["y"], col["elevation_m"], line, line.crs,
                   _num(pixel_size))


def _read_geology(path: Path, layers: set[str]) -> SurfaceGeology:
    sg = _read_layer(path, "surface_geology", layers)
    intervals = tuple(UnitInterval(_num(s), _num(e), _text(u))
                      for u, s, e in zip(sg["unit"], sg["start_m"], sg["end_m"], strict=True))
    ct = _read_layer(path, "contacts", layers)
    contacts = tuple(Contact(_num(d), _num(z), _text(a), _text(b))
                     for d, z, a, b in zip(ct["distance_m"], ct["elevation_m"], ct["unit_before"],
                                           ct["unit_after"], strict=True))
    fx = _read_layer(path, "fault_crossings", layers, required=False)
    faults = ()
    if fx is not None:
        faults = tuple(FaultCrossing(_num(r.distance_m), _num(r.elevation_m), _num(r.dip),
                                     _num(r.dip_direction), _num(r.apparent_dip), _text(r.sense),
                                     _text(r.name))
                       for r in fx.itertuples(index=False))
    return SurfaceGeology(intervals, contacts, faults)


def _read_dips(path: Path, layers: set[str]) -> ProjectedDips:
    dp = _read_layer(path, "dips", layers)
    order = np.argsort(dp["distance_m"].to_numpy(float), kind="stable")
    dp = dp.iloc[order]

    def f(k):
        return dp[k].to_numpy(float)

    def b(k):
        return np.array([_flag(v) for v in dp[k]], bool)

    return ProjectedDips(
        id=dp["id"].astype(str).to_numpy(), x=f("x"), y=f("y"), distance_m=f("distance_m"),
        offset_m=f("offset_m"), elevation_m=f("elevation_m"), strike=f("strike"), dip=f("dip"),
        apparent_dip=f("apparent_dip"), poorly_constrained=b("poorly_constrained"),
        overturned=b("overturned"))
