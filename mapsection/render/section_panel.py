"""The section panel: what is drawn inside the section's axes.

The unit fills, the horizons (dashed below the constrained depth, short-dashed where
projected above the ground), the faults with half-arrows of relative motion, the
projected bedding dips as ticks at their apparent dip, the unit labels, the contact
misfits and the restoration's pin and loose lines. Symbols follow the FGDC Digital
Cartographic Standard for Geologic Map Symbolization (FGDC-STD-013-2006); see
:mod:`mapsection.render.colours`. :mod:`mapsection.render.section` lays the sheet out
and calls these steps in order.

Vertical exaggeration is applied once, as the axes' aspect ratio: a dip tick of
apparent dip ``a`` appears on the page at ``atan(VE * tan a)``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import matplotlib
import numpy as np
import shapely
import shapely.affinity
from matplotlib.collections import LineCollection, PatchCollection
from matplotlib.patches import PathPatch

from ..draft import Draft
from . import colours as C
from .layout import MM, SheetLayout, tick_segment
from .shapes import lines_xy, polygon_path


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
