"""The part of the map a build reads: the neighbourhood of its sections.

A build needs the map only near its section lines: the corridor of each section (surface
geology, the contacts beside the line) and the location map of its sheet. The map is read
through a bounding box (a GeoPackage answers it from its R-tree spatial index), so that a
short section across a state-wide map reads a few thousand polygons, not all of them.

The location map shows the line with a margin of ``VIEW_MARGIN`` of its length, widened to
its panel's shape but never beyond ``VIEW_SPREAD`` times that view's larger half-side
(:func:`location_view_limit`): its extent is known before the sheet is laid out, and the
map is read over it plus ``NEIGHBOURHOOD_M`` all round.
"""

from __future__ import annotations

from collections.abc import Iterable

import numpy as np

# The location map's margin around the line's extent, as a fraction of the line's length.
VIEW_MARGIN = 0.12
# Widening the location map to its panel stops at this many times its larger half-side
# (the tool's default: the sample area's sheets widen by 1.2 at most).
VIEW_SPREAD = 1.5
# Read beyond the corridors and location maps (m): contacts and attitudes near the edge of
# the view still have their neighbours (the tool's default).
NEIGHBOURHOOD_M = 1000.0

# The build's thickness comparison (the column's thicknesses against the map's contacts)
# looks at the map and attitudes this far around the corridors (m; the tool's default).
THICKNESS_NEAR_M = 3000.0

Box = tuple[float, float, float, float]  # xmin, ymin, xmax, ymax


def location_view_limit(vertices: np.ndarray) -> tuple[np.ndarray, np.ndarray, float]:
    """The location map around a line before widening: centre, half-sides and the largest
    half-side the widening may reach (``VIEW_SPREAD`` times the larger one)."""
    v = np.asarray(vertices, float)
    length = float(np.hypot(*np.diff(v, axis=0).T).sum())
    lo, hi = v.min(axis=0), v.max(axis=0)
    half = (hi - lo) / 2 + VIEW_MARGIN * length
    return (lo + hi) / 2, half, VIEW_SPREAD * float(half.max())


def sections_box(lines: Iterable[np.ndarray], corridors: Iterable[float],
                 margin: float = NEIGHBOURHOOD_M) -> Box:
    """The box holding every line's corridor and location map, plus ``margin`` (m).

    Parameters
    ----------
    lines : iterable of (n, 2) arrays
        The vertices of each section line, in the map's CRS.
    corridors : iterable of float
        Each section's corridor half-width (m).
    margin : float
        Read this far beyond them.

    Returns
    -------
    (xmin, ymin, xmax, ymax)

    Examples
    --------
    >>> sections_box([np.array([[0.0, 0.0], [10_000.0, 0.0]])], [500.0])
    (-5300.0, -10300.0, 15300.0, 10300.0)
    """
    boxes = []
    for v, c in zip(lines, corridors, strict=True):
        v = np.asarray(v, float)
        centre, _, reach = location_view_limit(v)
        boxes.append([*(v.min(axis=0) - c), *(v.max(axis=0) + c)])
        boxes.append([*(centre - reach), *(centre + reach)])
    b = np.asarray(boxes, float)
    return (float(b[:, 0].min() - margin), float(b[:, 1].min() - margin),
            float(b[:, 2].max() + margin), float(b[:, 3].max() + margin))


def corridors_box(lines: Iterable[np.ndarray], corridors: Iterable[float],
                  margin: float = THICKNESS_NEAR_M) -> Box:
    """The box holding every line's corridor, plus ``margin`` (m)."""
    b = np.asarray([[*(np.asarray(v, float).min(axis=0) - c),
                     *(np.asarray(v, float).max(axis=0) + c)]
                    for v, c in zip(lines, corridors, strict=True)], float)
    return (float(b[:, 0].min() - margin), float(b[:, 1].min() - margin),
            float(b[:, 2].max() + margin), float(b[:, 3].max() + margin))


__all__ = ["NEIGHBOURHOOD_M", "THICKNESS_NEAR_M", "VIEW_MARGIN", "VIEW_SPREAD", "corridors_box",
           "location_view_limit", "sections_box"]
