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


# Frames are for watching: small, legible, quick to write.
FRAME_DPI = 80
FRAME_SIZE_IN = (6.4, 3.0)


def write_sequence(frames: list[Frame], folder: str | os.PathLike, *, column=None,
                   title: str = "", duration_ms: int = 450) -> list[Path]:
    """Save ``sequence_01.png`` ... and ``sequence.gif``; returns the paths (GIF last).

    One figure is drawn once (axes, ticks, labels, caution); each frame then only
    redraws the lines that move and the title onto a copy of that background, and
    the frame's pixels go straight to Pillow for both its PNG and the GIF.
    """
    import textwrap

    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.collections import LineCollection
    from matplotlib.figure import Figure
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
    n = len(frames) - 1

    fig = Figure(figsize=FRAME_SIZE_IN, dpi=FRAME_DPI)
    canvas = FigureCanvasAgg(fig)
    fig.subplots_adjust(bottom=0.25)
    ax = fig.add_subplot()
    ax.set_xlim(x0 - pad_x, x1 + pad_x)
    ax.set_ylim(y0 - pad_y, y1 + pad_y)
    ax.set_xlabel("distance (m)", fontsize=8)
    ax.set_ylabel("elevation (m)", fontsize=8)
    ax.tick_params(labelsize=7)
    # Pre-wrapped: matplotlib's own wrapping measures the text word by word on every draw.
    fig.text(0.01, 0.01, "\n".join(textwrap.wrap(CAUTION, 185)), fontsize=4.5,
             color="#555555")
    beds = LineCollection([], linewidths=1.6, animated=True)
    faults = LineCollection([], colors="black", linewidths=1.8, animated=True)
    ax.add_collection(beds)
    ax.add_collection(faults)
    head = ax.set_title(" ", fontsize=9, y=1.0)
    head.set_animated(True)
    canvas.draw()  # the static background, once
    background = canvas.copy_from_bbox(fig.bbox)
    renderer = canvas.get_renderer()

    paths, images = [], []
    for fr in frames:
        canvas.restore_region(background)
        beds.set_segments([_xy(h.geometry) for h in fr.horizons])
        beds.set_color([cols.get(h.top_of, "black") for h in fr.horizons])
        faults.set_segments([_xy(g) for g in fr.faults])
        head.set_text(f"{title + ': ' if title else ''}step {fr.step} of {n} "
                      f"({100 * fr.fraction:.0f} % of the deformation)")
        for artist in (beds, faults, head):
            artist.draw(renderer)
        rgb = Image.fromarray(np.asarray(canvas.buffer_rgba())[..., :3].copy(), "RGB")
        path = folder / f"sequence_{fr.step + 1:02d}.png"
        with atomic_file(path) as tmp:
            rgb.save(tmp, format="PNG", compress_level=3)
        paths.append(path)
        # Few flat colours: the fast octree palette loses nothing visible here.
        images.append(rgb.quantize(256, method=Image.Quantize.FASTOCTREE))
    gif = folder / "sequence.gif"
    durations = [duration_ms] * (len(images) - 1) + [duration_ms * 3]
    with atomic_file(gif) as tmp:
        images[0].save(tmp, format="GIF", save_all=True, append_images=images[1:],
                       duration=durations, loop=0)
    paths.append(gif)
    return paths
