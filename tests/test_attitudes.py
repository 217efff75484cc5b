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


# --- the CSV parsed by pyarrow against the csv module, row by row ----------------------------
# The reference for every check below is Python's own reading: the csv module row by row
# (``_read_csv_rows``: csv.reader's fields and line_num, values cut with str.strip()) and,
# for the numbers, Python's float() on the stripped text (through the reader's rules for
# blanks, "nan" and non-finite values, as the csv module's table gives them).

_EDGE_FILES = {
    "spaces around values and names": "x , y ,strike, dip \n 1 , 2 , 30 , 45 \n\t3\t,4, 40 ,50\n",
    "BOM and CR LF": "\ufeffid,x,y,strike,dip\r\n1,0,0,30,45\r\n\r\n2,1,1,40,50\r\n",
    "CR only": "id,x,y,strike,dip\r1,0,0,30,45\r\r2,1,1,40,50\r",
    "semicolons and quoted delimiters": ('id;x;y;strike;dip\n"a;1";1;2;30;45\n'
                                         '"b ""q""";3;4;"40";50\n'),
    "tabs": "id\tx\ty\tstrike\tdip\n1\t0\t0\t30\t45\n2\t1\t1\t40\t50\n",
    "blank lines": ("x,y,strike,dip\n\n1,2,30,45\n,,,\n   \n , , , \n3,4,40,50\n\n"
                    "5,6,50,55"),
    "short, long and trailing-delimiter rows": ("id,x,y,strike,dip\n1,0,0,30,45\n2,1,1\n"
                                                "3,2,2,40,50,\n4,3,3,40,50,extra\n,,,,,x\n"),
    "text that is not a number": "x,y,strike,dip\nabc,2,30,45\n1,N30E,30,45\n1,2,\"3,5\",45\n",
    "numbers float() reads": ("x,y,strike,dip\n1e3,2,+5,45\n 7 ,.5,5.,4E1\n1_0,2,30,45\n"
                              "\u0663\u0660,\uff11\uff12,30,45\n-0,00012,359.99999999999999,0\n"),
    "nan, inf and overflow": ("x,y,strike,dip\nnan,2,30,45\n1,NaN,30,45\n1,2,inf,45\n"
                              "1,2,30,-Infinity\n1e400,2,30,45\n1,2,nan(1),45\n1,2,0x10,45\n"),
    "unicode spaces": ("x,y,strike,dip\n\u30001\u3000,\xa02\xa0,\x1c30\x1d,\u200945\u2028\n"
                       "\x85 3,4\x0b,40\x0c,50\u202f\n"),
    "repeated names": "x,y,strike,dip,X\n1,2,30,45,9\n",
    "ids: digits, zeros, long, text": ("id,x,y,strike,dip,overturned\n007,0,0,30,45,yes\n"
                                       "1234567890123456789,1,1,40,50,0\n"),
    "text ids and flags": "id,x,y,strike,dip,overturned\nA1,0,0,30,45,T\n B2 ,1,1,40,50,maybe\n",
    "flags": ("x,y,strike,dip,overturned\n0,0,30,45,TRUE\n1,1,40,50, No \n2,2,40,50,\n"
              "3,3,40,50,f\n4,4,1,1,nope\n5,5,1,1,Yes\n"),
    "flags, not ASCII": "x,y,strike,dip,overturned\n0,0,30,45,TRUE\n3,3,40,50,\uff39\n",
    "quoted header and values": '"id","x","y","strike","dip"\n"1","0","0","30","45"\n',
    "quote inside a value": 'id,x,y,strike,dip\nab"c,0,0,30,45\n"d"e,1,1,40,50\n',
}


def _reading(table):
    return ({n: list(c) for n, c in table.columns.items()}, list(table.rows), table.repeated)


