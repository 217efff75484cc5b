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

import math
import os
import textwrap
from dataclasses import dataclass
from pathlib import Path

import matplotlib
import numpy as np
import shapely
import shapely.affinity
from matplotlib.collections import LineCollection, PatchCollection
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import PathPatch, Rectangle
from matplotlib.patches import Polygon as MplPolygon
from matplotlib.transforms import blended_transform_factory

from .. import __version__
from .._atomic import atomic_file
from ..caution import CAUTION
from ..draft import Draft
from ..errors import ParameterError
from ..extent import location_view_limit
from ..mapdata import MapData
from . import colours as C
from .fonts import pdf_fonts
from .layout import (
    AXIS_RIGHT,
    HEADER,
    LEGEND_EM,
    LEGEND_FONT,
    LEGEND_PITCH,
    LEGEND_TITLE,
    MARGIN,
    MM,
    TITLE_FONT,
    TITLE_PITCH,
    SheetLayout,
    compass_point,
    end_bearings,
    end_names,
    nice_length,
    sheet_layout,
    tick_segment,
    ve_text,
)
from .shapes import lines_xy, polygon_path, polygons_path
from .sheet import SheetOptions, TitleInfo, scale_text, sheet_size_mm

matplotlib.use("Agg")  # headless: figures are only ever written to files

FORMATS = ("png", "svg", "pdf")
PNG_DPI = 120  # the PNG (for screens and the report): at most PNG_MAX_PX wide
PNG_MAX_PX = 2600


# --- fault sense symbols ----------------------------------------------------------
def _motion_arrows(xy: np.ndarray, kind: str, ve: float, size: float,
                   at: float = 0.5) -> list[np.ndarray]:
    """Half-arrows of relative motion on either side of a fault in section view.

    Built in page-proportional space (x, VE*y), parallel to the fault's segment at
    fraction ``at`` of its page length, each shaft ``0.3 * size`` off the fault with its
    barb on the side away from it, then returned in data coordinates. ``size`` is the
    shaft's length in distance units (the page scale times the arrow's printed length).
    Reverse/thrust: hanging wall up the dip; normal: hanging wall down the dip.
    """
    p = np.column_stack([xy[:, 0], xy[:, 1] * ve])
    seg = np.diff(p, axis=0)
    L = np.hypot(*seg.T)
    if L.sum() <= 0:
        return []
    s = np.concatenate([[0], np.cumsum(L)])
    mid = s[-1] * at
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
        c = m + side * n * size * 0.2
        tail, tip = c - direction * size / 2, c + direction * size / 2
        barb = tip - direction * size * 0.35 + side * n * size * 0.22
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
# --- confidence -------------------------------------------------------------------
def constrained_elevation(draft: Draft) -> float:
    """The elevation below which the draft is not constrained by the map (the tool's
    default): the deepest point of the horizons that map contacts position, less the
    thickness of the unit under that horizon. Without contacts: the lowest ground less
    the thickest unit of the column."""
    mapped = {u for c in draft.geology.contacts for u in (c.unit_before, c.unit_after) if u}
    mapped |= {r.top_of for r in draft.residuals}
    thick = {u.name: u.thickness for u in draft.column.layered().units}
    low, unit = math.inf, None
    for h in draft.horizons:
        if h.above_ground or h.top_of not in mapped or h.geometry.is_empty:
            continue
        zb = h.geometry.bounds[1]
        if zb < low:
            low, unit = zb, h.top_of
    if unit is None:
        zg = draft.profile.z[np.isfinite(draft.profile.z)]
        ground = float(zg.min()) if zg.size else 0.0
        return ground - max(thick.values(), default=0.0)
    return low - thick.get(unit, 0.0)


def _split(geom, z_c: float) -> tuple[list[np.ndarray], list[np.ndarray]]:
    """The parts of a line above and below the elevation ``z_c``."""
    if geom.is_empty:
        return [], []
    b = geom.bounds
    big = 1e9
    above = shapely.clip_by_rect(geom, b[0] - 1, z_c, b[2] + 1, big)
    below = shapely.clip_by_rect(geom, b[0] - 1, -big, b[2] + 1, z_c)
    return lines_xy(shapely.line_merge(above) if above.geom_type == "MultiLineString"
                    else above), lines_xy(below)


# --- the figure -------------------------------------------------------------------
def _vertical_range(draft: Draft) -> tuple[float, float]:
    """From the section's base to the highest ground (elevations, m)."""
    prof = draft.profile
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
    return zbot, ztop


@dataclass
class _Page:
    """What every drawing step needs: the draft, its scale and the sheet's boxes."""

    draft: Draft
    ve: float
    scale: float
    layout: SheetLayout
    z_c: float
    palette: dict[str, str]
    zmin: float = -math.inf  # the page's lowest elevation

    def m_per_mm(self) -> float:
        """Ground metres per printed millimetre."""
        return self.scale / 1000.0


def _plot_parts(ax, parts: list[tuple[np.ndarray, C.LineStyle]], gid: str,
                zorder: float) -> None:
    """One artist (``gid``) for the parts of one line, each with its own style: a horizon or
    fault stays one element of the SVG whether it is drawn solid, dashed or both."""
    parts = [(xy, st) for xy, st in parts if len(xy) >= 2]
    if not parts:
        return
    lc = LineCollection([xy for xy, _ in parts], linewidths=[st.width for _, st in parts],
                        colors=[st.colour for _, st in parts],
                        linestyles=["-" if st.dashes is None else (0, st.dashes)
                                    for _, st in parts],
                        zorder=zorder, capstyle="butt")
    lc.set_gid(gid)
    ax.add_collection(lc)


