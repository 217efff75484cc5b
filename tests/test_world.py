"""A build reads only the sections' neighbourhood of a large map, and that changes no result.

The world is an invented fold belt from the benchmark's generator
(:mod:`mapsection.bench.world`), small enough to build in seconds but wider than the
neighbourhood a build reads. The references are an unfiltered read of the same
GeoPackage (every feature, through the vector driver) with shapely's (GEOS) intersection
test, and the same section built from a copy of the world cut to 3 km around its line.
"""

from __future__ import annotations

import numpy as np
import pytest
import shapely

from mapsection.bench import world as bench_world
from mapsection.build import build_section
from mapsection.checks import run_checks
from mapsection.project import load_project
from mapsection.readers.map import read_map
from mapsection.session import load_inputs, read_window

# 12 km square, 2 km line: the neighbourhood read (about 8 km square) is smaller than the map.
SMALL = {"size": 1200, "polygons": 3000, "attitudes": 4000, "length": 2000.0}


@pytest.fixture(scope="module")
def worlds(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("world")
    whole = bench_world.generate_world(tmp / "whole", **SMALL)
    return whole, bench_world.cut_world(whole, tmp / "cut")


def _build(project_path):
    project = load_project(project_path, lambda m: None)
    spec = project.sections[0]
    inputs = load_inputs(project, lambda m: None, [spec])
    try:
        draft = build_section(project, spec, inputs=inputs, warn=lambda m: None)
        partial = inputs.map_data.partial
        n_att = len(inputs.attitudes)
    finally:
        inputs.close()
    report = run_checks(draft, project.thresholds, pin=spec.pin, loose=spec.loose,
                        warn=lambda m: None)
    return draft, report.statuses, partial, n_att


def test_section_from_the_whole_world_equals_the_section_from_the_cut_world(worlds):
    whole, cut = worlds
    d_whole, s_whole, partial, n_whole = _build(whole.project)
    d_cut, s_cut, _, _ = _build(cut.project)
    assert partial  # the whole world's map was read through a window that left polygons out
    assert n_whole < whole.attitudes  # and only the attitudes within it were kept
    assert len(d_whole.horizons) == len(d_cut.horizons) > 0
    for a, b in zip(d_whole.horizons, d_cut.horizons, strict=True):
        assert (a.top_of, a.above_ground, a.block) == (b.top_of, b.above_ground, b.block)
        ca, cb = np.asarray(a.geometry.coords), np.asarray(b.geometry.coords)
        assert ca.shape == cb.shape
        np.testing.assert_allclose(ca, cb, atol=1e-6, rtol=0)
    assert s_whole == s_cut


def test_window_read_returns_the_polygons_crossing_the_corridor(worlds):
    whole, _ = worlds
    project = load_project(whole.project, lambda m: None)
    spec = project.sections[0]
    window = read_window(project, [spec])
    assert window is not None
    args = (project.map_path, project.units_layer, project.unit_field)
    part = read_map(*args, crs=project.crs, warn=lambda m: None, bbox=window)
    full = read_map(*args, crs=project.crs, warn=lambda m: None)
    assert part.partial and not full.partial
    assert len(part.unit_geoms) < len(full.unit_geoms)
    np.testing.assert_allclose(part.layer_bounds(), shapely.total_bounds(full.unit_geoms))
    corridor = shapely.buffer(shapely.linestrings(project.section_line(spec).vertices),
                              spec.corridor)

    def crossing(md):
        hit = shapely.intersects(md.unit_geoms, corridor)  # GEOS, every polygon tested
        return sorted((str(n), g.wkb_hex) for n, g in
                      zip(md.unit_names[hit], shapely.normalize(md.unit_geoms[hit]),
                          strict=True))

    assert crossing(part) == crossing(full)
    assert len(crossing(full)) > 0


def test_no_window_when_a_unit_takes_its_thickness_from_the_map(worlds):
    """thickness = "map" is measured on the whole map, whatever sections are built."""
    whole, _ = worlds
    text = whole.project.read_text("utf-8").replace("thickness = 200.0", 'thickness = "map"', 1)
    path = whole.project.with_name("project_map_thickness.toml")
    path.write_text(text, "utf-8")
    project = load_project(path, lambda m: None)
    assert read_window(project, project.sections) is None
    assert read_window(load_project(whole.project, lambda m: None), []) is None


def test_world_benchmark_runs_on_a_tiny_world(capsys):
    """Smoke test: the benchmark generates, cuts, builds both and prints the ratios."""
    assert bench_world.main(["--size", "300", "--polygons", "200", "--attitudes", "300",
                             "--length", "1000"]) == 0
    out = capsys.readouterr().out
    assert "whole / cut" in out
    assert "| whole world |" in out and "| cut world |" in out


def test_window_read_keeps_every_fault():
    """The faults layer is read whole: a [[fault]] table finds its fault wherever it is
    (reference: the unfiltered read of the sample map)."""
    from pathlib import Path

    sample = Path(__file__).resolve().parents[1] / "sample_area"
    project = load_project(sample / "project.toml", lambda m: None)
    args = (project.map_path, project.units_layer, project.unit_field, "faults")
    full = read_map(*args, crs=project.crs, warn=lambda m: None)
    x0, y0, x1, y1 = shapely.total_bounds(full.unit_geoms)
    corner = (x0, y0, x0 + 0.1 * (x1 - x0), y0 + 0.1 * (y1 - y0))
    part = read_map(*args, crs=project.crs, warn=lambda m: None, bbox=corner)
    assert len(part.unit_geoms) < len(full.unit_geoms)
    assert len(part.fault_geoms) == len(full.fault_geoms) > 0
    assert part.fault_names() == full.fault_names()
