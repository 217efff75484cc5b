"""Angle wrapping, written once: directions into (-180, 180], lines into (-90, 90].

Examples
--------
>>> from mapsection.angles import wrap180, angle_between
>>> float(wrap180(190.0)), float(wrap180(-180.0))
(-170.0, 180.0)
>>> float(angle_between(350.0, 10.0))
20.0
"""

from __future__ import annotations

import numpy as np


def wrap180(a):
    """Angles (degrees) into (-180, 180]."""
    return -((-np.asarray(a, float) + 180.0) % 360.0 - 180.0)


def wrap90(a):
    """Angles of lines (degrees, modulo 180) into (-90, 90]."""
    return -((-np.asarray(a, float) + 90.0) % 180.0 - 90.0)


def angle_between(a, b):
    """Unsigned difference of two directions (degrees), within [0, 180]."""
    return np.abs(wrap180(np.asarray(a, float) - np.asarray(b, float)))


def line_angle_between(a, b):
    """Unsigned difference of two lines (directions modulo 180, degrees), within [0, 90]."""
    return np.abs(wrap90(np.asarray(a, float) - np.asarray(b, float)))


__all__ = ["angle_between", "line_angle_between", "wrap180", "wrap90"]
