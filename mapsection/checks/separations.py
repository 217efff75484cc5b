"""Restoration judged at each fault: do the separations along a fault agree?

Along a fault, a rigid hanging wall has one slip: the separations of all horizons cut
on one straight stretch of the fault should agree (Dahlstrom 1969, Balanced cross
sections, Can. J. Earth Sci. 6). Where the fault bends (a ramp between flats), the slip
changes across the bend (Suppe 1983, Geometry and kinematics of fault-bend folding,
Am. J. Sci. 283: the slip ratio), so only horizons cut on the same straight stretch are
compared. The spread (max - min) is reported in metres and as a percentage of the
mean; the test fails past the larger of 20 % of the mean separation and 2 DEM pixels
(the tool's default). The cutoff mismatches at the same faults are
:mod:`mapsection.checks.cutoffs`.

Pure functions over a :class:`~mapsection.draft.Draft`: numpy and shapely only,
no drawing, no files.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass, field

import numpy as np

from ..draft import Draft, FaultTrace
from ..stratigraphy import horizon_name
from .fault_cuts import Cut, PerFaultCheck, check_setting, fault_cuts, threshold
from .geometry import FaultBlocks, fault_blocks

__all__ = [
    "SPREAD_FRACTION",
    "SPREAD_PIXELS",
    "FaultSeparations",
    "SeparationCheck",
    "check_separations",
]

SPREAD_FRACTION = 0.20  # of the fault's mean separation (the tool's default)
SPREAD_PIXELS = 2.0  # DEM pixels (the tool's default)


@dataclass
class FaultSeparations:
    fault: str
    distance_m: float
    separations_m: dict[str, float]  # top_of -> measured separation, + hanging wall up
    projected: list[str]  # horizons cut above the ground (eroded part)
    stretches: list[list[str]]  # horizons compared together (one straight stretch each)
    mean_m: float
    spread_m: float  # max - min within the straight stretches (the largest)
    spread_pct: float  # spread relative to |mean|
    threshold_m: float
    status: str
    reasons: list[str] = field(default_factory=list)

    def to_dict(self) -> dict:
        return asdict(self)


@dataclass
class SeparationCheck(PerFaultCheck):
    faults: list[FaultSeparations]
    _untested = "separations not compared"

    def _line(self, f: FaultSeparations) -> str:
        vals = ", ".join(f"{v:.0f}" for v in f.separations_m.values())
        return (f"fault {f.fault}: separations {vals} m, spread {f.spread_m:.0f} m "
                f"({f.spread_pct:.0f} % of the mean; <= {f.threshold_m:.0f} m): "
                f"{f.status.upper()}")


def _fault_separations(draft: Draft, f: FaultTrace, fb: FaultBlocks, fraction: float,
                       pixels: float, pixel: float) -> FaultSeparations:
    """One fault's separations, compared within each straight stretch."""
    cuts = sorted(fault_cuts(draft, f, fb.hanging_wall, fb.footwall), key=lambda c: c.u_fw)
    seps = {c.top_of: c.separation_m for c in cuts}
    projected = [c.top_of for c in cuts if c.projected]
    groups: dict[int, list[Cut]] = {}
    for c in cuts:
        groups.setdefault(c.segment, []).append(c)
    stretches = [[c.top_of for c in g] for g in groups.values() if len(g) >= 2]
    mean = float(np.mean(list(seps.values()))) if seps else float("nan")
    if not stretches:
        why = ("no horizon is cut by the fault on both walls" if not cuts else
               "fewer than two horizons are cut on one straight stretch of the fault")
        return FaultSeparations(f.name, fb.ground_x, seps, projected, [], mean,
                                float("nan"), float("nan"), float("nan"), "not_tested", [why])
    spread = max(float(np.ptp([seps[t] for t in s])) for s in stretches)
    pct = 100.0 * spread / abs(mean) if abs(mean) > 0 else float("inf")
    thr = threshold(fraction, pixels, mean, pixel)
    reasons = []
    if len(groups) > 1:
        reasons.append("the fault bends: separations compared within each straight "
                       "stretch only (the slip changes across a bend, Suppe 1983)")
    status = "fail" if spread > thr else "pass"
    if status == "fail":
        lo = min(seps, key=seps.get)
        hi = max(seps, key=seps.get)
        reasons.append(f"separations spread {spread:.0f} m ({pct:.0f} % of the mean "
                       f"{mean:.0f} m; > {thr:.0f} m): {seps[lo]:.0f} m at the "
                       f"{horizon_name(lo)}, "
                       f"{seps[hi]:.0f} m at the {horizon_name(hi)}")
    return FaultSeparations(f.name, fb.ground_x, seps, projected, stretches, mean,
                            spread, float(pct), float(thr), status, reasons)


def check_separations(draft: Draft, *, fraction: float = SPREAD_FRACTION,
                      pixels: float = SPREAD_PIXELS) -> SeparationCheck:
    """Do the separations along each fault agree, as a rigid hanging wall requires?

    Parameters
    ----------
    draft
        The draft section.
    fraction, pixels
        Fails where the spread (max - min) of the separations on one straight
        stretch of a fault exceeds the larger of ``fraction`` of the mean
        separation and ``pixels`` DEM pixels (defaults 0.20 and 2: the tool's
        default).

    Returns
    -------
    SeparationCheck
        Per fault: the separations, their spread in metres and %, ``status`` and
        ``reasons``.

    Examples
    --------
    >>> check_separations(draft).faults[0].spread_m  # doctest: +SKIP
    """
    fraction = check_setting("separation spread fraction", fraction, 0.0, 10.0)
    pixels = check_setting("separation spread pixels", pixels, 0.0, 100.0)
    if not draft.faults:
        return SeparationCheck([], fraction, pixels, "not_tested", ["the section has no fault"])
    pixel = float(getattr(draft.profile, "pixel_size", float("nan")))
    blocks = fault_blocks(draft)
    out = [_fault_separations(draft, f, blocks[f.name], fraction, pixels, pixel)
           for f in sorted(draft.faults, key=lambda f: blocks[f.name].ground_x)]
    return SeparationCheck.judged(out, fraction, pixels)
