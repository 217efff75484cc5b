"""Arc (Busk 1929) construction against an analytic circular (concentric) fold."""

from __future__ import annotations

import numpy as np
import pytest
import shapely

from mapsection.construct import arc as arc_module
from mapsection.construct import base_name, build_draft
from mapsection.construct.arc import ArcModel
from mapsection.construct.constraints import contact_constraints
from mapsection.construct.domains import group_domains
from mapsection.construct.frame import SectionFrame as Frame
from mapsection.dips import ProjectedDips
from mapsection.geology import Contact, SurfaceGeology, UnitInterval
from mapsection.line import SectionLine
from mapsection.notes import Notes
from mapsection.stratigraphy import Column, Unit
from mapsection.topo_profile import Profile

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
    cons = contact_constraints(geology, COLUMN, prof.elevation_at, Notes())
    levels = np.append(COLUMN.depth_to_top, COLUMN.total_thickness)
    model = ArcModel(dips.distance_m, dips.elevation_m, -dips.apparent_dip, cons, frame,
                     levels, [*COLUMN.names, base_name(COLUMN)], Notes())
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
    # Adjacent dips of this fold differ by 4.5° or more: a tolerance below that makes
    # every dip its own dip domain, so the fitted construction is the classic Busk chain.
    draft = build_draft(line, prof, geology, dips, COLUMN, method="arc", depth=3000.0,
                        dip_tolerance=2.0)
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
    cons = contact_constraints(geology, COLUMN, prof.elevation_at, Notes())
    model = ArcModel(xs, z, -a, cons, Frame(L, -3000.0, 2600.0, 0.0, 0.0),
                     np.append(COLUMN.depth_to_top, COLUMN.total_thickness),
                     [*COLUMN.names, base_name(COLUMN)], Notes())
    assert model.kind == ["straight", "arc", "straight"]
    # The middle arc's centre lies on the symmetry axis where the normals of ±25° meet
    # (analytic: 2000 m from each dip along its normal, i.e. 2000·cos25° below ground).
    assert model.centre[1] == pytest.approx([5000.0, -2000.0 / np.tan(np.radians(25.0))],
                                            abs=1e-6)


def kink_anticline(noise: float = 1.5):
    """A symmetric kink anticline (limbs ∓30°, axial surface at 5000 m, flat ground),
    several dips per limb with alternating noise, contacts on the ground."""
    line = SectionLine(np.array([[0.0, 0.0], [L, 0.0]]), name="K")
    d = np.linspace(0.0, L, 1001)
    prof = Profile(d, d, np.zeros_like(d), np.zeros_like(d), line, None, 10.0)
    xs = np.array([1000.0, 1500.0, 2000.0, 2500.0, 3000.0, 3500.0, 4000.0,
                   6000.0, 6500.0, 7000.0, 7500.0, 8000.0, 8500.0, 9000.0])
    wobble = noise * np.where(np.arange(len(xs)) % 2 == 0, 1.0, -1.0)
    apparent = np.where(xs < 5000.0, -30.0, 30.0) + wobble
    k = len(xs)
    z = np.zeros(k)
    dips = ProjectedDips(np.arange(k), xs, z, xs, z, z, z, np.abs(apparent), apparent,
                         np.zeros(k, bool), np.zeros(k, bool))
    s_hinge = 1200.0  # stratigraphic depth at the hinge's ground point (in Dun)
    contacts = []
    for i, s in enumerate(COLUMN.depth_to_top[1:4], start=1):
        dx = (s_hinge - s) / np.sin(np.radians(30.0))
        young, old = COLUMN.names[i - 1], COLUMN.names[i]
        contacts += [Contact(5000.0 - dx, 0.0, young, old), Contact(5000.0 + dx, 0.0, old, young)]
    contacts.sort(key=lambda c: c.distance_m)
    geology = SurfaceGeology((UnitInterval(0.0, L, "Ash"),), tuple(contacts), ())
    return line, prof, geology, dips