def _draw_units_and_horizons(ax, pg: _Page) -> None:
    """The unit fills, the axial surfaces, the horizons (dashed below the constrained
    depth, short-dashed where projected above the ground) and the ground."""
    draft = pg.draft
    other = {u.name for u in draft.column.units if not u.layered}
    patches, faces, over, over_faces = [], [], [], []
    for u in draft.units:
        path = polygon_path(u.geometry)
        if path is not None:
            # cover and intrusive units are drawn over the layered horizons (construct.cover)
            (over if u.unit in other else patches).append(PathPatch(path))
            (over_faces if u.unit in other else faces).append(pg.palette.get(u.unit, "#cccccc"))
    if patches:
        pc = PatchCollection(patches, facecolors=faces, edgecolors="none", zorder=1)
        pc.set_gid("units")
        ax.add_collection(pc)
    if over:
        # FGDC-style: the unit's plain colour, its contacts as thin solid lines
        pc = PatchCollection(over, facecolors=over_faces, edgecolors=C.CONTACT.colour,
                             linewidths=0.5, zorder=4)
        pc.set_gid("cover-and-intrusive-units")
        ax.add_collection(pc)

    for i, a in enumerate(draft.axial_surfaces):
        for xy in lines_xy(a.geometry):
            (ln,) = ax.plot(xy[:, 0], xy[:, 1], zorder=2, **C.AXIAL_SURFACE.kwargs())
            ln.set_gid(f"axial-{i}")

    for i, h in enumerate(draft.horizons):
        if h.above_ground:
            _plot_parts(ax, [(xy, C.CONTACT_PROJECTED) for xy in lines_xy(h.geometry)],
                        f"horizon-{i}", 3)
            continue
        solid, dashed = _split(h.geometry, pg.z_c)
        _plot_parts(ax, [(xy, C.CONTACT) for xy in solid]
                    + [(xy, C.CONTACT_INFERRED) for xy in dashed], f"horizon-{i}", 3)
    if draft.unconformities:  # wavy where preserved, short-dashed above the ground
        from .unconformity import wavy

        for i, u in enumerate(draft.unconformities):
            parts = [(xy, C.CONTACT_PROJECTED) if u.above_ground
                     else (wavy(xy, pg.m_per_mm(), pg.m_per_mm() / pg.ve), C.UNCONFORMITY)
                     for xy in lines_xy(u.geometry)]
            _plot_parts(ax, parts, f"unconformity-{i}", 3.5)
    ax.plot(draft.profile.distance, draft.profile.z, zorder=5, **C.GROUND.kwargs())


ARROW_MM = 5.0  # least printed length of a half-arrow's shaft


def _draw_faults(ax, pg: _Page) -> None:
    """The faults, solid where constrained and dashed and queried below, with half-arrows
    of relative motion on the fault and parallel to it, and their names above the ground."""
    draft = pg.draft
    # Scaled with the page: 2 % of the section's printed length, 5 to 12 mm.
    size = float(np.clip(0.02 * pg.layout.axes[2] / MM, ARROW_MM, 12.0)) * pg.m_per_mm()
    for i, f in enumerate(draft.faults):
        solid, dashed = _split(f.geometry, pg.z_c)
        _plot_parts(ax, [(xy, C.FAULT) for xy in solid]
                    + [(xy, C.FAULT_INFERRED) for xy in dashed], f"fault-{i}", 6)
        if dashed:
            end = min((xy[np.argmin(xy[:, 1])] for xy in dashed), key=lambda p: p[1])
            if end[1] < pg.zmin:  # below the page: queried where it leaves it
                lowest = min(dashed, key=lambda xy: xy[:, 1].min())
                order = np.argsort(lowest[:, 1])
                end = np.array([np.interp(pg.zmin, lowest[order, 1], lowest[order, 0]),
                                pg.zmin])
            ax.annotate("?", end, xytext=(3, -2), textcoords="offset points", fontsize=8,
                        fontweight="bold", zorder=8, gid=f"fault-{i}-query")
        kind = C.fault_kind(f.sense)
        carrier = max(solid, key=len) if solid else (dashed[0] if dashed else None)
        if kind and carrier is not None and len(carrier) >= 2:
            for arr in _motion_arrows(carrier, kind, pg.ve, size, at=0.45):
                (ln,) = ax.plot(arr[:, 0], arr[:, 1], color="black", linewidth=1.1, zorder=7,
                                solid_joinstyle="miter")
                ln.set_gid(f"fault-{i}-motion")
        parts = lines_xy(f.geometry)
        if f.name and parts:
            top = max((xy[np.argmax(xy[:, 1])] for xy in parts), key=lambda p: p[1])
            # Above the highest ground under the label, clear of the ground line.
            half = 0.5 * len(f.name) * 0.55 * 7 * 25.4 / 72 * pg.m_per_mm()
            near = np.abs(draft.profile.distance - top[0]) <= half
            zg = draft.profile.z[near]
            zg = zg[np.isfinite(zg)]
            zt = max(top[1], float(zg.max()) if zg.size else top[1])
            zt += 4.0 * pg.m_per_mm() / pg.ve
            t = ax.annotate(f.name, (top[0], top[1]), xytext=(top[0], zt), textcoords="data",
                            fontsize=7, ha="center", va="bottom", zorder=8,
                            arrowprops={"arrowstyle": "-", "linewidth": 0.5, "shrinkA": 0,
                                        "shrinkB": 1.5})
            t.set_gid(f"fault-{i}-name")


