"""Topography test: does the draft section agree with the ground, the map and the dips?

Three measures, all along the section line in section space (x = distance in
metres, y = elevation in metres, vertical exaggeration 1):

* **Contact misfit.** Where a constructed horizon (the top of unit U) meets the
  ground line (the DEM profile), the section predicts a map contact. A map
  contact between units A and B is the top of the older of the two (the one
  lower in the column). Predicted and mapped contacts of the same horizon are
  paired one-to-one, nearest first (an optimal assignment), within a pairing
  radius of the larger of 500 m and 10 DEM pixels. The misfit is
  section distance minus map distance, in metres along the line. A sliver
  outcrop narrower than the contact limit that only one side shows (a horizon
  grazing the ground) counts as two misfits of half its width.
* **Unit agreement.** The share of the line's length where the unit just below
  the ground in the section is the unit the map shows there. Only length where
  both the map and the section have a unit counts (map gaps and DEM gaps are
  left out).
* **Dip agreement.** At each projected attitude, the section's bed dip (the
  local slope of the nearest horizon, signed like an apparent dip: positive
  descends toward increasing distance) against the measured apparent dip.

Contacts where the map line crosses a fault are fault contacts, not tops of
units: they are listed apart and left out of the pairing (on both sides).

Units that are not layers (the column's ``kind``): where the map shows a cover unit at
the ground the bedrock is concealed, and where it shows an intrusive unit the section has
that unit there by construction (:mod:`mapsection.construct.cover`). Those stretches are
listed as concealed (``concealed``, with their lengths) and compared with nothing: they are
left out of the unit agreement, a contact with a cover or intrusive unit on either side is
no top of a layered unit (neither paired nor counted as unpaired), and a horizon the
section brings to the ground within such a stretch is listed apart
(``concealed_section_contacts``), not counted as unpaired.
The pass rule is documented in docs/checks.md.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import asdict, dataclass, field

import numpy as np
import shapely
from scipy.optimize import linear_sum_assignment
from shapely.geometry import MultiLineString

from ..angles import wrap90
from ..draft import Draft, Horizon, unconformity_key
from ..errors import CheckError
from ..settings import Thresholds, threshold_problem
from .kinds import unlayered_units
from .status import NOT_TESTED, Part, combine, passed_of

PAIRING_RADIUS_M = 500.0  # the pairing radius is the larger of this ...
PAIRING_RADIUS_PIXELS = 10.0  # ... and this many DEM pixels
FAULT_TOLERANCE_M = 25.0  # a contact this close to a fault's ground point is a fault contact
UNMATCHED_SHARE = 0.10  # up to this share of the map's contacts may stay unpaired
BELOW_GROUND_M = 0.01  # the unit "at the ground" is the one 1 cm below it


@dataclass(frozen=True)
class ContactMisfit:
    top_of: str
    map_distance_m: float
    section_distance_m: float
    misfit_m: float  # section minus map, metres along the line
    elevation_m: float  # ground elevation at the map contact
    kind: str = "paired"  # or "sliver": half of a narrow outcrop only one side shows


@dataclass(frozen=True)
class UnpairedContact:
    distance_m: float
    top_of: str
    elevation_m: float
    units: str = ""  # "A | B" for a map contact (unit before | unit after)


@dataclass(frozen=True)
class ConcealedStretch:
    """A stretch of the line where the map shows a cover or an intrusive unit: not compared."""

    from_m: float
    to_m: float
    unit: str
    kind: str  # "cover" (bedrock concealed) or "intrusive" (drawn there by construction)


@dataclass(frozen=True)
class UnitDisagreement:
    from_m: float
    to_m: float
    map_unit: str
    section_unit: str | None  # None where the section has no unit below the ground


@dataclass(frozen=True)
class DipMisfit:
    id: str
    distance_m: float
    elevation_m: float
    measured_deg: float  # signed apparent dip
    section_deg: float  # signed local dip of the nearest horizon
    misfit_deg: float  # section minus measured, wrapped to (-90, 90]
    top_of: str
    horizon_distance_m: float  # how far the nearest horizon is from the measurement
    poorly_constrained: bool


@dataclass
class TopographyCheck:
    """Result of the topography test (a failed test is a result, not an error)."""

    passed: bool
    contact_rms_m: float
    contact_worst_m: float
    contact_worst_distance_m: float
    contact_threshold_m: float
    pairing_radius_m: float
    max_unpaired: int
    n_map_contacts: int
    contact_misfits: list[ContactMisfit]
    unpaired_map_contacts: list[UnpairedContact]
    unpaired_section_contacts: list[UnpairedContact]
    fault_contacts: list[UnpairedContact]
    unverified_section_contacts: list[UnpairedContact]  # in map gaps: nothing to compare with
    unit_agreement: float
    unit_agreement_threshold: float
    compared_length_m: float
    disagreements: list[UnitDisagreement]
    unit_source: str  # "unit polygons" or "horizon stack"
    dip_rms_deg: float
    dip_worst_deg: float
    dip_worst_id: str
    dip_worst_distance_m: float
    dip_threshold_deg: float
    dip_misfits: list[DipMisfit]
    construction_residuals: list[dict] = field(default_factory=list)
    failures: list[str] = field(default_factory=list)
    # Three states (issue 12): each measure's verdict, and the test's.
    parts: dict[str, Part] = field(default_factory=dict)
    status: str = NOT_TESTED
    reasons: list[str] = field(default_factory=list)
    # Likely causes of a failure (mapsection.checks.diagnosis.Diagnosis), when diagnosed.
    diagnosis: object = None
    # Cover and intrusive stretches of the map along the line: not compared (see above).
    concealed: list[ConcealedStretch] = field(default_factory=list)
    concealed_length_m: float = 0.0  # under cover
    intrusive_length_m: float = 0.0  # intrusive at the ground
    concealed_section_contacts: list[UnpairedContact] = field(default_factory=list)

    def to_dict(self) -> dict:
        d = asdict(self)
        d["passed"] = passed_of(self.status)
        d["parts"] = {k: p.to_dict() for k, p in self.parts.items()}
        d["diagnosis"] = self.diagnosis.to_dict() if self.diagnosis is not None else None
        return d


# ---------------------------------------------------------------------------
# thresholds


# key -> (lowest, highest, lowest allowed itself?)
def validate_thresholds(thresholds: Thresholds) -> None:
    """Raise CheckError naming the [checks] key of a threshold out of range."""
    problem = threshold_problem(thresholds)
    if problem is not None:
        raise CheckError(f"[checks] {problem[0]}: {problem[1]}")


def contact_threshold_m(thresholds: Thresholds, pixel_size: float) -> float:
    """The contact RMS allowed: the larger of N DEM pixels and a distance in metres."""
    px = thresholds.contact_rms_pixels * pixel_size if math.isfinite(pixel_size) else 0.0
    return float(max(px, thresholds.contact_rms_m))


# ---------------------------------------------------------------------------
# geometry helpers


def ground_line(draft: Draft) -> MultiLineString:
    """The DEM profile as lines in section space; NaN gaps split it."""
    d = np.asarray(draft.profile.distance, float)
    z = np.asarray(draft.profile.z, float)
    ok = np.isfinite(z) & np.isfinite(d)
    # Runs of consecutive finite samples.
    edges = np.flatnonzero(np.diff(np.concatenate([[0], ok.astype(np.int8), [0]])))
    runs = [(a, b) for a, b in zip(edges[::2], edges[1::2], strict=True) if b - a >= 2]
    return MultiLineString([np.column_stack([d[a:b], z[a:b]]) for a, b in runs])


def _point_distances(geom) -> np.ndarray:
    """x of every point of an intersection result (the middle of any overlap)."""
    parts = shapely.get_parts(geom)
    if len(parts) == 0:
        return np.empty(0)
    xs = [
        shapely.get_coordinates(p)[:, 0]
        if p.geom_type == "Point"
        else [shapely.centroid(p).x]
        for p in parts
        if not p.is_empty
    ]
    return np.concatenate(xs) if xs else np.empty(0)


def _dedupe(x: np.ndarray, tol: float) -> np.ndarray:
    x = np.sort(x)
    if len(x) < 2:
        return x
    keep = np.concatenate([[True], np.diff(x) > tol])
    return x[keep]


def section_ground_contacts(draft: Draft, ground: MultiLineString) -> dict[str, np.ndarray]:
    """top_of -> distances where that horizon meets the ground line.

    A horizon's below-ground and projected above-ground pieces meet on the
    ground; crossings and touching ends are both counted, once each.
    """
    snap = 0.01  # metres: a piece ending this close to the ground ends on it
    out: dict[str, list[np.ndarray]] = {}
    for h in draft.horizons:
        g = h.geometry
        if g is None or g.is_empty:
            continue
        xs = [_point_distances(shapely.intersection(g, ground))]
        if not h.above_ground:
            ends = shapely.points(shapely.get_coordinates(g)[[0, -1]])
            near = shapely.distance(ends, ground) <= snap
            xs.append(shapely.get_coordinates(ends[near])[:, 0])
        out.setdefault(h.top_of, []).extend(xs)
    return {k: _dedupe(np.concatenate(v), 0.5) for k, v in out.items()}


def _fault_ground_distances(draft: Draft, ground: MultiLineString) -> np.ndarray:
    xs = [np.array([f.distance_m for f in draft.geology.faults], float)]
    for f in draft.faults:
        if f.geometry is not None and not f.geometry.is_empty:
            xs.append(_point_distances(shapely.intersection(f.geometry, ground)))
    x = np.concatenate(xs) if xs else np.empty(0)
    return x[np.isfinite(x)]


def _near(x: np.ndarray, ref: np.ndarray, tol: float) -> np.ndarray:
    if len(ref) == 0 or len(x) == 0:
        return np.zeros(len(x), bool)
    return np.min(np.abs(x[:, None] - ref[None, :]), axis=1) <= tol


def _map_unit_at(draft: Draft, d: np.ndarray) -> np.ndarray:
    """The map's unit at distances (object array; None in map gaps)."""
    iv = sorted(draft.geology.intervals, key=lambda i: i.start_m)
    out = np.full(len(d), None, dtype=object)
    if not iv:
        return out
    starts = np.array([i.start_m for i in iv])
    ends = np.array([i.end_m for i in iv])
    units = np.array([i.unit for i in iv], dtype=object)
    k = np.searchsorted(starts, d, side="right") - 1
    inside = (k >= 0) & (d <= ends[np.clip(k, 0, None)])
    out[inside] = units[k[inside]]
    return out


