"""Around the section panel: its frame, the scale bars, the legend and the title block.

The frame names the section's ends with their compass directions and bearings, marks the
bends and, for a failed draft, the failed tests; the scale bar's printed length is its
ground length over the sheet's scale; the legend lists the column (youngest first) and
the line symbols drawn; the title block holds the line's coordinates, CRS, scales,
sources and the caution. :mod:`mapsection.render.section` places them with
:mod:`mapsection.render.layout`.
"""

from __future__ import annotations

import math
import textwrap

from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import Rectangle
from matplotlib.transforms import blended_transform_factory

from .. import __version__
from ..caution import CAUTION
from ..draft import Draft
from . import colours as C
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
    compass_point,
    end_bearings,
    end_names,
    nice_length,
    ve_text,
)
from .section_panel import _Page
from .sheet import TitleInfo, scale_text


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