TICK_MM = 3.5  # printed length of a dip tick


def _draw_dips(ax, pg: _Page) -> float:
    """Projected dips as ticks at their apparent dip on the ground line (staggered down
    where they would overlap), each with its apparent dip in degrees; returns the largest
    elevation shift from a reading to the ground line (m)."""
    dips = pg.draft.dips
    if not len(dips):
        return 0.0
    d = np.asarray(dips.distance_m, float)
    zg = pg.draft.profile.elevation_at(d)
    zr = np.asarray(dips.elevation_m, float)
    shift = np.abs(zr - zg)
    shift_max = float(np.nanmax(shift)) if np.any(np.isfinite(shift)) else 0.0
    mm = pg.m_per_mm()
    level_z = 2.5 * mm / pg.ve  # one stagger step: 2.5 mm down the page
    order = np.argsort(d, kind="stable")
    last_x = [-np.inf, -np.inf, -np.inf]
    last_label = [-np.inf, -np.inf, -np.inf]
    poor = np.asarray(dips.poorly_constrained, bool)
    app = np.asarray(dips.apparent_dip, float)
    # The stagger levels first (each depends on the ticks before it), then all the ticks
    # as one collection: one artist however many readings the corridor holds.
    drawn = [i for i in order if np.isfinite(zg[i]) and np.isfinite(app[i])]
    levels = np.zeros(len(d), int)
    for i in drawn:
        level = next((k for k in range(3) if d[i] - last_x[k] >= 1.2 * TICK_MM * mm), 2)
        last_x[level] = d[i]
        levels[i] = level
    idx = np.sort(np.asarray(drawn, int))  # the ticks in the readings' order
    zc_all = zg - levels * level_z
    if len(idx):
        a0, a1 = tick_segment(d[idx], zc_all[idx], app[idx], pg.ve, TICK_MM / 2 * mm)
        rgba = np.tile(matplotlib.colors.to_rgba(C.DIP_TICK.colour), (len(idx), 1))
        rgba[:, 3] = np.where(poor[idx], 0.45, 1.0)
        ticks = LineCollection(np.stack([a0, a1], axis=1), colors=rgba,
                               linewidths=C.DIP_TICK.width, capstyle="butt", zorder=9)
        ticks.set_gid("dip-ticks")
        ax.add_collection(ticks)
    for i in drawn:
        level = levels[i]
        zc = zc_all[i]
        text = f"{abs(dips.apparent_dip[i]):.0f}"
        width = (len(text) + 1) * 1.6 * mm
        if d[i] - last_label[level] >= width:
            last_label[level] = d[i]
            # Above the ground for the first row of ticks, under the tick for the rows
            # stepped down (clear of the ticks above them).
            up = level == 0
            t = ax.annotate(text, (d[i], zc), xytext=(0, 5 if up else -5),
                            textcoords="offset points", fontsize=5.5, ha="center",
                            va="bottom" if up else "top", color=C.DIP_TICK.colour, zorder=9)
            t.set_gid(f"dipvalue-{i}")
    return shift_max


LABEL_MIN_AREA_MM2 = 120.0  # a unit polygon this large on the page always gets a label
LABEL_FONT = 6.5


def _short(name: str) -> str:
    words = [w for w in name.replace("-", " ").split() if w]
    return "".join(w[0].upper() for w in words) if len(words) > 1 else name[:3]


def _fits(poly, x: float, y: float, w: float, h: float) -> bool:
    return poly.contains(shapely.box(x - w / 2, y - h / 2, x + w / 2, y + h / 2))


def _draw_unit_labels(ax, pg: _Page) -> int:
    """Each unit polygon's name (or its column ``label``, or its initials) inside it where
    it fits; polygons of at least ``LABEL_MIN_AREA_MM2`` on the page always get one (smaller
    type if need be). Returns the number of labels."""
    from shapely.ops import polylabel

    labels = {u.name: (u.label or u.name) for u in pg.draft.column.units}
    sx = 1.0 / pg.m_per_mm()  # mm per metre across
    sy = pg.ve * sx
    n = 0
    other = {u.name for u in pg.draft.column.units if not u.layered}
    overlay = shapely.union_all([u.geometry for u in pg.draft.units if u.unit in other])
    for k, u in enumerate(pg.draft.units):
        geom = u.geometry
        if u.unit not in other and not overlay.is_empty:
            geom = geom.difference(overlay)  # what the cover and intrusive units leave visible
        colour = matplotlib.colors.to_rgb(pg.palette.get(u.unit, "#cccccc"))
        # Dark fills take white type (relative luminance, ITU-R BT.709 weights).
        ink = "white" if 0.2126 * colour[0] + 0.7152 * colour[1] + 0.0722 * colour[2] < 0.45 \
            else "#222222"
        for piece in _label_pieces(geom, sx, sy):
            area = piece.area
            if area < 12.0:
                continue
            pt = polylabel(piece, tolerance=0.3)
            names = [labels.get(u.unit, u.unit), u.unit, _short(u.unit)]
            chosen, size = None, LABEL_FONT
            for text in dict.fromkeys(names):
                w = len(text) * 0.55 * LABEL_FONT * 25.4 / 72
                if _fits(piece, pt.x, pt.y, w, LABEL_FONT * 0.4):
                    chosen = text
                    break
            if chosen is None:
                if area < LABEL_MIN_AREA_MM2:
                    continue
                chosen = min(names, key=len)
                r = piece.boundary.distance(pt)
                size = float(np.clip(2 * r / (len(chosen) * 0.55 * 25.4 / 72), 3.5, LABEL_FONT))
            t = ax.text(pt.x / sx, pt.y / sy, chosen, fontsize=size, ha="center",
                        va="center_baseline", color=ink, zorder=4, clip_on=True)
            t.set_gid(f"unit-label-{k}")
            n += 1
    return n


