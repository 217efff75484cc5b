"""The shortcuts that make a build's cost follow the section line change no result.

Each shortcut is compared with the plain way of doing the same job on the sample area
(invented data): the elevations sampled only inside the section corridors against those
sampled under every attitude, and so on. The reference for the geometry tests is
shapely's own distance and intersection (GEOS).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
import shapely

from mapsection.attitudes import with_ground_elevations, within_corridors
from mapsection.build import build_section
from mapsection.checks import run_checks
from mapsection.project import load_project
from mapsection.session import load_inputs

SAMPLE = Path(__file__).resolve().parents[1] / "sample_area" / "project.toml"


@pytest.fixture(scope="module")
def project():
    return load_project(SAMPLE)


def _horizon_coords(draft):
    return [(h.top_of, h.above_ground, h.block, np.asarray(h.geometry.coords))
            for h in draft.horizons]


def _statuses(project, spec, draft):
    report = run_checks(draft, project.thresholds, pin=spec.pin, loose=spec.loose)
    return report.statuses


def test_corridor_elevations_equal_the_whole_map_sampling(project):
    """Only the attitudes inside a section corridor are sampled; their z is the same."""
    inputs = load_inputs(project)
    try:
        full, _ = with_ground_elevations(inputs.attitudes, inputs.dem)
        lines = [project.section_line(s) for s in project.sections]
        corridors = [s.corridor for s in project.sections]
        inputs.sample_corridors(lines, corridors)
        z = np.asarray(inputs.attitudes.z, float)
        inside = within_corridors(inputs.attitudes, lines, corridors)
    finally:
        inputs.close()
    # Reference: shapely's distance from each point to each line (GEOS).
    pts = shapely.points(np.asarray(full.x), np.asarray(full.y))
    ref = np.zeros(len(pts), bool)
    for line, c in zip(lines, corridors, strict=True):
        ref |= shapely.distance(pts, shapely.linestrings(line.vertices)) <= c
    assert np.array_equal(inside, ref)
    assert 0 < inside.sum() < len(inside)  # the sample area has attitudes outside both
    assert np.all(np.isnan(z[~inside]))
    assert np.array_equal(z[inside], np.asarray(full.z)[inside])


@pytest.mark.parametrize("name", ["A"])
def test_section_built_with_corridor_elevations_equals_the_plain_build(project, name):
    """Horizons within 1e-6 m and the same check results as with every attitude sampled."""
    spec = project.section(name)
    inputs = load_inputs(project)
    try:
        fast = build_section(project, spec, inputs=inputs)
        assert np.isnan(np.asarray(inputs.attitudes.z, float)).any()  # the shortcut was taken
    finally:
        inputs.close()
    inputs = load_inputs(project)
    try:
        # The plain way: every attitude of the map sampled before the section is built.
        inputs.attitudes, _ = with_ground_elevations(inputs.attitudes, inputs.dem)
        plain = build_section(project, spec, inputs=inputs)
    finally:
        inputs.close()
    a, b = _horizon_coords(fast), _horizon_coords(plain)
    assert [h[:3] for h in a] == [h[:3] for h in b]
    for (*_, ca), (*_, cb) in zip(a, b, strict=True):
        assert ca.shape == cb.shape
        np.testing.assert_allclose(ca, cb, atol=1e-6, rtol=0)
    np.testing.assert_array_equal(fast.dips.elevation_m, plain.dips.elevation_m)
    assert _statuses(project, spec, fast) == _statuses(project, spec, plain)


# --- reading attitudes from CSV: pandas' C engine against the csv module, row by row --------

BAD_ROWS = (
    "id;x;y;strike;dip;overturned\n"
    "a1;608086.1;5221664.9;208;14;no\n"
    "\n"
    "a2;609902.0; 5215925.6 ;234;95;yes\n"      # dip outside 0-90
    " ; ; ; ; ; \n"                             # blank: skipped, its line still counted
    "a3;abc;5215925.6;234;14\n"                 # x not a number, a short row
    "\"a;4\";609000;5216000;12;30;maybe;\n"     # quoted delimiter, bad flag, trailing delimiter
    "a5;609100;5216100;;30;0\n"                 # blank strike
    ";609200;5216200;400;30;1\n"                # blank id, strike outside 0-360
    "a7;609300;5216300;45;30;T\n"
)


def _read_both(path, monkeypatch):
    """read_attitudes with the C engine, then with the csv module: results and messages."""
    import mapsection.readers.attitude_csv as csv_reader
    import mapsection.readers.attitudes as reader

    fast, slow = reader._read_csv, reader._read_csv_rows
    fell_back: list[Path] = []

    def rows_counted(p):
        fell_back.append(p)
        return slow(p)

    out = []
    for read in (fast, slow):
        monkeypatch.setattr(reader, "_read_csv", read)
        monkeypatch.setattr(csv_reader, "_read_csv_rows", rows_counted)
        said: list[str] = []
        att = reader.read_attitudes(path, warn=said.append)
        out.append((att, said, read(Path(path))))
    return out, bool(fell_back)


@pytest.mark.parametrize("which", ["sample", "bad rows", "multi-line field", "long row"])
def test_csv_reader_returns_what_the_row_by_row_reader_did(which, tmp_path, monkeypatch):
    """The same columns, line numbers, attitudes and messages as the csv module's reading
    (Python's csv module is the reference; the second and third files fall back to it)."""
    if which == "sample":
        path = SAMPLE.parent / "attitudes.csv"
    else:
        text = {"bad rows": BAD_ROWS,
                "multi-line field": BAD_ROWS.replace('"a;4"', '"a\n4"'),
                "long row": BAD_ROWS.replace("a7;", "a7;1;2;3;4;5;6;7;")}[which]
        path = tmp_path / "attitudes.csv"
        path.write_text(text, encoding="utf-8", newline="")
    both, fell_back = _read_both(path, monkeypatch)
    (fast, fast_said, fast_table), (slow, slow_said, slow_table) = both
    # The odd files are left to the csv module; the others never reach it.
    assert fell_back == (which in ("multi-line field", "long row"))
    assert fast_table.columns == slow_table.columns
    assert list(fast_table.rows) == list(slow_table.rows)
    assert fast_table.repeated == slow_table.repeated
    assert fast_said == slow_said
    for name in ("id", "x", "y", "z", "strike", "dip", "overturned"):
        np.testing.assert_array_equal(getattr(fast, name), getattr(slow, name))
    assert fast.source == slow.source
    if which == "bad rows":
        assert any(", line 4: dip 95 is outside 0-90" in m for m in fast_said)
        assert len(fast) == 2  # a1 and a7


# --- surface geology: only the polygons the line crosses ---------------------------------


def _bbox_candidates(map_data, tree, line):
    """The former candidates: every geometry whose bounding box meets the line's."""
    return tree.query(line.linestring)


def _geology_both(map_data, line, monkeypatch):
    import mapsection.geology as geology

    fast = geology.surface_geology(map_data, line)
    with monkeypatch.context() as m:
        m.setattr(geology, "_query_line", _bbox_candidates)
        plain = geology.surface_geology(map_data, line)
    return fast, plain


def test_surface_geology_from_crossed_polygons_equals_the_bounding_box_candidates(
        project, monkeypatch):
    """The sample map along its sections and along random lines, and a chequerboard of
    small polygons along a diagonal line (whose box holds polygons it never crosses):
    the same intervals, contacts and fault crossings (reference: the bounding-box
    candidates, every one intersected by GEOS)."""
    import geopandas as gpd

    from mapsection.line import SectionLine
    from mapsection.mapdata import MapData
    from mapsection.readers.map import read_map

    map_data = read_map(project.map_path, project.units_layer, project.unit_field,
                        project.faults_layer, project.fault_fields, crs=project.crs)
    lines = [project.section_line(s) for s in project.sections]
    rng = np.random.default_rng(4)
    left, bottom, right, top = map_data.units.total_bounds
    for _ in range(10):
        v = np.column_stack([rng.uniform(left, right, 3), rng.uniform(bottom, top, 3)])
        lines.append(SectionLine(v, project.crs, "R"))
    for line in lines:
        fast, plain = _geology_both(map_data, line, monkeypatch)
        assert repr(fast) == repr(plain)  # exact floats; NaN elevations equal too
    # 40 x 40 squares of 100 m, four units in a chequerboard.
    cells = [shapely.box(i * 100.0, j * 100.0, (i + 1) * 100.0, (j + 1) * 100.0)
             for i in range(40) for j in range(40)]
    names = [f"U{(i + 2 * j) % 4}" for i in range(40) for j in range(40)]
    grid = MapData(gpd.GeoDataFrame({"unit": names}, geometry=cells, crs=project.crs),
                   "unit", crs=project.crs)
    diagonal = SectionLine(np.array([[5.0, 7.0], [3990.0, 3960.0]]), project.crs, "D")
    with monkeypatch.context() as m:
        import mapsection.geology as geology

        crossed = len(geology._query_line(grid, grid.unit_tree, diagonal))
        assert crossed < len(_bbox_candidates(grid, grid.unit_tree, diagonal)) / 10
        m.setattr(geology, "_query_line", _bbox_candidates)
    fast, plain = _geology_both(grid, diagonal, monkeypatch)
    assert repr(fast) == repr(plain)
    assert len(fast.contacts) > 40


# --- the section figure: dip ticks as one collection ---------------------------------------


def test_dip_ticks_are_one_collection_with_the_tick_style():
    """One artist for all the ticks (not a line each), in the dip-tick colour and width,
    the poorly constrained ones faded to alpha 0.45 as before (the tool's default style)."""
    import dataclasses

    import matplotlib.colors
    from conftest import hand_draft

    from mapsection.render import colours as C
    from mapsection.render.section import section_figure

    draft = hand_draft(2.0)
    n = len(draft.dips)
    poor = np.arange(n) % 2 == 0
    draft = dataclasses.replace(draft, dips=dataclasses.replace(draft.dips,
                                                                poorly_constrained=poor))
    ax = section_figure(draft).axes[0]
    assert not [ln for ln in ax.get_lines() if (ln.get_gid() or "").startswith("dip-")]
    (ticks,) = [c for c in ax.collections if c.get_gid() == "dip-ticks"]
    assert len(ticks.get_segments()) == n
    rgba = ticks.get_colors()
    np.testing.assert_allclose(rgba[:, :3], [matplotlib.colors.to_rgb(C.DIP_TICK.colour)] * n)
    np.testing.assert_allclose(rgba[:, 3], np.where(poor, 0.45, 1.0))
    np.testing.assert_allclose(ticks.get_linewidths(), C.DIP_TICK.width)
