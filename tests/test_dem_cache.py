"""Tests of the DEM block cache's fast paths: sample layout, nodata, scale/offset, lookups."""

from __future__ import annotations

import numpy as np
import pyproj
import rasterio
from rasterio.env import get_gdal_config
from rasterio.transform import from_origin

import mapsection.readers.dem as dem_module
from mapsection.line import SectionLine
from mapsection.readers.dem import Dem
from mapsection.topo_profile import profile

UTM11 = pyproj.CRS("EPSG:32611")
X0, Y_TOP, CELL = 500_000.0, 4_000_000.0, 10.0


def write_tif(path, arr, *, nodata=None, block=64, scale=None, offset=None):
    with rasterio.open(
        path, "w", driver="GTiff", width=arr.shape[1], height=arr.shape[0], count=1,
        dtype=arr.dtype, crs=UTM11, transform=from_origin(X0, Y_TOP, CELL, CELL),
        nodata=nodata, compress="deflate", tiled=True, blockxsize=block, blockysize=block,
    ) as ds:
        ds.write(arr, 1)
        if scale is not None:
            ds.scales = (scale,)
            ds.offsets = (offset,)
    return path


def plane(shape=(300, 400), a=0.031, b=-0.017, c=812.5):
    rows, cols = np.mgrid[0 : shape[0], 0 : shape[1]]
    x = X0 + (cols + 0.5) * CELL
    y = Y_TOP - (rows + 0.5) * CELL
    return a * (x - X0) + b * (y - Y_TOP) + c


def plane_value(x, y, a=0.031, b=-0.017, c=812.5):
    return a * (x - X0) + b * (y - Y_TOP) + c


def test_profile_samples_are_the_lines_own_densify_and_point_at(tmp_path):
    # self-consistency: profile() lays out samples itself; they must be SectionLine's.
    path = write_tif(tmp_path / "p.tif", plane())
    verts = np.array([[X0 + 15.0, Y_TOP - 20.0], [X0 + 1515.0, Y_TOP - 1020.0],
                      [X0 + 1515.0 + 7.3 * 30, Y_TOP - 1020.0], [X0 + 3000.0, Y_TOP - 2500.0]])
    line = SectionLine(verts, UTM11)
    for step in (7.3, 10.0, 33.0, 1000.0):
        prof = profile(path, line, step=step)
        np.testing.assert_array_equal(prof.distance, line.densify(step))
        x, y = line.point_at(prof.distance)
        np.testing.assert_allclose(prof.x, x, rtol=0, atol=1e-6)
        np.testing.assert_allclose(prof.y, y, rtol=0, atol=1e-6)
        # analytic: bilinear interpolation reproduces a plane
        np.testing.assert_allclose(prof.z, plane_value(prof.x, prof.y), atol=1e-3)


def test_scale_offset_and_integer_nodata(tmp_path):
    # analytic: stored integers n give n * scale + offset (GDAL's scale/offset convention),
    # and bilinear interpolation of a plane in n is a plane in elevation.
    rows, cols = np.mgrid[0:128, 0:128]
    n = (3 * cols + 2 * rows).astype("int16")
    n[100, 100] = -32768
    path = write_tif(tmp_path / "int.tif", n, nodata=-32768, scale=0.5, offset=100.0)
    x = X0 + np.array([200.5, 555.0, 1005.0])
    y = Y_TOP - np.array([300.5, 705.0, 1005.0])
    c, r = (x - X0) / CELL - 0.5, (Y_TOP - y) / CELL - 0.5
    with Dem.open(path) as dem:
        z = dem.sample(x, y)
    np.testing.assert_allclose(z[:2], (3 * c[:2] + 2 * r[:2]) * 0.5 + 100.0, atol=1e-9)
    assert np.isnan(z[2])  # its 2 x 2 stencil holds the nodata pixel (100, 100)


def test_raster_of_very_many_blocks_looks_slots_up_without_the_array(tmp_path, monkeypatch):
    # self-consistency: the path for rasters too large for a block -> slot array
    monkeypatch.setattr(dem_module, "_MAX_LOOKUP", 0)
    path = write_tif(tmp_path / "p.tif", plane(), block=32)
    x = np.linspace(X0 + 10.0, X0 + 3990.0, 500)
    y = np.linspace(Y_TOP - 2990.0, Y_TOP - 10.0, 500)
    with Dem.open(path) as dem:
        assert dem._slot_of is None
        np.testing.assert_allclose(dem.sample(x, y), plane_value(x, y), atol=1e-3)
        read = dem.blocks_read
        np.testing.assert_allclose(dem.sample(x[::-1], y[::-1]), plane_value(x, y)[::-1],
                                   atol=1e-3)
        assert dem.blocks_read == read  # cached: nothing decoded again
    with Dem.open(path, cache_bytes=1) as small:  # evictions on the same path
        np.testing.assert_allclose(small.sample(x, y), plane_value(x, y), atol=1e-3)


def test_callers_gdal_settings_are_restored(tmp_path):
    # self-consistency: the Dem turns GDAL's block cache off only while it decodes tiles
    path = write_tif(tmp_path / "p.tif", plane())
    with rasterio.Env(GDAL_CACHEMAX=64):
        with Dem.open(path) as dem:
            dem.sample([X0 + 500.0], [Y_TOP - 500.0])
        assert get_gdal_config("GDAL_CACHEMAX") == 64


def test_cache_that_grew_past_its_limit_keeps_working(tmp_path):
    # Regression (issue 8): one call needing more blocks than the cache holds grows it past
    # its limit; the next call needing a new block evicted too many slots and failed.
    # Reference: a plane, which bilinear interpolation reproduces exactly.
    path = write_tif(tmp_path / "p.tif", plane((256, 256)), block=64)
    one_block = 64 * 64 * 8  # float64 pixels
    with Dem(path, cache_bytes=2 * one_block) as d:  # room for 2 blocks
        assert d._capacity == 2
        # every block of the first two block rows (8 blocks) in one call
        x = X0 + CELL * (np.arange(0, 256, 16) + 0.5)
        y = Y_TOP - CELL * (np.arange(0, 128, 16) + 0.5)
        xx, yy = np.meshgrid(x, y)
        np.testing.assert_allclose(d.sample(xx.ravel(), yy.ravel()),
                                   plane_value(xx.ravel(), yy.ravel()), atol=1e-3)
        for row in (150.5, 200.5, 250.5, 20.5):  # new blocks, one call each
            px, py = X0 + CELL * 100.5, Y_TOP - CELL * row
            np.testing.assert_allclose(d.sample([px], [py]), [plane_value(px, py)], atol=1e-3)
        assert len(d._slots) <= len(d._pool)
        # kin: no points at all is no work, not an error
        assert d.sample(np.empty(0), np.empty(0)).shape == (0,)
