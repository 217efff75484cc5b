"""Kink-band (dip-domain) construction against analytic kink-fold geometry."""

from __future__ import annotations

import numpy as np
import pytest
import shapely
from conftest import no_dips as _no_dips
from shapely.geometry import LineString, Point

from mapsection.construct import base_name, build_draft
from mapsection.construct.constraints import Constraints
from mapsection.construct.domains import Domain, group_domains
from mapsection.construct.frame import SectionFrame as Frame
from mapsection.construct.kink import fit_kink
from mapsection.dips import ProjectedDips
from mapsection.geology import Contact, SurfaceGeology, UnitInterval
from mapsection.line import SectionLine
from mapsection.notes import Notes
from mapsection.stratigraphy import Column, Unit
from mapsection.topo_profile import Profile

L = 10000.0


def flat_profile(line: SectionLine, z0: float = 0.0) -> Profile:
    d = np.linspace(0.0, line.length, 1001)
    return Profile(d, d, np.zeros_like(d), np.full_like(d, z0), line, None, 10.0)


def projected(dist, apparent) -> ProjectedDips:
    dist = np.asarray(dist, float)
    a = np.asarray(apparent, float)
    n = len(dist)
    z = np.zeros(n)
    return ProjectedDips(np.arange(n), dist, z, dist, z, z, z, np.abs(a), a,
                         np.zeros(n, bool), np.zeros(n, bool))


def contacts_from_depth(depth_fn, column: Column, x) -> tuple[Contact, ...]:
    """Contacts where the true stratigraphic depth at the ground crosses each unit top."""
    s = depth_fn(x)
    out = []
    tops = column.depth_to_top[1:]
    for i, top in enumerate(tops, start=1):
        cross = np.flatnonzero(np.diff(np.sign(s - top)) != 0)
        for j in cross:
            xc = x[j] + (top - s[j]) * (x[j + 1] - x[j]) / (s[j + 1] - s[j])
            older_after = s[j + 1] > s[j]
            young, old = column.names[i - 1], column.names[i]
            out.append(Contact(float(xc), 0.0, young if older_after else old,
                               old if older_after else young))
    return tuple(sorted(out, key=lambda c: c.distance_m))


def merged(draft, top_of: str) -> LineString:
    """A horizon's pieces (below and above ground) as one line within the frame."""
    parts = [h.geometry for h in draft.horizons if h.top_of == top_of]
    m = shapely.line_merge(shapely.union_all(parts))
    assert m.geom_type == "LineString", top_of
    return m


COLUMN = Column((Unit("Alder", 200.0), Unit("Birch", 300.0), Unit("Cedar", 400.0),
                 Unit("Dogwood", 500.0), Unit("Elm", 600.0)))


def symmetric_anticline(x1=4000.0, x2=6000.0, dip=30.0, s_crest=700.0):
    """Limbs at -dip and +dip, a flat crest between hinges x1, x2 on horizontal ground."""
    line = SectionLine(np.array([[0.0, 0.0], [L, 0.0]]), name="K")
    sin = np.sin(np.radians(dip))

    def depth(x):
        return s_crest - sin * np.maximum(x1 - x, 0.0) - sin * np.maximum(x - x2, 0.0)

    x = np.linspace(0.0, L, 20001)
    geology = SurfaceGeology((UnitInterval(0.0, L, "Alder"),),
                             contacts_from_depth(depth, COLUMN, x), ())
    dips = projected([500, 1500, 2500, 3500, 3800, 4500, 5500, 6200, 6500, 7500, 8500, 9500],
                     [-dip] * 4 + [-dip] + [0, 0] + [dip] * 5)
    return line, geology, dips, depth


