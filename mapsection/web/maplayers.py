"""The map as the section page shows it: cut into tiles, shaded relief, CRS grids.

* :func:`tiled_map` -- the unit polygons cut along a grid, so that a moved line
  is intersected only with the few small pieces near it;
* :func:`hillshade` and :func:`hillshade_png` -- the DEM's shaded relief, as the
  PNG the page lays under the map;
* :func:`transform_grids` -- the grids the page interpolates between
  longitude/latitude and the project CRS.
"""

from __future__ import annotations

import io
import math
from pathlib import Path

import numpy as np
import shapely
from shapely import STRtree

__all__ = ["GRID_N", "MAX_HILLSHADE_PX", "hillshade", "hillshade_png", "tiled_map",
           "transform_grids"]

MAX_HILLSHADE_PX = 1200  # longest side of the shaded relief sent to the page
GRID_N = 33  # nodes per side of the lon/lat <-> project CRS interpolation grids


# --- tiles ----------------------------------------------------------------------------------
def tiled_map(map_data, cells: int = 24, min_vertices: int = 2000):
    """The map with its unit polygons cut along a grid of ``cells`` x ``cells`` tiles.

    Each piece keeps its unit name and its feature's place in the layer (so that
    where polygons overlap the first feature still wins). Surface geology merges
    neighbouring stretches of one unit, so the tiles leave no trace in the result;
    they only make each intersection with a line cheap. Maps with fewer than
    ``min_vertices`` polygon vertices are returned as they are.

    Parameters
    ----------
    map_data : the map (:class:`~mapsection.mapdata.MapData`).
    cells : tiles along each side of the map's extent.
    min_vertices : below this many polygon vertices the map is not cut.

    Returns
    -------
    MapData
        The same units and faults, the unit polygons in pieces.

    Examples
    --------
    >>> # tiled = tiled_map(inputs.map_data)
    >>> # surface_geology(line, tiled, ...) gives the units and contacts of the map itself
    """
    import geopandas as gpd

    from ..mapdata import MapData

    units = map_data.units
    if not len(units) or int(shapely.get_num_coordinates(map_data.unit_geoms).sum()) \
            < min_vertices:
        return map_data
    left, bottom, right, top = (float(v) for v in units.total_bounds)
    xs = np.linspace(left, right, cells + 1)
    ys = np.linspace(bottom, top, cells + 1)
    gx0, gy0 = np.meshgrid(xs[:-1], ys[:-1])
    gx1, gy1 = np.meshgrid(xs[1:], ys[1:])
    boxes = shapely.box(gx0.ravel(), gy0.ravel(), gx1.ravel(), gy1.ravel())
    feat, box = STRtree(boxes).query(map_data.unit_geoms, predicate="intersects")
    pieces = shapely.intersection(map_data.unit_geoms[feat], boxes[box])
    parts, index = shapely.get_parts(pieces, return_index=True)
    poly = shapely.get_type_id(parts) == 3
    rows = feat[index[poly]]
    order = np.argsort(rows, kind="stable")
    rows, parts = rows[order], parts[poly][order]
    tiles = gpd.GeoDataFrame({map_data.unit_field: units[map_data.unit_field].to_numpy()[rows]},
                             geometry=parts, crs=units.crs)
    tiled = MapData(tiles, map_data.unit_field, map_data.faults, dict(map_data.fault_fields),
                    map_data.crs)
    object.__setattr__(tiled, "unit_tree", _LineQueryTree(tiled.unit_tree))
    return tiled


class _LineQueryTree:
    """An STRtree whose plain query with a line keeps only the pieces the line meets.

    The envelope of a diagonal line covers most tiles of a map; the surface
    geology would intersect the line with each of them. Pieces the line does not
    meet add nothing to that intersection, so leaving them out changes no result.
    """

    def __init__(self, tree: STRtree) -> None:
        self._tree = tree

    def query(self, geometry, predicate=None, **kwargs):
        if predicate is None and not isinstance(geometry, np.ndarray) \
                and geometry.geom_type in ("LineString", "MultiLineString"):
            predicate = "intersects"
        return self._tree.query(geometry, predicate=predicate, **kwargs)

    def __getattr__(self, name: str):
        return getattr(self._tree, name)


