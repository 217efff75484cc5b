"""Flexural-slip restoration and line-length balance (Dahlstrom 1969, Balanced
cross sections, Canadian Journal of Earth Sciences 6).

Between a *pin line* and a *loose line* (vertical lines at distances along the
section), every horizon is unfolded keeping its length along the bed and laid
flat at its stratigraphic level, starting at the pin. In a balanced section
every horizon restores to the same length and the restored loose line is
straight. Fault blocks are restored one by one, from the pin toward the loose
line; each block is placed end to end with the one before it (its horizons'
restored starts matched, in the least-squares sense, to the ends of the same
horizons in the block before), and what then fails to match shows as gaps and
overlaps between units in the restored state.

Default pin and loose lines: the pin at the end of the section whose end dip
domain dips least (the start when the draft has no domains), the loose line at
the other end; both at the first/last distance where every horizon exists.
"""

from __future__ import annotations

import os
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
from shapely.geometry import LineString, Point, Polygon

from .. import CAUTION
from .._atomic import atomic_file
from ..draft import Draft
from ..errors import CheckError
from ..stratigraphy import is_base_name

__all__ = [
    "Restoration",
    "RestoredHorizon",
    "HorizonBalance",
    "RestoredUnit",
    "RestoredGap",
    "FaultBlocks",
    "restore_section",
    "restoration_frames",
    "draw_restoration",
    "joined_horizons",
    "fault_blocks",
    "clip_x",
    "restored_elevation",
]


# --- geometry helpers shared by the checks ------------------------------------


def _xy(line: LineString) -> np.ndarray:
    return np.asarray(line.coords, float)[:, :2]


def joined_horizons(draft: Draft) -> dict[tuple[str, int], LineString]:
    """Each horizon's below- and above-ground pieces joined, per (top_of, block).

    Pieces are ordered by distance and oriented toward increasing distance;
    repeated vertices where pieces meet are dropped.
    """
    groups: dict[tuple[str, int], list[np.ndarray]] = {}
    for h in draft.horizons:
        g = h.geometry
        if g is None or g.is_empty:
            continue
        parts = list(g.geoms) if hasattr(g, "geoms") else [g]
        for p in parts:
            c = _xy(p)
            if len(c) < 2:
                continue
            if c[-1, 0] < c[0, 0]:
                c = c[::-1]
            groups.setdefault((h.top_of, int(h.block)), []).append(c)
    out = {}
    for key, pieces in groups.items():
        pieces.sort(key=lambda c: (c[0, 0], c[-1, 0]))
        c = np.concatenate(pieces)
        keep = np.concatenate([[True], np.any(np.abs(np.diff(c, axis=0)) > 1e-9, axis=1)])
        c = c[keep]
        if len(c) >= 2:
            out[key] = LineString(c)
    return out


def clip_x(line: LineString, x0: float, x1: float) -> LineString | None:
    """The part of an x-ordered line between distances x0 <= x1 (exact end points)."""
    c = _xy(line)
    x = c[:, 0]
    lo, hi = max(x0, x[0]), min(x1, x[-1])
    if hi - lo <= 1e-9:
        return None
    inner = c[(x > lo) & (x < hi)]
    ya = np.interp(lo, x, c[:, 1])
    yb = np.interp(hi, x, c[:, 1])
    pts = np.vstack([[lo, ya], inner, [hi, yb]])
    return LineString(pts)


def y_at(line: LineString, xs) -> np.ndarray:
    """Elevation of an x-ordered line at distances (NaN outside it)."""
    c = _xy(line)
    return np.interp(np.asarray(xs, float), c[:, 0], c[:, 1], left=np.nan, right=np.nan)


def restored_elevation(column, top_of: str) -> float:
    """Restored (datum-relative) elevation of a horizon: minus the unit's depth to top.

    A horizon named ``base`` (or ``base...``) is the column's base.
    """
    if top_of in column.names:
        return -float(column.depth_to_top[column.index(top_of)])
    if is_base_name(top_of):
        return -column.total_thickness
    raise CheckError(f"horizon top_of {top_of!r}: not a unit of the stratigraphic column")


