"""Topography test: does the draft section agree with the ground, the map and the dips?

Three measures, all along the section line in section space (x = distance in
metres, y = elevation in metres, vertical exaggeration 1):

* **Contact misfit.** Where a constructed horizon (the top of unit U) meets the
  ground line (the DEM profile), the section predicts a map contact. A map
  contact between units A and B is the top of the older of the two (the one
  lower in the column). Predicted and mapped contacts of the same horizon are
  paired one-to-one, nearest first (an optimal assignment), within a pairing
  radius of the larger of 500 m and 10 DEM pixels. The misfit is
  section distance minus map distance, in metres along the line. A sliver
  outcrop narrower than the contact limit that only one side shows (a horizon
  grazing the ground) counts as two misfits of half its width.
* **Unit agreement.** The share of the line's length where the unit just below
  the ground in the section is the unit the map shows there. Only length where
  both the map and the section have a unit counts (map gaps and DEM gaps are
  left out).
* **Dip agreement.** At each projected attitude, the section's bed dip (the
  local slope of the nearest horizon, signed like an apparent dip: positive
  descends toward increasing distance) against the measured apparent dip.

Contacts where the map line crosses a fault are fault contacts, not tops of
units: they are listed apart and left out of the pairing (on both sides).

Units that are not layers (the column's ``kind``): where the map shows a cover unit at
the ground the bedrock is concealed, and where it shows an intrusive unit the section has
that unit there by construction (:mod:`mapsection.construct.cover`). Those stretches are
listed as concealed (``concealed``, with their lengths) and compared with nothing: they are
left out of the unit agreement, a contact with a cover or intrusive unit on either side is
no top of a layered unit (neither paired nor counted as unpaired), and a horizon the
section brings to the ground within such a stretch is listed apart
(``concealed_section_contacts``), not counted as unpaired.
The pass rule is documented in docs/checks.md.

The pieces: :mod:`.results` (the result classes), :mod:`.ground` (where the section
meets the ground), :mod:`.contacts` (the contact pairing) and :mod:`.agreement` (unit
and dip agreement).
"""

from __future__ import annotations

import math
from dataclasses import asdict

import numpy as np

from ...draft import Draft
from ...errors import CheckError
from ...settings import Thresholds, threshold_problem
from ..status import Part, combine
from .agreement import UnitAgreement, concealed_stretches, dip_agreement, unit_agreement
from .contacts import ContactPairing, pair_contacts
from .ground import ground_line, section_ground_contacts, section_unit_at_ground
from .results import (
    ConcealedStretch,
    ContactMisfit,
    DipMisfit,
    TopographyCheck,
    UnitDisagreement,
    UnpairedContact,
)

UNMATCHED_SHARE = 0.10  # up to this share of the map's contacts may stay unpaired


# key -> (lowest, highest, lowest allowed itself?)
def validate_thresholds(thresholds: Thresholds) -> None:
    """Raise CheckError naming the [checks] key of a threshold out of range."""
    problem = threshold_problem(thresholds)
    if problem is not None:
        raise CheckError(f"[checks] {problem[0]}: {problem[1]}")


def contact_threshold_m(thresholds: Thresholds, pixel_size: float) -> float:
    """The contact RMS allowed: the larger of N DEM pixels and a distance in metres."""
    px = thresholds.contact_rms_pixels * pixel_size if math.isfinite(pixel_size) else 0.0
    return float(max(px, thresholds.contact_rms_m))


def _rms(x: np.ndarray) -> float:
    return float(np.sqrt(np.mean(np.square(x)))) if len(x) else float("nan")


def check_topography(draft: Draft, thresholds: Thresholds | None = None) -> TopographyCheck:
    """Compare a draft section with the DEM profile, the map's contacts and units, and the dips.

    Raises CheckError for a section with no horizons or thresholds out of range;
    a section that misses the map is a failed result, not an error.
    """
    thresholds = thresholds or Thresholds()
    validate_thresholds(thresholds)
    if not any(h.geometry is not None and not h.geometry.is_empty for h in draft.horizons):
        raise CheckError(f"section {draft.name or '(unnamed)'}: has no horizons to check")
    ground = ground_line(draft)
    if ground.is_empty:
        raise CheckError(f"section {draft.name or '(unnamed)'}: the DEM profile has no elevations")
    pixel = float(draft.profile.pixel_size)
    limit = contact_threshold_m(thresholds, pixel)

    c = pair_contacts(draft, ground, pixel, limit)
    max_unpaired = int(math.floor(UNMATCHED_SHARE * c.n_map))
    contacts = _contact_fields(c, limit, max_unpaired)
    ua = unit_agreement(draft)
    dm = dip_agreement(draft)
    dips = _dip_fields(dm, thresholds)
    n_unpaired = len(c.un_map) + len(c.un_sec)
    parts = _parts(c, ua, len(dm), contacts["contact_rms_m"], limit, n_unpaired, max_unpaired,
                   dips["dip_rms_deg"], thresholds)
    status, reasons = combine(parts)
    return TopographyCheck(
        passed=status == "pass",
        **contacts,
        unit_agreement=ua.share,
        unit_agreement_threshold=float(thresholds.unit_agreement),
        compared_length_m=ua.length,
        disagreements=ua.stretches,
        unit_source=ua.source,
        **dips,
        construction_residuals=[asdict(r) for r in draft.residuals],
        failures=[r for p in parts.values() if p.status == "fail" for r in p.reasons],
        parts=parts,
        status=status,
        reasons=reasons,
        concealed=ua.concealed,
        concealed_length_m=sum(s.to_m - s.from_m for s in ua.concealed if s.kind == "cover"),
        intrusive_length_m=sum(s.to_m - s.from_m for s in ua.concealed
                               if s.kind == "intrusive"),
    )


