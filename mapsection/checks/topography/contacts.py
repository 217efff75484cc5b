"""Contact misfit of the topography test: the section's contacts at the ground paired with
the map's, one-to-one and nearest first (an optimal assignment, scipy's
``linear_sum_assignment``), within the pairing radius; sliver outcrops only one side
shows count as two misfits of half their width (see :mod:`mapsection.checks.topography`).
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass, field

import numpy as np
from scipy.optimize import linear_sum_assignment
from shapely.geometry import MultiLineString

from ...draft import Draft, Horizon, unconformity_key
from ..kinds import unlayered_units
from .agreement import sequence_bases
from .ground import fault_ground_distances, map_unit_at, near, section_ground_contacts
from .results import ContactMisfit, UnpairedContact

PAIRING_RADIUS_M = 500.0  # the pairing radius is the larger of this ...
PAIRING_RADIUS_PIXELS = 10.0  # ... and this many DEM pixels
FAULT_TOLERANCE_M = 25.0  # a contact this close to a fault's ground point is a fault contact


@dataclass
class ContactPairing:
    """The map's contacts and the section's, paired along the line."""

    radius: float  # the pairing radius used, metres
    n_map: int  # the map's contacts that are tops of layered units (fault contacts apart)
    misfits: list[ContactMisfit] = field(default_factory=list)
    un_map: list[UnpairedContact] = field(default_factory=list)  # map contacts left unpaired
    un_sec: list[UnpairedContact] = field(default_factory=list)  # section contacts left unpaired
    faults: list[UnpairedContact] = field(default_factory=list)  # map contacts at a fault
    unverified: list[UnpairedContact] = field(default_factory=list)  # in map gaps
    concealed: list[UnpairedContact] = field(default_factory=list)  # under cover or intrusive


def pair_contacts(draft: Draft, ground: MultiLineString, pixel: float,
                  limit: float) -> ContactPairing:
    """Pair the map's contacts with the section's where its horizons meet ``ground``.

    Parameters
    ----------
    draft
        The section.
    ground
        The DEM profile as lines (:func:`mapsection.checks.topography.ground_line`).
    pixel
        The DEM's pixel size, metres (NaN where unknown).
    limit
        The contact RMS allowed, metres: sliver outcrops narrower than it that only one
        side shows count as two half-width misfits.

    Returns
    -------
    ContactPairing
        Misfits sorted by map distance; unpaired, unverified and concealed contacts
        sorted by distance.

    Examples
    --------
    >>> from mapsection.checks.topography import ground_line
    >>> pairing = pair_contacts(draft, ground_line(draft), 30.0, 60.0)  # doctest: +SKIP
    """
    radius = max(PAIRING_RADIUS_M, PAIRING_RADIUS_PIXELS * pixel if math.isfinite(pixel) else 0.0)
    fault_tol = max(FAULT_TOLERANCE_M, 2.0 * pixel if math.isfinite(pixel) else 0.0)
    faults_x = fault_ground_distances(draft, ground)
    names = draft.column.layered().names  # a cover or intrusive unit's boundary is no top
    idx = {n: i for i, n in enumerate(names)}
    mapped, fault_contacts = _mapped_contacts(draft, idx, faults_x, fault_tol)
    predicted = _predicted_contacts(draft, ground)
    out = ContactPairing(radius, sum(len(v) for v in mapped.values()), faults=fault_contacts)
    for top in sorted(set(mapped) | set(predicted), key=lambda t: idx.get(t, -1)):
        m_items = sorted(mapped.get(top, []), key=lambda c: c.distance_m)
        p_x = _comparable(draft, top, predicted.get(top, np.empty(0)), faults_x, fault_tol,
                          out)
        _pair_top(draft, top, m_items, p_x, limit, out)
    out.misfits.sort(key=lambda m: m.map_distance_m)
    for name in ("un_map", "un_sec", "unverified", "concealed"):
        setattr(out, name, sorted(getattr(out, name), key=lambda c: c.distance_m))
    return out


def _z_at(draft: Draft, x) -> float:
    return float(draft.profile.elevation_at(np.array([x]))[0])


def _mapped_contacts(draft: Draft, idx: dict[str, int], faults_x: np.ndarray, fault_tol: float
                     ) -> tuple[dict[str, list[UnpairedContact]], list[UnpairedContact]]:
    """The map's contacts by the horizon they are the top of; those at a fault apart."""
    seq_base = sequence_bases(draft)
    mapped: dict[str, list] = {}
    fault_contacts: list[UnpairedContact] = []
    for c in draft.geology.contacts:
        a, b = c.unit_before, c.unit_after
        if a is None or b is None or a == b or a not in idx or b not in idx:
            continue  # the edge of a map gap, or a unit the column lacks: not a top
        top = a if idx[a] > idx[b] else b
        if a in seq_base and b in seq_base and seq_base[a] != seq_base[b]:  # unconformity
            top = unconformity_key(seq_base[a] if idx[a] < idx[b] else seq_base[b])
        item = UnpairedContact(float(c.distance_m), top, float(c.elevation_m), f"{a} | {b}")
        if near(np.array([c.distance_m]), faults_x, fault_tol)[0]:
            fault_contacts.append(item)
        else:
            mapped.setdefault(top, []).append(item)
    return mapped, fault_contacts


