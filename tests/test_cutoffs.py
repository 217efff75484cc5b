"""Restoration at each fault: cutoff mismatches and separation consistency
(mapsection.checks.cutoffs)."""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest
from conftest import fault_draft as make_draft
from conftest import thrust_draft as thrust
from shapely import affinity

from mapsection.checks.cutoffs import (
    check_cutoffs,
    check_fault_restoration,
    check_separations,
)
from mapsection.checks.geometry import fault_blocks
from mapsection.draft import Horizon
from mapsection.errors import ParameterError

AREA = Path(__file__).resolve().parents[1] / "sample_area"


def shifted(draft, fault_name: str, metres: float, only: set[str] | None = None):
    """The draft with its hanging-wall horizons moved ``metres`` up the fault (a rigid
    translation along the fault's upper segment), as a hand edit would."""
    f = next(f for f in draft.faults if f.name == fault_name)
    hw = fault_blocks(draft)[fault_name].hanging_wall
    c = np.asarray(f.geometry.coords)
    top, nxt = (c[0], c[1]) if c[0, 1] >= c[-1, 1] else (c[-1], c[-2])
    u = (top - nxt) / np.hypot(*(top - nxt))
    hz = []
    for h in draft.horizons:
        if h.block == hw and (only is None or h.top_of in only):
            h = Horizon(h.top_of, affinity.translate(h.geometry, *(metres * u)),
                        h.above_ground, h.block)
        hz.append(h)
    return replace(draft, horizons=hz)


def test_rigid_thrust_restores_without_mismatch():
    # Analytic: a rigid hanging wall moved 1000 m up a planar 30-degree fault has every
    # horizon separated by exactly the slip (Dahlstrom 1969; test_kinematics.thrust).
    hz, f = thrust(slip=1000.0)
    r = check_fault_restoration(make_draft(hz, [f]))
    assert r.status == "pass", r.reasons
    (fc,) = r.cutoffs.faults
    assert fc.slip_m == pytest.approx(1000.0) and fc.slip_source == "recorded separations"
    assert [h.top_of for h in fc.horizons] == ["A", "B", "C", "D"]  # column order
    for h in fc.horizons:
        assert h.separation_m == pytest.approx(1000.0, abs=1e-6)
        assert h.mismatch_m == pytest.approx(0.0, abs=1e-6) and h.kind == "match"
        # flat beds against a 30-degree fault: the cutoff angle is the fault's dip
        assert h.cutoff_angle_deg == pytest.approx(30.0, abs=1e-6)
    # threshold: 10 % of the mean separation (no DEM pixel in this synthetic draft)
    assert fc.threshold_m == pytest.approx(100.0)
    (fs,) = r.separations.faults
    assert fs.spread_m == pytest.approx(0.0, abs=1e-6) and fs.status == "pass"
    assert r.to_dict()["cutoffs"]["faults"][0]["horizons"][0]["kind"] == "match"


def test_hanging_wall_shifted_along_the_fault_fails_by_the_shift():
    # Analytic: moving the hanging wall a further 200 m along the planar fault puts every
    # hanging-wall cutoff 200 m up the fault from where the recorded slip restores it.
    hz, f = thrust(slip=1000.0)
    draft = shifted(make_draft(hz, [f]), "F1", 200.0)
    r = check_cutoffs(draft)
    assert r.status == "fail"
    (fc,) = r.faults
    assert fc.slip_offset_m == pytest.approx(200.0, abs=1e-6)
    for h in fc.horizons:
        assert h.mismatch_m == pytest.approx(200.0, abs=1e-6)
        assert h.kind == "overlap" and h.exceeds
        assert h.along_bed_m == pytest.approx(200.0 * np.cos(np.radians(30.0)), abs=1e-6)
    assert "top of A" in r.reasons[0] and "overlap" in r.reasons[0]
    # Separations all grew by the same 200 m: still consistent with a rigid hanging wall.
    assert check_separations(draft).status == "pass"


def test_one_horizon_moved_fails_separation_consistency():
    hz, f = thrust(slip=1000.0)
    draft = shifted(make_draft(hz, [f]), "F1", -300.0, only={"C"})
    s = check_separations(draft)
    (fs,) = s.faults
    assert fs.separations_m["C"] == pytest.approx(700.0, abs=1e-6)
    assert fs.spread_m == pytest.approx(300.0, abs=1e-6)
    # threshold: 20 % of the mean separation (925 m), the tool's default
    assert fs.threshold_m == pytest.approx(0.2 * 925.0)
    assert s.status == "fail" and "top of C" in s.reasons[0]
    c = check_cutoffs(draft)
    worst = max(c.faults[0].horizons, key=lambda h: abs(h.mismatch_m))
    assert worst.top_of == "C" and worst.kind == "gap"
    assert worst.mismatch_m == pytest.approx(-300.0, abs=1e-6)


