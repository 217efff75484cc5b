"""Surface geology along a section line: unit intervals, contacts, fault crossings, map input.

The reference for intervals is shapely's own intersection of the line with the
polygons (shapely, the GEOS overlay); the maps are small synthetic
GeoDataFrames built here.
"""

from __future__ import annotations

import math

import geopandas as gpd
import numpy as np
import pyogrio
import pyproj
import pytest
import shapely
from shapely.geometry import LineString, MultiPolygon, Polygon, box

from mapsection.errors import MapLayerError
from mapsection.geology import geology_frames, surface_geology
from mapsection.line import SectionLine
from mapsection.mapdata import MapData
from mapsection.readers.map import read_map
from mapsection.topo_profile import Profile

CRS = "EPSG:32611"


def _map(units, geoms, faults=None):
    df = gpd.GeoDataFrame({"unit": units}, geometry=list(geoms), crs=CRS)
    fields = {"dip": "dip", "dip_direction": "dip_direction", "sense": "sense", "name": "name"}
    return MapData(df, "unit", faults, fields if faults is not None else {}, pyproj.CRS(CRS))


def _line(*pts, name="T"):
    return SectionLine(np.asarray(pts, float), pyproj.CRS(CRS), name)


def _lengths(geology):
    out: dict[str, float] = {}
    for iv in geology.intervals:
        out[iv.unit] = out.get(iv.unit, 0.0) + iv.end_m - iv.start_m
    return out


def _check_consistent(geology, line):
    """Intervals sorted, non-overlapping, inside the line; contacts at interval edges."""
    ends = [(i.start_m, i.end_m) for i in geology.intervals]
    assert all(a < b for a, b in ends)
    assert all(b1 <= a2 + 1e-9 for (_, b1), (a2, _) in zip(ends[:-1], ends[1:], strict=True))
    assert ends[0][0] >= -1e-9 and ends[-1][1] <= line.length + 1e-9
    edges = {round(e, 6) for iv in ends for e in iv} - {0.0, round(line.length, 6)}
    assert {round(c.distance_m, 6) for c in geology.contacts} == edges


def test_intervals_match_shapely_intersection_lengths():
    # Reference: shapely (GEOS) intersection lengths of the line with each unit's polygons.
    rng = np.random.default_rng(7)
    seeds = shapely.points(rng.uniform(0, 1000, (60, 2)))
    cells = shapely.get_parts(shapely.voronoi_polygons(shapely.multipoints(seeds),
                                                       extend_to=box(0, 0, 1000, 1000)))
    cells = shapely.intersection(cells, box(0, 0, 1000, 1000))
    units = rng.choice(["A", "B", "C", "D"], len(cells))
    units = units.astype(object)
    units[::9] = None  # a few unmapped cells: gaps
    md = _map(units, cells)
    for _ in range(5):
        pts = rng.uniform(-50, 1050, (3, 2))
        line = _line(*pts)
        geo = surface_geology(md, line)
        _check_consistent(geo, line)
        got = _lengths(geo)
        for u in ("A", "B", "C", "D"):
            ref = shapely.intersection(line.linestring,
                                       shapely.union_all(cells[units == u])).length
            assert got.get(u, 0.0) == pytest.approx(ref, abs=1e-6)
        # Consecutive intervals never repeat a unit without a gap between them.
        for a, b in zip(geo.intervals[:-1], geo.intervals[1:], strict=True):
            assert a.unit != b.unit or b.start_m > a.end_m


def test_multipart_and_split_polygons_merge():
    two = MultiPolygon([box(0, 0, 100, 100), box(200, 0, 300, 100)])
    # Unit C is split into two touching polygons: one interval, no contact between them.
    md = _map(["A", "B", "C", "C"], [two, box(100, 0, 200, 100), box(300, 0, 350, 100),
                                    box(350, 0, 400, 100)])
    geo = surface_geology(md, _line((0, 50), (400, 50)))
    assert [(i.unit, i.start_m, i.end_m) for i in geo.intervals] == [
        ("A", 0, 100), ("B", 100, 200), ("A", 200, 300), ("C", 300, 400)]
    assert [(c.unit_before, c.unit_after) for c in geo.contacts] == [
        ("A", "B"), ("B", "A"), ("A", "C")]


