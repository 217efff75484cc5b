"""Several sequences separated by unconformities, each constructed from its own data.

A unit flagged ``unconformity = true`` in the column rests on an erosion surface: it and
the layered units above it (up to the next flagged unit) form a younger sequence
(:meth:`mapsection.stratigraphy.Column.sequences`). An angular unconformity cannot be
drafted as one conformable stack: the younger beds keep their own dips (often nearly
flat) and rest on the eroded, tilted or folded older beds (onlap).

How the section is built (:func:`build_sequences`):

1. The younger sequence is constructed on its own (kink or arc, as the section asks)
   from its own map contacts and its own dips, with every older unit taken as one
   unit below its base: a map boundary between the younger sequence and *any* older
   unit is a point of the younger sequence's base, i.e. of the unconformity, at its
   DEM elevation. The unconformity is that base horizon, carried with the younger
   sequence's dips (the three-point reasoning of Ragan, Structural Geology: An
   Introduction to Geometrical Techniques, applied to the surface the contacts share).
2. The older units are constructed on their own from their own contacts and dips, the
   younger sequence's outcrop taken as concealed ground (no older contact is known
   there). A column with more than two sequences is built the same way, the older part
   again split at its own youngest unconformity.
3. The older sequence is cut at the unconformity: its horizons and unit polygons are
   kept below it (the part above it was eroded before the younger beds were laid down
   and is not drawn); the younger sequence's horizons and units lie above it.

Which dips belong to which sequence: a reading belongs to the sequence of the map unit
at the ground where it projects onto the line. Faults: a fault whose ground crossing on
the line lies in (or against) younger-sequence rocks cuts both sequences; a fault that
crosses the line in older rocks only is taken to end at the unconformity (it is older
than the younger sequence) and is cut off there.

:func:`split_sequences` turns a section with unconformities (built, or read back from a
section.gpkg) into one draft per sequence, each with its own column and, for an older
sequence, the erosion surface (the lower of the ground and the unconformities above it)
as its ground: the balance checks restore each sequence to its own datum and report the
older sequence's eroded part (:mod:`mapsection.checks.sequences`).
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable

import numpy as np
import shapely
from shapely.geometry import LineString, Polygon

from .._messages import default_warn as _default_warn
from ..draft import Draft, Unconformity, unconformity_key
from ..geology import Contact, SurfaceGeology, UnitInterval
from ..notes import Warn
from ..stratigraphy import Column, Unit, is_base_name
from .frame import SectionFrame, below_polygon, ground_below_polygon, line_parts, poly_parts
from .outliers import subset_dips

# The older units as the younger sequence's construction sees them: one unit below its base.
BELOW = "(older rocks below the unconformity)"


def _unit_at(geology: SurfaceGeology, d: np.ndarray) -> list[str | None]:
    """The map unit at the ground at each distance (None in a gap)."""
    out: list[str | None] = []
    ivs = geology.intervals
    for x in np.asarray(d, float):
        hit = None
        for iv in ivs:
            if iv.start_m <= x <= iv.end_m:
                hit = iv.unit
                if hit is not None:
                    break
        if hit is None and ivs and np.isfinite(x):
            near = min(ivs, key=lambda iv: min(abs(x - iv.start_m), abs(x - iv.end_m))
                       if iv.unit is not None else np.inf)
            hit = near.unit
        out.append(hit)
    return out


def _relabel(geology: SurfaceGeology, keep: set[str], below: set[str], faults) -> SurfaceGeology:
    """The surface geology as one sequence's construction sees it: its own units kept,
    the units of ``below`` named :data:`BELOW` in contacts (gaps in intervals), every
    other unit a gap."""
    def unit(u):
        return u if u in keep else (BELOW if u in below else None)

    intervals = tuple(UnitInterval(iv.start_m, iv.end_m, iv.unit if iv.unit in keep else None)
                      for iv in geology.intervals)
    contacts = tuple(Contact(c.distance_m, c.elevation_m, unit(c.unit_before),
                             unit(c.unit_after)) for c in geology.contacts)
    return SurfaceGeology(intervals, contacts, tuple(faults))


def _corridor_for_younger(cc, young: set[str], older: set[str]):
    """The corridor's boundary points of the younger sequence: its own contacts and those
    with an older unit (named :data:`BELOW`); older-older boundaries dropped."""
    if cc is None or len(cc) == 0:
        return cc
    ua, ub = list(cc.unit_a), list(cc.unit_b)
    keep = np.array([(a in young or b in young) and (a in young | older)
                     and (b in young | older) for a, b in zip(ua, ub, strict=True)], bool)
    if not keep.any():
        return None
    idx = np.flatnonzero(keep)

    def name(u):
        return u if u in young else BELOW

    crosses = None if cc.crosses_line is None else np.asarray(cc.crosses_line, bool)[idx]
    return dataclasses.replace(
        cc, x=np.asarray(cc.x)[idx], y=np.asarray(cc.y)[idx],
        distance_m=np.asarray(cc.distance_m)[idx], offset_m=np.asarray(cc.offset_m)[idx],
        elevation_m=np.asarray(cc.elevation_m)[idx], unit_a=tuple(name(ua[i]) for i in idx),
        unit_b=tuple(name(ub[i]) for i in idx), crosses_line=crosses)


def _cuts_younger(f, geology: SurfaceGeology, young: set[str]) -> bool:
    """A fault cuts the younger sequence when it crosses the line in (or against) its rocks."""
    d = float(f.distance_m)
    units = {iv.unit for iv in geology.intervals if iv.start_m - 1.0 <= d <= iv.end_m + 1.0}
    return bool(units & young)


def _has_units(geology: SurfaceGeology, cc, names: set[str]) -> bool:
    if any(iv.unit in names for iv in geology.intervals):
        return True
    if cc is not None and len(cc):
        return any(a in names or b in names for a, b in zip(cc.unit_a, cc.unit_b, strict=True))
    return False


@dataclasses.dataclass
class _Job:
    """What every build of one sequence shares: the builder, the section's inputs and the
    keyword options of :func:`mapsection.construct.build_draft`."""

    build: Callable[..., Draft]
    line: object
    profile: object
    dips: object
    options: dict
    default_dip: float | None
    corridor_contacts: object
    plunge_axis: object
    warn: Warn | None

    def older(self, geo: SurfaceGeology, col: Column, young_mask: np.ndarray) -> Draft:
        """The older sequence from the readings not in the younger one."""
        def said(message: str) -> None:
            (self.warn or _default_warn)(f"older sequence: {message}")

        return self.build(self.line, self.profile, geo, subset_dips(self.dips, ~young_mask),
                          col, default_dip=self.default_dip,
                          corridor_contacts=self.corridor_contacts,
                          plunge_axis=self.plunge_axis, **{**self.options, "warn": said})

    def younger(self, geo: SurfaceGeology, col: Column, cc, young_mask: np.ndarray,
                said: list[str]) -> Draft:
        """The younger sequence from its readings; its notes go to ``said`` (an empty
        note marks a sequence drawn flat for want of dips of its own)."""
        y_dips = subset_dips(self.dips, young_mask)
        y_default = self.default_dip
        if not np.isfinite(np.asarray(y_dips.apparent_dip, float)).any() and y_default is None:
            y_default = 0.0
            said.append("")  # marks: no dips of its own
        return self.build(self.line, self.profile, geo, y_dips, col, default_dip=y_default,
                          corridor_contacts=cc, plunge_axis=None,
                          **{**self.options, "warn": said.append})


def build_sequences(build: Callable[..., Draft], line, profile, geology: SurfaceGeology, dips,
                    column: Column, *, name: str, method: str, ve: float,
                    dip_tolerance: float, depth: float | None, fault_depth: float | None,
                    default_dip: float | None, keep_readings, corridor_contacts,
                    plunge_axis, faults, default_fault_dip: float | None,
                    warn: Warn | None) -> Draft:
    """Construct a section whose column holds unconformities (see the module's text).

    Parameters
    ----------
    build : callable
        :func:`mapsection.construct.build_draft`, called once per sequence with that
        sequence's column, contacts and dips.
    line, profile, geology, dips, column
        The section line, its ground profile, its surface geology, its projected dips and
        the whole stratigraphic column (with its unconformities).
    name, method, ve, dip_tolerance, depth, fault_depth, default_dip, keep_readings, \
corridor_contacts, plunge_axis, faults, default_fault_dip, warn
        As for ``build``; ``depth`` defaults to 1.1 times the column's thickness.

    Returns
    -------
    Draft
        The younger sequence over the older one cut at the unconformity, with
        ``draft.unconformities`` and ``draft.sequences`` (one draft per sequence).
    """
    layered = column.layered()
    seqs = layered.sequences()
    young_col, older_col = seqs[0], Column(tuple(u for s in seqs[1:] for u in s.units))
    young, older = set(young_col.names), set(older_col.names)
    depth_used = depth if depth is not None else 1.1 * layered.total_thickness
    job = _Job(build, line, profile, dips,
               dict(name=name, method=method, ve=ve, dip_tolerance=dip_tolerance,
                    depth=depth_used, fault_depth=fault_depth, keep_readings=keep_readings,
                    faults=faults, default_fault_dip=default_fault_dip, warn=warn),
               default_dip, corridor_contacts, plunge_axis, warn)
    in_young = np.array([u in young for u in _unit_at(geology, dips.distance_m)], bool)
    log = [f"sequences: {len(seqs)} separated by unconformities ("
           + "; ".join(", ".join(s.names) for s in seqs) + "), youngest first: each "
           "constructed from its own contacts and dips; the older cut at the unconformity"]
    older_geo = _relabel(geology, older, set(), geology.faults)
    if not _has_units(geology, corridor_contacts, young):
        od = job.older(older_geo, older_col, in_young)
        return _older_only(od, young_col, log, column, geology, dips)

    ycol = _younger_column(young_col, layered.total_thickness, depth_used, profile)
    y_faults = [f for f in geology.faults if _cuts_younger(f, geology, young)]
    y_geo = _relabel(geology, young, older, y_faults)
    y_cc = _corridor_for_younger(corridor_contacts, young, older)
    yd, in_young, said = _younger_by_height(job, y_geo, ycol, y_cc, in_young, log)
    _pass_on(said, log, young_col, warn)
    od = job.older(older_geo, older_col, in_young)
    cut = [f.name or "?" for f in geology.faults if f not in y_faults]
    if cut:
        log.append(f"fault(s) crossing the line in older rocks only, taken to end at the "
                   f"unconformity: {', '.join(cut)}")
    merged = _merge(yd, od, column, young_col, name or line.name, log, geology, dips)
    merged.sequences = split_sequences(merged)
    return merged


def _older_only(od: Draft, young_col: Column, log: list[str], column: Column,
                geology: SurfaceGeology, dips) -> Draft:
    """The section when the younger sequence is mapped nowhere near the line: the older
    sequence alone, with the whole column."""
    log.append(f"the younger sequence ({', '.join(young_col.names)}) is not mapped along "
               "the line nor beside it: not drafted, and the unconformity at its base not "
               "located (eroded here)")
    od = dataclasses.replace(od, column=column, geology=geology, dips=dips,
                             log=[od.log[0], *log, *od.log[1:]])
    od.sequences = split_sequences(od)
    return od


def _younger_column(young_col: Column, thickness: float, depth: float, profile) -> Column:
    """The younger sequence's column with every older unit as one unit below its base,
    thick enough to reach below the section (``thickness``: the layered column's,
    ``depth``: the section's)."""
    big = 2.0 * thickness + depth + float(np.nanmax(profile.z) - np.nanmin(profile.z))
    return Column((*(dataclasses.replace(u, unconformity=False) for u in young_col.units),
                   Unit(BELOW, big)))


def _younger_by_height(job: _Job, y_geo: SurfaceGeology, ycol: Column, y_cc,
                       in_young: np.ndarray, log: list[str]
                       ) -> tuple[Draft, np.ndarray, list[str]]:
    """The younger sequence's draft, the readings it holds and its notes.

    A reading belongs to the sequence whose rocks it was taken in: first the unit at the
    ground where it projects onto the line, then its elevation against the unconformity
    as constructed (above it: younger), the younger sequence rebuilt if that changed.
    """
    said: list[str] = []
    yd = job.younger(y_geo, ycol, y_cc, in_young, said)
    path = _surface_path([h for h in yd.horizons if h.top_of == BELOW], float(job.line.length))
    if path is None:
        return yd, in_young, said
    z = np.asarray(job.dips.elevation_m, float)
    u = np.interp(np.asarray(job.dips.distance_m, float), path[:, 0], path[:, 1])
    by_height = np.where(np.isfinite(z), z > u, in_young)
    moved = int((by_height != in_young).sum())
    if moved:
        log.append(f"{moved} reading(s) assigned to the sequence their elevation puts them "
                   "in (above or below the unconformity as constructed), not the unit at "
                   "the ground where they project onto the line")
        said = []
        yd = job.younger(y_geo, ycol, y_cc, by_height, said)
    return yd, by_height, said


def _pass_on(said: list[str], log: list[str], young_col: Column, warn: Warn | None) -> None:
    """The younger sequence's notes, once, from the build kept."""
    if "" in said:
        log.append(f"younger sequence ({', '.join(young_col.names)}): no dips of its own "
                   "within the corridor: drawn with horizontal beds (the tool's default for a "
                   "sequence without dips; set default_dip to change)")
    for message in said:
        if message:
            (warn or _default_warn)(f"younger sequence ({', '.join(young_col.names)}): "
                                    f"{message}")


def _merge(yd: Draft, od: Draft, column: Column, young_col: Column, label: str,
           log: list[str], geology: SurfaceGeology, dips) -> Draft:
    """The younger sequence's draft over the older one's, cut at the unconformity."""
    base_unit = young_col.names[-1]
    frame = SectionFrame(float(od.line.length), min(od.base_elevation_m, yd.base_elevation_m),
                         float(np.nanmax(od.profile.z)) + 1e4, float(np.nanmin(od.profile.z)),
                         float(np.nanmax(od.profile.z)))
    below = shapely.union_all([u.geometry for u in yd.units if u.unit == BELOW])
    uc_pieces = [h for h in yd.horizons if h.top_of == BELOW]
    ground_poly = ground_below_polygon(od.profile, frame)
    path = _surface_path(uc_pieces, frame.length)
    lens = (below_polygon(path, frame).difference(ground_poly) if path is not None
            else Polygon())
    horizons, eroded = _merged_horizons(yd, od, young_col, below, lens)
    units = [u for u in yd.units if u.unit in young_col.names]
    for u in od.units:
        poly = poly_parts(u.geometry.intersection(below))
        if poly is not None:
            units.append(dataclasses.replace(u, geometry=poly))
    key = unconformity_key(base_unit)
    residuals = [dataclasses.replace(r, top_of=key) if r.top_of == BELOW else r
                 for r in yd.residuals if not is_base_name(r.top_of) or r.top_of == BELOW]
    residuals += od.residuals
    unconformities = [Unconformity(base_unit, h.geometry, h.above_ground, h.block)
                      for h in uc_pieces] + list(od.unconformities)
    seq_name = ", ".join(young_col.names)
    full_log = [od.log[0] if od.log else f"method: {od.method}", *log,
                *(f"younger sequence ({seq_name}): {m}" for m in yd.log[1:]),
                *(f"older sequence: {m}" for m in od.log[1:])]
    return Draft(name=label, method=od.method, line=od.line, profile=od.profile,
                 geology=geology, dips=dips,
                 column=column, horizons=horizons, faults=_merged_faults(yd, od, below),
                 units=units, domains=[*yd.domains, *od.domains],
                 axial_surfaces=_merged_axial(yd, od, below.union(lens)), residuals=residuals,
                 ve=od.ve, base_elevation_m=min(od.base_elevation_m, yd.base_elevation_m),
                 log=full_log, outliers=[*yd.outliers, *od.outliers],
                 unconformities=unconformities, eroded_horizons=eroded)


def _merged_horizons(yd: Draft, od: Draft, young_col: Column, below, lens) -> tuple[list, list]:
    """The younger sequence's horizons and the older ones kept below the unconformity
    (projected ones in the lens above the ground under it), and the older parts eroded."""
    horizons = [h for h in yd.horizons if h.top_of in young_col.names]
    eroded = list(od.eroded_horizons)
    for h in od.horizons:
        region = lens if h.above_ground else below
        for part in line_parts(h.geometry.intersection(region)):
            horizons.append(dataclasses.replace(h, geometry=part))
        for part in line_parts(h.geometry.difference(region)):
            eroded.append(dataclasses.replace(h, geometry=part, above_ground=True))
    return horizons, eroded


def _merged_faults(yd: Draft, od: Draft, below) -> list:
    """The older build's faults: one that cuts both sequences with the separations of both,
    one in older rocks only cut off at the unconformity."""
    # the same fault in both builds: its trace leaves the ground at the same distance
    y_tops = [float(np.asarray(f.geometry.coords)[0, 0]) for f in yd.faults]
    faults = []
    for f in od.faults:
        x0 = float(np.asarray(f.geometry.coords)[0, 0])
        same = [g for g, x in zip(yd.faults, y_tops, strict=True) if abs(x0 - x) <= 1.0]
        if same:  # it cuts both sequences: the separations of both
            seps = {k: v for k, v in same[0].separations.items() if BELOW not in k}
            faults.append(dataclasses.replace(f, separations={**seps, **f.separations}))
            continue
        parts = line_parts(f.geometry.intersection(below))
        if parts:
            faults.append(dataclasses.replace(f, geometry=max(parts, key=lambda p: p.length)))
    return faults


def _merged_axial(yd: Draft, od: Draft, keep_all) -> list:
    """The older axial surfaces below the unconformity, the younger ones above it."""
    axial = []
    for a in od.axial_surfaces:
        axial += [dataclasses.replace(a, geometry=p)
                  for p in line_parts(a.geometry.intersection(keep_all))]
    for a in yd.axial_surfaces:
        axial += [dataclasses.replace(a, geometry=p)
                  for p in line_parts(a.geometry.difference(keep_all))]
    return axial


def _surface_path(pieces, length: float) -> np.ndarray | None:
    """The unconformity as one path across the section: at each distance the highest of
    its pieces (above and below the ground; a fault's step taken at the higher side)."""
    lines = [np.asarray(h.geometry.coords)[:, :2] for h in pieces
             if h.geometry is not None and not h.geometry.is_empty]
    if not lines:
        return None
    xs = np.unique(np.concatenate([np.linspace(0.0, length, 2001),
                                   *(c[:, 0] for c in lines)]))
    z = np.full(len(xs), -np.inf)
    for c in lines:
        z = np.maximum(z, _height_on(c, xs))
    ok = np.isfinite(z)
    if ok.sum() < 2:
        return None
    return np.column_stack([xs[ok], z[ok]])


def _height_on(c: np.ndarray, xs: np.ndarray) -> np.ndarray:
    """A line's highest elevation above each distance (-inf off its span)."""
    out = np.full(len(xs), -np.inf)
    dx = np.diff(c[:, 0])
    if (dx > 0).all() or (dx < 0).all():
        cc = c if dx[0] > 0 else c[::-1]
        inside = (xs >= cc[0, 0]) & (xs <= cc[-1, 0])
        out[inside] = np.interp(xs[inside], cc[:, 0], cc[:, 1])
        return out
    line = LineString(c)
    lo, hi = c[:, 0].min(), c[:, 0].max()
    for i in np.flatnonzero((xs >= lo) & (xs <= hi)):
        hit = shapely.get_coordinates(line.intersection(
            LineString([(xs[i], -1e9), (xs[i], 1e9)])))
        if len(hit):
            out[i] = hit[:, 1].max()
    return out


def eroded_profile(profile, unconformities) -> object:
    """The erosion surface an older sequence lies under: at each distance the lower of the
    ground and the unconformities above it (:class:`Profile` with that elevation)."""
    path = _surface_path(unconformities, float(np.nanmax(profile.distance)))
    if path is None:
        return profile
    d = np.asarray(profile.distance, float)
    u = np.interp(d, path[:, 0], path[:, 1], left=np.inf, right=np.inf)
    z = np.asarray(profile.z, float)
    return dataclasses.replace(profile, z=np.where(np.isfinite(z), np.minimum(z, u), z))


def split_sequences(draft: Draft) -> list[Draft]:
    """One draft per sequence, youngest first (empty for a column of one sequence).

    Each holds its sequence's horizons and units, the faults that cut them, its own column
    (flags taken off: each sequence restores to its own datum, the top of its youngest
    unit) and, for an older sequence, the erosion surface (:func:`eroded_profile`) as its
    ground: whatever of its beds lies above it is eroded (reported, not drawn).
    """
    layered = draft.column.layered()
    seqs = layered.sequences()
    if len(seqs) < 2:
        return []
    out = []
    for k, seq in enumerate(seqs):
        names = set(seq.names)
        last = k == len(seqs) - 1
        hz = [h for h in [*draft.horizons, *draft.eroded_horizons]
              if h.top_of in names or (last and is_base_name(h.top_of))]
        units = [u for u in draft.units if u.unit in names]
        area = shapely.union_all([u.geometry for u in units]) if units else Polygon()
        faults = [f for f in draft.faults
                  if not area.is_empty and f.geometry.intersection(area).length > 1.0]
        above = {s.names[-1] for s in seqs[:k]}
        ucs = [u for u in draft.unconformities if u.unit in above]
        col = Column(tuple(dataclasses.replace(u, unconformity=False) for u in seq.units))
        out.append(dataclasses.replace(
            draft, name=draft.name, column=col, horizons=hz, units=units, faults=faults,
            profile=eroded_profile(draft.profile, ucs) if ucs else draft.profile,
            unconformities=[u for u in draft.unconformities if u.unit == seq.names[-1]],
            sequences=[], eroded_horizons=[]))
    return out


__all__ = ["BELOW", "build_sequences", "eroded_profile", "split_sequences", "unconformity_key"]
