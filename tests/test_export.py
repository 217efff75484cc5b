"""section.gpkg round trip, the 3D export, and the errors of reading an edited file.

Uses the hand-made draft of test_figure (invented data, self-consistency); the 3D
positions are checked against shapely's own distance and projection (reference).
"""

from __future__ import annotations

import numpy as np
import pyogrio
import pytest
import shapely
from conftest import hand_draft
from shapely.geometry import LineString

from mapsection.errors import MapLayerError, OutputError
from mapsection.export import (
    LAYERS,
    read_section_gpkg,
    section_frames,
    write_section_3d,
    write_section_gpkg,
)

# Section space has no CRS by design; the files written directly below say so too.
pytestmark = pytest.mark.filterwarnings("ignore:'crs' was not provided")


@pytest.fixture(scope="module")
def written(tmp_path_factory):
    draft = hand_draft(2.0)
    path = tmp_path_factory.mktemp("gpkg") / "section.gpkg"
    write_section_gpkg(draft, path)
    return draft, path


def test_layers_and_fields(written):
    _, path = written
    layers = dict(pyogrio.list_layers(path))
    for name, (_gtype, fields) in LAYERS.items():
        assert name in layers
        info = pyogrio.read_info(path, layer=name)
        assert set(fields) <= set(info["fields"])
        assert info["crs"] is None  # section space has no CRS
    assert layers["horizons"] == "LineString" and layers["units"] == "Polygon"


def test_round_trip(written):
    draft, path = written
    back = read_section_gpkg(path, draft.column, draft.line)
    assert back.method == "edited" and back.name == "A" and back.ve == 2.0
    assert len(back.horizons) == len(draft.horizons)
    for a, b in zip(draft.horizons, back.horizons, strict=True):
        assert (a.top_of, a.above_ground, a.block) == (b.top_of, b.above_ground, b.block)
        assert a.geometry.equals_exact(b.geometry, 1e-9)
    (fa,), (fb,) = draft.faults, back.faults
    assert (fa.name, fa.dip, fa.dip_direction, fa.apparent_dip, fa.sense, fa.separations) == (
        fb.name, fb.dip, fb.dip_direction, fb.apparent_dip, fb.sense, fb.separations)
    assert fa.geometry.equals_exact(fb.geometry, 1e-9)
    assert [(u.unit, u.block) for u in back.units] == [(u.unit, u.block) for u in draft.units]
    assert all(a.geometry.equals(b.geometry) for a, b in zip(draft.units, back.units,
                                                             strict=True))
    np.testing.assert_allclose(back.profile.distance, draft.profile.distance)
    np.testing.assert_allclose(back.profile.z, draft.profile.z)
    np.testing.assert_allclose(back.profile.x, draft.profile.x)
    np.testing.assert_allclose(back.dips.apparent_dip, draft.dips.apparent_dip)
    np.testing.assert_array_equal(back.dips.poorly_constrained, draft.dips.poorly_constrained)
    np.testing.assert_array_equal(back.dips.id, draft.dips.id)
    assert back.geology == draft.geology
    assert len(back.axial_surfaces) == 1
    # Reading leaves the (possibly hand-edited) file alone: no side-car files appear.
    assert [p.name for p in path.parent.iterdir()] == ["section.gpkg"]


def test_surface_geology_follows_the_ground(written):
    draft, _ = written
    sg = section_frames(draft)["surface_geology"]
    first = sg.geometry.iloc[0]
    xy = np.asarray(first.coords)
    np.testing.assert_allclose(xy[:, 1], draft.profile.elevation_at(xy[:, 0]))
    assert xy[0, 0] == 0 and xy[-1, 0] == 3000


