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
  should agree. Where the fault bends (a ramp between flats), the slip changes
  across the bend (Suppe 1983, Geometry and kinematics of fault-bend folding,
  Am. J. Sci. 283: the slip ratio), so only horizons cut on the same straight
  stretch are compared. The spread (max - min) is reported in metres and as a
  percentage of the mean; the test fails past the larger of 20 % of the mean
  separation and 2 DEM pixels (the tool's default).

Pure functions over a :class:`~mapsection.draft.Draft`: numpy and shapely only,
no drawing, no files.
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass, field

import numpy as np
from shapely.geometry import LineString, Point

from ..draft import Draft, FaultTrace
from ..errors import ParameterError
from ..stratigraphy import horizon_name
from .geometry import fault_blocks, joined_horizons, line_xy, snap_tolerance
from .restore import Restoration

__all__ = [
    "CUTOFF_FRACTION",
    "CUTOFF_PIXELS",
    "SPREAD_FRACTION",
    "SPREAD_PIXELS",
    "HorizonCutoff",
    "FaultCutoffs",
    "CutoffCheck",
    "FaultSeparations",
    "SeparationCheck",
    "FaultRestorationCheck",
    "check_cutoffs",
    "check_separations",
    "check_fault_restoration",
]

CUTOFF_FRACTION = 0.10  # of the fault's mean separation (the tool's default)
CUTOFF_PIXELS = 2.0  # DEM pixels (the tool's default)
SPREAD_FRACTION = 0.20  # of the fault's mean separation (the tool's default)
SPREAD_PIXELS = 2.0  # DEM pixels (the tool's default)
BEND_DEG = 5.0  # fault segments within this angle of each other are one straight stretch


def _worst_status(statuses: list[str]) -> str:
    if "fail" in statuses:
        return "fail"
    if "pass" in statuses:
        return "pass"
    return "not_tested"


def _check_setting(name: str, value: float, lo: float, hi: float) -> float:
    v = float(value)
    if not (math.isfinite(v) and lo <= v <= hi):
        raise ParameterError(f"{name}: must be a number from {lo:g} to {hi:g}, got {value!r}")
    return v


def _threshold(fraction: float, pixels: float, mean_sep: float, pixel_size: float) -> float:
    px = pixels * pixel_size if math.isfinite(pixel_size) else 0.0
    return float(max(fraction * abs(mean_sep), px))


# --- where each horizon meets the fault ------------------------------------------


@dataclass(frozen=True)
class _Cut:
    top_of: str
    hw: tuple[float, float]
    fw: tuple[float, float]
    u_hw: float  # position along the extended fault
    u_fw: float
    projected: bool
    separation_m: float  # along the fault, + hanging wall up
    cutoff_angle_deg: float  # between the footwall bed and the fault at the footwall cutoff
    segment: int  # straight stretch of the fault holding the footwall cutoff


def _extended(fault: FaultTrace, reach: float) -> tuple[LineString, float, np.ndarray]:
    """The fault trace ordered from its upper end down, prolonged upward by ``reach``
    along its top segment (where eroded horizons are cut); also the top end's position
    along it and the trace's coordinates (top first)."""
    c = line_xy(fault.geometry)
    if c[0, 1] < c[-1, 1]:
        c = c[::-1]
    d = c[0] - c[1]
    n = float(np.hypot(*d))
    if n <= 0:
        return LineString(c), 0.0, c
    up = c[0] + d / n * reach
    return LineString(np.vstack([up, c])), float(reach), c


def _segments(c: np.ndarray) -> list[int]:
    """Straight-stretch number of each segment of a fault (top first): a new stretch
    starts where the trace bends by more than BEND_DEG."""
    d = np.diff(c, axis=0)
    ang = np.degrees(np.arctan2(d[:, 1], d[:, 0]))
    out, k = [0], 0
    for i in range(1, len(ang)):
        turn = abs((ang[i] - ang[i - 1] + 180.0) % 360.0 - 180.0)
        if turn > BEND_DEG:
            k += 1
        out.append(k)
    return out


def _bed_angle(line: LineString, end: np.ndarray, fault_dir: np.ndarray) -> float:
    c = line_xy(line)
    at_start = np.hypot(*(c[0] - end)) <= np.hypot(*(c[-1] - end))
    seg = c[1] - c[0] if at_start else c[-1] - c[-2]
    n = float(np.hypot(*seg))
    if n <= 0:
        return float("nan")
    cosv = abs(float(seg @ fault_dir) / n)
    return float(np.degrees(np.arccos(min(cosv, 1.0))))


def _cuts(draft: Draft, fault: FaultTrace, hw_block: int, fw_block: int) -> list[_Cut]:
    joined = joined_horizons(draft)
    tol = snap_tolerance(draft)
    y_all = np.concatenate([line_xy(g)[:, 1] for g in joined.values()]) if joined else np.zeros(1)
    reach = 4.0 * max(float(np.ptp(y_all)), float(draft.line.length), 1.0)
    ext, top_u, trace = _extended(fault, reach)
    seg_of = _segments(trace)
    seg_start = np.concatenate([[0.0], np.cumsum(np.hypot(*np.diff(trace, axis=0).T))]) + top_u
    top_y = float(trace[0, 1])
    ends: dict[tuple[str, int], list[np.ndarray]] = {}
    for (top_of, block), line in joined.items():
        if block not in (hw_block, fw_block):
            continue
        c = line_xy(line)
        for end in (c[0], c[-1]):
            if ext.distance(Point(end)) <= tol:
                ends.setdefault((top_of, block), []).append(end)
    p0 = trace[0]

    def nearest(pts: list[np.ndarray]) -> np.ndarray:
        return min(pts, key=lambda p: float(np.hypot(*(p - p0))))

    names = list(draft.column.names)

    def order(t: str) -> tuple[int, str]:  # column order, youngest first; base horizons last
        return (names.index(t) if t in names else len(names), t)

    out = []
    for top_of in sorted({t for t, _ in ends}, key=order):
        if (top_of, hw_block) not in ends or (top_of, fw_block) not in ends:
            continue
        hw = nearest(ends[(top_of, hw_block)])
        fw = nearest(ends[(top_of, fw_block)])
        u_hw, u_fw = float(ext.project(Point(hw))), float(ext.project(Point(fw)))
        sep = abs(u_hw - u_fw)
        sep = sep if hw[1] >= fw[1] else -sep
        # the fault's direction at the footwall cutoff, for the cutoff angle
        a = ext.interpolate(max(u_fw - 5.0, 0.0))
        b = ext.interpolate(min(u_fw + 5.0, ext.length))
        fdir = np.array([b.x - a.x, b.y - a.y])
        fdir /= max(float(np.hypot(*fdir)), 1e-12)
        angle = _bed_angle(joined[(top_of, fw_block)], fw, fdir)
        i = int(np.searchsorted(seg_start, u_fw, side="right")) - 1
        segment = seg_of[min(max(i, 0), len(seg_of) - 1)]
        projected = bool(min(hw[1], fw[1]) > top_y + tol)
        out.append(_Cut(top_of, (float(hw[0]), float(hw[1])), (float(fw[0]), float(fw[1])),
                        u_hw, u_fw, projected, float(sep), angle, int(segment)))
    return out


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
class _PerFaultCheck:
    """A check judged fault by fault, with its threshold (a share of the fault's mean
    separation, or DEM pixels, the larger)."""

    faults: list
    fraction: float
    pixels: float
    status: str
    reasons: list[str] = field(default_factory=list)

    @property
    def passed(self) -> bool | None:
        return None if self.status == "not_tested" else self.status == "pass"

    def to_dict(self) -> dict:
        return {"status": self.status, "passed": self.passed, "reasons": list(self.reasons),
                "threshold_fraction_of_mean_separation": self.fraction,
                "threshold_pixels": self.pixels,
                "faults": [f.to_dict() for f in self.faults]}


@dataclass
class CutoffCheck(_PerFaultCheck):
    faults: list[FaultCutoffs]

    def lines(self) -> list[str]:
        out = []
        for f in self.faults:
            if f.status == "not_tested":
                out.append(f"fault {f.fault}: cutoffs not tested ({'; '.join(f.reasons)})")
                continue
            out.append(f"fault {f.fault}: restored by {f.slip_m:.0f} m of slip ({f.slip_source}),"
                       f" worst cutoff mismatch {f.worst_m:.0f} m at the "
                       f"{horizon_name(f.worst_top_of)}"
                       f" (<= {f.threshold_m:.0f} m): {f.status.upper()}")
        return out


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
    fraction = _check_setting("cutoff mismatch fraction", fraction, 0.0, 1.0)
    pixels = _check_setting("cutoff mismatch pixels", pixels, 0.0, 100.0)
    if threshold_m is not None:
        threshold_m = _check_setting("cutoff mismatch threshold_m", threshold_m, 0.0, 1e6)
    if not draft.faults:
        return CutoffCheck([], fraction, pixels, "not_tested", ["the section has no fault"])
    pixel = float(getattr(draft.profile, "pixel_size", float("nan")))
    blocks = fault_blocks(draft)
    results = []
    for f in sorted(draft.faults, key=lambda f: blocks[f.name].ground_x):
        fb = blocks[f.name]
        cuts = _cuts(draft, f, fb.hanging_wall, fb.footwall)
        if not cuts:
            results.append(FaultCutoffs(f.name, fb.ground_x, fb.hanging_wall, fb.footwall,
                                        float("nan"), "", float("nan"), float("nan"),
                                        float("nan"), [], float("nan"), None, "not_tested",
                                        ["no horizon is cut by the fault on both walls"]))
            continue
        reasons: list[str] = []
        seps = np.array([c.separation_m for c in cuts])
        mean_sep = float(seps.mean())
        recorded = {t: float(v) for t, v in f.separations.items()
                    if v is not None and math.isfinite(float(v))}
        # One slip per straight stretch of the fault: across a bend the slip changes
        # (Suppe 1983), so each stretch's horizons are restored by their own.
        stretch: dict[int, list[_Cut]] = {}
        for c in cuts:
            stretch.setdefault(c.segment, []).append(c)
        rec_all = [recorded[c.top_of] for c in cuts if c.top_of in recorded]
        slip_of: dict[str, float] = {}
        for group in stretch.values():
            rec = [recorded[c.top_of] for c in group if c.top_of in recorded]
            value = (float(np.mean(rec)) if rec else float(np.mean(rec_all)) if rec_all
                     else float(np.mean([c.separation_m for c in group])))
            slip_of.update({c.top_of: value for c in group})
        if rec_all:
            source = "recorded separations"
        else:
            source = "mean measured separation"
            reasons.append("the fault records no separations: no slip to restore its hanging "
                           "wall by (the mismatches against the mean measured separation only "
                           "repeat the separations' spread)")
        if len(stretch) > 1:
            reasons.append("the fault bends: each straight stretch restored by its own slip "
                           "(Suppe 1983)")
        slip = float(np.mean(list(slip_of.values())))
        thr = threshold_m if threshold_m is not None else _threshold(fraction, pixels,
                                                                      mean_sep, pixel)
        gaps = _restored_gaps(restoration, fb.hanging_wall, fb.footwall)
        hz = []
        for c in cuts:
            m = c.separation_m - slip_of[c.top_of]
            kind = "match" if abs(m) < 0.5 else ("overlap" if m > 0 else "gap")
            along = abs(m) * abs(math.cos(math.radians(c.cutoff_angle_deg))) \
                if math.isfinite(c.cutoff_angle_deg) else float("nan")
            hz.append(HorizonCutoff(c.top_of, c.hw, c.fw, c.projected, c.separation_m,
                                    recorded.get(c.top_of), slip_of[c.top_of], float(m),
                                    float(along),
                                    c.cutoff_angle_deg, kind, bool(abs(m) > thr),
                                    gaps.get(c.top_of)))
        worst = max(hz, key=lambda h: abs(h.mismatch_m))
        bad = [h for h in hz if h.exceeds]
        # Without a recorded slip the mismatch is measured against the separations' own
        # mean: that is the separation spread again, not a restoration; not tested.
        status = "not_tested" if not rec_all else "fail" if bad else "pass"
        for h in bad if rec_all else []:
            reasons.append(f"{horizon_name(h.top_of)}: restored hanging-wall cutoff "
                           f"{abs(h.mismatch_m):.0f} m from the footwall cutoff "
                           f"({h.kind}; > {thr:.0f} m)")
        results.append(FaultCutoffs(f.name, fb.ground_x, fb.hanging_wall, fb.footwall, slip,
                                    source, mean_sep,
                                    float(np.mean([h.mismatch_m for h in hz])), float(thr), hz,
                                    float(abs(worst.mismatch_m)), worst.top_of, status, reasons))
    status = _worst_status([r.status for r in results])
    reasons = [f"fault {r.fault}: {x}" for r in results for x in r.reasons
               if r.status != "pass"]
    return CutoffCheck(results, fraction, pixels, status, reasons)


# --- separation consistency ------------------------------------------------------


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
class SeparationCheck(_PerFaultCheck):
    faults: list[FaultSeparations]

    def lines(self) -> list[str]:
        out = []
        for f in self.faults:
            if f.status == "not_tested":
                out.append(f"fault {f.fault}: separations not compared ({'; '.join(f.reasons)})")
                continue
            vals = ", ".join(f"{v:.0f}" for v in f.separations_m.values())
            out.append(f"fault {f.fault}: separations {vals} m, spread {f.spread_m:.0f} m "
                       f"({f.spread_pct:.0f} % of the mean; <= {f.threshold_m:.0f} m): "
                       f"{f.status.upper()}")
        return out


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
    fraction = _check_setting("separation spread fraction", fraction, 0.0, 10.0)
    pixels = _check_setting("separation spread pixels", pixels, 0.0, 100.0)
    if not draft.faults:
        return SeparationCheck([], fraction, pixels, "not_tested", ["the section has no fault"])
    pixel = float(getattr(draft.profile, "pixel_size", float("nan")))
    blocks = fault_blocks(draft)
    out = []
    for f in sorted(draft.faults, key=lambda f: blocks[f.name].ground_x):
        fb = blocks[f.name]
        cuts = sorted(_cuts(draft, f, fb.hanging_wall, fb.footwall), key=lambda c: c.u_fw)
        seps = {c.top_of: c.separation_m for c in cuts}
        projected = [c.top_of for c in cuts if c.projected]
        groups: dict[int, list[_Cut]] = {}
        for c in cuts:
            groups.setdefault(c.segment, []).append(c)
        stretches = [[c.top_of for c in g] for g in groups.values() if len(g) >= 2]
        mean = float(np.mean(list(seps.values()))) if seps else float("nan")
        if not stretches:
            why = ("no horizon is cut by the fault on both walls" if not cuts else
                   "fewer than two horizons are cut on one straight stretch of the fault")
            out.append(FaultSeparations(f.name, fb.ground_x, seps, projected, [], mean,
                                        float("nan"), float("nan"), float("nan"),
                                        "not_tested", [why]))
            continue
        spread = max(float(np.ptp([seps[t] for t in s])) for s in stretches)
        pct = 100.0 * spread / abs(mean) if abs(mean) > 0 else float("inf")
        thr = _threshold(fraction, pixels, mean, pixel)
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
        out.append(FaultSeparations(f.name, fb.ground_x, seps, projected, stretches, mean,
                                    spread, float(pct), float(thr), status, reasons))
    status = _worst_status([r.status for r in out])
    reasons = [f"fault {r.fault}: {x}" for r in out for x in r.reasons if r.status != "pass"]
    return SeparationCheck(out, fraction, pixels, status, reasons)


@dataclass
class FaultRestorationCheck:
    """Both measurements at the faults, for the restoration test."""

    cutoffs: CutoffCheck
    separations: SeparationCheck

    @property
    def status(self) -> str:
        return _worst_status([self.cutoffs.status, self.separations.status])

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
