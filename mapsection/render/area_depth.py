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

__all__ = ["draw_area_depth"]


def draw_area_depth(fit: DetachmentFit, path: str | os.PathLike) -> Path:
    """A small PNG: excess area against depth with the fitted line (for the report)."""
    path = Path(path)
    z = np.array([p.depth_m for p in fit.points])
    s = np.array([p.excess_area_m2 for p in fit.points]) / 1e6
    fig = Figure(figsize=(4.2, 3.4))
    FigureCanvasAgg(fig)
    # Fixed margins instead of tight_layout (which draws the figure once more to measure it).
    fig.subplots_adjust(left=0.19, right=0.8, bottom=0.14, top=0.87)  # room for labels
    ax = fig.add_subplot()
    ax.plot(s, z, "o", color="#1a1a8c")
    for p in fit.points:
        if p.top_of:
            ax.annotate(p.top_of, (p.excess_area_m2 / 1e6, p.depth_m), fontsize=7,
                        textcoords="offset points", xytext=(4, 2))
    if np.isfinite(fit.depth_to_detachment_m) and np.isfinite(fit.displacement_m):
        # A trusted line is drawn down to the detachment; a doubtful one only across the data.
        zd = fit.depth_to_detachment_m if fit.reliable else z.mean()
        zz = np.array([min(z.min(), zd), max(z.max(), zd)])
        style = "-" if fit.reliable else "--"
        ax.plot(fit.displacement_m * (fit.depth_to_detachment_m - zz) / 1e6, zz, style,
                color="#b00000", linewidth=1)
        if fit.reliable:
            ax.axhline(fit.depth_to_detachment_m, color="#b00000", linewidth=0.6, linestyle=":")
    if fit.reliable:
        title = (f"detachment {fit.depth_to_detachment_m:.0f} m deep (elevation "
                 f"{fit.detachment_elevation_m:.0f} m)\nD = {fit.displacement_m:.0f} m, "
                 f"R² = {fit.r_squared:.3f}")
    else:
        title = f"detachment not determined\n(R² = {fit.r_squared:.3f}; see the report)"
    ax.set_title(title, fontsize=8, y=1.0)
    ax.axvline(0.0, color="#777777", linewidth=0.5)
    ax.axhline(0.0, color="#777777", linewidth=0.5)
    ax.invert_yaxis()
    ax.set_xlabel("excess area (km²)")
    ax.set_ylabel(f"depth below {fit.datum} (m)", fontsize=8)
    with atomic_file(path) as tmp:
        fig.savefig(tmp, format="png", dpi=110, pil_kwargs={"compress_level": 3})
    return path
