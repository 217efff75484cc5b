"""Tests of the DEM reader, the topographic profile and ``mapsection profile``."""

from __future__ import annotations

import csv

import numpy as np
import pyproj
import pytest
import rasterio
import shapely
from click.testing import CliRunner
from rasterio.transform import from_origin

from mapsection.cli.main import cli
from mapsection.errors import DEMError, LineError, ParameterError
from mapsection.line import SectionLine
from mapsection.readers.dem import Dem
from mapsection.topo_profile import profile

UTM11 = pyproj.CRS("EPSG:32611")
X0, Y_TOP, CELL = 500_000.0, 4_000_000.0, 10.0


def write_tif(path, arr, transform, crs, *, nodata=None, tiled=False, block=256):
    opts = dict(tiled=True, blockxsize=block, blockysize=block) if tiled else {}
    with rasterio.open(
        path, "w", driver="GTiff", width=arr.shape[1], height=arr.shape[0], count=1,
        dtype=arr.dtype, crs=crs, transform=transform, nodata=nodata, compress="deflate", **opts,
    ) as ds:
        ds.write(arr, 1)
    return path


def plane_dem(path, a=0.031, b=-0.017, c=812.5, shape=(400, 500), crs="EPSG:32611", **kw):
    """z = a*x + b*y + c sampled at pixel centres (float64, so only rounding can differ)."""
    rows, cols = np.mgrid[0 : shape[0], 0 : shape[1]]
    x = X0 + (cols + 0.5) * CELL
    y = Y_TOP - (rows + 0.5) * CELL
    z = a * (x - X0) + b * (y - Y_TOP) + c
    return write_tif(path, z.astype("float64"), from_origin(X0, Y_TOP, CELL, CELL), crs, **kw)


def plane_value(x, y, a=0.031, b=-0.017, c=812.5):
    return a * (x - X0) + b * (y - Y_TOP) + c


# --- matplotlib's sample DEM ---------------------------------------------------------------

