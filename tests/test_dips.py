"""Apparent dips, projection into the section, and the dips / axis commands."""

from __future__ import annotations

import numpy as np
import pytest
from click.testing import CliRunner

from mapsection.attitudes import Attitudes
from mapsection.dips import apparent_dip, exaggerated_dip, in_corridor, project_attitudes
from mapsection.errors import ParameterError
from mapsection.foldaxis import FoldAxis
from mapsection.line import SectionLine


# --- apparent dip -----------------------------------------------------------------------
def test_apparent_dip_against_mplstereonet():
    # Reference library: mplstereonet.plane_intersection gives the plunge and bearing of
    # the line where the bedding meets the vertical section plane (strike = azimuth, dip 90).
    import mplstereonet as mpl  # in the test extra: a missing reference must fail, not skip
    rng = np.random.default_rng(42)
    n = 300
    strike = rng.uniform(0.0, 360.0, n)
    dip = rng.uniform(1.0, 89.0, n)
    azimuth = rng.uniform(0.0, 360.0, n)
    # keep clear of beds parallel to the section, where the intersection is undefined
    ok = np.abs(np.sin(np.radians(azimuth - strike))) > 0.02
    strike, dip, azimuth = strike[ok], dip[ok], azimuth[ok]
    assert len(strike) >= 200
    plunge, bearing = mpl.plane_intersection(strike, dip, azimuth, np.full(len(strike), 90.0))
    plunge, bearing = np.asarray(plunge).ravel(), np.asarray(bearing).ravel()
    # Positive when the intersection line plunges down along the section azimuth.
    along = np.cos(np.radians(bearing - azimuth)) > 0
    expected = np.where(along, plunge, -plunge)
    np.testing.assert_allclose(apparent_dip(strike, dip, azimuth), expected, atol=0.01)


def test_textbook_example():
    # Worked apparent-dip problem of the kind in Ragan, Structural Geology: An Introduction
    # to Geometrical Techniques (tan a = tan d · sin b) — from memory: true dip 30 degrees,
    # section 40 degrees from strike -> apparent dip about 20.4 degrees.
    a = apparent_dip(0.0, 30.0, 40.0)
    assert a == pytest.approx(20.4, abs=0.05)


def test_apparent_dip_identities():
    # Identities of tan a = tan d · sin b (any structural geology text): |a| <= d,
    # a = d perpendicular to strike, a = 0 parallel to strike.
    rng = np.random.default_rng(1)
    s, d, az = rng.uniform(0, 360, 500), rng.uniform(0, 90, 500), rng.uniform(0, 360, 500)
    assert np.all(np.abs(apparent_dip(s, d, az)) <= d + 1e-9)
    np.testing.assert_allclose(apparent_dip(s, d, s + 90.0), d, atol=1e-9)  # down dip: +
    np.testing.assert_allclose(apparent_dip(s, d, s - 90.0), -d, atol=1e-9)  # up dip: -
    np.testing.assert_allclose(apparent_dip(s, d, s), 0.0, atol=1e-9)
    np.testing.assert_allclose(apparent_dip(s, d, s + 180.0), 0.0, atol=1e-9)
    assert apparent_dip(0.0, 90.0, 45.0) == pytest.approx(90.0)


def test_exaggerated_dip():
    # atan(VE · tan a): 45 degrees at VE 2 is atan(2) = 63.435 degrees (arithmetic).
    assert exaggerated_dip(45.0, 2.0) == pytest.approx(np.degrees(np.arctan(2.0)))
    np.testing.assert_allclose(exaggerated_dip([-30.0, 0.0, 90.0], 1.0), [-30.0, 0.0, 90.0])
    with pytest.raises(ParameterError):
        exaggerated_dip(10.0, 0.0)


# --- projection on analytic geometry -----------------------------------------------------
EAST = SectionLine(np.array([[0.0, 0.0], [1000.0, 0.0]]))  # azimuth 090


