"""Units that are not layers: surficial cover and intrusive bodies in the section.

The column's ``kind`` (:mod:`mapsection.stratigraphy`) says what a unit is. The layered
construction (kink or arc) sees only the layered units; this module

* takes the cover and intrusive units out of the surface geology before it
  (:func:`bedrock_geology`): their stretches of ground position no horizon, and a
  contact with a cover or intrusive unit on either side is no bedrock contact (the
  bedrock contact under cover is unknown; the construction fills the bedrock beneath
  from the neighbouring contacts and dips);
* draws them over the layered section after it (:func:`add_unlayered`):

  - a **cover** unit is a veneer where the map has it at the ground: the polygon between
    the ground line and its thickness below it (measured vertically; by default
    :data:`~mapsection.stratigraphy.COVER_THICKNESS`, the tool's default), never carried
    to depth. Several cover units are allowed; where two meet along the line their
    boundary is vertical at the map contact, and the younger is drawn over the older.
  - an **intrusive** unit is drawn where the map has it at the ground, down to its
    ``depth`` below the ground (by default :data:`~mapsection.stratigraphy.INTRUSIVE_DEPTH`,
    the tool's default) with vertical contacts at the mapped ones; its lower edge is where
    the drawing stops, not a mapped base. The layered horizons run on beneath it as the
    construction made them; the body is drawn over them.

Both are listed in ``draft.units`` after the layered polygons (intrusive, then cover,
oldest first: each is drawn over what comes before it), so that the section.gpkg
``units`` layer carries them with their unit names. The checks leave them out of the
restoration, the line-length and the area balance (:mod:`mapsection.checks.kinds`).
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np
import shapely
from shapely.geometry import Polygon, box

from ..draft import Draft, UnitPolygon
from ..geology import SurfaceGeology
from ..stratigraphy import COVER_THICKNESS, INTRUSIVE_DEPTH, Column
from ..topo_profile import Profile


@dataclass(frozen=True)
class Stretch:
    """A stretch of the line where the map shows a cover or intrusive unit at the ground."""

    unit: str
    kind: str  # "cover" or "intrusive"
    start_m: float
    end_m: float

    @property
    def length_m(self) -> float:
        return self.end_m - self.start_m


def has_unlayered(column: Column) -> bool:
    """True when the column holds a cover or intrusive unit."""
    return any(not u.layered for u in column.units)


def unlayered_stretches(geology: SurfaceGeology, column: Column) -> list[Stretch]:
    """The stretches of the line where the map shows a cover or intrusive unit, in order."""
    kinds = {u.name: u.kind for u in column.units}
    return [Stretch(iv.unit, kinds[iv.unit], float(iv.start_m), float(iv.end_m))
            for iv in sorted(geology.intervals, key=lambda i: i.start_m)
            if kinds.get(iv.unit, "layered") != "layered"]


def bedrock_geology(geology: SurfaceGeology, column: Column) -> SurfaceGeology:
    """The surface geology the layered construction sees: the layered units' stretches,
    and the contacts between two layered units (or a layered unit and a map gap). Cover
    and intrusive stretches become gaps; their boundaries are no bedrock contacts."""
    other = {u.name for u in column.units if not u.layered}
    intervals = tuple(iv for iv in geology.intervals if iv.unit not in other)
    contacts = tuple(c for c in geology.contacts
                     if c.unit_before not in other and c.unit_after not in other)
    return SurfaceGeology(intervals, contacts, geology.faults)


def _ground_runs(profile: Profile, start: float, end: float) -> list[np.ndarray]:
    """(n, 2) runs of the ground line (distance, elevation) from ``start`` to ``end``,
    split where the DEM has no elevation."""
    d = np.asarray(profile.distance, float)
    z = np.asarray(profile.z, float)
    inner = (d > start) & (d < end)
    xs = np.concatenate([[start], d[inner], [end]])
    zs = np.concatenate([profile.elevation_at(np.array([start])), z[inner],
                         profile.elevation_at(np.array([end]))])
    keep = np.concatenate([[True], np.diff(xs) > 1e-9])  # strictly increasing distances
    xs, zs = xs[keep], zs[keep]
    ok = np.isfinite(zs)
    edges = np.flatnonzero(np.diff(np.concatenate([[0], ok.astype(np.int8), [0]])))
    return [np.column_stack([xs[a:b], zs[a:b]])
            for a, b in zip(edges[::2], edges[1::2], strict=True) if b - a >= 2]


def band_below_ground(profile: Profile, start: float, end: float, thickness: float,
                      floor: float = -np.inf):
    """The polygon between the ground line and ``thickness`` metres (vertically) below it,
    from ``start`` to ``end`` along the line, cut off at the elevation ``floor``; its
    sides are vertical. None where the DEM gives no ground there.

    Examples
    --------
    >>> from mapsection.line import SectionLine
    >>> d = np.array([0.0, 50.0, 100.0])
    >>> line = SectionLine(np.array([[0.0, 0.0], [100.0, 0.0]]))
    >>> prof = Profile(d, d, np.zeros(3), np.array([10.0, 20.0, 10.0]), line)
    >>> round(band_below_ground(prof, 0.0, 100.0, 5.0).area, 6)
    500.0
    """
    polys = []
    for run in _ground_runs(profile, start, end):
        bottom = run[::-1] - np.array([0.0, thickness])
        poly = Polygon(np.vstack([run, bottom]))
        if not poly.is_valid:
            poly = shapely.make_valid(poly)
        if np.isfinite(floor):
            x0, x1 = float(run[0, 0]), float(run[-1, 0])
            poly = poly.intersection(box(x0 - 1.0, floor, x1 + 1.0, float(run[:, 1].max()) + 1))
        polys += [p for p in shapely.get_parts(poly) if p.geom_type == "Polygon"
                  and p.area > 0]
    if not polys:
        return None
    return polys[0] if len(polys) == 1 else shapely.MultiPolygon(polys)


def _block_at(draft: Draft, geom) -> int:
    """The fault block of the layered polygon under the middle of ``geom`` (0 if none)."""
    pt = geom.representative_point()
    for u in draft.units:
        if u.geometry is not None and u.geometry.contains(pt):
            return u.block
    return 0


def add_unlayered(draft: Draft, geology: SurfaceGeology, column: Column) -> Draft:
    """The layered ``draft`` with the column's cover and intrusive units drawn over it.

    Parameters
    ----------
    draft : Draft
        The layered construction (built with ``column.layered()`` from
        :func:`bedrock_geology`).
    geology : SurfaceGeology
        The whole surface geology along the line (with the cover and intrusive stretches).
    column : Column
        The whole column.

    Returns
    -------
    Draft
        The same draft with the whole column and geology, the veneer and intrusive
        polygons appended to ``units`` and what was done in ``log``.
    """
    stretches = unlayered_stretches(geology, column)
    log = list(draft.log)
    added: list[UnitPolygon] = []
    base = float(draft.base_elevation_m)
    # Drawn in this order, each over the ones before: intrusive bodies, then cover units
    # oldest first (the younger cover over the older where they meet).
    order = {u.name: i for i, u in enumerate(column.units)}
    ranked = sorted(stretches, key=lambda s: (s.kind == "cover", -order[s.unit], s.start_m))
    for s in ranked:
        u = column.unit(s.unit)
        depth = u.thickness if s.kind == "cover" else u.depth
        geom = band_below_ground(draft.profile, s.start_m, s.end_m, depth, base)
        if geom is not None:
            added.append(UnitPolygon(s.unit, geom, _block_at(draft, geom)))
    for u in column.units:
        if u.layered:
            continue
        mine = [s for s in stretches if s.unit == u.name]
        if not mine:
            log.append(f"{u.kind} unit {u.name}: not at the ground along the line")
            continue
        where = (f"{len(mine)} stretch(es), {sum(s.length_m for s in mine):.0f} m of the line "
                 f"({', '.join(f'{s.start_m:.0f}-{s.end_m:.0f} m' for s in mine)})")
        if u.kind == "cover":
            default = " (the tool's default)" if u.thickness == COVER_THICKNESS else ""
            log.append(f"cover unit {u.name} at the ground over {where}: drawn as a veneer "
                       f"{u.thickness:g} m thick{default} under the ground, not carried to "
                       "depth; its boundaries are not bedrock contacts: the bedrock beneath "
                       "is constructed from the neighbouring contacts and dips")
        else:
            default = " (the tool's default)" if u.depth == INTRUSIVE_DEPTH else ""
            log.append(f"intrusive unit {u.name} at the ground over {where}: drawn with "
                       f"vertical contacts to {u.depth:g} m below the ground{default}, over "
                       "the layered section (the horizons run on beneath it); left out of the "
                       "layered construction, the line-length and the area balance "
                       "(intrusive bodies not restored)")
    return dataclasses.replace(draft, column=column, geology=geology,
                               units=[*draft.units, *added], log=log)


__all__ = ["Stretch", "add_unlayered", "band_below_ground", "bedrock_geology", "has_unlayered",
           "unlayered_stretches"]
