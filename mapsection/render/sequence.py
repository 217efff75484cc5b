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

import math
import os
import textwrap
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
from matplotlib.axes import Axes
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.collections import LineCollection, PolyCollection
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import Rectangle
from matplotlib.text import Text
from PIL import Image

from .._atomic import atomic_file
from ..caution import CAUTION
from ..checks.geometry import line_xy
from ..checks.sequence import Frame
from ..errors import CheckError, OutputError
from ..stratigraphy import Column
from .colours import unit_palette

__all__ = ["FRAME_DPI", "FRAME_WIDTH_IN", "write_sequence"]


# Frames are for watching: legible on a screen, quick to write.
FRAME_DPI = 100
FRAME_WIDTH_IN = 10.0  # the section's box is 7.4 in wide; the legend beside it
_AX_LEFT, _AX_W = 0.8, 7.4  # inches
_TOP, _BOTTOM = 0.55, 0.95  # the step counter above; axis labels and caution below


def _limits(frames: list[Frame], ground) -> tuple[float, float, float, float]:
    """Limits holding every frame (and the ground), with a margin."""
    allc = [line_xy(h.geometry) for fr in frames for h in fr.horizons]
    if ground is not None:
        d, z = ground
        ok = np.isfinite(z)
        allc.append(np.column_stack([d[ok], z[ok]]))
    allc = np.vstack(allc)
    (x0, y0), (x1, y1) = allc.min(axis=0), allc.max(axis=0)
    pad_x, pad_y = 0.02 * (x1 - x0 + 1.0), 0.06 * (y1 - y0 + 1.0)
    return x0 - pad_x, x1 + pad_x, y0 - pad_y, y1 + pad_y


def _fills(fr: Frame, order: dict[str, int]) -> tuple[list[np.ndarray], list[str]]:
    """The units between consecutive horizons of each fault block: polygons and unit names."""
    polys, names = [], []
    by_block: dict[int, list] = {}
    for h in fr.horizons:
        by_block.setdefault(h.block, []).append(h)
    for hs in by_block.values():
        hs = sorted(hs, key=lambda h: order.get(h.top_of, len(order)))
        for top, bottom in zip(hs[:-1], hs[1:], strict=True):
            a, b = line_xy(top.geometry), line_xy(bottom.geometry)
            if len(a) >= 2 and len(b) >= 2:
                polys.append(np.vstack([a, b[::-1]]))
                names.append(top.top_of)
    return polys, names


def write_sequence(frames: list[Frame], folder: str | os.PathLike, *,
                   column: Column | None = None, title: str = "", duration_ms: int = 450,
                   ve: float = 1.0, ground: tuple[np.ndarray, np.ndarray] | None = None
                   ) -> list[Path]:
    """Save ``sequence_01.png`` ... and ``sequence.gif``; returns the paths (GIF last).

    Parameters
    ----------
    frames : list of Frame
        From :func:`mapsection.checks.sequence.incremental_sequence`.
    folder : path
        An existing folder.
    column : Column, optional
        The stratigraphic column: unit colours, the order of the fills and the legend.
    title : str
        The section's name, in the step counter.
    duration_ms : int
        Time per frame in the GIF (the last is held three times as long); the GIF loops.
    ve : float
        Vertical exaggeration: the frames have the section's own shape.
    ground : (distance, elevation) arrays, optional
        The present ground line, drawn in every frame for reference.

    Returns
    -------
    list of Path

    Notes
    -----
    One figure is drawn once (axes, ground, legend, caution); each frame then only
    redraws the fills, lines and counter onto a copy of that background, and the frame's
    pixels go straight to Pillow for both its PNG and the GIF.
    """
    folder = Path(folder)
    if not folder.is_dir():
        raise OutputError(f"{folder}: output folder does not exist")
    if not frames:
        raise CheckError("incremental sequence: no frames to write")
    names = sorted({h.top_of for fr in frames for h in fr.horizons})
    cols = unit_palette(column, names)
    order = {n: i for i, n in enumerate(column.names)} if column is not None else {
        n: i for i, n in enumerate(names)}
    n = len(frames) - 1
    ve = float(ve) if ve and math.isfinite(ve) and ve > 0 else 1.0
    legend = [(u, cols[u]) for u in (column.names if column is not None else names) if u in cols]
    art = _background(_limits(frames, ground), ve, ground, legend)

    paths, images = [], []
    for fr in frames:
        rgb = _draw_frame(art, fr, order, cols,
                          f"{'Section ' + title + ':  ' if title else ''}step {fr.step} of "
                          f"{n}  ({100 * fr.fraction:.0f} % of the deformation)")
        path = folder / f"sequence_{fr.step + 1:02d}.png"
        with atomic_file(path) as tmp:
            rgb.save(tmp, format="PNG", compress_level=3)
        paths.append(path)
        # Few flat colours: the fast octree palette loses nothing visible here.
        images.append(rgb.quantize(256, method=Image.Quantize.FASTOCTREE))
    paths.append(_save_gif(images, folder / "sequence.gif", duration_ms))
    return paths


@dataclass
class _Frames:
    """One figure drawn once, and the artists each frame redraws onto its background."""

    canvas: FigureCanvasAgg
    ax: Axes
    fills: PolyCollection
    beds: LineCollection
    faults: LineCollection
    head: Text
    bar: Rectangle
    ground_line: list
    background: Any


