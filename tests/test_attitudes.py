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


# --- a build's read: the rows inside a box, chunk by chunk -------------------------------
def _big_csv(tmp_path, n=600, *, ids="int", bad_rows=(), newline="\n", bom=False,
             blank_every=0, name="att.csv"):
    """An invented attitude file of ``n`` rows over a 10 km square (``ids``: "int", "text
    late" (integers but one text id near the end), "none" or "dup" (ids repeated))."""
    rng = np.random.default_rng(7)
    x = 600_000 + rng.uniform(0, 10_000, n)
    y = 5_200_000 + rng.uniform(0, 10_000, n)
    strike = rng.integers(0, 360, n)
    dip = rng.integers(0, 90, n)
    head = ("" if ids == "none" else "id,") + "x,y,strike,dip"
    lines = [head]
    for i in range(n):
        if ids == "none":
            ident = ""
        elif ids == "dup":
            ident = f"{i % 50},"
        elif ids == "text late" and i == n - 3:
            ident = "K9,"
        else:
            ident = f"{i + 1:04d},"
        d = "95" if i in bad_rows else str(dip[i])
        lines.append(f"{ident}{x[i]:.1f},{y[i]:.1f},{strike[i]},{d}")
        if blank_every and i % blank_every == 0:
            lines.append(",,,," if ids != "none" else ",,,")
    path = tmp_path / name
    data = newline.join(lines) + newline
    path.write_bytes((b"\xef\xbb\xbf" if bom else b"") + data.encode("utf-8"))
    return path


_BOX = (602_000.0, 5_203_000.0, 607_000.0, 5_206_500.0)


def _same_as_whole_cut(path, box, chunk_rows, monkeypatch, convention="rhr"):
    """The chunked read inside ``box`` against the whole read then cut to it (the
    reference: read_attitudes, every row, then a plain numpy mask)."""
    from mapsection.readers.attitudes import read_attitudes_in_box

    whole_said: list[str] = []
    whole = read_attitudes(path, convention=convention, warn=whole_said.append)
    x, y = np.asarray(whole.x, float), np.asarray(whole.y, float)
    cut = whole.subset((x >= box[0]) & (x <= box[2]) & (y >= box[1]) & (y <= box[3]))
    said: list[str] = []
    got = read_attitudes_in_box(path, box, convention=convention, warn=said.append,
                                chunk_rows=chunk_rows)
    att = got.attitudes
    assert said == whole_said
    assert att.source == whole.source and len(att) == len(cut) > 0
    for f in ("id", "x", "y", "z", "strike", "dip", "overturned"):
        a, b = getattr(att, f), getattr(cut, f)
        assert a.dtype == b.dtype, f
        assert np.array_equal(a, b, equal_nan=a.dtype.kind == "f"), f
    # every usable row's position, for the whole file's check against the DEM
    assert np.array_equal(got.x, x) and np.array_equal(got.y, y)
    return said


@pytest.mark.parametrize("chunk_rows", [1, 7, 64, 100_000])
@pytest.mark.parametrize("kind", ["int", "text late", "none", "dup", "bom crlf blanks"])
def test_box_read_in_chunks_equals_the_whole_read_cut_to_the_box(kind, chunk_rows, tmp_path,
                                                                 monkeypatch):
    # Reference: the whole-file read (the csv module's rows, tests/test_shortcuts.py) cut
    # to the box with a numpy mask: the same rows, order, ids, values and messages.
    import mapsection.readers.attitudes as reader

    def no_fallback(p):
        raise AssertionError("fell back to the row-by-row reader")

    kw = {"bad_rows": (3, 250, 597)}
    if kind == "bom crlf blanks":
        kw.update(bom=True, newline="\r\n", blank_every=9)
    path = _big_csv(tmp_path, ids=kind if kind != "bom crlf blanks" else "int", **kw)
    monkeypatch.setattr(reader, "_read_csv_rows", no_fallback)
    said = _same_as_whole_cut(path, _BOX, chunk_rows, monkeypatch)
    assert said[-1].endswith("dropped 3 of 600 rows; kept 597")


def test_box_read_names_the_file_line_of_a_bad_row_in_a_late_chunk(tmp_path, monkeypatch):
    # Line numbers are the file's physical lines (header = line 1; blank lines counted),
    # as the csv module's reader counts them (Python's csv.reader line_num).
    import csv

    from mapsection.readers.attitudes import read_attitudes_in_box

    path = _big_csv(tmp_path, bad_rows=(587,), blank_every=5, newline="\r\n")
    with open(path, newline="", encoding="utf-8") as fh:
        r = csv.reader(fh)
        line = next(r.line_num for rec in r if len(rec) > 4 and rec[4] == "95")
    said: list[str] = []
    read_attitudes_in_box(path, _BOX, warn=said.append, chunk_rows=50)
    assert said[0] == f"{path}, line {line}: dip 95 is outside 0-90; row dropped"
    assert line > 600  # in the last chunks, after many blank lines


def test_box_read_falls_back_to_the_row_reader_for_a_late_multiline_field(tmp_path,
                                                                          monkeypatch):
    # A quoted field over two lines near the end: the csv module's line numbers (the
    # reference) for every later row, as the whole read gives them.
    path = _big_csv(tmp_path, ids="int", bad_rows=(598,))
    lines = path.read_text("utf-8").splitlines()
    lines[590] = '"05\n90"' + lines[590][4:]  # an id over two lines
    path.write_text("\n".join(lines) + "\n", "utf-8")
    said = _same_as_whole_cut(path, (0, 0, 1e9, 1e9), 64, monkeypatch)
    assert f"{path}, line 601: dip 95 is outside 0-90; row dropped" in said


def test_box_read_quadrant_and_errors_as_the_whole_read(tmp_path, monkeypatch):
    from mapsection.readers.attitudes import read_attitudes_in_box

    rows = ["id,x,y,attitude"] + [f"{i},{600000 + 10 * i},{5200000 + 10 * i},N30E 45SE"
                                  for i in range(200)]
    rows[150] = "149,601490,5201490,N30E 45NE"  # inconsistent quadrant (line 151)
    path = tmp_path / "q.csv"
    path.write_text("\n".join(rows) + "\n", "utf-8")
    said = _same_as_whole_cut(path, (600_500, 5_200_500, 601_800, 5_201_800), 16,
                              monkeypatch, convention="quadrant")
    assert said[0].startswith(f"{path}, line 151: ")
    # A missing column is said as for the whole file, whatever the chunk size.
    path.write_text("id,x,y,strike\n1,600000,5200000,30\n", "utf-8")
    with pytest.raises(AttitudeError) as whole:
        read_attitudes(path)
    with pytest.raises(AttitudeError) as cut:
        read_attitudes_in_box(path, _BOX, chunk_rows=1)
    assert str(cut.value) == str(whole.value)
    # All rows bad: the same message, naming the first row.
    path.write_text("id,x,y,strike,dip\n" + "1,600000,5200000,30,99\n" * 5, "utf-8")
    with pytest.raises(AttitudeError) as whole:
        read_attitudes(path, warn=lambda m: None)
    with pytest.raises(AttitudeError) as cut:
        read_attitudes_in_box(path, _BOX, chunk_rows=2, warn=lambda m: None)
    assert str(cut.value) == str(whole.value)