def _chunked_reading(path, chunk_rows):
    from mapsection.readers.attitude_csv import _read_csv_chunks

    tables = list(_read_csv_chunks(path, chunk_rows))
    cols = {n: [v for t in tables for v in t.columns[n]] for n in tables[0].columns}
    return cols, [r for t in tables for r in t.rows], tables[0].repeated


@pytest.mark.parametrize("name", list(_EDGE_FILES))
def test_pyarrow_reading_equals_the_csv_module_on_edge_files(name, tmp_path, monkeypatch):
    # Reference: Python's csv module row by row (_read_csv_rows), the same columns, values,
    # line numbers (physical lines, the header line 1) and repeated names; the pyarrow
    # path taken for every one of these files (no fall-back).
    import mapsection.readers.attitude_csv as csv_reader

    path = tmp_path / "att.csv"
    path.write_bytes(_EDGE_FILES[name].encode("utf-8"))
    ref = _reading(csv_reader._read_csv_rows(path))

    def no_fallback(p):
        raise AssertionError("fell back to the row-by-row reader")

    monkeypatch.setattr(csv_reader, "_read_csv_rows", no_fallback)
    assert _reading(csv_reader._read_csv(path)) == ref
    for chunk_rows in (1, 2, 100_000):
        assert _chunked_reading(path, chunk_rows) == ref


@pytest.mark.parametrize("name", list(_EDGE_FILES))
def test_attitudes_from_pyarrow_equal_those_from_the_csv_module(name, tmp_path, monkeypatch):
    # Reference: read_attitudes on the csv module's table (Python's float() and the reader's
    # rules on its text): the same attitudes (ids, values, NaN where blank), the same
    # messages for the bad rows, or the same error.
    import mapsection.readers.attitudes as reader

    path = tmp_path / "att.csv"
    path.write_bytes(_EDGE_FILES[name].encode("utf-8"))
    out = []
    for read in (reader._read_csv, reader._read_csv_rows):
        monkeypatch.setattr(reader, "_read_csv", read)
        said: list[str] = []
        try:
            att = reader.read_attitudes(path, warn=said.append)
        except AttitudeError as exc:
            out.append(("error", str(exc), said))
            continue
        out.append((att, said))
    fast, ref = out
    assert len(fast) == len(ref)
    if fast[0] == "error":
        assert fast == ref
        return
    assert fast[1] == ref[1]
    for f in ("id", "x", "y", "z", "strike", "dip", "overturned"):
        a, b = getattr(fast[0], f), getattr(ref[0], f)
        assert a.dtype == b.dtype, f
        assert np.array_equal(a, b, equal_nan=a.dtype.kind == "f"), f
    assert fast[0].source == ref[0].source


def test_numbers_float_reads_are_read_as_before(tmp_path):
    # Reference: Python's float() on the stripped text, which reads a column whose every
    # value it takes ("1e3" -> 1000, " +5 " -> 5, "1_0" -> 10, Arabic-Indic "٣٠" -> 30);
    # then the reader's rules, as before: "nan" a blank, "inf" not a number (a value must
    # be finite).
    path = _write(tmp_path / "n.csv", "x,y,strike,dip\n1e3, +5 ,1_0,\u0663\u0660\n")
    a = read_attitudes(path)
    assert list(a.x) == [float("1e3")] and list(a.y) == [float(" +5 ")]
    assert list(a.strike) == [float("1_0")] and list(a.dip) == [float("\u0663\u0660")]
    path = _write(tmp_path / "m.csv", "x,y,strike,dip\n1,2,30,45\n1,2,inf,45\n1,nan,30,45\n")
    said: list[str] = []
    read_attitudes(path, warn=said.append)
    assert any("line 3: strike 'inf' is not a number" in m for m in said)
    assert any("line 4: y 'nan' is not a number" in m for m in said)


_NUMBERISH = st.text(alphabet="0123456789+-.eE_ infatyINFATY(),x\u0663\uff11", max_size=12)