def test_fault_without_recorded_separations_says_so():
    hz, f = thrust(slip=1000.0)
    draft = shifted(make_draft(hz, [replace(f, separations={})]), "F1", 200.0)
    r = check_cutoffs(draft)
    (fc,) = r.faults
    assert fc.slip_source == "mean measured separation"
    assert fc.slip_m == pytest.approx(1200.0)
    # no recorded slip to restore by: not tested, with the reason (issue 12, bad input)
    assert r.status == "not_tested" and fc.status == "not_tested"
    assert any("records no separations" in x for x in fc.reasons)
    assert any("records no separations" in x for x in r.reasons)


def test_not_tested_with_reasons():
    r = check_fault_restoration(make_draft([], []))
    assert r.status == "not_tested"
    assert r.cutoffs.reasons == ["the section has no fault"]
    assert r.cutoffs.passed is None
    hz, f = thrust()
    lone = make_draft([h for h in hz if h.block == 0], [f])  # no footwall horizons
    c = check_cutoffs(lone)
    assert c.status == "not_tested"
    assert "no horizon is cut by the fault on both walls" in c.reasons[0]
    assert "cutoffs not tested" in c.lines()[0]
    assert check_separations(lone).status == "not_tested"


@pytest.mark.parametrize("kwargs", [{"fraction": -0.1}, {"fraction": float("nan")},
                                    {"pixels": 1000.0}, {"threshold_m": -5.0}])
def test_settings_out_of_range(kwargs):
    hz, f = thrust()
    with pytest.raises(ParameterError, match="cutoff mismatch"):
        check_cutoffs(make_draft(hz, [f]), **kwargs)


# --- the sample area ---------------------------------------------------------------


@pytest.fixture(scope="module")
def sample_a():
    from mapsection.build import build_section
    from mapsection.project import load_project

    project = load_project(AREA / "project.toml")
    return build_section(project, "A", warn=lambda m: None)


def test_sample_area_separations_measured(sample_a):
    # The three horizons the Kelmby Thrust cuts below the ground in section A: separations
    # of 394 m each (figures reported for the current draft: the lone -9° reading kept out
    # of the dip domains, the limbs either side of the straight fault drawn at the mean of
    # their dips, contacts from the corridor; before: 376, 415 and 520 m; the model's slip
    # is 400 m, sample_area/README.md).
    s = check_separations(sample_a)
    (fs,) = s.faults
    below = {t: v for t, v in fs.separations_m.items() if t not in fs.projected}
    assert sorted(round(v) for v in below.values()) == [394, 394, 394]
    assert fs.threshold_m == pytest.approx(max(0.2 * abs(fs.mean_m), 2 * 25.0))


def test_sample_area_projected_cutoffs_follow_the_rigid_hanging_wall(sample_a):
    # Dahlstrom 1969 (rigid hanging wall on a planar fault): every horizon separates by the
    # slip, the eroded ones cut on the fault's upward projection too. The sample model's
    # hanging wall is its footwall translated 400 m up the fault (sample_area/README.md),
    # so its top of the Brantel Shale, cut above the ground past the footwall's axial
    # surface between the -12° and +10° limbs, separates like the others: 394 m, as the
    # horizons cut below the ground (before the eroded hanging wall was carried from the
    # footwall: 609 m, its last -12° limb carried on to the fault).
    s = check_separations(sample_a)
    (fs,) = s.faults
    assert "Brantel Shale" in fs.projected
    assert fs.separations_m["Brantel Shale"] == pytest.approx(393.7, abs=1.0)
    assert fs.spread_m < 1.0 and fs.status == "pass"
    # The constructed cutoffs against the model's (sample_area/model.json; the model's
    # top of the Brantel Shale meets the fault at 7790 m (footwall) and 8130 m (hanging
    # wall) along section A, computed from mapsection.sample.SAMPLE_MODEL).
    from mapsection.sample import SAMPLE_MODEL

    (fc,) = check_cutoffs(sample_a).faults
    top = next(h for h in fc.horizons if h.top_of == "Brantel Shale")
    line = np.asarray(sample_a.line.vertices, float)
    for d, block in ((top.footwall_cutoff[0], "footwall"),
                     (top.hanging_wall_cutoff[0], "hanging_wall")):
        truth = _true_cutoff(SAMPLE_MODEL, line, "Brantel Shale", block)
        assert abs(d - truth) < 50.0, (block, d, truth)


