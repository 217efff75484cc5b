"""Flexural-slip restoration and line-length balance (mapsection.checks.restore)."""

from __future__ import annotations

import numpy as np
import pytest
from conftest import KINK_DEPTHS as DEPTHS
from conftest import TAN30, parallel
from conftest import flat_draft as make_draft
from shapely.geometry import LineString, Polygon

from mapsection.checks.restore import restore_section
from mapsection.draft import DipDomain, FaultTrace, Horizon
from mapsection.errors import CheckError
from mapsection.export import restoration_frames

ANTICLINE = [(0.0, 0.0), (3000.0, 0.0), (4000.0, 1000.0 * TAN30), (6000.0, 1000.0 * TAN30),
             (7000.0, 0.0), (10000.0, 0.0)]


def kink_anticline(thin_b=False):
    hz = []
    for name, t in DEPTHS.items():
        if thin_b and name == "C":
            t = 600.0  # unit B thinned by 25 % (400 m -> 300 m)
        pts = parallel(ANTICLINE, t)
        if name == "A":  # the crest of the top is above the ground: two pieces
            line = LineString(pts)
            below = [p for p in pts if p[0] <= 4000.0]
            above = [p for p in pts if p[0] >= 4000.0]
            hz.append(Horizon(name, LineString(below), above_ground=False))
            hz.append(Horizon(name, LineString(above[::-1]), above_ground=True))
            assert abs(LineString(below).length + LineString(above).length - line.length) < 1e-9
        else:
            hz.append(Horizon(name, LineString(pts)))
    domains = [DipDomain(0, 2900, 0.0, 3), DipDomain(3100, 3900, -30.0, 3),
               DipDomain(4100, 5900, 0.0, 3), DipDomain(6100, 6900, 30.0, 3),
               DipDomain(7100, 10000, 0.0, 3)]
    return make_draft(hz, domains=domains)


def analytic_bed_length(chord):
    # Kink bands bounded by parallel bisecting axial surfaces keep the same bed length for
    # every horizon (Dahlstrom 1969; analytic): two limbs 1000 m wide at 30 degrees.
    return chord - 2000.0 + 2000.0 / np.cos(np.radians(30.0))


def test_kink_fold_restores_to_equal_line_lengths_and_area():
    r = restore_section(kink_anticline(), pin=500.0, loose=9500.0)
    bed = analytic_bed_length(9000.0)
    assert len(r.horizons) == 4
    for h in r.horizons:
        assert h.bed_length_m == pytest.approx(bed, rel=1e-9)  # analytic (Dahlstrom 1969)
        assert h.restored_length_m == pytest.approx(bed, rel=1e-9)
        assert h.deformed_length_m == pytest.approx(9000.0)
        # shortening = 1 - chord / bed length (analytic)
        assert h.shortening_pct == pytest.approx(100.0 * (1.0 - 9000.0 / bed), rel=1e-9)
        assert h.restored_elevation_m == -DEPTHS[h.top_of]
    assert r.line_length_mismatch_pct == pytest.approx(0.0, abs=1e-9)
    assert r.loose_line_spread_m == pytest.approx(0.0, abs=1e-6)  # straight, vertical
    assert r.loose_line_departure_m == pytest.approx(0.0, abs=1e-6)
    assert r.passed
    # Restored areas equal the deformed ones: thickness x bed length (analytic), and the
    # deformed polygon measured with shapely (reference library).
    units = {u.unit: u for u in r.units}
    assert set(units) == {"A", "B", "C"}
    for name, thick in (("A", 300.0), ("B", 400.0), ("C", 500.0)):
        assert units[name].area_m2 == pytest.approx(thick * bed, rel=1e-9)
    top = parallel(ANTICLINE, 300.0)
    base = parallel(ANTICLINE, 700.0)
    deformed = Polygon(np.vstack([top, base[::-1]])).intersection(
        Polygon([(500, -5000), (9500, -5000), (9500, 5000), (500, 5000)]))
    assert deformed.area == pytest.approx(units["B"].area_m2, rel=1e-9)


def test_default_pin_and_loose_lines_in_least_dipping_end():
    r = restore_section(kink_anticline())
    assert r.pin_m == pytest.approx(0.0, abs=0.1)
    assert r.loose_m == pytest.approx(10000.0, abs=0.1)
    assert r.pin_source.startswith("default")
    bed = analytic_bed_length(10000.0)  # analytic
    assert r.shortening_m == pytest.approx(bed - 10000.0, rel=1e-6)
    # Steeper start domain: the pin moves to the end (self-consistency).
    d = kink_anticline()
    d.domains[0] = DipDomain(0, 2900, 12.0, 3)
    r2 = restore_section(d)
    assert r2.pin_m == pytest.approx(10000.0, abs=0.1)
    assert r2.direction == -1
    assert r2.line_length_mismatch_pct == pytest.approx(0.0, abs=1e-6)


