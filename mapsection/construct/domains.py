"""Dip domains: the bedding's travel angle in the section, and the dips grouped into
domains of one dip each (Suppe 1985, Principles of Structural Geology).

Angles: a bed's *travel angle* ``phi`` (degrees, counter-clockwise from +x in
section space) is the direction along the bed that keeps the younger side on
the left. For upright beds with signed apparent dip ``a`` (positive descends
toward increasing distance) ``phi = -a``; overturned beds (younging reversed)
travel the other way, ``phi = 180 - a``. The younging normal is then
``n = (-sin phi, cos phi)``; stratigraphic depth grows along ``-n``.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..angles import wrap180
from ..dips import ProjectedDips


def travel_angle(apparent_dip, overturned) -> np.ndarray:
    a = np.asarray(apparent_dip, float)
    return wrap180(np.where(np.asarray(overturned, bool), 180.0 - a, -a))


def plane_dip(phi) -> np.ndarray:
    """Signed apparent dip of the bedding plane for a travel angle (younging dropped)."""
    a = wrap180(-np.asarray(phi, float))
    return np.where(a > 90.0, a - 180.0, np.where(a <= -90.0, a + 180.0, a))


def unit_vectors(phi_deg) -> tuple[np.ndarray, np.ndarray]:
    """(travel direction t, younging normal n) as (..., 2) arrays."""
    p = np.radians(np.asarray(phi_deg, float))
    t = np.stack([np.cos(p), np.sin(p)], axis=-1)
    n = np.stack([-np.sin(p), np.cos(p)], axis=-1)
    return t, n


@dataclass(frozen=True)
class Domain:
    """A dip domain of one fault block: consecutive dips within the tolerance."""

    start: float  # distance of its first dip
    end: float  # distance of its last dip
    phi: float  # weighted mean travel angle, degrees
    n_dips: int

    @property
    def dip(self) -> float:
        return float(plane_dip(self.phi))


def group_domains(distance, phi, weight, tolerance: float) -> list[Domain]:
    """Dip domains: walk the dips by distance; a dip joins the current domain when it
    lies within ``tolerance`` degrees of the domain's running (weighted) mean."""
    order = np.argsort(distance, kind="stable")
    d, p, w = (np.asarray(v, float)[order] for v in (distance, phi, weight))
    domains: list[Domain] = []
    start = 0
    ref = p[0]  # angles are averaged relative to the domain's first dip (no wrap trouble)
    sw = w[0]
    sx = 0.0
    for i in range(1, len(d)):  # sequential by nature: each dip compares with the running mean
        mean = ref + sx / sw
        if abs(float(wrap180(p[i] - mean))) <= tolerance:
            sx += w[i] * float(wrap180(p[i] - ref))
            sw += w[i]
            continue
        domains.append(Domain(d[start], d[i - 1], float(wrap180(mean)), i - start))
        start, ref, sw, sx = i, p[i], w[i], 0.0
    domains.append(Domain(d[start], d[-1], float(wrap180(ref + sx / sw)), len(d) - start))
    return merge_parallel(domains)


def merge_parallel(domains: list[Domain], min_angle: float = 0.5) -> list[Domain]:
    """Adjacent domains closer than ``min_angle`` cannot meet on an axial surface: merge them."""
    out = [domains[0]]
    for dm in domains[1:]:
        last = out[-1]
        if abs(float(wrap180(dm.phi - last.phi))) < min_angle:
            n = last.n_dips + dm.n_dips
            phi = last.phi + float(wrap180(dm.phi - last.phi)) * dm.n_dips / n
            out[-1] = Domain(last.start, dm.end, float(wrap180(phi)), n)
        else:
            out.append(dm)
    return out


def dip_arrays(dips: ProjectedDips):
    """Finite dips as (distance, elevation, phi, weight, poorly) arrays, sorted by distance."""
    if dips is None or len(dips) == 0:
        e = np.zeros(0)
        return e, e, e, e, np.zeros(0, bool)
    d = np.asarray(dips.distance_m, float)
    a = np.asarray(dips.apparent_dip, float)
    ok = np.isfinite(d) & np.isfinite(a)
    poor = np.asarray(dips.poorly_constrained, bool)[ok]
    phi = travel_angle(a[ok], np.asarray(dips.overturned, bool)[ok])
    z = np.asarray(dips.elevation_m, float)[ok]
    d = d[ok]
    order = np.argsort(d, kind="stable")
    w = np.where(poor, 0.1, 1.0)
    return d[order], z[order], phi[order], w[order], poor[order]
