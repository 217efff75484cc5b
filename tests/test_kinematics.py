"""Kinematic consistency checks and the incremental sequence (mapsection.checks.kinematics,
mapsection.checks.sequence)."""

from __future__ import annotations

import numpy as np
import pytest
from conftest import KINK_DEPTHS as DEPTHS
from conftest import TAN30
from conftest import fault_draft as make_draft
from conftest import thrust_draft as thrust
from shapely.geometry import LineString

from mapsection.checks.fbf import compare_with_draft, fault_bend_fold
from mapsection.checks.kinematics import check_kinematics, horizon_crossings
from mapsection.checks.restore import restore_section
from mapsection.checks.sequence import incremental_sequence
from mapsection.draft import FaultTrace, Horizon
from mapsection.render.sequence import write_sequence


def test_consistent_thrust_passes():
    hz, f = thrust()
    k = check_kinematics(make_draft(hz, [f]))
    assert k.transport_direction == 1  # dips toward decreasing distance: transport toward +
    assert k.passed, k.failures
    # separation measured between the cutoffs along the fault = the slip (analytic)
    seps = k.separations["faults"]["F1"]["separations_m"]
    assert all(v == pytest.approx(1000.0, abs=1e-6) for v in seps.values())
    d = k.to_dict()
    assert d["transport_direction"] == "toward increasing distance"


def test_opposite_vergence_listed_with_distance():
    two = {"A": 0.0, "B": 300.0}
    hz1, f1 = thrust(xf=3000.0, name="F1", depths=two, x1=4000.0)
    hz2, f2 = thrust(xf=6000.0, name="F2", depths=two, x0=4500.0, block0=2)
    hz3, f3 = thrust(xf=8600.0, toward=1, name="F3", depths=two, x0=8000.0, block0=4)
    k = check_kinematics(make_draft(hz1 + hz2 + hz3, [f1, f2, f3]))
    assert k.transport_direction == 1
    assert not k.transport["passed"]
    ex = k.transport["exceptions"]
    assert [e["fault"] for e in ex] == ["F3"]
    assert ex[0]["distance_m"] == pytest.approx(8600.0 - 1500.0 / TAN30)
    assert not k.passed


def test_separation_against_sense():
    hz, f = thrust(sense="normal")  # hanging wall up on a fault mapped as normal
    k = check_kinematics(make_draft(hz, [f]))
    assert not k.separations["passed"]
    fails = k.separations["failures"]
    assert {x["top_of"] for x in fails} == set(DEPTHS)
    # reported at the hanging-wall cutoffs (analytic positions)
    cut_a = 6000.0 + 1000.0 * np.cos(np.radians(30.0))
    assert min(x["distance_m"] for x in fails) == pytest.approx(6000.0 - 1200 / TAN30 + 866.0254,
                                                                abs=1e-3)
    assert max(x["distance_m"] for x in fails) == pytest.approx(cut_a, abs=1e-6)
    assert not k.passed


def test_thrust_cutting_down_section_is_reported():
    # Hanging-wall beds rising at 45 degrees toward the transport direction while the fault
    # rises at 30: the fault cuts down-section (cutoff angle 30 - 45 = -15 degrees, analytic).
    hz, f = thrust(hw_dip=45.0, depths={"A": 0.0, "B": 300.0})
    k = check_kinematics(make_draft(hz, [f]))
    assert not k.cut_up_section["passed"]
    angles = [x["cutoff_angle_deg"] for x in k.cut_up_section["failures"]]
    assert angles == pytest.approx([-15.0, -15.0], abs=1e-6)
    assert not k.passed
    hz, f = thrust(hw_dip=20.0, depths={"A": 0.0, "B": 300.0})  # 30 - 20 > 0: cuts up
    assert check_kinematics(make_draft(hz, [f])).cut_up_section["passed"]


