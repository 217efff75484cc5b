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
from collections.abc import Callable, Iterable, Sequence
from typing import TYPE_CHECKING

import numpy as np

from ..dips import ProjectedDips
from ..draft import Draft
from ..errors import ConstructionError
from ..geology import SurfaceGeology
from ..line import SectionLine
from ..notes import Notes, Warn
from ..settings import DEFAULTS, METHODS, SectionSettings
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
from .carried import carry_hanging_walls
from .constraints import (
    Constraints,
    contact_constraints,
    corridor_constraints,
    interval_constraints,
    log_corridor,
)
from .cover import add_unlayered, bedrock_geology, has_unlayered
from .domains import group_domains
from .faults import (
    FaultLine,
    block_polygons,
    detach_on_units,
    fault_lines,
    fault_settings,
    ground_ranges,
    order_crossings,
)
from .fbf import fault_bend_folds
from .frame import SectionFrame, ground_below_polygon, ground_function
from .methods import METHOD_TABLE, BlockModel, BlockSetting
from .outliers import screen_dips
from .plunge import MIN_ANGLE_DEG, PlungeMap, from_profile, inner_depth, plunge_map, to_profile

if TYPE_CHECKING:  # pragma: no cover - typing only
    from ..corridor import CorridorContacts


def base_name(column: Column) -> str:
    """The name of the horizon at the base of the column (:attr:`Column.base_name`)."""
    return column.base_name