def _att(x, y, strike, dip=30.0, z=100.0):
    n = len(x)
    return Attitudes.from_arrays(x, y, strike, np.full(n, dip), z=np.full(n, z))


def test_perpendicular_projection():
    # Analytic: on an east-going line the distance is x and the offset is -y (right = south).
    a = _att([700.0, 200.0, 500.0], [50.0, -80.0, 10.0], [0.0, 180.0, 90.0])
    p = project_attitudes(a, EAST, 100.0)
    np.testing.assert_allclose(p.distance_m, [200.0, 500.0, 700.0])  # sorted by distance
    np.testing.assert_allclose(p.offset_m, [80.0, -10.0, -50.0])
    assert list(p.id) == [2, 3, 1]
    # strike 180 dips west: ascends eastward (-30); strike 0 dips east (+30); strike 90: 0
    np.testing.assert_allclose(p.apparent_dip, [-30.0, 0.0, 30.0], atol=1e-9)
    np.testing.assert_array_equal(p.poorly_constrained, [False, True, False])
    np.testing.assert_allclose(p.elevation_m, 100.0)


def test_corridor_filter():
    # The corridor is |offset| <= corridor, flat-ended at the line's ends.
    a = _att([100.0, 100.0, 100.0, -5.0, 1005.0, 500.0], [100.0, 100.001, -100.0, 0.0, 0.0, 0.0],
             np.zeros(6))
    mask, _ = in_corridor(a.x, a.y, EAST, 100.0)
    np.testing.assert_array_equal(mask, [True, False, True, False, False, True])
    assert len(project_attitudes(a, EAST, 100.0)) == 3
    for bad in (0.0, -5.0, float("nan")):
        with pytest.raises(ParameterError, match="corridor"):
            project_attitudes(a, EAST, bad)


def test_strike_projection_known_intersection():
    # Analytic: from (500, 100) along strike 045 the line y = 0 is met at x = 400.
    a = _att([500.0, 500.0], [100.0, -50.0], [45.0, 135.0], z=250.0)
    p = project_attitudes(a, EAST, 200.0, method="strike")
    np.testing.assert_allclose(p.distance_m, [400.0, 450.0])
    np.testing.assert_allclose(p.offset_m, [-100.0, 50.0])  # measured at the attitude
    np.testing.assert_allclose(p.elevation_m, 250.0)  # along strike a bed keeps its level


def test_strike_skip_within_10_degrees_and_flag_within_15():
    a = _att([500.0, 500.0, 500.0, 500.0], [10.0, 10.0, 10.0, 10.0], [95.0, 99.0, 101.0, 106.0])
    notes = []
    p = project_attitudes(a, EAST, 50.0, method="strike", warn=notes.append)
    assert sorted(p.id.tolist()) == [3, 4]  # 5 and 9 degrees from the line: skipped
    assert len(notes) == 1 and "2 attitude(s)" in notes[0] and "id 1, 2" in notes[0]
    by_id = dict(zip(p.id.tolist(), p.poorly_constrained.tolist(), strict=True))
    assert by_id == {3: True, 4: False}  # 11 degrees flagged, 16 not
    q = project_attitudes(a, EAST, 50.0)  # perpendicular: nothing skipped
    np.testing.assert_array_equal(q.poorly_constrained, [True, True, True, False])


def test_plunge_projection_shift():
    # z' = z - s·tan(plunge), s signed along the trend: axis 000/20 on an east-going line;
    # a point north of the line travels south (s = -y), one south travels north (s = +|y|).
    axis = FoldAxis(0.0, 20.0, (0.6, 0.39, 0.01), 0.97, 10)
    a = _att([300.0, 600.0], [120.0, -80.0], [10.0, 10.0], z=500.0)
    p = project_attitudes(a, EAST, 200.0, method="plunge", axis=axis)
    np.testing.assert_allclose(p.distance_m, [300.0, 600.0])
    t = np.tan(np.radians(20.0))
    np.testing.assert_allclose(p.elevation_m, [500.0 + 120.0 * t, 500.0 - 80.0 * t])
    # an oblique trend: carried along 045 from (500, 100) to (400, 0); s = -100·√2
    axis45 = FoldAxis(45.0, 10.0, (0.6, 0.39, 0.01), 0.97, 10)
    q = project_attitudes(_att([500.0], [100.0], [10.0], z=0.0), EAST, 200.0, method="plunge",
                          axis=axis45)
    assert q.distance_m[0] == pytest.approx(400.0)
    assert q.elevation_m[0] == pytest.approx(100.0 * np.sqrt(2) * np.tan(np.radians(10.0)))
    with pytest.raises(ParameterError, match="fold axis"):
        project_attitudes(a, EAST, 200.0, method="plunge")


