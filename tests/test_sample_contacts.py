"""On the sample area, the contacts found along each section line lie within one DEM pixel
of the sample model's true contacts.

Self-consistency test on invented data: the sample area's map was made from the
same invented model (``mapsection.sample.SAMPLE_MODEL``). The true contacts are
found independently of the map: the model's unit is evaluated at the DEM's
ground surface every metre along the line and each change of unit is a contact.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

# The sample area is committed: a missing one fails here rather than skipping the test.
SAMPLE = Path(__file__).resolve().parents[1] / "sample_area" / "project.toml"


def _true_contacts(model, dem, line, step=1.0):
    """(distance, unit before, unit after) where the model's unit at the ground changes."""
    d = np.arange(0.0, line.length, step)
    x, y = line.point_at(d)
    z = dem.sample(x, y)
    units = model.unit_at(x, y, z)
    ok = np.isfinite(z)
    change = np.flatnonzero((units[1:] != units[:-1]) & ok[1:] & ok[:-1])
    return [(0.5 * (d[i] + d[i + 1]), units[i], units[i + 1]) for i in change]


@pytest.fixture(scope="module")
def area():
    from mapsection.project import load_project
    from mapsection.readers.dem import Dem
    from mapsection.readers.map import read_map

    project = load_project(SAMPLE)
    map_data = read_map(project.map_path, project.units_layer, project.unit_field,
                        project.faults_layer, project.fault_fields, crs=project.crs)
    with Dem.open(project.dem_path) as dem:
        yield project, map_data, dem


def test_contacts_within_one_pixel_of_the_model(area):
    from mapsection.geology import surface_geology
    from mapsection.line import SectionLine
    from mapsection.sample import SAMPLE_MODEL
    from mapsection.topo_profile import profile

    project, map_data, dem = area
    pixel = dem.pixel_size
    assert len(project.sections) >= 2
    for spec in project.sections:
        line = SectionLine(np.asarray(spec.line, float), project.crs, spec.name)
        geo = surface_geology(map_data, line, profile(dem, line, warn=lambda m: None))
        found = [(c.distance_m, c.unit_before, c.unit_after) for c in geo.contacts
                 if c.unit_before is not None and c.unit_after is not None]
        true = _true_contacts(SAMPLE_MODEL, dem, line)
        assert len(true) >= 3, f"section {spec.name}: too few contacts to test"
        # Every contact on the map lies within a pixel of a true contact of the same units...
        for d, before, after in found:
            near = [t for t in true if abs(t[0] - d) <= pixel and t[1:] == (before, after)]
            assert near, f"section {spec.name}: contact {before}/{after} at {d:.1f} m not " \
                         f"within {pixel:g} m of a true contact"
        # ... and every true contact is found, within a pixel, with the same units.
        for d, before, after in true:
            near = [f for f in found if abs(f[0] - d) <= pixel and f[1:] == (before, after)]
            assert near, f"section {spec.name}: true contact {before}/{after} at {d:.1f} m " \
                         "missing from the map's contacts"