def _true_cutoff(model, vertices, top_of: str, block: str) -> float:
    """Distance along the line where the model's (unfaulted) horizon of ``block`` meets the
    fault plane."""
    import shapely
    from shapely.geometry import LineString

    line = LineString(vertices)
    d = np.arange(0.0, line.length, 0.5)
    pts = shapely.line_interpolate_point(line, d)
    x, y = shapely.get_x(pts), shapely.get_y(pts)
    hu, hv = model._horizon_arrays[list(model.horizons).index(top_of)]
    u, a = model.to_profile(x, y)
    du, dv = model.hanging_wall_shift if block == "hanging_wall" else (0.0, 0.0)
    z = model._v_to_z(np.interp(u - du, hu, hv) + dv, a)
    i = np.flatnonzero(np.diff(np.sign(z - model.fault_elevation(x, y))) != 0)
    return float(d[i[0]])


def test_hand_edited_sample_section_fails_at_the_fault(sample_a):
    # Issue 12, section 5: the hanging wall shifted 200 m along a fault with about 400 m
    # of slip (the Kelmby Thrust, sample_area/README.md) fails at that fault, the
    # mismatch within 10 % of 200 m. The recorded separations stay those of the build.
    before = check_cutoffs(sample_a)
    edited = shifted(sample_a, "Kelmby Thrust", 200.0)
    after = check_cutoffs(edited)
    (fb,), (fa,) = before.faults, after.faults
    assert fa.fault == "Kelmby Thrust" and fa.status == "fail"
    assert fa.slip_offset_m == pytest.approx(200.0, rel=0.10)
    # every horizon's mismatch grew by the shift (within 10 %)
    moved = {h.top_of: h.mismatch_m for h in fa.horizons}
    for h in fb.horizons:
        assert moved[h.top_of] - h.mismatch_m == pytest.approx(200.0, rel=0.10)
    # the default threshold: the larger of 10 % of the mean separation and 2 pixels of 25 m
    assert fa.threshold_m == pytest.approx(max(0.1 * abs(fa.mean_separation_m), 50.0))


def test_bent_fault_compared_within_each_straight_stretch():
    # A ramp (30 degrees) above a gentler segment (10 degrees): the slip changes across the
    # bend (Suppe 1983), so horizons cut on different stretches are not compared together.
    # Cutoffs placed on the trace by arc length: hanging-wall cutoff = footwall cutoff +
    # separation up the fault (exact by construction of the geometry).
    from shapely.geometry import LineString

    from mapsection.draft import FaultTrace

    t30, t10 = np.radians(30.0), np.radians(10.0)
    top = np.array([9000.0, 1500.0])
    bend = top - 1600.0 * np.array([np.cos(t30), np.sin(t30)])
    low = bend - 4000.0 * np.array([np.cos(t10), np.sin(t10)])
    trace = LineString([top, bend, low])  # descends toward decreasing distance
    seps = {"A": 1000.0, "B": 1000.0, "C": 800.0, "D": 800.0}
    at = {"A": 200.0, "B": 1000.0, "C": 2200.0, "D": 3400.0}  # footwall cutoffs, from the top
    hz = []
    for n, u in at.items():
        fw = np.asarray(trace.interpolate(u).coords[0])
        hw = np.asarray(trace.interpolate(u - seps[n]).coords[0]) if u - seps[n] >= 0 else \
            top + (seps[n] - u) * np.array([np.cos(t30), np.sin(t30)])
        hz += [Horizon(n, LineString([(0.0, hw[1]), tuple(hw)]), block=0),
               Horizon(n, LineString([tuple(fw), (12000.0, fw[1])]), block=1)]
    f = FaultTrace("F", trace, 30.0, 270.0, -30.0, "thrust", seps)
    draft = make_draft(hz, [f], length=12000.0)
    s = check_separations(draft)
    (fs,) = s.faults
    assert fs.stretches == [["A", "B"], ["C", "D"]]
    assert fs.spread_m == pytest.approx(0.0, abs=1e-6) and s.status == "pass"
    assert "bends" in fs.reasons[0]
    c = check_cutoffs(draft)
    assert c.status == "pass", c.reasons
    assert {h.top_of: round(h.slip_m) for h in c.faults[0].horizons} == {
        "A": 1000, "B": 1000, "C": 800, "D": 800}
