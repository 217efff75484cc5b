"""Area balance and depth to detachment (mapsection.checks.area)."""

from __future__ import annotations

import numpy as np
import pytest
from shapely.geometry import LineString, Polygon

from mapsection.checks.area import area_balance, depth_to_detachment, draw_area_depth
from mapsection.checks.restore import restore_section
from mapsection.dips import ProjectedDips
from mapsection.draft import Draft, Horizon
from mapsection.errors import CheckError
from mapsection.geology import SurfaceGeology
from mapsection.line import SectionLine
from mapsection.profile import Profile
from mapsection.stratigraphy import Column, Unit

TAN30 = np.tan(np.radians(30.0))


def make_draft(horizons, column, length=10000.0) -> Draft:
    line = SectionLine(np.array([[0.0, 0.0], [length, 0.0]]), name="T")
    d = np.linspace(0.0, length, 101)
    profile = Profile(d, d, np.zeros_like(d), np.full_like(d, 2000.0), line)
    e = np.array([])
    dips = ProjectedDips(e, e, e, e, e, e, e, e, e, e.astype(bool), e.astype(bool))
    return Draft("T", "edited", line, profile, SurfaceGeology((), (), ()), dips, column,
                 horizons=list(horizons))


def parallel(ref, t):
    """Exact parallel of a kinked line at perpendicular distance t below it (mitre joins)."""
    p = np.asarray(ref, float)
    d = np.diff(p, axis=0)
    d /= np.hypot(d[:, 0], d[:, 1])[:, None]
    n = np.column_stack([d[:, 1], -d[:, 0]])
    m = np.vstack([n[:1], (n[:-1] + n[1:]) / (1.0 + np.sum(n[:-1] * n[1:], axis=1))[:, None],
                   n[-1:]])
    return p + t * m


KINK = Column((Unit("A", 300.0), Unit("B", 400.0), Unit("C", 500.0), Unit("D", 800.0)))
ANTICLINE = [(0.0, 0.0), (3000.0, 0.0), (4000.0, 1000.0 * TAN30), (6000.0, 1000.0 * TAN30),
             (7000.0, 0.0), (10000.0, 0.0)]


def kink_anticline(depths):
    hz = []
    for name, t in depths.items():
        pts = parallel(ANTICLINE, t)
        if name == "A":  # the crest of the top unit is eroded: projected above the ground
            hz.append(Horizon(name, LineString(pts[pts[:, 0] <= 4000.0])))
            hz.append(Horizon(name, LineString(pts[pts[:, 0] >= 4000.0]), above_ground=True))
        else:
            hz.append(Horizon(name, LineString(pts)))
    return make_draft(hz, KINK)


def test_constant_thickness_kink_fold_balances():
    d = kink_anticline({"A": 0.0, "B": 300.0, "C": 700.0, "D": 1200.0})
    r = restore_section(d, pin=500.0, loose=9500.0)
    ab = area_balance(d, r, 5.0)
    assert ab.passed
    bed = 9000.0 - 2000.0 + 2000.0 / np.cos(np.radians(30.0))  # analytic bed length
    for u in ab.units:
        thick = KINK.unit(u.unit).thickness
        assert u.deformed_area_m2 == pytest.approx(thick * bed, rel=1e-9)  # analytic
        assert u.mismatch_pct == pytest.approx(0.0, abs=1e-7)
    # shapely polygon area (reference library) for unit A, crest closed above the ground
    top, base = parallel(ANTICLINE, 0.0), parallel(ANTICLINE, 300.0)
    box = Polygon([(500, -9e3), (9500, -9e3), (9500, 9e3), (500, 9e3)])
    ref = Polygon(np.vstack([top, base[::-1]])).intersection(box).area
    assert ab.units[0].unit == "A" and ab.units[0].deformed_area_m2 == pytest.approx(ref, rel=1e-9)


