"""Topography test on hand-made drafts with straight or curved beds of known geometry.

References: analytic geometry of straight and parabolic lines (crossing points and
slopes worked out by hand below); shapely 2 as the reference library for lengths and
intersections; the apparent-dip sign convention of the project contract.
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np
import pytest
import shapely
from conftest import HOMOCLINE_DIP as DIP
from conftest import HOMOCLINE_LENGTH as LENGTH
from conftest import TOP_B, TOP_C, ground_line_of
from conftest import dips_at as _dips
from conftest import homocline_draft as _draft
from conftest import homocline_profile as _profile
from shapely.geometry import LineString

from mapsection.checks.topography import check_topography, ground_line
from mapsection.draft import Draft, Horizon
from mapsection.errors import CheckError
from mapsection.geology import Contact, FaultCrossing, SurfaceGeology, UnitInterval
from mapsection.project import Thresholds
from mapsection.stratigraphy import Column, Unit


def test_exact_section_fits_map():
    # Analytic crossings: the map contacts sit exactly where the beds meet the ground.
    r = check_topography(_draft(), Thresholds())
    assert r.passed, r.failures
    assert len(r.contact_misfits) == 2
    assert r.contact_rms_m == pytest.approx(0.0, abs=0.05)
    assert r.unit_agreement == pytest.approx(1.0, abs=1e-3)
    assert r.contact_threshold_m == 50.0  # max(2 px x 10 m, 50 m), common practice


def test_known_offset_gives_that_misfit():
    # Shifting every bed 120 m along the line moves each ground crossing by 120 m (analytic).
    r = check_topography(_draft(shift=120.0), Thresholds())
    mis = sorted(m.misfit_m for m in r.contact_misfits)
    assert mis == pytest.approx([120.0, 120.0], abs=0.05)
    assert r.contact_rms_m == pytest.approx(120.0, abs=0.05)
    assert abs(r.contact_worst_m) == pytest.approx(120.0, abs=0.05)
    assert {round(m.map_distance_m, 1) for m in r.contact_misfits} == {round(TOP_C, 1), TOP_B}
    assert not r.passed and any("RMS" in f for f in r.failures)
    # Disagreement 120 m at each of two contacts over 10 km (analytic).
    assert r.unit_agreement == pytest.approx(1 - 240.0 / LENGTH, abs=1e-3)


def test_mixed_offsets_rms_and_worst():
    # Map contacts 40 m after C's crossing and 60 m before B's: misfits -40 and +60 m;
    # RMS sqrt((40^2 + 60^2) / 2) = 50.99 m just over the 50 m default (analytic).
    r = check_topography(_draft(map_bounds=(TOP_C + 40.0, TOP_B - 60.0)), Thresholds())
    by = {m.top_of: m.misfit_m for m in r.contact_misfits}
    assert by["C"] == pytest.approx(-40.0, abs=0.05)
    assert by["B"] == pytest.approx(60.0, abs=0.05)
    assert r.contact_rms_m == pytest.approx(math.sqrt((40**2 + 60**2) / 2), abs=0.05)
    assert r.contact_worst_m == pytest.approx(60.0, abs=0.05)
    assert r.contact_worst_distance_m == pytest.approx(TOP_B - 60.0)
    assert not r.passed
    assert check_topography(_draft(map_bounds=(TOP_C + 40.0, TOP_B - 60.0)),
                            Thresholds(contact_rms_m=55.0)).passed


def test_wrong_thickness_misses_the_contacts():
    # B 40 % too thick (420 m instead of 300 m): C's top meets the ground
    # 120 / sin(10 deg) = 691 m earlier than the map shows (analytic).
    wrong = Column((Unit("A", 200.0), Unit("B", 420.0), Unit("C", 400.0)))
    r = check_topography(_draft(column=wrong), Thresholds())
    by = {m.top_of: m.misfit_m for m in r.contact_misfits}
    c_miss = by.get("C")
    # 691 m is beyond the 500 m pairing radius: C's map contact stays unpaired.
    assert c_miss is None
    assert any(c.top_of == "C" for c in r.unpaired_map_contacts)
    assert not r.passed


def test_unit_agreement_against_shapely_lengths():
    # Hilly ground, map contacts 150 m and 200 m off: the reference share is worked out with
    # shapely (reference library): ground line pieces inside each section unit polygon,
    # projected onto the distance axis, intersected with that unit's map intervals.
    z_fn = lambda d: 100.0 + 30.0 * np.sin(2 * np.pi * d / 2500.0)  # noqa: E731
    bounds = (TOP_C + 150.0, TOP_B - 200.0)
    draft = _draft(map_bounds=bounds, z_fn=z_fn)
    r = check_topography(draft, Thresholds())
    ground = ground_line_of(draft.profile)
    agree = 0.0
    for up in draft.units:
        on = shapely.get_parts(ground.intersection(up.geometry.buffer(1e-6)))
        sec_x = shapely.union_all([LineString([(p.bounds[0], 0), (p.bounds[2], 0)])
                                   for p in on if p.length > 0])
        mapped = shapely.union_all([LineString([(i.start_m, 0), (i.end_m, 0)])
                                    for i in draft.geology.intervals if i.unit == up.unit])
        agree += sec_x.intersection(mapped).length
    expected = agree / LENGTH
    assert expected < 0.985  # the case is not trivial
    assert r.unit_agreement == pytest.approx(expected, abs=2e-3)
    # Same answer from the horizon stack (self-consistency).
    r2 = check_topography(_draft(map_bounds=bounds, z_fn=z_fn, with_units=False), Thresholds())
    assert r2.unit_source == "horizon stack"
    assert r2.unit_agreement == pytest.approx(r.unit_agreement, abs=1e-3)
    # Every disagreeing stretch is reported with its distances.
    assert sum(s.to_m - s.from_m for s in r.disagreements) == pytest.approx(
        LENGTH * (1 - r.unit_agreement), rel=0.05)


def test_dip_rms_on_a_known_slope():
    # Straight beds dipping 10 deg toward +distance (analytic): measured 12, 8, 10, 15 give
    # misfits -2, 2, 0, -5 deg, RMS sqrt(33 / 4) = 2.87 deg, worst -5 at "s3".
    d = np.array([3500.0, 4000.0, 4500.0, 5000.0])
    e = np.full(4, 100.0)
    draft = _draft(dips=_dips(d, e, [12.0, 8.0, 10.0, 15.0]))
    r = check_topography(draft, Thresholds())
    assert [m.section_deg for m in r.dip_misfits] == pytest.approx([DIP] * 4, abs=1e-6)
    assert r.dip_rms_deg == pytest.approx(math.sqrt(33 / 4), abs=1e-6)
    assert r.dip_worst_deg == pytest.approx(-5.0, abs=1e-6)
    assert r.dip_worst_id == "s3" and r.dip_worst_distance_m == 5000.0
    assert r.passed
    bad = _draft(dips=_dips(d, e, [-10.0, -12.0, -8.0, -10.0]))  # wrong sense: 20 deg off
    rb = check_topography(bad, Thresholds())
    assert rb.dip_rms_deg == pytest.approx(math.sqrt((400 + 484 + 324 + 400) / 4), abs=1e-6)
    assert not rb.passed


def test_dip_on_a_curved_bed():
    # Parabola y = 100 - (x - 5000)^2 / 20000: slope dy/dx = -(x - 5000) / 10000, so the
    # signed apparent dip (positive descending toward +x) is atan((x - 5000) / 10000).
    xs = np.linspace(0.0, LENGTH, 4001)
    ys = 100.0 - (xs - 5000.0) ** 2 / 20000.0 - 50.0
    draft = _draft()
    draft = replace(draft, horizons=[Horizon("B", LineString(np.column_stack([xs, ys])))],
                    units=[])
    x = np.array([2000.0, 5000.0, 8500.0])
    y = 100.0 - (x - 5000.0) ** 2 / 20000.0 - 50.0
    expected = np.degrees(np.arctan((x - 5000.0) / 10000.0))
    draft.dips = _dips(x, y + 5.0, expected)  # measured 5 m above the bed
    r = check_topography(draft, Thresholds())
    assert [m.section_deg for m in r.dip_misfits] == pytest.approx(expected, abs=0.05)
    assert r.dip_rms_deg < 0.05


def test_fault_contact_is_set_apart():
    # A map contact at a mapped fault crossing is a fault contact, not a top of unit.
    draft = _draft()
    geo = draft.geology
    iv = (*geo.intervals[:2], UnitInterval(TOP_B, 7000.0, "A"), UnitInterval(7000.0, LENGTH, "B"))
    ct = (*geo.contacts[:2], Contact(7000.0, 100.0, "A", "B"))
    draft.geology = SurfaceGeology(iv, ct, (FaultCrossing(7005.0, 100.0, 60, 90, 60, "normal"),))
    r = check_topography(draft, Thresholds(unit_agreement=0.5))
    assert [c.distance_m for c in r.fault_contacts] == [7000.0]
    assert not r.unpaired_map_contacts


def test_unpaired_map_contacts_fail():
    # A map contact the section never reproduces (no horizon of C at all) fails the test.
    draft = _draft()
    draft.horizons = [h for h in draft.horizons if h.top_of != "C"]
    draft.units = []
    r = check_topography(draft, Thresholds(unit_agreement=0.0))
    assert [c.top_of for c in r.unpaired_map_contacts] == ["C"]
    assert r.max_unpaired == 0 and not r.passed


def test_ground_line_splits_at_gaps():
    prof = _profile(lambda d: np.where((d > 4000) & (d < 4500), np.nan, 100.0))
    g = ground_line(replace(_draft(), profile=prof))
    assert len(g.geoms) == 2
    assert g.geoms[0].coords[-1][0] == 4000.0 and g.geoms[1].coords[0][0] == 4500.0


def test_bad_input():
    with pytest.raises(CheckError, match="no horizons"):
        check_topography(replace(_draft(), horizons=[]), Thresholds())
    with pytest.raises(CheckError, match="unit_agreement"):
        check_topography(_draft(), Thresholds(unit_agreement=1.5))
    with pytest.raises(CheckError, match="dip_rms_deg"):
        check_topography(_draft(), Thresholds(dip_rms_deg=-1.0))
    with pytest.raises(CheckError, match="at least one"):
        check_topography(_draft(), Thresholds(contact_rms_m=0.0, contact_rms_pixels=0.0))


def test_sample_model_true_section_passes():
    # Self-consistency (invented data): the sample area's true horizons, taken from the
    # structural model it was generated from, meet the ground where its map has contacts.
    from pathlib import Path

    from mapsection.draft import FaultTrace
    from mapsection.project import load_project
    from mapsection.sample import SAMPLE_MODEL
    from mapsection.session import SectionSession

    project = load_project(Path(__file__).resolve().parents[1] / "sample_area" / "project.toml")
    spec = project.sections[0]
    with SectionSession.from_project(project, spec) as session:
        data = session.run()
    d = np.arange(0.0, data.line.length, 5.0)
    x, y = data.line.point_at(d)
    gz = data.profile.elevation_at(d)
    ground = ground_line(replace(_draft(), profile=data.profile))
    horizons = []
    # Block 0 is the start of the line: the thrust's hanging wall (it dips toward the start).
    for block, name in enumerate(("hanging_wall", "footwall")):
        for unit in project.column.names:
            z = SAMPLE_MODEL.horizon_elevation(unit, x, y, block=name)
            ok = np.isfinite(z)
            edges = np.flatnonzero(np.diff(np.concatenate([[0], ok.astype(int), [0]])))
            for a, b in zip(edges[::2], edges[1::2], strict=True):
                if b - a < 2:
                    continue
                ls = LineString(np.column_stack([d[a:b], z[a:b]]))
                for part in shapely.get_parts(ls.difference(ground.buffer(1e-3))):
                    mid = part.interpolate(0.5, normalized=True)
                    above = mid.y > data.profile.elevation_at(np.array([mid.x]))[0]
                    horizons.append(Horizon(unit, part, bool(above), block))
    fz = SAMPLE_MODEL.fault_elevation(x, y)
    ok = np.isfinite(fz) & (fz <= gz + 1.0)
    fault = FaultTrace("thrust", LineString(np.column_stack([d[ok], fz[ok]])), 30.0, 0.0,
                       -30.0, "thrust")
    draft = Draft(spec.name, "kink", data.line, data.profile, data.geology, data.dips,
                  project.column, horizons, [fault])
    r = check_topography(draft, project.thresholds)
    assert r.passed, r.failures
    assert r.n_map_contacts >= 5 and not r.unpaired_map_contacts
    assert r.contact_rms_m < 2 * data.profile.pixel_size
    assert r.unit_agreement > 0.99


def _bump(draft, half_width):
    # A piece of the top of C peaking 10 m above the flat ground (100 m) at 6000 m with
    # flanks of slope 10 / half_width: it meets the ground at 6000 -/+ half_width (analytic).
    run = 1.5 * half_width  # the flanks end 15 m below the peak
    piece = LineString([(6000.0 - run, 95.0), (6000.0, 110.0), (6000.0 + run, 95.0)])
    ground = LineString([(0.0, 100.0), (LENGTH, 100.0)])
    for part in shapely.get_parts(piece.difference(ground)):
        draft.horizons.append(Horizon("C", part, part.centroid.y > 100.0))
    return draft


def test_sliver_outcrop_narrower_than_the_limit():
    # A 40 m wide outcrop of C the map does not show (a horizon grazing the ground) counts
    # as two misfits of half its width, 20 m each (mapsection's rule, documented).
    r = check_topography(_bump(_draft(), 20.0), Thresholds())
    slivers = sorted(m.misfit_m for m in r.contact_misfits if m.kind == "sliver")
    assert slivers == pytest.approx([-20.0, 20.0], abs=0.01)
    assert r.contact_rms_m == pytest.approx(math.sqrt(2 * 20.0**2 / 4), abs=0.01)
    assert not r.unpaired_section_contacts and r.passed
    # 120 m wide: wider than the 50 m limit, so two contacts the map lacks: the test fails.
    r = check_topography(_bump(_draft(), 60.0), Thresholds())
    assert [round(c.distance_m) for c in r.unpaired_section_contacts] == [5940, 6060]
    assert not r.passed