def test_symmetric_kink_axial_surfaces_bisect_and_meet_at_analytic_depth():
    line, geology, dips, _ = symmetric_anticline()
    dips = projected([500, 1500, 2500, 3500, 3800, 4200, 5800, 6200, 6500, 7500, 8500, 9500],
                     [-30] * 5 + [0, 0] + [30] * 5)
    draft = build_draft(line, flat_profile(line), geology, dips, COLUMN, depth=6000.0)
    assert [round(d.dip, 6) for d in draft.domains] == [-30.0, 0.0, 30.0]
    # The crest has no contact of its own: positioned from its neighbours, and said so.
    assert any("no map contact of its own" in m for m in draft.log)
    # Each axial surface bisects the angle between its two domains' beds (Suppe 1985:
    # the axial surface bisects the interlimb angle so that bed thickness is kept).
    for ax in draft.axial_surfaces:
        c = np.asarray(ax.geometry.coords)
        axis = np.degrees(np.arctan2(c[0, 1] - c[-1, 1], c[0, 0] - c[-1, 0])) % 180.0
        bed_l, bed_r = (-ax.dip_left) % 180.0, (-ax.dip_right) % 180.0

        def angle(a, b):
            x = abs(a - b) % 180.0
            return min(x, 180.0 - x)

        assert angle(axis, bed_l) == pytest.approx(angle(axis, bed_r), abs=1e-6)
    # Hinges at x1 = 4000, x2 = 6000 on horizontal ground, crest flat, limbs 30°:
    # each hinge's axial surface leans 15° from vertical toward the crest, so they
    # meet (W/2)·tan(75°) = 1000·tan(75°) below the ground (analytic; Suppe 1985,
    # two axial surfaces of a kink anticline meeting at depth).
    grounded = sorted(a.ground_distance_m for a in draft.axial_surfaces
                      if np.isfinite(a.ground_distance_m))
    assert grounded == pytest.approx([4000.0, 6000.0], abs=0.5)
    z_meet = -1000.0 * np.tan(np.radians(75.0))
    lows = [np.asarray(a.geometry.coords)[-1] for a in draft.axial_surfaces
            if np.isfinite(a.ground_distance_m)]
    for p in lows:
        assert p == pytest.approx([5000.0, z_meet], abs=0.5)
    # Below it one axial surface continues, bisecting the two limbs (-30/+30: vertical).
    below = [a for a in draft.axial_surfaces if (a.dip_left, a.dip_right) == (-30.0, 30.0)]
    assert len(below) == 1
    c = np.asarray(below[0].geometry.coords)
    assert c[0] == pytest.approx([5000.0, z_meet], abs=0.5)
    assert np.allclose(c[:, 0], 5000.0, atol=0.5)
    assert any("meet at depth" in m for m in draft.log)


def _thickness_ok(draft, column: Column, frame_pad: float = 50.0) -> None:
    """Perpendicular thickness between successive horizons, measured with shapely's
    distance: equals the column thickness in every domain and never thins across an
    axial surface (1 %)."""
    names = [*column.names, base_name(column)]
    xmin, xmax = 0.0, draft.line.length
    for upper, lower, t in zip(names[:-1], names[1:], column.thicknesses, strict=True):
        a, b = merged(draft, upper), merged(draft, lower)
        for first, second in ((a, b), (b, a)):
            coords = np.asarray(first.coords)
            mids = 0.5 * (coords[1:] + coords[:-1])
            pts = np.vstack([mids, coords])
            keep = ((pts[:, 0] > xmin + 3 * t) & (pts[:, 0] < xmax - 3 * t)
                    & (pts[:, 1] > draft.base_elevation_m + 3 * t))
            dist = shapely.distance(shapely.points(pts[keep]), second)
            if len(dist) == 0:
                continue
            assert dist.min() >= 0.99 * t, (upper, lower)
            seg = shapely.distance(shapely.points(mids[keep[: len(mids)]]), second)
            # Every domain's straight piece (its middle): the thickness apart, within 1 %.
            assert len(seg) and np.allclose(seg, t, rtol=0.01), (upper, lower)
        # At the inner vertex of every kink the thickness is exact too.
        inner = [shapely.distance(Point(v), b) for v in np.asarray(a.coords)[1:-1]]
        inner += [shapely.distance(Point(v), a) for v in np.asarray(b.coords)[1:-1]]
        assert min(abs(x - t) for x in inner) <= 0.01 * t


