"""Restoration judged at each fault: cutoff mismatches and separation consistency.

Two measurements per fault, both in section space (x = distance along the line,
y = elevation, metres):

* **Cutoff mismatch.** A fault is restored by moving its hanging wall back by
  the fault's slip along the trace (for a rigid hanging wall on a planar fault
  every horizon's separation equals the slip; Dahlstrom 1969, Balanced cross
  sections, Can. J. Earth Sci. 6; Woodward, Boyer & Suppe 1989, Balanced
  geological cross-sections, AGU Short Course 6). For each horizon cut by the
  fault, the hanging-wall cutoff then lands ``separation - slip`` metres along
  the fault from the footwall cutoff: an *overlap* where the hanging wall is
  carried too far (positive), a *gap* where it falls short (negative). The
  slip is the mean of the separations the fault records, per straight stretch
  of the fault (the slip changes across a bend; Suppe 1983) (what construction
  measured, or what a hand-edited section.gpkg carries in its ``separations``
  field); a fault that records none has no slip to be restored by: its
  mismatches against the mean measured separation are listed, but the fault is
  ``not_tested`` (they would only repeat the separation spread). Horizons cut
  above the ground (on the fault projected upward, in the eroded part of the
  section) count too; they are flagged ``projected``. The
  test fails where a mismatch exceeds the threshold: by default the larger of
  10 % of the fault's mean measured separation and 2 DEM pixels (the tool's
  default, not common practice).
* **Separation consistency.** Along a fault, a rigid hanging wall has one slip:
  the separations of all horizons cut on one straight stretch of the fault
  should agree (:mod:`mapsection.checks.separations`; its names are importable
  from here too).

Where each horizon meets a fault is :mod:`mapsection.checks.fault_cuts`.

Pure functions over a :class:`~mapsection.draft.Draft`: numpy and shapely only,
no drawing, no files.
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass, field

import numpy as np

from ..draft import Draft, FaultTrace
from ..stratigraphy import horizon_name
from .fault_cuts import Cut, PerFaultCheck, check_setting, fault_cuts, threshold, worst_status
from .geometry import FaultBlocks, fault_blocks
from .restore import Restoration
from .separations import (
    SPREAD_FRACTION,
    SPREAD_PIXELS,
    FaultSeparations,
    SeparationCheck,
    check_separations,
)

# The separation names stay importable from here (they lived here first).
__all__ = ["CUTOFF_FRACTION", "CUTOFF_PIXELS", "SPREAD_FRACTION", "SPREAD_PIXELS",
           "HorizonCutoff", "FaultCutoffs", "CutoffCheck", "FaultSeparations",
           "SeparationCheck", "FaultRestorationCheck", "check_cutoffs", "check_separations",
           "check_fault_restoration"]

CUTOFF_FRACTION = 0.10  # of the fault's mean separation (the tool's default)
CUTOFF_PIXELS = 2.0  # DEM pixels (the tool's default)


# --- cutoff mismatch ------------------------------------------------------------


@dataclass(frozen=True)
class HorizonCutoff:
    """One horizon at one fault, with the hanging wall restored by the fault's slip."""

    top_of: str
    hanging_wall_cutoff: tuple[float, float]  # (distance m, elevation m)
    footwall_cutoff: tuple[float, float]
    projected: bool  # cut above the ground, on the fault's upward projection (eroded)
    separation_m: float  # measured along the fault, + hanging wall up
    recorded_separation_m: float | None  # what the fault records for this horizon
    slip_m: float  # the slip this horizon's hanging wall is restored by
    mismatch_m: float  # separation - slip, along the fault: + overlap, - gap
    along_bed_m: float  # |mismatch| resolved along the footwall bed (times cos cutoff angle)
    cutoff_angle_deg: float
    kind: str  # "overlap", "gap" or "match"
    exceeds: bool
    # The flexural-slip restoration's gap between the two blocks at this horizon, when one
    # is given (+ gap, - overlap, as mapsection.checks.restore; blocks placed by least squares).
    restored_gap_m: float | None = None

    def to_dict(self) -> dict:
        d = asdict(self)
        d["hanging_wall_cutoff"] = list(self.hanging_wall_cutoff)
        d["footwall_cutoff"] = list(self.footwall_cutoff)
        return d


