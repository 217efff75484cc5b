"""Unit and dip agreement of the topography test: the unit just below the ground in the
section against the map's, and the section's bed dips against the measured apparent dips
(see :mod:`mapsection.checks.topography`)."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import shapely

from ...angles import wrap90
from ...draft import Draft
from ..kinds import unlayered_units
from .ground import map_unit_at, section_unit_at_ground
from .results import ConcealedStretch, DipMisfit, UnitDisagreement


@dataclass(frozen=True)
class UnitAgreement:
    """The unit agreement along the line and what was left out of it."""

    share: float  # of the compared length; NaN where nothing was compared
    length: float  # compared length, metres
    stretches: list[UnitDisagreement]
    source: str  # "unit polygons" or "horizon stack"
    concealed: list[ConcealedStretch]


def sequence_bases(draft: Draft) -> dict[str, str]:
    """unit -> the oldest unit of its sequence, for a column with unconformities (else {})."""
    seqs = draft.column.layered().sequences()
    if len(seqs) < 2:
        return {}
    return {n: s.names[-1] for s in seqs for n in s.names}


def _other_sequence(draft: Draft, pts, lines) -> np.ndarray | None:
    """For a column with unconformities: True where a horizon belongs to another sequence
    than the unit polygon holding the reading (None for one sequence, or no polygons)."""
    bases = sequence_bases(draft)
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


def unit_agreement(draft: Draft) -> UnitAgreement:
    """The share of the compared length where the section's unit at the ground is the map's,
    with the stretches where they differ (runs of samples with one (map, section) pair)."""
    d = np.asarray(draft.profile.distance, float)
    z = np.asarray(draft.profile.z, float)
    ok = np.isfinite(z[:-1]) & np.isfinite(z[1:])
    dm = 0.5 * (d[:-1] + d[1:])[ok]
    zm = 0.5 * (z[:-1] + z[1:])[ok]
    w = np.diff(d)[ok]
    map_u = map_unit_at(draft, dm)
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
    return UnitAgreement(share, total, stretches, source, concealed_stretches(draft))


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


def dip_agreement(draft: Draft) -> list[DipMisfit]:
    """At each projected attitude, the local dip of the nearest horizon (of the reading's own
    sequence) against the measured apparent dip."""
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


__all__ = ["UnitAgreement", "concealed_stretches", "dip_agreement", "sequence_bases",
           "unit_agreement"]