def _contact_fields(c: ContactPairing, limit: float, max_unpaired: int) -> dict:
    """The contact measures of :class:`TopographyCheck`."""
    mis = np.array([m.misfit_m for m in c.misfits], float)
    worst = int(np.argmax(np.abs(mis))) if len(mis) else -1
    return dict(
        contact_rms_m=_rms(mis),
        contact_worst_m=float(mis[worst]) if worst >= 0 else float("nan"),
        contact_worst_distance_m=c.misfits[worst].map_distance_m if worst >= 0 else float("nan"),
        contact_threshold_m=limit,
        pairing_radius_m=c.radius,
        max_unpaired=max_unpaired,
        n_map_contacts=c.n_map,
        contact_misfits=c.misfits,
        unpaired_map_contacts=c.un_map,
        unpaired_section_contacts=c.un_sec,
        fault_contacts=c.faults,
        unverified_section_contacts=c.unverified,
        concealed_section_contacts=c.concealed,
    )


def _dip_fields(dm: list[DipMisfit], thresholds: Thresholds) -> dict:
    """The dip measures of :class:`TopographyCheck`."""
    dmis = np.array([m.misfit_deg for m in dm], float)
    dworst = int(np.argmax(np.abs(dmis))) if len(dmis) else -1
    return dict(
        dip_rms_deg=_rms(dmis),
        dip_worst_deg=float(dmis[dworst]) if dworst >= 0 else float("nan"),
        dip_worst_id=dm[dworst].id if dworst >= 0 else "",
        dip_worst_distance_m=dm[dworst].distance_m if dworst >= 0 else float("nan"),
        dip_threshold_deg=float(thresholds.dip_rms_deg),
        dip_misfits=dm,
    )


def _parts(c: ContactPairing, ua: UnitAgreement, n_dips: int, rms: float, limit: float,
           n_unpaired: int, max_unpaired: int, drms: float, thresholds: Thresholds
           ) -> dict[str, Part]:
    """The verdict of each measure: pass or fail where measured, else not tested and why."""
    if c.misfits:
        contacts = Part.measured(rms <= limit, *([] if rms <= limit else [
            f"contact misfit RMS {rms:.1f} m exceeds {limit:.1f} m"]))
    else:
        contacts = Part.not_tested("no map contact on the line" if not c.n_map else
                                   "no map contact has a section contact within "
                                   f"{c.radius:.0f} m")
    if c.n_map or c.un_sec:
        ok = n_unpaired <= max_unpaired
        unpaired = Part.measured(ok, *([] if ok else [
            f"{n_unpaired} unpaired contact(s) ({len(c.un_map)} on the map, "
            f"{len(c.un_sec)} in the section); at most {max_unpaired} allowed"]))
    else:
        unpaired = Part.not_tested("no contact on the map or in the section along the line")
    share = ua.share
    if math.isfinite(share):
        ok = share >= thresholds.unit_agreement
        units = Part.measured(ok, *([] if ok else [
            f"unit agreement {share:.3f} below {thresholds.unit_agreement:.3f}"]))
    else:
        units = Part.not_tested("no stretch of the line has a unit both on the map and in "
                                "the section")
    if n_dips:
        ok = drms <= thresholds.dip_rms_deg
        dips = Part.measured(ok, *([] if ok else [
            f"dip misfit RMS {drms:.1f} deg exceeds {thresholds.dip_rms_deg:.1f} deg"]))
    else:
        dips = Part.not_tested("no attitude projected onto the section")
    return {"contact_misfit": contacts, "unpaired_contacts": unpaired,
            "unit_agreement": units, "dip_misfit": dips}


__all__ = [
    "ConcealedStretch",
    "ContactMisfit",
    "DipMisfit",
    "TopographyCheck",
    "UnitDisagreement",
    "UnpairedContact",
    "check_topography",
    "concealed_stretches",
    "contact_threshold_m",
    "ground_line",
    "section_ground_contacts",
    "section_unit_at_ground",
    "validate_thresholds",
]
