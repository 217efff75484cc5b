"""Construct the draft section: the beds carried to depth from the surface data.

Two methods:

* ``"kink"`` — kink-band / dip-domain construction (Suppe 1985, Principles of
  Structural Geology): straight beds in dip domains meeting on axial surfaces that
  bisect the dips (:mod:`mapsection.construct.kink`).
* ``"arc"`` — circular arcs between adjacent dips (Busk 1929, Earth Flexures)
  (:mod:`mapsection.construct.arc`).

Both keep the column's thicknesses perpendicular to bedding; both are positioned by
the map contacts (least squares, residuals kept). Faults split the section into
blocks built each from its own data (:mod:`mapsection.construct.faults`).

Horizons are named by the unit whose top they are; the base of the oldest unit is
the horizon ``top_of = "base of <oldest unit>"``.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
import shapely
from shapely.geometry import LineString

from .._messages import default_warn as _default_warn
from ..dips import ProjectedDips
from ..draft import (
    AxialSurface,
    ContactResidual,
    DipDomain,
    Draft,
    FaultTrace,
    Horizon,
    UnitPolygon,
)
from ..errors import ConstructionError
from ..geology import SurfaceGeology
from ..line import SectionLine
from ..profile import Profile
from ..settings import DEFAULTS, METHODS, SectionSettings
from ..stratigraphy import Column
from ._common import (
    Constraints,
    Domain,
    Frame,
    below_polygon,
    contact_constraints,
    dip_arrays,
    ground_below_polygon,
    ground_function,
    group_domains,
    interval_constraints,
    line_parts,
    poly_parts,
    travel_angle,
    wrap180,
)
from .arc import ArcModel
from .faults import block_polygons, fault_lines, ground_ranges, separations
from .kink import KinkModel, fit_kink

BASE_PREFIX = "base of "


def base_name(column: Column) -> str:
    """The name of the horizon at the base of the column."""
    return f"{BASE_PREFIX}{column.names[-1]}"


def build_draft(line: SectionLine, profile: Profile, geology: SurfaceGeology,
                dips: ProjectedDips, column: Column, *, name: str = "",
                method: str = DEFAULTS.method, ve: float = DEFAULTS.ve,
                dip_tolerance: float = DEFAULTS.dip_tolerance, depth: float | None = None,
                fault_depth: float | None = None, default_dip: float | None = None,
                warn: Callable[[str], None] | None = None) -> Draft:
    """Construct the draft section along ``line``.

    ``depth``: metres below the lowest ground to the section's base (default: one
    column thickness plus 10 % below the lowest ground). ``fault_depth``: metres below
    the lowest ground to the faults' lower ends (default: the section's base).
    ``default_dip``: signed apparent dip (degrees, + descends toward increasing
    distance) used, with a warning, where no dips fall within the corridor. ``ve`` is
    kept for drawing only. See docs/construction.md.
    """
    warn = warn or _default_warn
    _check_options(method, ve, dip_tolerance, depth, fault_depth, default_dip)
    map_units = [iv.unit for iv in geology.intervals]
    map_units += [u for c in geology.contacts for u in (c.unit_before, c.unit_after)]
    column.check_map_units(map_units, source="map")
    log: list[str] = [f"method: {method} (dip tolerance {dip_tolerance:g}°)"]

    ground = ground_function(profile)
    length = float(line.length)
    frame = _frame(profile, ground, length, column, depth)
    levels = np.append(column.depth_to_top, column.total_thickness)
    names = [*column.names, base_name(column)]

    faults = fault_lines(geology.faults, frame, ground, fault_depth, warn, log)
    ranges = ground_ranges(faults, length)
    regions = [p.intersection(frame.box) for p in block_polygons(faults, frame)]

    d, z, phi, w, poor = dip_arrays(dips)
    if poor.any() and not poor.all():
        log.append(f"{int(poor.sum())} poorly constrained dip(s) (strike near the section's "
                   "azimuth) left out of the dip domains")
        d, z, phi, w = d[~poor], z[~poor], phi[~poor], w[~poor]
    if len(d) == 0:
        if default_dip is None:
            raise ConstructionError(
                f"section {name or line.name}: no dips within the corridor and no default_dip: "
                "set default_dip in the [[section]] to build from the contacts alone")
        warn(f"section {name or line.name}: no dips within the corridor; built from the "
             f"contacts at the default dip {default_dip:g}°")
        log.append(f"no dips within the corridor: default dip {default_dip:g}° used throughout")

    contacts = _drop_fault_contacts(contact_constraints(geology, column, ground, log), faults,
                                    profile, log)
    if len(contacts) == 0 and not geology.intervals:
        raise ConstructionError(f"section {name or line.name}: the line crosses no mapped "
                                "contact or unit: nothing positions the horizons")

    # Per block: its own dips (domains) and its own contacts.
    blocks = []
    for b, (lo, hi) in enumerate(ranges):
        inb = (d >= lo) & (d < hi)
        blocks.append({"range": (lo, hi), "d": d[inb], "z": z[inb], "phi": phi[inb],
                       "w": w[inb], "cons": contacts.subset((contacts.distance >= lo)
                                                            & (contacts.distance < hi)),
                       "index": b})
    _assign_dips(blocks, default_dip, dip_tolerance, ground, log, warn)

    scale = float(column.thicknesses.min())
    models: list = [None] * len(blocks)
    order = sorted(range(len(blocks)), key=lambda b: -len(blocks[b]["cons"]))
    for b in order:
        blk = blocks[b]
        cons = blk["cons"]
        if len(cons) == 0:
            cons = interval_constraints(geology, column, ground, *blk["range"])
            if len(cons):
                msg = (f"block {b} ({blk['range'][0]:.0f}-{blk['range'][1]:.0f} m) has no map "
                       "contact: positioned from the units mapped at the ground (mid-unit)")
            else:
                cons = _neighbour_constraint(b, blocks, models, faults)
                msg = (f"block {b} has no map contact or unit: positioned level with its "
                       "neighbour across the fault (no separation assumed)")
            warn(msg)
            log.append(msg)
            blk["cons"] = cons
        models[b] = _build_block(method, blk, frame, ground, scale, levels, names, log,
                                 dip_tolerance)

    draft = Draft(name=name or line.name, method=method, line=line, profile=profile,
                  geology=geology, dips=dips, column=column, ve=float(ve),
                  base_elevation_m=frame.base, log=log)
    ground_poly = ground_below_polygon(profile, frame)
    block_lines: list[dict[str, list[LineString]]] = []
    for b, (blk, model) in enumerate(zip(blocks, models, strict=True)):
        region = regions[b]
        lines_b: dict[str, list[LineString]] = {}
        belows = []
        for nm, s in zip(names, levels, strict=True):
            pieces = [LineString(p) for p in model.horizon_pieces(float(s))]
            lines_b[nm] = pieces
            for piece in pieces:
                clipped = piece.intersection(region)
                for part in line_parts(clipped.intersection(ground_poly)):
                    draft.horizons.append(Horizon(nm, part, False, b))
                for part in line_parts(clipped.difference(ground_poly)):
                    draft.horizons.append(Horizon(nm, part, True, b))
            belows.append(below_polygon(model.horizon_path(float(s)), frame))
        block_lines.append(lines_b)
        under = region.intersection(ground_poly)
        for i, unit in enumerate(column.names):
            poly = poly_parts(belows[i].difference(belows[i + 1]).intersection(under))
            if poly is not None:
                draft.units.append(UnitPolygon(unit, poly, b))
        _domains_out(draft, blk, model, b, region, ground_poly)
        _residuals_out(draft, blk, model, column, ground, b, warn, log)

    reach = frame.size * 4
    for k, fl in enumerate(faults):
        seps = separations(fl, block_lines[k], block_lines[k + 1], reach)
        f = fl.crossing
        draft.faults.append(FaultTrace(f.name or f"fault {k + 1}", fl.trace(frame), f.dip,
                                       f.dip_direction, f.apparent_dip, f.sense, seps))
        if seps:
            side = "right" if fl.hanging_wall_right else "left"
            vals = ", ".join(f"{t} {v:.0f} m" for t, v in seps.items())
            log.append(f"fault {f.name or k + 1} at {f.distance_m:.0f} m (hanging wall on the "
                       f"{side}): separations along the fault {vals}")
    return draft


def _drop_fault_contacts(cons: Constraints, faults, profile: Profile, log) -> Constraints:
    """A contact where the line crosses a fault is the fault itself, not a stratigraphic
    contact: it does not position the beds."""
    if not faults or not len(cons):
        return cons
    px = float(profile.pixel_size) if np.isfinite(profile.pixel_size) else 0.0
    tol = max(px, 10.0)  # one DEM pixel: the map's contact and fault traces meet there
    fd = np.array([f.p0[0] for f in faults])
    near = np.min(np.abs(cons.distance[:, None] - fd[None, :]), axis=1) <= tol
    for i in np.flatnonzero(near):
        log.append(f"contact {cons.before[i]}|{cons.after[i]} at {cons.distance[i]:.0f} m lies "
                   f"on a fault (within {tol:.0f} m): taken as the fault, not as a bed contact")
    return cons.subset(~near)


def _check_options(method, ve, tol, depth, fault_depth, default_dip) -> None:
    # The rules are the settings' own (mapsection.settings), written once there.
    SectionSettings(method=method, ve=ve, dip_tolerance=tol, depth=depth,
                    fault_depth=fault_depth, default_dip=default_dip)


def _frame(profile: Profile, ground, length: float, column: Column, depth) -> Frame:
    dd = np.asarray(profile.distance, float)
    zz = np.asarray(profile.z, float)
    inside = np.isfinite(zz) & (dd >= 0) & (dd <= length)
    zs = zz[inside] if inside.any() else ground(np.array([0.0, length]))
    zmin, zmax = float(zs.min()), float(zs.max())
    total = column.total_thickness
    base = zmin - (depth if depth is not None else 1.1 * total)
    return Frame(length, base, zmax + total, zmin, zmax)


def _assign_dips(blocks, default_dip, tol, ground, log, warn) -> None:
    """Domains per block; a block without dips borrows the nearest neighbour's domain
    on its side (or the default dip)."""
    for blk in blocks:
        if len(blk["d"]):
            blk["domains"] = group_domains(blk["d"], blk["phi"], blk["w"], tol)
            blk["borrowed"] = False
    with_dips = [i for i, b in enumerate(blocks) if len(b["d"])]
    for i, blk in enumerate(blocks):
        if len(blk["d"]):
            continue
        lo, hi = blk["range"]
        mid = 0.5 * (lo + hi)
        if with_dips:
            j = min(with_dips, key=lambda j: abs(j - i))
            dm = blocks[j]["domains"][-1 if j < i else 0]
            phi = dm.phi
            msg = (f"block {i} ({lo:.0f}-{hi:.0f} m) has no dips: uses the dip {dm.dip:.1f}° of "
                   f"the nearest domain of block {j}")
            warn(msg)
            log.append(msg)
        else:
            phi = float(travel_angle(default_dip, False))
        blk["domains"] = [Domain(mid, mid, phi, 0)]
        blk["d"] = np.array([mid])
        blk["z"] = np.array([float(ground(mid))])
        blk["phi"] = np.array([phi])
        blk["w"] = np.array([1.0])
        blk["borrowed"] = True


def _neighbour_constraint(b, blocks, models, faults) -> Constraints:
    """Level with a built neighbour at the shared fault's ground point."""
    for j, k in ((b - 1, b - 1), (b + 1, b)):
        if 0 <= j < len(blocks) and models[j] is not None:
            p = faults[k].p0
            s = models[j].depth_at(np.array([p[0]]), np.array([p[1]]))
            return Constraints(np.array([p[0]]), np.array([p[1]]), s, np.ones(1), ("",),
                               np.zeros(1, bool), (None,), (None,))
    raise ConstructionError("no block has a map contact or a mapped unit: nothing positions "
                            "the horizons")


