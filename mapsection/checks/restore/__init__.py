"""Flexural-slip restoration and line-length balance (Dahlstrom 1969, Balanced
cross sections, Canadian Journal of Earth Sciences 6).

Between a *pin line* and a *loose line* (vertical lines at distances along the
section), every horizon is unfolded keeping its length along the bed and laid
flat at its stratigraphic level, starting at the pin. In a balanced section
every horizon restores to the same length and the restored loose line is
straight. Fault blocks are restored one by one, from the pin toward the loose
line; each block is placed end to end with the one before it (its horizons'
restored starts matched, in the least-squares sense, to the ends of the same
horizons in the block before), and what then fails to match shows as gaps and
overlaps between units in the restored state.

Default pin and loose lines: the pin at the end of the section whose end dip
domain dips least (the start when the draft has no domains), the loose line at
the other end; both at the first/last distance where every horizon exists.

The pieces: :mod:`.results` (the result classes), :mod:`.lines` (the pin and loose
lines), :mod:`.flatten` (laying the beds flat, block by block) and :mod:`.balance` (the
line-length balance).
"""

from __future__ import annotations

import dataclasses
from typing import TYPE_CHECKING

from shapely.geometry import LineString

from ...draft import Draft
from ...errors import CheckError
from ...stratigraphy import is_base_name
from ..geometry import clip_x, joined_horizons, snap_tolerance
from ..status import BY_CONSTRUCTION, Part, combine
from .balance import LineLengths, horizon_balances, line_lengths, restored_units
from .flatten import lay_flat
from .lines import pin_and_loose
from .results import HorizonBalance, Restoration, RestoredGap, RestoredHorizon, RestoredUnit

if TYPE_CHECKING:
    from ..cutoffs import FaultRestorationCheck

__all__ = [
    "Restoration",
    "RestoredHorizon",
    "HorizonBalance",
    "RestoredUnit",
    "RestoredGap",
    "restore_section",
    "restored_elevation",
    "with_fault_checks",
]


def restored_elevation(column, top_of: str) -> float:
    """Restored (datum-relative) elevation of a horizon: minus the unit's depth to top.

    A horizon named ``base`` (or ``base...``) is the column's base.
    """
    if top_of in column.names:
        return -float(column.depth_to_top[column.index(top_of)])
    if is_base_name(top_of):
        return -column.total_thickness
    raise CheckError(f"horizon top_of {top_of!r}: not a unit of the stratigraphic column")