def test_busk_arc_joins_two_dip_domains_tangent_to_both():
    line, prof, geology, dips = kink_anticline()
    cons = contact_constraints(geology, COLUMN, prof.elevation_at, Notes())
    levels = np.append(COLUMN.depth_to_top, COLUMN.total_thickness)
    model = ArcModel(dips.distance_m, dips.elevation_m, -dips.apparent_dip, cons,
                     Frame(L, -3000.0, 2600.0, 0.0, 0.0), levels,
                     [*COLUMN.names, base_name(COLUMN)], Notes(),
                     domains=group_domains(dips.distance_m, -dips.apparent_dip,
                                           np.ones(len(dips)), 5.0),
                     ground=lambda x: np.zeros_like(np.asarray(x, float)))
    # Noisy dips (±1.5°) within the tolerance group into one dip domain per limb.
    assert [dm.n_dips for dm in model.domains] == [7, 7]
    assert [round(dm.dip) for dm in model.domains] == [-30, 30]
    # One arc, its tangent points inside the gap between the two domains' dips.
    assert model.kind == ["arc"]
    assert 4000.0 <= model.q[0, 0] < model.q[1, 0] <= 6000.0
    centre = model.centre[0]
    for s in levels:
        r = model.radius(0, s)
        pieces = model.horizon_pieces(s)
        pts = np.vstack(pieces)
        if r > 0:
            # Euclid: a circle tangent to two lines has its centre at the same
            # perpendicular distance (its radius) from both; the limbs here are the
            # straight beds outside the normals, at the domains' dips.
            left = pts[(pts - centre) @ model.t[0] < 1e-6]  # up to the first normal
            right = pts[(pts - centre) @ model.t[1] > -1e-6]  # from the second
            for side, n, t in ((left, model.n[0], model.t[0]),
                               (right, model.n[1], model.t[1])):
                dist = np.abs((side - centre) @ n)
                assert np.allclose(dist, r, atol=1e-6)
                assert np.ptp(side @ n) < 1e-6 and np.ptp(side @ t) > 100.0
            assert len(pieces) == 1
        else:
            # Beyond the centre the horizon stops: its limbs end where they meet.
            assert len(pieces) == 2
    # Every horizon is a simple line (no loop where it passes beyond the centre).
    for s in levels:
        assert all(shapely.LineString(p).is_simple for p in model.horizon_pieces(s))


def test_busk_on_domains_keeps_thickness():
    line, prof, geology, dips = kink_anticline()
    draft = build_draft(line, prof, geology, dips, COLUMN, method="arc", depth=3000.0,
                        dip_tolerance=5.0)
    assert len(draft.domains) == 2
    assert any("arc between dip domains" in m for m in draft.log)
    # Perpendicular thickness between successive horizons (shapely distance) equals the
    # column's thickness within 1 % (Busk 1929: concentric beds keep their thickness).
    for upper, lower, t in zip(COLUMN.names[:3], COLUMN.names[1:4], COLUMN.thicknesses[:3],
                               strict=True):
        a = shapely.union_all([h.geometry for h in draft.horizons if h.top_of == upper])
        b = shapely.union_all([h.geometry for h in draft.horizons if h.top_of == lower])
        pts = shapely.get_coordinates(b)
        pts = pts[(pts[:, 0] > 1000.0) & (pts[:, 0] < 9000.0)]
        dist = shapely.distance(shapely.points(pts), a)
        assert np.allclose(dist, t, rtol=0.01)


def test_sample_sections_with_arc_pass_topography_and_recover_the_model():
    """Self-consistency on invented data: the sample area (generated from
    mapsection.sample.SAMPLE_MODEL, kink folds with ~2° dip noise) built with Busk arcs."""
    from pathlib import Path

    root = Path(__file__).resolve().parents[1]
    path = root / "sample_area" / "project.toml"
    assert path.is_file(), f"{path} missing: run sample_area/generate.py"  # never a skip
    from conftest import recovery_errors

    from mapsection.build import build_section
    from mapsection.checks.topography import check_topography
    from mapsection.project import load_project
    from mapsection.sample import SAMPLE_MODEL

    project = load_project(path)
    thinnest = float(project.column.thicknesses.min())
    for spec in project.sections:
        draft = build_section(project, spec, method="arc", warn=lambda m: None)
        assert draft.method == "arc"
        report = check_topography(draft, project.thresholds)
        assert report.passed, (spec.name, report)
        err = recovery_errors(draft, SAMPLE_MODEL)
        assert len(err) > 200
        # Targets of issue 4, the same for both methods: median < 10 %, 90th percentile
        # < 15 % of the thinnest unit.
        assert np.median(err) < 0.10 * thinnest, spec.name
        assert np.percentile(err, 90) < 0.15 * thinnest, spec.name
        assert all(h.geometry.is_simple for h in draft.horizons)


