"""Writing the GeoPackages of a draft section (see :mod:`mapsection.export`): each written
whole under a temporary name and moved into place, or layers added inside a build folder
that is swapped in whole."""

from __future__ import annotations

import contextlib
import os
import warnings
from collections.abc import Iterator
from pathlib import Path

import geopandas as gpd
import numpy as np
import pyogrio
import shapely
from shapely.geometry import LineString

from .._atomic import atomic_file
from .._messages import first_line
from ..draft import Draft
from ..errors import OutputError
from ..line import SectionLine
from .layers import (
    ERODED_LAYER,
    LAYERS,
    UNCONFORMITY_LAYER,
    ground_pieces,
    layer_frame,
    section_frames,
)

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
    """The ground, horizons, faults (and erosion surfaces) as LineString Z on the map."""
    crs = draft.line.crs
    line = draft.line
    frames = {}
    pieces = ground_pieces(draft.profile)
    prof = draft.profile
    ground = [LineString(np.column_stack([prof.x[r], prof.y[r], prof.z[r]])) for r in pieces]
    frames["ground"] = layer_frame({"section": [draft.name] * len(ground)}, ground, crs)
    rows: dict[str, list] = {"top_of": [], "above_ground": [], "block": []}
    geoms: list = []
    for h in draft.horizons:
        for g in to_map_3d(line, h.geometry):
            rows["top_of"].append(h.top_of)
            rows["above_ground"].append(bool(h.above_ground))
            rows["block"].append(int(h.block))
            geoms.append(g)
    frames["horizons"] = layer_frame(rows, geoms, crs)
    rows = {"name": [], "dip": [], "dip_direction": [], "sense": []}
    geoms = []
    for f in draft.faults:
        for g in to_map_3d(line, f.geometry):
            rows["name"].append(f.name)
            rows["dip"].append(f.dip)
            rows["dip_direction"].append(f.dip_direction)
            rows["sense"].append(f.sense)
            geoms.append(g)
    frames["faults"] = layer_frame(rows, geoms, crs)
    if draft.unconformities:  # the erosion surfaces standing in place too
        rows = {"unit": [], "above_ground": []}
        geoms = []
        for u in draft.unconformities:
            for g in to_map_3d(line, u.geometry):
                rows["unit"].append(u.unit)
                rows["above_ground"].append(bool(u.above_ground))
                geoms.append(g)
        frames["unconformities"] = layer_frame(rows, geoms, crs)
    return frames


def write_section_3d(draft: Draft, path: str | os.PathLike) -> Path:
    """Write the ground, horizons and faults as LineString Z in the project CRS."""
    path = Path(path)
    frames = section_3d_frames(draft)
    _write_layers(path, frames, {k: "LineString Z" for k in frames})
    return path


__all__ = ["add_layers", "section_3d_frames", "to_map_3d", "write_section_3d",
           "write_section_gpkg"]