@dataclass(frozen=True)
class FaultBlocks:
    """The two blocks a fault separates, and which is the hanging wall."""

    name: str
    footwall: int
    hanging_wall: int
    dips_toward: int  # +1: the fault descends toward increasing distance; -1: decreasing
    ground_x: float  # distance of the fault's upper end
    # top_of -> ((x, y) of the hanging-wall cutoff, (x, y) of the footwall cutoff)
    cutoffs: dict[str, tuple[tuple[float, float] | None, tuple[float, float] | None]]


def _tol(draft: Draft) -> float:
    return max(1.0, 1e-5 * float(draft.line.length))


def fault_blocks(draft: Draft) -> dict[str, FaultBlocks]:
    """For each fault: its footwall and hanging-wall blocks and the horizon cutoffs on it.

    The hanging wall lies on the side toward which the fault trace descends. The
    blocks are those of the horizon ends lying on the fault (within 1 m); a fault
    no horizon touches separates block i and i+1, i its rank along the line.
    """
    joined = joined_horizons(draft)
    tol = _tol(draft)

    def ground_x(f) -> float:
        c = _xy(f.geometry)
        return float(c[np.argmax(c[:, 1]), 0])

    ordered = sorted(draft.faults, key=ground_x)
    out = {}
    for rank, f in enumerate(ordered):
        c = _xy(f.geometry)
        top, bot = c[np.argmax(c[:, 1])], c[np.argmin(c[:, 1])]
        dx = bot[0] - top[0]
        toward = int(np.sign(dx)) if abs(dx) > 1e-9 else int(np.sign(f.apparent_dip or 0.0))
        left: dict[int, int] = {}
        right: dict[int, int] = {}
        ends: dict[tuple[str, int], tuple[float, float]] = {}
        for (top_of, block), line in joined.items():
            lc = _xy(line)
            for end, other in ((lc[0], lc[-1]), (lc[-1], lc[0])):
                if f.geometry.distance(Point(end)) <= tol:
                    side = right if other[0] > end[0] else left
                    side[block] = side.get(block, 0) + 1
                    ends[(top_of, block)] = (float(end[0]), float(end[1]))
        lb = max(left, key=left.get) if left else rank
        rb = max(right, key=right.get) if right else rank + 1
        hw, fw = (rb, lb) if toward >= 0 else (lb, rb)
        cut = {}
        for (top_of, block), pt in ends.items():
            if block not in (hw, fw):
                continue
            prev = cut.get(top_of, (None, None))
            cut[top_of] = (pt, prev[1]) if block == hw else (prev[0], pt)
        out[f.name] = FaultBlocks(f.name, fw, hw, toward, float(top[0]), cut)
    return out


# --- results -------------------------------------------------------------------


@dataclass(frozen=True)
class RestoredHorizon:
    """One horizon piece (one fault block) laid flat."""

    top_of: str
    block: int
    restored_elevation_m: float
    bed_length_m: float  # along the bed between the pin and loose lines
    restored_x0_m: float  # restored start (pin side) and end
    restored_x1_m: float
    deformed_x0_m: float  # deformed start (pin side) and end, distance along the line
    deformed_x1_m: float
    local_pin_m: float  # the vertical the block was restored about
    geometry: LineString  # restored, section space

    @property
    def restored_length_m(self) -> float:
        return abs(self.restored_x1_m - self.restored_x0_m)


@dataclass(frozen=True)
class HorizonBalance:
    top_of: str
    restored_elevation_m: float
    deformed_length_m: float  # horizontal, from the pin to the horizon's loose-side end
    bed_length_m: float
    restored_length_m: float  # from the pin to its restored loose-side end (gaps included)
    shortening_m: float  # restored - deformed (negative: extension)
    shortening_pct: float
    reaches_loose: bool
    restored_loose_x_m: float

    def to_dict(self) -> dict:
        return dict(self.__dict__)


@dataclass(frozen=True)
class RestoredUnit:
    unit: str
    block: int
    base_of: str  # the horizon closing it below
    thickness_m: float
    geometry: Polygon
    area_m2: float


@dataclass(frozen=True)
class RestoredGap:
    """A gap (positive) or overlap between two blocks' pieces of a unit, restored."""

    unit: str
    blocks: tuple[int, int]
    gap_area_m2: float
    overlap_area_m2: float
    top_gap_m: float  # signed gap at the unit's top and base horizons (negative: overlap)
    base_gap_m: float

    def to_dict(self) -> dict:
        return {"unit": self.unit, "blocks": list(self.blocks), "gap_area_m2": self.gap_area_m2,
                "overlap_area_m2": self.overlap_area_m2, "top_gap_m": self.top_gap_m,
                "base_gap_m": self.base_gap_m}