def test_bent_line_uses_segment_azimuth():
    # Line east 1000 m, then north 1000 m. Same bed (strike 000, dip 30, dips east) on both.
    bent = SectionLine(np.array([[0.0, 0.0], [1000.0, 0.0], [1000.0, 1000.0]]))
    a = _att([500.0, 1020.0], [30.0, 600.0], [0.0, 0.0])
    p = project_attitudes(a, bent, 100.0)
    np.testing.assert_allclose(p.distance_m, [500.0, 1600.0])
    # on segment 1 (azimuth 090) the full dip shows; on segment 2 (azimuth 000) none
    np.testing.assert_allclose(p.apparent_dip, [30.0, 0.0], atol=1e-9)
    np.testing.assert_array_equal(p.poorly_constrained, [False, True])
    # along strike 030 from (1020, 600): the north segment is met at x = 1000 (nearest hit)
    s = project_attitudes(_att([1020.0], [600.0], [30.0]), bent, 100.0, method="strike")
    assert s.distance_m[0] == pytest.approx(1000.0 + 600.0 - 20.0 / np.tan(np.radians(30.0)))
    assert s.apparent_dip[0] == pytest.approx(apparent_dip(30.0, 30.0, 0.0))


def test_unknown_method():
    with pytest.raises(ParameterError, match="unknown projection"):
        project_attitudes(_att([1.0], [1.0], [0.0]), EAST, 10.0, method="sideways")


def test_empty_corridor():
    p = project_attitudes(_att([500.0], [900.0], [0.0]), EAST, 10.0, method="strike")
    assert len(p) == 0 and p.apparent_dip.shape == (0,)


# --- command line -----------------------------------------------------------------------
@pytest.fixture()
def dem(tmp_path):
    """A planar DEM z = 100 + 0.01·x over 0-2000 m (EPSG:32611), 10 m pixels."""
    import rasterio
    from rasterio.transform import from_origin

    xs = np.arange(200) * 10.0 + 5.0
    z = np.tile(100.0 + 0.01 * xs, (200, 1)).astype("float32")
    path = tmp_path / "dem.tif"
    with rasterio.open(path, "w", driver="GTiff", width=200, height=200, count=1,
                       dtype="float32", crs="EPSG:32611",
                       transform=from_origin(0.0, 2000.0, 10.0, 10.0)) as ds:
        ds.write(z, 1)
    return path


def _run(*args):
    from mapsection.cli.main import cli

    return CliRunner().invoke(cli, [str(a) for a in args])


def _csv(tmp_path, text, name="att.csv"):
    p = tmp_path / name
    p.write_text(text)
    return p


LINE = "100,1000;1900,1000"


def test_cli_dips_writes_csv(tmp_path, dem):
    att = _csv(tmp_path, "id,x,y,strike,dip\nA,500,1100,0,30\nB,800,900,180,40\nC,800,1600,0,30\n")
    out = tmp_path / "dips.csv"
    r = _run("dips", att, LINE, "--dem", dem, "--corridor", 200, "-o", out)
    assert r.exit_code == 0, r.output
    lines = out.read_text().splitlines()
    assert lines[0].startswith("id,distance_m,offset_m,elevation_m,strike,dip,apparent_dip")
    assert len(lines) == 3  # C lies outside the corridor
    rows = [dict(zip(lines[0].split(","), ln.split(","), strict=True)) for ln in lines[1:]]
    assert [r_["id"] for r_ in rows] == ["A", "B"]
    assert float(rows[0]["distance_m"]) == pytest.approx(400.0)
    # the DEM is a plane, so bilinear sampling is exact: z = 100 + 0.01·x
    assert float(rows[0]["elevation_m"]) == pytest.approx(105.0, abs=1e-3)
    assert float(rows[1]["apparent_dip"]) == pytest.approx(-40.0, abs=1e-3)


