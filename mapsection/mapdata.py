"""The geologic map: unit polygons and fault lines, read once and spatially indexed.

:func:`mapsection.readers.map.read_map` reads a vector file (GeoPackage or any format the vector
driver reads) into a :class:`MapData` holding the unit polygons, the fault
lines, their attribute fields and shapely STRtrees over both, so that every
later query along a section line touches only the features near it.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import geopandas as gpd
import numpy as np
import pandas as pd
import pyproj
import shapely
from shapely import STRtree

from .errors import MapLayerError

REQUIRED_FAULT_FIELDS = ("dip_direction",)
# A missing dip (no field, or an empty value) is taken from the project ([[fault]] dip or
# [map] default_fault_dip) at construction: real maps rarely store fault dips.
OPTIONAL_FAULT_FIELDS = ("dip", "sense", "name")
_POLYGONS = ("Polygon", "MultiPolygon")
_LINES = ("LineString", "MultiLineString")




@dataclass(frozen=True, eq=False)
class MapData:
    """Unit polygons and fault lines of a geologic map, in one projected CRS.

    ``units`` holds one polygon (or multipolygon) per row with the unit name in
    ``unit_field``; ``faults`` holds fault lines (or is ``None``) with the
    attribute columns named by ``fault_fields`` (role -> column name; roles
    ``dip``, ``dip_direction`` always, ``sense``, ``name`` when present).
    The STRtrees are built once, at construction.
    """

    units: gpd.GeoDataFrame
    unit_field: str
    faults: gpd.GeoDataFrame | None = None
    fault_fields: dict[str, str] = field(default_factory=dict)
    crs: pyproj.CRS | None = None
    unit_geoms: np.ndarray = field(init=False, repr=False)
    unit_names: np.ndarray = field(init=False, repr=False)
    unit_tree: STRtree = field(init=False, repr=False)
    # Read through a bounding box (xmin, ymin, xmax, ymax; mapsection.extent): only the
    # features meeting it are here; ``left_out`` counts the unit polygons outside it and
    # ``extent`` is the whole layer's (None: the whole layer was read).
    window: tuple[float, float, float, float] | None = None
    left_out: int = 0
    extent: tuple[float, float, float, float] | None = None
    fault_geoms: np.ndarray = field(init=False, repr=False)
    fault_tree: STRtree | None = field(init=False, repr=False)

    def __post_init__(self) -> None:
        if self.unit_field not in self.units.columns:
            raise MapLayerError(
                f"units: no field {self.unit_field!r} (fields: {_names(self.units.columns)})"
            )
        geoms = np.asarray(self.units.geometry.values, dtype=object)
        names = np.array([None if _missing(u) else str(u) for u in self.units[self.unit_field]],
                         dtype=object)
        # Prepared geometries make the repeated point-in-polygon tests of every move cheap.
        shapely.prepare(geoms)
        object.__setattr__(self, "unit_geoms", geoms)
        object.__setattr__(self, "unit_names", names)
        object.__setattr__(self, "unit_tree", STRtree(geoms))
        if self.faults is not None and len(self.faults):
            fg = np.asarray(self.faults.geometry.values, dtype=object)
            shapely.prepare(fg)
            object.__setattr__(self, "fault_geoms", fg)
            object.__setattr__(self, "fault_tree", STRtree(fg))
        else:
            object.__setattr__(self, "fault_geoms", np.empty(0, dtype=object))
            object.__setattr__(self, "fault_tree", None)
        if self.crs is None and self.units.crs is not None:
            object.__setattr__(self, "crs", pyproj.CRS(self.units.crs))

    @property
    def partial(self) -> bool:
        """Whether the map was read through a window that left polygons out."""
        return self.window is not None and self.left_out > 0

    def layer_bounds(self) -> np.ndarray:
        """The extent of the whole units layer (xmin, ymin, xmax, ymax), also when only a
        window of it was read."""
        if self.extent is not None:
            return np.asarray(self.extent, float)
        return shapely.total_bounds(self.unit_geoms)

    @property
    def unit_list(self) -> list[str]:
        """The distinct unit names on the map, sorted."""
        return sorted({u for u in self.unit_names if u is not None})

    def fault_names(self) -> list[str]:
        """The distinct fault names on the map (empty without a faults layer or name field)."""
        if self.faults is None:
            return []
        vals = self.fault_value("name", np.arange(len(self.faults)))
        return sorted({str(v) for v in vals if not _missing(v)})

    def fault_value(self, role: str, rows: np.ndarray) -> np.ndarray:
        """Attribute ``role`` (dip, dip_direction, sense, name) of fault rows; None if absent."""
        col = self.fault_fields.get(role)
        if self.faults is None or col is None or col not in self.faults.columns:
            return np.full(len(rows), None, dtype=object)
        return self.faults[col].to_numpy()[rows]


def check_map_on_dem(map_data: MapData, dem, source: str) -> None:
    """Refuse a map that lies wholly off the DEM (``dem``: an open Dem).

    A point inside each unit polygon and the corners of the map's extent are
    tried; when none falls on the DEM, :class:`DEMError` names both files and
    their extents.
    """
    from .errors import DEMError

    if not len(map_data.unit_geoms):
        return
    inner = shapely.get_coordinates(shapely.point_on_surface(map_data.unit_geoms))
    left, bottom, right, top = (float(v) for v in map_data.units.total_bounds)
    corners = np.array([[left, bottom], [left, top], [right, bottom], [right, top],
                        [(left + right) / 2, (bottom + top) / 2]])
    pts = np.vstack([inner, corners])
    if dem.inside(pts[:, 0], pts[:, 1], crs=map_data.crs).any():
        return
    b = dem.bounds
    raise DEMError(
        f"{Path(dem.path).name}: covers none of the map {source} (DEM x {b.left:.1f} to "
        f"{b.right:.1f}, y {b.bottom:.1f} to {b.top:.1f}; map x {left:.1f} to {right:.1f}, "
        f"y {bottom:.1f} to {top:.1f}): is it the DEM of this area, with the right CRS?"
    )


def _missing(value) -> bool:
    return value is None or (isinstance(value, float) and np.isnan(value)) or value is pd.NA


def _names(items) -> str:
    items = [str(i) for i in items if str(i) != "geometry"]
    return ", ".join(items) if items else "none"
