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


def _sorted(distance, phi, weight):
    """The readings in one order whatever order they came in: by distance, ties by angle
    then weight."""
    d, p, w = (np.asarray(v, float) for v in (distance, phi, weight))
    order = np.lexsort((w, p, d))
    return order, d[order], p[order], w[order]


def _unwrapped(p: np.ndarray) -> np.ndarray:
    """Travel angles made continuous along the line (steps wrapped into ±180°), so that
    means and spreads need no wrapping."""
    if len(p) == 0:
        return p
    return p[0] + np.concatenate([[0.0], np.cumsum(wrap180(np.diff(p)))])


def group_domains(distance, phi, weight, tolerance: float) -> list[Domain]:
    """Dip domains: the fewest runs of consecutive dips (along the line) in which every
    dip lies within ``tolerance`` degrees of its run's weighted mean.

    An exact segmentation by dynamic programming (the classic optimal partition of a
    sequence, Bellman 1961 "On the approximation of curves by line segments using
    dynamic programming"): fewest domains first, then the least weighted spread
    (sum of squared departures from each domain's mean). It depends on the set of
    readings only, not on the order they are listed in (ties in distance are ordered
    by angle). Readings that one reading alone would turn into a domain are screened
    out before (:func:`screen_readings`).
    """
    _, d, p, w = _sorted(distance, phi, weight)
    n = len(d)
    u = _unwrapped(p)
    big = 1e9  # one more domain always costs more than any spread
    best = np.full(n + 1, np.inf)
    best[0] = 0.0
    back = np.zeros(n + 1, int)
    lim = tolerance + 1e-9
    reach = 64  # readings looked at past i; doubled while a run could still go on
    for i in range(n):  # best[i] is final here: every run ending before i was tried
        # A run whose angles span more than twice the tolerance has a reading farther
        # than the tolerance from its mean: runs from i stop before that span is reached,
        # so only the readings up to it are looked at (the same result, in about n steps
        # times the longest run instead of n squared).
        while i + reach < n and np.ptp(u[i:i + reach]) <= 2 * lim + 1e-6:
            reach *= 2
        seg = u[i:i + reach]
        ww = w[i:i + reach]
        sw = np.cumsum(ww)
        s1 = np.cumsum(ww * seg)
        s2 = np.cumsum(ww * seg * seg)
        mean = s1 / sw
        spread = np.maximum(np.maximum.accumulate(seg) - mean, mean - np.minimum.accumulate(seg))
        sse = np.maximum(s2 - s1 * s1 / sw, 0.0)
        cost = best[i] + big + sse
        ok = (spread <= lim) & (cost < best[i + 1:i + 1 + len(seg)])
        j = np.flatnonzero(ok)
        best[i + 1 + j] = cost[j]
        back[i + 1 + j] = i
    cuts = [n]
    while cuts[-1] > 0:
        cuts.append(back[cuts[-1]])
    cuts = cuts[::-1]
    domains = []
    for a, b in zip(cuts[:-1], cuts[1:], strict=True):
        mean = float(np.sum(w[a:b] * u[a:b]) / np.sum(w[a:b]))
        domains.append(Domain(float(d[a]), float(d[b - 1]), float(wrap180(mean)), b - a))
    return merge_parallel(domains)


def _fits_run(u: np.ndarray, k: int, side: list[int], tol: float) -> bool:
    """Reading ``k`` and the readings ``side`` (two) could make one dip domain."""
    if len(side) < 2:
        return False
    v = u[[k, *side]]
    return bool(np.max(np.abs(v - v.mean())) <= tol)


@dataclass(frozen=True)
class Screened:
    """What :func:`screen_readings` says of each reading (in the order given).

    ``left_out``: kept out of the dip domains; ``kind``: ``"outlier"`` (disagrees with
    neighbours that agree with each other) or ``"hinge"`` (between two dip domains,
    fitting neither: left out of both, not an error); ``expected``: the travel angle
    its neighbours give; ``why``: a sentence for the log.
    """

    left_out: np.ndarray
    kind: tuple[str, ...]
    expected: np.ndarray
    why: tuple[str, ...]


def _dip_of(v) -> float:
    return float(plane_dip(wrap180(v)))


