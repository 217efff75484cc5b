"""Attitude conventions, reading and validation."""

from __future__ import annotations

import numpy as np
import pyproj
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from mapsection.attitudes import (
    Attitudes,
    dip_direction_to_strike,
    format_quadrant,
    parse_quadrant,
    strike_to_dip_direction,
)
from mapsection.errors import AttitudeError
from mapsection.readers.attitudes import read_attitudes


def _circ(a, b):
    return np.abs((np.asarray(a) - np.asarray(b) + 180.0) % 360.0 - 180.0)


# --- conventions ------------------------------------------------------------------------
@pytest.mark.parametrize(
    "text, strike, dip",
    [
        # Right-hand rule: the dip direction is 90 degrees clockwise of the strike
        # (definition of the convention; quadrant bearings as in Ragan, Structural Geology:
        # An Introduction to Geometrical Techniques — from memory).
        ("N30E 45SE", 30.0, 45.0),
        ("N30E 45NW", 210.0, 45.0),
        ("N30E/45NW", 210.0, 45.0),
        ("S45W 30NW", 225.0, 30.0),
        ("S45W 30SE", 45.0, 30.0),
        ("N90E 20S", 90.0, 20.0),
        ("N90W 20N", 270.0, 20.0),
        ("N0E 60W", 180.0, 60.0),
        ("n20w 10ne", 340.0, 10.0),
        ("N20°W 10°NE", 340.0, 10.0),
    ],
)
def test_parse_quadrant_examples(text, strike, dip):
    s, d = parse_quadrant(text)
    assert _circ(s, strike) < 1e-9 and d == pytest.approx(dip)


@pytest.mark.parametrize(
    "text",
    ["N30E 45NE", "N30E 45SW", "N0E 30N", "N0E 30SE", "N90E 20E", "N95E 20S", "N30E 95SE", "30 45"],
)
def test_parse_quadrant_rejects_inconsistent_text(text):
    # A dip quadrant must be perpendicular to the strike (definition of the notation).
    with pytest.raises(AttitudeError, match="attitude"):
        parse_quadrant(text)


def test_parse_quadrant_vector():
    s, d = parse_quadrant(["N30E 45SE", "S45W 30NW"])
    np.testing.assert_allclose(s, [30.0, 225.0])
    np.testing.assert_allclose(d, [45.0, 30.0])


def test_format_quadrant_examples():
    assert format_quadrant(30.0, 45.0) == "N30E 45SE"
    assert format_quadrant(210.0, 45.0) == "N30E 45NW"
    assert format_quadrant(90.0, 20.0) == "N90E 20S"
    assert list(format_quadrant([225.0, 340.0], [30.0, 10.0])) == ["N45E 30NW", "N20W 10NE"]


strikes = st.floats(0.0, 360.0, allow_nan=False, exclude_max=True)
dips = st.floats(0.0, 90.0, allow_nan=False)


@settings(max_examples=300, deadline=None)
@given(strikes, dips)
def test_rhr_quadrant_round_trip(strike, dip):
    s, d = parse_quadrant(format_quadrant(strike, dip))
    assert _circ(s, strike) < 2e-6 and abs(d - dip) < 1e-6


@settings(max_examples=300, deadline=None)
@given(strikes)
def test_rhr_dip_direction_round_trip(strike):
    dd = strike_to_dip_direction(strike)
    assert 0.0 <= dd <= 360.0
    assert _circ(dd, strike + 90.0) < 1e-9
    assert _circ(dip_direction_to_strike(dd), strike) < 1e-9


@settings(max_examples=300, deadline=None)
@given(strikes, dips)
def test_dip_direction_quadrant_round_trip(dd, dip):
    s, d = parse_quadrant(format_quadrant(dip_direction_to_strike(dd), dip))
    assert _circ(strike_to_dip_direction(s), dd) < 2e-6 and abs(d - dip) < 1e-6


def test_vectorised_conversions():
    s = np.array([0.0, 30.0, 270.0, 359.0])
    np.testing.assert_allclose(strike_to_dip_direction(s), [90.0, 120.0, 0.0, 89.0])
    np.testing.assert_allclose(dip_direction_to_strike([90.0, 120.0, 0.0, 89.0]), s)


# --- reading --------------------------------------------------------------------------
def _write(path, text):
    path.write_text(text)
    return path


def test_three_conventions_read_alike(tmp_path):
    # self-consistency: the same two beds written in each convention
    rhr = _write(tmp_path / "rhr.csv", "x,y,strike,dip\n1,2,30,45\n3,4,225,30\n")
    dd = _write(tmp_path / "dd.csv", "x,y,dip_direction,dip\n1,2,120,45\n3,4,315,30\n")
    qd = _write(tmp_path / "qd.csv", "x,y,attitude\n1,2,N30E 45SE\n3,4,S45W 30NW\n")
    a = read_attitudes(rhr)
    b = read_attitudes(dd, convention="dip-direction")
    c = read_attitudes(qd, convention="quadrant")
    for other in (b, c):
        np.testing.assert_allclose(other.strike, a.strike)
        np.testing.assert_allclose(other.dip, a.dip)
    assert list(a.id) == [1, 2] and np.isnan(a.z).all() and not a.overturned.any()


def test_quadrant_in_strike_and_dip_columns(tmp_path):
    p = _write(tmp_path / "q.csv", "x,y,strike,dip\n1,2,N30E,45SE\n")
    a = read_attitudes(p, convention="quadrant")
    assert a.strike[0] == pytest.approx(30.0) and a.dip[0] == pytest.approx(45.0)


