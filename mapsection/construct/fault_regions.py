"""What the fault lines bound and how they meet: each fault block's region of the section,
which of two crossing faults cuts the other, each block's stretch of ground, and the
separation of each horizon across a fault.

Blocks are numbered from the line's start (0, 1, ...). The hanging wall is the block
on the side toward which the fault descends. Separation is measured along the fault (arc
length on a bent fault), between the hanging-wall and footwall cutoffs of the same
horizon: positive when the hanging wall's cutoff lies up-dip of the footwall's (reverse /
thrust sense). The fault lines themselves are :mod:`mapsection.construct.faults`.
"""

from __future__ import annotations

import dataclasses
from typing import TYPE_CHECKING

import numpy as np
import shapely
from shapely.geometry import LineString, Point, Polygon

from ..errors import ConstructionError
from ..notes import Notes
from .frame import SectionFrame

if TYPE_CHECKING:
    from .faults import FaultLine

__all__ = ["block_polygons", "cutoff_along", "ground_ranges", "order_crossings", "separations"]


def _left_half(fl: FaultLine, reach: float) -> Polygon:
    if not fl.detached:
        a, b = fl.p0 + reach * fl.up, fl.p0 + reach * fl.down
        x = min(a[0], b[0]) - reach
        return Polygon([a, b, (x, b[1]), (x, a[1])])
    # A detached fault: its hanging wall is the region above the whole fault path.
    full = np.asarray(fl.full(reach).coords)
    top = float(full[:, 1].max()) + reach
    hw = Polygon(np.vstack([full, [[full[-1, 0], top], [full[0, 0], top]]]))
    if not hw.is_valid:
        hw = shapely.make_valid(hw).buffer(0)
    if not fl.hanging_wall_right:
        return hw
    big = shapely.box(-3 * reach, -3 * reach, 3 * reach, 3 * reach)
    return big.difference(hw)


def block_polygons(faults: list[FaultLine], frame: SectionFrame,
                   older: frozenset[int] = frozenset()) -> list:
    """Each block's region of the frame between its bounding faults (block 0 first): the
    region on its own side of every fault. Where an older fault (index in ``older``) is cut
    by a younger one, the ground beyond the cut goes by the younger faults alone."""
    reach = frame.size
    box = shapely.box(-reach, frame.base - reach, frame.length + reach, frame.top + reach)
    lefts = [_left_half(f, 10 * reach) for f in faults]

    def region(k: int, skip: frozenset[int]):
        poly = box
        for j, left in enumerate(lefts):
            if j in skip:
                continue
            poly = poly.intersection(left) if k <= j else poly.difference(left)
        return poly

    out = [region(k, frozenset()) for k in range(len(faults) + 1)]
    if older:
        # Pieces on no block's side of every fault lie beyond an older fault's cut end: each
        # goes to the block on its side of every younger fault (tested at one inner point:
        # overlays along the shared fault lines are not exact).
        rest = box.difference(shapely.union_all(out))
        for piece in shapely.get_parts(rest):
            if piece.area <= 1e-6:
                continue
            q = piece.point_on_surface()
            for k in range(len(out)):
                if all(lefts[j].covers(q) == (k <= j) for j in range(len(lefts))
                       if j not in older):
                    out[k] = out[k].union(piece)
                    break
    return out


