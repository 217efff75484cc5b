"""The restored section as a figure: ``restored.png``, ``.svg`` and ``.pdf``.

Draws a :class:`mapsection.checks.restore.Restoration` (Dahlstrom 1969): the restored
units and beds, the pin line and the restored loose line, with the caution. Gaps and
overlaps between fault blocks are hatched and labelled with their size in metres
(a gap white with diagonal hatching, an overlap red with cross-hatching); the parts of
beds and units that lie above the ground in the draft (eroded, never observed, only
projected from the dips) are drawn paler, their beds dashed, apart from preserved rock.
The legend says which is which.

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
from matplotlib.patches import Patch, Polygon
from matplotlib.path import Path as MplPath

from .._atomic import atomic_file
from ..caution import CAUTION
from ..checks.geometry import line_xy
from ..checks.restore import Restoration
from .colours import unit_palette
from .fonts import pdf_fonts
from .shapes import polygon_path

__all__ = ["draw_restoration"]

GAP_LABEL_MIN_M = 1.0  # gaps and overlaps smaller than this are not labelled


def _split(p, eroded):
    """The x intervals of a restored bed piece outside its eroded intervals."""
    lo, hi = sorted((p.restored_x0_m, p.restored_x1_m))
    out, x = [], lo
    for a, b in sorted(eroded):
        if a > x:
            out.append((x, min(a, hi)))
        x = max(x, b)
    if x < hi:
        out.append((x, hi))
    return [(a, b) for a, b in out if b > a]


def _bed_lines(r: Restoration):
    """Restored beds as segments: preserved (solid) and eroded (dashed)."""
    solid, dashed = [], []
    for p in r.pieces:
        if p.geometry.is_empty:
            continue
        y = p.restored_elevation_m
        if not p.eroded:
            solid.append(line_xy(p.geometry))
            continue
        solid += [[(a, y), (b, y)] for a, b in _split(p, p.eroded)]
        dashed += [[(a, y), (b, y)] for a, b in p.eroded]
    return solid, dashed


def _eroded_fills(r: Restoration) -> list:
    """Paler fills over the rock of a unit eroded at both its top and its base bed (where
    both were above the ground, the whole unit between them was)."""
    pieces = {(p.top_of, p.block): p for p in r.pieces}
    out = []
    for u in r.units:
        top, base = pieces.get((u.unit, u.block)), pieces.get((u.base_of, u.block))
        if top is None or base is None:
            continue
        for a1, b1 in top.eroded:
            for a2, b2 in base.eroded:
                if min(b1, b2) <= max(a1, a2):
                    continue  # not eroded at the same place
                verts = [(a1, top.restored_elevation_m), (b1, top.restored_elevation_m),
                         (b2, base.restored_elevation_m), (a2, base.restored_elevation_m),
                         (a1, top.restored_elevation_m)]
                out.append(MplPath(verts, closed=True))
    return out


def _draw_gaps(ax, r: Restoration) -> tuple[int, int]:
    """Hatch each gap and overlap between fault blocks and label its size; returns how
    many gaps and overlaps were drawn."""
    pieces = {(p.top_of, p.block): p for p in r.pieces}
    base_of = {(u.unit, u.block): u.base_of for u in r.units}
    n_gap = n_overlap = 0
    for g in r.gaps:
        a, b = g.blocks
        base = base_of.get((g.unit, a)) or base_of.get((g.unit, b))
        ends = [pieces.get((g.unit, a)), pieces.get((g.unit, b)),
                pieces.get((base, a)), pieces.get((base, b))]
        if base is None or any(e is None for e in ends):
            continue
        ta, tb, ba, bb = ends
        yt, yb = ta.restored_elevation_m, ba.restored_elevation_m
        # the end of the block before and the start of the block after, top and base
        poly = [(ta.restored_x1_m, yt), (tb.restored_x0_m, yt),
                (bb.restored_x0_m, yb), (ba.restored_x1_m, yb)]
        for gap_m, y, xa, xb in ((g.top_gap_m, yt, ta.restored_x1_m, tb.restored_x0_m),
                                 (g.base_gap_m, yb, ba.restored_x1_m, bb.restored_x0_m)):
            if abs(gap_m) < GAP_LABEL_MIN_M:
                continue
            word = "gap" if gap_m > 0 else "overlap"
            ax.annotate(f"{word} {abs(gap_m):.0f} m", (0.5 * (xa + xb), y),
                        textcoords="offset points", xytext=(0, 2), ha="center", va="bottom",
                        fontsize=6.5, color="#b00000" if gap_m < 0 else "#222222",
                        bbox={"boxstyle": "round,pad=0.15", "fc": "white", "ec": "none",
                              "alpha": 0.8})
        for part, sign in _gap_parts(poly, g.top_gap_m, g.base_gap_m):
            if sign > 0:
                ax.add_patch(Polygon(part, closed=True, facecolor="white", edgecolor="#333333",
                                     hatch="////", linewidth=0.5, zorder=3))
                n_gap += 1
            else:
                ax.add_patch(Polygon(part, closed=True, facecolor="#f4b6b6",
                                     edgecolor="#b00000", hatch="xxx", linewidth=0.5,
                                     alpha=0.8, zorder=3))
                n_overlap += 1
    return n_gap, n_overlap


def _gap_parts(poly, g_top: float, g_base: float):
    """The gap (+1) and overlap (-1) parts of the space between two blocks' ends: one
    quadrilateral, or two triangles where the gap at the top turns into an overlap at the
    base (it varies linearly between them)."""
    (xa_t, yt), (xb_t, _), (xb_b, yb), (xa_b, _) = poly
    if abs(g_top) < GAP_LABEL_MIN_M and abs(g_base) < GAP_LABEL_MIN_M:
        return []
    if g_top * g_base >= 0:
        return [(poly, 1 if g_top + g_base > 0 else -1)]
    f = g_top / (g_top - g_base)  # where the two ends cross, from the top
    xc, yc = xa_t + f * (xa_b - xa_t), yt + f * (yb - yt)
    return [([(xa_t, yt), (xb_t, yt), (xc, yc)], 1 if g_top > 0 else -1),
            ([(xc, yc), (xb_b, yb), (xa_b, yb)], 1 if g_base > 0 else -1)]


def draw_restoration(restoration: Restoration, path_stem: str | os.PathLike) -> list[Path]:
    """Draw the restored section to ``<stem>.png``, ``.svg`` and ``.pdf``; returns the paths."""
    r = restoration
    names = sorted({p.top_of for p in r.pieces})
    cols = unit_palette(r.column, names)
    fig = Figure(figsize=(10, 5.2))
    FigureCanvasAgg(fig)
    fig.subplots_adjust(bottom=0.33)
    ax = fig.add_subplot()
    eroded_fills, eroded_beds = _draw_units(ax, r, cols)
    n_gap, n_overlap = _draw_gaps(ax, r)
    ax.autoscale_view()
    _draw_pin_and_loose(ax, r)
    units_drawn = {u.unit for u in r.units}
    handles = [Line2D([], [], color=cols.get(u, "#dddddd"), linewidth=6, label=u)
               for u in (r.column.names if r.column is not None else names) if u in units_drawn]
    # an older sequence (restored below an unconformity) is eroded at it too
    where = ("above the ground or the unconformity" if any(
        w.startswith(("oldest sequence", "middle sequence")) for w in r.reasons)
        else "above the ground")
    handles += _line_handles(bool(eroded_beds), bool(eroded_fills), n_gap, n_overlap, where)
    if handles:
        ax.legend(handles=handles, loc="upper center", bbox_to_anchor=(0.5, -0.22),
                  fontsize=7, ncol=min(len(handles), 4), frameon=False)
    ax.set_xlabel("restored distance from the section start (m)")
    ax.set_ylabel("restored level: m below the top of the column")
    mm = r.line_length_mismatch_pct
    ax.set_title(f"{r.section}: flexural-slip restoration (Dahlstrom 1969) - shortening "
                 f"{r.shortening_pct:.1f} %, line-length spread {mm:.1f} %", fontsize=10,
                 y=1.0)
    ax.set_aspect("equal", adjustable="datalim")
    # Pre-wrapped: matplotlib's own wrapping measures the text word by word on every draw.
    fig.text(0.01, 0.01, "\n".join(textwrap.wrap(CAUTION, 225)), fontsize=6, color="#444444")
    return _save(fig, path_stem)


def _draw_units(ax, r: Restoration, cols: dict[str, str]) -> tuple[list, list]:
    """The restored unit fills and beds, eroded parts paler and dashed; those eroded parts."""
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
    eroded_fills = _eroded_fills(r)
    if eroded_fills:
        ax.add_collection(PathCollection(eroded_fills, facecolors="white", edgecolors="none",
                                         alpha=0.55, linewidths=0), autolim=False)
    beds, eroded_beds = _bed_lines(r)
    if beds:
        ax.add_collection(LineCollection(beds, colors="black", linewidths=0.8), autolim=True)
    if eroded_beds:
        ax.add_collection(LineCollection(eroded_beds, colors="#777777", linewidths=0.8,
                                         linestyles=(0, (4, 3))), autolim=True)
    return eroded_fills, eroded_beds


def _draw_pin_and_loose(ax, r: Restoration) -> None:
    """The pin line and the restored loose line, labelled."""
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


def _line_handles(eroded_beds: bool, eroded_fills: bool, n_gap: int, n_overlap: int,
                  where: str = "above the ground") -> list:
    """The legend's entries after the units: beds, eroded rock, gaps and overlaps."""
    handles: list = [Line2D([], [], color="black", linewidth=0.8, label="bed, preserved")]
    if eroded_beds:
        handles.append(Line2D([], [], color="#777777", linewidth=0.8, linestyle=(0, (4, 3)),
                              label=f"bed eroded ({where}; projected, never observed)"))
    if eroded_fills:
        handles.append(Patch(facecolor="#e6e6e6", edgecolor="none",
                             label=f"paler fill: rock eroded ({where})"))
    if n_gap:
        handles.append(Patch(facecolor="white", edgecolor="#333333", hatch="////",
                             label="gap between fault blocks (m)"))
    if n_overlap:
        handles.append(Patch(facecolor="#f4b6b6", edgecolor="#b00000", hatch="xxx",
                             label="overlap between fault blocks (m)"))
    return handles


def _save(fig: Figure, path_stem: str | os.PathLike) -> list[Path]:
    """The figure as ``<stem>.png``, ``.svg`` and ``.pdf``, each written whole or not at all."""
    out = []
    # No creation dates: rebuilding the same draft gives byte-identical files.
    meta = {"png": {}, "svg": {"metadata": {"Date": None}},
            "pdf": {"metadata": {"CreationDate": None}}}
    # Text stays text in the SVG (searchable, and no glyph outlines to write).
    with matplotlib.rc_context({"svg.fonttype": "none", "svg.hashsalt": "mapsection"}), \
            pdf_fonts():
        for ext in ("png", "svg", "pdf"):
            path = Path(f"{os.fspath(path_stem)}.{ext}")
            with atomic_file(path) as tmp:
                fig.savefig(tmp, format=ext, dpi=150, **meta[ext],
                            **({"pil_kwargs": {"compress_level": 3}} if ext == "png" else {}))
            out.append(path)
    return out