def _build_block(method, blk, frame, ground, scale, levels, names, log, dip_tolerance):
    cons = blk["cons"]
    b = blk["index"]
    if method == "kink":
        model = fit_kink(blk["domains"], cons, ground, frame, scale, log)
        _log_kink(model, cons, b, log)
        return model
    # Busk: dips grouped into domains as for the kink method (dips at one distance averaged);
    # straight beds within a domain, one arc tangent to both limbs between domains.
    dd, zz, pp = _merge_close(blk["d"], blk["z"], blk["phi"], blk["w"])
    zz = np.where(np.isfinite(zz), zz, ground(dd))
    return ArcModel(dd, zz, pp, cons, frame, levels, names, log, tolerance=dip_tolerance,
                    ground=ground)


def _merge_close(d, z, phi, w, tol=1.0):
    """Dips less than ``tol`` metres apart along the line are averaged (Busk needs one
    normal per position)."""
    if len(d) == 0:
        return d, z, phi
    group = np.concatenate([[0], np.cumsum(np.diff(d) > tol)])
    n = group[-1] + 1
    sw = np.bincount(group, w, n)
    ref = phi[np.searchsorted(group, np.arange(n))]
    rel = wrap180(phi - ref[group])
    pm = wrap180(ref + np.bincount(group, w * rel, n) / sw)
    return (np.bincount(group, w * d, n) / sw, np.bincount(group, w * z, n) / sw, pm)