def test_crossing_horizons_found_with_distances():
    a = Horizon("A", LineString([(0, 0), (10000, 0)]))
    b = Horizon("B", LineString([(0, -300), (10000, 300)]))  # crosses A at 5000 m
    c = Horizon("C", LineString([(0, -900), (6000, -900), (5000, -1000), (5000, -800),
                                 (10000, -900)]))  # crosses itself at 5000 m
    d = Horizon("D", LineString([(0, -1200), (10000, -1200)]))
    e = Horizon("D", LineString([(0, -1000), (10000, 0)]), block=1)  # other block: ignored
    found = horizon_crossings(make_draft([a, b, c, d, e]))
    assert len(found) == 2
    pair = next(x for x in found if x["kind"] == "pair")
    assert (pair["top_of"], pair["other"]) == ("A", "B")
    assert pair["distance_m"] == pytest.approx(5000.0) and pair["elevation_m"] == pytest.approx(0)
    self_ = next(x for x in found if x["kind"] == "self")
    assert self_["top_of"] == "C" and self_["distance_m"] == pytest.approx(5000.0)
    assert self_["elevation_m"] == pytest.approx(-900.0)
    k = check_kinematics(make_draft([a, b, c, d]))
    assert not k.crossings["passed"] and k.crossings["count"] == 2
    # touching at an end is allowed
    t = Horizon("B", LineString([(0, -300), (10000, 0)]))
    assert horizon_crossings(make_draft([a, t])) == []


def fbf_draft(slip, model_slip=None):
    """A draft drawn from the fault-bend fold model (Suppe 1983) at ``model_slip``."""
    h, theta, flat = 1000.0, 20.0, -3000.0
    m = fault_bend_fold(h, theta, model_slip or slip, flat, {"D": 500.0, "C": 1300.0,
                                                              "B": 1800.0}, ramp_x=3000.0)
    xb = 3000.0 + h / np.tan(np.radians(theta))
    trace = LineString([(0.0, flat), (3000.0, flat), (xb, flat + h), (10000.0, flat + h)])
    hz = []
    for mh in m.horizons:
        c = np.asarray(mh.geometry.coords)
        c = c[(c[:, 0] >= 0.0) & (c[:, 0] <= 10000.0)]
        hz.append(Horizon(mh.name, LineString(c), block=0))
    fw = 3000.0 + 500.0 / np.tan(np.radians(theta))  # footwall cutoff of D on the ramp
    hz.append(Horizon("D", LineString([(fw, flat + 500.0), (10000.0, flat + 500.0)]), block=1))
    return make_draft(hz, [FaultTrace("R", trace, 20.0, 270.0, -20.0, "thrust", {})]), m


def test_fault_bend_fold_compared_at_measured_slip():
    draft, model = fbf_draft(900.0)
    k = check_kinematics(draft)
    (entry,) = k.fault_bend_folds
    assert entry["run"] and entry["hanging_wall_anticline"]
    assert entry["model"]["slip_m"] == pytest.approx(900.0, rel=1e-6)  # measured separation
    assert entry["model"]["ramp_dip"] == pytest.approx(20.0)
    assert entry["misfit"]["rms_m"] < 1.0  # the draft is the model (self-consistency)
    assert entry["within_tolerance"]
    # A fold drawn for a different slip misfits the model at the measured slip.
    draft2, _ = fbf_draft(900.0, model_slip=1600.0)
    draft2.horizons = [h for h in draft2.horizons if h.block == 0] + [
        h for h in fbf_draft(900.0)[0].horizons if h.block == 1]
    bad = compare_with_draft(draft2, draft2.faults[0], model)
    assert bad.rms_m > 50.0


def anticline_draft():
    ref = np.array([(0.0, 0.0), (3000.0, 0.0), (4000.0, 1000.0 * TAN30), (6000.0, 1000.0 * TAN30),
                    (7000.0, 0.0), (10000.0, 0.0)])
    d = np.diff(ref, axis=0)
    d /= np.hypot(d[:, 0], d[:, 1])[:, None]
    n = np.column_stack([d[:, 1], -d[:, 0]])
    m = np.vstack([n[:1], (n[:-1] + n[1:]) / (1.0 + np.sum(n[:-1] * n[1:], axis=1))[:, None],
                   n[-1:]])
    return make_draft([Horizon(k, LineString(ref + t * m)) for k, t in DEPTHS.items()])