def test_thickness_kept_in_domains_and_across_axial_surfaces():
    line, geology, dips, _ = symmetric_anticline()
    draft = build_draft(line, flat_profile(line), geology, dips, COLUMN, depth=6000.0)
    _thickness_ok(draft, COLUMN)


WIDE_COLUMN = Column(tuple(Unit(f"U{i:02d}", 200.0) for i in range(12)))


def wide_gap_case(h_true=3600.0, s_h=700.0):
    """Two domains (10° and 40°, both descending toward +x) whose dips leave a 3 km
    gap (3000-6000 m); the true hinge is at 3600 m, far from the gap's middle."""
    line = SectionLine(np.array([[0.0, 0.0], [L, 0.0]]), name="W")
    s10, s40 = np.sin(np.radians(10.0)), np.sin(np.radians(40.0))

    def depth(x):
        # Beds descending toward +x: the ground goes up-section (younger) toward +x.
        return np.where(x < h_true, s_h - (x - h_true) * s10, s_h - (x - h_true) * s40)

    x = np.linspace(0.0, L, 40001)
    contacts = contacts_from_depth(depth, WIDE_COLUMN, x)
    geology = SurfaceGeology((UnitInterval(0.0, L, "U00"),), contacts, ())
    dips = projected([300, 1200, 2100, 3000, 6000, 6400, 6800], [10, 10, 10, 10, 40, 40, 40])
    return line, geology, dips, depth


def test_hinge_position_from_the_data_in_a_wide_gap():
    line, geology, dips, depth = wide_gap_case()
    prof = flat_profile(line)
    draft = build_draft(line, prof, geology, dips, WIDE_COLUMN, depth=2500.0)
    ax = [a for a in draft.axial_surfaces if np.isfinite(a.ground_distance_m)]
    assert len(ax) == 1
    assert ax[0].ground_distance_m == pytest.approx(3600.0, abs=5.0)
    # The constructed horizons match the true kink model (self-consistency with an
    # analytic kink: the axial surface bisects 10° and 40°, bed lines are straight).
    assert max(abs(r.residual_m) for r in draft.residuals) < 1.0
    truth_err = _horizon_error(draft, depth)
    assert truth_err < 1.0
    # A hinge put at the gap's midpoint by rule (4500 m) cannot fit the same contacts:
    # its horizons miss the map contacts by far more than the data-placed hinge.
    ground = prof.elevation_at
    frame = Frame(L, -2500.0, 2400.0, 0.0, 0.0)
    doms = [Domain(300.0, 4500.0, -10.0, 4), Domain(4500.0, 6800.0, -40.0, 3)]
    contact_s = np.array([WIDE_COLUMN.depth_to_top[WIDE_COLUMN.index(
        max(c.unit_before, c.unit_after))] for c in geology.contacts])
    cd = np.array([c.distance_m for c in geology.contacts])
    cons = Constraints(cd, np.zeros(len(cd)), contact_s, np.ones(len(cd)), ("",) * len(cd),
                       np.ones(len(cd), bool))
    mid = fit_kink(doms, cons, ground, frame, 200.0, Notes())
    mid_res = mid.depth_at(cd, np.zeros(len(cd))) - contact_s
    assert np.max(np.abs(mid_res)) > 50.0


def _horizon_error(draft, depth_fn) -> float:
    """Largest error of the constructed ground crossings against the true depth field."""
    errs = []
    for name, s in zip(WIDE_COLUMN.names, WIDE_COLUMN.depth_to_top, strict=True):
        for h in draft.horizons:
            if h.top_of != name or h.above_ground:
                continue
            pts = shapely.get_coordinates(h.geometry)
            at_ground = pts[np.abs(pts[:, 1]) < 1e-6]
            errs.extend(np.abs(depth_fn(at_ground[:, 0]) - s))
    return float(max(errs))


