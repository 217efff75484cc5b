"""A plunging fold: the section built in the down-plunge view holds each unit at its
apparent thickness (invented data)."""

from __future__ import annotations

import math

import numpy as np
import pytest

from mapsection.construct import build_draft
from mapsection.construct.plunge import plunge_map
from mapsection.dips import ProjectedDips, apparent_dip
from mapsection.geology import Contact, SurfaceGeology, UnitInterval
from mapsection.line import SectionLine
from mapsection.stratigraphy import Column, Unit
from mapsection.topo_profile import Profile

# A concentric (Busk 1929) anticline: in its profile plane (normal to the axis) every
# horizon is a circle about one centre, the top of the column of radius R0, the top of
# a unit at stratigraphic depth s of radius R0 - s. The axis trends 000 and plunges 15°
# (down to the north); the section runs west-east (azimuth 090) over flat ground.
P = 15.0
COLUMN = Column((Unit("A", 200.0), Unit("B", 300.0), Unit("C", 400.0), Unit("D", 600.0)))
LEVELS = {"B": 200.0, "C": 500.0, "D": 900.0, "base of D": 1500.0}
L, X0, Z_GROUND, R0 = 10000.0, 5000.0, 1000.0, 3000.0
COS = math.cos(math.radians(P))
W_GROUND = Z_GROUND * COS  # the ground's trace in the profile (line normal to the trend)
WC = W_GROUND + 300.0 - R0  # the centre: the crest of the top of A 300 m above the ground
LINE = SectionLine(np.array([[0.0, 0.0], [L, 0.0]]), name="P")


def _true_z(s: float, u):
    """True elevation of the horizon at depth s in the section (upper branch of its
    circle in the profile, w = z cos p for a line normal to the trend: Ragan's
    down-plunge view)."""
    r = R0 - s
    du = np.asarray(u, float) - X0
    inside = np.abs(du) < r
    w = np.where(inside, WC + np.sqrt(np.clip(r * r - du * du, 0.0, None)), np.nan)
    return w / COS


def _attitude(u):
    """Strike and dip (right-hand rule) of the bed at ground point (u, 0, Z_GROUND): its
    normal lies in the profile plane, along the radius."""
    p = math.radians(P)
    b1 = np.array([1.0, 0.0, 0.0])  # horizontal profile direction (trend + 90)
    w_up = np.array([0.0, math.sin(p), math.cos(p)])  # the profile's up
    nrm = (u - X0) * b1 + (W_GROUND - WC) * w_up
    nrm /= np.linalg.norm(nrm)
    dip = math.degrees(math.acos(nrm[2]))
    dip_dir = math.degrees(math.atan2(nrm[0], nrm[1])) % 360.0
    return (dip_dir - 90.0) % 360.0, dip


def _inputs():
    d = np.linspace(0.0, L, 1001)
    prof = Profile(d, d, np.zeros_like(d), np.full_like(d, Z_GROUND), LINE, None, 10.0)
    # The top of B meets the ground where its circle crosses the ground's trace.
    half = math.sqrt((R0 - 200.0) ** 2 - (W_GROUND - WC) ** 2)
    x1, x2 = X0 - half, X0 + half
    geology = SurfaceGeology((UnitInterval(0.0, x1, "A"), UnitInterval(x1, x2, "B"),
                              UnitInterval(x2, L, "A")),
                             (Contact(x1, Z_GROUND, "A", "B"), Contact(x2, Z_GROUND, "B", "A")),
                             ())
    du = np.arange(2600.0, 7401.0, 400.0)
    att = [_attitude(u) for u in du]
    strike = np.array([a[0] for a in att])
    dip = np.array([a[1] for a in att])
    app = apparent_dip(strike, dip, 90.0)  # Ragan's apparent-dip relation
    n = len(du)
    dips = ProjectedDips(np.array([f"p{i}" for i in range(n)]), du, np.zeros(n), du,
                         np.zeros(n), np.full(n, Z_GROUND), strike, dip, app,
                         np.zeros(n, bool), np.zeros(n, bool))
    return prof, geology, dips


def _errors(draft, within=1500.0):
    out = []
    for h in draft.horizons:
        if h.above_ground or h.top_of not in LEVELS:
            continue
        c = np.asarray(h.geometry.coords)
        keep = (Z_GROUND - c[:, 1] <= within)
        t = _true_z(LEVELS[h.top_of], c[keep, 0])
        ok = np.isfinite(t)
        out.append(np.abs(c[keep, 1][ok] - t[ok]))
    return np.concatenate(out)


def test_plunge_map_for_a_line_normal_to_the_trend():
    pm = plunge_map(LINE, 0.0, P)
    # Normal to the trend: a vertical shortening by cos p (Ragan), cos θ = cos p.
    assert np.allclose(pm.m, [[1.0, 0.0], [0.0, COS]])
    assert 1.0 / pm.cos_theta == pytest.approx(1.0 / COS)  # 3.5 % thicker in the section
    # Oblique line: det = |sin(A - T)| cos p = cos θ, θ the angle between the axis and
    # the section plane's normal (vector algebra).
    oblique = plunge_map(SectionLine(np.array([[0.0, 0.0], [1.0, 1.0]])), 0.0, P)
    axis = np.array([0.0, COS, -math.sin(math.radians(P))])
    normal = np.array([math.cos(math.radians(45.0)), -math.sin(math.radians(45.0)), 0.0])
    assert oblique.cos_theta == pytest.approx(abs(axis @ normal))
    assert plunge_map(SectionLine(np.array([[0.0, 0.0], [0.0, 1.0]])), 0.0, P) is None


