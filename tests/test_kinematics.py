"""Kinematic consistency checks and the incremental sequence (mapsection.checks.kinematics,
mapsection.checks.sequence)."""

from __future__ import annotations

import numpy as np
import pytest
from conftest import KINK_COLUMN as COLUMN
from conftest import KINK_DEPTHS as DEPTHS
from conftest import TAN30
from conftest import flat_draft as restore_draft
from shapely.geometry import LineString

from mapsection.checks.fbf import compare_with_draft, fault_bend_fold
from mapsection.checks.kinematics import check_kinematics, horizon_crossings
from mapsection.checks.restore import restore_section
from mapsection.checks.sequence import incremental_sequence, write_sequence
from mapsection.draft import Draft, FaultTrace, Horizon


def make_draft(horizons, faults=(), length=10000.0, column=COLUMN) -> Draft:
    return restore_draft(horizons, faults, length=length, column=column, method="edited")


def thrust(xf=6000.0, slip=1000.0, toward=-1, name="F1", sense="thrust", hw_dip=0.0,
           depths=DEPTHS, x0=0.0, x1=10000.0, block0=0):
    """Flat beds cut by a fault dipping 30 degrees (toward decreasing distance when
    toward = -1); the hanging wall moved ``slip`` up the fault (analytic cutoffs)."""
    c, s = np.cos(np.radians(30.0)), np.sin(np.radians(30.0))
    hz = []
    for n, t in depths.items():
        # cutoffs on the plane through (xf, 0); the hanging wall moved up-dip by the slip
        x_fw = xf + toward * t / TAN30
        x_hw, y_hw = x_fw - toward * slip * c, -t + slip * s
        if toward < 0:
            hw_line = [(x0, y_hw - (x_hw - x0) * np.tan(np.radians(hw_dip))), (x_hw, y_hw)]
            fw_line = [(x_fw, -t), (x1, -t)]
            hz += [Horizon(n, LineString(hw_line), block=block0),
                   Horizon(n, LineString(fw_line), block=block0 + 1)]
        else:
            hw_line = [(x_hw, y_hw), (x1, y_hw)]
            fw_line = [(x0, -t), (x_fw, -t)]
            hz += [Horizon(n, LineString(fw_line), block=block0),
                   Horizon(n, LineString(hw_line), block=block0 + 1)]
    top = (xf - toward * 1500.0 / TAN30, 1500.0)
    bottom = (xf + toward * 2500.0 / TAN30, -2500.0)
    fault = FaultTrace(name, LineString([top, bottom]), 30.0, 270.0 if toward < 0 else 90.0,
                       30.0 * toward, sense, {n: slip for n in depths})
    return hz, fault


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
    from mapsection.checks.restore import clip_x, joined_horizons

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