@dataclass
class Restoration:
    section: str
    pin_m: float
    loose_m: float
    pin_source: str  # "given" or how the default was chosen
    direction: int  # +1 when the loose line lies at a larger distance than the pin
    threshold_pct: float
    pieces: list[RestoredHorizon]
    horizons: list[HorizonBalance]
    units: list[RestoredUnit]
    gaps: list[RestoredGap]
    line_length_mismatch_pct: float
    loose_line_spread_m: float
    loose_line_angle_deg: float
    loose_line_departure_m: float
    shortening_pct: float
    shortening_m: float
    passed: bool
    failures: list[str] = field(default_factory=list)
    column: object = None
    datum_elevation_m: float = 0.0

    @property
    def gap_overlap_pct(self) -> float:
        """Gaps plus overlaps between fault blocks, % of the restored units' area."""
        area = sum(u.area_m2 for u in self.units)
        gaps = sum(g.gap_area_m2 + g.overlap_area_m2 for g in self.gaps)
        return float(100.0 * gaps / area) if area > 0 else 0.0

    @property
    def restored_loose_line(self) -> LineString | None:
        pts = sorted(((h.restored_loose_x_m, h.restored_elevation_m)
                      for h in self.horizons if h.reaches_loose), key=lambda p: -p[1])
        return LineString(pts) if len(pts) >= 2 else None

    def to_dict(self) -> dict:
        return {
            "passed": self.passed,
            "pin_m": self.pin_m,
            "loose_m": self.loose_m,
            "pin_source": self.pin_source,
            "shortening_pct": self.shortening_pct,
            "shortening_m": self.shortening_m,
            "shortening_basis": "mean over the horizons that reach the loose line",
            "line_length_mismatch_pct": self.line_length_mismatch_pct,
            "line_length_threshold_pct": self.threshold_pct,
            "loose_line_spread_m": self.loose_line_spread_m,
            "loose_line_angle_deg": self.loose_line_angle_deg,
            "loose_line_departure_m": self.loose_line_departure_m,
            "horizons": [h.to_dict() for h in self.horizons],
            "gaps": [g.to_dict() for g in self.gaps],
            "gap_area_m2": float(sum(g.gap_area_m2 for g in self.gaps)),
            "overlap_area_m2": float(sum(g.overlap_area_m2 for g in self.gaps)),
            "gap_overlap_pct": self.gap_overlap_pct,
            "restored_units": [{"unit": u.unit, "block": u.block, "area_m2": u.area_m2}
                               for u in self.units],
            "failures": list(self.failures),
        }


# --- pin and loose lines ---------------------------------------------------------


def _vertical_hits_fault(draft: Draft, x: float, lo_y: float, hi_y: float) -> str | None:
    v = LineString([(x, lo_y), (x, hi_y)])
    for f in draft.faults:
        if f.geometry is not None and not f.geometry.is_empty and f.geometry.intersects(v):
            return f.name
    return None


def _y_range(draft: Draft, joined) -> tuple[float, float]:
    # The horizons' depth range: a detachment flat below every horizon does not count.
    ys = [(_xy(g)[:, 1].min(), _xy(g)[:, 1].max()) for g in joined.values()]
    lo = min(y[0] for y in ys)
    hi = max(y[1] for y in ys)
    return float(lo), float(hi)


def _common_range(joined) -> tuple[float, float]:
    ext: dict[str, list[float]] = {}
    for (top_of, _), g in joined.items():
        c = _xy(g)[:, 0]
        e = ext.setdefault(top_of, [np.inf, -np.inf])
        e[0], e[1] = min(e[0], c.min()), max(e[1], c.max())
    lo = max(e[0] for e in ext.values())
    hi = min(e[1] for e in ext.values())
    if hi <= lo:  # no distance where every horizon exists: use the widest
        lo = min(e[0] for e in ext.values())
        hi = max(e[1] for e in ext.values())
    return float(lo), float(hi)