def test_hole_is_a_gap_or_the_inner_unit():
    ring = Polygon([(0, 0), (300, 0), (300, 100), (0, 100)], [[(100, 25), (200, 25),
                                                                (200, 75), (100, 75)]])
    line = _line((-50, 50), (350, 50))
    geo = surface_geology(_map(["A"], [ring]), line)
    assert [(i.unit, i.start_m, i.end_m) for i in geo.intervals] == [("A", 50, 150),
                                                                     ("A", 250, 350)]
    assert [(c.distance_m, c.unit_before, c.unit_after) for c in geo.contacts] == [
        (50, None, "A"), (150, "A", None), (250, None, "A"), (350, "A", None)]
    geo = surface_geology(_map(["A", "B"], [ring, box(100, 25, 200, 75)]), line)
    assert [(i.unit, i.start_m, i.end_m) for i in geo.intervals] == [
        ("A", 50, 150), ("B", 150, 250), ("A", 250, 350)]


def test_line_along_a_contact_makes_no_spurious_unit():
    md = _map(["A", "B"], [box(0, 0, 100, 100), box(100, 0, 200, 100)])
    # In A, then 30 m along the shared boundary x = 100, then into B.
    line = _line((50, 20), (100, 20), (100, 50), (150, 50))
    geo = surface_geology(md, line)
    assert [i.unit for i in geo.intervals] == ["A", "B"]
    assert len(geo.contacts) == 1
    assert geo.contacts[0].distance_m in (pytest.approx(50.0), pytest.approx(80.0))
    assert _lengths(geo)["A"] + _lengths(geo)["B"] == pytest.approx(line.length)
    # Wholly along the contact: one unit, not both, and nothing of zero width.
    geo = surface_geology(md, _line((100, 10), (100, 90)))
    assert len(geo.intervals) == 1 and geo.intervals[0].unit in ("A", "B")
    assert geo.contacts == ()


def test_line_through_polygon_vertices():
    diamond = Polygon([(100, 0), (150, 50), (100, 100), (50, 50)])
    md = _map(["A"], [diamond])
    # Grazing the right vertex only: no interval, no contact.
    geo = surface_geology(md, _line((150, -50), (150, 150)), warn=lambda m: None)
    assert geo.intervals == () and geo.contacts == ()
    # Straight through two opposite vertices: one interval of the diagonal's length.
    geo = surface_geology(md, _line((0, 50), (200, 50)))
    assert [(i.unit, i.start_m, i.end_m) for i in geo.intervals] == [("A", 50, 150)]
    # Through the corner where four units meet: only the two diagonal units.
    grid = _map(["A", "B", "C", "D"], [box(0, 0, 100, 100), box(100, 0, 200, 100),
                                       box(0, 100, 100, 200), box(100, 100, 200, 200)])
    geo = surface_geology(grid, _line((0, 0), (200, 200)))
    assert [i.unit for i in geo.intervals] == ["A", "D"]
    assert [(c.unit_before, c.unit_after) for c in geo.contacts] == [("A", "D")]
    assert geo.contacts[0].distance_m == pytest.approx(100 * math.sqrt(2))


def test_many_crossings_of_a_sinuous_polygon():
    xs = np.linspace(0, 2000, 2001)
    band = LineString(np.column_stack([xs, 300 * np.sin(xs / 20.0)])).buffer(15)
    md = _map(["S"], [band])
    line = _line((0, 100), (2000, 100))
    geo = surface_geology(md, line)
    ref = shapely.intersection(line.linestring, band)  # reference: shapely
    ref_parts = shapely.get_parts(shapely.line_merge(ref))
    assert len(geo.intervals) == len(ref_parts) > 20
    assert _lengths(geo)["S"] == pytest.approx(ref.length, abs=1e-6)
    assert all(c.unit_before is None or c.unit_after is None for c in geo.contacts)
    _check_consistent(geo, line)


def test_contact_elevations_come_from_the_profile():
    md = _map(["A", "B"], [box(0, 0, 100, 100), box(100, 0, 200, 100)])
    line = _line((0, 50), (200, 50))
    d = np.linspace(0, 200, 41)
    prof = Profile(d, d, np.full_like(d, 50.0), 1000.0 + 2.0 * d, line, line.crs, 5.0)
    geo = surface_geology(md, line, prof)
    assert geo.contacts[0].elevation_m == pytest.approx(1200.0)