# --- shaded relief ------------------------------------------------------------------------
def hillshade(z: np.ndarray, dx: float, dy: float, azimuth: float = 315.0,
              altitude: float = 45.0) -> np.ndarray:
    """Shaded relief (0-1) of a grid of elevations, lit from ``azimuth`` at ``altitude``.

    The Lambertian illumination of the surface slope and aspect (the standard
    analytical hillshade; e.g. Burrough & McDonnell 1998, Principles of GIS,
    ch. 8), with the slope from central differences (numpy.gradient). Rows run
    north to south (a north-up raster); ``dx``, ``dy`` are the cell sizes in
    metres. NaN cells stay NaN.

    Parameters
    ----------
    z : (rows, cols) array of elevations in metres.
    dx, dy : cell width and height in metres.
    azimuth : direction of the light, degrees clockwise from north (the tool's default 315).
    altitude : height of the light above the horizon, degrees (the tool's default 45).

    Returns
    -------
    Array of the same shape, 0 (dark) to 1 (lit).

    Examples
    --------
    >>> z = np.tile(np.arange(4.0), (3, 1)) * 10   # rising to the east
    >>> float(np.round(hillshade(z, 10.0, 10.0)[1, 1], 3))   # a 45 deg slope facing west
    0.854
    """
    gy, gx = np.gradient(np.asarray(z, float), dy, dx)
    # rows go south: d z / d north = -gy
    dzdx, dzdy = gx, -gy
    slope = np.arctan(np.hypot(dzdx, dzdy))
    aspect = np.arctan2(-dzdx, -dzdy)  # downslope direction, radians clockwise from north
    zen = np.radians(90.0 - altitude)
    az = np.radians(azimuth)
    shade = np.cos(zen) * np.cos(slope) + np.sin(zen) * np.sin(slope) * np.cos(az - aspect)
    return np.clip(shade, 0.0, 1.0)


def hillshade_png(dem_path: Path) -> tuple[bytes, list[list[float]]]:
    """The DEM's shaded relief as a PNG in Web Mercator, and its [[south, west], [north, east]].

    The DEM is read decimated to at most MAX_HILLSHADE_PX on its longer side,
    shaded in its own CRS (:func:`hillshade`), then warped to EPSG:3857 (the grid
    the map library draws in) so that it lies exactly under the map.
    """
    import rasterio
    from PIL import Image
    from rasterio.enums import Resampling
    from rasterio.warp import calculate_default_transform, reproject, transform_bounds

    with rasterio.open(dem_path) as ds:
        scale = max(ds.width, ds.height) / MAX_HILLSHADE_PX
        scale = max(scale, 1.0)
        w, h = max(int(round(ds.width / scale)), 2), max(int(round(ds.height / scale)), 2)
        z = ds.read(1, out_shape=(h, w), resampling=Resampling.average, masked=True)
        z = np.ma.filled(z.astype(float), np.nan)
        transform = ds.transform * ds.transform.scale(ds.width / w, ds.height / h)
        src_crs = ds.crs
        dx, dy = abs(transform.a), abs(transform.e)
        if src_crs.is_geographic:  # degrees -> metres at the DEM's centre
            lat = math.radians((ds.bounds.bottom + ds.bounds.top) / 2)
            dx, dy = dx * 111_320 * math.cos(lat), dy * 110_540
        shade = hillshade(z, dx, dy).astype(np.float32)
        dst_crs = "EPSG:3857"
        dt, dw, dh = calculate_default_transform(src_crs, dst_crs, w, h, *ds.bounds)
        out = np.full((dh, dw), np.nan, np.float32)
        reproject(shade, out, src_transform=transform, src_crs=src_crs, dst_transform=dt,
                  dst_crs=dst_crs, resampling=Resampling.bilinear, src_nodata=np.nan,
                  dst_nodata=np.nan)
        left, top = dt.c, dt.f
        right, bottom = left + dt.a * dw, top + dt.e * dh
        west, south, east, north = transform_bounds(dst_crs, "EPSG:4326", left, bottom, right,
                                                    top)
    ok = np.isfinite(out)
    grey = np.where(ok, 40 + 215 * np.nan_to_num(out), 0).astype(np.uint8)
    rgba = np.dstack([grey, grey, grey, np.where(ok, 255, 0).astype(np.uint8)])
    buf = io.BytesIO()
    Image.fromarray(rgba, "RGBA").save(buf, "PNG", optimize=False)
    return buf.getvalue(), [[south, west], [north, east]]


