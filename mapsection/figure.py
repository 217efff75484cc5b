"""The section figure: one page per section, written as PNG, SVG and PDF.

The page holds the topographic profile from the DEM, the unit polygons filled
with their colours, the horizons (projected parts above the ground dashed), the
faults with half-arrows of relative motion, the projected bedding dips as short
ticks at their apparent dip, the section's ends named with their bearings, the
vertical exaggeration, a scale bar, a location inset on the geologic map, a
legend from the stratigraphic column (youngest at top) and the caution.

Symbols follow the conventions of the FGDC Digital Cartographic Standard for
Geologic Map Symbolization (FGDC-STD-013-2006); see :mod:`mapsection.colours`.

Vertical exaggeration is applied once, as the axes' aspect ratio, so that every
element -- ground, horizons, faults and dip ticks -- is exaggerated alike: a dip
tick of apparent dip ``a`` appears on the page at ``atan(VE * tan a)``.

In the SVG each horizon is a group with id ``horizon-<n>`` (n = its index in
``draft.horizons``), each dip tick ``dip-<n>`` (index in ``draft.dips``), each
fault ``fault-<n>``, so the figure's content can be counted or styled.

Example (with a draft from :func:`mapsection.build.build_section`)::

    from mapsection.figure import draw_section
    draw_section(draft, "out/A/section")   # out/A/section.png, .svg, .pdf
"""

from __future__ import annotations

import math
import os
import textwrap
from dataclasses import dataclass
from pathlib import Path

import matplotlib
import numpy as np
import shapely
from matplotlib.collections import LineCollection, PatchCollection
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import PathPatch, Rectangle
from matplotlib.patches import Polygon as MplPolygon
from matplotlib.path import Path as MplPath
from matplotlib.transforms import blended_transform_factory

from . import CAUTION
from . import colours as C
from ._atomic import atomic_file
from .draft import Draft
from .errors import ParameterError
from .mapdata import MapData

matplotlib.use("Agg")  # headless: figures are only ever written to files

FORMATS = ("png", "svg", "pdf")
PNG_DPI = 150


# --- small helpers ------------------------------------------------------------
def ve_text(ve: float) -> str:
    """How the figure states its vertical exaggeration."""
    return "Vertical exaggeration 1:1" if math.isclose(ve, 1.0) else f"V.E. {ve:g}×"


def end_names(name: str) -> tuple[str, str]:
    """Names of the section's two ends: ``A`` and ``A′``."""
    name = name or "A"
    return name, f"{name}′"


def nice_length(span: float) -> float:
    """A round scale-bar length (1, 2 or 5 times a power of ten) near a fifth of ``span``."""
    target = max(span / 5.0, 1e-9)
    p = 10.0 ** math.floor(math.log10(target))
    for m in (5.0, 2.0, 1.0):
        if m * p <= target:
            return m * p
    return p


# --- page layout (inches) ------------------------------------------------------------
_LEGEND_FONT = 7.0  # points
_EM = _LEGEND_FONT / 72.0  # the legend font's em, inches
LEGEND_PITCH = 1.5 * _EM  # one text line plus the label spacing of a legend
LEGEND_TITLE = 0.17  # the legend's title line
LEGEND_COLUMN_WIDTH = 2.45  # a swatch and a 38-character label
INSET_SIZE = 2.5  # the location inset is square
_MARGIN_LEFT, _MARGIN_RIGHT, _MARGIN_TOP = 0.8, 0.25, 0.8  # tick labels; end names, title
_GAP = 0.5  # between the section and the inset column
_XLABEL = 0.48  # tick labels and the axis label under the section
_ROW = 0.3  # the VE statement and the scale bar
_CAUTION = 0.32  # the caution (two lines) at the foot of the page
_PAGE_WIDTH = 11.2
_SECTION_HEIGHT = (1.0, 5.5)  # the section's box, least and most


@dataclass(frozen=True)
class PageLayout:
    """Where everything goes on the page, in inches from its lower left corner.

    ``axes`` (left, bottom, width, height) is the section's box, whose shape is the
    section's exaggerated shape; ``yspan`` its elevation range in metres (at least the
    one asked, more where a very long, flat section would be thinner than the least
    height); ``below`` the height of the VE / scale-bar row, just under the section;
    ``legend`` the top left corner of the legend, with ``legend_rows`` rows a column
    (the symbols start a column of their own when the legend is under the section);
    ``inset`` (left, bottom, size) of the location inset, beside the section.
    """

    width: float
    height: float
    axes: tuple[float, float, float, float]
    yspan: float
    below: float
    legend: tuple[float, float]
    legend_rows: int
    inset: tuple[float, float, float]


