"""SectionSession: a shifted line gives what a fresh session gives, and reads no file.

Self-consistency tests: the session is compared with itself, with a freshly
loaded session and with the projection run on all attitudes without the
spatial index. They use the sample area when it exists, else a small invented
project written here.
"""

from __future__ import annotations

import builtins
import io
import textwrap
from pathlib import Path

import geopandas as gpd
import numpy as np
import pyogrio
import pytest
import rasterio
from conftest import project_inputs
from rasterio.transform import Affine
from shapely.geometry import LineString, box

from mapsection.dips import project_attitudes
from mapsection.errors import ParameterError, StratigraphyError
from mapsection.line import SectionLine
from mapsection.project import load_project
from mapsection.session import SectionData, SectionSession

SAMPLE = Path(__file__).resolve().parents[1] / "sample_area" / "project.toml"
CRS = "EPSG:32611"


def _synthetic(folder: Path, extra_unit: str | None = None) -> Path:
    """An invented 2 km square: three units in strips, one fault, 400 attitudes."""
    x0, y0, px, n = 500000.0, 4100000.0, 10.0, 200
    cols = x0 + px * (np.arange(n) + 0.5)
    rows = y0 + px * n - px * (np.arange(n) + 0.5)
    xx, yy = np.meshgrid(cols, rows)
    z = (1000.0 + 0.05 * (xx - x0) + 30.0 * np.sin((yy - y0) / 300.0)).astype("float32")
    with rasterio.open(folder / "dem.tif", "w", driver="GTiff", width=n, height=n, count=1,
                       dtype="float32", crs=CRS, transform=Affine(px, 0, x0, 0, -px, y0 + px * n),
                       tiled=True, blockxsize=64, blockysize=64) as ds:
        ds.write(z, 1)
    names = ["Upper Marl", "Grey Sandstone", "Red Shale"] + ([extra_unit] if extra_unit else [])
    edges = np.linspace(x0, x0 + 2000.0, len(names) + 1)
    units = gpd.GeoDataFrame({"unit": names},
                             geometry=[box(a, y0, b, y0 + 2000.0) for a, b in
                                       zip(edges[:-1], edges[1:], strict=True)], crs=CRS)
    gpkg = folder / "geology.gpkg"
    pyogrio.write_dataframe(units, gpkg, layer="units")
    faults = gpd.GeoDataFrame({"name": ["Tarn Fault"], "dip": [55.0], "dip_direction": [100.0],
                               "sense": ["reverse"]},
                              geometry=[LineString([(x0 + 1100, y0), (x0 + 1200, y0 + 2000)])],
                              crs=CRS)
    pyogrio.write_dataframe(faults, gpkg, layer="faults")
    rng = np.random.default_rng(3)
    k = 400
    pd_rows = ["x,y,strike,dip,id"] + [
        f"{x:.2f},{y:.2f},{s:.1f},{d:.1f},S{i}"
        for i, (x, y, s, d) in enumerate(zip(rng.uniform(x0, x0 + 2000, k),
                                             rng.uniform(y0, y0 + 2000, k),
                                             rng.uniform(0, 360, k), rng.uniform(5, 80, k),
                                             strict=True))]
    (folder / "attitudes.csv").write_text("\n".join(pd_rows) + "\n")
    strat = "".join(f'[[stratigraphy]]\nunit = "{u}"\nthickness = 200.0\n' for u in names[:3])
    (folder / "project.toml").write_text(project_inputs(CRS) + strat + textwrap.dedent(f"""\
        [[section]]
        name = "A"
        line = [[{x0 + 100}, {y0 + 1000}], [{x0 + 1900}, {y0 + 1100}]]
        corridor = 300.0
        """))
    return folder / "project.toml"


@pytest.fixture(scope="module")
def project(tmp_path_factory):
    path = SAMPLE if SAMPLE.exists() else _synthetic(tmp_path_factory.mktemp("area"))
    return load_project(path)


def _quiet(_msg: str) -> None:
    pass


def _shifted(line: SectionLine, dx: float, dy: float, turn_deg: float) -> np.ndarray:
    c = line.vertices.mean(axis=0)
    t = np.radians(turn_deg)
    rot = np.array([[np.cos(t), -np.sin(t)], [np.sin(t), np.cos(t)]])
    return (line.vertices - c) @ rot.T + c + [dx, dy]


def _same(a: SectionData, b: SectionData) -> None:
    np.testing.assert_array_equal(a.line.vertices, b.line.vertices)
    np.testing.assert_allclose(a.profile.distance, b.profile.distance)
    np.testing.assert_allclose(a.profile.z, b.profile.z, equal_nan=True)
    assert a.geology.intervals == b.geology.intervals
    for part in ("contacts", "faults"):
        ga, gb = getattr(a.geology, part), getattr(b.geology, part)
        assert [(c.distance_m, c.__dict__.get("unit_before")) for c in ga] == \
            [(c.distance_m, c.__dict__.get("unit_before")) for c in gb]
        np.testing.assert_array_equal([c.elevation_m for c in ga], [c.elevation_m for c in gb])
    for f in ("id", "distance_m", "offset_m", "elevation_m", "apparent_dip", "poorly_constrained"):
        np.testing.assert_array_equal(getattr(a.dips, f), getattr(b.dips, f))


def test_shifted_line_equals_a_fresh_session(project):
    spec = project.sections[0]
    with SectionSession.from_project(project, spec, warn=_quiet) as moving:
        first = moving.run()
        assert first.line.name == spec.name and len(first.geology.intervals) > 0
        new = _shifted(first.line, 120.0, -80.0, 4.0)
        moved = moving.shift_line(new)
        assert moved.line.name == spec.name and moved.line.crs == project.crs
    with SectionSession.from_project(project, spec, warn=_quiet) as fresh:
        again = fresh.run(SectionLine(new, project.crs, spec.name))
    _same(moved, again)
    assert not np.array_equal(moved.profile.z, first.profile.z)


