"""The sample area (invented data) and its model: self-consistency tests.

The Varrow Range sample area is invented. These tests check that the committed
files are what the committed generator makes from the known model, and that the
files agree with that model (contacts, fault trace, attitudes, thickness). They
are self-consistency tests on invented data, except where a line names an
outside reference.
"""

from __future__ import annotations

from pathlib import Path

import geopandas as gpd
import numpy as np
import pytest
import rasterio
import shapely
from shapely.geometry import LineString

from mapsection import sample as S
from mapsection.project import load_project
from mapsection.sample import SAMPLE_MODEL as M

AREA = Path(__file__).resolve().parents[1] / "sample_area"
PIXEL = S.CELL


@pytest.fixture(scope="module")
def regenerated(tmp_path_factory):
    out = tmp_path_factory.mktemp("sample_area")
    S.generate(out)
    return out


@pytest.fixture(scope="module")
def dem():
    with rasterio.open(AREA / "dem.tif") as src:
        return src.read(1)


@pytest.fixture(scope="module")
def units():
    return gpd.read_file(AREA / "geology.gpkg", layer="units")


@pytest.fixture(scope="module")
def faults():
    return gpd.read_file(AREA / "geology.gpkg", layer="faults")


def _read_csv(path):
    return np.genfromtxt(path, delimiter=",", names=True, dtype=None, encoding="utf-8")


# ---------------------------------------------------------------- regeneration
def test_regenerated_files_equal_the_committed_ones(regenerated):
    # self-consistency: the committed files are the generator's deterministic output
    with rasterio.open(AREA / "dem.tif") as a, rasterio.open(regenerated / "dem.tif") as b:
        assert a.crs == b.crs and a.transform == b.transform
        np.testing.assert_array_equal(a.read(1), b.read(1))
    for name in ("attitudes.csv", "project.toml", "project_flawed.toml", "model.json"):
        assert (AREA / name).read_text() == (regenerated / name).read_text(), name
    for layer in ("units", "faults"):
        a = gpd.read_file(AREA / "geology.gpkg", layer=layer)
        b = gpd.read_file(regenerated / "geology.gpkg", layer=layer)
        assert len(a) == len(b)
        assert list(a.drop(columns="geometry").itertuples(index=False)) == list(
            b.drop(columns="geometry").itertuples(index=False))
        np.testing.assert_allclose(a.geometry.length, b.geometry.length, rtol=1e-9)
        if layer == "units":
            np.testing.assert_allclose(a.geometry.area, b.geometry.area, rtol=1e-9)
            sym = shapely.symmetric_difference(a.geometry.values, b.geometry.values)
            assert np.all(shapely.area(sym) < 1.0)  # m^2: same polygons to within rounding


def test_committed_files_are_small():
    total = sum(p.stat().st_size for p in AREA.iterdir() if p.is_file())
    assert total < 5e6


# ------------------------------------------------------------------ the DEM
def test_dem_is_projected_large_and_has_relief(dem):
    with rasterio.open(AREA / "dem.tif") as src:
        assert src.crs.to_epsg() == 32611 and src.crs.is_projected
        assert src.width >= 300 and src.height >= 300
        assert src.dtypes[0] == "float32"
        assert src.profile["tiled"] and src.compression.name.lower() == "deflate"
        assert src.res == (PIXEL, PIXEL)
    assert np.isfinite(dem).all()
    assert dem.max() - dem.min() > 500.0  # several hundred metres of relief


def test_valleys_cut_across_the_strike(dem):
    # Along the strike (the axis trend) the ground rises and falls over the
    # transverse valleys by hundreds of metres.
    a = np.linspace(-4000, 4000, 400)
    t = np.radians(M.trend)
    x = M.centre[0] + a * np.sin(t)
    y = M.centre[1] + a * np.cos(t)
    z = S.bilinear(dem, x, y)
    assert z.max() - z.min() > 250.0
    # at least three valley floors (local minima deeper than 100 m below both sides)
    minima = [i for i in range(20, 380) if z[i] == z[i - 20:i + 21].min()
              and z[max(0, i - 60):i].max() - z[i] > 100 and z[i:i + 60].max() - z[i] > 100]
    assert len(minima) >= 3