def _verdict(u: np.ndarray, k: int, left: list[int], right: list[int], tol: float
             ) -> tuple[str, float, str] | None:
    """Why reading ``k`` (unsupported) is left out: (kind, the dip expected there, the
    reason), or None where its neighbours are too few to judge (see screen_readings)."""

    def agree(a, b):
        return abs(u[a] - u[b]) <= tol

    lc = len(left) == 2 and agree(*left)
    rc = len(right) == 2 and agree(*right)
    if left and right:
        l1, r1 = left[0], right[0]
        if agree(l1, r1):
            exp = 0.5 * (u[l1] + u[r1])
            return ("outlier", exp, f"its neighbours agree on {_dip_of(exp):.1f}°")
        if lc and rc:
            lo, hi = sorted((u[l1], u[r1]))
            if lo <= u[k] <= hi:
                exp = u[l1] if abs(u[k] - u[l1]) < abs(u[k] - u[r1]) else u[r1]
                return ("hinge", exp, f"between dip domains {_dip_of(u[l1]):.1f}° and "
                        f"{_dip_of(u[r1]):.1f}°, fitting neither: taken as a reading in "
                        "the hinge")
            exp = lo if u[k] < lo else hi
            return ("outlier", exp, f"outside the dips of both neighbouring "
                    f"domains ({_dip_of(u[l1]):.1f}° and {_dip_of(u[r1]):.1f}°)")
    elif (lc and not right) or (rc and not left):
        side = left if lc else right
        exp = 0.5 * (u[side[0]] + u[side[1]])
        return ("outlier", exp, f"the last reading, after readings that agree on "
                f"{_dip_of(exp):.1f}°: the change does not persist")
    return None


def screen_readings(distance, phi, tolerance: float, keep=None) -> Screened:
    """Readings that one reading alone would make into a dip domain.

    A reading is *supported* when a reading next to it along the line (either side)
    lies within ``tolerance`` of it, or it could share a dip domain with the two
    nearest readings on one side (all three within ``tolerance`` of their mean), or
    the geologist marked it to be kept (``keep``).
    An unsupported reading is left out where its neighbours agree on something else:

    * the nearest readings on either side agree with each other: an outlier in a
      domain (misfit against their mean);
    * the two nearest readings on each side agree among themselves but the two sides
      differ (two domains) and the reading lies between their dips: a reading in the
      hinge, left out of both (not an outlier); outside them: an outlier;
    * at an end of the line (or of a fault block) after two readings that agree: the
      change does not persist (no further reading), an outlier.

    Elsewhere (too few readings to judge) the reading stays. Depends on the set of
    readings only, not on their order (common practice: a domain rests on more than
    one reading; the rule itself is the tool's own).
    """
    d = np.asarray(distance, float)
    n = len(d)
    keep = np.zeros(n, bool) if keep is None else np.asarray(keep, bool)
    order, _, p, _ = _sorted(d, phi, np.zeros(n))
    u = _unwrapped(p)
    kp = keep[order]
    tol = tolerance + 1e-9
    left_out = np.zeros(n, bool)
    kinds = [""] * n
    why = [""] * n
    expected = np.full(n, np.nan)

    for k in range(n):
        left = [j for j in (k - 1, k - 2) if j >= 0]
        right = [j for j in (k + 1, k + 2) if j < n]
        near = left[:1] + right[:1]
        if kp[k] or not near or any(abs(u[k] - u[j]) <= tol for j in near) \
                or _fits_run(u, k, left, tol) or _fits_run(u, k, right, tol):
            continue
        here = _dip_of(u[k])
        verdict = _verdict(u, k, left, right, tol)
        if verdict is None:
            continue
        kind, exp, reason = verdict
        i = order[k]
        left_out[i] = True
        kinds[i] = kind
        expected[i] = float(wrap180(exp))
        why[i] = (f"dip {here:.1f}° differs by {abs(u[k] - exp):.1f}° (> tolerance "
                  f"{tolerance:g}°) from its neighbours and no neighbour supports it; "
                  f"{reason}")
    return Screened(left_out, tuple(kinds), expected, tuple(why))


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
