"""A diagnosis that names the fix (mapsection.checks.diagnosis)."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from mapsection.checks.diagnosis import (
    attitude_outliers,
    contact_outliers,
    diagnose,
    fit_thicknesses,
    sparse_stretches,
)
from mapsection.dips import ProjectedDips
from mapsection.draft import Draft
from mapsection.errors import ParameterError
from mapsection.geology import Contact, FaultCrossing, SurfaceGeology
from mapsection.line import SectionLine
from mapsection.stratigraphy import Column, Unit
from mapsection.topo_profile import Profile

AREA = Path(__file__).resolve().parents[1] / "sample_area"
COLUMN = Column((Unit("A", 300.0), Unit("B", 400.0), Unit("C", 200.0), Unit("D", 500.0),
                 Unit("E", 300.0)))
DIP = 20.0
GROUND = 1500.0


def dips_at(distances, apparent, ids=None) -> ProjectedDips:
    d = np.asarray(distances, float)
    a = np.asarray(apparent, float)
    n = len(d)
    ids = np.asarray(ids if ids is not None else [f"s{i + 1}" for i in range(n)], object)
    return ProjectedDips(ids, d, np.zeros(n), d, np.zeros(n), np.full(n, GROUND),
                         np.full(n, 0.0), np.abs(a), a, np.zeros(n, bool), np.zeros(n, bool))


def homocline_contacts(x0: float, shift: dict[int, float] | None = None) -> list[Contact]:
    """Contacts of a homocline dipping DIP toward increasing distance over level ground:
    the oldest unit first, each outcrop as wide as thickness / sin(dip) (outcrop width on
    level ground, Ragan, Structural Geology). ``shift``: contact index -> metres moved."""
    names = list(COLUMN.names)
    out, x = [], x0
    # older units lie toward smaller distance: E, D, C, B, A
    for k in range(len(names) - 1, 0, -1):
        x += COLUMN.thicknesses[k] / np.sin(np.radians(DIP))
        i = len(out)
        out.append(Contact(x + (shift or {}).get(i, 0.0), GROUND, names[k], names[k - 1]))
    return out


def make_draft(contacts, dips, faults=(), length=10000.0) -> Draft:
    line = SectionLine(np.array([[0.0, 0.0], [length, 0.0]]), name="H")
    d = np.linspace(0.0, length, 401)
    profile = Profile(d, d, np.zeros_like(d), np.full_like(d, GROUND), line, pixel_size=25.0)
    geology = SurfaceGeology((), tuple(contacts), tuple(faults))
    return Draft("H", "kink", line, profile, geology, dips, COLUMN)


def fault_at(x: float) -> FaultCrossing:
    return FaultCrossing(x, GROUND, 30.0, 270.0, -30.0, "thrust", "F")


def three_blocks(contacts) -> Draft:
    """The line cut by faults at 4950 and 9950 m into three blocks (15 km long)."""
    return make_draft(contacts, dips_at(np.linspace(100, 14900, 50), np.full(50, DIP)),
                      faults=[fault_at(4950.0), fault_at(9950.0)], length=15000.0)


# --- thickness ---------------------------------------------------------------------------


def test_thicknesses_of_a_homocline_from_outcrop_widths():
    # Ragan: on level ground a unit's thickness is its outcrop width times sin(dip).
    contacts = homocline_contacts(1000.0)
    draft = make_draft(contacts, dips_at(np.linspace(500, 6000, 12), np.full(12, DIP)))
    fits = {f.unit: f for f in fit_thicknesses(draft)}
    for name in ("B", "C", "D"):  # outcrops bounded by two contacts
        assert fits[name].fitted_m == pytest.approx(COLUMN.thicknesses[COLUMN.index(name)],
                                                    abs=1e-6)
        assert fits[name].status == "pass"
    assert fits["A"].status == "not_tested" and fits["E"].status == "not_tested"


def test_thickness_with_uncertainty_from_repeated_outcrops():
    # The same homocline repeated in three fault blocks, one block's contacts measured with
    # C 30 % thinner than the column says: the fit is the mean of the three widths with its
    # standard error from the residuals (ordinary least squares).
    c1, c2 = homocline_contacts(0.0), homocline_contacts(5000.0)
    # block 3: the C outcrop (between contacts 1 and 2) 30 % narrower, younger contacts follow
    w = -0.3 * 200.0 / np.sin(np.radians(DIP))
    c3 = [c if i < 2 else Contact(c.distance_m + w, c.elevation_m, c.unit_before,
                                  c.unit_after) for i, c in enumerate(homocline_contacts(10000.0))]
    draft = three_blocks(c1 + c2 + c3)
    fits = {f.unit: f for f in fit_thicknesses(draft)}
    fit = fits["C"]
    assert fit.n_pairs == 3
    assert fit.fitted_m == pytest.approx((200.0 + 200.0 + 140.0) / 3.0, abs=1e-6)
    # Residuals 20, 20 and -40 m in C's three equations, none elsewhere (B and D fit
    # exactly): s^2 = 2400 / (9 - 3) = 400 m^2 and var(C) = s^2 / 3 (three equal
    # observations), so the standard error is 20 / sqrt(3) m.
    assert fit.standard_error_m == pytest.approx(20.0 / np.sqrt(3.0), rel=1e-6)
    assert fits["B"].fitted_m == pytest.approx(400.0, abs=1e-6)


# --- the flawed sample variant (sample_area/README.md: Talvo Limestone 180 m, given 252) -----


@pytest.fixture(scope="module", params=["A", "B"])
def flawed(request):
    from mapsection.build import build_section
    from mapsection.checks.topography import check_topography
    from mapsection.project import load_project

    project = load_project(AREA / "project_flawed.toml")
    draft = build_section(project, request.param, warn=lambda m: None)
    return draft, check_topography(draft)


def test_flawed_variant_names_the_over_thick_unit_first(flawed):
    # Issue 12, section 5: the diagnosis names the over-thick unit first and its best-fit
    # thickness lies within 15 % of the true 180 m (the model, sample_area/README.md).
    draft, topo = flawed
    assert not topo.passed
    d = diagnose(draft)
    first = d.causes[0]
    assert first.kind == "thickness" and first.subject == "Talvo Limestone"
    assert first.figures["fitted_m"] == pytest.approx(180.0, rel=0.15)
    assert first.figures["column_m"] == 252.0
    assert d.lines()[0].startswith("1. Talvo Limestone: the contacts fit ")
    assert d.lines()[0].endswith("the column says 252 m")
    assert d.status == "fail"
    json.dumps(d.to_dict())  # plain JSON for checks.json


def test_true_sample_column_gives_no_thickness_cause():
    from mapsection.build import build_section
    from mapsection.project import load_project

    project = load_project(AREA / "project.toml")
    draft = build_section(project, "A", warn=lambda m: None)
    d = diagnose(draft)
    assert not [c for c in d.causes if c.kind == "thickness"]
    talvo = next(f for f in d.thicknesses if f.unit == "Talvo Limestone")
    assert talvo.fitted_m == pytest.approx(180.0, rel=0.15) and talvo.status == "pass"


# --- outliers ------------------------------------------------------------------------------


def test_homocline_reading_forty_degrees_off_is_the_first_outlier():
    # Issue 12, section 5; modified z-score (Iglewicz & Hoaglin 1993) > 3.5.
    rng = np.random.default_rng(7)
    d = np.linspace(300.0, 9700.0, 40)
    a = DIP + np.round(rng.normal(0.0, 2.0, len(d)))  # readings to whole degrees, 2 deg s.d.
    a[17] = DIP + 40.0
    ids = [f"att{i}" for i in range(len(d))]
    draft = make_draft(homocline_contacts(1000.0), dips_at(d, a, ids))
    out = attitude_outliers(draft)
    assert out and out[0].id == "att17"
    assert out[0].misfit_deg == pytest.approx(40.0, abs=4.0)
    assert all(o.id == "att17" for o in out)  # the scatter of the others is no outlier
    dg = diagnose(draft)
    assert dg.causes[0].kind == "attitude_outlier" and dg.causes[0].subject == "att17"
    assert "attitude att17 at" in dg.lines()[0]


def test_misplaced_contact_is_the_first_contact_outlier():
    # The homocline repeated in fault blocks; one contact moved 300 m along the line.
    # Its residuals on either side disagree; the others' are shared out by least squares.
    # Six blocks, so that the median absolute deviation has enough contacts to work on.
    blocks = [homocline_contacts(5000.0 * k, shift={2: 300.0} if k == 1 else None)
              for k in range(6)]
    draft = make_draft(sum(blocks, []),
                       dips_at(np.linspace(100, 29900, 90), np.full(90, DIP)),
                       faults=[fault_at(5000.0 * k - 50.0) for k in range(1, 6)],
                       length=30000.0)
    out = contact_outliers(draft)
    assert out, "no outlier"
    moved = blocks[1][2]
    assert out[0].map_distance_m == pytest.approx(moved.distance_m)
    assert out[0].id == f"top of C at {moved.distance_m:.0f} m"
    assert out[0].misfit_m < 0  # the fit places it back toward where it was
    assert 200.0 <= abs(out[0].misfit_m) <= 300.0  # least squares shares out part of it


# --- sparse stretches ---------------------------------------------------------------------


def test_sparse_stretch_and_the_corridor_that_fills_it():
    # Readings every 500 m at the start, then 1500-2200 m apart: one stretch from 1500 to
    # 9000 m holding 5 readings where one every 1000 m needs ceil(7500 / 1000) + 1 = 9.
    d = [500.0, 1000.0, 1500.0, 3000.0, 5200.0, 7400.0, 9000.0]
    draft = make_draft(homocline_contacts(1000.0), dips_at(d, np.full(len(d), DIP)))
    inside = [(x, 0.0) for x in d]
    outside = [(2000.0, 700.0), (4000.0, -750.0), (6000.0, 820.0), (8000.0, -1180.0),
               (8500.0, 1500.0), (12000.0, 100.0)]  # the last beyond the line's end
    (s,) = sparse_stretches(draft, attitude_xy=inside + outside, corridor_m=600.0)
    assert (s.start_m, s.end_m, s.n_readings, s.needed) == (1500.0, 9000.0, 5, 9)
    # 700, 750, 820 and 1180 m off the line: a corridor of 1200 m takes in 9
    assert s.suggested_corridor_m == 1200.0 and s.readings_at_suggestion == 9
    assert s.text() == ("5 readings over 7.5 km (1500-9000 m); widen the corridor to about "
                        "1200 m to take in 9")
    (s2,) = sparse_stretches(draft, attitude_xy=inside, corridor_m=600.0)
    assert s2.suggested_corridor_m is None and "too few readings" in s2.text()
    assert sparse_stretches(draft)[0].suggested_corridor_m is None


# --- three states and bad settings ---------------------------------------------------------


def test_no_reading_and_no_contact():
    d = diagnose(make_draft([], dips_at([], [])))
    # the whole line lacks readings: that is the cause found
    assert d.status == "fail" and [c.kind for c in d.causes] == ["sparse_readings"]
    assert d.causes[0].text.startswith("0 readings over 10.0 km")
    assert any("thicknesses not fitted" in r for r in d.reasons)
    short = diagnose(make_draft([], dips_at([], []), length=1500.0))
    assert short.status == "not_tested" and short.causes == []
    assert short.lines()[0].startswith("no likely cause found")


@pytest.mark.parametrize("kwargs", [{"thickness_fraction": 0.0}, {"spacing_m": -1.0},
                                    {"thickness_fraction": float("nan")}])
def test_bad_settings(kwargs):
    with pytest.raises(ParameterError, match="diagnosis"):
        diagnose(make_draft([], dips_at([], [])), **kwargs)


def test_sample_area_narrow_corridor_gets_a_wider_one_suggested():
    # Section A of the sample area with a 150 m corridor: the suggested corridor is checked
    # by counting the attitudes with shapely (a flat-capped buffer of the straight line).
    import csv
    from dataclasses import replace

    from shapely.geometry import LineString, Point

    from mapsection.build import build_section
    from mapsection.project import load_project

    project = load_project(AREA / "project.toml")
    spec = replace(project.section("A"), corridor=150.0)
    draft = build_section(project, spec, warn=lambda m: None)
    with open(AREA / "attitudes.csv", newline="") as fh:
        xy = [(float(r["x"]), float(r["y"])) for r in csv.DictReader(fh)]
    stretches = sparse_stretches(draft, attitude_xy=xy, corridor_m=150.0)
    assert stretches
    line = LineString(spec.line)

    def count(s, w):
        band = line.buffer(w, cap_style="flat")
        return sum(1 for p in map(Point, xy)
                   if band.covers(p) and s.start_m <= line.project(p) <= s.end_m)

    for s in stretches:
        assert s.n_readings < s.needed
        assert s.suggested_corridor_m is not None
        assert count(s, s.suggested_corridor_m) == s.readings_at_suggestion >= s.needed
        assert count(s, s.suggested_corridor_m - 100.0) < s.needed
