"""Restoration and area balance of a section with unconformities, one sequence at a time.

Each sequence (:func:`mapsection.construct.sequences.split_sequences`) is restored on its
own (flexural slip, Dahlstrom 1969) to its own datum: the top of its youngest unit. The
younger sequence's beds are restored as they lie; the older sequence is restored below the
unconformity: its beds are laid flat from what is preserved under the erosion surface (the
lower of the ground and the unconformities above it), and the part of each bed that lies
above that surface -- eroded before the younger beds were laid down, or by today's erosion
-- is reported (bed length and unit area eroded), never drawn as restored rock. The area
balance (Chamberlin 1910; Epard & Groshong 1993) is measured per sequence likewise.

The section's restoration, area balance and kinematics are those of the oldest sequence (its
figures), their status the worst over the sequences (one that fails fails the test; one measured
nowhere says so, and is never counted as a pass); ``checks.json`` holds each sequence's own
results under ``sequences``.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import shapely

from ..draft import Draft
from ..errors import CheckError
from .area import AreaBalance, area_balance
from .cutoffs import check_fault_restoration
from .geometry import clip_x, joined_horizons, line_xy
from .kinematics import Kinematics, check_kinematics
from .restore import Restoration, restore_section, with_fault_checks
from .status import NOT_TESTED, worst


def _between(top, base):
    """The region between two x-ordered lines, closed at both ends (as the area balance)."""
    poly = shapely.Polygon(np.vstack([line_xy(top), line_xy(base)[::-1]]))
    return poly if poly.is_valid else poly.buffer(0)


def _label(seq: Draft, k: int, n: int) -> str:
    what = "youngest" if k == 0 else "oldest" if k == n - 1 else "middle"
    return f"{what} sequence ({', '.join(seq.column.names)})"


def eroded_figures(seq: Draft, restoration: Restoration) -> dict:
    """Per horizon the restored bed length lying above the erosion surface, and per unit
    the area above it between the pin and loose lines (the beds joined straight across
    where they are cut out): what was eroded, reported, not drawn."""
    lengths: dict[str, list[float]] = {}
    for p in restoration.pieces:
        e = sum(b - a for a, b in p.eroded)
        v = lengths.setdefault(p.top_of, [0.0, 0.0])
        v[0] += float(e)
        v[1] += float(p.restored_length_m)
    joined = joined_horizons(seq)
    lo, hi = sorted((restoration.pin_m, restoration.loose_m))
    d = np.asarray(seq.profile.distance, float)
    z = np.asarray(seq.profile.z, float)
    ok = np.isfinite(z)
    low = float(np.nanmin(z)) - 1e6
    surface = shapely.Polygon(np.vstack([np.column_stack([d[ok], z[ok]]),
                                         [[d[ok][-1], low], [d[ok][0], low]]])).buffer(0)
    areas: dict[str, float] = {}
    for u in restoration.units:
        top, base = joined.get((u.unit, u.block)), joined.get((u.base_of, u.block))
        t = clip_x(top, lo, hi) if top is not None else None
        b = clip_x(base, lo, hi) if base is not None else None
        if t is None or b is None:
            continue
        poly = _between(t, b)
        areas[u.unit] = areas.get(u.unit, 0.0) + float(poly.difference(surface).area)
    return {
        "horizons": [{"top_of": k, "eroded_length_m": v[0], "restored_length_m": v[1]}
                     for k, v in lengths.items()],
        "units": [{"unit": k, "eroded_area_m2": v} for k, v in areas.items()],
        "note": "beds above the erosion surface (the unconformity above this sequence, or "
                "the ground): eroded, reported here and not drawn as restored rock",
    }


def check_sequences(draft: Draft, thresholds, pin: float | None, loose: float | None
                    ) -> tuple[Restoration, AreaBalance, Kinematics, list[dict]]:
    """Restoration, fault checks, area balance and kinematics of each sequence; returns the
    section's (the oldest sequence's figures, the worst status over the sequences) and
    each sequence's results as checks.json holds them."""
    seqs = draft.sequences
    n = len(seqs)
    out, results = [], []
    for k, seq in enumerate(seqs):
        label = _label(seq, k, n)
        item: dict = {"sequence": label, "units": list(seq.column.names),
                      "datum": f"top of {seq.column.names[0]}"}
        try:
            rest = restore_section(seq, pin=pin, loose=loose,
                                   threshold_pct=thresholds.line_length_spread_pct)
            at_faults = check_fault_restoration(
                seq, restoration=rest, cutoff_fraction=thresholds.cutoff_mismatch_fraction,
                cutoff_pixels=thresholds.cutoff_mismatch_pixels,
                spread_fraction=thresholds.separation_spread_fraction,
                spread_pixels=thresholds.separation_spread_pixels)
            rest = with_fault_checks(rest, at_faults)
            area = area_balance(seq, rest, thresholds.area_mismatch_pct)
            kin = check_kinematics(seq, rest)
        except CheckError as exc:
            why = f"not measured: {exc}"
            item.update({"restoration": {"status": NOT_TESTED, "reasons": [why]},
                         "area_balance": {"status": NOT_TESTED, "reasons": [why]}})
            results.append(item)
            continue
        item["restoration"] = rest.to_dict()
        item["area_balance"] = area.to_dict()
        item["kinematics"] = {"status": kin.status, "reasons": list(kin.reasons)}
        if k > 0:
            item["eroded"] = eroded_figures(seq, rest)
        results.append(item)
        out.append((label, rest, area, kin))
    if not out:
        raise CheckError(f"section {draft.name or '(unnamed)'}: no sequence has a horizon "
                         "to restore")
    _, rest, area, kin = out[-1]  # the oldest measured sequence: its figures

    def merged(obj, which: str):
        statuses = [r[which]["status"] for r in results]
        reasons = []
        for r in results:
            reasons += [f"{r['sequence']}: {w}" for w in r[which].get("reasons", [])]
        return dataclasses.replace(obj, status=worst(statuses), reasons=reasons)

    rest = merged(rest, "restoration")
    rest.passed = rest.status == "pass"
    area = merged(area, "area_balance")
    area.passed = area.status == "pass"
    if all("kinematics" in r for r in results):
        kin = merged(kin, "kinematics")
    return rest, area, kin, results


__all__ = ["check_sequences", "eroded_figures"]
