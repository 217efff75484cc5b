"""Arc (Busk 1929) construction against an analytic circular (concentric) fold."""

from __future__ import annotations

import numpy as np
import pytest
import shapely

from mapsection.construct import base_name, build_draft
from mapsection.construct._common import Frame, contact_constraints
from mapsection.construct.arc import ArcModel
from mapsection.dips import ProjectedDips
from mapsection.geology import Contact, SurfaceGeology, UnitInterval
from mapsection.line import SectionLine
from mapsection.profile import Profile
from mapsection.stratigraphy import Column, Unit

L = 10000.0
CENTRE = np.array([5000.0, -1500.0])
R0 = 2200.0  # radius of the top of the column (700 m of it eroded at the crest)
COLUMN = Column((Unit("Ash", 200.0), Unit("Bay", 300.0), Unit("Cob", 400.0),
                 Unit("Dun", 500.0), Unit("Eld", 600.0), Unit("Fen", 600.0)))


def circular_fold():
    """An anticline whose beds are circles about CENTRE; ground horizontal at z = 0."""
    line = SectionLine(np.array([[0.0, 0.0], [L, 0.0]]), name="C")
    d = np.linspace(0.0, L, 1001)
    prof = Profile(d, d, np.zeros_like(d), np.zeros_like(d), line, None, 10.0)
    xs = np.arange(1000.0, 9001.0, 800.0)
    n = (np.column_stack([xs, np.zeros_like(xs)]) - CENTRE)
    n /= np.hypot(*n.T)[:, None]  # younging normal: away from the centre
    # Tangent to the circle, younger on the left; apparent dip = minus its angle.
    apparent = -np.degrees(np.arctan2(-n[:, 0], n[:, 1]))
    k = len(xs)
    z = np.zeros(k)
    dips = ProjectedDips(np.arange(k), xs, z, xs, z, z, z, np.abs(apparent), apparent,
                         np.zeros(k, bool), np.zeros(k, bool))
    contacts = []
    for i, s in enumerate(COLUMN.depth_to_top[1:], start=1):
        r = R0 - s
        if r <= abs(CENTRE[1]):
            continue
        dx = np.sqrt(r**2 - CENTRE[1] ** 2)
        young, old = COLUMN.names[i - 1], COLUMN.names[i]
        contacts += [Contact(CENTRE[0] - dx, 0.0, young, old),
                     Contact(CENTRE[0] + dx, 0.0, old, young)]
    contacts.sort(key=lambda c: c.distance_m)
    geology = SurfaceGeology((UnitInterval(0.0, L, "Ash"),), tuple(contacts), ())
    return line, prof, geology, dips


def test_busk_finds_the_centre_and_radii_exactly():
    line, prof, geology, dips = circular_fold()
    frame = Frame(L, -3000.0, 2600.0, 0.0, 0.0)
    cons = contact_constraints(geology, COLUMN, prof.elevation_at, [])
    levels = np.append(COLUMN.depth_to_top, COLUMN.total_thickness)
    model = ArcModel(dips.distance_m, dips.elevation_m, -dips.apparent_dip, cons, frame,
                     levels, [*COLUMN.names, base_name(COLUMN)], [])
    # Busk 1929: the normals to two dips tangent to one circle meet at its centre, and
    # each horizon is the arc of radius (reference radius - stratigraphic depth).
    assert model.kind == ["arc"] * (len(dips) - 1)
    assert np.allclose(model.centre, CENTRE, atol=1e-6)
    for i in range(len(model.kind)):
        for s in levels:
            assert model.radius(i, s) == pytest.approx(R0 - s, abs=1e-6)
    assert np.allclose(model.depth_at(cons.distance, cons.elevation), cons.depth, atol=1e-6)


def test_concentric_horizons_keep_thickness_and_stop_at_the_centre():
    line, prof, geology, dips = circular_fold()
    draft = build_draft(line, prof, geology, dips, COLUMN, method="arc", depth=3000.0)
    assert max(abs(r.residual_m) for r in draft.residuals) < 1e-6
    first, last = dips.distance_m[0], dips.distance_m[-1]
    for name, s in zip(COLUMN.names, COLUMN.depth_to_top, strict=True):
        pts = np.vstack([shapely.get_coordinates(h.geometry) for h in draft.horizons
                         if h.top_of == name])
        # Within the dips' span (between the first and last normals) each horizon is a
        # circle about the centre of radius R0 - s (analytic; Busk 1929).
        ang = np.arctan2(pts[:, 1] - CENTRE[1], pts[:, 0] - CENTRE[0])
        a_first = np.arctan2(-CENTRE[1], first - CENTRE[0])
        a_last = np.arctan2(-CENTRE[1], last - CENTRE[0])
        inside = (ang < a_first - 1e-9) & (ang > a_last + 1e-9)
        if R0 - s > 0:
            assert inside.sum() > 10
            r = np.hypot(*(pts[inside] - CENTRE).T)
            assert np.allclose(r, R0 - s, atol=1e-6)
    # Perpendicular thickness between successive horizons (shapely distance).
    for upper, lower, t in zip(COLUMN.names[:-2], COLUMN.names[1:-1], COLUMN.thicknesses[:-2],
                               strict=True):
        a = shapely.union_all([h.geometry for h in draft.horizons if h.top_of == upper])
        b = shapely.union_all([h.geometry for h in draft.horizons if h.top_of == lower])
        pts = shapely.get_coordinates(b)
        pts = pts[(pts[:, 0] > first) & (pts[:, 0] < last)]
        dist = shapely.distance(shapely.points(pts), a)
        assert np.allclose(dist, t, rtol=0.01)
    # The base of the column (2600 m) lies deeper than the radius at the top (2200 m):
    # it cannot pass the centre, so it is not drawn over the fold, and the log says so.
    base = base_name(COLUMN)
    assert any("stops at the centre" in m and base in m for m in draft.log)
    pts = np.vstack([shapely.get_coordinates(h.geometry) for h in draft.horizons
                     if h.top_of == base])
    assert np.all(pts[:, 1] <= CENTRE[1] + 1e-6)


def test_straight_where_adjacent_dips_are_parallel():
    line, prof, geology, _ = circular_fold()
    xs = np.array([1000.0, 3000.0, 7000.0, 9000.0])
    a = np.array([-25.0, -25.0, 25.0, 25.0])
    z = np.zeros(4)
    cons = contact_constraints(geology, COLUMN, prof.elevation_at, [])
    model = ArcModel(xs, z, -a, cons, Frame(L, -3000.0, 2600.0, 0.0, 0.0),
                     np.append(COLUMN.depth_to_top, COLUMN.total_thickness),
                     [*COLUMN.names, base_name(COLUMN)], [])
    assert model.kind == ["straight", "arc", "straight"]
    # The middle arc's centre lies on the symmetry axis where the normals of ±25° meet
    # (analytic: 2000 m from each dip along its normal, i.e. 2000·cos25° below ground).
    assert model.centre[1] == pytest.approx([5000.0, -2000.0 / np.tan(np.radians(25.0))],
                                            abs=1e-6)