def test_fault_crossings_with_apparent_dip():
    faults = gpd.GeoDataFrame(
        {"dip": [60.0, 30.0], "dip_direction": [90.0, 180.0], "sense": ["thrust", None],
         "name": ["Hollow Fault", "North Fault"]},
        geometry=[LineString([(150, -100), (150, 200)]), LineString([(0, 80), (400, 80)])],
        crs=CRS)
    md = _map(["A"], [box(0, 0, 300, 100)], faults)
    line = _line((0, 50), (300, 50))
    geo = surface_geology(md, line)
    assert len(geo.faults) == 1
    f = geo.faults[0]
    assert (f.distance_m, f.dip, f.dip_direction, f.sense, f.name) == (
        pytest.approx(150.0), 60.0, 90.0, "thrust", "Hollow Fault")
    # Line runs east (azimuth 90), the fault dips east: full dip, descending with distance.
    assert f.apparent_dip == pytest.approx(60.0, abs=1e-9)
    # Oblique line: tan(a) = tan(d) sin(A - strike), strike = dd - 90 (apparent-dip formula,
    # Ragan, Structural Geology: An Introduction to Geometrical Techniques, from memory).
    line = _line((100, 0), (200, 100))
    f = surface_geology(md, line).faults[0]
    expect = math.degrees(math.atan(math.tan(math.radians(60)) * math.sin(math.radians(45))))
    assert f.apparent_dip == pytest.approx(expect, abs=1e-9)
    assert f.distance_m == pytest.approx(50 * math.sqrt(2))
    frames = geology_frames(surface_geology(md, line), line)
    assert list(frames) == ["intervals", "contacts", "faults"]
    assert frames["faults"].geometry.iloc[0].equals_exact(shapely.Point(150, 50), 1e-9)
    assert frames["intervals"].geometry.length.sum() == pytest.approx(line.length)
    assert frames["contacts"].crs == pyproj.CRS(CRS)


def test_line_crossing_no_unit_warns():
    md = _map(["A"], [box(0, 0, 100, 100)])
    said = []
    geo = surface_geology(md, _line((500, 500), (600, 600)), warn=said.append)
    assert geo.intervals == () and geo.contacts == ()
    assert len(said) == 1 and "crosses no mapped unit" in said[0]
    frames = geology_frames(geo, _line((500, 500), (600, 600)))
    assert all(len(f) == 0 for f in frames.values())


# --- reading the map -------------------------------------------------------------------

@pytest.fixture()
def gpkg(tmp_path):
    path = tmp_path / "geology.gpkg"
    units = gpd.GeoDataFrame({"unit": ["A", "B"]}, geometry=[box(0, 0, 100, 100),
                                                            box(100, 0, 200, 100)], crs=CRS)
    pyogrio.write_dataframe(units, path, layer="units")
    # The faults layer is in geographic coordinates: read_map must reproject it.
    to_geo = pyproj.Transformer.from_crs(CRS, "EPSG:4326", always_xy=True)
    lon, lat = to_geo.transform([150.0, 150.0], [-50.0, 150.0])
    faults = gpd.GeoDataFrame({"dip": [70.0], "dip_direction": [270.0], "kind": ["normal"]},
                              geometry=[LineString(zip(lon, lat, strict=True))], crs="EPSG:4326")
    pyogrio.write_dataframe(faults, path, layer="faults")
    return path


def test_read_map_mixed_crs_reprojected_and_said_once(gpkg):
    said = []
    md = read_map(gpkg, "units", "unit", "faults", {"sense": "kind"}, crs=CRS, warn=said.append)
    assert len(said) == 1 and "reprojected" in said[0] and "faults" in said[0]
    assert md.crs == pyproj.CRS(CRS) and md.faults.crs == pyproj.CRS(CRS)
    # Reference: pyproj round trip of the vertices written in EPSG:4326.
    xy = shapely.get_coordinates(md.faults.geometry.iloc[0])
    assert xy == pytest.approx(np.array([[150.0, -50.0], [150.0, 150.0]]), abs=1e-4)
    geo = surface_geology(md, _line((0, 50), (200, 50)))
    assert geo.faults[0].distance_m == pytest.approx(150.0, abs=1e-4)
    assert geo.faults[0].sense == "normal" and geo.faults[0].name is None
    assert md.unit_list == ["A", "B"]


def test_read_map_unknown_layer_lists_layers(gpkg):
    with pytest.raises(MapLayerError, match=r"no layer 'geology' \(layers: units, faults\)"):
        read_map(gpkg, "geology", "unit")
    with pytest.raises(MapLayerError, match=r"no layer 'fault' \(layers: units, faults\)"):
        read_map(gpkg, "units", "unit", "fault")


