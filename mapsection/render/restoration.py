"""The restored section as a figure: ``restored.png``, ``.svg`` and ``.pdf``.

Draws a :class:`mapsection.checks.restore.Restoration` (Dahlstrom 1969): the restored
units and beds, the pin line and the restored loose line, with the caution.

Example::

    from mapsection.checks.restore import restore_section
    from mapsection.render.restoration import draw_restoration
    draw_restoration(restore_section(draft), "out/A/restored")
"""

from __future__ import annotations

import os
import textwrap
from pathlib import Path

import matplotlib
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.collections import LineCollection, PathCollection
from matplotlib.figure import Figure
from matplotlib.lines import Line2D

from .._atomic import atomic_file
from ..caution import CAUTION
from ..checks.geometry import line_xy
from ..checks.restore import Restoration
from .colours import unit_palette
from .shapes import polygon_path

__all__ = ["draw_restoration"]


def draw_restoration(restoration: Restoration, path_stem: str | os.PathLike) -> list[Path]:
    """Draw the restored section to ``<stem>.png``, ``.svg`` and ``.pdf``; returns the paths."""
    r = restoration
    names = sorted({p.top_of for p in r.pieces})
    cols = unit_palette(r.column, names)
    fig = Figure(figsize=(10, 4.2))
    FigureCanvasAgg(fig)
    fig.subplots_adjust(bottom=0.2)
    ax = fig.add_subplot()
    # One collection for all the unit fills and one for all the beds: far fewer artists.
    paths, faces = [], []
    for u in r.units:
        path = polygon_path(u.geometry)
        if path is not None:
            paths.append(path)
            faces.append(cols.get(u.unit, "#dddddd"))
    if paths:
        ax.add_collection(PathCollection(paths, facecolors=faces, edgecolors="none",
                                         alpha=0.85, linewidths=0), autolim=True)
    beds = [line_xy(p.geometry) for p in r.pieces if not p.geometry.is_empty]
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
