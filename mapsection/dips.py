"""Bedding attitudes projected into the section plane, with their apparent dips.

(Data model fixed here; functions are filled in by the projection work.)
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True, eq=False)
class ProjectedDips:
    """Attitudes within the corridor, in section coordinates (one array entry per attitude).

    ``apparent_dip`` is signed degrees: positive means the bed descends toward
    increasing distance along the line. Sorted by ``distance_m``.
    """

    id: np.ndarray  # str or int ids
    x: np.ndarray  # map position of the measurement
    y: np.ndarray
    distance_m: np.ndarray  # projected position along the line
    offset_m: np.ndarray  # signed offset of the measurement from the line (right positive)
    elevation_m: np.ndarray  # elevation at the projected position (shifted for plunge projection)
    strike: np.ndarray  # right-hand-rule strike, degrees
    dip: np.ndarray  # true dip, degrees
    apparent_dip: np.ndarray
    poorly_constrained: np.ndarray  # bool: strike within 15 degrees of the section azimuth
    overturned: np.ndarray  # bool: bedding overturned (younging reversed)

    def __len__(self) -> int:
        return len(self.distance_m)
