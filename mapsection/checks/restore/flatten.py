"""Laying the horizons flat (flexural slip, Dahlstrom 1969): each fault block's bed pieces
unfolded at their bed lengths from the pin, block after block, end to end with the block
before; the gaps and overlaps that leaves; where the beds stood above the ground."""

from __future__ import annotations

import numpy as np
import shapely
from shapely.geometry import LineString

from ...draft import Draft
from ..geometry import clip_x, line_xy, snap_tolerance
from .results import RestoredGap, RestoredHorizon


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


def unit_pairs(column, present: set[str]) -> list[tuple[str, str]]:
    """(top_of, base_of) pairs: each present horizon with the next older present one."""
    order = [n for n in column.names if n in present]
    order += sorted(n for n in present if n not in column.names)  # base horizons last
    return list(zip(order[:-1], order[1:], strict=True))


def _block_lengths(ps: dict[str, LineString], starts: dict[str, float], xl: float,
                   direction: int, tol: float) -> tuple[dict[str, float], dict[str, float]]:
    """Bed length of each piece behind (toward the pin) and ahead of the local pin ``xl``."""
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
    return back, fwd


def lay_flat(draft: Draft, blocks: dict[int, dict[str, LineString]], ys: dict[str, float],
              pin: float, direction: int) -> tuple[list[RestoredHorizon], list[RestoredGap]]:
    """Each block's pieces laid flat, block after block from the pin, end to end with the
    block before; the gaps and overlaps that leaves between the blocks' units."""
    tol = snap_tolerance(draft)

    def pin_side_x(p: LineString) -> float:
        c = line_xy(p)[:, 0]
        return float(c[0] if direction > 0 else c[-1])

    def far_x(p: LineString) -> float:
        c = line_xy(p)[:, 0]
        return float(c[-1] if direction > 0 else c[0])

    def contains_pin(b: int) -> int:
        return sum(1 for p in blocks[b].values() if abs(pin_side_x(p) - pin) <= tol)

    pin_block = max(blocks, key=lambda b: (contains_pin(b), -abs(np.mean(
        [pin_side_x(p) for p in blocks[b].values()]) - pin)))
    others = sorted((b for b in blocks if b != pin_block),
                    key=lambda b: direction * np.mean([pin_side_x(p) for p in blocks[b].values()]))

    pieces: list[RestoredHorizon] = []
    last_end: dict[str, float] = {}
    gaps: list[RestoredGap] = []
    prev_block: dict[str, int] = {}
    for b in [pin_block, *others]:
        ps = blocks[b]
        starts = {t: pin_side_x(p) for t, p in ps.items()}
        if b == pin_block:
            xl = pin
        else:  # first distance from the pin side where every horizon of the block exists
            xl = max(starts.values()) if direction > 0 else min(starts.values())
        back, fwd = _block_lengths(ps, starts, xl, direction, tol)
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
        for top, base in unit_pairs(draft.column, set(g)):
            th = ys[top] - ys[base]
            pos, neg = _interval_parts(g[top], g[base], th)
            gaps.append(RestoredGap(top, (prev_block[top], b), pos, neg, g[top], g[base]))
        for t, p in ps.items():
            x0, x1 = s[t], e[t]
            pieces.append(RestoredHorizon(
                t, b, ys[t], float(p.length), float(x0), float(x1), starts[t], far_x(p),
                float(xl), LineString([(x0, ys[t]), (x1, ys[t])]),
                _eroded(draft, p, x0, direction)))
            last_end[t] = x1
            prev_block[t] = b
    return pieces, gaps


def _eroded(draft: Draft, piece: LineString, x0: float, direction: int,
            ) -> tuple[tuple[float, float], ...]:
    """Where a bed piece lies above the ground in the draft, as restored x intervals: a
    point at bed length u from the piece's pin-side end restores to x0 + direction * u."""
    if piece.length <= 0:
        return ()
    pixel = float(getattr(draft.profile, "pixel_size", float("nan")))
    step = max(pixel, 1.0) if np.isfinite(pixel) else 10.0  # about a DEM pixel along the bed
    c = line_xy(shapely.segmentize(piece, step))
    if direction < 0:
        c = c[::-1]  # from the pin side
    u = np.concatenate([[0.0], np.cumsum(np.hypot(*np.diff(c, axis=0).T))])
    ground = draft.profile.elevation_at(c[:, 0])
    with np.errstate(invalid="ignore"):
        up = c[:, 1] > ground + 0.5  # half a metre: a bed at the ground is preserved
    if not up.any():
        return ()
    edges = np.flatnonzero(np.diff(np.concatenate([[0], up.astype(np.int8), [0]])))
    out = []
    for a, b in zip(edges[::2], edges[1::2], strict=True):
        # each run's ends halfway between its last point below and first point above
        ua = 0.5 * (u[a - 1] + u[a]) if a > 0 else u[0]
        ub = 0.5 * (u[b - 1] + u[b]) if b < len(u) else u[-1]
        xa, xb = x0 + direction * ua, x0 + direction * ub
        out.append((float(min(xa, xb)), float(max(xa, xb))))
    return tuple(out)


__all__ = ["lay_flat", "unit_pairs"]