def _default_lines(draft: Draft, joined, y_lo, y_hi) -> tuple[float, float, bool, str]:
    lo, hi = _common_range(joined)
    inset = 1e-6 * max(draft.line.length, 1.0)
    lo, hi = lo + inset, hi - inset
    at_start = True
    why = "start of the section (no dip domains)"
    if draft.domains:
        first = min(draft.domains, key=lambda d: d.start_m)
        last = max(draft.domains, key=lambda d: d.end_m)
        at_start = abs(first.dip) <= abs(last.dip)
        why = (f"{'start' if at_start else 'end'} of the section, in its least-dipping end "
               f"domain ({abs(first.dip if at_start else last.dip):.1f} degrees)")

    def clear(x: float, inward: int) -> float:
        # Step a default line inward past any fault that it would cut.
        for _ in range(len(draft.faults) + 1):
            name = _vertical_hits_fault(draft, x, y_lo, y_hi)
            if name is None:
                return x
            f = next(f for f in draft.faults if f.name == name)
            fx = _xy(f.geometry)[:, 0]
            x = (fx.max() if inward > 0 else fx.min()) + inward * 1.0
        return x

    return float(clear(lo, +1)), float(clear(hi, -1)), at_start, "default: " + why


def _check_line(draft: Draft, what: str, x: float, y_lo: float, y_hi: float) -> None:
    name = draft.name or "(unnamed)"
    if x is None or not np.isfinite(x) or x < 0.0 or x > draft.line.length:
        raise CheckError(f"section {name}: {what} line at {x} m lies outside the section "
                         f"(0 to {draft.line.length:.1f} m)")
    hit = _vertical_hits_fault(draft, x, y_lo, y_hi)
    if hit is not None:
        raise CheckError(f"section {name}: {what} line at {x:.1f} m crosses fault {hit}; "
                         "place it inside one fault block")


# --- restoration --------------------------------------------------------------------


def _interval_parts(g1: float, g2: float, t: float) -> tuple[float, float]:
    """Positive and negative area of a gap varying linearly from g1 to g2 over thickness t."""
    if g1 * g2 >= 0:
        a = 0.5 * t * (g1 + g2)
        return (a, 0.0) if a >= 0 else (0.0, -a)
    f = g1 / (g1 - g2)
    a1, a2 = 0.5 * t * f * g1, 0.5 * t * (1 - f) * g2
    pos = (a1 if a1 > 0 else 0.0) + (a2 if a2 > 0 else 0.0)
    neg = (-a1 if a1 < 0 else 0.0) + (-a2 if a2 < 0 else 0.0)
    return pos, neg


def _unit_pairs(column, present: set[str]) -> list[tuple[str, str]]:
    """(top_of, base_of) pairs: each present horizon with the next older present one."""
    order = [n for n in column.names if n in present]
    order += sorted(n for n in present if n not in column.names)  # base horizons last
    return list(zip(order[:-1], order[1:], strict=True))


