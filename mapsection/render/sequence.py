"""The incremental sequence as pictures: ``sequence_01.png`` ... and ``sequence.gif``.

Draws the frames of :func:`mapsection.checks.sequence.incremental_sequence` (from the
restored state to the draft); the animated GIF is written with Pillow.

Example::

    from mapsection.checks.sequence import incremental_sequence
    from mapsection.render.sequence import write_sequence
    write_sequence(incremental_sequence(draft, restoration), "out/A/sequence",
                   column=draft.column, title=draft.name)
"""

from __future__ import annotations

import os
import textwrap
from pathlib import Path

import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.collections import LineCollection
from matplotlib.figure import Figure
from PIL import Image

from .._atomic import atomic_file
from ..caution import CAUTION
from ..checks.geometry import line_xy
from ..checks.sequence import Frame
from ..errors import CheckError, OutputError
from ..stratigraphy import Column
from .colours import unit_palette

__all__ = ["FRAME_DPI", "FRAME_SIZE_IN", "write_sequence"]


# Frames are for watching: small, legible, quick to write.
FRAME_DPI = 80
FRAME_SIZE_IN = (6.4, 3.0)


def _frame_limits(ax, frames: list[Frame]) -> None:
    """Axes limits holding every frame, with a margin."""
    allc = np.vstack([line_xy(h.geometry) for fr in frames for h in fr.horizons])
    (x0, y0), (x1, y1) = allc.min(axis=0), allc.max(axis=0)
    pad_x, pad_y = 0.03 * (x1 - x0 + 1.0), 0.1 * (y1 - y0 + 1.0)
    ax.set_xlim(x0 - pad_x, x1 + pad_x)
    ax.set_ylim(y0 - pad_y, y1 + pad_y)


def write_sequence(frames: list[Frame], folder: str | os.PathLike, *,
                   column: Column | None = None,
                   title: str = "", duration_ms: int = 450) -> list[Path]:
    """Save ``sequence_01.png`` ... and ``sequence.gif``; returns the paths (GIF last).

    One figure is drawn once (axes, ticks, labels, caution); each frame then only
    redraws the lines that move and the title onto a copy of that background, and
    the frame's pixels go straight to Pillow for both its PNG and the GIF.
    """
    folder = Path(folder)
    if not folder.is_dir():
        raise OutputError(f"{folder}: output folder does not exist")
    if not frames:
        raise CheckError("incremental sequence: no frames to write")
    names = sorted({h.top_of for fr in frames for h in fr.horizons})
    cols = unit_palette(column, names)
    n = len(frames) - 1

    fig = Figure(figsize=FRAME_SIZE_IN, dpi=FRAME_DPI)
    canvas = FigureCanvasAgg(fig)
    fig.subplots_adjust(bottom=0.25)
    ax = fig.add_subplot()
    _frame_limits(ax, frames)
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
        beds.set_segments([line_xy(h.geometry) for h in fr.horizons])
        beds.set_color([cols.get(h.top_of, "black") for h in fr.horizons])
        faults.set_segments([line_xy(g) for g in fr.faults])
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
    paths.append(_save_gif(images, folder / "sequence.gif", duration_ms))
    return paths


def _save_gif(images: list[Image.Image], path: Path, duration_ms: int) -> Path:
    """An animated GIF of the frames, looping, the last one held three times as long."""
    durations = [duration_ms] * (len(images) - 1) + [duration_ms * 3]
    with atomic_file(path) as tmp:
        images[0].save(tmp, format="GIF", save_all=True, append_images=images[1:],
                       duration=durations, loop=0)
    return path
