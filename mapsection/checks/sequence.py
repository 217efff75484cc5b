"""An incremental sequence from the restored state to the drafted section.

Frame k of n (k = 0 ... n) is built horizon by horizon from the restoration:

* folds (flexural slip): each bed segment, taken from the pin side, gets k/n of
  its drafted dip (its angle from the horizontal), and the segments are laid end
  to end again keeping their lengths, so every frame keeps every bed length
  (Dahlstrom 1969);
* faults: each horizon piece starts from its restored start and moves by k/n of
  its displacement to its drafted start (for a hanging-wall block that is the
  slip on the fault, heave and throw together).

Frame 0 is the restored state, flat at the drafted elevation of the horizons at
the pin line; frame n is the draft. :func:`mapsection.render.sequence.write_sequence`
saves them as small PNGs (``sequence_01.png`` ...) and an animated GIF (``sequence.gif``).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from shapely.geometry import LineString

from ..draft import Draft
from ..errors import CheckError
from .geometry import FaultBlocks, clip_x, fault_blocks, joined_horizons, line_xy, y_at
from .restore import Restoration

__all__ = ["Frame", "FrameHorizon", "incremental_sequence"]


@dataclass(frozen=True)
class FrameHorizon:
    top_of: str
    block: int
    geometry: LineString


@dataclass
class Frame:
    step: int
    fraction: float
    horizons: list[FrameHorizon] = field(default_factory=list)
    faults: list[LineString] = field(default_factory=list)


def incremental_sequence(draft: Draft, restoration: Restoration, n_steps: int = 8) -> list[Frame]:
    """Frames 0 ... n_steps from the restored state (flat) to the draft (at least 8 steps)."""
    if int(n_steps) != n_steps or n_steps < 1:
        raise CheckError(f"incremental sequence: n_steps must be a whole number >= 1, "
                         f"got {n_steps}")
    n = int(n_steps)
    r = restoration
    joined = joined_horizons(draft)
    lo, hi = sorted((r.pin_m, r.loose_m))
    sgn = r.direction
    # Put the restored state at the drafted level of the horizons at the pin line.
    offs = []
    for rp in r.pieces:
        line = joined.get((rp.top_of, rp.block))
        y = float(y_at(line, r.pin_m)) if line is not None else float("nan")
        if np.isfinite(y):
            offs.append(y - rp.restored_elevation_m)
    offset = float(np.mean(offs)) if offs else 0.0

    beds = []  # (piece, start restored xy, start drafted xy, lengths, angles)
    for rp in r.pieces:
        line = joined.get((rp.top_of, rp.block))
        piece = clip_x(line, lo, hi) if line is not None else None
        if piece is None:
            continue
        c = line_xy(piece)
        if sgn < 0:
            c = c[::-1]
        d = np.diff(c, axis=0)
        lengths = np.hypot(d[:, 0], d[:, 1])
        angles = np.arctan2(d[:, 1], sgn * d[:, 0])  # from the horizontal, away from the pin
        start_r = np.array([rp.restored_x0_m, rp.restored_elevation_m + offset])
        beds.append((rp, start_r, c[0], lengths, angles))

    blocks = fault_blocks(draft)
    frames = []
    for k in range(n + 1):
        f = k / n
        fh = []
        ends: dict[tuple[str, int], np.ndarray] = {}
        for rp, s_r, s_d, lengths, angles in beds:
            p0 = s_r + f * (s_d - s_r)
            steps = np.column_stack([sgn * lengths * np.cos(f * angles),
                                     lengths * np.sin(f * angles)])
            pts = np.vstack([p0, p0 + np.cumsum(steps, axis=0)])
            fh.append(FrameHorizon(rp.top_of, rp.block, LineString(pts)))
            ends[(rp.top_of, rp.block)] = pts
        frames.append(Frame(k, f, fh, _frame_faults(blocks, ends, joined, (lo, hi), sgn)))
    return frames


def _frame_faults(blocks: dict[str, FaultBlocks], ends: dict[tuple[str, int], np.ndarray],
                  joined: dict[tuple[str, int], LineString], span: tuple[float, float],
                  sgn: int) -> list[LineString]:
    """Each fault in a frame: through its footwall cutoffs, where the frame's beds put them."""
    lo, hi = span
    faults = []
    for fb in blocks.values():
        pts = []
        for t, (_, fw) in fb.cutoffs.items():
            p = ends.get((t, fb.footwall))
            src = joined.get((t, fb.footwall))
            if fw is None or p is None or src is None:
                continue
            # the footwall cutoff is the piece end nearest to the drafted cutoff
            c = clip_x(src, lo, hi)
            if c is None:
                continue
            cc = line_xy(c) if sgn > 0 else line_xy(c)[::-1]
            first = np.hypot(*(cc[0] - fw)) <= np.hypot(*(cc[-1] - fw))
            pts.append(p[0] if first else p[-1])
        if len(pts) >= 2:
            pts.sort(key=lambda q: -q[1])
            faults.append(LineString(pts))
    return faults