def order_crossings(faults: list[FaultLine], frame: SectionFrame,
                    notes: Notes) -> tuple[list[FaultLine], frozenset[int]]:
    """Faults whose traces cross inside the section need an order (which cuts which):
    from the map (a trace that ends against another is the older) or from a ``[[fault]]``
    ``cuts`` list, else a one-line error naming both. The older fault's trace ends where
    the younger cuts it. Returns the faults and the indices of the older ones."""
    out = list(faults)
    older: set[int] = set()
    for i in range(len(faults)):
        for j in range(i + 1, len(faults)):
            a, b = faults[i], faults[j]
            x = a.trace(frame).intersection(b.trace(frame))
            if x.is_empty:
                continue
            parts = shapely.get_parts(x)
            shared = [g for g in parts if g.geom_type == "LineString" and g.length > 1.0]
            if shared:  # one runs into the other's flat: they share the detachment
                span = shapely.get_coordinates(shapely.union_all(shared))[:, 0]
                notes.log(f"faults {a.name} and {b.name} share their detachment from "
                          f"{span.min():.0f} to {span.max():.0f} m")
            x = shapely.union_all([g for g in parts if g.geom_type == "Point"])
            if x.is_empty:
                continue
            pts = shapely.get_coordinates(x)
            if shared:  # the branch point, where one joins the other's flat
                on = shapely.union_all(shared)
                pts = pts[[on.distance(Point(q)) > 1.0 for q in pts]]
            pts = pts[np.minimum(np.hypot(*(pts - a.p0).T), np.hypot(*(pts - b.p0).T)) >= 1.0]
            if not len(pts):
                continue  # meeting at the ground point: one trace ends against the other
            p = pts[0]
            na, nb = a.crossing.name, b.crossing.name
            ends_a = getattr(a.crossing, "ends_against", ())
            ends_b = getattr(b.crossing, "ends_against", ())
            order, source = None, ""
            if a.setting is not None and nb in a.setting.cuts:
                order, source = (j, i), "the project"
            elif b.setting is not None and na in b.setting.cuts:
                order, source = (i, j), "the project"
            elif nb is not None and nb in ends_a:
                order, source = (i, j), "the map: its trace ends against the other"
            elif na is not None and na in ends_b:
                order, source = (j, i), "the map: its trace ends against the other"
            if order is None:
                raise ConstructionError(
                    f"faults {a.name} and {b.name} cross in the section at {p[0]:.0f} m, "
                    f"elevation {p[1]:.0f} m, and no order is given: add cuts = [\"...\"] "
                    "to the [[fault]] table of the younger one")
            old, young = order
            older.add(old)
            out[old] = _cut_at(out[old], p)
            notes.log(f"fault {faults[young].name} cuts fault {faults[old].name} at "
                      f"{p[0]:.0f} m, elevation {p[1]:.0f} m (order from {source}); the older "
                      "fault's trace ends there")
    return out, frozenset(older)


def _cut_at(fl: FaultLine, p: np.ndarray) -> FaultLine:
    """``fl`` with its path ending at ``p`` (a point on it)."""
    line = LineString(fl.path)
    s = line.project(Point(p))
    c = fl.path
    along = np.concatenate([[0.0], np.cumsum(np.hypot(*np.diff(c, axis=0).T))])
    keep = int(np.searchsorted(along, s - 1e-9))
    path = np.vstack([c[:keep], p])
    if len(path) < 2:
        return fl
    return dataclasses.replace(fl, path=path, kinds=fl.kinds[: len(path) - 1])


def separations(fl: FaultLine, left_lines: dict[str, list[LineString]],
                right_lines: dict[str, list[LineString]], reach: float) -> dict[str, float]:
    """Separation of each horizon across the fault, along the fault (+: hanging wall up)."""
    line = fl.full(reach)
    hw, fw = (right_lines, left_lines) if fl.hanging_wall_right else (left_lines, right_lines)
    s0 = line.project(Point(fl.p0))
    out = {}
    for top_of in hw:
        if top_of not in fw:
            continue
        s_hw, s_fw = cutoff_along(line, hw[top_of], s0), cutoff_along(line, fw[top_of], s0)
        if s_hw is None or s_fw is None:
            continue
        out[top_of] = float(s_fw - s_hw)
    return out


def cutoff_along(line: LineString, horizons: list[LineString], s0: float) -> float | None:
    """Where a horizon meets the fault, as distance along the fault.

    Parameters
    ----------
    line
        The fault (its whole path).
    horizons
        The pieces of one horizon on one side of the fault.
    s0
        Distance along ``line`` of the fault's ground point.

    Returns
    -------
    float or None
        The crossing nearest the ground point, as distance along ``line``; None where the
        horizon does not meet the fault.

    Examples
    --------
    >>> from shapely.geometry import LineString
    >>> cutoff_along(LineString([(0, 0), (0, -100)]), [LineString([(-50, -40), (0, -40)])], 0.0)
    40.0
    """
    pts = []
    for h in horizons:
        x = line.intersection(h)
        if x.is_empty:
            continue
        pts.extend(shapely.get_coordinates(x))
    if not pts:
        return None
    s = np.array([line.project(Point(p)) for p in pts])
    return float(s[np.argmin(np.abs(s - s0))])


def ground_ranges(faults: list[FaultLine], length: float) -> list[tuple[float, float]]:
    """Each block's stretch of ground along the line."""
    cuts = [0.0, *[float(f.p0[0]) for f in faults], length]
    return list(zip(cuts[:-1], cuts[1:], strict=True))
