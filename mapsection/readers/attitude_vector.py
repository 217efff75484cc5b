"""Attitudes from a point layer of a vector file (GeoPackage, shapefile...): its attribute
columns as text, one row per feature, and the points' coordinates."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pyproj

from .._messages import first_line
from ..errors import AttitudeError
from .attitude_table import _Table


def read_vector(path: Path, layer: str | None) -> _Table:
    """The layer's features as a table to validate (``layer``: the layer's name, needed when
    the file holds several); points only (a single-part MultiPoint is taken as its point)."""
    import pyogrio
    import shapely

    try:
        layers = [str(r[0]) for r in pyogrio.list_layers(path)]
    except Exception as exc:
        raise AttitudeError(
            f"{path}: not a CSV or a readable vector file ({first_line(exc)})"
        ) from None
    if layer is not None and layer not in layers:
        raise AttitudeError(f"{path}: no layer {layer!r} (layers: {', '.join(layers)})")
    if layer is None and len(layers) > 1:
        raise AttitudeError(f"{path}: holds several layers; name one (layers: {', '.join(layers)})")
    try:
        df = pyogrio.read_dataframe(path, layer=layer)
    except Exception as exc:
        raise AttitudeError(f"{path}: cannot be read ({first_line(exc)})") from None
    geom = np.asarray(df.geometry.values, dtype=object) if "geometry" in df else None
    if geom is None:
        raise AttitudeError(f"{path}: has no point geometry")
    types = shapely.get_type_id(geom)
    # Single-part MultiPoints are accepted as points.
    multi = types == 4
    if multi.any():
        one = shapely.get_num_geometries(geom) == 1
        geom = np.where(multi & one, shapely.get_geometry(geom, 0), geom)
        types = shapely.get_type_id(geom)
    bad = (types != 0) & (types != -1)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise AttitudeError(
            f"{path}: feature {i + 1} is a {geom[i].geom_type}; attitudes must be points"
        )
    ok = types == 0
    x = np.full(len(geom), np.nan)
    y = np.full(len(geom), np.nan)
    z = np.full(len(geom), np.nan)
    if ok.any():
        c = shapely.get_coordinates(geom[ok], include_z=True)
        x[ok], y[ok], z[ok] = c[:, 0], c[:, 1], c[:, 2]
    cols = {str(c): [("" if v is None else v) for v in df[c].tolist()]
            for c in df.columns if c != "geometry"}
    rows = [f"feature {i + 1}" for i in range(len(df))]
    crs = pyproj.CRS(df.crs) if df.crs is not None else None
    return _Table(cols, rows, x, y, z, crs)
