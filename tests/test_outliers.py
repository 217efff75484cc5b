"""Dip domains that one reading cannot make: outliers flagged, the grouping independent
of the order of the readings (invented data)."""

from __future__ import annotations

import math

import numpy as np
import pytest
import shapely

from mapsection.construct import build_draft
from mapsection.construct.domains import group_domains, screen_readings
from mapsection.dips import ProjectedDips, apparent_dip
from mapsection.geology import Contact, SurfaceGeology, UnitInterval
from mapsection.line import SectionLine
from mapsection.stratigraphy import Column, Unit
from mapsection.topo_profile import Profile

L = 6000.0
COLUMN = Column((Unit("A", 300.0), Unit("B", 250.0), Unit("C", 400.0), Unit("D", 500.0)))
DIP = 30.0  # the homocline's true dip; the section runs down dip (azimuth 110, strike 020)
Z0 = 500.0  # flat ground


def _profile(line):
    d = np.linspace(0.0, line.length, 601)
    return Profile(d, d, np.zeros_like(d), np.full_like(d, Z0), line, None, 10.0)


def _dips(dist, app, ids):
    n = len(dist)
    d = np.asarray(dist, float)
    z = np.full(n, Z0)
    return ProjectedDips(np.array(ids), d, np.zeros(n), d, np.zeros(n), z, np.zeros(n),
                         np.abs(app), np.asarray(app, float), np.zeros(n, bool),
                         np.zeros(n, bool))


def _homocline(odd_reading=None):
    """A homocline at 30° (every reading 020/30 seen in a section of azimuth 110) but
    one reading 40° off; its contacts where the analytic tops meet the flat ground."""
    line = SectionLine(np.array([[0.0, 0.0], [L * math.sin(math.radians(110)),
                                              L * math.cos(math.radians(110))]]), name="H")
    dist = np.arange(300.0, L, 400.0)
    app = np.full(len(dist), float(apparent_dip(20.0, DIP, 110.0)))  # 30° (Ragan's relation)
    odd = 7
    app[odd] = app[odd] - 40.0 if odd_reading is None else float(apparent_dip(*odd_reading, 110.0))
    ids = [f"r{i:02d}" for i in range(len(dist))]
    # The top of unit i meets the flat ground Δs / sin(dip) before the top of B (older
    # units crop out toward smaller distance: the beds descend toward larger distance).
    x_top_b = 4000.0
    names = COLUMN.names
    tops = x_top_b - (COLUMN.depth_to_top[1:] - COLUMN.depth_to_top[1]) / math.sin(
        math.radians(DIP))
    contacts = tuple(Contact(float(x), Z0, names[i + 1], names[i])
                     for i, x in enumerate(tops))
    edges = [0.0, *tops[::-1], L]
    intervals = tuple(UnitInterval(float(a), float(b), u) for a, b, u in
                      zip(edges[:-1], edges[1:], names[::-1], strict=True))
    geology = SurfaceGeology(intervals, contacts, ())
    return line, geology, _dips(dist, app, ids), ids[odd], x_top_b


def test_homocline_with_one_odd_reading_is_drafted_without_a_fold():
    line, geology, dips, odd_id, x_top_b = _homocline()
    draft = build_draft(line, _profile(line), geology, dips, COLUMN, depth=2000.0,
                        warn=lambda m: None)
    # No fold: one dip domain, no axial surface, the odd reading listed with its misfit.
    assert len(draft.domains) == 1 and not draft.axial_surfaces
    assert draft.domains[0].dip == pytest.approx(DIP, abs=1e-6)
    assert [o.id for o in draft.outliers] == [odd_id]
    o = draft.outliers[0]
    assert o.kind == "outlier" and o.misfit_deg == pytest.approx(-40.0, abs=1e-6)
    assert any(odd_id in e and "outlier" in e for e in draft.log)
    # The top of B is the analytic plane z = Z0 - tan(30°)(x - x_top_b) (plane geometry).
    top_b = [h.geometry for h in draft.horizons if h.top_of == "B"]
    pts = np.vstack([np.asarray(g.coords) for g in top_b])
    want = Z0 - math.tan(math.radians(DIP)) * (pts[:, 0] - x_top_b)
    assert np.max(np.abs(pts[:, 1] - want)) < 1.0


def test_a_reading_145_60_among_020_30_draws_no_anticline():
    # The reading 145/60 seen in a section of azimuth 110: -44.8° (Ragan's relation).
    line, geology, dips, odd_id, _ = _homocline((145.0, 60.0))
    draft = build_draft(line, _profile(line), geology, dips, COLUMN, depth=2000.0,
                        warn=lambda m: None)
    assert len(draft.domains) == 1 and not draft.axial_surfaces
    assert [o.id for o in draft.outliers] == [odd_id]
    assert draft.outliers[0].apparent_dip == pytest.approx(-44.8, abs=0.1)


def test_a_kept_reading_stays_in_the_domains():
    line, geology, dips, odd_id, _ = _homocline()
    draft = build_draft(line, _profile(line), geology, dips, COLUMN, depth=2000.0,
                        keep_readings=[odd_id], warn=lambda m: None)
    assert not draft.outliers
    assert len(draft.domains) == 3  # the geologist's word: the odd reading is a domain
    assert any("kept whatever" in e and odd_id in e for e in draft.log)