def test_concentric_fold_plunging_15_degrees():
    prof, geology, dips = _inputs()
    thinnest = float(COLUMN.thicknesses.min())
    opts = dict(method="arc", dip_tolerance=1.0, depth=2000.0, warn=lambda m: None)
    draft = build_draft(LINE, prof, geology, dips, COLUMN, plunge_axis=(0.0, P), **opts)
    err = _errors(draft)
    assert len(err) > 100
    # The target: within 15 % of the thinnest unit down to 1.5 km depth.
    assert err.max() < 0.15 * thinnest, err.max()
    assert any("down-plunge view" in e and "t / cos θ = 1.0353 t" in e for e in draft.log)
    # Without the correction the deeper horizons are drawn with true thicknesses: off.
    flat = _errors(build_draft(LINE, prof, geology, dips, COLUMN, **opts))
    assert flat.max() > 0.15 * thinnest
    assert err.max() < 0.5 * flat.max()


def test_concentric_fold_plunging_15_degrees_under_a_bent_line():
    # The same fold in 3-D: a map point (x, y, z) lies at profile coordinates
    # (x, y sin p + z cos p) (axis trending 000: Ragan's down-plunge view), so the top
    # at depth s is z = (WC + sqrt(r² - (x - X0)²) - y sin p) / cos p. The line bends:
    # azimuth 080 then 100, each segment carried by its own azimuth.
    sp = math.sin(math.radians(P))
    a1, a2 = math.radians(80.0), math.radians(100.0)
    # (the bend at y = 0, over the crest)
    v = np.array([[0.0, -5000.0 * math.cos(a1)], [5000.0 * math.sin(a1), 0.0]])
    v = np.vstack([v, v[-1] + 5000.0 * np.array([math.sin(a2), math.cos(a2)])])
    line = SectionLine(v, name="Q")
    d = np.linspace(0.0, line.length, 2001)
    x, y = line.point_at(d)
    prof = Profile(d, x, y, np.full_like(d, Z_GROUND), line, None, 10.0)

    def true_z(s, dist):
        xx, yy = line.point_at(np.asarray(dist, float))
        r = R0 - s
        root = np.sqrt(np.clip(r * r - (xx - X0) ** 2, 0.0, None))
        return np.where(np.abs(xx - X0) < r, (WC + root - yy * sp) / COS, np.nan)

    # The top of B at the ground: where its true elevation crosses the ground.
    zb = true_z(200.0, d) - Z_GROUND
    cross = np.flatnonzero(np.diff(np.sign(np.nan_to_num(zb, nan=-1.0))) != 0)
    xs = [float(d[j] - zb[j] * (d[j + 1] - d[j]) / (zb[j + 1] - zb[j])) for j in cross]
    assert len(xs) == 2
    geology = SurfaceGeology((UnitInterval(0.0, xs[0], "A"), UnitInterval(xs[0], xs[1], "B"),
                              UnitInterval(xs[1], line.length, "A")),
                             (Contact(xs[0], Z_GROUND, "A", "B"),
                              Contact(xs[1], Z_GROUND, "B", "A")), ())
    du = np.arange(2600.0, 7401.0, 400.0)
    px, py = line.point_at(du)
    att = []
    for xx, yy in zip(px, py, strict=True):
        nrm = (xx - X0) * np.array([1.0, 0.0, 0.0]) + (
            yy * sp + Z_GROUND * COS - WC) * np.array([0.0, sp, COS])
        nrm /= np.linalg.norm(nrm)
        dip = math.degrees(math.acos(nrm[2]))
        att.append(((math.degrees(math.atan2(nrm[0], nrm[1])) - 90.0) % 360.0, dip))
    strike, dip = (np.array(c) for c in zip(*att, strict=True))
    app = apparent_dip(strike, dip, line.azimuth_at(du))  # Ragan, per segment
    n = len(du)
    dips = ProjectedDips(np.array([f"q{i}" for i in range(n)]), px, py, du, np.zeros(n),
                         np.full(n, Z_GROUND), strike, dip, app, np.zeros(n, bool),
                         np.zeros(n, bool))
    draft = build_draft(line, prof, geology, dips, COLUMN, plunge_axis=(0.0, P), method="arc",
                        dip_tolerance=1.0, depth=2000.0, warn=lambda m: None)
    errs = []
    for h in draft.horizons:
        if h.above_ground or h.top_of not in LEVELS:
            continue
        c = np.asarray(h.geometry.coords)
        t = true_z(LEVELS[h.top_of], c[:, 0])
        # Only under the readings: where the radius through the true point (Busk: the
        # normals meet at the centre) reaches the ground between the first and last one;
        # beyond them the construction continues straight, as it must.
        xx, yy = line.point_at(c[:, 0])
        w = yy * sp + t * COS
        wg = yy * sp + Z_GROUND * COS
        with np.errstate(invalid="ignore", divide="ignore"):
            xg = X0 + (xx - X0) * (wg - WC) / (w - WC)
        keep = (Z_GROUND - c[:, 1] <= 1500.0) & (xg >= px.min()) & (xg <= px.max())
        ok = keep & np.isfinite(t)
        errs.append(np.abs(c[ok, 1] - t[ok]))
    err = np.concatenate(errs)
    assert len(err) > 100
    assert err.max() < 0.15 * float(COLUMN.thicknesses.min()), err.max()
