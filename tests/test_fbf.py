"""Fault-bend folding after Suppe (1983) (mapsection.checks.fbf)."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.optimize import brentq
from shapely.geometry import LineString, Polygon

from mapsection.checks.fbf import (
    axial_angle,
    fault_bend_angle,
    fault_bend_fold,
    front_limb_dip,
    slip_ratio,
)
from mapsection.errors import ParameterError


def suppe_phi(gamma, theta):
    """Suppe 1983 (Am. J. Sci. 283), mode-I fault-bend folding, written out independently:
    phi = atan(-sin(g - t)(sin(2g - t) - sin t) / (cos(g - t)(sin(2g - t) - sin t) - sin g))."""
    g, t = np.radians(gamma), np.radians(theta)
    a = np.sin(2 * g - t) - np.sin(t)
    return np.degrees(np.arctan(-np.sin(g - t) * a / (np.cos(g - t) * a - np.sin(g))))


def test_thirty_degree_ramp_gives_sixty_degree_axial_angle():
    # Suppe 1983: for a ramp from a flat with cutoff angle 30 degrees, gamma = 60 degrees
    # (the value recalled from memory; here computed from his equation: the limiting case
    # where the two roots meet, so it is checked as the maximum of phi(gamma)).
    assert axial_angle(30.0) == pytest.approx(60.0, abs=1e-3)
    assert fault_bend_angle(30.0, 60.0) == pytest.approx(30.0, abs=1e-9)
    grid = np.linspace(45.0, 89.0, 44001)
    assert grid[np.argmax(suppe_phi(grid, 30.0))] == pytest.approx(60.0, abs=1e-3)
    with pytest.raises(ParameterError):
        axial_angle(35.0)  # steeper ramps: no mode-I solution (Suppe 1983)


@pytest.mark.parametrize("theta", [20.0, 15.0, 10.0, 25.0])
def test_axial_angle_against_independent_brentq_solve(theta):
    # Independent numerical solve of Suppe's (1983) implicit equation phi(gamma, theta) = theta
    # with scipy.optimize.brentq on the first-mode branch (gamma between 60 and 90 degrees).
    ref = brentq(lambda g: suppe_phi(g, theta) - theta, 60.0, 89.999, xtol=1e-12)
    assert axial_angle(theta) == pytest.approx(ref, abs=1e-7)
    assert fault_bend_angle(theta, ref) == pytest.approx(theta, abs=1e-7)


def test_slip_ratio_keeps_bed_length_and_thickness():
    # Kinematic check of R and gamma together: a bed on the ramp (cutoff theta) crossing the
    # axial surface with the velocity jump v1 -> R v2 must keep its length (Dahlstrom 1969)
    # and make the same angle gamma with the axial surface on both sides (Suppe 1983).
    for theta in (10.0, 20.0, 25.0):
        g = axial_angle(theta)
        r = slip_ratio(theta, g)
        t, gr = np.radians(theta), np.radians(g)
        n = np.array([-np.sin(gr), np.cos(gr)])
        v1, v2 = np.array([np.cos(t), np.sin(t)]), np.array([r, 0.0])
        assert v1 @ n == pytest.approx(v2 @ n)
        b2 = (np.eye(2) + np.outer(v2 - v1, n) / (v1 @ n)) @ np.array([1.0, 0.0])
        assert np.linalg.norm(b2) == pytest.approx(1.0, abs=1e-12)
        axis = np.array([np.cos(gr), np.sin(gr)])
        assert np.degrees(np.arccos(abs(b2 @ axis))) == pytest.approx(g, abs=1e-9)


def segment_dips(line):
    c = np.asarray(line.coords)
    d = np.diff(c, axis=0)
    return np.degrees(np.arctan2(d[:, 1], d[:, 0])), np.hypot(d[:, 0], d[:, 1])


@pytest.mark.parametrize("slip", [800.0, 2200.0, 4000.0])  # below and beyond the ramp length
def test_forward_model_keeps_bed_length_area_and_bisects(slip):
    h, theta = 1000.0, 20.0
    depths = {"a": 400.0, "b": 1000.0, "c": 1600.0, "d": 2500.0}
    m = fault_bend_fold(h, theta, slip, -3000.0, depths, ramp_x=2000.0)
    g = axial_angle(theta)
    assert m.front_limb_dip == pytest.approx(180.0 - 2.0 * g)
    assert m.front_limb_dip == pytest.approx(front_limb_dip(theta))
    ramp_len = h / np.sin(np.radians(theta))
    for hz in m.horizons:
        c = np.asarray(hz.geometry.coords)
        # bed length kept (Dahlstrom 1969): the model samples each bed every 0.25 m or
        # finer, so the kinks are cut by at most a few centimetres
        x0 = 2000.0 - hz.depth_m * np.tan(np.radians(theta / 2)) - slip - 2 * h
        if hz.depth_m < h:
            x1 = 2000.0 + hz.depth_m / np.tan(np.radians(theta))
        else:
            x1 = 2000.0 + h / np.tan(np.radians(theta)) + (hz.depth_m - h) / np.tan(
                np.radians(g)) + slip + 2 * h
        assert hz.geometry.length == pytest.approx(x1 - x0, abs=0.5)
        dips, lengths = segment_dips(hz.geometry)
        long = lengths > 5.0
        # the straight parts dip 0 (flats and crest), +theta (back limb) or the front limb dip
        allowed = np.array([0.0, theta, -(180.0 - 2 * g)])
        assert np.all(np.min(np.abs(dips[long, None] - allowed[None, :]), axis=1) < 1e-6)
        if hz.depth_m >= h:
            assert np.any(np.abs(dips[long] - theta) < 1e-6)  # back limb exists
            front = np.abs(dips[long] + 180.0 - 2 * g) < 1e-6
            assert front.any()  # front limb exists
        assert c[0, 1] == pytest.approx(-3000.0 + hz.depth_m)  # regional behind the fold
    # area kept between two horizons above the ramp top, closed by the (rigid) regional ends
    b, d = m.horizon("c").geometry, m.horizon("d").geometry
    cb, cd = np.asarray(b.coords), np.asarray(d.coords)
    lo = max(cb[0, 0], cd[0, 0])
    hi = min(cb[-1, 0], cd[-1, 0])
    box = Polygon([(lo, -9e3), (hi, -9e3), (hi, 9e3), (lo, 9e3)])
    band = Polygon(np.vstack([cd, cb[::-1]])).intersection(box)
    # the vertical ends moved rigidly: the back one by the slip, the front one by the slip on
    # the upper flat, R x slip while the front limb grows (Suppe 1983), then by the slip
    r = slip_ratio(theta, g)
    front = r * min(slip, ramp_len) + max(slip - ramp_len, 0.0)
    assert band.area == pytest.approx(900.0 * ((hi - front) - (lo - slip)), rel=1e-6)
    # uplift of the crest: slip up the ramp (slip x sin theta) until the slip passes the ramp
    top = np.asarray(m.horizon("d").geometry.coords)[:, 1].max()
    assert top - (-500.0) == pytest.approx(min(slip, ramp_len) * np.sin(np.radians(theta)),
                                           rel=1e-9)
    # axial surfaces bisect: the front limb axial surface B makes gamma with crest and limb
    bsurf = next(a for a in m.axial_surfaces if a.name == "B")
    bc = np.asarray(bsurf.geometry.coords)
    ang = np.degrees(np.arctan2(bc[1, 1] - bc[0, 1], bc[1, 0] - bc[0, 0]))
    assert ang == pytest.approx(g)  # from the crest (horizontal)
    assert ang - (-(180.0 - 2 * g)) == pytest.approx(180.0 - g)  # and from the front limb


def test_model_mirrors_for_transport_toward_decreasing_distance():
    a = fault_bend_fold(800.0, 15.0, 1000.0, 0.0, [1200.0], ramp_x=5000.0, direction=1)
    b = fault_bend_fold(800.0, 15.0, 1000.0, 0.0, [1200.0], ramp_x=5000.0, direction=-1)
    ca, cb = np.asarray(a.horizons[0].geometry.coords), np.asarray(b.horizons[0].geometry.coords)
    assert np.allclose(np.sort(10000.0 - ca[:, 0]), np.sort(cb[:, 0]))  # self-consistency
    assert isinstance(a.fault, LineString) and a.to_dict()["axial_angle_deg"] > 80.0
    with pytest.raises(ParameterError):
        fault_bend_fold(-1.0, 15.0, 100.0, 0.0, [10.0])
    with pytest.raises(ParameterError):
        fault_bend_fold(100.0, 15.0, 100.0, 0.0, [-10.0])