def test_cli_dips_plunge_reports_axis(tmp_path, dem):
    rows = ["x,y,strike,dip"]
    for i, (s, d) in enumerate([(90, 30), (270, 30), (90, 50), (270, 50), (90, 10), (270, 70)]):
        rows.append(f"{300 + 200 * i},{1000 + (-1) ** i * 50},{s},{d}")
    att = _csv(tmp_path, "\n".join(rows) + "\n")
    out = tmp_path / "p.csv"
    r = _run("dips", att, LINE, "--dem", dem, "--corridor", 100, "-o", out,
             "--projection", "plunge")
    assert r.exit_code == 0, r.output
    assert "fold axis from 6 attitudes" in r.output and "trend 90.0" in r.output
    assert "within 10 degrees" in r.output  # an axis along the line cannot project
    assert out.read_text().splitlines()[0].startswith("id,distance_m")


def test_cli_bad_rows_reported_and_counted(tmp_path, dem):
    att = _csv(tmp_path, "x,y,strike,dip\n500,1000,0,30\n500,1000,0,91\n600,1000,-4,20\n")
    out = tmp_path / "dips.csv"
    r = _run("dips", att, LINE, "--dem", dem, "--corridor", 50, "-o", out)
    assert r.exit_code == 0, r.output
    assert "line 3: dip 91 is outside 0-90" in r.output
    assert "line 4: strike -4 is outside 0-360" in r.output
    assert "dropped 2 of 3 rows; kept 1" in r.output
    assert len(out.read_text().splitlines()) == 2


def test_cli_no_usable_rows(tmp_path, dem):
    att = _csv(tmp_path, "x,y,strike,dip\n500,1000,0,91\n")
    out = tmp_path / "dips.csv"
    r = _run("dips", att, LINE, "--dem", dem, "--corridor", 50, "-o", out)
    assert r.exit_code == 2
    err = [ln for ln in r.output.splitlines() if ln.startswith("mapsection: error:")]
    assert len(err) == 1 and "no usable attitude rows" in err[0] and "att.csv" in err[0]
    assert "Traceback" not in r.output
    assert not out.exists() and list(tmp_path.glob(".dips.csv*")) == []


@pytest.mark.parametrize("corridor", ["0", "-10"])
def test_cli_corridor_must_be_positive(tmp_path, dem, corridor):
    att = _csv(tmp_path, "x,y,strike,dip\n500,1000,0,30\n")
    out = tmp_path / "dips.csv"
    out.write_text("previous\n")
    r = _run("dips", att, LINE, "--dem", dem, "--corridor", corridor, "-o", out)
    assert r.exit_code == 2 and "corridor" in r.output
    assert out.read_text() == "previous\n"  # the old output is untouched


def test_cli_missing_column_lists_columns(tmp_path, dem):
    att = _csv(tmp_path, "x,y,azimuth,dip\n500,1000,0,30\n")
    r = _run("dips", att, LINE, "--dem", dem, "--corridor", 50, "-o", tmp_path / "o.csv")
    assert r.exit_code == 2
    assert "no column 'strike' (columns: x, y, azimuth, dip)" in r.output


def test_cli_quadrant_convention(tmp_path, dem):
    att = _csv(tmp_path, "x,y,attitude\n500,1000,N0E 30E\n600,1000,N0E 30NE\n")
    out = tmp_path / "q.csv"
    r = _run("dips", att, LINE, "--dem", dem, "--corridor", 50, "-o", out,
             "--convention", "quadrant")
    assert r.exit_code == 0, r.output
    assert "line 3" in r.output and "not NE" in r.output  # N0E dips E or W, not NE
    assert len(out.read_text().splitlines()) == 2