LABEL_STRIP_MM = 110.0  # a long unit polygon is labelled once in each strip this wide


def _label_pieces(geom, sx: float, sy: float) -> list:
    """The polygons of a unit on the page (mm), long ones cut into strips of about
    ``LABEL_STRIP_MM`` (the largest piece of each strip)."""
    out = []
    for part in shapely.get_parts(geom):
        if part.is_empty or part.geom_type != "Polygon":
            continue
        page = shapely.affinity.scale(part, sx, sy, origin=(0, 0))
        if not page.is_valid:
            page = shapely.make_valid(page)
        x0, y0, x1, y1 = page.bounds
        n = max(1, round((x1 - x0) / LABEL_STRIP_MM))
        edges = np.linspace(x0, x1, n + 1)
        for a, b in zip(edges[:-1], edges[1:], strict=True):
            strip = page if n == 1 else shapely.clip_by_rect(page, a, y0 - 1, b, y1 + 1)
            polys = [g for g in shapely.get_parts(strip)
                     if g.geom_type == "Polygon" and not g.is_empty]
            if polys:
                out.append(max(polys, key=lambda g: g.area))
    return out


def _draw_frame(fig: Figure, ax, pg: _Page, xlim, ylim, info: TitleInfo, checks) -> None:
    """Axes (elevation on both sides), the ends with compass directions, the bends, the
    sheet's title line and, for a failed draft, the FAIL mark naming the failed tests."""
    draft = pg.draft
    az = draft.line.segment_azimuths
    for j, d in enumerate(draft.line.cumulative[1:-1]):
        ax.axvline(d, color="#999999", linewidth=0.6, linestyle=(0, (2, 2)), zorder=4,
                   gid=f"bend-{j}")
        ax.annotate(f"bend {az[j]:05.1f}° to {az[j + 1]:05.1f}°", (d, 1.0),
                    xycoords=("data", "axes fraction"), xytext=(2, -2),
                    textcoords="offset points", fontsize=5.5, color="#555555", va="top",
                    ha="left")
    ax.set_xlim(*xlim)
    ax.set_ylim(*ylim)
    ax.set_aspect("auto")
    datum = info.vertical_datum or "DEM datum"
    ax.set_xlabel("Distance along section (m)", fontsize=7)
    ax.set_ylabel(f"Elevation (m above {datum})", fontsize=7)
    ax.tick_params(labelsize=6.5, right=True, labelright=True)
    ax.yaxis.set_label_position("left")
    ax.text(1.0, 0.5, f"Elevation (m above {datum})", transform=ax.transAxes, rotation=270,
            fontsize=7, va="center", ha="left", gid="right-axis-label").set_x(
        1.0 + 11 * MM / pg.layout.axes[2])

    left, right = end_names(draft.name)
    b_left, b_right = end_bearings(az[0], az[-1])
    for xa, ha, label, b in ((0.0, "left", left, b_left), (1.0, "right", right, b_right)):
        ax.annotate(label, (xa, 1.0), xycoords="axes fraction", xytext=(0, 12),
                    textcoords="offset points", ha=ha, va="bottom", fontsize=14,
                    fontweight="bold")
        ax.annotate(f"{compass_point(b)}  (bearing {b:05.1f}°)", (xa, 1.0),
                    xycoords="axes fraction", xytext=(0, 2), textcoords="offset points",
                    ha=ha, va="bottom", fontsize=7)
    method = {"kink": "kink-band (dip-domain)", "arc": "arc (Busk)"}.get(draft.method,
                                                                         draft.method)
    head = f"Draft section {left}–{right}  ·  {method} construction"
    if info.project_title:
        head = f"{info.project_title}  ·  {head}"
    lay = pg.layout
    y_head = (lay.height - MARGIN - 0.5 * HEADER) / lay.height
    fig.text(MARGIN / lay.width, y_head, head, fontsize=11, fontweight="bold", va="center",
             gid="sheet-title")
    failed = _failed_tests(checks)
    if failed:
        fig.text((lay.room[0] + lay.room[2] + AXIS_RIGHT) / lay.width, y_head,
                 f"FAIL: {', '.join(failed)}", fontsize=11, fontweight="bold", color="#b00000",
                 ha="right", va="center", gid="fail-mark",
                 bbox={"boxstyle": "square,pad=0.35", "facecolor": "#fff0f0",
                       "edgecolor": "#b00000", "linewidth": 1.5})


