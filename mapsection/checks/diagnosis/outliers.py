"""Diagnosis (b): outliers, attitudes and map contacts that their neighbours contradict.

An attitude whose apparent dip departs from the median of its neighbours (readings of
the same fault block within 1000 m along the line, the tool's default) by a modified
z-score above 3.5 (Iglewicz & Hoaglin 1993, How to detect and handle outliers:
M = 0.6745 (x - median) / MAD) and by at least 10 degrees, and that no neighbour within
5 degrees corroborates (two agreeing readings make a narrow dip domain, not a stray
reading; the tool's defaults); a map contact that the best-fit thicknesses
(:mod:`mapsection.checks.diagnosis.thicknesses`) and the dips cannot place (the
residuals of the pairs on either side of it, judged the same way against all
contacts), by at least 2 DEM pixels or 50 m along the line (the tool's default).

Pure functions: numpy only, no drawing, no files.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ...draft import Draft
from .ranked import Ranked
from .thicknesses import THICKNESS_FRACTION, ground_faults, least_squares_fit

__all__ = ["AttitudeOutlier", "ContactOutlier", "attitude_outliers", "contact_outliers"]

MODIFIED_Z = 3.5  # Iglewicz & Hoaglin (1993)
MIN_DIP_OUTLIER_DEG = 10.0  # the tool's default
DIP_MAD_FLOOR_DEG = 1.0  # readings are taken to whole degrees (the tool's default)
DIP_WINDOW_M = 1000.0  # the tool's default
CORROBORATE_DEG = 5.0  # a neighbour this close to a reading corroborates it (the tool's default)
MIN_CONTACT_OUTLIER_M = 50.0  # or 2 DEM pixels, whichever is larger (the tool's default)


def _mod_z(r: float, mad: float, floor: float) -> float:
    return 0.6745 * abs(r) / max(mad, floor)


class _Outlier(Ranked):
    """An outlier ranks by its modified z-score."""

    @property
    def strength(self) -> float:
        return self.modified_z


@dataclass(frozen=True)
class AttitudeOutlier(_Outlier):
    """A reading whose apparent dip its neighbours along the line contradict."""

    id: str
    distance_m: float
    apparent_dip_deg: float
    neighbours_deg: float  # median apparent dip of its neighbours
    misfit_deg: float  # reading minus the neighbours' median
    modified_z: float
    n_neighbours: int

    def text(self) -> str:
        return (f"attitude {self.id} at {self.distance_m:.0f} m: apparent dip "
                f"{self.apparent_dip_deg:.1f} deg against {self.neighbours_deg:.1f} deg around "
                f"it (misfit {self.misfit_deg:+.1f} deg)")


def attitude_outliers(draft: Draft, *, window_m: float = DIP_WINDOW_M,
                      min_misfit_deg: float = MIN_DIP_OUTLIER_DEG) -> list[AttitudeOutlier]:
    """Attitudes that depart from their neighbours (modified z-score > 3.5, Iglewicz &
    Hoaglin 1993) by at least ``min_misfit_deg`` and that no neighbour corroborates,
    worst first. Neighbours: readings of the same fault block within ``window_m`` along
    the line (at least 3). Readings whose strike is within 15 degrees of the line
    (poorly constrained apparent dips) are left out."""
    dips = draft.dips
    dist = np.asarray(dips.distance_m, float)
    if not len(dist):
        return []
    app = np.asarray(dips.apparent_dip, float)
    ok = np.isfinite(app) & np.isfinite(dist) & ~np.asarray(dips.poorly_constrained, bool)
    block = np.searchsorted(ground_faults(draft), dist)
    out = []
    for i in np.nonzero(ok)[0]:
        nb = ok & (block == block[i]) & (np.abs(dist - dist[i]) <= window_m)
        nb[i] = False
        if nb.sum() < 3:
            continue
        v = app[nb]
        med = float(np.median(v))
        mad = float(np.median(np.abs(v - med)))
        r = float(app[i] - med)
        z = _mod_z(r, mad, DIP_MAD_FLOOR_DEG)
        # A neighbour agreeing with it makes a (narrow) dip domain, not a stray reading.
        corroborated = bool(np.any(np.abs(v - app[i]) <= CORROBORATE_DEG))
        if z > MODIFIED_Z and abs(r) >= min_misfit_deg and not corroborated:
            out.append(AttitudeOutlier(str(dips.id[i]), float(dist[i]), float(app[i]), med, r,
                                       float(z), int(nb.sum())))
    out.sort(key=lambda o: -o.modified_z)
    return out


@dataclass(frozen=True)
class ContactOutlier(_Outlier):
    """A map contact the best-fit thicknesses and the dips cannot place."""

    id: str  # "top of <unit> at <distance> m"
    top_of: str
    map_distance_m: float
    elevation_m: float
    misfit_m: float  # how far along the line the best-fit thicknesses would put it
    stratigraphic_misfit_m: float  # the same across the bedding
    modified_z: float

    def text(self) -> str:
        return (f"contact {self.id}: the fitted thicknesses and the dips place it about "
                f"{abs(self.misfit_m):.0f} m "
                f"{'further along' if self.misfit_m > 0 else 'back along'} the line "
                f"({abs(self.stratigraphic_misfit_m):.0f} m across the bedding)")


def _ground_slope(draft: Draft, x: float) -> float:
    d = np.asarray(draft.profile.distance, float)
    z = np.asarray(draft.profile.z, float)
    ok = np.isfinite(z)
    if ok.sum() < 2:
        return 0.0
    a, b = np.interp([x - 25.0, x + 25.0], d[ok], z[ok])
    return float((b - a) / 50.0)


def contact_outliers(draft: Draft, *, fraction: float = THICKNESS_FRACTION) \
        -> list[ContactOutlier]:
    """Map contacts the best-fit thicknesses and the dips cannot place, worst first.

    A contact wrongly placed by ``e`` across the bedding leaves residuals ``-e`` and
    ``+e`` in the equations of the pairs before and after it: ``e`` is estimated as half
    their difference, turned into a distance along the ground with the local dip and
    ground slope, and judged by its modified z-score against all contacts (Iglewicz &
    Hoaglin 1993) and by at least the larger of 50 m and 2 DEM pixels along the line.
    """
    names = list(draft.column.names)
    fit = least_squares_fit(draft, fraction)
    rows, pairs, resid = fit.rows, fit.pairs, fit.residuals
    if len(pairs) < 4:
        return []
    before = {p[1]: (r, p[2]) for p, r in zip(pairs, resid, strict=True)}
    after = {p[0]: (r, p[2]) for p, r in zip(pairs, resid, strict=True)}
    idx = [i for i in before if i in after]
    if len(idx) < 4:
        return []
    e = np.array([0.5 * (after[i][0] - before[i][0]) for i in idx])
    med = float(np.median(e))
    mad = float(np.median(np.abs(e - med)))
    pixel = float(getattr(draft.profile, "pixel_size", float("nan")))
    floor = max(MIN_CONTACT_OUTLIER_M, 2.0 * pixel if math.isfinite(pixel) else 0.0)
    out = []
    for k, i in enumerate(idx):
        x, y, col, _ = rows[i]
        dip = 0.5 * (after[i][1] + before[i][1])
        # how the height across the bedding changes along the ground here
        g = math.sin(dip) + math.cos(dip) * _ground_slope(draft, x)
        g = math.copysign(max(abs(g), 0.05), g)
        r = float(e[k] - med)
        along = -r / g  # the contact sits r too high: it belongs where h is r lower
        z = _mod_z(r, mad, 1.0)
        if z > MODIFIED_Z and abs(along) >= floor:
            out.append(ContactOutlier(f"top of {names[col]} at {x:.0f} m", names[col], x, y,
                                      float(along), r, float(z)))
    out.sort(key=lambda o: -o.modified_z)
    return out