@dataclass
class FaultCutoffs:
    fault: str
    distance_m: float  # where the fault meets the ground
    hanging_wall_block: int
    footwall_block: int
    slip_m: float  # mean slip the hanging wall is restored by (NaN when not tested)
    slip_source: str  # "recorded separations" or "mean measured separation" or ""
    mean_separation_m: float  # mean of the measured separations
    slip_offset_m: float  # mean mismatch: a uniform misplacement of the hanging wall
    threshold_m: float
    horizons: list[HorizonCutoff]
    worst_m: float  # largest |mismatch|
    worst_top_of: str | None
    status: str
    reasons: list[str] = field(default_factory=list)

    def to_dict(self) -> dict:
        d = {k: v for k, v in asdict(self).items() if k != "horizons"}
        d["horizons"] = [h.to_dict() for h in self.horizons]
        return d


@dataclass
class CutoffCheck(PerFaultCheck):
    faults: list[FaultCutoffs]
    _untested = "cutoffs not tested"

    def _line(self, f: FaultCutoffs) -> str:
        return (f"fault {f.fault}: restored by {f.slip_m:.0f} m of slip ({f.slip_source}),"
                f" worst cutoff mismatch {f.worst_m:.0f} m at the "
                f"{horizon_name(f.worst_top_of)}"
                f" (<= {f.threshold_m:.0f} m): {f.status.upper()}")


def _restored_gaps(restoration: Restoration | None, hw: int, fw: int) -> dict[str, float]:
    """Gap (+) or overlap (-) at each horizon between two blocks in a flexural-slip
    restoration (mapsection.checks.restore), when one is given."""
    if restoration is None:
        return {}
    out: dict[str, float] = {}
    for g in restoration.gaps:
        if set(g.blocks) != {hw, fw}:
            continue
        out[g.unit] = float(g.top_gap_m)
    return out



def _slips(cuts: list[Cut], recorded: dict[str, float]) -> tuple[dict[str, float], bool, int]:
    """The slip each horizon's hanging wall is restored by; whether the fault records any
    separation; how many straight stretches it has.

    One slip per straight stretch of the fault: across a bend the slip changes
    (Suppe 1983), so each stretch's horizons are restored by their own: the mean of
    the stretch's recorded separations, else of all recorded ones, else of the
    stretch's measured separations."""
    stretch: dict[int, list[Cut]] = {}
    for c in cuts:
        stretch.setdefault(c.segment, []).append(c)
    rec_all = [recorded[c.top_of] for c in cuts if c.top_of in recorded]
    slip_of: dict[str, float] = {}
    for group in stretch.values():
        rec = [recorded[c.top_of] for c in group if c.top_of in recorded]
        value = (float(np.mean(rec)) if rec else float(np.mean(rec_all)) if rec_all
                 else float(np.mean([c.separation_m for c in group])))
        slip_of.update({c.top_of: value for c in group})
    return slip_of, bool(rec_all), len(stretch)


def _horizon(c: Cut, slip: float, recorded: float | None, thr: float,
             gap: float | None) -> HorizonCutoff:
    """One horizon's cutoffs with its hanging wall restored by ``slip``."""
    m = c.separation_m - slip
    kind = "match" if abs(m) < 0.5 else ("overlap" if m > 0 else "gap")
    along = abs(m) * abs(math.cos(math.radians(c.cutoff_angle_deg))) \
        if math.isfinite(c.cutoff_angle_deg) else float("nan")
    return HorizonCutoff(c.top_of, c.hw, c.fw, c.projected, c.separation_m, recorded, slip,
                         float(m), float(along), c.cutoff_angle_deg, kind, bool(abs(m) > thr),
                         gap)


def _fault_cutoffs(draft: Draft, f: FaultTrace, fb: FaultBlocks, thr_of,
                   restoration: Restoration | None) -> FaultCutoffs:
    """One fault's cutoffs; ``thr_of(mean separation)`` gives its threshold."""
    cuts = fault_cuts(draft, f, fb.hanging_wall, fb.footwall)
    if not cuts:
        return FaultCutoffs(f.name, fb.ground_x, fb.hanging_wall, fb.footwall,
                            float("nan"), "", float("nan"), float("nan"),
                            float("nan"), [], float("nan"), None, "not_tested",
                            ["no horizon is cut by the fault on both walls"])
    reasons: list[str] = []
    mean_sep = float(np.mean([c.separation_m for c in cuts]))
    recorded = {t: float(v) for t, v in f.separations.items()
                if v is not None and math.isfinite(float(v))}
    slip_of, any_recorded, n_stretches = _slips(cuts, recorded)
    if any_recorded:
        source = "recorded separations"
    else:
        source = "mean measured separation"
        reasons.append("the fault records no separations: no slip to restore its hanging "
                       "wall by (the mismatches against the mean measured separation only "
                       "repeat the separations' spread)")
    if n_stretches > 1:
        reasons.append("the fault bends: each straight stretch restored by its own slip "
                       "(Suppe 1983)")
    thr = thr_of(mean_sep)
    gaps = _restored_gaps(restoration, fb.hanging_wall, fb.footwall)
    hz = [_horizon(c, slip_of[c.top_of], recorded.get(c.top_of), thr, gaps.get(c.top_of))
          for c in cuts]
    worst = max(hz, key=lambda h: abs(h.mismatch_m))
    bad = [h for h in hz if h.exceeds]
    # Without a recorded slip the mismatch is measured against the separations' own
    # mean: that is the separation spread again, not a restoration; not tested.
    status = "not_tested" if not any_recorded else "fail" if bad else "pass"
    for h in bad if any_recorded else []:
        reasons.append(f"{horizon_name(h.top_of)}: restored hanging-wall cutoff "
                       f"{abs(h.mismatch_m):.0f} m from the footwall cutoff "
                       f"({h.kind}; > {thr:.0f} m)")
    return FaultCutoffs(f.name, fb.ground_x, fb.hanging_wall, fb.footwall,
                        float(np.mean(list(slip_of.values()))), source, mean_sep,
                        float(np.mean([h.mismatch_m for h in hz])), float(thr), hz,
                        float(abs(worst.mismatch_m)), worst.top_of, status, reasons)