def restore_section(draft: Draft, pin: float | None = None, loose: float | None = None,
                    threshold_pct: float = 5.0) -> Restoration:
    """Flexural-slip restoration between a pin and a loose line (Dahlstrom 1969).

    ``pin`` and ``loose`` are distances along the section (metres); by default
    the pin sits at the end of the section in the least-dipping end domain and
    the loose line at the other end. Horizons are laid flat at minus their
    depth below the top of the column (the datum, elevation 0 in the restored
    frame). Passes when the spread of the restored lengths ((max - min) / mean)
    is within ``threshold_pct`` (Thresholds.line_length_spread_pct, default 5 %,
    common practice).
    """
    name = draft.name or "(unnamed)"
    joined = joined_horizons(draft)
    if not joined:
        raise CheckError(f"section {name}: has no horizons to restore")
    for top_of, _ in joined:
        restored_elevation(draft.column, top_of)  # unknown names fail here, one line
    y_lo, y_hi = _y_range(draft, joined)
    if pin is None and loose is None:
        a, b, at_start, source = _default_lines(draft, joined, y_lo, y_hi)
        pin, loose = (a, b) if at_start else (b, a)
    elif pin is None or loose is None:
        # One line given: the other goes to the farther default end.
        a, b, _, _ = _default_lines(draft, joined, y_lo, y_hi)
        given = float(pin if pin is not None else loose)
        other = a if abs(a - given) > abs(b - given) else b
        pin, loose = (given, other) if pin is not None else (other, given)
        source = "given pin, default loose line" if pin == given else "given loose, default pin"
    else:
        pin, loose, source = float(pin), float(loose), "given"
    _check_line(draft, "pin", pin, y_lo, y_hi)
    _check_line(draft, "loose", loose, y_lo, y_hi)
    if abs(loose - pin) < 1e-6:
        raise CheckError(f"section {name}: pin and loose lines coincide at {pin:.1f} m")
    direction = 1 if loose > pin else -1
    lo, hi = min(pin, loose), max(pin, loose)
    tol = _tol(draft)

    # Pieces between the lines, per block.
    blocks: dict[int, dict[str, LineString]] = {}
    for (top_of, block), line in joined.items():
        piece = clip_x(line, lo, hi)
        if piece is not None and piece.length > 1e-9:
            blocks.setdefault(block, {})[top_of] = piece
    if not blocks:
        raise CheckError(f"section {name}: no horizon lies between the pin line at {pin:.1f} m "
                         f"and the loose line at {loose:.1f} m")

    def pin_side_x(p: LineString) -> float:
        c = _xy(p)[:, 0]
        return float(c[0] if direction > 0 else c[-1])

    def far_x(p: LineString) -> float:
        c = _xy(p)[:, 0]
        return float(c[-1] if direction > 0 else c[0])

    def contains_pin(b: int) -> int:
        return sum(1 for p in blocks[b].values() if abs(pin_side_x(p) - pin) <= tol)

    pin_block = max(blocks, key=lambda b: (contains_pin(b), -abs(np.mean(
        [pin_side_x(p) for p in blocks[b].values()]) - pin)))
    others = sorted((b for b in blocks if b != pin_block),
                    key=lambda b: direction * np.mean([pin_side_x(p) for p in blocks[b].values()]))
    order = [pin_block, *others]

    pieces: list[RestoredHorizon] = []
    last_end: dict[str, float] = {}
    gaps: list[RestoredGap] = []
    prev_block: dict[str, int] = {}
    ys = {t: restored_elevation(draft.column, t) for t in {k[0] for k in joined}}
    for b in order:
        ps = blocks[b]
        starts = {t: pin_side_x(p) for t, p in ps.items()}
        if b == pin_block:
            xl = pin
        else:  # first distance from the pin side where every horizon of the block exists
            xl = max(starts.values()) if direction > 0 else min(starts.values())
        back, fwd = {}, {}
        for t, p in ps.items():
            xs = starts[t]
            if direction * (xs - xl) <= tol:
                a, c = sorted((xs, xl))
                seg = clip_x(p, a, c)
                back[t] = seg.length if seg is not None else 0.0
                fwd[t] = p.length - back[t]
            else:  # starts beyond the local pin: keep its horizontal offset
                back[t] = -abs(xs - xl)
                fwd[t] = p.length + abs(xs - xl)
        if b == pin_block:
            x_anchor = pin
        else:
            shared = [t for t in ps if t in last_end]
            if shared:
                x_anchor = float(np.mean([last_end[t] + direction * back[t] for t in shared]))
            else:
                ends = list(last_end.values()) or [pin]
                far = max(ends) if direction > 0 else min(ends)
                x_anchor = far + direction * max(max(back.values()), 0.0)
        s = {t: x_anchor - direction * back[t] for t in ps}
        e = {t: x_anchor + direction * fwd[t] for t in ps}
        g = {t: direction * (s[t] - last_end[t]) for t in ps if t in last_end}
        for top, base in _unit_pairs(draft.column, set(g)):
            th = ys[top] - ys[base]
            pos, neg = _interval_parts(g[top], g[base], th)
            gaps.append(RestoredGap(top, (prev_block[top], b), pos, neg, g[top], g[base]))
        for t, p in ps.items():
            x0, x1 = s[t], e[t]
            pieces.append(RestoredHorizon(
                t, b, ys[t], float(p.length), float(x0), float(x1), starts[t], far_x(p),
                float(xl), LineString([(x0, ys[t]), (x1, ys[t])])))
            last_end[t] = x1
            prev_block[t] = b

    # Restored units between consecutive horizons of a block.
    units: list[RestoredUnit] = []
    by_block: dict[int, dict[str, RestoredHorizon]] = {}
    for rp in pieces:
        by_block.setdefault(rp.block, {})[rp.top_of] = rp
    for b, rps in by_block.items():
        for top, base in _unit_pairs(draft.column, set(rps)):
            a, c = rps[top], rps[base]
            poly = Polygon([(a.restored_x0_m, a.restored_elevation_m),
                            (a.restored_x1_m, a.restored_elevation_m),
                            (c.restored_x1_m, c.restored_elevation_m),
                            (c.restored_x0_m, c.restored_elevation_m)])
            if not poly.is_valid:
                poly = poly.buffer(0)
            units.append(RestoredUnit(top, b, base, a.restored_elevation_m - c.restored_elevation_m,
                                      poly, float(poly.area)))

    # Per horizon: lengths, shortening, the restored loose line.
    balances: list[HorizonBalance] = []
    for t in sorted(ys, key=lambda t: -ys[t]):
        rps = [rp for rp in pieces if rp.top_of == t]
        if not rps:
            continue
        far_def = max(rp.deformed_x1_m * direction for rp in rps) * direction
        far_res = max(rp.restored_x1_m * direction for rp in rps) * direction
        deformed = direction * (far_def - pin)
        restored = direction * (far_res - pin)
        bed = sum(rp.bed_length_m for rp in rps)
        short = restored - deformed
        pct = 100.0 * short / restored if restored > 0 else float("nan")
        balances.append(HorizonBalance(t, ys[t], float(deformed), float(bed), float(restored),
                                       float(short), float(pct), bool(abs(far_def - loose) <= tol),
                                       float(far_res)))

    full = [h for h in balances if h.reaches_loose]
    failures: list[str] = []
    if full:
        lengths = np.array([h.restored_length_m for h in full])
        mismatch = float(100.0 * (lengths.max() - lengths.min()) / lengths.mean())
        xs = np.array([h.restored_loose_x_m for h in full])
        yv = np.array([h.restored_elevation_m for h in full])
        spread = float(xs.max() - xs.min())
        if len(full) >= 2 and np.ptp(yv) > 0:
            slope, icpt = np.polyfit(yv, xs, 1)
            # From the vertical; positive when the upper horizons restore longer.
            angle = float(np.degrees(np.arctan(direction * slope)))
            departure = float(np.max(np.abs(xs - (icpt + slope * yv))))
        else:
            angle, departure = 0.0, 0.0
        short_pct = float(np.mean([h.shortening_pct for h in full]))
        short_m = float(np.mean([h.shortening_m for h in full]))
        if mismatch > threshold_pct:
            worst = max(full, key=lambda h: abs(h.restored_length_m - lengths.mean()))
            failures.append(f"restored line lengths spread {mismatch:.2f} % "
                            f"(> {threshold_pct:g} %); farthest from the mean: "
                            f"top of {worst.top_of}, "
                            f"{worst.restored_length_m:.0f} m against {lengths.mean():.0f} m")
    else:
        mismatch = spread = angle = departure = short_pct = short_m = float("nan")
        failures.append(f"no horizon reaches the loose line at {loose:.1f} m")
    missing = [h.top_of for h in balances if not h.reaches_loose]
    if missing and full:
        failures.append("horizons ending before the loose line (not in the balance): "
                        + ", ".join(missing))
    # Across faults the blocks are laid end to end, so a bed-length mismatch between
    # blocks shows as gaps and overlaps rather than as spread: they count too.
    area = float(sum(u.area_m2 for u in units))
    gap_pct = 100.0 * sum(g.gap_area_m2 + g.overlap_area_m2 for g in gaps) / area if area else 0.0
    if gap_pct > threshold_pct:
        failures.append(f"gaps and overlaps between fault blocks in the restored state: "
                        f"{gap_pct:.2f} % of the restored area (> {threshold_pct:g} %)")
    passed = bool(full) and mismatch <= threshold_pct and gap_pct <= threshold_pct
    return Restoration(name, float(pin), float(loose), source, direction, float(threshold_pct),
                       pieces, balances, units, gaps, mismatch, spread, angle, departure,
                       short_pct, short_m, passed, failures, draft.column)


