"""The location map beside the section: the geologic map around the section line.

The map's unit polygons and faults (with their sense marks: teeth on the hanging wall of
a thrust, bar and ball on the downthrown side of a normal fault, after FGDC-STD-013-2006)
fill the panel; the section line with its ends and bends, the contact misfits, ticked
grid coordinates, a scale bar and a north arrow (grid north) are drawn over it.
"""

from __future__ import annotations

import numpy as np
import shapely
from matplotlib.collections import LineCollection, PatchCollection
from matplotlib.figure import Figure
from matplotlib.patches import PathPatch, Rectangle
from matplotlib.patches import Polygon as MplPolygon
from matplotlib.transforms import blended_transform_factory

from ..draft import Draft
from ..extent import location_view_limit
from ..mapdata import MapData
from . import colours as C
from .layout import MM, end_names, nice_length
from .shapes import lines_xy, polygons_path


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


def _view(draft: Draft, map_data: MapData, aw: float, ah: float
          ) -> tuple[np.ndarray, np.ndarray, float, float]:
    """The map's view for a panel of at most ``aw`` by ``ah`` (inches): its centre and
    half-extents (m) and the panel's size shrunk to the view's shape."""
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
    return centre, half, aw, ah


def _draw_line(iax, draft: Draft, misfits) -> None:
    """The section line with its bends and named ends, and the contact misfits on it."""
    line = draft.line
    v = line.vertices
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


def _grid_ticks(iax) -> None:
    """Ticked map coordinates (three a side, whole metres) and the panel's title."""
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


def _north_and_scale(iax, xmin: float, xmax: float, ah: float) -> None:
    """The north arrow (grid north of the project CRS) above the map's top right corner
    and the scale bar under the tick labels; ``ah`` is the map's height (inches)."""
    iax.annotate("N", xy=(1.0, 1.0 + 5.5 * MM / ah), xytext=(1.0, 1.0 + 1.0 * MM / ah),
                 xycoords="axes fraction", ha="right", va="bottom", fontsize=6,
                 arrowprops={"arrowstyle": "-|>", "linewidth": 0.8, "color": "black"},
                 annotation_clip=False, gid="north-arrow")
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
    centre, half, aw, ah = _view(draft, map_data, aw, ah)
    bottom += height - (ah + mb + mt)
    iax = fig.add_axes(((left + ml) / W, (bottom + mb) / H, aw / W, ah / H))
    xmin, ymin = centre - half
    xmax, ymax = centre + half
    _inset_units(iax, map_data, palette, (xmin, ymin, xmax, ymax))
    _inset_faults(iax, map_data, (xmin, ymin, xmax, ymax))
    _draw_line(iax, draft, misfits)
    iax.set_xlim(xmin, xmax)
    iax.set_ylim(ymin, ymax)
    iax.set_aspect("auto")
    _grid_ticks(iax)
    _north_and_scale(iax, xmin, xmax, ah)
