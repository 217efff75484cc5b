"""Tests of mapsection.line: measures along a section line against analytic geometry."""

from __future__ import annotations

import numpy as np
import pyproj
import pytest
import shapely

from mapsection.errors import LineError
from mapsection.line import SectionLine, projected_line, utm_crs_for
from mapsection.readers.line import parse_line_text, read_line

# An L-shaped line: 300 m east, then 400 m north (a 3-4-5 right angle; analytic).
L_SHAPE = np.array([[0.0, 0.0], [300.0, 0.0], [300.0, 400.0]])


def test_length_and_cumulative_over_a_bend():
    # analytic: segment lengths 300 and 400, cumulative over the bend
    line = SectionLine(L_SHAPE)
    np.testing.assert_allclose(line.cumulative, [0.0, 300.0, 700.0])
    assert line.length == pytest.approx(700.0)
    # outside reference: shapely's length of the same polyline
    assert line.length == pytest.approx(shapely.LineString(L_SHAPE).length)


def test_segment_azimuths_are_bearings_clockwise_from_north():
    # analytic: east is 90, north is 0, south-west is 225
    line = SectionLine(np.array([[0.0, 0.0], [10.0, 0.0], [10.0, 10.0], [0.0, 0.0]]))
    np.testing.assert_allclose(line.segment_azimuths, [90.0, 0.0, 225.0])
    # analytic: bearing from first to last vertex of the L is atan2(300, 400)
    assert SectionLine(L_SHAPE).start_bearing == pytest.approx(np.degrees(np.arctan2(300, 400)))


def test_point_at_follows_each_segment():
    line = SectionLine(L_SHAPE)
    x, y = line.point_at(np.array([0.0, 150.0, 300.0, 500.0, 700.0]))
    # analytic: half-way along the first leg, at the corner, 200 m up the second leg
    np.testing.assert_allclose(x, [0.0, 150.0, 300.0, 300.0, 300.0])
    np.testing.assert_allclose(y, [0.0, 0.0, 0.0, 200.0, 400.0])
    # outside reference: shapely's interpolate along the same line
    ref = shapely.LineString(L_SHAPE).interpolate([150.0, 500.0])
    np.testing.assert_allclose(np.column_stack([x[[1, 3]], y[[1, 3]]]),
                               shapely.get_coordinates(ref))


def test_locate_distance_and_signed_offset():
    line = SectionLine(L_SHAPE)
    # analytic: (100, -20) is 100 m along, 20 m to the RIGHT of eastward travel;
    # (320, 250) is 300 + 250 m along, 20 m right of northward travel;
    # (280, 250) is 20 m to the left of it.
    pos = line.locate(np.array([100.0, 320.0, 280.0]), np.array([-20.0, 250.0, 250.0]))
    np.testing.assert_allclose(pos.distance, [100.0, 550.0, 550.0])
    np.testing.assert_allclose(pos.offset, [20.0, 20.0, -20.0])
    np.testing.assert_array_equal(pos.segment, [0, 1, 1])
    np.testing.assert_allclose(pos.azimuth, [90.0, 0.0, 0.0])
    # outside reference: shapely's project() gives the same distances along the line
    ls = shapely.LineString(L_SHAPE)
    pts = shapely.points([100.0, 320.0, 280.0], [-20.0, 250.0, 250.0])
    np.testing.assert_allclose(pos.distance, ls.project(pts))
    np.testing.assert_allclose(np.abs(pos.offset), ls.distance(pts))


def test_locate_inverts_point_at():
    # self-consistency: points on the line locate at their own distance with zero offset
    line = SectionLine(np.array([[0.0, 0.0], [1000.0, 500.0], [1500.0, -200.0]]))
    d = np.linspace(0.0, line.length, 37)
    pos = line.locate(*line.point_at(d))
    np.testing.assert_allclose(pos.distance, d, atol=1e-9)
    np.testing.assert_allclose(pos.offset, 0.0, atol=1e-9)


def test_densify_includes_every_vertex_and_both_ends():
    line = SectionLine(L_SHAPE)
    d = line.densify(120.0)
    # analytic: multiples of 120 up to 700, plus the corner at 300 and the end at 700
    np.testing.assert_allclose(d, [0, 120, 240, 300, 360, 480, 600, 700])
    assert np.all(np.diff(d) > 0)
    # a step that divides the length gives equal spacing
    np.testing.assert_allclose(np.diff(SectionLine(L_SHAPE).densify(100.0)), 100.0)


def test_repeated_vertices_are_dropped_and_short_lines_refused():
    line = SectionLine(np.array([[0.0, 0.0], [0.0, 0.0], [10.0, 0.0]]))
    assert len(line.vertices) == 2
    with pytest.raises(LineError, match="two vertices"):
        SectionLine(np.array([[0.0, 0.0]]))
    with pytest.raises(LineError, match="zero length"):
        SectionLine(np.array([[5.0, 5.0], [5.0, 5.0]]))


def test_parse_line_text():
    line = parse_line_text("0,0; 300,0 ;300,400")
    np.testing.assert_allclose(line.vertices, L_SHAPE)
    with pytest.raises(LineError, match="expected"):
        parse_line_text("0,0;300")


def test_read_line_from_geojson(tmp_path):
    import geopandas as gpd

    path = tmp_path / "line.geojson"
    gpd.GeoDataFrame(geometry=[shapely.LineString(L_SHAPE)], crs="EPSG:32611").to_file(path)
    line = read_line(path)
    np.testing.assert_allclose(line.vertices, L_SHAPE)
    assert line.crs == pyproj.CRS("EPSG:32611")


def test_utm_zone_for_a_point():
    # From the UTM zone definition (6-degree zones from 180 W): 84.2 W, 36.6 N is zone 16 N.
    assert utm_crs_for(-84.2, 36.6).to_epsg() == 32616
    assert utm_crs_for(151.2, -33.9).to_epsg() == 32756


def test_projected_line_length_matches_geodesic():
    # outside reference: pyproj.Geod's geodesic length on WGS 84, within 0.5 %
    lonlat = np.array([[-84.35, 36.50], [-84.10, 36.70], [-83.90, 36.65]])
    notes = []
    line = projected_line(SectionLine(lonlat, pyproj.CRS("EPSG:4326")), warn=notes.append)
    geod = pyproj.Geod(ellps="WGS84")
    ref = geod.line_length(lonlat[:, 0], lonlat[:, 1])
    assert line.length == pytest.approx(ref, rel=0.005)
    assert line.crs.to_epsg() == 32616  # mean longitude 84.1 W: UTM zone 16
    assert notes and "UTM" in notes[0]


def test_to_crs_round_trip():
    # outside reference: pyproj transforms the vertices there and back
    line = SectionLine(L_SHAPE + [500000.0, 4000000.0], pyproj.CRS("EPSG:32611"))
    back = line.to_crs("EPSG:4326").to_crs("EPSG:32611")
    np.testing.assert_allclose(back.vertices, line.vertices, atol=1e-6)