def check_cutoffs(draft: Draft, *, fraction: float = CUTOFF_FRACTION,
                  pixels: float = CUTOFF_PIXELS, threshold_m: float | None = None,
                  restoration: Restoration | None = None) -> CutoffCheck:
    """Compare the restored hanging-wall and footwall cutoffs at each fault.

    Parameters
    ----------
    draft
        The draft section (constructed or read back from a section.gpkg).
    fraction, pixels
        The threshold is the larger of ``fraction`` of the fault's mean separation
        and ``pixels`` DEM pixels (defaults 0.10 and 2: the tool's default).
    threshold_m
        A fixed threshold in metres instead (overrides ``fraction`` and ``pixels``).
    restoration
        A flexural-slip restoration of the same draft: its gap at each horizon
        between the two blocks is reported beside the mismatch.

    Returns
    -------
    CutoffCheck
        Per fault and horizon: the mismatch along the fault (+ overlap, - gap);
        ``status`` "pass", "fail" or "not_tested" with ``reasons``.

    Examples
    --------
    >>> result = check_cutoffs(draft)  # doctest: +SKIP
    >>> result.faults[0].worst_m  # doctest: +SKIP
    """
    fraction = check_setting("cutoff mismatch fraction", fraction, 0.0, 1.0)
    pixels = check_setting("cutoff mismatch pixels", pixels, 0.0, 100.0)
    if threshold_m is not None:
        threshold_m = check_setting("cutoff mismatch threshold_m", threshold_m, 0.0, 1e6)
    if not draft.faults:
        return CutoffCheck([], fraction, pixels, "not_tested", ["the section has no fault"])
    pixel = float(getattr(draft.profile, "pixel_size", float("nan")))

    def thr_of(mean_sep: float) -> float:
        return threshold_m if threshold_m is not None else threshold(fraction, pixels,
                                                                       mean_sep, pixel)

    blocks = fault_blocks(draft)
    results = [_fault_cutoffs(draft, f, blocks[f.name], thr_of, restoration)
               for f in sorted(draft.faults, key=lambda f: blocks[f.name].ground_x)]
    return CutoffCheck.judged(results, fraction, pixels)


@dataclass
class FaultRestorationCheck:
    """Both measurements at the faults, for the restoration test."""

    cutoffs: CutoffCheck
    separations: SeparationCheck

    @property
    def status(self) -> str:
        return worst_status([self.cutoffs.status, self.separations.status])

    @property
    def reasons(self) -> list[str]:
        return [*self.cutoffs.reasons, *self.separations.reasons]

    def to_dict(self) -> dict:
        return {"status": self.status, "reasons": self.reasons,
                "cutoffs": self.cutoffs.to_dict(), "separations": self.separations.to_dict()}

    def lines(self) -> list[str]:
        return [*self.cutoffs.lines(), *self.separations.lines()]

def check_fault_restoration(draft: Draft, *, restoration: Restoration | None = None,
                            cutoff_fraction: float = CUTOFF_FRACTION,
                            cutoff_pixels: float = CUTOFF_PIXELS,
                            spread_fraction: float = SPREAD_FRACTION,
                            spread_pixels: float = SPREAD_PIXELS) -> FaultRestorationCheck:
    """Cutoff mismatches and separation consistency at every fault of a draft."""
    return FaultRestorationCheck(
        check_cutoffs(draft, fraction=cutoff_fraction, pixels=cutoff_pixels,
                      restoration=restoration),
        check_separations(draft, fraction=spread_fraction, pixels=spread_pixels))