# ---------------------------------------------------------------- attitudes
def test_attitudes_count_range_and_noise(dem):
    att = _read_csv(AREA / "attitudes.csv")
    assert att.dtype.names == ("id", "x", "y", "strike", "dip")
    assert len(att) >= 60
    assert len(set(att["id"])) == len(att)
    assert np.all((att["dip"] >= 0) & (att["dip"] <= 90))
    assert np.all((att["strike"] >= 0) & (att["strike"] < 360))
    # measured vs true bedding: a few degrees apart (pole angle), never wildly off
    z = S.bilinear(dem, att["x"], att["y"])
    ts, td = M.bedding_at(att["x"], att["y"], z)
    ang = np.degrees(np.arccos(np.clip(np.abs(np.sum(_pole(ts, td) * _pole(
        att["strike"], att["dip"]), axis=1)), 0, 1)))
    assert 1.0 < np.median(ang) < 5.0
    assert ang.max() < 10.0


def test_every_section_has_dips_in_every_domain(dem):
    att = _read_csv(AREA / "attitudes.csv")
    pts = shapely.points(att["x"], att["y"])
    z = S.bilinear(dem, att["x"], att["y"])
    hw, dip = S._domain_key(M, att["x"], att["y"], z)
    project = load_project(AREA / "project.toml")
    for spec in project.sections:
        line = LineString(spec.line)
        d = shapely.line_locate_point(line, pts)
        inside = shapely.distance(line, pts) <= spec.corridor
        runs = [r for r in S._line_domains(M, dem, spec.line) if r[1] - r[0] > 300]
        assert len(runs) >= 4
        for start, end, h, p in runs:
            n = (inside & (d >= start) & (d <= end) & (hw == h) & (np.abs(dip - p) < 0.01)).sum()
            assert n >= 3, (spec.name, start, end)


def _pole(strike, dip):
    """Unit downward pole of planes, east-north-up."""
    dd, d = np.radians(np.asarray(strike, float) + 90.0), np.radians(np.asarray(dip, float))
    return np.column_stack([-np.sin(d) * np.sin(dd), -np.sin(d) * np.cos(dd), -np.cos(d)])


def test_bedding_poles_contain_the_fold_axis(dem):
    # Cylindrical fold: every true pole is perpendicular to the axis, and the
    # least eigenvector of the orientation tensor of the measured poles (the
    # pi-axis; Woodcock 1977) lies close to the model's axis.
    att = _read_csv(AREA / "attitudes.csv")
    z = S.bilinear(dem, att["x"], att["y"])
    axis = M._vectors[0]
    ts, td = M.bedding_at(att["x"], att["y"], z)
    np.testing.assert_allclose(_pole(ts, td) @ axis, 0.0, atol=1e-9)
    poles = _pole(att["strike"], att["dip"])
    w, v = np.linalg.eigh(poles.T @ poles)
    pi_axis = v[:, 0]
    assert np.degrees(np.arccos(abs(pi_axis @ axis))) < 5.0


# ---------------------------------------------------------------- the column
def test_map_units_are_in_the_column(units):
    project = load_project(AREA / "project.toml")
    project.column.check_map_units(units["unit"])
    assert project.column == M.column
    assert 5 <= len(M.column.units) <= 7
    assert M.column.thicknesses.min() >= 150 and M.column.thicknesses.max() <= 400
    assert all(u.age and u.lithology for u in M.column.units)
    # the unit polygons tile the DEM's extent
    assert units.geometry.area.sum() == pytest.approx(S.NCOLS * S.NROWS * PIXEL**2, rel=1e-6)


def test_flawed_project_differs_only_in_one_thickness():
    good = load_project(AREA / "project.toml")
    bad = load_project(AREA / "project_flawed.toml")
    ratio = bad.column.thicknesses / good.column.thicknesses
    wrong = np.flatnonzero(~np.isclose(ratio, 1.0))
    assert len(wrong) == 1 and ratio[wrong[0]] == pytest.approx(1.4)
    assert bad.sections == good.sections and bad.dem_path == good.dem_path
    assert "40 %" in (AREA / "project_flawed.toml").read_text()


def test_project_sections():
    project = load_project(AREA / "project.toml")
    assert len(project.sections) >= 2
    assert any(len(s.line) >= 3 for s in project.sections)
    for s in project.sections:
        line = LineString(s.line)
        az = np.degrees(np.arctan2(*np.diff(np.asarray(s.line), axis=0).T)) % 180
        # each segment within 25 degrees of perpendicular to the fold axis
        assert np.all(np.abs(((az - M.trend) % 180) - 90) < 25)
        assert 500 <= s.corridor <= 800 and line.length > 5000


# ------------------------------------------------------------------ the model
def _cross(a, b):
    return a[0] * b[1] - a[1] * b[0]