@pytest.mark.parametrize("which", ["fold", "thrust"])
def test_incremental_sequence(which, tmp_path):
    if which == "fold":
        draft = anticline_draft()
        r = restore_section(draft, pin=500.0, loose=9500.0)
    else:
        hz, f = thrust()
        draft = make_draft(hz, [f])
        r = restore_section(draft, pin=500.0, loose=9500.0)
    frames = incremental_sequence(draft, r, n_steps=8)
    assert len(frames) >= 9  # 8 steps: frames 0 ... 8
    beds = {(p.top_of, p.block): p.bed_length_m for p in r.pieces}
    for fr in frames:  # bed lengths kept in every frame (Dahlstrom 1969)
        for h in fr.horizons:
            assert h.geometry.length == pytest.approx(beds[(h.top_of, h.block)], rel=1e-9)
    for h in frames[0].horizons:  # the first frame is flat
        assert np.ptp(np.asarray(h.geometry.coords)[:, 1]) == pytest.approx(0.0, abs=1e-6)
    from mapsection.checks.geometry import clip_x, joined_horizons

    joined = joined_horizons(draft)
    for h in frames[-1].horizons:  # the last frame is the draft
        ref = clip_x(joined[(h.top_of, h.block)], 500.0, 9500.0)
        assert h.geometry.hausdorff_distance(ref) < 1e-6
    paths = write_sequence(frames, tmp_path, column=draft.column, title=draft.name)
    assert [p.name for p in paths[:2]] == ["sequence_01.png", "sequence_02.png"]
    assert paths[-1].name == "sequence.gif" and len(paths) == len(frames) + 1
    from PIL import Image

    with Image.open(paths[-1]) as gif:
        assert gif.n_frames == len(frames)  # Pillow reads the frame count back


# --- three states for the fault-bend fold comparison (issue 12) ------------------------


def suppe_first_mode(theta):
    """Axial angle gamma (degrees) of a mode-I fault-bend fold over a ramp of cutoff angle
    theta stepping up from a flat (phi = theta), from Suppe's (1983, Am. J. Sci. 283)
    equation written out here and solved with scipy.optimize.brentq (first-mode branch)."""
    from scipy.optimize import brentq

    def phi(g):
        g, t = np.radians(g), np.radians(theta)
        a = np.sin(2 * g - t) - np.sin(t)
        return np.degrees(np.arctan(-np.sin(g - t) * a / (np.cos(g - t) * a - np.sin(g))))

    return brentq(lambda g: phi(g) - theta, 60.0, 89.999, xtol=1e-12)


def analytic_fbf_draft(slip=900.0, crest_shift=0.0):
    """A flat-ramp-flat thrust and its hanging-wall fold drafted from Suppe's (1983)
    first-mode relations, independently of mapsection.checks.fbf: the back limb dips theta
    between the axial surfaces A (the bisector at the lower bend) and A' (A moved ``slip``
    up the ramp); the crest is raised by slip sin(theta); the front limb lies between B
    (from the upper bend at gamma) and B' (B moved R slip along the upper flat, with
    R = sin(gamma - theta) / sin(gamma) from the continuity of the velocity normal to B).
    ``crest_shift`` moves the crest and front limb that far toward the foreland."""
    h, theta, flat, x0 = 1000.0, 20.0, -3000.0, 3000.0
    t = np.radians(theta)
    g = np.radians(suppe_first_mode(theta))
    r = np.sin(g - t) / np.sin(g)
    xb = h / np.tan(t)
    rise = slip * np.sin(t)
    hz = []
    for name, d in {"C": 1300.0, "B": 1800.0}.items():  # above the ramp top
        xa = -d * np.tan(t / 2)
        xa2 = slip * np.cos(t) - d * np.tan(t / 2)
        xbb = xb + (d + rise - h) / np.tan(g) + crest_shift
        xbp = xb + r * slip + (d - h) / np.tan(g) + crest_shift
        pts = [(-3000.0, d), (xa, d), (xa2, d + rise), (xbb, d + rise), (xbp, d), (7000.0, d)]
        hz.append(Horizon(name, LineString([(x0 + x, flat + y) for x, y in pts]), block=0))
    d = 500.0  # cut by the ramp: back limb, then raised flat to its cutoff up the ramp
    cut_hw = (d / np.tan(t) + slip * np.cos(t), d + rise)
    pts = [(-3000.0, d), (-d * np.tan(t / 2), d), (slip * np.cos(t) - d * np.tan(t / 2),
                                                  d + rise), cut_hw]
    hz.append(Horizon("D", LineString([(x0 + x, flat + y) for x, y in pts]), block=0))
    hz.append(Horizon("D", LineString([(x0 + d / np.tan(t), flat + d), (10000.0, flat + d)]),
                      block=1))
    trace = LineString([(0.0, flat), (x0, flat), (x0 + xb, flat + h), (10000.0, flat + h)])
    return make_draft(hz, [FaultTrace("R", trace, 20.0, 270.0, -20.0, "thrust", {})])


