"""The section figure: one page per section, written as PNG, SVG and PDF.

The page holds the topographic profile from the DEM, the unit polygons filled
with their colours, the horizons (projected parts above the ground dashed), the
faults with half-arrows of relative motion, the projected bedding dips as short
ticks at their apparent dip, the section's ends named with their bearings, the
vertical exaggeration, a scale bar, a location inset on the geologic map, a
legend from the stratigraphic column (youngest at top) and the caution.

Symbols follow the conventions of the FGDC Digital Cartographic Standard for
Geologic Map Symbolization (FGDC-STD-013-2006); see :mod:`mapsection.render.colours`.
The page's geometry is :mod:`mapsection.render.layout`.

Vertical exaggeration is applied once, as the axes' aspect ratio, so that every
element -- ground, horizons, faults and dip ticks -- is exaggerated alike: a dip
tick of apparent dip ``a`` appears on the page at ``atan(VE * tan a)``.

In the SVG each horizon is a group with id ``horizon-<n>`` (n = its index in
``draft.horizons``), each dip tick ``dip-<n>`` (index in ``draft.dips``), each
fault ``fault-<n>``, so the figure's content can be counted or styled.

Example (with a draft from :func:`mapsection.build.build_section`)::

    from mapsection.render.section import draw_section
    draw_section(draft, "out/A/section")   # out/A/section.png, .svg, .pdf
"""

from __future__ import annotations

import os
from pathlib import Path

import matplotlib
import numpy as np
from matplotlib.figure import Figure
from matplotlib.patches import Rectangle

from .._atomic import atomic_file
from ..draft import Draft
from ..errors import ParameterError
from ..mapdata import MapData
from . import colours as C
from .fonts import pdf_fonts
from .layout import MARGIN, MM, SheetLayout, sheet_layout
from .location import _inset
from .section_margin import (
    _draw_frame,
    _draw_scale,
    _legend,
    _legend_rows,
    _title_block,
    _title_rows,
)
from .section_panel import (
    LABEL_MIN_AREA_MM2,
    _draw_dips,
    _draw_faults,
    _draw_misfits,
    _draw_pin_and_loose,
    _draw_unit_labels,
    _draw_units_and_horizons,
    _misfits,
    _Page,
    _pin_and_loose,
    _vertical_range,
    constrained_elevation,
)
from .sheet import SheetOptions, TitleInfo, sheet_size_mm

# The public names, some drawn from the modules the sheet is built from.
__all__ = ["FORMATS", "LABEL_MIN_AREA_MM2", "constrained_elevation", "draw_section",
           "plan_sheet", "section_figure"]

matplotlib.use("Agg")  # headless: figures are only ever written to files

FORMATS = ("png", "svg", "pdf")
PNG_DPI = 120  # the PNG (for screens and the report): at most PNG_MAX_PX wide
PNG_MAX_PX = 2600


def _plan(draft: Draft, sheet: SheetOptions, info: TitleInfo, checks=None):
    """The sheet's layout and what it was sized from: (layout, elevation limits, palette,
    legend rows, misfits)."""
    ve = float(draft.ve or 1.0)
    extra = sorted({u.unit for u in draft.units} - set(draft.column.names))
    palette = C.unit_colours(draft.column, extra)
    xspan = max(float(draft.line.length), 1.0)
    zbot, ztop = _vertical_range(draft)
    zspan = max(ztop - zbot, 1.0)
    ylim = (zbot, ztop + 0.15 * zspan)
    misfits, _ = _misfits(checks)
    dips = draft.dips
    shift = 0.0
    if len(dips):
        zg = draft.profile.elevation_at(np.asarray(dips.distance_m, float))
        dz = np.abs(np.asarray(dips.elevation_m, float) - zg)
        shift = float(np.nanmax(dz)) if np.any(np.isfinite(dz)) else 0.0
    legend_rows = _legend_rows(draft, palette, shift, bool(misfits))
    wmm, hmm = sheet_size_mm(sheet.sheet, sheet.portrait)
    W, H = wmm * MM, hmm * MM
    side_w = float(np.clip(0.27 * W, 70 * MM, 125 * MM)) if not sheet.portrait \
        else min(110 * MM, 0.45 * (W - 2 * MARGIN))
    n_title = len(_title_rows(draft, None, info, side_w - 3 * MM))
    lay = sheet_layout(W, H, xspan, ylim[1] - ylim[0], ve, len(legend_rows), n_title,
                       scale=sheet.scale, portrait=sheet.portrait)
    return lay, ylim, palette, legend_rows, misfits