class _ChainBySector:
    """The arc chain built one sector after the other (the plain form of Busk's
    construction, as the module did before its sectors were solved in one batch)."""

    def __init__(self, q, phi) -> None:  # put in place of _Chain.__init__
        from mapsection.angles import wrap180
        from mapsection.construct.domains import unit_vectors

        self.q = np.asarray(q, float).reshape(-1, 2)
        self.phi = np.asarray(phi, float)
        self.t, self.n = unit_vectors(self.phi)
        m = len(self.q)
        k = max(m - 1, 0)
        self.kind = []
        self.centre = np.full((k, 2), np.nan)
        self.mu, self.nu = np.zeros(k), np.zeros(k)
        self.e, self.e2 = np.ones(k), np.ones(k)
        self.nbar = np.zeros((k, 2))
        lam = np.zeros(m)
        for i in range(k):
            dphi = float(wrap180(self.phi[i + 1] - self.phi[i]))
            dq = self.q[i + 1] - self.q[i]
            straight = abs(dphi) < arc_module._STRAIGHT_DEG
            if not straight:
                mu, nu = np.linalg.solve(np.column_stack([self.n[i], -self.n[i + 1]]), dq)
                straight = np.sign(mu) != np.sign(nu) or mu == 0
            nbar = self.n[i] + self.n[i + 1]
            self.nbar[i] = nbar / np.hypot(*nbar)
            if straight:
                self.kind.append("straight")
                lam[i + 1] = lam[i] - self.nbar[i] @ dq
                continue
            self.kind.append("arc")
            self.mu[i], self.nu[i] = mu, nu
            self.centre[i] = self.q[i] + mu * self.n[i]
            self.e[i], self.e2[i] = np.sign(-mu), np.sign(-nu)
            lam[i + 1] = lam[i] - mu + nu
        self.is_arc = np.array([kd == "arc" for kd in self.kind], bool)
        self.lam = lam


def _trim_all_pairs(p):
    """Loops cut by testing every pair of segments (the plain form of the trim)."""
    cusps = []
    for _ in range(len(p)):
        a, v = p[:-1], np.diff(p, axis=0)
        n = len(a)
        if n < 3:
            break
        den = v[:, None, 0] * v[None, :, 1] - v[:, None, 1] * v[None, :, 0]
        dx = a[None, :, :] - a[:, None, :]
        with np.errstate(divide="ignore", invalid="ignore"):
            t = (dx[..., 0] * v[None, :, 1] - dx[..., 1] * v[None, :, 0]) / den
            u = (dx[..., 0] * v[:, None, 1] - dx[..., 1] * v[:, None, 0]) / den
        eps = 1e-9
        hit = (np.abs(den) > 1e-12) & (t > eps) & (t < 1 - eps) & (u > eps) & (u < 1 - eps)
        hit &= np.triu(np.ones((n, n), bool), 2)
        if not hit.any():
            break
        i = int(np.flatnonzero(hit.any(axis=1))[0])
        j = int(np.flatnonzero(hit[i])[-1])
        x = a[i] + t[i, j] * v[i]
        p = np.vstack([p[:i + 1], x[None, :], p[j + 1:]])
        cusps = [c if c <= i else c - (j - i - 1) for c in cusps if c <= i or c > j]
        cusps.append(i + 1)
    return p, sorted(cusps)


def test_long_fold_train_gives_the_horizons_of_the_plain_construction(monkeypatch):
    # A 20 km train of kink folds (8 hinges, 24 contacts): the batched sectors and the
    # indexed loop trimming give the horizons of the sector-by-sector chain and the
    # all-pairs trim (the plain construction, Busk 1929) within 1e-6 m.
    from conftest import TRAIN_COLUMN, fold_train

    line, prof, geology, dips = fold_train(20_000.0)

    def horizons():
        draft = build_draft(line, prof, geology, dips, TRAIN_COLUMN, method="arc",
                            depth=3000.0, dip_tolerance=5.0)
        return draft, [(h.top_of, h.above_ground, shapely.get_coordinates(h.geometry))
                       for h in draft.horizons]

    fast, got = horizons()
    with monkeypatch.context() as m:
        m.setattr(arc_module._Chain, "__init__", _ChainBySector.__init__)
        m.setattr(arc_module, "_trim_loops", _trim_all_pairs)
        plain, want = horizons()
    assert len(got) == len(want) > 20
    for (name, above, xy), (name0, above0, xy0) in zip(got, want, strict=True):
        assert (name, above) == (name0, above0)
        assert xy.shape == xy0.shape
        assert np.abs(xy - xy0).max() <= 1e-6
    assert fast.log == plain.log


def test_loops_cut_from_one_index_equal_the_all_pairs_trim(monkeypatch):
    # The horizons of a noisier 30 km fold train (a dip every 400 m, ±3°) pass beyond
    # several centres of curvature each: the trim from one STRtree query of the raw
    # path cuts the same loops at the same points as the all-pairs segment test (the
    # plain form, Busk 1929 construction), bit for bit.
    from conftest import TRAIN_COLUMN, fold_train

    paths = []
    real = arc_module._trim_loops

    def record(p):
        paths.append(p.copy())
        return real(p)

    monkeypatch.setattr(arc_module, "_trim_loops", record)
    build_draft(*fold_train(30_000.0, spacing=400.0, noise=3.0), TRAIN_COLUMN,
                method="arc", depth=3000.0, dip_tolerance=5.0)
    loops = 0
    for p in paths:
        got, cusps = real(p)
        want, cusps0 = _trim_all_pairs(p)
        assert np.array_equal(got, want) and cusps == cusps0
        loops += len(cusps)
    assert len(paths) >= 5 and loops >= 5
