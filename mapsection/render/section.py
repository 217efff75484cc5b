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
import textwrap
from pathlib import Path

import matplotlib
import numpy as np
import shapely
from matplotlib.collections import LineCollection, PatchCollection
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import PathPatch, Rectangle
from matplotlib.patches import Polygon as MplPolygon
from matplotlib.transforms import blended_transform_factory

from .._atomic import atomic_file
from ..caution import CAUTION
from ..draft import Draft
from ..errors import ParameterError
from ..mapdata import MapData
from . import colours as C
from .layout import (
    LEGEND_COLUMN_WIDTH,
    LEGEND_EM,
    LEGEND_FONT,
    LEGEND_PITCH,
    LEGEND_TITLE,
    PageLayout,
    end_names,
    nice_length,
    page_layout,
    tick_segment,
    ve_text,
)
from .shapes import lines_xy, polygon_path

matplotlib.use("Agg")  # headless: figures are only ever written to files

FORMATS = ("png", "svg", "pdf")
PNG_DPI = 150


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
def _vertical_range(draft: Draft) -> tuple[float, float]:
    """From the section's base to a little above the highest ground (elevations, m)."""
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


def _draw_units_and_horizons(ax, draft: Draft, palette: dict[str, str]) -> None:
    """The unit fills, the axial surfaces under the horizons, the horizons and the ground."""
    patches, faces = [], []
    for u in draft.units:
        path = polygon_path(u.geometry)
        if path is not None:
            patches.append(PathPatch(path))
            faces.append(palette.get(u.unit, "#cccccc"))
    if patches:
        pc = PatchCollection(patches, facecolors=faces, edgecolors="none", zorder=1)
        pc.set_gid("units")
        ax.add_collection(pc)

    # Axial surfaces (thin, dotted), under the horizons.
    for i, a in enumerate(draft.axial_surfaces):
        for xy in lines_xy(a.geometry):
            (ln,) = ax.plot(xy[:, 0], xy[:, 1], zorder=2, **C.AXIAL_SURFACE.kwargs())
            ln.set_gid(f"axial-{i}")

    # Horizons: below ground solid; projected above ground dashed.
    for i, h in enumerate(draft.horizons):
        style = C.CONTACT_PROJECTED if h.above_ground else C.CONTACT
        xy_parts = lines_xy(h.geometry)
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
    ax.plot(draft.profile.distance, draft.profile.z, zorder=5, **C.GROUND.kwargs())


def _draw_faults(ax, draft: Draft, ve: float, xspan: float, zspan: float) -> None:
    """The faults with their half-arrows of relative motion and their names."""
    arrow_size = 0.035 * xspan
    for i, f in enumerate(draft.faults):
        parts = lines_xy(f.geometry)
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


def _draw_dips(ax, draft: Draft, ve: float, xspan: float) -> None:
    """Projected dips: short ticks at their apparent dip, with the section's VE."""
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


def _draw_frame(ax, draft: Draft, ve: float, xlim: tuple[float, float],
                ylim: tuple[float, float]) -> None:
    """The bends of the section line, the axes, the ends named with bearings, the title."""
    for d in draft.line.cumulative[1:-1]:
        ax.axvline(d, color="#999999", linewidth=0.6, linestyle=(0, (2, 2)), zorder=4)
        ax.text(d, ylim[1], " bend", fontsize=6, color="#666666", va="top", ha="left")

    ax.set_xlim(*xlim)
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


def _draw_scale(fig: Figure, ax, ve: float, x0: float, xspan: float, page: PageLayout) -> None:
    """VE statement and scale bar below the axes (x in data, y in figure fraction)."""
    fh = page.height
    below_y = page.below / fh  # figure fraction of the VE / scale-bar row
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


def section_figure(draft: Draft, map_data: MapData | None = None) -> Figure:
    """Build the section page as a matplotlib Figure (not saved)."""
    ve = float(draft.ve or 1.0)
    extra = sorted({u.unit for u in draft.units} - set(draft.column.names))
    palette = C.unit_colours(draft.column, extra)

    x0, x1 = 0.0, float(draft.line.length)
    xspan = max(x1 - x0, 1.0)
    zbot, ztop = _vertical_range(draft)
    zspan = max(ztop - zbot, 1.0)
    ylim = (zbot, ztop + 0.18 * zspan)

    # Page layout in inches: the page is sized to the section's exaggerated shape.
    legend_rows = _legend_rows(draft, palette)
    page = page_layout(xspan, ylim[1] - ylim[0], ve, tuple(map(len, legend_rows)),
                       map_data is not None)
    ylim = (ylim[0], ylim[0] + page.yspan)
    fig = Figure(figsize=(page.width, page.height))
    ax = fig.add_axes(tuple(v / d for v, d in zip(page.axes, (page.width, page.height) * 2,
                                                   strict=True)))
    _draw_units_and_horizons(ax, draft, palette)
    _draw_faults(ax, draft, ve, xspan, zspan)
    _draw_dips(ax, draft, ve, xspan)
    _draw_frame(ax, draft, ve, (x0, x1), ylim)
    _draw_scale(fig, ax, ve, x0, xspan, page)
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
            art = Rectangle((x, yc - 0.35 * LEGEND_EM), 2.0 * LEGEND_EM, 0.7 * LEGEND_EM,
                            transform=tr, facecolor=sym, edgecolor="#333333", linewidth=0.4)
        else:
            art = Line2D([x, x + 2.0 * LEGEND_EM], [yc, yc], transform=tr, **sym.kwargs())
        art.set_gid(f"legend-{k}")
        fig.add_artist(art)
        fig.text(x + 2.8 * LEGEND_EM, yc, label, transform=tr, fontsize=LEGEND_FONT,
                 va="center_baseline", ha="left")


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
        patches, faces = [], []
        for g, nm in zip(clipped, names[idx], strict=True):
            path = polygon_path(g)
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
        for k, g in enumerate(faults.geometry.values):
            if g is None or g.is_empty or not g.intersects(box):
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
    _inset_units(iax, map_data, palette, (xmin, ymin, xmax, ymax))
    _inset_faults(iax, map_data, (xmin, ymin, xmax, ymax))
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