# --- outputs ------------------------------------------------------------------------


def restoration_frames(restoration: Restoration) -> dict:
    """GeoDataFrames ``restored_horizons`` and ``restored_units`` in restored section space."""
    import geopandas as gpd

    hz = gpd.GeoDataFrame(
        {
            "top_of": [p.top_of for p in restoration.pieces],
            "block": [p.block for p in restoration.pieces],
            "bed_length_m": [p.bed_length_m for p in restoration.pieces],
            "restored_length_m": [p.restored_length_m for p in restoration.pieces],
        },
        geometry=[p.geometry for p in restoration.pieces],
    )
    un = gpd.GeoDataFrame(
        {
            "unit": [u.unit for u in restoration.units],
            "block": [u.block for u in restoration.units],
            "area_m2": [u.area_m2 for u in restoration.units],
        },
        geometry=[u.geometry for u in restoration.units],
    )
    return {"restored_horizons": hz, "restored_units": un}


def _colours(column, names) -> dict[str, str]:
    try:
        from ..colours import unit_colours

        return unit_colours(column, names) if column is not None else {}
    except Exception:  # colours not available: a plain palette
        import matplotlib

        cmap = matplotlib.colormaps["tab20"]
        return {n: matplotlib.colors.to_hex(cmap(i % 20)) for i, n in enumerate(names)}