def test_thickness_is_constant_in_the_profile_plane():
    # Parallel folding: between consecutive horizons, every straight piece of the
    # lower one is parallel to a piece of the upper one at the unit's thickness,
    # and no point of the lower one is nearer than that (kink construction).
    horizons = list(M.horizons.values())
    for t, upper, lower in zip(M.column.thicknesses, horizons[:-1], horizons[1:], strict=True):
        up, lo = np.asarray(upper.coords), np.asarray(lower.coords)
        for p, q in zip(lo[:-1], lo[1:], strict=True):
            direction = (q - p) / np.hypot(*(q - p))
            found = False
            for a, b in zip(up[:-1], up[1:], strict=True):
                e = (b - a) / np.hypot(*(b - a))
                if abs(_cross(e, direction)) < 1e-9:
                    dist = abs(_cross(e, p - a))
                    found = found or abs(dist - t) < 0.01 * t
            assert found
        pts = shapely.line_interpolate_point(lower, np.linspace(0, 1, 4001), normalized=True)
        dist = shapely.distance(upper, pts)
        assert dist.min() > 0.99 * t
        assert np.median(dist) == pytest.approx(t, rel=0.01)


def test_axial_surfaces_bisect_the_limbs():
    # Kink rule (Suppe 1985, Principles of Structural Geology): the hinge of each
    # deeper horizon lies on the bisector of the two limbs through the hinge above.
    ref = np.asarray(list(M.horizons.values())[0].coords)
    dips = np.radians(M.ref_dips)
    for k, h in enumerate(list(M.horizons.values())[1:], start=1):
        xy = np.asarray(h.coords)
        assert len(xy) == len(ref)  # no domain vanishes within the column
        for i in range(1, len(ref) - 1):
            # unit normals (downward) of the limbs either side of hinge i
            n1 = np.array([-np.sin(dips[i - 1]), -np.cos(dips[i - 1])])
            n2 = np.array([-np.sin(dips[i]), -np.cos(dips[i])])
            bis = (n1 + n2) / np.linalg.norm(n1 + n2)
            step = xy[i] - ref[i]
            assert abs(_cross(bis, step)) < 1e-6 * np.hypot(*step)
            # and the offset along it is the depth over cos(half the bend)
            depth = M.column.depth_to_top[k] if k < len(M.column.units) else \
                M.column.total_thickness
            assert np.hypot(*step) == pytest.approx(depth / (bis @ n1), rel=1e-9)


def test_units_and_horizons_agree():
    # Just above a horizon is the unit above it; just below, the unit it tops.
    rng = np.random.default_rng(1)
    x = rng.uniform(S.X0, S.X0 + 10_000, 2000)
    y = rng.uniform(S.Y0, S.Y0 + 10_000, 2000)
    names = M.column.names
    for i, top_of in enumerate(names):
        for block in ("hanging_wall", "footwall"):
            z = M.horizon_elevation(top_of, x, y, block=block)
            ok = np.isfinite(z) & (np.abs(z - M.fault_elevation(x, y)) > 5)
            assert ok.sum() > 100
            below = M.unit_at(x[ok], y[ok], z[ok] - 1.0)
            above = M.unit_at(x[ok], y[ok], z[ok] + 1.0)
            assert np.all(below == top_of)
            assert np.all(above == (names[i - 1] if i else None))
            assert np.all(M.block_at(x[ok], y[ok], z[ok]) == block)


def test_bedding_is_the_gradient_of_the_horizons():
    # The dip and dip direction of a horizon surface from its elevation gradient
    # (finite differences) equal bedding_at there, away from hinges and the fault.
    rng = np.random.default_rng(2)
    x = rng.uniform(S.X0 + 500, S.X0 + 9_500, 400)
    y = rng.uniform(S.Y0 + 500, S.Y0 + 9_500, 400)
    h = 1.0
    for top_of in ("Osk Sandstone", "Dunmarrow Dolomite"):
        z = M.horizon_elevation(top_of, x, y)
        gx = (M.horizon_elevation(top_of, x + h, y) - M.horizon_elevation(top_of, x - h, y)) / 2
        gy = (M.horizon_elevation(top_of, x, y + h) - M.horizon_elevation(top_of, x, y - h)) / 2
        dip = np.degrees(np.arctan(np.hypot(gx, gy)))
        dipdir = np.degrees(np.arctan2(-gx, -gy)) % 360
        strike, bdip = M.bedding_at(x, y, z - 2.0)
        # skip points within 10 m of a hinge (the difference straddles it)
        d1 = M.profile_dip_at(x + 10, y, z - 2.0)
        d2 = M.profile_dip_at(x - 10, y, z - 2.0)
        ok = np.isfinite(z) & (d1 == d2) & (np.abs(z - M.fault_elevation(x, y)) > 50)
        assert ok.sum() > 200
        np.testing.assert_allclose(bdip[ok], dip[ok], atol=0.01)
        ddiff = (dipdir - (strike + 90)) % 360
        assert np.all(np.minimum(ddiff, 360 - ddiff)[ok] < 0.05)