def test_loose_line_in_dipping_domain_restores_oblique():
    # A vertical loose line through the limb dipping 30 degrees: horizon at depth t meets the
    # syncline's axial surface (bisecting 0 and 30 degrees, so inclined 15 degrees from the
    # vertical) at x = 3000 + t tan 15; its bed length from the pin is then
    # (x - 500) + (3500 - x) / cos 30 (analytic kink geometry, Suppe 1985).
    r = restore_section(kink_anticline(), pin=500.0, loose=3500.0)
    tan15, cos30 = np.tan(np.radians(15.0)), np.cos(np.radians(30.0))
    for h in r.horizons:
        x = 3000.0 + DEPTHS[h.top_of] * tan15
        assert h.restored_length_m == pytest.approx((x - 500.0) + (3500.0 - x) / cos30, rel=1e-9)
    slope = tan15 * (1.0 - 1.0 / cos30)  # restored x against depth, analytic
    # the upper horizons restore longer: the line leans away from the pin going up
    assert r.loose_line_angle_deg == pytest.approx(np.degrees(np.arctan(-slope)), abs=1e-6)
    assert r.loose_line_departure_m == pytest.approx(0.0, abs=1e-6)  # still straight


def thrust_draft(slip=1000.0, shorten_deepest=0.0):
    """Flat beds offset by a thrust dipping 30 degrees toward decreasing distance.

    The hanging wall (block 0, left) moved up the fault by ``slip``: its cutoffs lie on the
    fault, ``slip`` up-dip of the footwall cutoffs (analytic).
    """
    xf, c, s = 6000.0, np.cos(np.radians(30.0)), np.sin(np.radians(30.0))
    hz = []
    for name, t in DEPTHS.items():
        cut_hw = xf - t / TAN30 + slip * c
        if name == "D":
            cut_hw -= shorten_deepest
        y_hw = -t + slip * s
        hz.append(Horizon(name, LineString([(0.0, y_hw), (cut_hw, y_hw)]), block=0))
        hz.append(Horizon(name, LineString([(xf - t / TAN30, -t), (10000.0, -t)]), block=1))
    trace = LineString([(xf + 1500 / TAN30, 1500.0), (xf - 2500 / TAN30, -2500.0)])
    fault = FaultTrace("F1", trace, 30.0, 270.0, -30.0, "thrust", {n: slip for n in DEPTHS})
    return make_draft(hz, faults=[fault])


def test_thrust_restores_block_by_block_to_its_heave():
    slip = 1000.0
    r = restore_section(thrust_draft(slip), pin=500.0, loose=9500.0)
    heave = slip * np.cos(np.radians(30.0))  # analytic: shortening = heave of the slip
    for h in r.horizons:
        assert h.reaches_loose
        assert h.shortening_m == pytest.approx(heave, rel=1e-9)
    assert r.line_length_mismatch_pct == pytest.approx(0.0, abs=1e-9)
    assert all(abs(g.gap_area_m2) < 1e-6 and abs(g.overlap_area_m2) < 1e-6 for g in r.gaps)
    assert {p.block for p in r.pieces} == {0, 1}


def test_restored_gaps_and_overlaps_reported_as_areas():
    # The deepest hanging-wall horizon ends 400 m short: blocks placed end to end in the
    # least-squares sense leave a gap at D and overlaps elsewhere (self-consistency).
    short = 400.0
    r = restore_section(thrust_draft(1000.0, shorten_deepest=short), pin=500.0, loose=9500.0)
    n = 4
    g = {k: -short / n for k in DEPTHS}
    g["D"] = short * (1 - 1 / n)
    th = {"A": 300.0, "B": 400.0, "C": 500.0}
    base = {"A": "B", "B": "C", "C": "D"}
    expected_net = sum(th[u] * (g[u] + g[base[u]]) / 2 for u in th)
    net = sum(x.gap_area_m2 - x.overlap_area_m2 for x in r.gaps)
    assert net == pytest.approx(expected_net, rel=1e-9)
    gap_c = next(x for x in r.gaps if x.unit == "C")
    assert gap_c.gap_area_m2 > 0 and gap_c.overlap_area_m2 > 0
    assert gap_c.top_gap_m == pytest.approx(-short / n)
    assert gap_c.base_gap_m == pytest.approx(short * (1 - 1 / n))