@settings(max_examples=400, deadline=None)
@given(st.lists(_NUMBERISH, min_size=1, max_size=6))
def test_pyarrow_takes_a_column_as_numbers_only_where_float_agrees(values):
    # Reference: Python's float(). Where pyarrow's parsing gives every value of a column a
    # finite number, float() gives each the same number; where it does not, the column
    # is left to the text rules (floats() is None).
    import pyarrow as pa

    from mapsection.readers.attitude_csv import _TextColumn

    got = _TextColumn(pa.array(values, pa.string())).floats()
    if got is None:
        return
    assert [float(v) for v in values] == list(got)


def test_the_stripped_characters_are_those_of_str_strip():
    # Reference: str.isspace, the characters str.strip() takes off.
    from mapsection.readers.attitude_csv import _SPACES

    assert set(_SPACES) == {chr(c) for c in range(0x110000) if chr(c).isspace()}


@pytest.mark.parametrize("text", [
    'id,x,y,strike,dip\n1,0,0,30,45\n"2\n",1,1,40,50\n3,2,2,40,50\n',  # a field over two lines
    "id,x,y,strike,dip\n1,0,0,30,45,a,b\n",  # longer than the header by two fields
    "id,x,y,strike,dip\n1,0,0\x00,30,45\n",  # a NUL byte
    'id, x, y, strike, dip\n1, " 0", 0, 30, 45\n',  # a quote after a skipped space
    'id,x,y,strike,dip\n1,0,0,30,"45\n',  # a quote left open over the last line break
])
def test_files_pyarrow_could_read_otherwise_go_to_the_csv_module(text, tmp_path,
                                                                  monkeypatch):
    # Reference: the csv module's reading, which these files get (row by row).
    import mapsection.readers.attitude_csv as csv_reader

    path = tmp_path / "att.csv"
    path.write_bytes(text.encode("utf-8"))
    ref = _reading(csv_reader._read_csv_rows(path))
    slow = csv_reader._read_csv_rows
    fell_back: list = []
    monkeypatch.setattr(csv_reader, "_read_csv_rows",
                        lambda p: fell_back.append(p) or slow(p))
    assert _reading(csv_reader._read_csv(path)) == ref
    assert fell_back
    with pytest.raises(csv_reader._WholeFile):
        _chunked_reading(path, 1)


def test_pieces_of_the_file_cut_between_lines_read_as_the_whole(tmp_path, monkeypatch):
    # The chunked read parses the file a piece of whole lines at a time; with pieces of a
    # few lines (quoted delimiters, CR LF, blank lines and odd rows across the cuts) the
    # reading is the csv module's (reference: _read_csv_rows).
    import mapsection.readers.attitude_csv as csv_reader

    rng = np.random.default_rng(3)
    rows = ["id;x;y;strike;dip"]
    for i in range(400):
        kind = rng.integers(0, 8)
        rows.append({0: "", 1: f'"{i};q";{i};{i};30;45', 2: f"{i};{i};{i}",
                     3: f"{i};{i};{i};30;45;", 4: " ; ; ; ; "}.get(kind,
                                                             f"{i};{i}.5;{i};30;45"))
    path = tmp_path / "att.csv"
    path.write_bytes(("\r\n".join(rows) + "\r\n").encode("utf-8"))
    ref = _reading(csv_reader._read_csv_rows(path))
    monkeypatch.setattr(csv_reader, "_BLOCK_BYTES", 64)
    for chunk_rows in (1, 5, 1000):
        assert _chunked_reading(path, chunk_rows) == ref
    # A field over two lines found whichever piece it falls in.
    text = path.read_bytes().decode("utf-8")
    at = text.index(';q"', len(text) // 2)
    path.write_bytes((text[:at] + '\r\nq"' + text[at + 3:]).encode("utf-8"))
    with pytest.raises(csv_reader._WholeFile):
        _chunked_reading(path, 5)