def test_hanging_wall_is_the_footwall_translated_up_the_fault():
    du, dv = M.hanging_wall_shift
    assert np.hypot(du, dv) == pytest.approx(M.slip)
    dip, dip_direction = M.fault_attitude
    assert 28 <= dip <= 36 and 290 <= dip_direction <= 325  # toward the hinterland (NW)
    u = np.linspace(-5000, 5000, 101)
    for name, h in M.horizons.items():
        hu, hv = np.asarray(h.coords).T
        t = np.radians(M.fault_profile_dip)
        x = M.centre[0] + u * np.cos(np.radians(M.trend))
        y = M.centre[1] - u * np.sin(np.radians(M.trend))
        hw = M.horizon_elevation(name, x, y, block="hanging_wall")
        ok = np.isfinite(hw)
        # at a = 0 elevation equals v / cos(plunge)
        expect = (np.interp(u - M.slip * np.cos(t), hu, hv) + M.slip * np.sin(t))
        np.testing.assert_allclose(hw[ok], expect[ok] / np.cos(np.radians(M.plunge)),
                                   atol=1e-6)
        assert ok.any()


# -------------------------------------------------- the map against the model
def _test_lines(project):
    lines = [LineString(s.line) for s in project.sections]
    rng = np.random.default_rng(3)
    for _ in range(3):
        a = rng.uniform([S.X0 + 300, S.Y0 + 300], [S.X0 + 9_700, S.Y0 + 9_700], (2, 2))
        lines.append(LineString(a))
    return lines


def test_map_contacts_lie_within_a_pixel_of_the_model(dem, units):
    project = load_project(AREA / "project.toml")
    names = list(units["unit"])
    geoms = units.geometry.values
    for line in _test_lines(project):
        d = np.arange(0.0, line.length, 1.0)
        p = shapely.line_interpolate_point(line, d)
        x, y = shapely.get_x(p), shapely.get_y(p)
        true = M.unit_at(x, y, S.bilinear(dem, x, y))
        mapped = np.full(len(d), None, dtype=object)
        for n, g in zip(names, geoms, strict=True):
            mapped[shapely.intersects_xy(g, x, y)] = n
        assert np.all(mapped != None)  # noqa: E711 - the map covers the whole line
        tc = d[1:][true[1:] != true[:-1]]
        mc = d[1:][mapped[1:] != mapped[:-1]]
        assert len(tc) > 0
        # every mapped contact near a true one and every true one near a mapped one
        assert np.abs(mc[:, None] - tc[None, :]).min(axis=1).max() <= PIXEL
        assert np.abs(tc[:, None] - mc[None, :]).min(axis=1).max() <= PIXEL
        # and the units agree along nearly all of the line
        assert np.mean(mapped == true) > 0.99


def test_fault_trace_lies_on_the_fault_plane(dem, faults):
    assert len(faults) >= 1
    assert set(faults.columns) >= {"name", "dip", "dip_direction", "sense", "geometry"}
    assert set(faults["sense"]) == {"thrust"}
    dip, dip_direction = M.fault_attitude
    np.testing.assert_allclose(faults["dip"], dip, atol=0.05)
    np.testing.assert_allclose(faults["dip_direction"], dip_direction, atol=0.05)
    pts = np.vstack([np.asarray(g.segmentize(10.0).coords) for g in faults.geometry])
    ground = S.bilinear(dem, pts[:, 0], pts[:, 1])
    plane = M.fault_elevation(pts[:, 0], pts[:, 1])
    # vertical misfit of ground and plane at the trace: well within what one pixel
    # of horizontal error would give on a 32-degree plane (25 m * tan 32 ~ 15 m)
    assert np.abs(ground - plane).max() < 2.0
    # The trace points (x, y, ground z) fit a plane whose attitude is the mapped
    # one (least squares with numpy as the reference).
    A = np.column_stack([pts[:, 0] - pts[:, 0].mean(), pts[:, 1] - pts[:, 1].mean(),
                         np.ones(len(pts))])
    (gx, gy, _), *_ = np.linalg.lstsq(A, ground, rcond=None)
    assert np.degrees(np.arctan(np.hypot(gx, gy))) == pytest.approx(dip, abs=0.5)
    assert np.degrees(np.arctan2(-gx, -gy)) % 360 == pytest.approx(dip_direction, abs=0.5)
    # the trace crosses both sections
    project = load_project(AREA / "project.toml")
    trace = shapely.union_all(faults.geometry.values)
    for s in project.sections:
        assert LineString(s.line).intersects(trace)