# --- lon/lat <-> project CRS ------------------------------------------------------------------
def transform_grids(extent: tuple[float, float, float, float], to_lonlat, from_lonlat) -> dict:
    """Grids for the page to convert lon/lat <-> project CRS by bilinear interpolation.

    The map library works in longitude/latitude; the page shows and sends
    project coordinates. Two regular GRID_N x GRID_N grids over the extent
    (padded by a quarter on each side) carry the exact pyproj transform at their
    nodes; between nodes the page interpolates (sub-centimetre on a map sheet,
    see tests/test_web_api.py).

    Parameters
    ----------
    extent : left, bottom, right, top in the project CRS.
    to_lonlat, from_lonlat : pyproj transformers (``always_xy``) from the project CRS to
        EPSG:4326 and back.

    Returns
    -------
    ``{"n": GRID_N, "xy_to_lonlat": {...}, "lonlat_to_xy": {...}}``: each grid's origin
    ``x0``, ``y0``, spacing ``dx``, ``dy`` and node values ``a``, ``b`` row by row.

    Examples
    --------
    >>> import pyproj
    >>> to = pyproj.Transformer.from_crs("EPSG:32632", "EPSG:4326", always_xy=True)
    >>> back = pyproj.Transformer.from_crs("EPSG:4326", "EPSG:32632", always_xy=True)
    >>> transform_grids((600000, 5200000, 610000, 5210000), to, back)["n"]
    33
    """
    left, bottom, right, top = extent
    w, h = right - left, top - bottom
    left, right, bottom, top = left - w / 4, right + w / 4, bottom - h / 4, top + h / 4
    xs = np.linspace(left, right, GRID_N)
    ys = np.linspace(bottom, top, GRID_N)
    xx, yy = np.meshgrid(xs, ys)
    lon, lat = to_lonlat.transform(xx, yy)
    lon0, lat0, lon1, lat1 = float(lon.min()), float(lat.min()), float(lon.max()), \
        float(lat.max())
    lons = np.linspace(lon0, lon1, GRID_N)
    lats = np.linspace(lat0, lat1, GRID_N)
    gl, gp = np.meshgrid(lons, lats)
    gx, gy = from_lonlat.transform(gl, gp)
    return {
        "n": GRID_N,
        "xy_to_lonlat": {"x0": left, "y0": bottom, "dx": (right - left) / (GRID_N - 1),
                         "dy": (top - bottom) / (GRID_N - 1),
                         "a": np.round(lon, 9).ravel().tolist(),
                         "b": np.round(lat, 9).ravel().tolist()},
        "lonlat_to_xy": {"x0": lon0, "y0": lat0, "dx": (lon1 - lon0) / (GRID_N - 1),
                         "dy": (lat1 - lat0) / (GRID_N - 1),
                         "a": np.round(gx, 4).ravel().tolist(),
                         "b": np.round(gy, 4).ravel().tolist()},
    }