def build_draft(line: SectionLine, profile: Profile, geology: SurfaceGeology,
                dips: ProjectedDips, column: Column, *, name: str = "",
                method: str = DEFAULTS.method, ve: float = DEFAULTS.ve,
                dip_tolerance: float = DEFAULTS.dip_tolerance, depth: float | None = None,
                fault_depth: float | None = None, default_dip: float | None = None,
                keep_readings: Iterable[str] = (),
                corridor_contacts: CorridorContacts | None = None,
                plunge_axis: tuple[float, float] | None = None,
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
    keep_readings
        Ids of readings kept in the dip domains even where their neighbours disagree
        with them (see docs/dips.md, "Outliers").
    corridor_contacts
        The map's contacts beside the line, projected into the section
        (:func:`mapsection.corridor.corridor_contacts`): they position each block's
        horizons with the line's own contacts, weighted by their distance from the
        line; a block with no contact on the line is positioned by them before any
        fallback.
    plunge_axis
        ``(trend, plunge)`` of the fold axis, degrees: the section is constructed in
        the down-plunge view (true thicknesses and dips) and carried back, so that each
        unit has its apparent thickness ``t / cos θ`` in the section, θ the angle
        between the axis and the section plane's normal
        (:mod:`mapsection.construct.plunge`).
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
        residuals in section space; ``draft.log`` says what the construction did and
        ``draft.outliers`` lists the readings kept out of the dip domains.

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
    options = dict(name=name, method=method, ve=ve, dip_tolerance=dip_tolerance, depth=depth,
                   fault_depth=fault_depth, default_dip=default_dip,
                   keep_readings=keep_readings, corridor_contacts=corridor_contacts,
                   faults=faults, default_fault_dip=default_fault_dip, warn=warn)
    if has_unlayered(column):
        # Cover and intrusive units are no layers: the layered units are constructed from
        # the bedrock's own contacts, then the others are drawn over them (construct.cover).
        column.check_map_units([iv.unit for iv in geology.intervals], source="map")
        layered = build_draft(line, profile, bedrock_geology(geology, column), dips,
                              column.layered(), plunge_axis=plunge_axis, **options)
        return add_unlayered(layered, geology, column)
    if len(column.layered().sequences()) > 1:  # unconformities: each sequence on its own
        from .sequences import build_sequences

        _check_map_units(geology, column)
        return build_sequences(build_draft, line, profile, geology, dips, column,
                               plunge_axis=plunge_axis, **options)
    if plunge_axis is not None:
        pm = plunge_map(line, *plunge_axis)
        if pm is not None:
            return _build_plunging(pm, line, profile, geology, dips, column, **options)
        Notes(warn).warn(f"section {name or line.name}: the line (or a segment of it) runs "
                         f"within {MIN_ANGLE_DEG:g}° of the fold axis' trend "
                         f"({plunge_axis[0]:g}°) or turns across it: no down-plunge view; "
                         "built without the plunge correction", logged=False)
    return _build_sequence(line, profile, geology, dips, column, **options)


def _check_map_units(geology: SurfaceGeology, column: Column) -> None:
    """Every unit of the map's intervals and contacts is in the column."""
    map_units = [iv.unit for iv in geology.intervals]
    map_units += [u for c in geology.contacts for u in (c.unit_before, c.unit_after)]
    column.check_map_units(map_units, source="map")


def _build_sequence(line: SectionLine, profile: Profile, geology: SurfaceGeology,
                    dips: ProjectedDips, column: Column, *, name: str, method: str, ve: float,
                    dip_tolerance: float, depth: float | None, fault_depth: float | None,
                    default_dip: float | None, keep_readings: Iterable[str],
                    corridor_contacts: CorridorContacts | None, faults: Sequence,
                    default_fault_dip: float | None, warn: Warn | None) -> Draft:
    """One sequence of layered units, in the section's own plane: the frame and faults,
    the contacts and dips that position each fault block, the blocks' models, the
    hanging walls carried, then the draft assembled."""
    _check_map_units(geology, column)
    notes = Notes(warn)
    notes.log(f"method: {method} (dip tolerance {dip_tolerance:g}°)")
    label = name or line.name

    ground = ground_function(profile)
    frame = _frame(profile, ground, float(line.length), column, depth)
    faults = fault_lines(geology.faults, frame, ground, fault_depth, notes,
                         settings=fault_settings(faults), default_fault_dip=default_fault_dip,
                         azimuth=line.azimuth_at)
    ranges = ground_ranges(faults, frame.length)
    contacts = drop_fault_contacts(contact_constraints(geology, column, ground, notes), faults,
                                   profile, notes)
    support = _contact_support(dips, contacts, ground, frame, float(column.thicknesses.min()),
                               dip_tolerance, notes)
    screened, outliers = screen_dips(dips, ranges, dip_tolerance, keep_readings, notes,
                                     support)
    dipset = _section_dipset(screened, default_dip, label, notes)
    beside = corridor_constraints(corridor_contacts, column)
    log_corridor(beside, contacts, ranges, notes)
    contacts = Constraints.concat([contacts, beside])
    if len(contacts) == 0 and not geology.intervals:
        raise ConstructionError(f"section {label}: the line crosses no mapped "
                                "contact or unit: nothing positions the horizons")

    setting = BlockSetting(frame, ground, float(column.thicknesses.min()),
                           np.append(column.depth_to_top, column.total_thickness),
                           [*column.names, base_name(column)], dip_tolerance, notes)
    blocks, models, faults, regions = _construct_blocks(
        METHOD_TABLE[method], ranges, dipset, contacts, faults, default_dip, setting,
        geology, column, profile)
    draft = Draft(name=label, method=method, line=line, profile=profile, geology=geology,
                  dips=dips, column=column, ve=float(ve), base_elevation_m=frame.base,
                  log=notes.entries, outliers=outliers)
    _assemble(draft, blocks, models, regions, faults, setting, profile)
    return draft


def _section_dipset(screened: ProjectedDips, default_dip: float | None, label: str,
                    notes: Notes):
    """The screened dips in section terms; none at all needs the default dip."""
    dipset = section_dips(screened, notes)
    if len(dipset) == 0:
        if default_dip is None:
            raise ConstructionError(
                f"section {label}: no dips within the corridor and no default_dip: "
                "set default_dip in the [[section]] to build from the contacts alone")
        notes.warn(f"section {label}: no dips within the corridor; built from the contacts at "
                   f"the default dip {default_dip:g}°", logged=False)
        notes.log(f"no dips within the corridor: default dip {default_dip:g}° used throughout")
    return dipset


def _construct_blocks(chosen, ranges: list[tuple[float, float]], dipset, contacts: Constraints,
                      faults: list[FaultLine], default_dip: float | None, setting: BlockSetting,
                      geology: SurfaceGeology, column: Column, profile: Profile):
    """Split the section into fault blocks, fit each with the chosen method, detach,
    fold and carry the hanging walls; returns the blocks, their models, the faults in
    the order they cut one another, and each block's region in the section."""
    ground, frame, notes = setting.ground, setting.frame, setting.notes
    blocks = split_blocks(ranges, dipset, contacts,
                          prepare=lambda ds: chosen.prepare(ds, ground),
                          group=lambda ds: chosen.group(ds, setting.tolerance),
                          default_dip=default_dip, ground=ground, notes=notes)
    blocks = pool_across_faults(blocks, faults, setting.tolerance, notes)
    models = _fit_blocks(blocks, chosen.fit, setting, geology, column, faults)
    faults = detach_on_units(faults, models, column, frame, notes)
    fault_bend_folds(faults, blocks, models, setting, profile)
    faults, older = order_crossings(faults, frame, notes)
    models = carry_hanging_walls(faults, blocks, models, setting, older)
    regions = [p.intersection(frame.box) for p in block_polygons(faults, frame, older)]
    return blocks, models, faults, regions


def _assemble(draft: Draft, blocks: list[FaultBlock], models: list[BlockModel], regions: list,
              faults: list[FaultLine], setting: BlockSetting, profile: Profile) -> None:
    """Each block's horizons, units and residuals, then the faults, into ``draft``."""
    ground_poly = ground_below_polygon(profile, setting.frame)
    block_lines = []
    for b, block in enumerate(blocks):
        block_lines.append(add_block(draft, block, models[b], regions[b], ground_poly, setting))
        add_residuals(draft, block, models[b], setting.ground, setting.notes)
    add_faults(draft, faults, block_lines, setting.frame, setting.notes)


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


SUPPORT_GAIN = 0.5  # the tool's default: the contacts' RMS must at least halve ...
SUPPORT_MIN = 0.1  # ... and drop by 10 % of the thinnest unit for a lone reading to stay
# The tool's default limit: a block with more map contacts than twice this judges a lone
# reading by the contacts nearest to it (this many on either side) and the readings
# between them, not by the whole block (whose fit grows faster than its size).
SUPPORT_CONTACTS = 6
SUPPORT_READINGS = 30  # ... and at most this many readings on either side, when that
# stretch holds three contacts or more


def _around(sorted_d: np.ndarray, at: float, k: int, lo: float, hi: float
            ) -> tuple[float, float]:
    """From the ``k``-th of ``sorted_d`` before ``at`` to just past the ``k``-th after it
    (``lo``/``hi`` where there are no more than ``k`` on that side)."""
    j = int(np.searchsorted(sorted_d, at))
    a = lo if j - k <= 0 else float(sorted_d[j - k])
    b = hi if j + k >= len(sorted_d) else float(np.nextafter(sorted_d[j + k - 1], np.inf))
    return a, b


def _contact_support(dips: ProjectedDips, contacts: Constraints, ground, frame: SectionFrame,
                     scale: float, tolerance: float, notes: Notes | None = None):
    """Whether a block's map contacts need a lone reading as a dip domain of its own: the
    block's kink construction (Suppe 1985) fitted to its contacts with and without it;
    the reading stays where it halves the contacts' RMS residual and gains more than
    a tenth of the thinnest unit.

    In a long block (more than ``2 * SUPPORT_CONTACTS`` contacts, or more than
    ``2 * SUPPORT_READINGS`` readings) only the stretch around the reading is fitted:
    from the ``SUPPORT_CONTACTS``-th contact before it to the ``SUPPORT_CONTACTS``-th
    after it, narrowed to ``SUPPORT_READINGS`` readings either side where that keeps three
    contacts; the log says so once. The fit without the reading is reused while the
    readings in use stay the same."""
    from .kink import fit_kink_offsets, kink_depth_at
    from .outliers import subset_dips

    d_all = np.asarray(dips.distance_m, float) if dips is not None else np.zeros(0)
    fits: dict[tuple[float, float, bytes], float] = {}  # rms without a reading, reused
    said: list[bool] = []

    def rms(mask, cons, lo, hi) -> float:
        ds = section_dips(subset_dips(dips, mask), Notes(lambda m: None)).within(lo, hi)
        if len(ds) == 0:
            return float("inf")
        doms = group_domains(ds.distance, ds.phi, ds.weight, tolerance)
        c, h = fit_kink_offsets(doms, cons, ground, scale)  # the depths need no sweep
        r = kink_depth_at(doms, c, h, cons.distance, cons.elevation) - cons.depth
        return float(np.sqrt(np.mean(r * r)))

    def window(lo: float, hi: float, at: float, used: np.ndarray) -> tuple[float, float]:
        """The stretch of the block the reading at ``at`` is judged on."""
        inside = (contacts.distance >= lo) & (contacts.distance < hi) & contacts.is_contact
        cd = np.sort(contacts.distance[inside])
        a, b = _around(cd, at, SUPPORT_CONTACTS, lo, hi)
        rd = np.sort(d_all[used & (d_all >= lo) & (d_all < hi)])
        ra, rb = _around(rd, at, SUPPORT_READINGS, lo, hi)
        if ra > a or rb < b:
            n_in = np.count_nonzero((cd >= max(a, ra)) & (cd < min(b, rb)))
            if n_in >= 3:  # enough contacts to judge by among the nearest readings
                a, b = max(a, ra), min(b, rb)
        if (a, b) != (lo, hi) and notes is not None and not said:
            said.append(True)
            notes.log(f"lone readings judged on the stretch around them: the "
                      f"{SUPPORT_CONTACTS} map contacts and the {SUPPORT_READINGS} readings "
                      "on either side (the tool's default limit for long blocks)")
        return a, b

    def support(lo: float, hi: float, used: np.ndarray, i: int) -> bool:
        lo, hi = window(lo, hi, float(d_all[i]), used)
        cons = contacts.subset((contacts.distance >= lo) & (contacts.distance < hi)
                               & contacts.is_contact)
        if len(cons) < 3:  # two contacts and one dip fit any stack: nothing to judge by
            return False
        key = (lo, hi, np.packbits(used).tobytes())
        if key not in fits:  # the same readings without it: the same fit
            fits[key] = rms(used, cons, lo, hi)
        without = fits[key]
        with_it = used.copy()
        with_it[i] = True
        gained = rms(with_it, cons, lo, hi)
        return gained < SUPPORT_GAIN * without and without - gained > SUPPORT_MIN * scale

    return support


def _build_plunging(pm: PlungeMap, line: SectionLine, profile: Profile, geology: SurfaceGeology,
                    dips: ProjectedDips, column: Column, *, depth: float | None,
                    fault_depth: float | None, default_dip: float | None, corridor_contacts,
                    **options) -> Draft:
    """Build in the down-plunge view and carry the draft back into the section."""
    pline, pprof, pgeo, pdips, pcc = to_profile(pm, line, profile, geology, dips,
                                                corridor_contacts)
    zs = np.asarray(profile.z, float)
    zmin = float(np.nanmin(zs))
    lo_ct, hi_ct = pm.cos_theta_range
    base = zmin - (depth if depth is not None else 1.1 * column.total_thickness / lo_ct)
    inner = build_draft(pline, pprof, pgeo, pdips, column,
                        depth=inner_depth(pm, line, profile, base),
                        fault_depth=None if fault_depth is None else fault_depth * pm.cos_p,
                        default_dip=None if default_dip is None else float(pm.dip(default_dip)),
                        corridor_contacts=pcc, plunge_axis=None, **options)
    theta = np.degrees(np.arccos(min(pm.cos_theta, 1.0)))
    if len(line.vertices) > 2:
        factor = (f"{1.0 / hi_ct:.4f}-{1.0 / lo_ct:.4f} t along its {len(pm.m11)} segments "
                  "(a bent line: each segment carried by its own azimuth)")
    else:
        factor = f"{1.0 / pm.cos_theta:.4f} t"
    note = (f"plunge: fold axis {pm.trend:.1f}/{pm.plunge:.1f} (trend/plunge), section "
            f"azimuth {pm.azimuth:.1f}°: constructed in the down-plunge view (true "
            f"thicknesses and dips; Ragan) and carried back; angle between the axis and the "
            f"section plane's normal {theta:.1f}°, so a unit spans t / cos θ = {factor} in "
            "the section (exactly so, vertically, for a line normal to the trend; in general "
            "the section's areas are 1 / cos θ times the profile's); distances, dips and "
            "depths in the lines below are those of the down-plunge view")
    log = [inner.log[0], note, *inner.log[1:]] if inner.log else [note]
    return from_profile(pm, inner, line, profile, geology, dips, base, log)


def _check_options(method, ve, tol, depth, fault_depth, default_dip) -> None:
    # The rules are the settings' own (mapsection.settings), written once there.
    SectionSettings(method=method, ve=ve, dip_tolerance=tol, depth=depth,
                    fault_depth=fault_depth, default_dip=default_dip)


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