def test_3d_lines_stand_on_the_section_line(tmp_path):
    draft = hand_draft()
    path = write_section_3d(draft, tmp_path / "section_3d.gpkg")
    import geopandas as gpd

    hz = gpd.read_file(path, layer="horizons")
    assert hz.crs == draft.line.crs
    assert len(hz) == len(draft.horizons)
    ls = draft.line.linestring
    bend = draft.line.vertices[1]
    for (_, row), h in zip(hz.iterrows(), draft.horizons, strict=True):
        g = row.geometry
        assert g.has_z and g.geom_type == "LineString"
        xyz = shapely.get_coordinates(g, include_z=True)
        pts = shapely.points(xyz[:, 0], xyz[:, 1])
        # Reference: shapely's distance and linear referencing along the map line.
        assert np.max(shapely.distance(pts, ls)) < 1e-6
        dist = shapely.line_locate_point(ls, pts)
        sec = np.asarray(h.geometry.coords)
        np.testing.assert_allclose(xyz[:, 2], np.interp(dist, sec[:, 0], sec[:, 1]), atol=1e-6)
        if sec[0, 0] < draft.line.cumulative[1] < sec[-1, 0]:
            # The bend is a vertex of the 3D line, so the line follows it.
            assert np.min(np.hypot(xyz[:, 0] - bend[0], xyz[:, 1] - bend[1])) < 1e-6
    faults = gpd.read_file(path, layer="faults")
    assert len(faults) == 1 and faults.geometry.iloc[0].has_z
    assert "ground" in dict(pyogrio.list_layers(path))


def test_extra_layers(tmp_path):
    import geopandas as gpd

    draft = hand_draft()
    extra = {"restored_horizons": gpd.GeoDataFrame(
        {"top_of": ["Tu"]}, geometry=[LineString([(0, 0), (100, 0)])])}
    path = write_section_gpkg(draft, tmp_path / "s.gpkg", extra)
    assert "restored_horizons" in dict(pyogrio.list_layers(path))
    with pytest.raises(OutputError, match="horizons"):
        write_section_gpkg(draft, tmp_path / "t.gpkg", {"horizons": extra["restored_horizons"]})
    assert not (tmp_path / "t.gpkg").exists()


def test_missing_layer_and_field(tmp_path, written):
    import geopandas as gpd

    draft, _ = written
    only = tmp_path / "only_horizons.gpkg"
    frames = section_frames(draft)
    pyogrio.write_dataframe(frames["horizons"], only, layer="horizons")
    with pytest.raises(MapLayerError, match=r"only_horizons\.gpkg: no layer 'faults'"):
        read_section_gpkg(only, draft.column, draft.line)

    nofield = tmp_path / "no_top_of.gpkg"
    hz = gpd.GeoDataFrame({"block": [0]}, geometry=[LineString([(0, 0), (1, 1)])])
    pyogrio.write_dataframe(hz, nofield, layer="horizons")
    with pytest.raises(MapLayerError, match=r"no_top_of\.gpkg: layer 'horizons' has no field "
                                            r"'top_of'"):
        read_section_gpkg(nofield, draft.column, draft.line)

    with pytest.raises(MapLayerError, match="no such section file"):
        read_section_gpkg(tmp_path / "absent.gpkg", draft.column, draft.line)


def test_edited_unknown_unit_is_named(tmp_path, written):
    draft, path = written
    import geopandas as gpd

    edited = tmp_path / "edited.gpkg"
    frames = section_frames(draft)
    frames["horizons"].loc[0, "top_of"] = "Nope"
    for i, (name, frame) in enumerate(frames.items()):
        pyogrio.write_dataframe(gpd.GeoDataFrame(frame), edited, layer=name, append=i > 0)
    with pytest.raises(MapLayerError, match=r"layer 'horizons' row 0: top_of 'Nope'"):
        read_section_gpkg(edited, draft.column, draft.line)


def test_output_folder_missing(tmp_path):
    with pytest.raises(OutputError, match="does not exist"):
        write_section_gpkg(hand_draft(), tmp_path / "nowhere" / "s.gpkg")


def test_empty_layers_round_trip(tmp_path):
    # self-consistency: a draft with no faults, no axial surfaces and no dips still writes
    # every layer (empty) and reads back empty.
    import dataclasses

    draft = hand_draft()
    none = np.zeros(0, bool)
    empty = np.zeros(0)
    dips = type(draft.dips)(np.zeros(0, str), empty, empty, empty, empty, empty, empty, empty,
                            empty, none, none)
    draft = dataclasses.replace(draft, faults=[], axial_surfaces=[], dips=dips)
    path = write_section_gpkg(draft, tmp_path / "section.gpkg")
    layers = dict(pyogrio.list_layers(path))
    assert set(LAYERS) <= set(layers)
    back = read_section_gpkg(path, draft.column, draft.line)
    assert back.faults == [] and back.axial_surfaces == [] and len(back.dips) == 0
    assert len(back.horizons) == len(draft.horizons)
    write_section_3d(draft, tmp_path / "section_3d.gpkg")