def test_optional_columns_and_field_map(tmp_path):
    p = _write(
        tmp_path / "f.csv",
        "E,N,Elev,STK,DP,Name,Flip\n1,2,300,30,45,A1,yes\n3,4,,40,50,B2,0\n5,6,310,50,55,C3,\n",
    )
    a = read_attitudes(p, fields={"x": "e", "y": "n", "z": "elev", "strike": "stk", "dip": "dp",
                                  "id": "name", "overturned": "flip"})
    assert list(a.id) == ["A1", "B2", "C3"]
    np.testing.assert_array_equal(a.overturned, [True, False, False])
    assert a.z[0] == 300 and np.isnan(a.z[1])
    sub = a.subset(a.overturned)
    assert len(sub) == 1 and sub.id[0] == "A1"


def test_bad_rows_reported_with_line_numbers(tmp_path):
    p = _write(
        tmp_path / "bad.csv",
        "x,y,strike,dip\n"
        "0,0,30,45\n"  # line 2 good
        "0,0,400,20\n"  # line 3 strike out of range
        "\n"  # line 4 blank: ignored
        "0,0,10,95\n"  # line 5 dip out of range
        "zz,0,10,30\n"  # line 6 not a number
        "1,1,10,30\n",  # line 7 good
    )
    msgs = []
    a = read_attitudes(p, warn=msgs.append)
    assert len(a) == 2 and list(a.id) == [1, 5]  # ids count data rows
    joined = "\n".join(msgs)
    assert "line 3: strike 400 is outside 0-360" in joined
    assert "line 5: dip 95 is outside 0-90" in joined
    assert "line 6: x 'zz' is not a number" in joined
    assert sum("dropped 3 of 5 rows; kept 2" in m for m in msgs) == 1
    assert all("\n" not in m for m in msgs)


def test_inconsistent_quadrant_row_dropped(tmp_path):
    p = _write(tmp_path / "q.csv", "x,y,attitude\n0,0,N30E 45NE\n0,0,N30E 45SE\n")
    msgs = []
    a = read_attitudes(p, convention="quadrant", warn=msgs.append)
    assert len(a) == 1
    assert any("line 2" in m and "not NE" in m for m in msgs)


def test_no_usable_rows(tmp_path):
    p = _write(tmp_path / "none.csv", "x,y,strike,dip\n0,0,30,120\n")
    with pytest.raises(AttitudeError, match="no usable attitude rows"):
        read_attitudes(p, warn=lambda m: None)
    e = _write(tmp_path / "empty.csv", "x,y,strike,dip\n")
    with pytest.raises(AttitudeError, match="no data rows"):
        read_attitudes(e)


def test_missing_column_lists_columns(tmp_path):
    p = _write(tmp_path / "m.csv", "east,north,strike,dip\n0,0,30,40\n")
    with pytest.raises(AttitudeError, match=r"no column 'x' \(columns: east, north, strike, dip\)"):
        read_attitudes(p)
    q = _write(tmp_path / "dd.csv", "x,y,dip_direction,dip\n0,0,30,40\n")
    with pytest.raises(AttitudeError, match="use convention dip-direction"):
        read_attitudes(q)


def test_unknown_convention_and_missing_file(tmp_path):
    with pytest.raises(AttitudeError, match="unknown attitude convention"):
        read_attitudes(tmp_path / "a.csv", convention="lhr")
    with pytest.raises(AttitudeError, match="no such attitudes file"):
        read_attitudes(tmp_path / "a.csv")


def test_vector_file_reprojected_once(tmp_path):
    import geopandas as gpd
    from shapely.geometry import Point

    lon = np.array([-115.6, -115.5, -115.4])
    lat = np.array([36.0, 36.1, 36.2])
    df = gpd.GeoDataFrame(
        {"strike": [0.0, 90.0, 45.0], "dip": [30.0, 40.0, 50.0], "id": [1, 2, 3]},
        geometry=[Point(a, b) for a, b in zip(lon, lat, strict=True)],
        crs="EPSG:4326",
    )
    path = tmp_path / "att.gpkg"
    df.to_file(path, layer="attitudes")
    msgs = []
    a = read_attitudes(path, crs="EPSG:32611", warn=msgs.append)
    assert len(msgs) == 1 and "reprojected" in msgs[0]
    tr = pyproj.Transformer.from_crs("EPSG:4326", "EPSG:32611", always_xy=True)
    ex, ey = tr.transform(lon, lat)
    np.testing.assert_allclose(a.x, ex, atol=1e-6)
    np.testing.assert_allclose(a.y, ey, atol=1e-6)
    # Grid azimuth = true azimuth − meridian convergence (pyproj Proj.get_factors).
    conv = pyproj.Proj("EPSG:32611").get_factors(lon, lat).meridian_convergence
    assert np.all(_circ(a.strike, np.array([0.0, 90.0, 45.0]) - conv) < 0.01)
    with pytest.raises(AttitudeError, match=r"no layer 'nope' \(layers: attitudes\)"):
        read_attitudes(path, layer="nope")


def test_from_arrays_defaults():
    a = Attitudes.from_arrays([0, 1], [0, 1], [370.0, 10.0], [10, 20])
    assert list(a.id) == [1, 2] and a.strike[0] == pytest.approx(10.0)
    assert len(a) == 2 and np.isnan(a.z).all()
