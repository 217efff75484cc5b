"""Units that are not layers: cover (a veneer under the ground) and intrusive bodies (drawn to
a depth with vertical contacts), in the construction, the checks, the column, the outputs.

The references: the geometric definition of a veneer of vertical thickness t (the band
between the ground z_g(x) and z_g(x) - t; its area is t times its horizontal length,
Cavalieri's principle); an invented analytic homocline whose contacts are where its planes
meet the ground, with the apparent dip in closed form, tan a = tan d sin b (Ragan,
Structural Geology: An Introduction to Geometrical Techniques).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import shapely
from conftest import CAKE_COLUMN, LayerCake, apparent_dip_deg
from shapely.geometry import LineString

from mapsection.checks import run_checks
from mapsection.construct import build_draft
from mapsection.construct.cover import bedrock_geology
from mapsection.settings import Thresholds
from mapsection.stratigraphy import COVER_THICKNESS, INTRUSIVE_DEPTH, Column, Unit

# Thick top and bottom units: neither the top of the column nor its base reaches the ground
# along the line, so every contact the section predicts is one the map shows.
COLUMN = Column((Unit("A", 3000.0), *CAKE_COLUMN.units[1:], Unit("E", 3000.0)))
CAKE = LayerCake(column=COLUMN, anchor_m=4100.0)
VALLEY = (3700.0, 4400.0)  # alluvium over the valley floor, hiding the top of B
STOCK = (5500.0, 6200.0)
QAL = Unit("Qal", 15.0, kind="cover", age="Quaternary")
GRANITE = Unit("Gr", math.nan, kind="intrusive")


def _column(*extra: Unit) -> Column:
    return Column((*extra, *COLUMN.units))


def _build(column: Column, cover=(), intrusive=(), cake: LayerCake = CAKE, method="kink"):
    line, prof, geo, dips = cake.section(cover=cover, intrusive=intrusive)
    return build_draft(line, prof, geo, dips, column, method=method), cake


def _polygons(draft, unit):
    return [u.geometry for u in draft.units if u.unit == unit]


def test_cake_apparent_dip_closed_form():
    # Ragan: tan a = tan d sin b; a line down the dip (b = 90) shows the true dip, one along
    # the strike (b = 0) shows none; b = 30 halves tan d.
    assert apparent_dip_deg(25.0, 90.0) == pytest.approx(25.0)
    assert apparent_dip_deg(25.0, 0.0) == pytest.approx(0.0)
    assert math.tan(math.radians(apparent_dip_deg(40.0, 30.0))) == pytest.approx(
        0.5 * math.tan(math.radians(40.0)))
    # the hidden contact really lies under the valley's alluvium
    hidden = [x for x, top in CAKE.contacts() if VALLEY[0] < x < VALLEY[1]]
    assert [top for x, top in CAKE.contacts() if x in hidden] == ["B"]


@pytest.mark.parametrize("method", ["kink", "arc"])
def test_veneer_lies_between_the_ground_and_its_thickness_below(method):
    draft, cake = _build(_column(QAL), cover=[("Qal", *VALLEY)], method=method)
    polys = _polygons(draft, "Qal")
    assert polys, "no veneer drawn"
    t = QAL.thickness
    for poly in polys:
        xy = shapely.get_coordinates(poly)
        g = cake.ground(xy[:, 0])
        # geometric definition: every vertex between the ground and t below it
        assert np.all(xy[:, 1] <= g + 1e-6) and np.all(xy[:, 1] >= g - t - 1e-6)
        # Cavalieri: a band of vertical thickness t over a horizontal length L has area t L
        x0, _, x1, _ = poly.bounds
        assert poly.area == pytest.approx(t * (x1 - x0), rel=1e-6)
        assert (x0, x1) == pytest.approx(VALLEY, abs=1e-6)
    # not carried to depth: nothing of it lies more than t below the lowest ground
    zs = draft.profile.z[(draft.profile.distance >= VALLEY[0])
                         & (draft.profile.distance <= VALLEY[1])]
    assert min(p.bounds[1] for p in polys) >= float(zs.min()) - t - 1e-6


def test_default_veneer_is_the_tools_default():
    cover = Unit("Qal", COVER_THICKNESS, kind="cover")
    draft, _ = _build(_column(cover), cover=[("Qal", *VALLEY)])
    assert any("10 m thick (the tool's default)" in line for line in draft.log)


@pytest.mark.parametrize("method", ["kink", "arc"])
def test_alluvium_hiding_a_contact_still_gives_the_bedrock_contact(method):
    draft, cake = _build(_column(QAL), cover=[("Qal", *VALLEY)], method=method)
    true = [x for x, top in cake.contacts() if top == "B"]
    assert len(true) == 1 and VALLEY[0] < true[0] < VALLEY[1]
    from mapsection.checks.topography import ground_line, section_ground_contacts

    predicted = section_ground_contacts(draft, ground_line(draft))["B"]
    # truth: where the analytic top of B meets the ground (closed form, apparent dip
    # tan a = tan d sin b); tolerance 2 DEM pixels (10 m), the tool's default contact
    # threshold in pixels (Thresholds.contact_rms_pixels)
    tol = Thresholds().contact_rms_pixels * draft.profile.pixel_size
    assert len(predicted) == 1 and abs(predicted[0] - true[0]) <= tol
    # the cover's boundaries positioned nothing: none is a construction residual
    assert all(not (VALLEY[0] - 1 < r.distance_m < VALLEY[1] + 1) for r in draft.residuals)
    assert any("cover unit Qal" in line and "not bedrock contacts" in line for line in draft.log)


def test_cover_boundaries_are_no_bedrock_contacts():
    _, cake = _build(_column(QAL), cover=[("Qal", *VALLEY)])
    line, prof, geo, dips = cake.section(cover=[("Qal", *VALLEY)])
    bedrock = bedrock_geology(geo, _column(QAL))
    assert {c.distance_m for c in geo.contacts} - {c.distance_m for c in bedrock.contacts} \
        == set(VALLEY)
    assert all(iv.unit != "Qal" for iv in bedrock.intervals)


def test_topography_counts_the_concealed_stretch_and_passes():
    draft, cake = _build(_column(QAL), cover=[("Qal", *VALLEY)])
    report = run_checks(draft)
    topo = report.topography
    assert topo.status == "pass", topo.reasons
    # the concealed stretch: counted and listed, not a disagreement
    assert topo.concealed_length_m == pytest.approx(VALLEY[1] - VALLEY[0])
    assert [(c.unit, c.kind) for c in topo.concealed] == [("Qal", "cover")]
    assert not topo.disagreements
    # the section's top of B under the alluvium: listed apart, not unpaired
    assert [c.top_of for c in topo.concealed_section_contacts] == ["B"]
    assert not topo.unpaired_map_contacts and not topo.unpaired_section_contacts
    # the map's contacts at the cover's boundaries are neither paired nor counted
    bounds = set(VALLEY)
    assert all(m.map_distance_m not in bounds for m in topo.contact_misfits)
    assert topo.n_map_contacts == len([x for x, _ in cake.contacts()]) - 1
    # the unit agreement compares bedrock only where it crops out
    assert topo.compared_length_m == pytest.approx(
        float(draft.line.length) - (VALLEY[1] - VALLEY[0]), abs=2 * cake.step)
    assert any("cover (Qal)" in n for n in report.notes)
    from mapsection.checks.summary import summary_lines

    text = "\n".join(summary_lines(report))
    assert "700 m concealed under cover" in text and "cover not restored (Qal)" in text


def test_intrusive_stock_vertical_sides_to_its_depth_and_left_out_of_the_balance():
    draft, cake = _build(_column(GRANITE), intrusive=[("Gr", *STOCK)])
    (stock,) = _polygons(draft, "Gr")
    depth = INTRUSIVE_DEPTH  # the tool's default (GRANITE gives none)
    # vertical contacts at the mapped ones, from the ground down to depth below it
    for x in STOCK:
        side = LineString([(x, float(cake.ground(x))), (x, float(cake.ground(x)) - depth)])
        assert stock.boundary.buffer(1e-6).covers(side)
    # within the stretch the body spans exactly [ground - depth, ground] (geometric definition)
    for x in np.linspace(STOCK[0] + 1, STOCK[1] - 1, 7):
        cut = stock.intersection(LineString([(x, -1e4), (x, 1e4)]))
        lo, hi = cut.bounds[1], cut.bounds[3]
        # the ground line: the profile, linear between its samples
        assert hi == pytest.approx(float(draft.profile.elevation_at(np.array([x]))[0]), abs=1e-6)
        assert hi - lo == pytest.approx(depth, abs=1e-6)
    # the layered horizons run on beneath: the same as a build without the stock
    plain, _ = _build(COLUMN)
    assert [h.geometry.wkt for h in draft.horizons] == [h.geometry.wkt for h in plain.horizons]
    report = run_checks(draft)
    assert "Gr" not in [u.unit for u in report.area_balance.units]
    assert "Gr" not in [u.unit for u in report.restoration.units]
    assert report.restoration.status == "pass" and report.area_balance.status == "pass"
    assert any("intrusive bodies not restored" in n for n in report.notes)
    assert any("intrusive unit Gr" in line and "300 m below the ground (the tool's default)"
               in line for line in draft.log)
    # its stretch of ground: not compared, reported apart
    topo = report.topography
    assert topo.intrusive_length_m == pytest.approx(STOCK[1] - STOCK[0])
    assert topo.status == "pass", topo.reasons


def test_intrusive_depth_setting_and_frame():
    shallow = Unit("Gr", math.nan, kind="intrusive", depth=120.0)
    draft, cake = _build(_column(shallow), intrusive=[("Gr", *STOCK)])
    (stock,) = _polygons(draft, "Gr")
    low = float(np.min(cake.ground(np.linspace(*STOCK, 100)))) - 120.0
    assert stock.bounds[1] == pytest.approx(low, abs=1.0)
    assert stock.bounds[1] >= draft.base_elevation_m


def test_two_cover_units_touching_the_younger_drawn_on_top():
    # Stated behaviour (docs/construction.md): several cover units are allowed; each is a
    # veneer where the map has it; where two meet, the younger is drawn over the older.
    slide = Unit("Qls", 30.0, kind="cover")
    column = _column(QAL, slide)
    mid = 0.5 * (VALLEY[0] + VALLEY[1])
    draft, cake = _build(column, cover=[("Qls", VALLEY[0], mid), ("Qal", mid, VALLEY[1])])
    names = [u.unit for u in draft.units]
    assert names.index("Qal") > names.index("Qls")  # drawn later: on top
    (qls,) = _polygons(draft, "Qls")
    (qal,) = _polygons(draft, "Qal")
    assert qls.bounds[0] == pytest.approx(VALLEY[0]) and qls.bounds[2] == pytest.approx(mid)
    assert qal.area == pytest.approx(15.0 * (VALLEY[1] - mid), rel=1e-6)
    assert qls.area == pytest.approx(30.0 * (mid - VALLEY[0]), rel=1e-6)
    assert run_checks(draft).topography.concealed_length_m == pytest.approx(
        VALLEY[1] - VALLEY[0])


def test_section_gpkg_carries_the_veneer_and_the_figure_says_cover(tmp_path):
    import pyogrio

    from mapsection.export import read_section_gpkg, write_section_gpkg
    from mapsection.render.section import _legend_rows, section_figure

    column = _column(QAL, GRANITE)
    draft, _ = _build(column, cover=[("Qal", *VALLEY)], intrusive=[("Gr", *STOCK)])
    path = write_section_gpkg(draft, tmp_path / "section.gpkg")
    units = pyogrio.read_dataframe(path, layer="units")
    assert {"Qal", "Gr"} <= set(units["unit"])
    veneer = units[units["unit"] == "Qal"].geometry.iloc[0]
    assert veneer.area == pytest.approx(15.0 * (VALLEY[1] - VALLEY[0]), rel=1e-6)
    # read back as an edited section: the checks still leave the cover and stock out
    edited = read_section_gpkg(path, column, draft.line, profile=draft.profile)
    report = run_checks(edited)
    assert report.topography.concealed_length_m == pytest.approx(VALLEY[1] - VALLEY[0])
    assert report.topography.status == "pass", report.topography.reasons
    rows = [r[0] for r in _legend_rows(draft, {n: "#cccccc" for n in column.names}, 0.0, False)]
    assert any("cover, not carried to depth" in r for r in rows)
    assert any("intrusive, drawn to 300 m below the ground" in r for r in rows)
    fig = section_figure(draft)
    assert any(c.get_gid() == "cover-and-intrusive-units" for c in fig.axes[0].collections)


def test_column_adjacency_skips_cover_and_intrusive(tmp_path):
    # The invented tilted layer-cake of tests/test_thickness.py draped on matplotlib's sample
    # DEM; a cover and an intrusive unit listed between U2 and U3 in the column must not hide
    # the U2|U3 contact: thicknesses within 5 % of the truth as without them.
    from test_thickness import DIP, DIP_DIRECTION, NAMES, THICK, _below, _drape, _jacksboro

    from mapsection.thickness import estimate_column, stratigraphy_toml

    z0 = float(np.median(_jacksboro()))
    column, md, dem, att = _drape(
        tmp_path, lambda x, y, z: _below(x, y, z, DIP, DIP_DIRECTION, z0),
        lambda x, y: (np.full(len(x), DIP_DIRECTION - 90.0), np.full(len(x), DIP)))
    try:
        mixed = Column((*column.units[:2], QAL, GRANITE, *column.units[2:]))
        est = estimate_column(mixed, md, dem.sample, att, dem.pixel_size, bootstrap=0)
        # a unit on the map whose neighbours in the column are not: why names them
        lone = Column((column.units[0], Unit("X1", 50.0), column.units[2],
                       Unit("X2", 50.0), *column.units[4:]))
        alone = estimate_column(lone, md, dem.sample, att, dem.pixel_size, bootstrap=0)
    finally:
        dem.close()
    for name, true in zip(NAMES, THICK, strict=True):
        if true is not None:  # truth: the invented layer-cake's thicknesses
            assert est.unit(name).thickness == pytest.approx(true, rel=0.05), name
    for name in ("Qal", "Gr"):
        assert est.unit(name).kind == "none" and "not a layer" in est.unit(name).why
    assert alone.unit(NAMES[2]).why == ("no contact with X1 (above) or X2 (below), its "
                                        "neighbours among the layered units of the column, "
                                        "is mapped")
    text = stratigraphy_toml(mixed, est)
    assert 'kind = "cover"\nthickness = 15.0' in text and 'kind = "intrusive"\ndepth = 300.0' \
        in text


def test_sample_area_with_alluvium_and_a_stock_builds_and_says_so(sample_copy):
    # The sample area (invented) with an alluvium polygon over the valley section A crosses
    # at about 2.8-3.6 km (it hides a Dunmarrow Dolomite | Talvo Limestone contact) and a
    # granite stock at about 5.6-6.1 km, both cut into a copy of its map.
    import json

    import pyogrio
    from conftest import point_on_line, with_map_units
    from shapely.geometry import Point

    from mapsection.build import build_project

    s = sample_copy
    a = [(604658, 5218819), (612195, 5213542)]
    valley = LineString([point_on_line(a, 2900), point_on_line(a, 3450)]).buffer(120)
    stock = Point(point_on_line(a, 5850)).buffer(260)
    with_map_units(s.map, s.root / "geology2.gpkg",
                   {"Valley alluvium": valley, "Kell Granite": stock})
    s.edit_project('path = "geology.gpkg"', 'path = "geology2.gpkg"')
    s.edit_project("[[stratigraphy]]\n", '[[stratigraphy]]\nunit = "Valley alluvium"\n'
                   'kind = "cover"\nthickness = 25.0\nage = "Quaternary"\n\n[[stratigraphy]]\n'
                   'unit = "Kell Granite"\nkind = "intrusive"\n\n[[stratigraphy]]\n')
    (folder,) = build_project(s.project, s.out, section="A", workers=1)
    log = (folder / "build.log").read_text("utf-8")
    assert "cover unit Valley alluvium" in log and "intrusive unit Kell Granite" in log
    assert "concealed under cover" in log and "intrusive bodies not restored" in log
    units = pyogrio.read_dataframe(folder / "section.gpkg", layer="units")
    assert {"Valley alluvium", "Kell Granite"} <= set(units["unit"])
    checks = json.loads((folder / "checks.json").read_text("utf-8"))
    topo = checks["topography"]
    assert topo["concealed_length_m"] > 500 and topo["intrusive_length_m"] > 400
    # the given column passes the topography test on the sample area; with the alluvium
    # and the stock it still does (their stretches are not compared)
    assert topo["status"] == "pass"
    assert "Concealed ground" in (folder / "report.html").read_text("utf-8")
