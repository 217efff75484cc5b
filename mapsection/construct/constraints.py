"""Ground points of known stratigraphic depth that position a block's horizons: the
map contacts, and the fallbacks where a block has none."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from ..geology import SurfaceGeology
from ..notes import Notes
from ..stratigraphy import Column


@dataclass(frozen=True)
class Constraints:
    """Ground points of known stratigraphic depth that position a stack of horizons.

    ``depth`` is metres below the top of the column (the reference horizon);
    ``weight`` 1 for map contacts, less for pseudo-constraints (a unit's middle,
    a neighbouring block's level at a fault).
    """

    distance: np.ndarray
    elevation: np.ndarray
    depth: np.ndarray
    weight: np.ndarray
    top_of: tuple[str, ...]
    is_contact: np.ndarray  # bool: a real map contact (gets a ContactResidual)
    before: tuple[str | None, ...] = ()
    after: tuple[str | None, ...] = ()

    def __len__(self) -> int:
        return len(self.distance)

    def subset(self, mask) -> Constraints:
        m = np.asarray(mask, bool)
        idx = np.flatnonzero(m)
        pick = (lambda seq: tuple(seq[i] for i in idx) if seq else ())  # noqa: E731
        return Constraints(self.distance[m], self.elevation[m], self.depth[m], self.weight[m],
                           pick(self.top_of), self.is_contact[m], pick(self.before),
                           pick(self.after))

    @staticmethod
    def concat(parts: list[Constraints]) -> Constraints:
        parts = [p for p in parts if len(p)]
        if not parts:
            return empty_constraints()
        cat = np.concatenate
        return Constraints(cat([p.distance for p in parts]), cat([p.elevation for p in parts]),
                           cat([p.depth for p in parts]), cat([p.weight for p in parts]),
                           sum((p.top_of for p in parts), ()), cat([p.is_contact for p in parts]),
                           sum((p.before or (None,) * len(p) for p in parts), ()),
                           sum((p.after or (None,) * len(p) for p in parts), ()))


def empty_constraints() -> Constraints:
    e = np.zeros(0)
    return Constraints(e, e, e, e, (), np.zeros(0, bool), (), ())


def contact_constraints(geology: SurfaceGeology, column: Column, ground: Callable,
                        notes: Notes) -> Constraints:
    """Map contacts as constraints. A contact between two units is the top of the OLDER
    one (the younger lies above it), at stratigraphic depth ``depth_to_top[older]``."""
    rows = []
    depth_to_top = column.depth_to_top
    for c in geology.contacts:
        if c.unit_before is None or c.unit_after is None or c.unit_before == c.unit_after:
            continue
        ib, ia = column.index(c.unit_before), column.index(c.unit_after)
        older = max(ib, ia)
        if abs(ib - ia) > 1:
            notes.log(f"contact {c.unit_before}|{c.unit_after} at {c.distance_m:.0f} m joins "
                       f"units not adjacent in the column: taken as the top of "
                       f"{column.names[older]}")
        z = c.elevation_m if np.isfinite(c.elevation_m) else float(ground(c.distance_m))
        rows.append((c.distance_m, z, depth_to_top[older], column.names[older],
                     c.unit_before, c.unit_after))
    if not rows:
        return empty_constraints()
    d, z, s, top, b, a = zip(*rows, strict=True)
    n = len(rows)
    return Constraints(np.array(d, float), np.array(z, float), np.array(s, float), np.ones(n),
                       tuple(top), np.ones(n, bool), tuple(b), tuple(a))


_SCALE_FRAC = 0.25
CORRIDOR_WEIGHT = 0.25  # the tool's default: a boundary crossing near the line weighs
# about as much as one contact on the line (the weights of its points sum to ~0.8)


def corridor_constraints(cc, column: Column) -> Constraints:
    """Map contacts beside the line (:class:`mapsection.corridor.CorridorContacts`) as
    constraints, each the top of the older of its two units, weighted by its distance
    from the line: ``w = CORRIDOR_WEIGHT (spacing / L) / (1 + (offset / L)^2)`` with
    ``L`` a quarter of the corridor (at least one spacing), so that a boundary's points
    together weigh about as much as one contact on the line and points far off count
    little. They are not residual-checked contacts (``is_contact`` False)."""
    if cc is None or len(cc) == 0:
        return empty_constraints()
    names = set(column.names)
    crosses = (np.zeros(len(cc), bool) if cc.crosses_line is None
               else np.asarray(cc.crosses_line, bool))
    # A boundary the line crosses is already there as the line's own contact: its points
    # beside the line add projection error and no information.
    rows = [k for k in range(len(cc)) if cc.unit_a[k] in names and cc.unit_b[k] in names
            and not crosses[k]]
    if not rows:
        return empty_constraints()
    k = np.array(rows)
    ia = np.array([column.index(cc.unit_a[i]) for i in rows])
    ib = np.array([column.index(cc.unit_b[i]) for i in rows])
    older = np.maximum(ia, ib)
    spacing = float(cc.spacing_m)
    corridor = float(cc.corridor_m) if np.isfinite(cc.corridor_m) else 4.0 * spacing
    scale = max(_SCALE_FRAC * corridor, spacing)
    off = np.asarray(cc.offset_m, float)[k]
    w = CORRIDOR_WEIGHT * (spacing / scale) / (1.0 + (off / scale) ** 2)
    n = len(rows)
    top = tuple(column.names[i] for i in older)
    return Constraints(np.asarray(cc.distance_m, float)[k], np.asarray(cc.elevation_m, float)[k],
                       column.depth_to_top[older].astype(float), w, top, np.zeros(n, bool),
                       tuple(cc.unit_a[i] for i in rows), tuple(cc.unit_b[i] for i in rows))


def interval_constraints(geology: SurfaceGeology, column: Column, ground: Callable,
                         lo: float, hi: float, weight: float = 0.1) -> Constraints:
    """Fallback where a block has no contact: the middle of each mapped unit's stretch of
    ground lies at the middle of that unit's thickness."""
    rows = []
    for iv in geology.intervals:
        a, b = max(iv.start_m, lo), min(iv.end_m, hi)
        if iv.unit is None or b <= a:
            continue
        i = column.index(iv.unit)
        m = 0.5 * (a + b)
        rows.append((m, float(ground(m)), column.depth_to_top[i] + 0.5 * column.thicknesses[i]))
    if not rows:
        return empty_constraints()
    d, z, s = (np.array(v, float) for v in zip(*rows, strict=True))
    n = len(d)
    return Constraints(d, z, s, np.full(n, weight), ("",) * n, np.zeros(n, bool),
                       (None,) * n, (None,) * n)


def log_corridor(beside: Constraints, on_line: Constraints, ranges: list[tuple[float, float]],
                  notes: Notes) -> None:
    """Which map contacts beside the line each block uses."""
    if not len(beside):
        return
    notes.log(f"{len(beside)} point(s) of map contacts beside the line (within the corridor) "
              "projected into the section; weighted by their distance from the line")
    for b, (lo, hi) in enumerate(ranges):
        m = (beside.distance >= lo) & (beside.distance < hi)
        if not m.any():
            continue
        sub = beside.subset(m)
        pairs: dict[tuple[str, str], list[float]] = {}
        for i in range(len(sub)):
            key = tuple(sorted((str(sub.before[i]), str(sub.after[i]))))
            pairs.setdefault(key, []).append(float(sub.distance[i]))
        what = "; ".join(f"{a}|{c} ({len(v)} point(s), projected to {min(v):.0f}-{max(v):.0f} m)"
                         for (a, c), v in sorted(pairs.items()))
        n_line = int(((on_line.distance >= lo) & (on_line.distance < hi)).sum())
        if n_line:
            notes.log(f"block {b} ({lo:.0f}-{hi:.0f} m): beside its {n_line} contact(s) on the "
                      f"line, contacts from the corridor used: {what}")
        else:
            notes.log(f"block {b} ({lo:.0f}-{hi:.0f} m) has no map contact on the line: "
                      f"positioned by contacts from the corridor: {what}")