def test_corridor_index_drops_no_attitude(project):
    spec = project.sections[0]
    with SectionSession.from_project(project, spec, warn=_quiet) as s:
        line = s._as_line(_shifted(s.line, -60.0, 40.0, -7.0))
        got = s.project_dips(line)
        # Self-consistency: the same projection over every attitude, without the STRtree.
        ref = project_attitudes(s.attitudes, line, s.corridor, method=s.projection, axis=s.axis,
                                warn=_quiet)
    assert len(ref) > 0
    np.testing.assert_array_equal(got.id, ref.id)
    np.testing.assert_array_equal(got.apparent_dip, ref.apparent_dip)


def test_shift_line_reads_no_file(project, monkeypatch):
    spec = project.sections[0]
    with SectionSession.from_project(project, spec, warn=_quiet) as s:
        s.run()
        blocks = s.dem.blocks_read

        def refuse(*args, **kwargs):
            raise AssertionError("a file was read during shift_line()")

        for target, name in [(rasterio, "open"), (pyogrio, "read_dataframe"),
                             (pyogrio, "read_info"), (pyogrio, "list_layers"),
                             (gpd, "read_file"), (builtins, "open"), (io, "open"),
                             (rasterio.io.DatasetReader, "read")]:
            monkeypatch.setattr(target, name, refuse)
        for k in range(5):
            data = s.shift_line(_shifted(s.line, 40.0 * k, -30.0 * k, 2.0 * k))
            assert len(data.profile.z) > 1
        # Rotated by a right angle about its middle: a line in other DEM blocks.
        data = s.shift_line(_shifted(s.line, 0.0, 0.0, 90.0))
        assert np.isfinite(data.profile.z).any()
        assert s.dem.blocks_read == blocks
        monkeypatch.undo()


def test_bad_corridor_and_units_not_in_column(project, tmp_path):
    spec = project.sections[0]
    with SectionSession.from_project(project, spec, warn=_quiet) as s:
        with pytest.raises(ParameterError, match="corridor"):
            SectionSession(s.dem, s.map_data, s.attitudes, 0.0)
        with pytest.raises(ParameterError, match="projection"):
            SectionSession(s.dem, s.map_data, s.attitudes, 100.0, projection="sideways")
    odd = load_project(_synthetic(tmp_path, extra_unit="Black Tuff"))
    with pytest.raises(StratigraphyError, match="Black Tuff"):
        SectionSession.from_project(odd, odd.sections[0], warn=_quiet)


def test_plunge_projection_uses_the_fold_axis(project):
    from dataclasses import replace

    spec = replace(project.sections[0], projection="plunge")
    with SectionSession.from_project(project, spec, warn=_quiet) as s:
        assert s.axis is not None and 0.0 <= s.axis.trend <= 360.0
        data = s.run()
        assert isinstance(data, SectionData)


def test_line_in_another_crs_is_reprojected_and_said_once(project):
    # outside reference: pyproj moves the vertices to the project CRS independently
    import pyproj

    spec = project.sections[0]
    said: list[str] = []
    with SectionSession.from_project(project, spec, warn=said.append) as s:
        base = s.run()
        lonlat = pyproj.Transformer.from_crs(project.crs, "EPSG:4326", always_xy=True)
        lon, lat = lonlat.transform(base.line.vertices[:, 0], base.line.vertices[:, 1])
        geographic = SectionLine(np.column_stack([lon, lat]), pyproj.CRS("EPSG:4326"), spec.name)
        said.clear()
        got = s.shift_line(geographic)
        s.shift_line(geographic)
    assert got.line.crs == project.crs
    np.testing.assert_allclose(got.line.vertices, base.line.vertices, atol=1e-3)
    np.testing.assert_array_equal(got.dips.id, base.dips.id)
    assert sum("reprojected" in m for m in said) == 1, said


def test_attitudes_in_another_crs_are_reprojected(project):
    # outside reference: pyproj transforms the points; strikes get the grid convergence
    import dataclasses

    import pyproj

    from mapsection.readers.attitudes import read_attitudes
    from mapsection.readers.map import read_map

    spec = project.sections[0]
    m = read_map(project.map_path, project.units_layer, project.unit_field,
                 project.faults_layer, project.fault_fields, crs=project.crs, warn=_quiet)
    att = read_attitudes(project.attitudes_path, crs=project.crs, warn=_quiet)
    tr = pyproj.Transformer.from_crs(project.crs, "EPSG:4326", always_xy=True)
    lon, lat = tr.transform(att.x, att.y)
    geo = dataclasses.replace(att, x=np.asarray(lon), y=np.asarray(lat),
                              crs=pyproj.CRS("EPSG:4326"))
    said: list[str] = []
    line = SectionLine(np.asarray(spec.line, float), project.crs, spec.name)
    with SectionSession(project.dem_path, m, geo, spec.corridor, warn=said.append) as s:
        np.testing.assert_allclose(s.attitudes.x, att.x, atol=1e-3)
        np.testing.assert_allclose(s.attitudes.y, att.y, atol=1e-3)
        got = s.run(line)
    with SectionSession(project.dem_path, m, att, spec.corridor, warn=_quiet) as s:
        ref = s.run(line)
    np.testing.assert_array_equal(got.dips.id, ref.dips.id)
    assert sum("reprojected" in msg for msg in said) == 1, said