def plan_sheet(draft: Draft, sheet: SheetOptions | None = None,
               info: TitleInfo | None = None) -> SheetLayout:
    """The sheet's layout for ``draft`` without drawing it: its scale and boxes. Raises
    ParameterError when the section does not fit the sheet at the scale asked."""
    return _plan(draft, sheet or SheetOptions(), info or TitleInfo())[0]


def section_figure(draft: Draft, map_data: MapData | None = None, *,
                   sheet: SheetOptions | None = None, info: TitleInfo | None = None,
                   checks=None) -> Figure:
    """Build the section sheet as a matplotlib Figure (not saved).

    Parameters
    ----------
    draft : Draft
        The section.
    map_data : MapData, optional
        The geologic map for the location map.
    sheet : SheetOptions, optional
        Sheet, orientation, scale and constrained depth (default: landscape A3 at the
        largest standard scale that fits).
    info : TitleInfo, optional
        The title block's project title, sources, vertical datum and date.
    checks : CheckReport, optional
        The section's checks: a failed draft gets a FAIL mark and its contact misfits.
    """
    sheet = sheet or SheetOptions()
    info = info or TitleInfo()
    ve = float(draft.ve or 1.0)
    lay, ylim, palette, legend_rows, misfits = _plan(draft, sheet, info, checks)
    W, H = lay.width, lay.height
    x0, x1 = 0.0, float(draft.line.length)
    xspan = max(x1 - x0, 1.0)
    z_c = (sheet.constrained_elevation if sheet.constrained_elevation is not None
           else constrained_elevation(draft))
    pg = _Page(draft, ve, lay.scale, lay, z_c, palette, ylim[0])
    fig = Figure(figsize=(W, H))
    # The neatline, 6 mm inside the sheet's edge.
    fig.add_artist(Rectangle((6 * MM / W, 6 * MM / H), 1 - 12 * MM / W, 1 - 12 * MM / H,
                             transform=fig.transFigure, facecolor="none", edgecolor="#333333",
                             linewidth=0.6, gid="neatline"))
    ax = fig.add_axes((lay.axes[0] / W, lay.axes[1] / H, lay.axes[2] / W, lay.axes[3] / H))
    _draw_units_and_horizons(ax, pg)
    _draw_faults(ax, pg)
    _draw_dips(ax, pg)
    _draw_unit_labels(ax, pg)
    _draw_misfits(ax, pg, misfits)
    _draw_pin_and_loose(ax, pg, _pin_and_loose(checks))
    _draw_frame(fig, ax, pg, (x0, x1), ylim, info, checks)
    _draw_scale(fig, ax, pg, x0, xspan)
    _legend(fig, legend_rows, lay.legend)
    _title_block(fig, _title_rows(draft, lay.scale, info, lay.title_block[2] - 3 * MM),
                 lay.title_block)
    if map_data is not None:
        _inset(fig, draft, map_data, palette, lay.inset, misfits)
    return fig


def draw_section(draft: Draft, path_stem: str | os.PathLike, map_data: MapData | None = None, *,
                 formats: tuple[str, ...] = FORMATS, sheet: SheetOptions | None = None,
                 info: TitleInfo | None = None, checks=None) -> list[Path]:
    """Write the section sheet to ``path_stem.png``, ``.svg`` and ``.pdf`` (atomically).

    One figure is built (:func:`section_figure`) and saved once per format. The PDF's page
    is the sheet itself; fonts are embedded as TrueType (Type 42) in the PDF and kept as
    text in the SVG. Returns the paths written.
    """
    bad = [f for f in formats if f not in FORMATS]
    if bad:
        raise ParameterError(f"figure format {bad[0]!r}: must be one of {', '.join(FORMATS)}")
    fig = section_figure(draft, map_data, sheet=sheet, info=info, checks=checks)
    stem = Path(path_stem)
    out = []
    # No creation dates: rebuilding the same draft gives byte-identical files.
    meta = {"png": None, "svg": {"Date": None}, "pdf": {"CreationDate": None}}
    png_dpi = min(PNG_DPI, PNG_MAX_PX / fig.get_figwidth())
    rc = {"svg.fonttype": "none", "svg.hashsalt": "mapsection"}
    with matplotlib.rc_context(rc), pdf_fonts():
        for fmt in formats:
            path = stem.with_name(f"{stem.name}.{fmt}")
            with atomic_file(path) as tmp:
                fig.savefig(tmp, format=fmt, dpi=png_dpi, metadata=meta[fmt],
                            # Lighter PNG compression: a little larger, much faster.
                            **({"pil_kwargs": {"compress_level": 3}} if fmt == "png" else {}))
            out.append(path)
    return out