def _failed_tests(checks) -> list[str]:
    """Names of the tests a check report says failed (a test not run is no failure)."""
    if checks is None:
        return []
    out = []
    for name, label in (("topography", "topography"), ("restoration", "restoration"),
                        ("area_balance", "area balance"), ("kinematics", "kinematics")):
        t = getattr(checks, name, None)
        status = getattr(t, "status", None)
        if status == "fail" or (status is None and getattr(t, "passed", None) is False):
            out.append(label)
    return out


def _draw_scale(fig: Figure, ax, pg: _Page, x0: float, xspan: float) -> None:
    """The scale bar (its printed length is its ground length over the scale), the scale
    as 1:N, the VE and, when VE is not 1, a vertical scale bar."""
    lay = pg.layout
    fh = lay.height
    by = lay.below / fh
    tr = blended_transform_factory(ax.transData, fig.transFigure)
    L = nice_length(xspan)
    bh = 1.5 * MM / fh
    for k in range(2):
        bar = Rectangle((x0 + k * L / 2, by - bh / 2), L / 2, bh, transform=tr,
                        clip_on=False, facecolor="black" if k == 0 else "white",
                        edgecolor="black", linewidth=0.5)
        bar.set_gid(f"scale-bar-{k}")
        ax.add_patch(bar)
    unit_label = f"{L / 1000:g} km" if L >= 1000 else f"{L:g} m"
    for xx, lab in ((0.0, "0"), (L / 2, ""), (L, unit_label)):
        if lab:
            ax.text(x0 + xx, by - bh, lab, transform=tr, ha="center", va="top", fontsize=6.5)
    xt = x0 + L + 12 * pg.m_per_mm()
    ax.text(xt, by, f"Scale {scale_text(pg.scale)}", transform=tr, fontsize=7.5,
            va="center", fontweight="bold", gid="scale-text")
    ax.text(xt, by - 3.6 * MM / fh, ve_text(pg.ve), transform=tr, fontsize=7, va="center")
    if not math.isclose(pg.ve, 1.0):
        # Vertical bar: the longest round length under 10 mm on the page.
        max_m = 10.0 * pg.m_per_mm() / pg.ve
        lv = nice_length(max_m * 5.0)
        while lv > max_m:
            lv = nice_length(lv * 5.0 * 0.99)
        h = lv * pg.ve / pg.m_per_mm() * MM / fh
        xv = xt + 40 * pg.m_per_mm()
        bar = Rectangle((xv, by - h / 2), 1.2 * pg.m_per_mm(), h,
                        transform=tr, clip_on=False, facecolor="black", edgecolor="black",
                        linewidth=0.5, gid="vertical-scale-bar")
        ax.add_patch(bar)
        lab = f"{lv / 1000:g} km" if lv >= 1000 else f"{lv:g} m"
        ax.text(xv + 2.5 * pg.m_per_mm(), by, f"{lab} vertical\n(vertical scale "
                f"{scale_text(pg.scale / pg.ve)})", transform=tr, fontsize=6, va="center")


def _legend_rows(draft: Draft, palette: dict[str, str], shift_m: float, misfits: bool
                 ) -> list[tuple[str, object]]:
    """The legend's rows: a swatch per unit of the column (youngest first), the colour
    source when the column mixes them, then the line symbols drawn on the page."""
    rows: list[tuple[str, object]] = []
    for u in draft.column.units:
        label = u.name + (f" [{u.label}]" if u.label and u.label != u.name else "")
        label += f" ({u.age})" if u.age else ""
        if u.kind == "cover":
            label += f": cover, not carried to depth ({u.thickness:g} m veneer)"
        elif u.kind == "intrusive":
            label += f": intrusive, drawn to {u.depth:g} m below the ground"
        rows.append((label, palette[u.name]))
    note = C.colour_note(draft.column)
    if note:
        rows.append((note, None))
    rows += [
        ("Ground (DEM profile)", C.GROUND),
        ("Horizon (top of unit), constrained", C.CONTACT),
        ("Horizon below the constrained depth", C.CONTACT_INFERRED),
        ("Horizon projected above ground", C.CONTACT_PROJECTED),
        ("Fault, half-arrows: relative motion", C.FAULT),
        ("Fault below the constrained depth (?)", C.FAULT_INFERRED),
        (f"Bedding dip, apparent dip (°), on the ground line (readings up to "
         f"{shift_m:.0f} m off it)", C.DIP_TICK),
    ]
    if draft.unconformities:
        rows.append(("Unconformity (erosion surface; wavy line, our own symbol)",
                     C.UNCONFORMITY))
    if draft.axial_surfaces:
        rows.append(("Axial surface", C.AXIAL_SURFACE))
    if misfits:
        rows.append(("Contact misfit: mapped (o) to drafted (x)", C.MISFIT))
    return rows