def page_layout(xspan: float, yspan: float, ve: float, legend_rows: tuple[int, int],
                with_inset: bool = True) -> PageLayout:
    """Size the page to the section: its box ``xspan`` wide and ``yspan * ve`` high at one
    scale; the inset beside it (top-aligned) and the legend (``legend_rows``: the number of
    unit rows and of symbol rows) beside it under the inset where that fits within the
    section's height, else under the section in columns, units apart from symbols."""
    side = _GAP + INSET_SIZE if with_inset else 0.0
    wa = _PAGE_WIDTH - _MARGIN_LEFT - _MARGIN_RIGHT - side
    ha = wa * yspan * ve / xspan
    lo, hi = _SECTION_HEIGHT
    if ha > hi:  # a tall section: narrower page, same scale both ways times VE
        wa, ha = wa * hi / ha, hi
    elif ha < lo:  # a long, flat one: more air above the ground keeps the scale exact
        yspan, ha = yspan * lo / ha, lo
    block = _MARGIN_TOP + ha + _XLABEL + _ROW  # the section with its labels and scale row
    n_units, n_symbols = legend_rows
    inset_top = _MARGIN_TOP + (INSET_SIZE + 0.35 if with_inset else 0.0)  # and a gap
    one_column = LEGEND_TITLE + (n_units + n_symbols) * LEGEND_PITCH
    beside = with_inset and inset_top + one_column <= block
    if beside:
        per_column, left_h, right_h = n_units + n_symbols, block, inset_top + one_column
    else:
        # The fewest rows that put the units, then the symbols, in their own columns.
        columns = max(2, int((wa + 0.5 * _MARGIN_LEFT) // LEGEND_COLUMN_WIDTH))
        per_column = max(n_units, n_symbols)
        for rows in range(1, per_column + 1):
            if -(-n_units // rows) + -(-n_symbols // rows) <= columns:
                per_column = rows
                break
        left_h = block + 0.15 + LEGEND_TITLE + per_column * LEGEND_PITCH
        right_h = inset_top
    # Beside a flat section a smaller inset keeps the page from growing below it.
    size = INSET_SIZE if beside else float(np.clip(left_h - _MARGIN_TOP, 1.6, INSET_SIZE))
    right_h -= INSET_SIZE - size
    height = max(left_h, right_h) + _CAUTION
    width = _MARGIN_LEFT + wa + side + _MARGIN_RIGHT
    ax_bottom = height - _MARGIN_TOP - ha
    right_x = _MARGIN_LEFT + wa + _GAP
    legend = ((right_x, height - inset_top) if beside
              else (_MARGIN_LEFT, height - block - 0.15))
    return PageLayout(width, height, (_MARGIN_LEFT, ax_bottom, wa, ha), yspan,
                      ax_bottom - _XLABEL - _ROW / 2, legend, per_column,
                      (right_x, height - _MARGIN_TOP - size, size))


def tick_segment(d, z, apparent_dip, ve: float, half_length: float):
    """End points (data coordinates) of dip ticks centred on (d, z).

    The tick's direction in data space has slope ``-tan(a)`` (positive apparent dip
    descends toward increasing distance); drawn on axes whose aspect is ``ve`` it
    appears at ``atan(ve * tan a)``. ``half_length`` is in distance units on the page,
    so every tick looks the same length whatever its dip.
    """
    a = np.radians(np.asarray(apparent_dip, float))
    theta = np.arctan(ve * np.tan(a))  # angle on the page
    dx = half_length * np.cos(theta)
    dy = half_length * np.sin(theta) / ve
    d = np.asarray(d, float)
    z = np.asarray(z, float)
    return np.stack([d - dx, z + dy], -1), np.stack([d + dx, z - dy], -1)


def _polygon_path(geom) -> MplPath | None:
    """One matplotlib compound path (exteriors and holes) for a Polygon/MultiPolygon."""
    # Fills use the nonzero winding rule: holes must wind against their exterior,
    # whatever the source (clipping and simplification do not keep ring orientation).
    geom = shapely.orient_polygons(geom)
    polys = [p for p in shapely.get_parts(geom) if not p.is_empty and p.geom_type == "Polygon"]
    if not polys:
        return None
    verts, codes = [], []
    for p in polys:
        for ring in (p.exterior, *p.interiors):
            xy = np.asarray(ring.coords)
            if len(xy) < 3:
                continue
            c = np.full(len(xy), MplPath.LINETO, dtype=np.uint8)
            c[0], c[-1] = MplPath.MOVETO, MplPath.CLOSEPOLY
            verts.append(xy)
            codes.append(c)
    if not verts:
        return None
    return MplPath(np.concatenate(verts), np.concatenate(codes))


def _lines_xy(geom) -> list[np.ndarray]:
    return [np.asarray(g.coords)[:, :2] for g in shapely.get_parts(geom)
            if not g.is_empty and g.geom_type == "LineString"]


# --- fault sense symbols ----------------------------------------------------------
def _motion_arrows(xy: np.ndarray, kind: str, ve: float, size: float) -> list[np.ndarray]:
    """Half-arrows of relative motion on either side of a fault in section view.

    Built in page-proportional space (x, VE*y) so the arrows keep their shape, then
    returned in data coordinates. Reverse/thrust: hanging wall up the dip; normal:
    hanging wall down the dip.
    """
    p = np.column_stack([xy[:, 0], xy[:, 1] * ve])
    seg = np.diff(p, axis=0)
    L = np.hypot(*seg.T)
    if L.sum() <= 0:
        return []
    s = np.concatenate([[0], np.cumsum(L)])
    mid = s[-1] / 2
    i = min(int(np.searchsorted(s, mid, side="right")) - 1, len(seg) - 1)
    t = seg[i] / L[i]
    m = p[i] + t * (mid - s[i])
    if t[1] < 0:
        t = -t  # t points up the fault
    if abs(t[0]) < 1e-6:
        return []  # vertical: no hanging wall to name
    n = np.array([-t[1], t[0]])
    if n[1] < 0:
        n = -n  # n points into the hanging wall (the side above the fault)
    hw_dir = t if kind in ("thrust", "reverse") else -t
    out = []
    for side, direction in ((1.0, hw_dir), (-1.0, -hw_dir)):
        c = m + side * n * size * 0.45
        tail, tip = c - direction * size / 2, c + direction * size / 2
        barb = tip - direction * size * 0.35 + side * n * size * 0.25
        pts = np.array([tail, tip, barb])
        pts[:, 1] /= ve
        out.append(pts)
    return out


def _map_fault_marks(xy: np.ndarray, kind: str, dip_direction: float, size: float):
    """Map-view sense marks: triangles (thrust) or bar-and-ball (normal) on the dip side."""
    ls = shapely.LineString(xy)
    if ls.length <= 0 or not np.isfinite(dip_direction):
        return [], []
    dd = np.radians(dip_direction)
    down = np.array([np.sin(dd), np.cos(dd)])
    if kind in ("thrust", "reverse"):
        n_marks = max(int(ls.length / (size * 3)), 1)
        at = (np.arange(n_marks) + 0.5) * ls.length / n_marks
    else:
        at = np.array([ls.length / 2])
    pts = shapely.get_coordinates(ls.interpolate(at))
    ahead = shapely.get_coordinates(ls.interpolate(np.minimum(at + size / 2, ls.length)))
    behind = shapely.get_coordinates(ls.interpolate(np.maximum(at - size / 2, 0)))
    tan = ahead - behind
    tan /= np.maximum(np.hypot(*tan.T), 1e-12)[:, None]
    nrm = np.column_stack([-tan[:, 1], tan[:, 0]])
    nrm *= np.sign(nrm @ down + 1e-12)[:, None]  # toward the hanging-wall / downthrown side
    polys, balls = [], []
    if kind in ("thrust", "reverse"):
        for p0, t0, n0 in zip(pts, tan, nrm, strict=True):
            polys.append(np.array([p0 - t0 * size / 2, p0 + t0 * size / 2, p0 + n0 * size * 0.8]))
    else:
        for p0, n0 in zip(pts, nrm, strict=True):
            polys.append(np.array([p0, p0 + n0 * size]))
            balls.append(p0 + n0 * size)
    return polys, balls


# --- the figure -------------------------------------------------------------------
def section_figure(draft: Draft, map_data: MapData | None = None) -> Figure:
    """Build the section page as a matplotlib Figure (not saved)."""
    ve = float(draft.ve or 1.0)
    prof = draft.profile
    col_names = draft.column.names
    extra = sorted({u.unit for u in draft.units} - set(col_names))
    palette = C.unit_colours(draft.column, extra)

    x0, x1 = 0.0, float(draft.line.length)
    xspan = max(x1 - x0, 1.0)

    # Vertical extent: from the section's base to a little above the highest ground.
    zg = prof.z[np.isfinite(prof.z)]
    ztop = float(zg.max()) if zg.size else 0.0
    zlow_candidates = [draft.base_elevation_m] if np.isfinite(draft.base_elevation_m) else []
    for h in draft.horizons:
        if not h.above_ground and not h.geometry.is_empty:
            zlow_candidates.append(h.geometry.bounds[1])
    for u in draft.units:
        if not u.geometry.is_empty:
            zlow_candidates.append(u.geometry.bounds[1])
    zbot = min(zlow_candidates) if zlow_candidates else (float(zg.min()) if zg.size else -1000.0)
    zspan = max(ztop - zbot, 1.0)
    ylim = (zbot, ztop + 0.18 * zspan)

    # Page layout in inches: the page is sized to the section's exaggerated shape.
    legend_rows = _legend_rows(draft, palette)
    page = page_layout(xspan, ylim[1] - ylim[0], ve, tuple(map(len, legend_rows)),
                       map_data is not None)
    ylim = (ylim[0], ylim[0] + page.yspan)
    fig = Figure(figsize=(page.width, page.height))
    fh = page.height
    ax = fig.add_axes(tuple(v / d for v, d in zip(page.axes, (page.width, fh) * 2, strict=True)))
    below_y = page.below / fh  # figure fraction of the VE / scale-bar row

    # Units.
    patches, faces = [], []
    for u in draft.units:
        path = _polygon_path(u.geometry)
        if path is not None:
            patches.append(PathPatch(path))
            faces.append(palette.get(u.unit, "#cccccc"))
    if patches:
        pc = PatchCollection(patches, facecolors=faces, edgecolors="none", zorder=1)
        pc.set_gid("units")
        ax.add_collection(pc)

    # Axial surfaces (thin, dotted), under the horizons.
    for i, a in enumerate(draft.axial_surfaces):
        for xy in _lines_xy(a.geometry):
            (ln,) = ax.plot(xy[:, 0], xy[:, 1], zorder=2, **C.AXIAL_SURFACE.kwargs())
            ln.set_gid(f"axial-{i}")

    # Horizons: below ground solid; projected above ground dashed.
    for i, h in enumerate(draft.horizons):
        style = C.CONTACT_PROJECTED if h.above_ground else C.CONTACT
        xy_parts = _lines_xy(h.geometry)
        if not xy_parts:
            continue
        if len(xy_parts) == 1:
            (art,) = ax.plot(xy_parts[0][:, 0], xy_parts[0][:, 1], zorder=3, **style.kwargs())
        else:
            art = LineCollection(xy_parts, zorder=3, linewidths=style.width, colors=style.colour,
                                 linestyles="--" if style.dashes else "-")
            ax.add_collection(art)
        art.set_gid(f"horizon-{i}")

    # Ground.
    ax.plot(prof.distance, prof.z, zorder=5, **C.GROUND.kwargs())

    # Faults and their sense.
    arrow_size = 0.035 * xspan
    for i, f in enumerate(draft.faults):
        parts = _lines_xy(f.geometry)
        for xy in parts:
            (ln,) = ax.plot(xy[:, 0], xy[:, 1], zorder=6, solid_capstyle="butt",
                            **C.FAULT.kwargs())
            ln.set_gid(f"fault-{i}")
        kind = C.fault_kind(f.sense)
        if kind and parts:
            for arr in _motion_arrows(parts[0], kind, ve, arrow_size):
                (ln,) = ax.plot(arr[:, 0], arr[:, 1], color="black", linewidth=1.0, zorder=7)
                ln.set_gid(f"fault-{i}-motion")
        if f.name and parts:
            top = parts[0][np.argmax(parts[0][:, 1])]
            ax.text(top[0], top[1] + 0.03 * zspan, f.name, fontsize=7, ha="center",
                    va="bottom", style="italic", zorder=8,
                    bbox={"boxstyle": "round,pad=0.1", "facecolor": "white", "alpha": 0.7,
                          "linewidth": 0})

    # Projected dips: short ticks at their apparent dip, with the section's VE.
    dips = draft.dips
    if len(dips):
        a0, a1 = tick_segment(dips.distance_m, dips.elevation_m, dips.apparent_dip, ve,
                              0.012 * xspan)
        poor = np.asarray(dips.poorly_constrained, bool)
        for i in range(len(dips)):
            if not (np.all(np.isfinite(a0[i])) and np.all(np.isfinite(a1[i]))):
                continue
            (ln,) = ax.plot([a0[i, 0], a1[i, 0]], [a0[i, 1], a1[i, 1]], zorder=9,
                            solid_capstyle="butt", alpha=0.45 if poor[i] else 1.0,
                            **C.DIP_TICK.kwargs())
            ln.set_gid(f"dip-{i}")

    # Bends of the section line.
    for d in draft.line.cumulative[1:-1]:
        ax.axvline(d, color="#999999", linewidth=0.6, linestyle=(0, (2, 2)), zorder=4)
        ax.text(d, ylim[1], " bend", fontsize=6, color="#666666", va="top", ha="left")

    ax.set_xlim(x0, x1)
    ax.set_ylim(*ylim)
    ax.set_aspect(ve, adjustable="box", anchor="SW")
    ax.set_xlabel("Distance along section (m)")
    ax.set_ylabel("Elevation (m)")
    ax.tick_params(labelsize=7)

    # Ends named, with the bearings of the first and last segments.
    left, right = end_names(draft.name)
    az = draft.line.segment_azimuths
    for xa, ha, label, bearing in ((0.0, "left", left, az[0]), (1.0, "right", right, az[-1])):
        ax.annotate(label, (xa, 1.0), xycoords="axes fraction", xytext=(0, 13),
                    textcoords="offset points", ha=ha, va="bottom", fontsize=14,
                    fontweight="bold")
        ax.annotate(f"bearing {bearing:05.1f}°", (xa, 1.0), xycoords="axes fraction",
                    xytext=(0, 2), textcoords="offset points", ha=ha, va="bottom", fontsize=7)
    method = {"kink": "kink-band (dip-domain)", "arc": "arc (Busk)"}.get(draft.method,
                                                                         draft.method)
    ax.set_title(f"Draft section {left}–{right}  ·  {method} construction", fontsize=10,
                 pad=34, y=1.0)  # y given: no tick-label measuring to place the title

    # VE statement and scale bar below the axes (x in data, y in axes fraction).
    tr = blended_transform_factory(ax.transData, fig.transFigure)
    ax.text(x0, below_y, ve_text(ve), transform=tr, fontsize=8, va="center")
    L = nice_length(xspan)
    bh = 0.05 / fh
    for k in range(2):
        bar = Rectangle((x0 + 0.4 * xspan + k * L / 2, below_y - bh / 2), L / 2, bh, transform=tr,
                        clip_on=False, facecolor="black" if k == 0 else "white",
                        edgecolor="black", linewidth=0.6)
        bar.set_gid(f"scale-bar-{k}")
        ax.add_patch(bar)
    unit_label = f"{L / 1000:g} km" if L >= 1000 else f"{L:g} m"
    for xx, lab in ((0.0, "0"), (L, unit_label)):
        ax.text(x0 + 0.4 * xspan + xx, below_y - bh, lab, transform=tr, ha="center", va="top",
                fontsize=7)

    _legend(fig, legend_rows, page)
    if map_data is not None:
        _inset(fig, draft, map_data, palette, page)

    caution = "Caution: " + CAUTION
    fig.text(0.01, 0.012, "\n".join(textwrap.wrap(caution, 150)), fontsize=6, color="#444444",
             va="bottom")
    return fig


def _legend_rows(draft: Draft, palette: dict[str, str]
                 ) -> tuple[list[tuple[str, object]], list[tuple[str, object]]]:
    """The legend's rows: one swatch per unit of the column (youngest first), and the
    line symbols drawn on the page."""
    rows: list[tuple[str, object]] = []
    for u in draft.column.units:  # youngest first = top of the legend
        label = f"{u.name} ({u.age})" if u.age else u.name
        if len(label) > 38:
            label = label[:37] + "…"
        rows.append((label, palette[u.name]))
    symbols: list[tuple[str, object]] = [
        ("Ground (DEM profile)", C.GROUND),
        ("Horizon (top of unit)", C.CONTACT),
        ("Horizon projected above ground", C.CONTACT_PROJECTED),
        ("Fault, half-arrows: relative motion", C.FAULT),
        ("Projected bedding dip", C.DIP_TICK),
    ]
    if draft.axial_surfaces:
        symbols.append(("Axial surface", C.AXIAL_SURFACE))
    return rows, symbols


def _legend(fig: Figure, rows: tuple[list[tuple[str, object]], list[tuple[str, object]]],
            page: PageLayout) -> None:
    """The legend: the units (youngest at top), then the symbols, in columns of
    ``page.legend_rows`` rows; under the section the symbols start a new column.

    Laid out by hand in inches from the page's corner (rows of fixed pitch): the same
    look as a matplotlib legend, without its box layout, which measured every label
    again for each of the three formats.
    """
    tr = fig.dpi_scale_trans  # inches from the page's lower left corner
    x0, y0 = page.legend
    fig.text(x0, y0, "Units, youngest at top", transform=tr, fontsize=8, va="top", ha="left")
    units, symbols = rows
    per = page.legend_rows
    # In columns, empty slots close the units' last column; in one column none are needed.
    gap = 0 if per >= len(units) + len(symbols) else -len(units) % per
    for k, (label, sym) in enumerate([*units, *symbols]):
        slot = k if k < len(units) else k + gap
        x = x0 + (slot // per) * LEGEND_COLUMN_WIDTH
        yc = y0 - LEGEND_TITLE - (slot % per + 0.5) * LEGEND_PITCH
        if isinstance(sym, str):  # a unit's colour swatch
            art = Rectangle((x, yc - 0.35 * _EM), 2.0 * _EM, 0.7 * _EM, transform=tr,
                            facecolor=sym, edgecolor="#333333", linewidth=0.4)
        else:
            art = Line2D([x, x + 2.0 * _EM], [yc, yc], transform=tr, **sym.kwargs())
        art.set_gid(f"legend-{k}")
        fig.add_artist(art)
        fig.text(x + 2.8 * _EM, yc, label, transform=tr, fontsize=_LEGEND_FONT,
                 va="center_baseline", ha="left")


def _column(frame, name: str) -> np.ndarray:
    if name in frame.columns:
        return frame[name].to_numpy()
    return np.full(len(frame), None, dtype=object)


def _inset(fig: Figure, draft: Draft, map_data: MapData, palette: dict[str, str],
           page: PageLayout) -> None:
    """Location inset: the geologic map around the line, the line, its ends named."""
    left, bottom, size = page.inset
    iax = fig.add_axes((left / page.width, bottom / page.height, size / page.width,
                        size / page.height))
    line = draft.line
    v = line.vertices
    # A square extent (the inset box is square) around the line, with a margin.
    centre = (v.min(axis=0) + v.max(axis=0)) / 2
    half = 0.5 * float(np.max(v.max(axis=0) - v.min(axis=0))) + 0.15 * line.length
    xmin, ymin = centre - half
    xmax, ymax = centre + half
    box = shapely.box(xmin, ymin, xmax, ymax)
    geoms, names = map_data.unit_geoms, map_data.unit_names
    if len(geoms):
        idx = np.sort(map_data.unit_tree.query(box))
        # The map's polygons are often traced on a fine grid (tens of thousands of
        # vertices); at the inset's scale a quarter of a 150-dpi pixel is ~1/1500 of
        # its width, so simplifying to that loses nothing visible and draws far less.
        # (Plain Douglas-Peucker and a rectangle clip: 20x faster than the topology-
        # preserving forms, and drawing needs no valid geometry.)
        tol = (xmax - xmin) / 1500.0
        clipped = shapely.clip_by_rect(shapely.simplify(geoms[idx], tol, preserve_topology=False),
                                       xmin, ymin, xmax, ymax)
        patches, faces = [], []
        for g, nm in zip(clipped, names[idx], strict=True):
            path = _polygon_path(g)
            if path is not None:
                patches.append(PathPatch(path))
                faces.append(palette.get(nm, "#dddddd"))
        if patches:
            iax.add_collection(PatchCollection(patches, facecolors=faces, edgecolors="#666666",
                                               linewidths=0.2))
    faults = map_data.faults
    if faults is not None and len(faults):
        ff = dict(map_data.fault_fields or {})
        sense = _column(faults, ff.get("sense", "sense"))
        ddir = _column(faults, ff.get("dip_direction", "dip_direction"))
        size = 0.02 * max(xmax - xmin, ymax - ymin)
        tris, bars, balls = [], [], []
        for k, g in enumerate(faults.geometry.values):
            if g is None or g.is_empty or not g.intersects(box):
                continue
            for xy in _lines_xy(g):
                iax.plot(xy[:, 0], xy[:, 1], color="black", linewidth=1.2)
                kind = C.fault_kind(sense[k] if isinstance(sense[k], str) else None)
                if kind:
                    try:
                        ddv = float(ddir[k])
                    except (TypeError, ValueError):
                        ddv = float("nan")
                    polys, bl = _map_fault_marks(xy, kind, ddv, size)
                    (tris if kind in ("thrust", "reverse") else bars).extend(polys)
                    balls.extend(bl)
        if tris:
            iax.add_collection(PatchCollection([MplPolygon(t) for t in tris],
                                               facecolors="black", edgecolors="black"))
        if bars:
            iax.add_collection(LineCollection(bars, colors="black", linewidths=1.0))
        if balls:
            b = np.asarray(balls)
            iax.plot(b[:, 0], b[:, 1], "o", color="black", markersize=3)
    iax.plot(v[:, 0], v[:, 1], **C.SECTION_LINE.kwargs())
    left, right = end_names(draft.name)
    for p, lab in ((v[0], left), (v[-1], right)):
        iax.text(p[0], p[1], lab, fontsize=9, fontweight="bold", ha="center", va="center",
                 bbox={"boxstyle": "round,pad=0.15", "facecolor": "white", "alpha": 0.8,
                       "linewidth": 0})
    iax.set_xlim(xmin, xmax)
    iax.set_ylim(ymin, ymax)
    iax.set_aspect("equal", adjustable="box")
    iax.set_xticks([])
    iax.set_yticks([])
    iax.set_title("Location (geologic map)", fontsize=8, y=1.0)
    # North arrow: grid north of the project CRS.
    iax.annotate("N", xy=(0.93, 0.95), xytext=(0.93, 0.8), xycoords="axes fraction",
                 ha="center", va="center", fontsize=7,
                 bbox={"boxstyle": "round,pad=0.1", "facecolor": "white", "linewidth": 0},
                 arrowprops={"arrowstyle": "-|>", "linewidth": 0.8, "color": "black"})


def draw_section(draft: Draft, path_stem: str | os.PathLike, map_data: MapData | None = None, *,
                 formats: tuple[str, ...] = FORMATS) -> list[Path]:
    """Write the section figure to ``path_stem.png``, ``.svg`` and ``.pdf`` (atomically).

    One figure is built and saved once per format. Returns the paths written.
    """
    bad = [f for f in formats if f not in FORMATS]
    if bad:
        raise ParameterError(f"figure format {bad[0]!r}: must be one of {', '.join(FORMATS)}")
    fig = section_figure(draft, map_data)
    stem = Path(path_stem)
    out = []
    # No creation dates: rebuilding the same draft gives byte-identical files.
    meta = {"png": None, "svg": {"Date": None}, "pdf": {"CreationDate": None}}
    # Text stays text in the SVG (editable in a vector editor, searchable).
    with matplotlib.rc_context({"svg.fonttype": "none", "svg.hashsalt": "mapsection"}):
        for fmt in formats:
            path = stem.with_name(f"{stem.name}.{fmt}")
            with atomic_file(path) as tmp:
                fig.savefig(tmp, format=fmt, dpi=PNG_DPI, metadata=meta[fmt],
                            # Lighter PNG compression: a little larger, much faster.
                            **({"pil_kwargs": {"compress_level": 3}} if fmt == "png" else {}))
            out.append(path)
    return out
