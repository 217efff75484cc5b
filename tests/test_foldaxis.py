"""Fold axis (pi-axis) from bedding, Woodcock 1977."""

from __future__ import annotations

import numpy as np
import pytest
import scipy.linalg

from mapsection.errors import AttitudeError
from mapsection.foldaxis import FoldAxis, fold_axis, poles, recommended_azimuth


def _vec(trend, plunge):
    t, p = np.radians(trend), np.radians(plunge)
    return np.array([np.cos(p) * np.sin(t), np.cos(p) * np.cos(t), np.sin(p)])  # E, N, down


def _strike_dip_of_poles(p):
    p = np.where(p[:, 2:3] < 0, -p, p)  # lower hemisphere
    dip = np.degrees(np.arccos(np.clip(p[:, 2], -1, 1)))
    pole_trend = np.degrees(np.arctan2(p[:, 0], p[:, 1]))
    return (pole_trend + 90.0) % 360.0, dip  # RHR strike = pole trend + 90


def _synthetic_fold(trend, plunge, n, rng, noise_deg=2.0):
    """Bedding of a cylindrical fold of known axis: poles on the great circle normal to it."""
    axis = _vec(trend, plunge)
    e1 = np.cross(axis, [0.0, 0.0, 1.0])
    e1 /= np.linalg.norm(e1)
    e2 = np.cross(axis, e1)
    theta = np.radians(rng.uniform(-70.0, 70.0, n))  # limb dips up to 70 degrees either way
    p = np.cos(theta)[:, None] * e2 + np.sin(theta)[:, None] * e1
    strike, dip = _strike_dip_of_poles(p)
    strike = strike + rng.normal(0.0, noise_deg, n)
    dip = np.clip(dip + rng.normal(0.0, noise_deg, n), 0.0, 90.0)
    return strike % 360.0, dip


@pytest.mark.parametrize("trend, plunge", [(30.0, 0.0), (75.0, 12.0), (200.0, 35.0), (310.0, 5.0)])
def test_pi_axis_of_synthetic_fold(trend, plunge):
    # Analytic truth: the poles of a cylindrical fold lie normal to its axis (Woodcock 1977);
    # 2-degree noise on strike and dip; the axis must come back within 1 degree.
    rng = np.random.default_rng(int(trend * 10 + plunge))
    strike, dip = _synthetic_fold(trend, plunge, 300, rng)
    ax = fold_axis(strike, dip)
    cosang = abs(float(_vec(ax.trend, ax.plunge) @ _vec(trend, plunge)))
    assert np.degrees(np.arccos(min(cosang, 1.0))) < 1.0
    assert ax.n == 300 and ax.cylindricity > 0.95 and ax.is_cylindrical
    assert ax.woodcock_k < 1.0  # a girdle in Woodcock's (1977) shape parameter
    assert 0.0 <= ax.plunge <= 90.0


def test_eigenvalues_match_scipy():
    # Reference library: scipy.linalg.eigh on the same orientation tensor.
    rng = np.random.default_rng(3)
    strike, dip = rng.uniform(0, 360, 50), rng.uniform(0, 90, 50)
    ax = fold_axis(strike, dip)
    p = poles(strike, dip)
    w = scipy.linalg.eigh(p.T @ p / len(p), eigvals_only=True)
    np.testing.assert_allclose(sorted(ax.eigenvalues), w / w.sum(), atol=1e-12)
    assert sum(ax.eigenvalues) == pytest.approx(1.0)


def test_poles_are_normal_to_bedding():
    # Analytic: the pole is perpendicular to both the strike line and the dip line.
    strike, dip = np.array([30.0, 200.0]), np.array([40.0, 75.0])
    p = poles(strike, dip)
    for k in range(2):
        s_vec = _vec(strike[k], 0.0)
        d_vec = _vec(strike[k] + 90.0, dip[k])
        assert abs(p[k] @ s_vec) < 1e-12 and abs(p[k] @ d_vec) < 1e-12


def test_two_limbs_give_horizontal_axis_along_strike():
    # Analytic: two limbs striking 030 and 210 meet in a horizontal line trending 030.
    ax = fold_axis([30.0, 210.0, 30.0, 210.0, 30.0, 210.0], [40.0, 40.0, 60.0, 20.0, 10.0, 70.0])
    assert ax.trend == pytest.approx(30.0, abs=1e-6) and ax.plunge == pytest.approx(0.0, abs=1e-6)
    assert recommended_azimuth(ax) == pytest.approx(120.0, abs=1e-6)


def test_planar_bedding_is_not_cylindrical():
    # self-consistency: one attitude repeated with 1-degree scatter defines no girdle
    rng = np.random.default_rng(5)
    ax = fold_axis(30 + rng.normal(0, 1, 40), 40 + rng.normal(0, 1, 40))
    assert not ax.is_cylindrical
    assert any("planar" in why for why in ax.cylindrical_problems())


def test_scattered_poles_are_not_cylindrical():
    # Uniform poles: S1 = S2 = S3 = 1/3 in the limit (Woodcock 1977), cylindricity near 0.
    rng = np.random.default_rng(6)
    v = rng.normal(size=(2000, 3))
    v /= np.linalg.norm(v, axis=1)[:, None]
    strike, dip = _strike_dip_of_poles(v)
    ax = fold_axis(strike, dip)
    assert ax.cylindricity < 0.3 and not ax.is_cylindrical
    assert all(abs(s - 1 / 3) < 0.05 for s in ax.eigenvalues)


def test_too_few_attitudes():
    with pytest.raises(AttitudeError, match="at least 2"):
        fold_axis([30.0], [40.0])
    ax = fold_axis([30.0, 210.0, 30.0], [40.0, 40.0, 20.0])
    assert any("only 3 attitudes" in why for why in ax.cylindrical_problems())


def test_recommended_azimuth():
    ax = FoldAxis(300.0, 10.0, (0.6, 0.39, 0.01), 0.97, 10)
    assert recommended_azimuth(ax) == pytest.approx(30.0)