def test_suppe_first_mode_fold_drafted_exactly_passes():
    k = check_kinematics(analytic_fbf_draft())
    (entry,) = k.fault_bend_folds
    assert entry["run"] and entry["status"] == "pass", entry
    assert entry["model"]["slip_m"] == pytest.approx(900.0, abs=1e-6)  # measured on D
    assert entry["misfit"]["rms_m"] < 1.0 and entry["misfit"]["hinge_offset_m"] < 1.0
    assert k.fault_bend == {"status": "pass", "compared": 1, "reasons": []}
    assert k.status == "pass" and k.passed


def test_suppe_fold_with_its_crest_shifted_fails():
    k = check_kinematics(analytic_fbf_draft(crest_shift=300.0))
    (entry,) = k.fault_bend_folds
    assert entry["run"] and entry["status"] == "fail"
    # the front-limb hinges lie 300 m from the model's (tolerance: 10 % of the 1000 m ramp)
    assert entry["misfit"]["hinge_offset_m"] == pytest.approx(300.0, abs=1.0)
    assert entry["misfit"]["hinge_offset_m"] > entry["tolerance_m"] == pytest.approx(100.0)
    assert k.fault_bend["status"] == "fail" and k.status == "fail" and not k.passed
    assert any("fault-bend fold model misfits" in f for f in k.failures)


def test_fold_model_not_run_is_not_tested_with_its_reason():
    # A 32-degree ramp has no first-mode solution (Suppe 1983: none beyond about 30 degrees).
    hz, f = thrust(slip=400.0)
    c, s = np.cos(np.radians(32.0)), np.sin(np.radians(32.0))
    steep = FaultTrace("F1", LineString([(6000.0 + 1500 * c / s, 1500.0),
                                         (6000.0 - 2500 * c / s, -2500.0)]),
                       32.0, 270.0, -32.0, "thrust", {"A": 400.0})
    bump = Horizon("A", LineString([(0.0, 100.0), (2000.0, 400.0), (4000.0, 100.0)]), block=0)
    k = check_kinematics(make_draft([bump, *hz[2:]], [steep]))
    (e,) = k.fault_bend_folds
    assert e["status"] == "not_tested" and "no mode-I solution" in e["reasons"][0]
    assert k.fault_bend["compared"] == 0 and k.fault_bend["status"] == "not_tested"


@pytest.fixture(scope="module")
def sample_kinematics():
    from pathlib import Path

    from mapsection.build import build_section
    from mapsection.project import load_project

    project = load_project(Path(__file__).resolve().parents[1] / "sample_area" / "project.toml")
    return check_kinematics(build_section(project, "A", warn=lambda m: None))


def test_sample_area_fault_bend_comparison_not_tested(sample_kinematics):
    # Issue 12, section 5: the Kelmby Thrust dips 32 degrees in the profile plane
    # (sample_area/README.md); Suppe's (1983) first mode has no solution for it.
    k = sample_kinematics
    (entry,) = k.fault_bend_folds
    assert not entry["run"] and entry["status"] == "not_tested"
    assert "no mode-I solution" in entry["reasons"][0]
    assert k.fault_bend["status"] == "not_tested" and k.fault_bend["compared"] == 0
    assert any(r.startswith("fault-bend fold comparison: not tested") for r in k.reasons)
    d = k.to_dict()
    assert d["fault_bend"]["compared"] == 0
    from mapsection.checks.summary import _fault_bend_text

    assert "compared" not in _fault_bend_text(d["fault_bend"])
