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
the pin line; frame n is the draft. ``write_sequence`` saves small PNGs
(``sequence_01.png`` ...) and an animated GIF (``sequence.gif``, Pillow).
"""

from __future__ import annotations

import os
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
from shapely.geometry import LineString

from .. import CAUTION
from .._atomic import atomic_file
from ..draft import Draft
from ..errors import CheckError, OutputError
from .restore import Restoration, _colours, _xy, clip_x, fault_blocks, joined_horizons, y_at

__all__ = ["Frame", "FrameHorizon", "incremental_sequence", "write_sequence"]


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
        c = _xy(piece)
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
                cc = _xy(c) if sgn > 0 else _xy(c)[::-1]
                first = np.hypot(*(cc[0] - fw)) <= np.hypot(*(cc[-1] - fw))
                pts.append(p[0] if first else p[-1])
            if len(pts) >= 2:
                pts.sort(key=lambda q: -q[1])
                faults.append(LineString(pts))
        frames.append(Frame(k, f, fh, faults))
    return frames


def write_sequence(frames: list[Frame], folder: str | os.PathLike, *, column=None,
                   title: str = "", duration_ms: int = 450) -> list[Path]:
    """Save ``sequence_01.png`` ... and ``sequence.gif``; returns the paths (GIF last)."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    from PIL import Image

    folder = Path(folder)
    if not folder.is_dir():
        raise OutputError(f"{folder}: output folder does not exist")
    if not frames:
        raise CheckError("incremental sequence: no frames to write")
    allc = np.vstack([_xy(h.geometry) for fr in frames for h in fr.horizons])
    (x0, y0), (x1, y1) = allc.min(axis=0), allc.max(axis=0)
    pad_x, pad_y = 0.03 * (x1 - x0 + 1.0), 0.1 * (y1 - y0 + 1.0)
    names = sorted({h.top_of for fr in frames for h in fr.horizons})
    cols = _colours(column, names)
    paths = []
    n = len(frames) - 1
    for fr in frames:
        fig, ax = plt.subplots(figsize=(6.4, 3.0))
        for h in fr.horizons:
            x, y = h.geometry.xy
            ax.plot(x, y, color=cols.get(h.top_of, "black"), linewidth=1.6)
        for g in fr.faults:
            x, y = g.xy
            ax.plot(x, y, color="black", linewidth=1.8)
        ax.set_xlim(x0 - pad_x, x1 + pad_x)
        ax.set_ylim(y0 - pad_y, y1 + pad_y)
        ax.set_title(f"{title + ': ' if title else ''}step {fr.step} of {n} "
                     f"({100 * fr.fraction:.0f} % of the deformation)", fontsize=9)
        ax.set_xlabel("distance (m)", fontsize=8)
        ax.set_ylabel("elevation (m)", fontsize=8)
        ax.tick_params(labelsize=7)
        fig.text(0.01, 0.01, CAUTION, fontsize=4.5, wrap=True, color="#555555")
        fig.subplots_adjust(bottom=0.25)
        path = folder / f"sequence_{fr.step + 1:02d}.png"
        with atomic_file(path) as tmp:
            fig.savefig(tmp, format="png", dpi=80)
        plt.close(fig)
        paths.append(path)
    images = []
    for p in paths:
        with Image.open(p) as im:
            images.append(im.convert("RGB").convert("P", palette=Image.Palette.ADAPTIVE))
    gif = folder / "sequence.gif"
    durations = [duration_ms] * (len(images) - 1) + [duration_ms * 3]
    with atomic_file(gif) as tmp:
        images[0].save(tmp, format="GIF", save_all=True, append_images=images[1:],
                       duration=durations, loop=0)
    paths.append(gif)
    return paths
