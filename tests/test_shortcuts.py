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
