"""Construct the draft section: the beds carried to depth from the surface data.

Two methods:

* ``"kink"`` — kink-band / dip-domain construction (Suppe 1985, Principles of
  Structural Geology): straight beds in dip domains meeting on axial surfaces that
  bisect the dips (:mod:`mapsection.construct.kink`).
* ``"arc"`` — circular arcs between adjacent dips (Busk 1929, Earth Flexures)
  (:mod:`mapsection.construct.arc`).

Both keep the column's thicknesses perpendicular to bedding; both are positioned by
the map contacts (least squares, residuals kept). Faults split the section into
blocks built each from its own data (:mod:`mapsection.construct.faults`,
:mod:`mapsection.construct.blocks`). The method is chosen from the table of
:mod:`mapsection.construct.methods`; both models satisfy its ``BlockModel`` protocol.
What the construction did goes to one :class:`mapsection.notes.Notes`, whose entries
become ``draft.log`` (build.log).

Horizons are named by the unit whose top they are; the base of the oldest unit is
the horizon ``top_of = "base of <oldest unit>"``.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable, Sequence

import numpy as np

from ..dips import ProjectedDips
from ..draft import Draft
from ..errors import ConstructionError, ParameterError
from ..geology import SurfaceGeology
from ..line import SectionLine
from ..notes import Notes, Warn
from ..stratigraphy import BASE_PREFIX, Column
from ..topo_profile import Profile
from .assemble import add_block, add_faults, add_residuals
from .blocks import (
    FaultBlock,
    drop_fault_contacts,
    neighbour_constraint,
    pool_across_faults,
    section_dips,
    split_blocks,
)
from .constraints import contact_constraints, interval_constraints
from .faults import (
    FaultLine,
    block_polygons,
    detach_on_horizon,
    fault_lines,
    fault_settings,
    ground_ranges,
    order_crossings,
)
from .frame import SectionFrame, ground_below_polygon, ground_function
from .methods import METHOD_TABLE, BlockModel, BlockSetting

METHODS = ("kink", "arc")


def base_name(column: Column) -> str:
    """The name of the horizon at the base of the column (:attr:`Column.base_name`)."""
    return column.base_name


def build_draft(line: SectionLine, profile: Profile, geology: SurfaceGeology,
                dips: ProjectedDips, column: Column, *, name: str = "", method: str = "kink",
                ve: float = 1.0, dip_tolerance: float = 5.0, depth: float | None = None,
                fault_depth: float | None = None, default_dip: float | None = None,
                faults: Sequence = (), default_fault_dip: float | None = None,
                warn: Warn | None = None) -> Draft:
    """Construct the draft section along ``line``.

    Parameters
    ----------
    line, profile, geology, dips, column
        The section line, its topographic profile, the surface geology along it, the
        attitudes projected into it, and the stratigraphic column (youngest first).
    name
        The section's name (default: the line's).
    method
        ``"kink"`` (Suppe 1985) or ``"arc"`` (Busk 1929).
    ve
        Vertical exaggeration, kept for drawing only.
    dip_tolerance
        Degrees: consecutive dips within it share a dip domain.
    depth
        Metres below the lowest ground to the section's base (default: one column
        thickness plus 10 % below the lowest ground).
    fault_depth
        Metres below the lowest ground to the faults' lower ends (default: the base).
    default_dip
        Signed apparent dip (degrees, + descends toward increasing distance) used,
        with a warning, where no dips fall within the corridor.
    faults
        The project's ``[[fault]]`` tables (:class:`mapsection.project.FaultSpec`:
        name, dip, detachment, radius, cuts), matched to the mapped faults by name.
    default_fault_dip
        True dip (degrees) of a fault with no dip on the map nor in its ``[[fault]]``.
    warn
        Called with each warning (default: a :class:`~mapsection._messages.MapsectionWarning`).

    Returns
    -------
    Draft
        Horizons, unit polygons, faults, dip domains, axial surfaces and contact
        residuals in section space; ``draft.log`` says what the construction did.

    Examples
    --------
    >>> from mapsection.project import load_project
    >>> from mapsection.session import SectionSession
    >>> project = load_project("sample_area/project.toml")  # doctest: +SKIP
    >>> with SectionSession.from_project(project, "A") as session:  # doctest: +SKIP
    ...     data = session.run()
    >>> draft = build_draft(data.line, data.profile, data.geology, data.dips,
    ...                     project.column, method="arc")  # doctest: +SKIP

    See docs/construction.md.
    """
    _check_options(method, ve, dip_tolerance, depth, fault_depth, default_dip)
    map_units = [iv.unit for iv in geology.intervals]
    map_units += [u for c in geology.contacts for u in (c.unit_before, c.unit_after)]
    column.check_map_units(map_units, source="map")
    notes = Notes(warn)
    notes.log(f"method: {method} (dip tolerance {dip_tolerance:g}°)")
    label = name or line.name

    ground = ground_function(profile)
    frame = _frame(profile, ground, float(line.length), column, depth)
    settings = fault_settings(faults)
    faults = fault_lines(geology.faults, frame, ground, fault_depth, notes, settings=settings,
                         default_fault_dip=default_fault_dip, azimuth=line.azimuth_at)
    ranges = ground_ranges(faults, frame.length)

    dipset = section_dips(dips, notes)
    if len(dipset) == 0:
        if default_dip is None:
            raise ConstructionError(
                f"section {label}: no dips within the corridor and no default_dip: "
                "set default_dip in the [[section]] to build from the contacts alone")
        notes.warn(f"section {label}: no dips within the corridor; built from the contacts at "
                   f"the default dip {default_dip:g}°", logged=False)
        notes.log(f"no dips within the corridor: default dip {default_dip:g}° used throughout")
    contacts = drop_fault_contacts(contact_constraints(geology, column, ground, notes), faults,
                                   profile, notes)
    if len(contacts) == 0 and not geology.intervals:
        raise ConstructionError(f"section {label}: the line crosses no mapped "
                                "contact or unit: nothing positions the horizons")

    chosen = METHOD_TABLE[method]
    blocks = split_blocks(ranges, dipset, contacts,
                          prepare=lambda ds: chosen.prepare(ds, ground),
                          group=lambda ds: chosen.group(ds, dip_tolerance),
                          default_dip=default_dip, ground=ground, notes=notes)
    blocks = pool_across_faults(blocks, faults, dip_tolerance, notes)
    setting = BlockSetting(frame, ground, float(column.thicknesses.min()),
                           np.append(column.depth_to_top, column.total_thickness),
                           [*column.names, base_name(column)], dip_tolerance, notes)
    models = _fit_blocks(blocks, chosen.fit, setting, geology, column, faults)
    faults = _detach_on_units(faults, models, column, frame, notes)
    _fault_bend_folds(faults, blocks, models, setting, profile)
    faults, older = order_crossings(faults, frame, notes)
    regions = [p.intersection(frame.box) for p in block_polygons(faults, frame, older)]

    draft = Draft(name=label, method=method, line=line, profile=profile, geology=geology,
                  dips=dips, column=column, ve=float(ve), base_elevation_m=frame.base,
                  log=notes.entries)
    ground_poly = ground_below_polygon(profile, frame)
    block_lines = []
    for b, block in enumerate(blocks):
        block_lines.append(add_block(draft, block, models[b], regions[b], ground_poly, setting))
        add_residuals(draft, block, models[b], ground, notes)
    add_faults(draft, faults, block_lines, frame, notes)
    return draft


def _fit_blocks(blocks: list[FaultBlock], fit: Callable[[FaultBlock, BlockSetting], BlockModel],
                st: BlockSetting, geology: SurfaceGeology, column: Column, faults: list
                ) -> list[BlockModel]:
    """Fit every block, those with the most contacts first; a block without contacts is
    positioned by its mapped units, else level with a fitted neighbour. ``blocks`` get
    the constraints they were fitted to."""
    models: dict[int, BlockModel] = {}
    for block in sorted(blocks, key=lambda blk: -len(blk.constraints)):
        b = block.index
        if len(block.constraints) == 0:
            cons = interval_constraints(geology, column, st.ground, block.start, block.end)
            if len(cons):
                st.notes.warn(f"block {b} ({block.start:.0f}-{block.end:.0f} m) has no map "
                              "contact: positioned from the units mapped at the ground "
                              "(mid-unit)")
            else:
                cons = neighbour_constraint(b, {j: m.depth_at for j, m in models.items()},
                                            faults)
                st.notes.warn(f"block {b} has no map contact or unit: positioned level with "
                              "its neighbour across the fault (no separation assumed)")
            block = blocks[b] = dataclasses.replace(block, constraints=cons)
        models[b] = fit(block, st)
    return [models[b] for b in range(len(blocks))]


def _fault_bend_folds(faults: list[FaultLine], blocks: list[FaultBlock],
                      models: list[BlockModel], st: BlockSetting, profile: Profile) -> None:
    """Hanging walls drafted as Suppe (1983) fault-bend folds where the project asks for it
    (``fold = "fault-bend"``); ``blocks`` and ``models`` are updated in place. A hanging
    wall that does not fit the model (dips or contacts off by more than the tolerances)
    keeps its own construction, with a warning."""
    from shapely.geometry import LineString

    from .fbf import fit_fault_bend, log_fit

    wanted = [(k, fl) for k, fl in enumerate(faults)
              if fl.setting is not None and fl.setting.fold == "fault-bend"]
    if not wanted:
        return
    d, z = np.asarray(profile.distance, float), np.asarray(profile.z, float)
    ok = np.isfinite(d) & np.isfinite(z)
    far = st.frame.size * 4
    ground_line = LineString(np.column_stack([np.concatenate([[d[ok][0] - far], d[ok],
                                                              [d[ok][-1] + far]]),
                                              np.concatenate([[z[ok][0]], z[ok],
                                                              [z[ok][-1]]])]))
    for k, fl in wanted:
        hw = k + 1 if fl.hanging_wall_right else k
        out = fit_fault_bend(blocks[hw], fl, st.ground, st.frame, ground_line, st.scale,
                             st.tolerance, st.notes)
        if out is None:
            st.notes.warn(f"fault {fl.name}: no ramp and flat in the section: the hanging wall "
                          "is drafted from its own dips, not as a fault-bend fold")
            continue
        model, domains, fit = out
        bad = (np.isfinite(fit.dip_rms) and fit.dip_rms > st.tolerance) or (
            np.isfinite(fit.contact_rms) and fit.contact_rms > 0.15 * st.scale)
        if bad:
            st.notes.warn(f"fault {fl.name}: the hanging wall does not fit a fault-bend fold "
                          f"(dip RMS {fit.dip_rms:.1f}°, contact RMS {fit.contact_rms:.0f} m): "
                          "drafted from its own dips")
            continue
        models[hw] = model
        blocks[hw] = dataclasses.replace(blocks[hw], domains=tuple(domains))
        log_fit(fit, blocks[hw], fl.name, st.notes)


def _detach_on_units(faults: list[FaultLine], models: list[BlockModel], column: Column,
                     frame: SectionFrame, notes: Notes) -> list[FaultLine]:
    """Faults whose detachment is a unit: the flat runs along the base of that unit in
    the footwall block, as that block was constructed."""
    out = []
    for k, fl in enumerate(faults):
        st = fl.setting
        if st is not None and isinstance(st.detachment, str):
            fw = k if fl.hanging_wall_right else k + 1
            level = float(column.depth_to_top[column.index(st.detachment)]
                          + column.thicknesses[column.index(st.detachment)])
            fl = detach_on_horizon(fl, models[fw].horizon_path(level), st.detachment, frame,
                                   notes)
        out.append(fl)
    return out


def _check_options(method, ve, tol, depth, fault_depth, default_dip) -> None:
    if method not in METHODS:
        raise ParameterError(f"method: unknown construction method {method!r} "
                             f"(use one of {', '.join(METHODS)})")
    if not (np.isfinite(ve) and ve > 0):
        raise ParameterError(f"ve: vertical exaggeration must be > 0, got {ve}")
    if not (np.isfinite(tol) and 0 <= tol < 90):
        raise ParameterError(f"dip_tolerance: must be within 0-90 degrees, got {tol}")
    for key, v in (("depth", depth), ("fault_depth", fault_depth)):
        if v is not None and not (np.isfinite(v) and v > 0):
            raise ParameterError(f"{key}: must be a number of metres > 0, got {v}")
    if default_dip is not None and not (np.isfinite(default_dip) and -90 < default_dip < 90):
        raise ParameterError(f"default_dip: must be a signed apparent dip within ±90°, "
                             f"got {default_dip}")


def _frame(profile: Profile, ground, length: float, column: Column, depth
           ) -> SectionFrame:
    dd = np.asarray(profile.distance, float)
    zz = np.asarray(profile.z, float)
    inside = np.isfinite(zz) & (dd >= 0) & (dd <= length)
    zs = zz[inside] if inside.any() else ground(np.array([0.0, length]))
    zmin, zmax = float(zs.min()), float(zs.max())
    total = column.total_thickness
    base = zmin - (depth if depth is not None else 1.1 * total)
    return SectionFrame(length, base, zmax + total, zmin, zmax)


__all__ = ["BASE_PREFIX", "METHODS", "base_name", "build_draft"]
