"""Area balance and depth to detachment (mapsection.checks.area)."""

from __future__ import annotations

import numpy as np
import pytest
from conftest import TAN30, parallel
from conftest import flat_draft as make_draft
from shapely.geometry import LineString, Polygon

from mapsection.checks.area import area_balance, depth_to_detachment
from mapsection.checks.restore import restore_section
from mapsection.draft import Horizon
from mapsection.errors import CheckError
from mapsection.render.area_depth import draw_area_depth
from mapsection.stratigraphy import Column, Unit

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
    return make_draft(hz, column=KINK, ground=2000.0, method="edited")


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
    d = make_draft(detachment_fold(zd, disp, depths), column=col, ground=2000.0,
                   method="edited")
    r = restore_section(d, pin=500.0, loose=9500.0)
    ab = area_balance(d, r, 5.0)
    fit = ab.detachment
    # Epard & Groshong 1993: both within 2 %; the datum is the ground at the pin line,
    # 2000 m above the top horizon's regional level at elevation 0 (make_draft's profile).
    assert fit.datum_elevation_m == pytest.approx(2000.0)
    assert fit.detachment_elevation_m == pytest.approx(-zd, rel=0.02)
    assert fit.depth_to_detachment_m == pytest.approx(2000.0 + zd, rel=0.02)
    assert fit.displacement_m == pytest.approx(disp, rel=0.02)
    assert fit.r_squared == pytest.approx(1.0, abs=1e-9)
    assert fit.reliable and fit.issues == []
    # This fold keeps area, not bed length (its beds lengthen upward), and the fit says so.
    assert [c.split(" (")[0] for c in fit.caveats] == ["the displacement"]
    assert "elevation -3000 m" in fit.summary and "R² 1.000" in fit.summary
    # Each 10 m of error in the regional levels moves the detachment by 10 x width / D.
    assert fit.shift_per_10m_regional_m == pytest.approx(10.0 * 9000.0 / disp, rel=0.02)
    for p in fit.points:
        # excess areas against the shapely polygon between the horizon and its regional level
        # (reference library)
        line = next(h.geometry for h in d.horizons if h.top_of == p.top_of)
        c = np.asarray(line.coords)
        poly = Polygon(np.vstack([c, [[10000.0, -depths[p.top_of]], [0.0, -depths[p.top_of]]]]))
        assert p.excess_area_m2 == pytest.approx(poly.area, rel=1e-9)
        assert p.regional_elevation_m == pytest.approx(-depths[p.top_of])
        assert p.depth_m == pytest.approx(2000.0 + depths[p.top_of])


def test_detachment_with_no_undeformed_ground_is_not_determined():
    # The same fold on a regional slope of 1 % (self-consistency): each horizon ends 90 m
    # above its regional level (its elevation at the pin), which moves the fitted level by
    # about 90 x 9000 / 600 = 1350 m: the depth must be withheld, the figures still given.
    depths = {"A": 0.0, "B": 500.0, "C": 1000.0, "D": 1800.0}
    col = Column((Unit("A", 500.0), Unit("B", 500.0), Unit("C", 800.0), Unit("D", 600.0)))
    tilted = [Horizon(h.top_of, LineString(np.asarray(h.geometry.coords)
                                           + np.array([0.0, 1.0]) * (10000.0 - np.asarray(
                                               h.geometry.coords)[:, :1]) * 0.01))
              for h in detachment_fold(3000.0, 600.0, depths)]
    d = make_draft(tilted, column=col, ground=2000.0, method="edited")
    r = restore_section(d, pin=9500.0, loose=500.0)
    fit = area_balance(d, r, 5.0).detachment
    assert fit.r_squared > 0.99  # a good line, yet the depth is not determined
    assert not fit.reliable
    assert fit.issues[0].startswith("regional level uncertain: ")
    assert "+90 m" in fit.issues[0]
    assert fit.summary.startswith("detachment not determined")
    out = fit.to_dict()
    assert out["reliable"] is False and out["depth_to_detachment_m"] is not None


def test_depth_to_detachment_says_when_the_fit_is_poor():
    # S = D (z_d - z) (Epard & Groshong 1993), made to break each premise in turn.
    z = np.array([0.0, 500.0, 1000.0, 1500.0])
    assert depth_to_detachment(z, 600.0 * (3000.0 - z)).reliable
    two = depth_to_detachment(z[:2], 600.0 * (3000.0 - z[:2]))
    assert not two.reliable and two.issues[0].startswith("only 2 horizons")
    scatter = depth_to_detachment(z, [1e6, -1e6, 1e6, -0.9e6])
    assert any(i.startswith("poor fit") for i in scatter.issues)
    growing = depth_to_detachment(z, 600.0 * z)  # excess area grows with depth
    assert any(i.startswith("no detachment below") for i in growing.issues)
    # A level at 700 m with horizons at 1000 and 1500 m below it (negative excess areas).
    shallow = depth_to_detachment(z, 600.0 * (700.0 - z))
    assert shallow.depth_to_detachment_m == pytest.approx(700.0)
    assert shallow.issues == ["level above 2 folded horizons: the fitted level lies above "
                              "horizons that are folded too, so this is not a fold above one "
                              "detachment"]


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
    assert set(d) >= {"displacement_m", "depth_to_detachment_m", "detachment_elevation_m",
                      "datum", "r_squared", "reliable", "issues", "summary", "points"}