def _background(limits: tuple[float, float, float, float], ve: float,
                ground: tuple[np.ndarray, np.ndarray] | None,
                units: list[tuple[str, str]]) -> _Frames:
    """The figure with what every frame shares (axes, ground, legend, caution), drawn once."""
    x0, x1, y0, y1 = limits
    ax_h = float(np.clip(_AX_W * (y1 - y0) * ve / max(x1 - x0, 1.0), 1.2, 5.0))
    fig_h = _TOP + ax_h + _BOTTOM
    fig = Figure(figsize=(FRAME_WIDTH_IN, fig_h), dpi=FRAME_DPI)
    canvas = FigureCanvasAgg(fig)
    ax = fig.add_axes((_AX_LEFT / FRAME_WIDTH_IN, _BOTTOM / fig_h, _AX_W / FRAME_WIDTH_IN,
                       ax_h / fig_h))
    ax.set_xlim(x0, x1)
    ax.set_ylim(y0, y1)
    ax.set_xlabel("distance along section (m)", fontsize=8)
    ax.set_ylabel("elevation (m)", fontsize=8)
    ax.tick_params(labelsize=7)
    ground_line = []
    if ground is not None:  # drawn over the fills in every frame
        ground_line = ax.plot(ground[0], ground[1], color="#3b2a1a", linewidth=1.2,
                              linestyle=(0, (4, 2)), zorder=4, animated=True)
    _legend(fig, fig_h, units, ve)
    # Pre-wrapped: matplotlib's own wrapping measures the text word by word on every draw.
    fig.text(0.01, 0.01, "CAUTION: " + "\n".join(textwrap.wrap(CAUTION, 170)), fontsize=6.5,
             color="#333333", va="bottom")
    fills = PolyCollection([], animated=True, edgecolors="none", zorder=1)
    beds = LineCollection([], linewidths=1.0, colors="black", animated=True, zorder=2)
    faults = LineCollection([], colors="black", linewidths=2.0, animated=True, zorder=3)
    for art in (fills, beds, faults):
        ax.add_collection(art)
    head = fig.text(_AX_LEFT / FRAME_WIDTH_IN, 1 - 0.3 / fig_h, " ", fontsize=11,
                    fontweight="bold", va="center", animated=True)
    bar = Rectangle(((_AX_LEFT + _AX_W - 2.0) / FRAME_WIDTH_IN, 1 - 0.36 / fig_h),
                    0.0, 0.12 / fig_h, transform=fig.transFigure, facecolor="#1a1a8c",
                    animated=True)
    fig.add_artist(Rectangle(((_AX_LEFT + _AX_W - 2.0) / FRAME_WIDTH_IN, 1 - 0.36 / fig_h),
                             2.0 / FRAME_WIDTH_IN, 0.12 / fig_h, transform=fig.transFigure,
                             facecolor="none", edgecolor="#1a1a8c", linewidth=0.8))
    fig.add_artist(bar)
    canvas.draw()  # the static background, once
    return _Frames(canvas, ax, fills, beds, faults, head, bar, ground_line,
                   canvas.copy_from_bbox(fig.bbox))


def _legend(fig: Figure, fig_h: float, units: list[tuple[str, str]], ve: float) -> None:
    """Beside the section: the units (youngest first), the lines, the vertical exaggeration."""
    lx = (_AX_LEFT + _AX_W + 0.2) / FRAME_WIDTH_IN
    pitch = 0.17 / fig_h
    y = 1 - _TOP / fig_h
    fig.text(lx, y, "Legend", fontsize=8, fontweight="bold", va="top")
    rows = [*units, ("fault", None), ("present ground", "g")]
    for k, (label, colour) in enumerate(rows):
        yy = y - (k + 1.3) * pitch
        if colour is None or colour == "g":
            style = {"color": "black", "linewidth": 1.8} if colour is None else {
                "color": "#3b2a1a", "linewidth": 1.0, "linestyle": (0, (4, 2))}
            fig.add_artist(Line2D(
                [lx, lx + 0.025], [yy, yy], transform=fig.transFigure, **style))
        else:
            fig.add_artist(Rectangle((lx, yy - 0.35 * pitch), 0.025, 0.7 * pitch,
                                     transform=fig.transFigure, facecolor=colour,
                                     edgecolor="#333333", linewidth=0.4))
        fig.text(lx + 0.032, yy, label[:28], fontsize=7, va="center")
    ve_label = "V.E. 1:1" if math.isclose(ve, 1.0) else f"V.E. {ve:g}×"
    fig.text(lx, y - (len(rows) + 2) * pitch, ve_label, fontsize=7, va="center")


def _draw_frame(art: _Frames, fr: Frame, order: dict[str, int], cols: dict[str, str],
                heading: str) -> Image.Image:
    """One frame drawn onto the shared background: its pixels as an RGB image."""
    canvas = art.canvas
    canvas.restore_region(art.background)
    polys, units = _fills(fr, order)
    art.fills.set_verts(polys)
    art.fills.set_facecolor([cols.get(u, "#dddddd") for u in units])
    art.beds.set_segments([line_xy(h.geometry) for h in fr.horizons])
    art.faults.set_segments([line_xy(g) for g in fr.faults])
    art.head.set_text(heading)
    art.bar.set_width(2.0 / FRAME_WIDTH_IN * fr.fraction)
    for artist in (art.fills, art.beds, art.faults, *art.ground_line):
        art.ax.draw_artist(artist)
    renderer = canvas.get_renderer()
    for artist in (art.head, art.bar):
        artist.draw(renderer)
    return Image.fromarray(np.asarray(canvas.buffer_rgba())[..., :3].copy(), "RGB")


def _save_gif(images: list[Image.Image], path: Path, duration_ms: int) -> Path:
    """An animated GIF of the frames, looping, the last one held three times as long."""
    durations = [duration_ms] * (len(images) - 1) + [duration_ms * 3]
    with atomic_file(path) as tmp:
        images[0].save(tmp, format="GIF", save_all=True, append_images=images[1:],
                       duration=durations, loop=0)
    return path
