"""Faults in the section: straight traces at their apparent dip, the fault blocks they
bound, and the separation of each horizon across each fault.

A fault crossing (distance ``d``, elevation ``z``, signed apparent dip ``a``: positive
descends toward increasing distance) becomes the line through ``(d, z)`` at ``a``.
Blocks are numbered from the line's start (0, 1, ...). The hanging wall is the block
on the side toward which the fault descends. Separation is measured along the trace,
between the hanging-wall and footwall cutoffs of the same horizon: positive when the
hanging wall's cutoff lies up-dip of the footwall's (reverse / thrust sense).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
import shapely
from shapely.geometry import LineString, Polygon

from ..geology import FaultCrossing
from ..notes import Notes
from .frame import SectionFrame

_MIN_FAULT_DIP = 1.0  # degrees; a flatter trace cannot bound blocks along the line


@dataclass(frozen=True)
class FaultLine:
    crossing: FaultCrossing
    p0: np.ndarray  # ground point (distance, elevation)
    down: np.ndarray  # unit vector down the fault in section space
    bottom: float  # elevation of the drawn trace's lower end

    @property
    def up(self) -> np.ndarray:
        return -self.down

    def full(self, reach: float) -> LineString:
        """The fault's line through the whole section (for cutoffs and block bounds)."""
        return LineString([self.p0 + reach * self.up, self.p0 + reach * self.down])

    def trace(self, frame: SectionFrame) -> LineString:
        """From the ground down to ``bottom`` (clipped to the section's ends)."""
        dz = self.p0[1] - self.bottom
        length = dz / max(-self.down[1], 1e-9)
        line = LineString([self.p0, self.p0 + length * self.down])
        clipped = line.intersection(shapely.box(0.0, frame.base - 1.0, frame.length, frame.top))
        return clipped if clipped.geom_type == "LineString" and not clipped.is_empty else line

    @property
    def hanging_wall_right(self) -> bool:
        """True when the block toward increasing distance is the hanging wall."""
        return bool(self.down[0] > 0)


def fault_lines(faults, frame: SectionFrame, ground: Callable, fault_depth: float | None,
                notes: Notes) -> list[FaultLine]:
    """The faults the line crosses within the section, as straight traces at their
    apparent dip from the ground down to ``fault_depth`` below the lowest ground."""
    bottom = frame.base if fault_depth is None else max(frame.base, frame.ground_min - fault_depth)
    out = []
    for f in sorted(faults, key=lambda f: f.distance_m):
        label = f.name or f"at {f.distance_m:.0f} m"
        if not 0.0 < f.distance_m < frame.length:
            notes.log(f"fault {label}: outside the section's ends, left out")
            continue
        a = float(f.apparent_dip)
        if not np.isfinite(a):
            notes.warn(f"fault {label}: no apparent dip; drawn vertical", logged=False)
            a = 90.0
        if abs(a) < _MIN_FAULT_DIP:
            notes.warn(f"fault {label}: apparent dip {a:.1f}° is nearly flat; drawn at "
                       f"{_MIN_FAULT_DIP:.0f}°", logged=False)
            a = _MIN_FAULT_DIP if a >= 0 else -_MIN_FAULT_DIP
        r = np.radians(a)
        down = np.array([np.cos(r), -np.sin(r)]) * (1.0 if a > 0 else -1.0)
        if abs(a) >= 90.0:
            down = np.array([0.0, -1.0])
        z = f.elevation_m if np.isfinite(f.elevation_m) else float(ground(f.distance_m))
        out.append(FaultLine(f, np.array([f.distance_m, z], float), down, bottom))
    return out


def _left_half(fl: FaultLine, reach: float) -> Polygon:
    a, b = fl.p0 + reach * fl.up, fl.p0 + reach * fl.down
    x = min(a[0], b[0]) - reach
    return Polygon([a, b, (x, b[1]), (x, a[1])])


def block_polygons(faults: list[FaultLine], frame: SectionFrame) -> list:
    """Each block's region of the frame between its bounding faults (block 0 first).
    Where faults cross at depth the overlap goes to the block listed first."""
    reach = frame.size
    box = shapely.box(-reach, frame.base - reach, frame.length + reach, frame.top + reach)
    lefts = [_left_half(f, 10 * reach) for f in faults]
    out, taken = [], None
    for k in range(len(faults) + 1):
        poly = box
        if k > 0:
            poly = poly.difference(lefts[k - 1])
        if k < len(faults):
            poly = poly.intersection(lefts[k])
        if taken is not None:
            poly = poly.difference(taken)
        out.append(poly)
        taken = poly if taken is None else taken.union(poly)
    return out


def separations(fl: FaultLine, left_lines: dict[str, list[LineString]],
                right_lines: dict[str, list[LineString]], reach: float) -> dict[str, float]:
    """Separation of each horizon across the fault, along the trace (+: hanging wall up)."""
    line = fl.full(reach)
    hw, fw = (right_lines, left_lines) if fl.hanging_wall_right else (left_lines, right_lines)
    out = {}
    for top_of in hw:
        if top_of not in fw:
            continue
        p_hw, p_fw = _cutoff(line, hw[top_of], fl.p0), _cutoff(line, fw[top_of], fl.p0)
        if p_hw is None or p_fw is None:
            continue
        out[top_of] = float((p_hw - p_fw) @ fl.up)
    return out


def _cutoff(line: LineString, horizons: list[LineString], p0: np.ndarray) -> np.ndarray | None:
    """Where a horizon meets the fault: the crossing nearest the fault's ground point."""
    pts = []
    for h in horizons:
        x = line.intersection(h)
        if x.is_empty:
            continue
        pts.extend(shapely.get_coordinates(x))
    if not pts:
        return None
    pts = np.asarray(pts)
    return pts[np.argmin(np.hypot(*(pts - p0).T))]


def ground_ranges(faults: list[FaultLine], length: float) -> list[tuple[float, float]]:
    """Each block's stretch of ground along the line."""
    cuts = [0.0, *[float(f.p0[0]) for f in faults], length]
    return list(zip(cuts[:-1], cuts[1:], strict=True))


__all__ = ["FaultLine", "block_polygons", "fault_lines", "ground_ranges", "separations"]