def test_read_map_unknown_field_lists_fields(gpkg):
    with pytest.raises(MapLayerError, match=r"no unit field 'formation' \(fields: unit\)"):
        read_map(gpkg, "units", "formation")
    with pytest.raises(MapLayerError, match=r"no fault field 'dipdir' \(fields: dip, "
                                            r"dip_direction, kind\)"):
        read_map(gpkg, "units", "unit", "faults", {"dip_direction": "dipdir"}, crs=CRS,
                 warn=lambda m: None)


def test_read_map_missing_or_unreadable_file(tmp_path):
    with pytest.raises(MapLayerError, match="no such map file"):
        read_map(tmp_path / "nothing.gpkg", "units", "unit")
    bad = tmp_path / "bad.gpkg"
    bad.write_text("not a geopackage")
    with pytest.raises(MapLayerError, match="bad.gpkg: not a readable map file"):
        read_map(bad, "units", "unit")


@pytest.mark.filterwarnings("ignore:.crs. was not provided")
def test_read_map_wrong_geometry_and_no_crs(tmp_path):
    path = tmp_path / "m.gpkg"
    pts = gpd.GeoDataFrame({"unit": ["A"]}, geometry=[shapely.Point(0, 0)], crs=CRS)
    pyogrio.write_dataframe(pts, path, layer="points")
    with pytest.raises(MapLayerError, match="'points': holds Point features; expected Polygon"):
        read_map(path, "points", "unit")
    nocrs = gpd.GeoDataFrame({"unit": ["A"]}, geometry=[box(0, 0, 1, 1)])
    pyogrio.write_dataframe(nocrs, path, layer="nocrs")
    said = []
    md = read_map(path, "nocrs", "unit", crs=CRS, warn=said.append)
    assert md.crs == pyproj.CRS(CRS) and len(said) == 1 and "no CRS" in said[0]


def test_overlapping_polygons_first_feature_wins():
    md = _map(["A", "B"], [box(0, 0, 100, 100), box(50, 0, 150, 100)])
    geo = surface_geology(md, _line((0, 50), (150, 50)))
    assert [(i.unit, i.start_m, i.end_m) for i in geo.intervals] == [("A", 0, 100),
                                                                     ("B", 100, 150)]


def test_line_in_another_crs_is_measured_in_its_own():
    # Map in WGS 84 / UTM 11N, line in NAD83 / UTM 11N: the map is reprojected to the line.
    md = _map(["A", "B"], [box(500000, 4100000, 500100, 4100100),
                           box(500100, 4100000, 500300, 4100100)])
    line = SectionLine(np.array([[499990.0, 4100050.0], [500310.0, 4100050.0]]),
                       pyproj.CRS("EPSG:26911"), "N")
    said = []
    geo = surface_geology(md, line, warn=said.append)
    assert len(said) == 1 and "CRS differs" in said[0]
    # Reference: the polygons reprojected with geopandas/pyproj, intersected by shapely.
    ref = md.units.to_crs("EPSG:26911")
    for u in ("A", "B"):
        length = shapely.intersection(line.linestring,
                                      ref.geometry[ref.unit == u].iloc[0]).length
        assert _lengths(geo)[u] == pytest.approx(length, abs=1e-6)


def test_line_near_a_fault_that_it_does_not_cross():
    # Regression (issue 8): the fault's envelope meets the line, the fault does not: the
    # intersection is empty and the crossing list must be empty too (it raised IndexError).
    faults = gpd.GeoDataFrame(
        {"dip": [60.0, 45.0], "dip_direction": [90.0, 270.0], "sense": ["thrust", "normal"],
         "name": ["Diagonal Fault", "Crossed Fault"]},
        geometry=[LineString([(0, 200), (200, 0)]), LineString([(250, -50), (250, 250)])],
        crs=CRS)
    md = _map(["A"], [box(0, 0, 400, 300)], faults)
    near = _line((150, 150), (220, 150))  # envelope overlaps the diagonal fault's only
    assert surface_geology(md, near).faults == ()
    # with a crossed fault among the candidates, only that one is found (shapely reference)
    line = _line((150, 150), (300, 150))
    found = surface_geology(md, line).faults
    assert [f.name for f in found] == ["Crossed Fault"]
    assert found[0].distance_m == pytest.approx(100.0)