def test_imbalance_across_a_fault_fails_through_gaps_and_overlaps():
    # The line-length spread cannot see a mismatch between fault blocks laid end to end;
    # the gaps and overlaps it leaves do (self-consistency on the analytic thrust above).
    good = restore_section(thrust_draft(1000.0), pin=500.0, loose=9500.0)
    assert good.passed and good.gap_overlap_pct == pytest.approx(0.0, abs=1e-9)
    bad = restore_section(thrust_draft(1000.0, shorten_deepest=3000.0), pin=500.0,
                          loose=9500.0)
    area = sum(u.area_m2 for u in bad.units)
    expected = 100 * sum(g.gap_area_m2 + g.overlap_area_m2 for g in bad.gaps) / area
    assert bad.gap_overlap_pct == pytest.approx(expected) and bad.gap_overlap_pct > 5.0
    assert not bad.passed
    assert any("gaps and overlaps" in f for f in bad.failures)


def test_frames_for_the_gpkg():
    r = restore_section(kink_anticline(), pin=500.0, loose=9500.0)
    frames = restoration_frames(r)
    hz, un = frames["restored_horizons"], frames["restored_units"]
    assert list(hz.columns[:4]) == ["top_of", "block", "bed_length_m", "restored_length_m"]
    assert len(hz) == 4 and len(un) == 3
    assert set(un["unit"]) == {"A", "B", "C"}
    assert np.allclose(un.geometry.area, un["area_m2"])  # shapely areas (reference)


def test_draw_restoration(tmp_path):
    from mapsection.render.restoration import draw_restoration

    r = restore_section(thrust_draft(), pin=500.0, loose=9500.0)
    paths = draw_restoration(r, tmp_path / "restored")
    assert [p.name for p in paths] == ["restored.png", "restored.svg", "restored.pdf"]
    assert all(p.stat().st_size > 1000 for p in paths)
    svg = (tmp_path / "restored.svg").read_text()
    assert "pin" in svg
    # issue 12: the gaps and overlaps at the fault, hatched and labelled with their size
    labelled = [g for g in r.gaps if max(abs(g.top_gap_m), abs(g.base_gap_m)) >= 1.0]
    if labelled:
        assert "gap between fault blocks" in svg or "overlap between fault blocks" in svg
        g = labelled[0]
        worst = g.top_gap_m if abs(g.top_gap_m) >= 1.0 else g.base_gap_m
        assert f"{abs(worst):.0f} m" in svg


@pytest.mark.parametrize("pin,loose,msg", [(-5.0, 9000.0, "outside the section"),
                                           (500.0, 12000.0, "outside the section"),
                                           (5000.0, 9500.0, "crosses fault F1"),
                                           (500.0, 6500.0, "crosses fault F1")])
def test_bad_pin_or_loose_line(pin, loose, msg):
    with pytest.raises(CheckError, match=msg) as e:
        restore_section(thrust_draft(), pin=pin, loose=loose)
    assert "\n" not in str(e.value)


def test_no_horizons():
    with pytest.raises(CheckError, match="no horizons"):
        restore_section(make_draft([]))


def test_unknown_horizon_name():
    d = make_draft([Horizon("Zz", LineString([(0, 0), (100, 0)]))])
    with pytest.raises(CheckError, match="'Zz'"):
        restore_section(d)


def test_eroded_parts_of_beds_are_known():
    # A bed above the ground line in the draft is eroded (projected, never observed). In a
    # homocline dipping 10 degrees under flat ground the top of B is above the ground from
    # the pin to where it crosses the ground (TOP_B); restored by its length along the bed
    # (flexural slip, Dahlstrom 1969) that stretch is (TOP_B - pin) / cos(10 deg) long
    # (analytic).
    import math

    from conftest import HOMOCLINE_DIP, TOP_B, homocline_draft

    r = restore_section(homocline_draft())
    (b,) = [p for p in r.pieces if p.top_of == "B"]
    assert r.direction == 1 and len(b.eroded) == 1
    a, e = b.eroded[0]
    assert a == pytest.approx(b.restored_x0_m, abs=1e-6)
    expected = (TOP_B - b.deformed_x0_m) / math.cos(math.radians(HOMOCLINE_DIP))
    assert e - a == pytest.approx(expected, abs=15.0)  # within about a profile step
