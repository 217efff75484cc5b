"""Reading an area: the union of the polygons of a vector file (e.g. one fold's outline)."""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np
import pyproj
import shapely

from .._messages import first_line
from ..errors import MapLayerError


def read_area(path: str | os.PathLike) -> tuple[shapely.Geometry, pyproj.CRS | None]:
    """The union of the polygons of a vector file, and the file's CRS (None if it has none).

    Raises :class:`MapLayerError` for a missing or unreadable file, or one without polygons.
    """
    import pyogrio

    if not Path(path).exists():
        raise MapLayerError(f"{path}: no such polygon file")
    try:
        df = pyogrio.read_dataframe(path)
    except Exception as exc:  # the vector driver raises several kinds for unreadable files
        raise MapLayerError(f"{path}: not a readable vector file ({first_line(exc)})") from None
    geoms = np.asarray(df.geometry.values, dtype=object)
    geoms = geoms[~shapely.is_missing(geoms)]
    polys = geoms[np.isin(shapely.get_type_id(geoms), (3, 6))]
    if len(polys) == 0:
        raise MapLayerError(f"{path}: holds no polygons")
    return shapely.union_all(polys), (pyproj.CRS(df.crs) if df.crs is not None else None)


__all__ = ["read_area"]