def _legend(fig: Figure, rows: list[tuple[str, object]], box) -> None:
    """The legend in ``box`` (left, bottom, width, height; inches), in as many columns as
    its height needs."""
    lay_w, lay_h = fig.get_figwidth(), fig.get_figheight()
    left, bottom, width, height = box
    per = max(1, int((height - LEGEND_TITLE) // LEGEND_PITCH))
    ncol = -(-len(rows) // per)
    colw = width / max(ncol, 1)
    chars = int(colw * 72 / (0.5 * LEGEND_FONT)) - 5
    tr = fig.dpi_scale_trans
    top = bottom + height
    fig.text(left / lay_w, (top - 0.12) / lay_h, "Legend", fontsize=8, fontweight="bold")
    for k, (label, sym) in enumerate(rows):
        x = left + (k // per) * colw
        yc = top - LEGEND_TITLE - (k % per + 0.5) * LEGEND_PITCH
        if len(label) > chars:
            label = label[:chars - 1] + "…"
        tx = x + 2.8 * LEGEND_EM
        if sym is None:  # a note
            tx = x
        elif isinstance(sym, str):  # a unit's colour swatch
            art = Rectangle((x, yc - 0.35 * LEGEND_EM), 2.0 * LEGEND_EM, 0.7 * LEGEND_EM,
                            transform=tr, facecolor=sym, edgecolor="#333333", linewidth=0.4)
        elif getattr(sym, "wavy", False):  # the unconformity
            from .unconformity import legend_wave

            art = Line2D(*legend_wave(x, yc, 2.0 * LEGEND_EM, 0.5 * LEGEND_EM), transform=tr,
                         **sym.kwargs())
        else:
            kw = sym.kwargs()
            art = Line2D([x, x + 2.0 * LEGEND_EM], [yc, yc], transform=tr, **kw)
        if sym is not None:
            art.set_gid(f"legend-{k}")
            fig.add_artist(art)
        fig.text(tx / lay_w, yc / lay_h, label, fontsize=LEGEND_FONT, va="center_baseline",
                 ha="left")


def _title_rows(draft: Draft, pg_scale: float | None, info: TitleInfo, width_in: float
                ) -> list[tuple[str, str]]:
    """The title block's rows as (style, text); ``style`` is "head", "text" or "small"."""
    left, right = end_names(draft.name)
    v = draft.line.vertices
    crs = draft.line.crs
    if crs is not None and not hasattr(crs, "to_epsg"):
        import pyproj

        crs = pyproj.CRS(crs)
    epsg = crs.to_epsg() if crs is not None else None
    crs_text = (f"EPSG:{epsg} ({crs.name})" if epsg else (crs.name if crs is not None
                                                         else "not given"))
    rows = [("head", info.project_title or "mapsection project"),
            ("text", f"Section {left}–{right}: draft cross-section"),
            ("text", f"{left}: {v[0, 0]:.0f} E  {v[0, 1]:.0f} N    "
                     f"{right}: {v[-1, 0]:.0f} E  {v[-1, 1]:.0f} N"),
            *[("text", f"bend {k + 1}: {b[0]:.0f} E  {b[1]:.0f} N")
              for k, b in enumerate(v[1:-1])],
            ("text", f"CRS: {crs_text}"),
            ("text", f"Horizontal scale {scale_text(pg_scale) if pg_scale else '-'}  ·  "
                     f"{ve_text(float(draft.ve or 1.0))}"),
            ("text", f"Elevations: metres above {info.vertical_datum or 'DEM datum'}")]
    for what, text in info.sources:
        rows.append(("text", f"{what}: {text}"))
    rows += [("text", f"Date: {info.date}  ·  mapsection {__version__}"),
             ("text", "Author: ______________________   Checked by: ______________________")]
    chars = max(int(width_in * 72 / (0.5 * TITLE_FONT)) - 4, 30)
    for line in textwrap.wrap("CAUTION: " + CAUTION, chars):
        rows.append(("small", line))
    out = []
    for style, text in rows:
        wrapped = textwrap.wrap(text, chars) if style == "text" else [text]
        out += [(style, t) for t in wrapped]
    return out


def _title_block(fig: Figure, rows: list[tuple[str, str]], box) -> None:
    """The title block: a ruled box with the rows, top down."""
    W, H = fig.get_figwidth(), fig.get_figheight()
    left, bottom, width, height = box
    frame = Rectangle((left / W, bottom / H), width / W, height / H, transform=fig.transFigure,
                      facecolor="none", edgecolor="black", linewidth=0.8)
    frame.set_gid("title-block")
    fig.add_artist(frame)
    y = bottom + height - 0.6 * TITLE_PITCH
    for style, text in rows:
        kw = {"fontsize": TITLE_FONT, "va": "center"}
        if style == "head":
            kw = {"fontsize": TITLE_FONT + 2, "va": "center", "fontweight": "bold"}
            y -= 0.2 * TITLE_PITCH
        elif style == "small":
            kw["color"] = "#444444"
        fig.text((left + 1.5 * MM) / W, y / H, text, **kw)
        y -= TITLE_PITCH * (1.3 if style == "head" else 1.0)


def _misfits(checks) -> tuple[list, float]:
    """The topography check's paired contact misfits beyond its threshold."""
    topo = getattr(checks, "topography", None) if checks is not None else None
    if topo is None:
        return [], math.nan
    limit = float(getattr(topo, "contact_threshold_m", math.nan))
    if not math.isfinite(limit):
        return [], limit
    return [m for m in topo.contact_misfits if abs(m.misfit_m) > limit], limit


def _draw_misfits(ax, pg: _Page, misfits) -> None:
    """Each misfit at the ground: the mapped contact (o) joined to where the draft puts it (x)."""
    for k, m in enumerate(misfits):
        d = np.array([m.map_distance_m, m.section_distance_m])
        z = pg.draft.profile.elevation_at(d)
        z = np.where(np.isfinite(z), z, m.elevation_m)
        (ln,) = ax.plot(d, z, zorder=10, **C.MISFIT.kwargs())
        ln.set_gid(f"misfit-{k}")
        ax.plot(d[:1], z[:1], "o", mfc="none", mec=C.MISFIT.colour, ms=4, zorder=10)
        ax.plot(d[1:], z[1:], "x", color=C.MISFIT.colour, ms=4, zorder=10)
        ax.annotate(f"{m.misfit_m:+.0f} m", (d.mean(), z.max()), xytext=(0, -9),
                    textcoords="offset points", fontsize=5.5, color=C.MISFIT.colour,
                    ha="center", zorder=10)


def _pin_and_loose(checks) -> list[tuple[str, float]]:
    """The restoration's pin and loose lines (distance along the section), when it ran."""
    rest = getattr(checks, "restoration", None) if checks is not None else None
    out = []
    for label, key in (("pin", "pin_m"), ("loose", "loose_m")):
        x = getattr(rest, key, None)
        if x is not None and math.isfinite(float(x)):
            out.append((label, float(x)))
    return out


def _draw_pin_and_loose(ax, pg: _Page, lines: list[tuple[str, float]]) -> None:
    """The pin and loose lines the restoration used, as verticals through the section
    (the restored section draws the same two), labelled at the top."""
    for label, x in lines:
        ln = ax.axvline(x, color="#8b0000" if label == "pin" else "#1f5fa8", lw=0.8,
                        ls=(0, (6, 3)), zorder=9)
        ln.set_gid(f"{label}-line")
        right = x > 0.5 * float(pg.draft.line.length)  # label inside the frame
        ax.annotate(f"{label} line", (x, 1.0), xycoords=("data", "axes fraction"),
                    xytext=(-2 if right else 2, -8), textcoords="offset points", fontsize=6,
                    ha="right" if right else "left", color=ln.get_color(), zorder=9)


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


def _column(frame, name: str) -> np.ndarray:
    if name in frame.columns:
        return frame[name].to_numpy()
    return np.full(len(frame), None, dtype=object)


def _inset_units(iax, map_data: MapData, palette: dict[str, str],
                 bounds: tuple[float, float, float, float]) -> None:
    """The map's unit polygons within ``bounds`` (xmin, ymin, xmax, ymax), filled."""
    xmin, ymin, xmax, ymax = bounds
    geoms, names = map_data.unit_geoms, map_data.unit_names
    if len(geoms):
        idx = np.sort(map_data.unit_tree.query(shapely.box(*bounds)))
        # The map's polygons are often traced on a fine grid (tens of thousands of
        # vertices); at the inset's scale a quarter of a 150-dpi pixel is ~1/1500 of
        # its width, so simplifying to that loses nothing visible and draws far less.
        # (Plain Douglas-Peucker and a rectangle clip: 20x faster than the topology-
        # preserving forms, and drawing needs no valid geometry.)
        tol = (xmax - xmin) / 1500.0
        clipped = shapely.clip_by_rect(shapely.simplify(geoms[idx], tol, preserve_topology=False),
                                       xmin, ymin, xmax, ymax)
        # One compound path per unit: a map of thousands of polygons is a handful of
        # artists, built and written without a Python loop over the polygons.
        patches, faces = [], []
        shown = names[idx]
        for nm in dict.fromkeys(shown):
            path = polygons_path(clipped[shown == nm])
            if path is not None:
                patches.append(PathPatch(path))
                faces.append(palette.get(nm, "#dddddd"))
        if patches:
            iax.add_collection(PatchCollection(patches, facecolors=faces, edgecolors="#666666",
                                               linewidths=0.2))


def _inset_faults(iax, map_data: MapData, bounds: tuple[float, float, float, float]) -> None:
    """The map's faults within ``bounds`` with their sense marks (teeth, bar and ball)."""
    xmin, ymin, xmax, ymax = bounds
    box = shapely.box(*bounds)
    faults = map_data.faults
    if faults is not None and len(faults):
        ff = dict(map_data.fault_fields or {})
        sense = _column(faults, ff.get("sense", "sense"))
        ddir = _column(faults, ff.get("dip_direction", "dip_direction"))
        size = 0.02 * max(xmax - xmin, ymax - ymin)
        tris, bars, balls = [], [], []
        geoms = faults.geometry.values
        # Only the faults in view, from the map's index (not a test of every fault).
        shown = ([] if map_data.fault_tree is None
                 else np.sort(map_data.fault_tree.query(box, predicate="intersects")))
        for k in shown:
            g = geoms[k]
            if g is None or g.is_empty:
                continue
            for xy in lines_xy(g):
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


def _inset(fig: Figure, draft: Draft, map_data: MapData, palette: dict[str, str],
           box, misfits=()) -> None:
    """Location map: the geologic map around the line filling its panel, the line with
    its ends and bends, ticked map coordinates, a scale bar and a north arrow (grid
    north) beside the map, and the contact misfits."""
    W, H = fig.get_figwidth(), fig.get_figheight()
    left, bottom, width, height = box
    ml, mb, mt, mr = 4 * MM, 9 * MM, 6 * MM, 2 * MM  # tick labels, scale bar, title
    aw = width - ml - mr
    ah = min(height - mb - mt, 1.4 * aw)  # not much taller than wide: kept around the line
    line = draft.line
    v = line.vertices
    # The line with a margin, widened to the panel's shape: the whole panel is map. The
    # widening stops at a limit known before the sheet is laid out (a build reads the map
    # only that far: mapsection.extent); the panel then shrinks to the view.
    lo, hi = v.min(axis=0), v.max(axis=0)
    centre, half, reach = location_view_limit(v)
    if half[0] / half[1] < aw / ah:
        half[0] = half[1] * aw / ah
    else:
        half[1] = half[0] * ah / aw
    half = np.minimum(half, reach)
    # Kept on the map: where the map is smaller than that, the panel shrinks to it (no
    # white strips beyond the map's edge), keeping the whole line in view.
    if len(map_data.unit_geoms):
        mb_ = map_data.layer_bounds()
        for k in range(2):
            m_lo, m_hi = mb_[k], mb_[k + 2]
            if m_hi - m_lo >= 2 * half[k]:
                centre[k] = np.clip(centre[k], m_lo + half[k], m_hi - half[k])
            else:
                a_lo = min(m_lo, lo[k] - 0.03 * line.length)
                a_hi = max(m_hi, hi[k] + 0.03 * line.length)
                centre[k], half[k] = (a_lo + a_hi) / 2, min(half[k], (a_hi - a_lo) / 2)
    if half[0] / half[1] > aw / ah:
        ah = aw * half[1] / half[0]
    else:
        aw = ah * half[0] / half[1]
    bottom += height - (ah + mb + mt)
    iax = fig.add_axes(((left + ml) / W, (bottom + mb) / H, aw / W, ah / H))
    xmin, ymin = centre - half
    xmax, ymax = centre + half
    _inset_units(iax, map_data, palette, (xmin, ymin, xmax, ymax))
    _inset_faults(iax, map_data, (xmin, ymin, xmax, ymax))
    iax.plot(v[:, 0], v[:, 1], **C.SECTION_LINE.kwargs())
    if len(v) > 2:
        iax.plot(v[1:-1, 0], v[1:-1, 1], "o", ms=4, mfc="white", mec=C.SECTION_LINE.colour,
                 mew=1.2, gid="map-bends")
        for p in v[1:-1]:
            iax.annotate("bend", p, xytext=(4, -6), textcoords="offset points", fontsize=5.5,
                         color="#900000")
    for k, m in enumerate(misfits):
        xy = np.column_stack(line.point_at(np.array([m.map_distance_m, m.section_distance_m])))
        (ln,) = iax.plot(xy[:, 0], xy[:, 1], **C.MISFIT.kwargs())
        ln.set_gid(f"map-misfit-{k}")
        iax.plot(xy[:1, 0], xy[:1, 1], "o", mfc="none", mec=C.MISFIT.colour, ms=3.5)
        iax.plot(xy[1:, 0], xy[1:, 1], "x", color=C.MISFIT.colour, ms=3.5)
    lname, rname = end_names(draft.name)
    for p, lab in ((v[0], lname), (v[-1], rname)):
        iax.text(p[0], p[1], lab, fontsize=8, fontweight="bold", ha="center", va="center",
                 bbox={"boxstyle": "round,pad=0.15", "facecolor": "white", "alpha": 0.85,
                       "linewidth": 0})
    iax.set_xlim(xmin, xmax)
    iax.set_ylim(ymin, ymax)
    iax.set_aspect("auto")
    from matplotlib.ticker import FuncFormatter, MaxNLocator

    for axis in (iax.xaxis, iax.yaxis):
        axis.set_major_locator(MaxNLocator(3, prune="both"))
        axis.set_major_formatter(FuncFormatter(lambda x, _: f"{x:.0f}"))
    iax.tick_params(labelsize=5, length=2, pad=1)
    for lab in iax.get_yticklabels():
        lab.set_rotation(90)
        lab.set_va("center")
    iax.set_title("Location (geologic map; grid coordinates, m)", fontsize=7, y=1.0, pad=3,
                  loc="left")
    # North arrow (grid north of the project CRS) above the map's top right corner.
    iax.annotate("N", xy=(1.0, 1.0 + 5.5 * MM / ah), xytext=(1.0, 1.0 + 1.0 * MM / ah),
                 xycoords="axes fraction", ha="right", va="bottom", fontsize=6,
                 arrowprops={"arrowstyle": "-|>", "linewidth": 0.8, "color": "black"},
                 annotation_clip=False, gid="north-arrow")
    # Scale bar under the tick labels.
    L = nice_length(xmax - xmin)
    tr = blended_transform_factory(iax.transData, iax.transAxes)
    yb = -6.5 * MM / ah
    bh = 1.0 * MM / ah
    for k in range(2):
        iax.add_patch(Rectangle((xmin + k * L / 2, yb), L / 2, bh, transform=tr, clip_on=False,
                                facecolor="black" if k == 0 else "white", edgecolor="black",
                                linewidth=0.4, gid=f"map-scale-bar-{k}"))
    lab = f"{L / 1000:g} km" if L >= 1000 else f"{L:g} m"
    iax.text(xmin + L * 1.05, yb + bh / 2, lab, transform=tr, fontsize=5.5, va="center")


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