def _log_kink(model: KinkModel, cons: Constraints, b: int, log: list[str]) -> None:
    k = np.searchsorted(model.hinges, cons.distance)
    own = np.bincount(k[cons.is_contact], minlength=len(model.domains))
    for i, dm in enumerate(model.domains):
        if own[i] == 0 and len(model.domains) > 1:
            log.append(f"block {b}: dip domain {dm.start:.0f}-{dm.end:.0f} m (dip {dm.dip:.1f}°) "
                       "has no map contact of its own: positioned from its neighbours "
                       "(continuity across its axial surfaces, kept inside their gaps)")
    for i, h in enumerate(model.hinges):
        lo, hi = model.domains[i].end, model.domains[i + 1].start
        log.append(f"block {b}: axial surface between dips {model.domains[i].dip:.1f}° and "
                   f"{model.domains[i + 1].dip:.1f}° meets the ground at {h:.0f} m "
                   f"(gap {lo:.0f}-{hi:.0f} m, placed by the contacts)")


def _domains_out(draft: Draft, blk, model, b: int, region, ground_poly) -> None:
    for dm in blk["domains"]:
        draft.domains.append(DipDomain(dm.start, dm.end, dm.dip, dm.n_dips, b))
    if not isinstance(model, KinkModel):
        return
    for pts, piece in model.axial_segments():
        for part in line_parts(LineString(pts).intersection(region)):
            c = np.asarray(part.coords)
            if c[0, 1] < c[-1, 1]:
                part = LineString(c[::-1])
            gd = piece.ground_distance
            if not np.isfinite(gd):
                x = part.intersection(ground_poly.exterior)
                xs = shapely.get_coordinates(x)
                gd = float(xs[0, 0]) if len(xs) else float("nan")
            draft.axial_surfaces.append(AxialSurface(part, gd, model.domains[piece.left].dip,
                                                     model.domains[piece.right].dip))


def _residuals_out(draft, blk, model, column, ground, b, warn, log) -> None:
    cons: Constraints = blk["cons"]
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
        log.append(f"block {b}: {int(real.sum())} contact(s) position the horizons, RMS "
                   f"residual {rms:.1f} m (perpendicular to bedding)")
        _check_order(cons.subset(real), model, column, ground, b, warn, log)


def _check_order(cons: Constraints, model, column: Column, ground, b, warn, log) -> None:
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
        msg = (f"block {b}: contradictory contacts: {cons.before[i]}|{cons.after[i]} at "
               f"{d[i]:.0f} m and {other} cannot both hold with the beds constructed here: a "
               "younger unit would lie below an older one with no fault between them")
        warn(msg)
        log.append(msg)


__all__ = ["BASE_PREFIX", "METHODS", "base_name", "build_draft"]