def draw_restoration(restoration: Restoration, path_stem: str | os.PathLike) -> list[Path]:
    """Draw the restored section to ``<stem>.png``, ``.svg`` and ``.pdf``; returns the paths."""
    import textwrap

    import matplotlib
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.collections import LineCollection, PathCollection
    from matplotlib.figure import Figure
    from matplotlib.lines import Line2D

    from ..figure import _polygon_path

    r = restoration
    names = sorted({p.top_of for p in r.pieces})
    cols = _colours(r.column, names)
    fig = Figure(figsize=(10, 4.2))
    FigureCanvasAgg(fig)
    fig.subplots_adjust(bottom=0.2)
    ax = fig.add_subplot()
    # One collection for all the unit fills and one for all the beds: far fewer artists.
    paths, faces = [], []
    for u in r.units:
        path = _polygon_path(u.geometry)
        if path is not None:
            paths.append(path)
            faces.append(cols.get(u.unit, "#dddddd"))
    if paths:
        ax.add_collection(PathCollection(paths, facecolors=faces, edgecolors="none",
                                         alpha=0.85, linewidths=0), autolim=True)
    beds = [_xy(p.geometry) for p in r.pieces if not p.geometry.is_empty]
    if beds:
        ax.add_collection(LineCollection(beds, colors="black", linewidths=0.8), autolim=True)
    ax.autoscale_view()
    ys = [p.restored_elevation_m for p in r.pieces]
    ax.axvline(r.pin_m, color="#b00000", linewidth=1.4)
    ax.annotate("pin", (r.pin_m, max(ys)), textcoords="offset points", xytext=(3, 6),
                color="#b00000", fontsize=9)
    loose = r.restored_loose_line
    if loose is not None:
        x, y = loose.xy
        ax.plot(x, y, color="#0050b0", linewidth=1.4)
        ax.annotate("restored loose line", (x[0], y[0]), textcoords="offset points",
                    xytext=(3, 6), color="#0050b0", fontsize=9, ha="left")
    units_drawn = {u.unit for u in r.units}
    handles = [Line2D([], [], color=cols.get(u, "#dddddd"), linewidth=6, label=u)
               for u in (r.column.names if r.column is not None else names) if u in units_drawn]
    if handles:
        ax.legend(handles=handles, loc="lower left", fontsize=7, ncol=min(len(names), 6),
                  frameon=False)
    ax.set_xlabel("restored distance from the section start (m)")
    ax.set_ylabel("restored level: m below the top of the column")
    mm = r.line_length_mismatch_pct
    ax.set_title(f"{r.section}: flexural-slip restoration (Dahlstrom 1969) - shortening "
                 f"{r.shortening_pct:.1f} %, line-length spread {mm:.1f} %", fontsize=10,
                 y=1.0)
    ax.set_aspect("equal", adjustable="datalim")
    # Pre-wrapped: matplotlib's own wrapping measures the text word by word on every draw.
    fig.text(0.01, 0.01, "\n".join(textwrap.wrap(CAUTION, 225)), fontsize=6, color="#444444")
    out = []
    # Text stays text in the SVG (searchable, and no glyph outlines to write).
    with matplotlib.rc_context({"svg.fonttype": "none", "svg.hashsalt": "mapsection"}):
        for ext in ("png", "svg", "pdf"):
            path = Path(f"{os.fspath(path_stem)}.{ext}")
            with atomic_file(path) as tmp:
                fig.savefig(tmp, format=ext, dpi=150,
                            **({"pil_kwargs": {"compress_level": 3}} if ext == "png" else {}))
            out.append(path)
    return out