def test_wide_gap_thickness():
    line, geology, dips, _ = wide_gap_case()
    draft = build_draft(line, flat_profile(line), geology, dips, WIDE_COLUMN, depth=2500.0)
    _thickness_ok(draft, WIDE_COLUMN)


def test_dip_domains_follow_the_tolerance():
    rng = np.random.default_rng(3)
    d = np.arange(20) * 100.0
    true = np.r_[np.full(7, 12.0), np.full(6, 35.0), np.full(7, -20.0)]
    phi = -(true + rng.uniform(-1.5, 1.5, 20))
    doms = group_domains(d, phi, np.ones(20), 5.0)
    assert [dm.n_dips for dm in doms] == [7, 6, 7]
    assert [round(dm.dip) for dm in doms] == [12, 35, -20]
    # A tighter tolerance than the scatter splits domains.
    assert len(group_domains(d, phi, np.ones(20), 0.5)) > 3


def test_projected_parts_above_ground_are_stored_apart():
    line, geology, dips, _ = symmetric_anticline()
    draft = build_draft(line, flat_profile(line), geology, dips, COLUMN, depth=3000.0)
    above = [h for h in draft.horizons if h.above_ground]
    below = [h for h in draft.horizons if not h.above_ground]
    assert above and below
    assert all(np.asarray(h.geometry.coords)[:, 1].min() >= -1e-6 for h in above)
    assert all(np.asarray(h.geometry.coords)[:, 1].max() <= 1e-6 for h in below)
    # Unit polygons lie below the ground, within the frame, and tile it between the
    # ground and the base of the column (areas add up: shapely as reference).
    frame_below = shapely.box(0, draft.base_elevation_m, L, 0.0)
    units = shapely.union_all([u.geometry for u in draft.units])
    assert units.difference(frame_below).area < 1e-3
    base = merged(draft, base_name(COLUMN))
    assert sum(u.geometry.area for u in draft.units) == pytest.approx(units.area, rel=1e-9)
    assert base.length > 0


def test_no_dips_and_no_default_is_refused():
    from mapsection.errors import ConstructionError

    line, geology, _, _ = symmetric_anticline()
    with pytest.raises(ConstructionError, match="no dips within the corridor.*default_dip"):
        build_draft(line, flat_profile(line), geology, _no_dips(), COLUMN)


def test_no_dips_with_default_dip_warns_and_builds():
    line, _, _, _ = symmetric_anticline()
    # A homocline at 20° (descending toward +x): contacts from the analytic depth field.
    sin = np.sin(np.radians(20.0))
    x = np.linspace(0.0, L, 20001)
    geology = SurfaceGeology((UnitInterval(0.0, L, "Alder"),),
                             contacts_from_depth(lambda x: 1800.0 - x * sin, COLUMN, x), ())
    msgs = []
    draft = build_draft(line, flat_profile(line), geology, _no_dips(), COLUMN, default_dip=20.0,
                        warn=msgs.append)
    assert any("no dips within the corridor" in m and "20" in m for m in msgs)
    assert [d.dip for d in draft.domains] == [pytest.approx(20.0)]
    assert max(abs(r.residual_m) for r in draft.residuals) < 1e-6


def test_contradictory_contacts_reported_with_both_distances():
    line, _, _, _ = symmetric_anticline()
    sin = np.sin(np.radians(20.0))
    x = np.linspace(0.0, L, 20001)
    good = contacts_from_depth(lambda x: 1800.0 - x * sin, COLUMN, x)
    # The 20° dip gives older-before contacts (e.g. Dogwood|Cedar); one is reversed at 8500 m.
    bad = Contact(8500.0, 0.0, "Cedar", "Dogwood")
    geology = SurfaceGeology((UnitInterval(0.0, L, "Alder"),),
                             tuple(sorted([*good, bad], key=lambda c: c.distance_m)), ())
    msgs = []
    draft = build_draft(line, flat_profile(line), geology, projected([1000, 5000, 9000],
                                                                     [20, 20, 20]),
                        COLUMN, warn=msgs.append)
    hits = [m for m in msgs if "contradictory contacts" in m]
    assert hits and "8500 m" in hits[0]
    other = next(c for c in good if {c.unit_before, c.unit_after} == {"Cedar", "Dogwood"})
    assert f"{other.distance_m:.0f} m" in hits[0]
    assert any("contradictory" in m for m in draft.log)