def _pair(pred: np.ndarray, mapped: np.ndarray, radius: float) -> list[tuple[int, int]]:
    """Optimal one-to-one pairing of two sets of distances, pairs within ``radius`` only."""
    if len(pred) == 0 or len(mapped) == 0:
        return []
    cost = np.abs(pred[:, None] - mapped[None, :])
    big = radius * 10.0 + cost.max() + 1.0
    rows, cols = linear_sum_assignment(np.where(cost <= radius, cost, big))
    return [(int(r), int(c)) for r, c in zip(rows, cols, strict=True) if cost[r, c] <= radius]


# ---------------------------------------------------------------------------
# section unit at the ground


def _unit_from_polygons(draft: Draft, x: np.ndarray, y: np.ndarray) -> np.ndarray:
    out = np.full(len(x), None, dtype=object)
    other = unlayered_units(draft)  # drawn over the layered section: not its units
    for up in draft.units:
        if up.geometry is None or up.geometry.is_empty or up.unit in other:
            continue
        shapely.prepare(up.geometry)
        inside = shapely.contains_xy(up.geometry, x, y) & (out == None)  # noqa: E711
        out[inside] = up.unit
    return out


def _elevations_on(coords: np.ndarray, d: np.ndarray, chunk: int = 2_000_000) -> np.ndarray:
    """Elevation of a polyline at each distance, per segment (N x S, NaN where not spanned)."""
    x0, y0 = coords[:-1, 0], coords[:-1, 1]
    x1, y1 = coords[1:, 0], coords[1:, 1]
    lo, hi = np.minimum(x0, x1), np.maximum(x0, x1)
    dx = np.where(x1 != x0, x1 - x0, np.nan)
    rows = max(1, chunk // max(len(x0), 1))
    parts = []
    for s in range(0, len(d), rows):  # chunks only bound the memory
        dd = d[s : s + rows, None]
        t = (dd - x0) / dx
        yy = y0 + t * (y1 - y0)
        parts.append(np.where((dd >= lo) & (dd <= hi), yy, np.nan))
    return np.concatenate(parts) if parts else np.empty((0, len(x0)))


def _block_at(draft: Draft, x: np.ndarray, y: np.ndarray) -> np.ndarray:
    """Fault block of points: the number of fault traces passed from the start of the line.

    Blocks are numbered from the start of the line (0, 1, ...), as the draft's
    horizons are. A trace is passed when the point lies beyond it at the point's
    elevation (the trace's end distance is used above or below its extent).
    Without faults, or when all horizons share one block, every point is block 0.
    """
    out = np.zeros(len(x), int)
    if not draft.faults or len({h.block for h in draft.horizons}) < 2:
        return out
    for g in (f.geometry for f in draft.faults):
        if g is None or g.is_empty:
            continue
        c = shapely.get_coordinates(g)
        order = np.argsort(c[:, 1])
        # The trace's distance as a function of elevation, clamped beyond its ends.
        xf = np.interp(y, c[order, 1], c[order, 0])
        out += (x > xf).astype(int)
    return out


def _unit_from_horizons(draft: Draft, x: np.ndarray, y: np.ndarray) -> np.ndarray:
    """The unit at each point from the horizon stack.

    A point lies in unit U when the nearest horizon above it is the top of U;
    with no horizon above, it lies in the unit just younger than the nearest
    horizon below it.
    """
    names = draft.column.layered().names
    idx = {n: i for i, n in enumerate(names)}
    above_y = np.full(len(x), np.inf)
    above_u = np.full(len(x), -1)
    below_y = np.full(len(x), -np.inf)
    below_u = np.full(len(x), -1)
    blocks = _block_at(draft, x, y)
    for h in draft.horizons:
        if h.top_of not in idx or h.geometry is None or h.geometry.is_empty:
            continue
        mine = blocks == h.block  # a horizon says nothing about points in another fault block
        for part in shapely.get_parts(h.geometry):
            ys = _elevations_on(shapely.get_coordinates(part), x)
            with np.errstate(invalid="ignore"):
                a = np.nanmin(np.where(ys >= y[:, None], ys, np.nan), axis=1, initial=np.inf)
                b = np.nanmax(np.where(ys < y[:, None], ys, np.nan), axis=1, initial=-np.inf)
            upd = (a < above_y) & mine
            above_y[upd], above_u[upd] = a[upd], idx[h.top_of]
            upd = (b > below_y) & mine
            below_y[upd], below_u[upd] = b[upd], idx[h.top_of]
    # An unconformity bounds the stacks: below it a point lies in the older sequence (the
    # unit just younger than the horizon below it), above it in the younger one (its
    # oldest unit when no younger horizon lies above).
    for u in draft.unconformities:
        if u.unit not in idx or u.geometry is None or u.geometry.is_empty:
            continue
        mine = blocks == u.block
        ys = _elevations_on(shapely.get_coordinates(u.geometry), x)
        with np.errstate(invalid="ignore"):
            a = np.nanmin(np.where(ys >= y[:, None], ys, np.nan), axis=1, initial=np.inf)
            b = np.nanmax(np.where(ys < y[:, None], ys, np.nan), axis=1, initial=-np.inf)
        upd = (a < above_y) & mine
        above_y[upd], above_u[upd] = a[upd], -2
        upd = (b > below_y) & mine
        below_y[upd], below_u[upd] = b[upd], idx[u.unit] + 1
    unit = np.where(above_u >= 0, above_u, np.where(below_u > 0, below_u - 1, -1))
    out = np.full(len(x), None, dtype=object)
    out[unit >= 0] = np.asarray(names, dtype=object)[unit[unit >= 0]]
    return out


def section_unit_at_ground(draft: Draft, d: np.ndarray, z: np.ndarray) -> tuple[np.ndarray, str]:
    """The section's unit just below the ground at (d, z); and which source was used.

    A constructed draft's unit polygons are used; a draft read back from an
    edited file (method "edited") or one without polygons uses the horizon
    stack, because polygons in an edited file may no longer match its horizons.
    """
    y = z - BELOW_GROUND_M
    if draft.units and draft.method != "edited":
        out = _unit_from_polygons(draft, d, y)
        miss = out == None  # noqa: E711
        if miss.any():  # a sliver the polygons do not cover: ask the horizons there
            out[miss] = _unit_from_horizons(draft, d[miss], y[miss])
        return out, "unit polygons"
    return _unit_from_horizons(draft, d, y), "horizon stack"


# ---------------------------------------------------------------------------
# the three measures


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


def _sequence_bases(draft: Draft) -> dict[str, str]:
    """unit -> the oldest unit of its sequence, for a column with unconformities (else {})."""
    seqs = draft.column.layered().sequences()
    if len(seqs) < 2:
        return {}
    return {n: s.names[-1] for s in seqs for n in s.names}


def _other_sequence(draft: Draft, pts, lines) -> np.ndarray | None:
    """For a column with unconformities: True where a horizon belongs to another sequence
    than the unit polygon holding the reading (None for one sequence, or no polygons)."""
    bases = _sequence_bases(draft)
    if not bases or not draft.units:
        return None
    polys = np.array([u.geometry for u in draft.units], dtype=object)
    inside = shapely.distance(pts[:, None], polys[None, :])
    seq = np.array([bases.get(draft.units[k].unit) for k in np.argmin(inside, axis=1)],
                   dtype=object)
    oldest = draft.column.layered().names[-1]
    hz = np.array([bases.get(h.top_of, bases[oldest] if h.top_of.lower().startswith("base")
                             else None) for h in lines], dtype=object)
    return seq[:, None] != hz[None, :]


def _contacts(draft: Draft, ground: MultiLineString, pixel: float, limit: float) -> dict:
    radius = max(PAIRING_RADIUS_M, PAIRING_RADIUS_PIXELS * pixel if math.isfinite(pixel) else 0.0)
    fault_tol = max(FAULT_TOLERANCE_M, 2.0 * pixel if math.isfinite(pixel) else 0.0)
    faults_x = _fault_ground_distances(draft, ground)
    names = draft.column.layered().names  # a cover or intrusive unit's boundary is no top
    idx = {n: i for i, n in enumerate(names)}
    other = unlayered_units(draft)

    def z_at(x):
        return float(draft.profile.elevation_at(np.array([x]))[0])

    seq_base = _sequence_bases(draft)
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
        if _near(np.array([c.distance_m]), faults_x, fault_tol)[0]:
            fault_contacts.append(item)
        else:
            mapped.setdefault(top, []).append(item)

    predicted = section_ground_contacts(draft, ground)
    if draft.unconformities:  # the erosion surfaces meet the ground too
        predicted.update(section_ground_contacts(dataclasses.replace(draft, horizons=[
            Horizon(unconformity_key(u.unit), u.geometry, u.above_ground, u.block)
            for u in draft.unconformities]), ground))
    misfits, un_map, un_sec, unverified, concealed = [], [], [], [], []
    for top in sorted(set(mapped) | set(predicted), key=lambda t: idx.get(t, -1)):
        m_items = sorted(mapped.get(top, []), key=lambda c: c.distance_m)
        m_x = np.array([c.distance_m for c in m_items], float)
        p_x = predicted.get(top, np.empty(0))
        at_fault = _near(p_x, faults_x, fault_tol)
        at_map = _map_unit_at(draft, p_x)
        in_gap = at_map == None  # noqa: E711
        for x in p_x[in_gap & ~at_fault]:
            unverified.append(UnpairedContact(float(x), top, z_at(x)))
        hidden = np.array([u in other for u in at_map], bool)
        for x, u in zip(p_x[hidden & ~at_fault], at_map[hidden & ~at_fault], strict=True):
            concealed.append(UnpairedContact(float(x), top, z_at(x), f"under {u}"))
        p_x = np.sort(p_x[~at_fault & ~in_gap & ~hidden])
        pairs = _pair(p_x, m_x, radius)
        for r, c in pairs:
            misfits.append(ContactMisfit(top, float(m_x[c]), float(p_x[r]),
                                         float(p_x[r] - m_x[c]), m_items[c].elevation_m))
        used_p = {r for r, _ in pairs}
        used_m = {c for _, c in pairs}
        # A sliver outcrop narrower than the contact limit shown by one side only: as if
        # both its contacts missed their meeting point (its middle) by half its width.
        for a, b in _slivers(p_x, set(range(len(p_x))) - used_p, limit):
            mid, half = 0.5 * (p_x[a] + p_x[b]), 0.5 * (p_x[b] - p_x[a])
            misfits += [ContactMisfit(top, float(mid), float(p_x[a]), float(-half),
                                      z_at(mid), "sliver"),
                        ContactMisfit(top, float(mid), float(p_x[b]), float(half),
                                      z_at(mid), "sliver")]
            used_p |= {a, b}
        for a, b in _slivers(m_x, set(range(len(m_x))) - used_m, limit):
            mid, half = 0.5 * (m_x[a] + m_x[b]), 0.5 * (m_x[b] - m_x[a])
            misfits += [ContactMisfit(top, float(m_x[a]), float(mid), float(half),
                                      m_items[a].elevation_m, "sliver"),
                        ContactMisfit(top, float(m_x[b]), float(mid), float(-half),
                                      m_items[b].elevation_m, "sliver")]
            used_m |= {a, b}
        un_map += [m_items[i] for i in range(len(m_items)) if i not in used_m]
        un_sec += [UnpairedContact(float(p_x[i]), top, z_at(p_x[i]))
                   for i in range(len(p_x)) if i not in used_p]
    misfits.sort(key=lambda m: m.map_distance_m)
    n_map = sum(len(v) for v in mapped.values())
    return dict(radius=radius, misfits=misfits, un_map=sorted(un_map, key=lambda c: c.distance_m),
                un_sec=sorted(un_sec, key=lambda c: c.distance_m), faults=fault_contacts,
                unverified=sorted(unverified, key=lambda c: c.distance_m), n_map=n_map,
                concealed=sorted(concealed, key=lambda c: c.distance_m))


def _unit_agreement(draft: Draft) -> dict:
    d = np.asarray(draft.profile.distance, float)
    z = np.asarray(draft.profile.z, float)
    ok = np.isfinite(z[:-1]) & np.isfinite(z[1:])
    dm = 0.5 * (d[:-1] + d[1:])[ok]
    zm = 0.5 * (z[:-1] + z[1:])[ok]
    w = np.diff(d)[ok]
    map_u = _map_unit_at(draft, dm)
    sec_u, source = section_unit_at_ground(draft, dm, zm)
    other = unlayered_units(draft)
    # cover and intrusive stretches of the map: concealed, compared with nothing
    has_map = (map_u != None) & ~np.array([u in other for u in map_u], bool)  # noqa: E711
    has_both = has_map & (sec_u != None)  # noqa: E711
    agree = has_both & (map_u == sec_u)
    total = float(w[has_both].sum())
    share = float(w[agree].sum() / total) if total > 0 else float("nan")
    # Disagreeing stretches: runs of consecutive samples with the same (map, section) pair.
    bad = has_map & ~agree
    d0, d1 = d[:-1][ok], d[1:][ok]
    key = np.array([f"{a}\x00{b}" for a, b in zip(map_u, sec_u, strict=True)], dtype=object)
    brk = np.ones(len(dm), bool)
    brk[1:] = (key[1:] != key[:-1]) | ~bad[:-1] | (d0[1:] != d1[:-1])
    run_id = np.cumsum(brk) - 1
    stretches = []
    for r in np.unique(run_id[bad]):  # one pass per stretch, not per sample
        sel = np.flatnonzero(run_id == r)
        stretches.append(UnitDisagreement(float(d0[sel[0]]), float(d1[sel[-1]]),
                                          str(map_u[sel[0]]), sec_u[sel[0]]))
    return dict(share=share, length=total, stretches=stretches, source=source,
                concealed=concealed_stretches(draft))


def concealed_stretches(draft: Draft) -> list[ConcealedStretch]:
    """The stretches of the line where the map shows a cover or intrusive unit."""
    other = unlayered_units(draft)
    length = float(draft.line.length)
    out = []
    for iv in sorted(draft.geology.intervals, key=lambda i: i.start_m):
        a, b = max(float(iv.start_m), 0.0), min(float(iv.end_m), length)
        if iv.unit in other and b > a:
            out.append(ConcealedStretch(a, b, iv.unit, other[iv.unit]))
    return out


def _dip_agreement(draft: Draft) -> list[DipMisfit]:
    dips = draft.dips
    if dips is None or len(dips) == 0:
        return []
    lines = [h for h in draft.horizons if h.geometry is not None and not h.geometry.is_empty]
    d = np.asarray(dips.distance_m, float)
    e = np.asarray(dips.elevation_m, float)
    e = np.where(np.isfinite(e), e, draft.profile.elevation_at(d))
    ok = np.isfinite(d) & np.isfinite(e)
    if not lines or not ok.any():
        return []
    geoms = np.array([h.geometry for h in lines], dtype=object)
    pts = shapely.points(d[ok], e[ok])
    dist = shapely.distance(pts[:, None], geoms[None, :])
    other = _other_sequence(draft, pts, lines)
    if other is not None:  # a reading is compared with the beds of its own sequence
        dist = np.where(other & ~other.all(axis=1, keepdims=True), np.inf, dist)
    j = np.argmin(dist, axis=1)
    near = geoms[j]
    pos = shapely.line_locate_point(near, pts)
    length = shapely.length(near)
    h = 0.5  # metres along the bed on either side: the local slope
    p0 = shapely.get_coordinates(shapely.line_interpolate_point(near, np.clip(pos - h, 0, length)))
    p1 = shapely.get_coordinates(shapely.line_interpolate_point(near, np.clip(pos + h, 0, length)))
    dx, dy = p1[:, 0] - p0[:, 0], p1[:, 1] - p0[:, 1]
    section = wrap90(np.degrees(np.arctan2(-dy, dx)))  # positive: descends toward +distance
    measured = np.asarray(dips.apparent_dip, float)[ok]
    mis = wrap90(section - measured)
    ids = np.asarray(dips.id)[ok]
    pc = np.asarray(dips.poorly_constrained, bool)[ok]
    rows = np.arange(len(j))
    return [
        DipMisfit(str(ids[i]), float(d[ok][i]), float(e[ok][i]), float(measured[i]),
                  float(section[i]), float(mis[i]), lines[j[i]].top_of, float(dist[i, j[i]]),
                  bool(pc[i]))
        for i in rows
    ]


def _rms(x: np.ndarray) -> float:
    return float(np.sqrt(np.mean(np.square(x)))) if len(x) else float("nan")


def check_topography(draft: Draft, thresholds: Thresholds | None = None) -> TopographyCheck:
    """Compare a draft section with the DEM profile, the map's contacts and units, and the dips.

    Raises CheckError for a section with no horizons or thresholds out of range;
    a section that misses the map is a failed result, not an error.
    """
    thresholds = thresholds or Thresholds()
    validate_thresholds(thresholds)
    if not any(h.geometry is not None and not h.geometry.is_empty for h in draft.horizons):
        raise CheckError(f"section {draft.name or '(unnamed)'}: has no horizons to check")
    ground = ground_line(draft)
    if ground.is_empty:
        raise CheckError(f"section {draft.name or '(unnamed)'}: the DEM profile has no elevations")
    pixel = float(draft.profile.pixel_size)
    limit = contact_threshold_m(thresholds, pixel)

    c = _contacts(draft, ground, pixel, limit)
    mis = np.array([m.misfit_m for m in c["misfits"]], float)
    worst = int(np.argmax(np.abs(mis))) if len(mis) else -1
    ua = _unit_agreement(draft)
    dm = _dip_agreement(draft)
    dmis = np.array([m.misfit_deg for m in dm], float)
    dworst = int(np.argmax(np.abs(dmis))) if len(dmis) else -1

    max_unpaired = int(math.floor(UNMATCHED_SHARE * c["n_map"]))
    n_unpaired = len(c["un_map"]) + len(c["un_sec"])
    rms, drms = _rms(mis), _rms(dmis)
    parts = _parts(c, ua, len(dmis), rms, limit, n_unpaired, max_unpaired, drms, thresholds)
    status, reasons = combine(parts)
    failures = [r for p in parts.values() if p.status == "fail" for r in p.reasons]

    return TopographyCheck(
        passed=status == "pass",
        contact_rms_m=rms,
        contact_worst_m=float(mis[worst]) if worst >= 0 else float("nan"),
        contact_worst_distance_m=c["misfits"][worst].map_distance_m if worst >= 0 else float("nan"),
        contact_threshold_m=limit,
        pairing_radius_m=c["radius"],
        max_unpaired=max_unpaired,
        n_map_contacts=c["n_map"],
        contact_misfits=c["misfits"],
        unpaired_map_contacts=c["un_map"],
        unpaired_section_contacts=c["un_sec"],
        fault_contacts=c["faults"],
        unverified_section_contacts=c["unverified"],
        unit_agreement=ua["share"],
        unit_agreement_threshold=float(thresholds.unit_agreement),
        compared_length_m=ua["length"],
        disagreements=ua["stretches"],
        unit_source=ua["source"],
        dip_rms_deg=drms,
        dip_worst_deg=float(dmis[dworst]) if dworst >= 0 else float("nan"),
        dip_worst_id=dm[dworst].id if dworst >= 0 else "",
        dip_worst_distance_m=dm[dworst].distance_m if dworst >= 0 else float("nan"),
        dip_threshold_deg=float(thresholds.dip_rms_deg),
        dip_misfits=dm,
        construction_residuals=[asdict(r) for r in draft.residuals],
        failures=failures,
        parts=parts,
        status=status,
        reasons=reasons,
        concealed=ua["concealed"],
        concealed_length_m=sum(s.to_m - s.from_m for s in ua["concealed"] if s.kind == "cover"),
        intrusive_length_m=sum(s.to_m - s.from_m for s in ua["concealed"]
                               if s.kind == "intrusive"),
        concealed_section_contacts=c["concealed"],
    )


def _parts(c: dict, ua: dict, n_dips: int, rms: float, limit: float, n_unpaired: int,
           max_unpaired: int, drms: float, thresholds: Thresholds) -> dict[str, Part]:
    """The verdict of each measure: pass or fail where measured, else not tested and why."""
    if c["misfits"]:
        contacts = Part.measured(rms <= limit, *([] if rms <= limit else [
            f"contact misfit RMS {rms:.1f} m exceeds {limit:.1f} m"]))
    else:
        contacts = Part.not_tested("no map contact on the line" if not c["n_map"] else
                                   "no map contact has a section contact within "
                                   f"{c['radius']:.0f} m")
    if c["n_map"] or c["un_sec"]:
        ok = n_unpaired <= max_unpaired
        unpaired = Part.measured(ok, *([] if ok else [
            f"{n_unpaired} unpaired contact(s) ({len(c['un_map'])} on the map, "
            f"{len(c['un_sec'])} in the section); at most {max_unpaired} allowed"]))
    else:
        unpaired = Part.not_tested("no contact on the map or in the section along the line")
    share = ua["share"]
    if math.isfinite(share):
        ok = share >= thresholds.unit_agreement
        units = Part.measured(ok, *([] if ok else [
            f"unit agreement {share:.3f} below {thresholds.unit_agreement:.3f}"]))
    else:
        units = Part.not_tested("no stretch of the line has a unit both on the map and in "
                                "the section")
    if n_dips:
        ok = drms <= thresholds.dip_rms_deg
        dips = Part.measured(ok, *([] if ok else [
            f"dip misfit RMS {drms:.1f} deg exceeds {thresholds.dip_rms_deg:.1f} deg"]))
    else:
        dips = Part.not_tested("no attitude projected onto the section")
    return {"contact_misfit": contacts, "unpaired_contacts": unpaired,
            "unit_agreement": units, "dip_misfit": dips}


__all__ = [
    "ConcealedStretch",
    "ContactMisfit",
    "DipMisfit",
    "TopographyCheck",
    "UnitDisagreement",
    "UnpairedContact",
    "check_topography",
    "concealed_stretches",
    "contact_threshold_m",
    "ground_line",
    "section_ground_contacts",
    "section_unit_at_ground",
    "validate_thresholds",
]