def restore_section(draft: Draft, pin: float | None = None, loose: float | None = None,
                    threshold_pct: float = 5.0) -> Restoration:
    """Flexural-slip restoration between a pin and a loose line (Dahlstrom 1969).

    ``pin`` and ``loose`` are distances along the section (metres); by default
    the pin sits at the end of the section in the least-dipping end domain and
    the loose line at the other end. Horizons are laid flat at minus their
    depth below the top of the column (the datum, elevation 0 in the restored
    frame). Passes when the spread of the restored lengths ((max - min) / mean)
    is within ``threshold_pct`` (Thresholds.line_length_spread_pct, default 5 %,
    common practice).
    """
    name = draft.name or "(unnamed)"
    joined = joined_horizons(draft)
    if not joined:
        raise CheckError(f"section {name}: has no horizons to restore")
    for top_of, _ in joined:
        restored_elevation(draft.column, top_of)  # unknown names fail here, one line
    pin, loose, source = pin_and_loose(draft, joined, pin, loose)
    direction = 1 if loose > pin else -1
    lo, hi = min(pin, loose), max(pin, loose)

    # Pieces between the lines, per block.
    blocks: dict[int, dict[str, LineString]] = {}
    for (top_of, block), line in joined.items():
        piece = clip_x(line, lo, hi)
        if piece is not None and piece.length > 1e-9:
            blocks.setdefault(block, {})[top_of] = piece
    if not blocks:
        raise CheckError(f"section {name}: no horizon lies between the pin line at {pin:.1f} m "
                         f"and the loose line at {loose:.1f} m")
    ys = {t: restored_elevation(draft.column, t) for t in {k[0] for k in joined}}
    pieces, gaps = lay_flat(draft, blocks, ys, pin, direction)
    units = restored_units(draft.column, pieces)
    balances = horizon_balances(pieces, ys, pin, loose, direction, snap_tolerance(draft))
    ll = line_lengths(balances, loose, direction, threshold_pct)
    failures = ll.failures
    # Across faults the blocks are laid end to end, so a bed-length mismatch between
    # blocks shows as gaps and overlaps rather than as spread: they count too.
    area = float(sum(u.area_m2 for u in units))
    gap_pct = 100.0 * sum(g.gap_area_m2 + g.overlap_area_m2 for g in gaps) / area if area else 0.0
    if gap_pct > threshold_pct:
        failures.append(f"gaps and overlaps between fault blocks in the restored state: "
                        f"{gap_pct:.2f} % of the restored area (> {threshold_pct:g} %)")
    full = any(h.reaches_loose for h in balances)
    parts = _parts(draft, ll, full, gaps, gap_pct, threshold_pct)
    status, reasons = combine(parts)
    return Restoration(name, float(pin), float(loose), source, direction, float(threshold_pct),
                       pieces, balances, units, gaps, ll.mismatch_pct, ll.loose_spread_m,
                       ll.loose_angle_deg, ll.loose_departure_m, ll.shortening_pct,
                       ll.shortening_m, status == "pass", failures, draft.column,
                       parts=parts, status=status, reasons=reasons)


def _parts(draft: Draft, ll: LineLengths, full: bool, gaps: list[RestoredGap],
           gap_pct: float, threshold_pct: float) -> dict[str, Part]:
    """Line-length balance and the gaps between fault blocks, each pass, fail or not tested.

    A constant-thickness draft built by mapsection keeps every bed's length through
    the fold (flexural slip), so its line-length balance holds by construction: it is
    still measured, and says so when it passes.
    """
    if not full:
        lines = Part.not_tested(ll.failures[0])
    else:
        ok = ll.mismatch_pct <= threshold_pct
        why = [f for f in ll.failures if f.startswith("restored line lengths")]
        if ok and draft.method != "edited":
            why = [f"{BY_CONSTRUCTION} (a constant-thickness draft built by mapsection keeps "
                   "its bed lengths)"]
        lines = Part.measured(ok, *why)
    if not gaps:
        blocks = Part.not_tested("no unit continues across a fault between the pin and loose "
                                 "lines")
    else:
        ok = gap_pct <= threshold_pct
        blocks = Part.measured(ok, *([] if ok else [
            f"gaps and overlaps between fault blocks {gap_pct:.2f} % of the restored area "
            f"(> {threshold_pct:g} %)"]))
    return {"line_length_balance": lines, "block_gaps": blocks}


def with_fault_checks(restoration: Restoration, at_faults: FaultRestorationCheck
                      ) -> Restoration:
    """The restoration judged at each fault too: cutoff mismatches and separation
    consistency (:func:`mapsection.checks.cutoffs.check_fault_restoration`) become parts
    of its verdict."""
    def part(check) -> Part:
        if check.status == "pass":
            return Part(check.status)
        return Part(check.status, tuple(check.reasons or check.lines()))

    parts = {**{k: v for k, v in restoration.parts.items()
                if k not in ("fault_cutoffs", "separation_consistency")},
             "fault_cutoffs": part(at_faults.cutoffs),
             "separation_consistency": part(at_faults.separations)}
    status, reasons = combine(parts)
    failures = [*restoration.failures,
                *(r for k in ("fault_cutoffs", "separation_consistency")
                  if parts[k].status == "fail" for r in parts[k].reasons)]
    return dataclasses.replace(restoration, parts=parts, status=status, reasons=reasons,
                               passed=status == "pass", failures=failures,
                               at_faults=at_faults)