def test_shuffled_readings_give_the_same_domains():
    rng = np.random.default_rng(11)
    d = np.sort(rng.uniform(0.0, 9000.0, 40))
    true = np.where(d < 3000.0, -15.0, np.where(d < 6000.0, 35.0, -12.0))
    phi = -(true + rng.uniform(-3.0, 3.0, len(d)))
    phi[12] += 25.0  # one stray reading
    w = np.ones(len(d))
    ref = group_domains(d, phi, w, 5.0)
    sc = screen_readings(d, phi, 5.0)
    for _ in range(5):
        p = rng.permutation(len(d))
        assert group_domains(d[p], phi[p], w[p], 5.0) == ref
        assert np.array_equal(screen_readings(d[p], phi[p], 5.0).left_out, sc.left_out[p])
    assert np.flatnonzero(sc.left_out).tolist() == [12]
    kept = ~sc.left_out
    doms = group_domains(d[kept], phi[kept], w[kept], 5.0)
    assert np.allclose([dm.dip for dm in doms], [-15.0, 35.0, -12.0], atol=2.0)
    assert all(dm.n_dips > 1 for dm in doms)


def test_a_lone_reading_in_a_hinge_is_left_out_but_not_called_an_outlier():
    d = np.arange(8) * 100.0
    dips = np.array([-15, -15, -14, 10, 35, 36, 35, 35.0])
    sc = screen_readings(d, -dips, 5.0)
    assert sc.left_out.tolist() == [False, False, False, True, False, False, False, False]
    assert sc.kind[3] == "hinge"


def test_few_readings_are_not_judged():
    # Two readings that disagree: neither has neighbours that agree on something else.
    sc = screen_readings([0.0, 100.0], [10.0, -30.0], 5.0)
    assert not sc.left_out.any()


def test_outliers_are_listed_in_the_build_log(tmp_path):
    from mapsection.build import write_build_log

    line, geology, dips, odd_id, _ = _homocline()
    draft = build_draft(line, _profile(line), geology, dips, COLUMN, depth=2000.0,
                        warn=lambda m: None)
    text = write_build_log(draft, tmp_path / "build.log").read_text()
    assert "outliers: 1" in text and odd_id in text
    assert shapely.is_valid(draft.units[0].geometry)


def test_a_lone_reading_the_contacts_need_stays():
    # A 30° homocline with a flat panel 2800-3400 m (a kink-band step, Suppe 1985) read
    # by one reading only: the contacts beyond the panel lie 300 m of section higher than
    # a plain homocline puts them, so they need the panel (at the ground the
    # stratigraphic depth falls at sin 30° per metre, and not at all in the panel).
    column = Column(tuple(Unit(n, 400.0) for n in "ABCDEFGH"))
    line = SectionLine(np.array([[0.0, 0.0], [L, 0.0]]), name="M")

    def depth(x):  # stratigraphic depth at the flat ground
        x = np.asarray(x, float)
        run = np.clip(x, None, 2800.0) + np.clip(x - 3400.0, 0.0, None)
        return 3000.0 - 0.5 * run

    names = column.names
    contacts, edges, units = [], [0.0], []
    for i in range(1, len(names)):
        s = column.depth_to_top[i]
        lo = 3000.0 - s  # the run at which depth == s
        x = lo * 2.0 if lo * 2.0 <= 2800.0 else lo * 2.0 + 600.0
        if 0.0 < x < L and not 2800.0 < x < 3400.0:
            contacts.append(Contact(float(x), Z0, names[i], names[i - 1]))
    contacts.sort(key=lambda c: c.distance_m)
    for c in contacts:
        units.append(c.unit_before)
        edges.append(c.distance_m)
    units.append(contacts[-1].unit_after)
    edges.append(L)
    intervals = tuple(UnitInterval(a, b, u) for a, b, u in zip(edges[:-1], edges[1:], units,
                                                               strict=True))
    geology = SurfaceGeology(intervals, tuple(contacts), ())
    dist = np.array([300.0, 800.0, 1400.0, 2000.0, 2500.0, 3100.0, 3800.0, 4400.0, 5000.0,
                     5600.0])
    app = np.where(dist == 3100.0, 0.0, DIP)
    dips = _dips(dist, app, [f"m{i}" for i in range(len(dist))])
    assert np.allclose(depth([c.distance_m for c in contacts]),
                       [column.depth_to_top[names.index(c.unit_before)] for c in contacts])
    draft = build_draft(line, _profile(line), geology, dips, column, depth=3500.0,
                        warn=lambda m: None)
    assert not draft.outliers
    assert [round(dm.dip) for dm in draft.domains] == [30, 0, 30]
    assert any("m5" in e and "contacts need it" in e for e in draft.log)
    rms = [e for e in draft.log if "RMS residual" in e]
    assert rms and float(rms[0].split("RMS residual ")[1].split(" m")[0]) < 1.0