def test_unit_missing_from_the_column_is_listed():
    from mapsection.errors import StratigraphyError

    line, geology, dips, _ = symmetric_anticline()
    geology = SurfaceGeology((UnitInterval(0.0, 5000.0, "Alder"), UnitInterval(5000, L, "Zelkova"),
                              UnitInterval(6000, 7000, "Yew")), geology.contacts, ())
    with pytest.raises(StratigraphyError, match="Yew, Zelkova"):
        build_draft(line, flat_profile(line), geology, dips, COLUMN)


def test_zero_thickness_and_unknown_method_rejected():
    from mapsection.errors import ParameterError, StratigraphyError

    with pytest.raises(StratigraphyError, match="thickness must be > 0"):
        Column((Unit("Alder", 100.0), Unit("Birch", 0.0)))
    with pytest.raises(StratigraphyError, match="thickness must be > 0"):
        Column((Unit("Alder", -5.0),))
    line, geology, dips, _ = symmetric_anticline()
    with pytest.raises(ParameterError, match="unknown construction method 'spline'"):
        build_draft(line, flat_profile(line), geology, dips, COLUMN, method="spline")


def test_symmetric_kink_syncline_axial_surfaces_meet_above_ground():
    # The kink rule upward (Suppe 1985): over a flat-bottomed syncline (trough between
    # hinges at 4500 and 5500 m, limbs 30°) the two axial surfaces lean 15° from vertical
    # toward the trough's middle and meet 500·tan(75°) above the ground (analytic);
    # above that one axial surface continues, bisecting the limbs (vertical).
    line = SectionLine(np.array([[0.0, 0.0], [L, 0.0]]), name="S")
    sin = np.sin(np.radians(30.0))

    def depth(x):
        return 300.0 + sin * np.maximum(4500.0 - x, 0.0) + sin * np.maximum(x - 5500.0, 0.0)

    x = np.linspace(0.0, L, 20001)
    geology = SurfaceGeology((UnitInterval(0.0, L, "Birch"),),
                             contacts_from_depth(depth, COLUMN, x), ())
    dips = projected([500, 1500, 2500, 3500, 4300, 4700, 5300, 5700, 6500, 7500, 8500, 9500],
                     [30] * 5 + [0, 0] + [-30] * 5)
    draft = build_draft(line, flat_profile(line), geology, dips, COLUMN, depth=2000.0)
    assert [round(d.dip, 6) for d in draft.domains] == [30.0, 0.0, -30.0]
    z_meet = 500.0 * np.tan(np.radians(75.0))
    grounded = [a for a in draft.axial_surfaces if np.isfinite(a.ground_distance_m)]
    assert sorted(a.ground_distance_m for a in grounded) == pytest.approx([4500.0, 5500.0],
                                                                           abs=0.5)
    for a in grounded:  # each runs from where the two meet (its upper end) downward
        assert np.asarray(a.geometry.coords)[0] == pytest.approx([5000.0, z_meet], abs=0.5)
    above = [a for a in draft.axial_surfaces if (a.dip_left, a.dip_right) == (30.0, -30.0)]
    assert len(above) == 1
    c = np.asarray(above[0].geometry.coords)
    assert c[-1] == pytest.approx([5000.0, z_meet], abs=0.5)
    assert np.allclose(c[:, 0], 5000.0, atol=0.5)
    assert any("meet upward" in m for m in draft.log)