def test_hand_thinned_unit_fails_area_balance():
    # The top of C moved up by 100 m perpendicular to bedding: B is thinned by 25 % (400 -> 300 m)
    # and C thickened by 20 % (500 -> 600 m) (analytic).
    d = kink_anticline({"A": 0.0, "B": 300.0, "C": 600.0, "D": 1200.0})
    r = restore_section(d, pin=500.0, loose=9500.0)
    ab = area_balance(d, r, 5.0)
    assert not ab.passed
    mm = {u.unit: u for u in ab.units}
    assert mm["B"].mismatch_pct == pytest.approx(-25.0, abs=1e-6)
    assert mm["C"].mismatch_pct == pytest.approx(20.0, abs=1e-6)
    assert not mm["B"].passed and not mm["C"].passed and mm["A"].passed
    assert any("unit B" in f for f in ab.failures)


def detachment_fold(depth_detachment, displacement, depths):
    """Horizons of a trapezoidal detachment fold above a flat detachment: each horizon's
    uplifted (excess) area equals displacement x its height above the detachment, which is
    area conservation of the layers shortened by the displacement (Chamberlin 1910;
    Epard & Groshong 1993)."""
    x = np.array([0.0, 3000.0, 4000.0, 6000.0, 7000.0, 10000.0])
    shape = np.array([0.0, 0.0, 1.0, 1.0, 0.0, 0.0])
    shape_area = 3000.0  # integral of the trapezoid: crest 2000 m + two 1000 m limbs / 2
    hz = []
    for name, z in depths.items():
        amp = displacement * (depth_detachment - z) / shape_area
        hz.append(Horizon(name, LineString(np.column_stack([x, -z + amp * shape]))))
    return hz


def test_area_depth_line_recovers_detachment_and_displacement():
    zd, disp = 3000.0, 600.0
    depths = {"A": 0.0, "B": 500.0, "C": 1000.0, "D": 1800.0}
    col = Column((Unit("A", 500.0), Unit("B", 500.0), Unit("C", 800.0), Unit("D", 600.0)))
    d = make_draft(detachment_fold(zd, disp, depths), col)
    r = restore_section(d, pin=500.0, loose=9500.0)
    ab = area_balance(d, r, 5.0)
    fit = ab.detachment
    # Epard & Groshong 1993: within 2 %
    assert fit.depth_to_detachment_m == pytest.approx(zd, rel=0.02)
    assert fit.displacement_m == pytest.approx(disp, rel=0.02)
    assert fit.r_squared == pytest.approx(1.0, abs=1e-9)
    for p in fit.points:
        # excess areas against the shapely polygon between the horizon and its regional level
        # (reference library)
        line = next(h.geometry for h in d.horizons if h.top_of == p.top_of)
        c = np.asarray(line.coords)
        poly = Polygon(np.vstack([c, [[10000.0, -depths[p.top_of]], [0.0, -depths[p.top_of]]]]))
        assert p.excess_area_m2 == pytest.approx(poly.area, rel=1e-9)
        assert p.depth_m == pytest.approx(depths[p.top_of])


def test_depth_to_detachment_noisy_fit_and_figure(tmp_path):
    rng = np.random.default_rng(1)
    z = np.array([200.0, 700.0, 1100.0, 1600.0, 2300.0])
    s = 450.0 * (2800.0 - z) + rng.normal(0.0, 2e4, len(z))  # S = D (z_d - z) with noise
    fit = depth_to_detachment(z, s)
    assert fit.displacement_m == pytest.approx(450.0, rel=0.05)
    assert fit.depth_to_detachment_m == pytest.approx(2800.0, rel=0.05)
    assert 0.95 < fit.r_squared < 1.0
    path = draw_area_depth(fit, tmp_path / "area_depth.png")
    from PIL import Image

    with Image.open(path) as im:
        assert im.size[0] > 200 and len(np.unique(np.asarray(im.convert("L")))) > 5
    with pytest.raises(CheckError):
        depth_to_detachment([100.0], [5.0])
    d = fit.to_dict()
    assert set(d) >= {"displacement_m", "depth_to_detachment_m", "r_squared", "points"}
