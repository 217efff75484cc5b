"""The area-depth graph of a section: excess area against depth with the fitted line
(Chamberlin 1910; Epard & Groshong 1993), as ``area_depth.png`` for the report.

Example::

    from mapsection.render.area_depth import draw_area_depth
    draw_area_depth(report.area_balance.detachment, "out/A/area_depth.png")
"""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure

from .._atomic import atomic_file
from ..checks.area import DetachmentFit

__all__ = ["area_depth_figure", "draw_area_depth"]


def draw_area_depth(fit: DetachmentFit, path: str | os.PathLike, section: str = "") -> Path:
    """A PNG of excess area against depth with the fitted line, drawn down to zero excess
    area, where it meets the detachment (Epard & Groshong 1993): the detachment's depth is
    marked and labelled, the displacement (the line's slope) written on the graph.

    Parameters
    ----------
    fit : DetachmentFit
        The area-balance check's fit.
    path : path
        The PNG to write.
    section : str
        The section's name, in the title.
    """
    path = Path(path)
    fig = area_depth_figure(fit, section)
    with atomic_file(path) as tmp:
        fig.savefig(tmp, format="png", dpi=110, pil_kwargs={"compress_level": 3})
    return path


def area_depth_figure(fit: DetachmentFit, section: str = "") -> Figure:
    """The area-depth graph as a matplotlib Figure (see :func:`draw_area_depth`)."""
    z = np.array([p.depth_m for p in fit.points])
    s = np.array([p.excess_area_m2 for p in fit.points]) / 1e6
    fig = Figure(figsize=(5.2, 4.2))
    FigureCanvasAgg(fig)
    # Fixed margins instead of tight_layout (which draws the figure once more to measure it).
    fig.subplots_adjust(left=0.16, right=0.8, bottom=0.13, top=0.84)  # room for labels
    ax = fig.add_subplot()
    ax.plot(s, z, "o", color="#1a1a8c", zorder=3, label="horizons")
    for p in fit.points:
        if p.top_of:
            ax.annotate(p.top_of, (p.excess_area_m2 / 1e6, p.depth_m), fontsize=7,
                        textcoords="offset points", xytext=(5, 2))
    zd, disp = fit.depth_to_detachment_m, fit.displacement_m
    if np.isfinite(zd) and np.isfinite(disp):
        # The line S = D (z_d - z) from the shallowest horizon down to S = 0 at z_d; a
        # doubtful fit is dashed.
        zz = np.array([min(z.min(), zd), max(z.max(), zd)])
        style = "-" if fit.reliable else "--"
        ax.plot(disp * (zd - zz) / 1e6, zz, style, color="#b00000", linewidth=1.2,
                gid="fit-line")
        ax.plot([0.0], [zd], marker="D", color="#b00000", ms=6, zorder=4)
        ax.axhline(zd, color="#b00000", linewidth=0.6, linestyle=":")
        word = "detachment" if fit.reliable else "detachment (not trusted)"
        ax.annotate(f"{word}\n{zd:.0f} m below {fit.datum}\n(elevation "
                    f"{fit.detachment_elevation_m:.0f} m)", (0.0, zd), xytext=(8, -4),
                    textcoords="offset points", fontsize=7, color="#b00000", va="top")
        ax.text(0.03, 0.97, f"displacement D = {disp:.0f} m\n(slope of the line)\n"
                f"R² = {fit.r_squared:.3f}", transform=ax.transAxes, ha="left",
                va="top", fontsize=7.5,
                bbox={"boxstyle": "round,pad=0.3", "facecolor": "white", "linewidth": 0.5})
    head = f"Section {section}: " if section else ""
    verdict = ("" if fit.reliable else "\ndetachment not determined (see the report)")
    ax.set_title(f"{head}excess area against depth{verdict}", fontsize=9, y=1.0)
    ax.axvline(0.0, color="#777777", linewidth=0.5)
    ax.set_xlim(left=min(0.0, float(s.min())) - 0.05 * max(float(np.ptp(s)), 1e-3))
    zs = np.append(z, zd) if np.isfinite(zd) else z
    span = max(float(np.ptp(zs)), 1.0)
    ax.set_ylim(float(zs.max()) + 0.22 * span, float(zs.min()) - 0.06 * span)  # depth down
    ax.set_xlabel("excess area (km²)")
    ax.set_ylabel(f"depth below {fit.datum} (m)", fontsize=8)
    return fig
