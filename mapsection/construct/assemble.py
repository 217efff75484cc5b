"""The fitted blocks turned into the draft's features: horizons and unit polygons cut to
each block's region, dip domains, axial surfaces, contact residuals and the fault
traces with their separations."""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
import shapely
from shapely.geometry import LineString, Polygon

from ..draft import (
    AxialSurface,
    ContactResidual,
    DipDomain,
    Draft,
    FaultTrace,
    Horizon,
    UnitPolygon,
)
from ..notes import Notes
from ..stratigraphy import Column
from .blocks import FaultBlock
from .constraints import Constraints
from .fault_regions import separations
from .faults import FaultLine
from .frame import SectionFrame, below_polygon, line_parts, poly_parts
from .methods import BlockModel, BlockSetting


def add_block(draft: Draft, block: FaultBlock, model: BlockModel, region: Polygon,
              ground_poly: Polygon, st: BlockSetting) -> dict[str, list[LineString]]:
    """Add one block's horizons, units, domains and axial surfaces to ``draft``; returns
    the block's full horizon lines by name (for the separations across its faults)."""
    b = block.index
    lines_b: dict[str, list[LineString]] = {}
    belows = []
    for nm, s in zip(st.names, st.levels, strict=True):
        pieces = [LineString(p) for p in model.horizon_pieces(float(s))]
        lines_b[nm] = pieces
        for piece in pieces:
            clipped = piece.intersection(region)
            for part in line_parts(clipped.intersection(ground_poly)):
                draft.horizons.append(Horizon(nm, part, False, b))
            for part in line_parts(clipped.difference(ground_poly)):
                draft.horizons.append(Horizon(nm, part, True, b))
        belows.append(below_polygon(model.horizon_path(float(s)), st.frame))
    under = region.intersection(ground_poly)
    for i, unit in enumerate(draft.column.names):
        poly = poly_parts(belows[i].difference(belows[i + 1]).intersection(under))
        if poly is not None:
            draft.units.append(UnitPolygon(unit, poly, b))
    for dm in block.domains:
        draft.domains.append(DipDomain(dm.start, dm.end, dm.dip, dm.n_dips, b))
    for pts, gd, left_dip, right_dip in model.axial_surfaces():
        for part in line_parts(LineString(pts).intersection(region)):
            c = np.asarray(part.coords)
            if c[0, 1] < c[-1, 1]:
                part = LineString(c[::-1])
            if not np.isfinite(gd):
                x = part.intersection(ground_poly.exterior)
                xs = shapely.get_coordinates(x)
                gd = float(xs[0, 0]) if len(xs) else float("nan")
            draft.axial_surfaces.append(AxialSurface(part, gd, left_dip, right_dip))
    return lines_b


def add_residuals(draft: Draft, block: FaultBlock, model: BlockModel, ground: Callable,
                  notes: Notes) -> None:
    """The residual of every map contact of the block (perpendicular to bedding), their RMS
    in the log, and a warning for contradictory contacts."""
    cons = block.constraints
    if not len(cons):
        return
    s_model = model.depth_at(cons.distance, cons.elevation)
    res = s_model - cons.depth  # + : the constructed horizon passes above the contact
    real = cons.is_contact
    for i in np.flatnonzero(real):
        draft.residuals.append(ContactResidual(float(cons.distance[i]), float(cons.elevation[i]),
                                               cons.top_of[i], float(res[i])))
    if real.any():
        rms = float(np.sqrt(np.mean(res[real] ** 2)))
        notes.log(f"block {block.index}: {int(real.sum())} contact(s) position the horizons, "
                  f"RMS residual {rms:.1f} m (perpendicular to bedding)")
        _check_order(cons.subset(real), model, draft.column, ground, block.index, notes)


def _check_order(cons: Constraints, model: BlockModel, column: Column, ground: Callable, b: int,
                 notes: Notes) -> None:
    """Contradictory contacts: at each contact the construction's beds say whether
    the ground goes up or down section toward increasing distance; a contact whose
    units are the other way round puts a younger unit below an older one."""
    d = cons.distance
    step = 0.5
    s1 = model.depth_at(d + step, ground(d + step))
    s0 = model.depth_at(d - step, ground(d - step))
    grad = (s1 - s0) / (2 * step)  # + : older ground toward increasing distance
    idx_b = np.array([column.index(u) for u in cons.before])
    idx_a = np.array([column.index(u) for u in cons.after])
    older_after = idx_a > idx_b
    bad = ((grad > 0.03) & ~older_after) | ((grad < -0.03) & older_after)
    for i in np.flatnonzero(bad):
        others = [j for j in range(len(d)) if j != i]
        same = [j for j in others if {cons.before[j], cons.after[j]}
                == {cons.before[i], cons.after[i]}]
        pool = same or others
        if pool:
            j = min(pool, key=lambda j: abs(d[j] - d[i]))
            other = f"the contact {cons.before[j]}|{cons.after[j]} at {d[j]:.0f} m"
        else:
            other = "the dips"
        notes.warn(f"block {b}: contradictory contacts: {cons.before[i]}|{cons.after[i]} at "
                   f"{d[i]:.0f} m and {other} cannot both hold with the beds constructed here: "
                   "a younger unit would lie below an older one with no fault between them")


def add_faults(draft: Draft, faults: list[FaultLine], block_lines: list[dict],
               frame: SectionFrame, notes: Notes) -> None:
    """Each fault's trace and the separation of every horizon across it."""
    reach = frame.size * 4
    for k, fl in enumerate(faults):
        seps = separations(fl, block_lines[k], block_lines[k + 1], reach)
        f = fl.crossing
        segs = tuple((kind, float(g.length)) for kind, g in fl.segments(frame))
        draft.faults.append(FaultTrace(f.name or f"fault {k + 1}", fl.trace(frame), f.dip,
                                       f.dip_direction, f.apparent_dip, f.sense, seps, segs))
        if seps:
            side = "right" if fl.hanging_wall_right else "left"
            vals = ", ".join(f"{t} {v:.0f} m" for t, v in seps.items())
            notes.log(f"fault {f.name or k + 1} at {f.distance_m:.0f} m (hanging wall on the "
                      f"{side}): separations along the fault {vals}")


__all__ = ["add_block", "add_faults", "add_residuals"]
