"""Planes through contact points: the three-point problem by least squares, the robust
fit, thickness from outcrop width, and the tool's defaults of the estimate
(see :mod:`mapsection.thickness`)."""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np

from .results import Plane

Warn = Callable[[str], None]
Elevation = Callable[[np.ndarray, np.ndarray], np.ndarray]

DOMAIN_TOLERANCE = 10.0  # degrees between poles of one dip domain (the tool's default)
MIN_POINTS = 20  # contact points a plane needs (the tool's default)
BOOTSTRAP = 200  # bootstrap resamples (the tool's default)
CHUNK_PIXELS = 10  # run length of the block bootstrap, in sample spacings (the tool's default)
RESOLUTION = 0.01  # least relative uncertainty of a thickness from the map (the tool's default)
MIN_PERCENTILE = 99.0  # of outcrop heights, for a lower bound (the tool's default)


def outcrop_thickness(width: float, dip: float, slope: float = 0.0,
                      slope_with_dip: bool = False) -> float:
    """Thickness of a bed from its outcrop width measured across the strike.

    Parameters
    ----------
    width : float
        Outcrop width measured on the ground surface, perpendicular to the strike
        (along the slope), metres.
    dip : float
        True dip of the bed, degrees.
    slope : float
        Slope of the ground across the strike, degrees (0: level ground).
    slope_with_dip : bool
        True where the ground slopes the same way as the beds dip.

    Returns
    -------
    float
        ``w sin(d)`` on level ground; ``w |sin(d + s)|`` where ground and beds
        slope opposite ways, ``w |sin(d - s)|`` where they slope the same way
        (Ragan, Structural Geology: An Introduction to Geometrical Techniques).

    Examples
    --------
    >>> round(outcrop_thickness(200.0, 30.0), 6)
    100.0
    """
    d, s = math.radians(dip), math.radians(slope)
    return abs(width * math.sin(d - s if slope_with_dip else d + s))


def fit_plane(xyz: np.ndarray) -> Plane:
    """Least-squares plane through 3D points (orthogonal regression, by SVD).

    Three points give the plane of the three-point problem exactly (Ragan).

    Examples
    --------
    >>> p = fit_plane(np.array([[0, 0, 0], [100, 0, 0], [0, 100, -100.0]]))
    >>> round(p.dip, 6), round(p.dip_direction, 6)
    (45.0, 0.0)
    """
    xyz = np.asarray(xyz, float)
    c = xyz.mean(axis=0)
    _, s, vt = np.linalg.svd(xyz - c, full_matrices=False)
    n = vt[-1]
    if n[2] < 0:
        n = -n
    r = (xyz - c) @ n
    return Plane(tuple(map(float, n)), tuple(map(float, c)), float(np.sqrt(np.mean(r**2))),
                 len(xyz))


def svd_normal(xyz: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(upward normal, centroid, singular values) of points."""
    c = xyz.mean(axis=0)
    _, s, vt = np.linalg.svd(xyz - c, full_matrices=False)
    n = vt[-1] if vt[-1][2] >= 0 else -vt[-1]
    return n, c, s


def robust_plane(xyz: np.ndarray, floor: float) -> tuple[Plane, np.ndarray]:
    """Plane fit dropping points beyond 3 robust standard deviations (and ``floor`` m).

    Returns the plane and the mask of the points kept.
    """
    keep = np.ones(len(xyz), bool)
    for _ in range(10):  # until no point changes side (a majority plane wins)
        n, c, _ = svd_normal(xyz[keep])
        r = (xyz - c) @ n
        mad = 1.4826 * float(np.median(np.abs(r[keep] - np.median(r[keep]))))
        new = np.abs(r - np.median(r[keep])) <= max(3.0 * mad, floor)
        if new.sum() < 3 or np.array_equal(new, keep):
            break
        keep = new
    return fit_plane(xyz[keep]), keep


def pole_angle(n1, n2) -> float:
    return float(np.degrees(np.arccos(np.clip(abs(float(np.dot(n1, n2))), 0.0, 1.0))))


def poles_of(strike, dip) -> np.ndarray:
    """Upward unit normals of planes given by right-hand-rule strike and dip (degrees)."""
    dd = np.radians(np.asarray(strike, float) + 90.0)
    d = np.radians(np.asarray(dip, float))
    return np.column_stack([np.sin(d) * np.sin(dd), np.sin(d) * np.cos(dd), np.cos(d)])


__all__ = ["BOOTSTRAP", "CHUNK_PIXELS", "DOMAIN_TOLERANCE", "Elevation", "MIN_PERCENTILE",
           "MIN_POINTS", "RESOLUTION", "Warn", "fit_plane", "outcrop_thickness", "pole_angle",
           "poles_of", "robust_plane", "svd_normal"]
