"""Topographic profile along a section line, sampled from a DEM.

(Data model fixed here; the sampling function is filled in by the profile work.)
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pyproj

from .line import SectionLine


@dataclass(frozen=True, eq=False)
class Profile:
    """The ground surface along a section line.

    ``distance`` is metres along the line from its first vertex; ``x``, ``y``
    are in the line's CRS; ``z`` is the DEM elevation in metres (NaN where the
    DEM has no data or the line leaves it).
    """

    distance: np.ndarray
    x: np.ndarray
    y: np.ndarray
    z: np.ndarray
    line: SectionLine
    crs: pyproj.CRS | None = None
    pixel_size: float = float("nan")  # the DEM's pixel size in metres

    def elevation_at(self, distance: np.ndarray) -> np.ndarray:
        """Ground elevation at distances along the line (linear between samples, NaN gaps kept)."""
        d = np.asarray(distance, float)
        ok = np.isfinite(self.z)
        z = np.interp(d, self.distance[ok], self.z[ok], left=np.nan, right=np.nan)
        # Keep gaps: a distance whose nearest samples are nodata has no elevation.
        gap = np.interp(d, self.distance, (~ok).astype(float), left=1.0, right=1.0) > 0.5
        return np.where(gap, np.nan, z)