def test_cli_axis(tmp_path):
    rng = np.random.default_rng(9)
    rows = ["x,y,strike,dip"]
    for i in range(40):
        # limbs of a fold with a horizontal axis trending 090 (strike 090 / 270)
        s = 90.0 if i % 2 else 270.0
        rows.append(f"{i},{i},{s + rng.normal(0, 1):.2f},{rng.uniform(10, 70):.2f}")
    att = _csv(tmp_path, "\n".join(rows) + "\n")
    r = _run("axis", att)
    assert r.exit_code == 0, r.output
    assert "trend: 9" in r.output or "trend: 8" in r.output or "trend: 27" in r.output
    assert "recommended section azimuth" in r.output
    assert "cylindrical enough for down-plunge projection" in r.output
    assert "warning" not in r.output
    flat = _csv(tmp_path, "x,y,strike,dip\n0,0,30,40\n1,1,31,41\n2,2,29,40\n", "flat.csv")
    r2 = _run("axis", flat)
    assert r2.exit_code == 0 and "warning: not cylindrical enough" in r2.output


def test_cli_axis_within(tmp_path):
    import geopandas as gpd
    from shapely.geometry import box

    att = _csv(tmp_path, "x,y,strike,dip\n5,5,90,30\n6,6,270,40\n7,7,90,60\n50,50,0,10\n")
    poly = tmp_path / "fold.gpkg"
    gpd.GeoDataFrame(geometry=[box(0, 0, 10, 10)], crs="EPSG:32611").to_file(poly)
    r = _run("axis", att, "--within", poly)
    assert r.exit_code == 0, r.output
    assert "from 3 attitudes" in r.output
    far = tmp_path / "far.gpkg"
    gpd.GeoDataFrame(geometry=[box(100, 100, 110, 110)], crs="EPSG:32611").to_file(far)
    r2 = _run("axis", att, "--within", far)
    assert r2.exit_code == 2 and "no attitudes inside" in r2.output


def test_help_carries_caution():
    from mapsection import CAUTION

    for name in ("dips", "axis"):
        r = _run(name, "--help")
        assert r.exit_code == 0 and CAUTION[:40] in " ".join(r.output.split())


def test_cli_dips_line_in_another_crs(tmp_path, dem):
    # outside reference: pyproj gives the line's vertices in longitude/latitude
    import csv

    import pyproj

    att = _csv(tmp_path, "id,x,y,strike,dip\nA,500,1100,0,30\nB,800,900,180,40\n")
    tr = pyproj.Transformer.from_crs("EPSG:32611", "EPSG:4326", always_xy=True)
    lon, lat = tr.transform([100.0, 1900.0], [1000.0, 1000.0])
    text = f"{lon[0]:.9f},{lat[0]:.9f};{lon[1]:.9f},{lat[1]:.9f}"
    out_ll, out_m = tmp_path / "ll.csv", tmp_path / "m.csv"
    r = _run("dips", att, "--dem", dem, "--corridor", 200, "-o", out_ll, "--crs", "EPSG:4326",
             "--", text)
    assert r.exit_code == 0, r.output
    assert r.output.count("reprojected") == 1
    assert _run("dips", att, LINE, "--dem", dem, "--corridor", 200, "-o", out_m).exit_code == 0
    ll, m = (list(csv.DictReader(open(p))) for p in (out_ll, out_m))
    assert [row["id"] for row in ll] == [row["id"] for row in m] == ["A", "B"]
    for a, b in zip(ll, m, strict=True):
        assert float(a["distance_m"]) == pytest.approx(float(b["distance_m"]), abs=0.01)
        assert float(a["apparent_dip"]) == pytest.approx(float(b["apparent_dip"]), abs=1e-3)