def _predicted_contacts(draft: Draft, ground: MultiLineString) -> dict[str, np.ndarray]:
    """Where the section's horizons, and its erosion surfaces, meet the ground."""
    predicted = section_ground_contacts(draft, ground)
    if draft.unconformities:  # the erosion surfaces meet the ground too
        predicted.update(section_ground_contacts(dataclasses.replace(draft, horizons=[
            Horizon(unconformity_key(u.unit), u.geometry, u.above_ground, u.block)
            for u in draft.unconformities]), ground))
    return predicted


def _comparable(draft: Draft, top: str, p_x: np.ndarray, faults_x: np.ndarray,
                fault_tol: float, out: ContactPairing) -> np.ndarray:
    """The section's contacts of ``top`` the map can be compared with, sorted; those in map
    gaps (unverified) and under cover or intrusive units (concealed) go to ``out``."""
    other = unlayered_units(draft)
    at_fault = near(p_x, faults_x, fault_tol)
    at_map = map_unit_at(draft, p_x)
    in_gap = at_map == None  # noqa: E711
    for x in p_x[in_gap & ~at_fault]:
        out.unverified.append(UnpairedContact(float(x), top, _z_at(draft, x)))
    hidden = np.array([u in other for u in at_map], bool)
    for x, u in zip(p_x[hidden & ~at_fault], at_map[hidden & ~at_fault], strict=True):
        out.concealed.append(UnpairedContact(float(x), top, _z_at(draft, x), f"under {u}"))
    return np.sort(p_x[~at_fault & ~in_gap & ~hidden])


def _pair_top(draft: Draft, top: str, m_items: list[UnpairedContact], p_x: np.ndarray,
              limit: float, out: ContactPairing) -> None:
    """Pair one horizon's map and section contacts into ``out``."""
    m_x = np.array([c.distance_m for c in m_items], float)
    pairs = _pair(p_x, m_x, out.radius)
    for r, c in pairs:
        out.misfits.append(ContactMisfit(top, float(m_x[c]), float(p_x[r]),
                                         float(p_x[r] - m_x[c]), m_items[c].elevation_m))
    used_p = {r for r, _ in pairs}
    used_m = {c for _, c in pairs}
    # A sliver outcrop narrower than the contact limit shown by one side only: as if
    # both its contacts missed their meeting point (its middle) by half its width.
    for a, b in _slivers(p_x, set(range(len(p_x))) - used_p, limit):
        mid, half = 0.5 * (p_x[a] + p_x[b]), 0.5 * (p_x[b] - p_x[a])
        out.misfits += [ContactMisfit(top, float(mid), float(p_x[a]), float(-half),
                                      _z_at(draft, mid), "sliver"),
                        ContactMisfit(top, float(mid), float(p_x[b]), float(half),
                                      _z_at(draft, mid), "sliver")]
        used_p |= {a, b}
    for a, b in _slivers(m_x, set(range(len(m_x))) - used_m, limit):
        mid, half = 0.5 * (m_x[a] + m_x[b]), 0.5 * (m_x[b] - m_x[a])
        out.misfits += [ContactMisfit(top, float(m_x[a]), float(mid), float(half),
                                      m_items[a].elevation_m, "sliver"),
                        ContactMisfit(top, float(m_x[b]), float(mid), float(-half),
                                      m_items[b].elevation_m, "sliver")]
        used_m |= {a, b}
    out.un_map += [m_items[i] for i in range(len(m_items)) if i not in used_m]
    out.un_sec += [UnpairedContact(float(p_x[i]), top, _z_at(draft, p_x[i]))
                   for i in range(len(p_x)) if i not in used_p]


def _pair(pred: np.ndarray, mapped: np.ndarray, radius: float) -> list[tuple[int, int]]:
    """Optimal one-to-one pairing of two sets of distances, pairs within ``radius`` only."""
    if len(pred) == 0 or len(mapped) == 0:
        return []
    cost = np.abs(pred[:, None] - mapped[None, :])
    big = radius * 10.0 + cost.max() + 1.0
    rows, cols = linear_sum_assignment(np.where(cost <= radius, cost, big))
    return [(int(r), int(c)) for r, c in zip(rows, cols, strict=True) if cost[r, c] <= radius]


def _slivers(xs: np.ndarray, unpaired: set[int], limit: float) -> list[tuple[int, int]]:
    """Neighbouring unpaired contacts of one horizon closer than ``limit``: a sliver outcrop.

    ``xs`` are sorted; two consecutive entries both unpaired and at most ``limit``
    apart bound an outcrop narrower than the contact limit that the other side
    does not show.
    """
    out, i = [], 0
    while i + 1 < len(xs):
        if i in unpaired and i + 1 in unpaired and xs[i + 1] - xs[i] <= limit:
            out.append((i, i + 1))
            i += 2
        else:
            i += 1
    return out


__all__ = ["FAULT_TOLERANCE_M", "PAIRING_RADIUS_M", "PAIRING_RADIUS_PIXELS", "ContactPairing",
           "pair_contacts"]