def jacksboro_geotiff(tmp_path):
    """Write matplotlib's sample DEM (3 arc-second, geographic) to a GeoTIFF in EPSG:4326.

    Row order, worked out from the data: the keys give ymin = 36.733 and ymax = 36.446 with
    dy = 1/1200 degree, and (ymin - ymax) / dy = 344 = the number of rows, while
    (xmax - xmin) / dx = 403 = the number of columns. So the keys are the outer edges of the
    grid and "ymin" is the latitude of the FIRST row's edge: row 0 is the northern edge and
    rows run southward (the usual north-up raster order). The data bear this out: read
    north-up, the long straight ridge of the Pine Mountain block trends north-east and the
    lowest quarter of the grid is its south-east (the Powell Valley lowland of the Valley and
    Ridge lies south-east of Pine Mountain; regional geology from memory), asserted below.
    """
    from matplotlib import cbook

    npz = cbook.get_sample_data("jacksboro_fault_dem.npz")
    elev = npz["elevation"]
    dx, dy = float(npz["dx"]), float(npz["dy"])
    west, north = float(npz["xmin"]), float(npz["ymin"])
    assert (float(npz["ymin"]) - float(npz["ymax"])) / dy == pytest.approx(elev.shape[0])
    assert (float(npz["xmax"]) - float(npz["xmin"])) / dx == pytest.approx(elev.shape[1])
    h, w = elev.shape
    quarters = {
        "NW": elev[: h // 2, : w // 2].mean(), "NE": elev[: h // 2, w // 2 :].mean(),
        "SW": elev[h // 2 :, : w // 2].mean(), "SE": elev[h // 2 :, w // 2 :].mean(),
    }
    assert min(quarters, key=quarters.get) == "SE"
    path = write_tif(tmp_path / "jacksboro.tif", elev, from_origin(west, north, dx, dy),
                     "EPSG:4326")
    return path, elev.astype(float), west, north, dx, dy


def test_jacksboro_profile_matches_scipy_bilinear_and_pyproj_length(tmp_path):
    from scipy.ndimage import map_coordinates

    path, elev, west, north, dx, dy = jacksboro_geotiff(tmp_path)
    # A bent line given in UTM zone 16N metres (84.2 W, 36.6 N lies in zone 16).
    utm16 = pyproj.CRS("EPSG:32616")
    verts = np.array([[734_700.0, 4_040_400.0], [748_600.0, 4_056_300.0], [759_100.0, 4_065_500.0]])
    prof = profile(path, SectionLine(verts, utm16))
    assert np.isfinite(prof.z).all()
    assert prof.crs == utm16

    # outside reference: scipy.ndimage.map_coordinates(order=1) is bilinear between pixel
    # centres; fractional row/col from lon/lat computed here with pyproj, independently.
    lon, lat = pyproj.Transformer.from_crs(utm16, "EPSG:4326", always_xy=True).transform(
        prof.x, prof.y)
    rows = (north - lat) / dy - 0.5
    cols = (lon - west) / dx - 0.5
    ref = map_coordinates(elev, [rows, cols], order=1, mode="nearest")
    rms = float(np.sqrt(np.mean((prof.z - ref) ** 2)))
    assert rms < 0.5

    # outside reference: pyproj.Geod geodesic length of the same vertices, within 0.1 %
    vlon, vlat = pyproj.Transformer.from_crs(utm16, "EPSG:4326", always_xy=True).transform(
        verts[:, 0], verts[:, 1])
    geodesic = pyproj.Geod(ellps="WGS84").line_length(vlon, vlat)
    assert prof.distance[-1] == pytest.approx(geodesic, rel=1e-3)


def test_geographic_dem_pixel_size_in_metres(tmp_path):
    path, *_ = jacksboro_geotiff(tmp_path)
    with Dem.open(path) as dem:
        b = dem.bounds
        lat = np.radians((b.top + b.bottom) / 2)
        # analytic (WGS 84 ellipsoid): an arc of parallel is N(lat) cos(lat) dlon with
        # N = a / sqrt(1 - e2 sin^2 lat); 1/1200 degree of longitude is the shorter side here.
        a, e2 = 6378137.0, 0.00669437999014
        n = a / np.sqrt(1 - e2 * np.sin(lat) ** 2)
        expected = n * np.cos(lat) * np.radians(1 / 1200)
        assert dem.pixel_size == pytest.approx(expected, rel=1e-3)
        assert dem.crs.is_geographic


# --- analytic: a plane ----------------------------------------------------------------------

def test_plane_profile_is_exact(tmp_path):
    # analytic: bilinear interpolation reproduces a plane exactly (up to float rounding)
    path = plane_dem(tmp_path / "plane.tif")
    verts = np.array([[X0 + 123.4, Y_TOP - 200.0], [X0 + 3000.0, Y_TOP - 3500.0],
                      [X0 + 4700.0, Y_TOP - 1000.0]])
    prof = profile(path, SectionLine(verts, UTM11), step=7.5)
    np.testing.assert_allclose(prof.z, plane_value(prof.x, prof.y), rtol=0, atol=1e-9)
    # samples every 7.5 m, every vertex included, distance cumulative over the bend
    seg = np.hypot(*np.diff(verts, axis=0).T)
    assert prof.distance[-1] == pytest.approx(seg.sum())
    assert np.isin(np.r_[0.0, seg[0], seg.sum()], prof.distance).all()
    assert np.diff(prof.distance).max() <= 7.5 + 1e-9
    assert prof.pixel_size == pytest.approx(CELL)


def test_plane_profile_with_line_in_another_crs(tmp_path):
    # analytic plane in the DEM's CRS; the line in NAD83 / UTM 11N is moved to the DEM's CRS
    # by pyproj (outside reference: the same transform applied here independently)
    path = plane_dem(tmp_path / "plane.tif")
    nad83 = pyproj.CRS("EPSG:26911")
    to_nad = pyproj.Transformer.from_crs(UTM11, nad83, always_xy=True)
    vx, vy = to_nad.transform([X0 + 500.0, X0 + 4000.0], [Y_TOP - 500.0, Y_TOP - 3000.0])
    prof = profile(path, SectionLine(np.column_stack([vx, vy]), nad83))
    back = pyproj.Transformer.from_crs(nad83, UTM11, always_xy=True)
    x, y = back.transform(prof.x, prof.y)
    np.testing.assert_allclose(prof.z, plane_value(x, y), atol=1e-9)


def test_geographic_line_length_matches_geodesic(tmp_path, capsys):
    path = plane_dem(tmp_path / "plane.tif")
    to_ll = pyproj.Transformer.from_crs(UTM11, "EPSG:4326", always_xy=True)
    lon, lat = to_ll.transform([X0 + 300.0, X0 + 2500.0, X0 + 4800.0],
                               [Y_TOP - 300.0, Y_TOP - 3800.0, Y_TOP - 2000.0])
    line = SectionLine(np.column_stack([lon, lat]), pyproj.CRS("EPSG:4326"))
    prof = profile(path, line, step=25.0)
    # outside reference: pyproj.Geod's geodesic length on WGS 84, within 0.5 %
    geodesic = pyproj.Geod(ellps="WGS84").line_length(lon, lat)
    assert prof.line.length == pytest.approx(geodesic, rel=0.005)
    assert prof.crs.to_epsg() == 32611  # the local UTM zone
    assert "UTM" in capsys.readouterr().err
    # analytic plane still reproduced where the UTM-measured samples land on the DEM
    np.testing.assert_allclose(prof.z, plane_value(prof.x, prof.y), atol=1e-6)


# --- reading only the blocks needed -------------------------------------------------------

def test_only_touched_blocks_are_read(tmp_path):
    rng = np.random.default_rng(0)
    arr = rng.normal(500, 50, (2048, 2048)).astype("float32")
    path = write_tif(tmp_path / "tiled.tif", arr, from_origin(X0, Y_TOP, CELL, CELL), UTM11,
                     tiled=True, block=256)
    # a 3 km line inside the tile grid's upper-left: touches a few of the 64 tiles
    verts = np.array([[X0 + 1000.0, Y_TOP - 1000.0], [X0 + 3500.0, Y_TOP - 2600.0]])
    with Dem.open(path) as dem:
        assert dem.block_shape == (256, 256)
        windows = []
        read = dem._ds.read

        def counting_read(*args, **kwargs):
            windows.append(kwargs.get("window"))
            return read(*args, **kwargs)

        dem._ds.read = counting_read
        prof = profile(dem, SectionLine(verts, UTM11))
        # self-consistency: the tiles holding each sample's 2 x 2 stencil, worked out here
        c = (prof.x - X0) / CELL - 0.5
        r = (Y_TOP - prof.y) / CELL - 0.5
        r0, c0 = np.floor(r).astype(int), np.floor(c).astype(int)
        stencil = {(int(i) // 256, int(j) // 256)
                   for di in (0, 1) for dj in (0, 1)
                   for i, j in zip(r0 + di, c0 + dj, strict=True)}
        assert dem.cached_blocks == stencil
        assert len(windows) == len(stencil) == dem.blocks_read
        assert len(windows) <= 8  # of 64 tiles: never the whole raster
        assert all(w is not None and w.width <= 256 and w.height <= 256 for w in windows)
        # values agree with the full array (self-consistency against a plain numpy bilinear)
        z = arr.astype(float)
        fx, fy = c - c0, r - r0
        ref = ((z[r0, c0] * (1 - fx) + z[r0, c0 + 1] * fx) * (1 - fy)
               + (z[r0 + 1, c0] * (1 - fx) + z[r0 + 1, c0 + 1] * fx) * fy)
        np.testing.assert_allclose(prof.z, ref, atol=1e-9)
        # a second profile over the same ground reads no block again
        profile(dem, SectionLine(verts[::-1], UTM11))
        assert len(windows) == len(stencil)


def test_bounded_cache_still_samples_correctly(tmp_path):
    # self-consistency: a cache of one block gives the same values as an unbounded one
    path = plane_dem(tmp_path / "plane.tif", tiled=True, block=64)
    x = np.linspace(X0 + 10.0, X0 + 4990.0, 300)
    y = np.linspace(Y_TOP - 3990.0, Y_TOP - 10.0, 300)
    with Dem.open(path, cache_bytes=1) as small:
        for _ in range(2):
            np.testing.assert_allclose(small.sample(x, y), plane_value(x, y), atol=1e-9)
            np.testing.assert_allclose(small.sample(x[::-1], y[::-1]),
                                       plane_value(x[::-1], y[::-1]), atol=1e-9)


def test_nodata_and_outside_give_nan(tmp_path):
    arr = np.full((20, 20), 100.0, dtype="float32")
    arr[5, 5] = -9999.0
    path = write_tif(tmp_path / "nd.tif", arr, from_origin(X0, Y_TOP, CELL, CELL), UTM11,
                     nodata=-9999.0)
    with Dem.open(path) as dem:
        # pixel (5, 5) has its centre at x0 + 55, y_top - 55: every point whose 2 x 2 stencil
        # includes it is NaN; a point with a clean stencil is not; outside is NaN.
        z = dem.sample([X0 + 52.0, X0 + 58.0, X0 + 75.0, X0 - 5.0],
                       [Y_TOP - 52.0, Y_TOP - 58.0, Y_TOP - 75.0, Y_TOP - 50.0])
        assert np.isnan(z[[0, 1, 3]]).all()
        assert z[2] == pytest.approx(100.0)
        # edge half-pixel takes the edge values (inside the footprint)
        assert dem.sample([X0 + 1.0], [Y_TOP - 1.0])[0] == pytest.approx(100.0)


def test_profile_accepts_text_and_shapely_and_refuses_bad_step(tmp_path):
    path = plane_dem(tmp_path / "plane.tif")
    text = f"{X0 + 100},{Y_TOP - 100};{X0 + 900},{Y_TOP - 700}"
    p1 = profile(path, text)  # no CRS: the DEM's (projected)
    p2 = profile(path, shapely.LineString([(X0 + 100, Y_TOP - 100), (X0 + 900, Y_TOP - 700)]))
    np.testing.assert_allclose(p1.z, p2.z)
    # default step: the DEM's pixel size (10 m) over a 1000 m line
    assert len(p1.distance) == 101
    for bad in (0, -5.0, float("nan")):
        with pytest.raises(ParameterError, match="step"):
            profile(path, text, step=bad)


def test_profile_partly_off_warns_and_wholly_off_raises(tmp_path):
    path = plane_dem(tmp_path / "plane.tif")
    msgs = []
    prof = profile(path, f"{X0 - 1000},{Y_TOP - 100};{X0 + 1000},{Y_TOP - 100}", warn=msgs.append)
    assert np.isnan(prof.z[prof.distance < 1000]).all()
    assert np.isfinite(prof.z[prof.distance > 1000]).all()
    assert len(msgs) == 1 and "leaves the DEM" in msgs[0]
    with pytest.raises(DEMError, match="wholly outside"):
        profile(path, f"{X0 - 9000},{Y_TOP};{X0 - 8000},{Y_TOP}")


def test_line_without_crs_on_geographic_dem_is_refused(tmp_path):
    path, *_ = jacksboro_geotiff(tmp_path)
    with pytest.raises(LineError, match="has no CRS"):
        profile(path, "-84.3,36.5;-84.2,36.6")


# --- the command ---------------------------------------------------------------------------

def run(args):
    return CliRunner().invoke(cli, ["profile", *args])


def read_csv(path):
    with open(path, newline="") as f:
        return list(csv.reader(f))


def test_cli_writes_csv_with_gaps(tmp_path):
    dem = plane_dem(tmp_path / "plane.tif")
    out = tmp_path / "p.csv"
    res = run([str(dem), f"{X0 - 200},{Y_TOP - 100};{X0 + 800},{Y_TOP - 100}", "-o", str(out),
               "--step", "50"])
    assert res.exit_code == 0, res.output
    rows = read_csv(out)
    assert rows[0][:4] == ["distance_m", "x", "y", "elevation_m"]
    body = rows[1:]
    assert len(body) == 21
    assert [r[3] for r in body[:4]] == ["", "", "", ""]  # off the DEM: empty elevation
    x, y, z = (np.array([float(r[i]) for r in body[5:]]) for i in (1, 2, 3))
    np.testing.assert_allclose(z, plane_value(x, y), atol=1e-3)  # analytic plane
    assert "warning" in res.output and "leaves the DEM" in res.output


def test_cli_geographic_line_reports_lonlat(tmp_path):
    dem = plane_dem(tmp_path / "plane.tif")
    to_ll = pyproj.Transformer.from_crs(UTM11, "EPSG:4326", always_xy=True)
    lon, lat = to_ll.transform([X0 + 300.0, X0 + 2500.0], [Y_TOP - 300.0, Y_TOP - 3800.0])
    out = tmp_path / "p.csv"
    res = run([str(dem), "--crs", "EPSG:4326", "-o", str(out), "--",
               f"{lon[0]},{lat[0]};{lon[1]},{lat[1]}"])
    assert res.exit_code == 0, res.output
    assert "UTM" in res.output
    body = read_csv(out)[1:]
    assert float(body[0][1]) == pytest.approx(lon[0], abs=1e-7)
    assert float(body[-1][2]) == pytest.approx(lat[1], abs=1e-7)


@pytest.fixture
def bad_inputs(tmp_path):
    dem = plane_dem(tmp_path / "plane.tif")
    not_raster = tmp_path / "notes.tif"
    not_raster.write_text("not a raster\n")
    no_crs = tmp_path / "nocrs.tif"
    with rasterio.open(no_crs, "w", driver="GTiff", width=10, height=10, count=1,
                       dtype="float32", transform=from_origin(X0, Y_TOP, CELL, CELL)) as ds:
        ds.write(np.ones((10, 10), "float32"), 1)
    point_file = tmp_path / "point.geojson"
    point_file.write_text(
        '{"type": "FeatureCollection", "features": [{"type": "Feature", "properties": {}, '
        '"geometry": {"type": "Point", "coordinates": [1, 2]}}]}'
    )
    good = f"{X0 + 100},{Y_TOP - 100};{X0 + 900},{Y_TOP - 700}"
    return {"dem": str(dem), "not_raster": str(not_raster), "no_crs": str(no_crs),
            "point_file": str(point_file), "good": good}


@pytest.mark.parametrize(
    "case, culprit",
    [
        ("missing_dem", "missing.tif"),
        ("not_raster", "notes.tif"),
        ("no_crs", "nocrs.tif"),
        ("one_vertex", "500100,3999900"),
        ("point_file", "point.geojson"),
        ("zero_length", "zero length"),
        ("unreadable_text", "a,b;c,d"),
        ("step_zero", "step 0"),
        ("step_negative", "step -5"),
        ("step_text", "--step 'ten'"),
        ("missing_folder", "no_such_folder"),
        ("output_is_folder", "is a folder"),
        ("wholly_off", "wholly outside"),
        ("bad_crs", "EPSG:99999999"),
    ],
)
def test_cli_bad_input(tmp_path, bad_inputs, case, culprit):
    b = bad_inputs
    out = tmp_path / "out.csv"
    args = {
        "missing_dem": [str(tmp_path / "missing.tif"), b["good"]],
        "not_raster": [b["not_raster"], b["good"]],
        "no_crs": [b["no_crs"], b["good"]],
        "one_vertex": [b["dem"], "500100,3999900"],
        "point_file": [b["dem"], b["point_file"]],
        "zero_length": [b["dem"], f"{X0 + 100},{Y_TOP - 100};{X0 + 100},{Y_TOP - 100}"],
        "unreadable_text": [b["dem"], "a,b;c,d"],
        "step_zero": [b["dem"], b["good"], "--step", "0"],
        "step_negative": [b["dem"], b["good"], "--step", "-5"],
        "step_text": [b["dem"], b["good"], "--step", "ten"],
        "missing_folder": [b["dem"], b["good"]],
        "output_is_folder": [b["dem"], b["good"]],
        "wholly_off": [b["dem"], "100,100;200,200"],
        "bad_crs": [b["dem"], b["good"], "--crs", "EPSG:99999999"],
    }[case]
    if case == "missing_folder":
        out = tmp_path / "no_such_folder" / "out.csv"
    if case == "output_is_folder":
        out = tmp_path / "a_folder"
        out.mkdir()
    before = sorted(p.name for p in tmp_path.iterdir())
    res = run([*args, "-o", str(out)])
    assert res.exit_code == 2, res.output
    lines = res.output.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("mapsection: error: "), res.output
    assert culprit in lines[0]
    assert "Traceback" not in res.output
    assert not out.exists() or (case == "output_is_folder" and not any(out.iterdir()))
    assert sorted(p.name for p in tmp_path.iterdir()) == before  # no temp file left behind


def test_cli_nodata_gives_empty_elevation_and_keeps_old_output_on_error(tmp_path):
    arr = np.full((50, 50), 250.0, dtype="float32")
    arr[:, 20:30] = -32768.0  # a nodata band across the line
    dem = write_tif(tmp_path / "nd.tif", arr, from_origin(X0, Y_TOP, CELL, CELL), UTM11,
                    nodata=-32768.0)
    out = tmp_path / "p.csv"
    res = run([str(dem), f"{X0 + 5},{Y_TOP - 250};{X0 + 495},{Y_TOP - 250}", "-o", str(out)])
    assert res.exit_code == 0, res.output
    body = read_csv(out)[1:]
    dist = np.array([float(r[0]) for r in body])
    empty = np.array([r[3] == "" for r in body])
    # pixels 20-29 span x0+200..x0+300; with the 2 x 2 stencil, samples between the centres
    # of pixels 19 and 30 (x0+195..x0+305) touch nodata: distance 190..300 from x0+5
    assert empty[(dist > 190) & (dist < 300)].all()
    assert not empty[(dist < 189) | (dist > 301)].any()
    assert "nodata" in res.output
    # a failed run leaves an existing output untouched
    before = out.read_bytes()
    res = run([str(dem), "1,1;2,2", "-o", str(out)])
    assert res.exit_code == 2
    assert out.read_bytes() == before


def test_bench_dispatcher_finds_modules():
    from mapsection.bench import available, load
    from mapsection.bench.__main__ import main

    assert "profile" in available()
    assert callable(load("profile").main)
    assert main(["no-such-benchmark"]) == 2


def test_package_level_profile_is_callable(tmp_path):
    import mapsection
    import mapsection.topo_profile  # noqa: F401  (importing the submodule must not shadow the function)

    path = plane_dem(tmp_path / "plane.tif")
    prof = mapsection.profile(path, f"{X0 + 100},{Y_TOP - 100};{X0 + 900},{Y_TOP - 100}")
    np.testing.assert_allclose(prof.z, plane_value(prof.x, prof.y), atol=1e-9)  # analytic
