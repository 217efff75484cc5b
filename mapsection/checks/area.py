"""Area balance and depth to detachment.

* Area balance: each unit's area in the deformed section, between the pin and
  loose lines, against its restored area (thickness times restored length).
  The deformed area is measured from the horizons themselves, closed above the
  ground by their projected (above-ground) parts, so a horizon moved by hand
  that thins or thickens a unit shows at once. A section that mapsection
  constructs with constant thickness balances by construction (its verdict says
  "holds by construction"); the test earns its keep on edited and imported sections.
* Depth to detachment (Chamberlin 1910; Epard & Groshong 1993, Excess area and
  depth to detachment, AAPG Bulletin 77): the excess area S of each horizon (the
  area uplifted above its regional level between the pin and loose lines) is
  linear in the horizon's depth z: S = D (z_d - z). The least-squares line
  through (z, S) gives the displacement D (minus its slope) and the depth z_d of
  the detachment (where S = 0), measured below the ground at the pin line and
  also given as an elevation. The regional level is each horizon's elevation at
  the pin line, horizontal; z_d moves by (pin-to-loose width) / D for every
  metre that level is wrong, so the fit says plainly when z_d is not determined
  (fewer than 3 horizons, R² below 0.9, a level above folded horizons, no
  undeformed ground at both ends) instead of printing a confident number.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from shapely.geometry import Polygon, box

from ..draft import Draft
from ..errors import CheckError
from .geometry import clip_x, joined_horizons, line_xy, y_at
from .restore import Restoration
from .status import BY_CONSTRUCTION, NOT_TESTED, Part, combine, passed_of

__all__ = [
    "UnitArea",
    "AreaBalance",
    "ExcessAreaPoint",
    "DetachmentFit",
    "MIN_R_SQUARED",
    "area_balance",
    "excess_area_points",
    "depth_to_detachment",
]


def _nan_none(v: float) -> float | None:
    return float(v) if v is not None and np.isfinite(v) else None


@dataclass(frozen=True)
class UnitArea:
    unit: str
    deformed_area_m2: float
    restored_area_m2: float
    mismatch_pct: float  # (deformed - restored) / restored
    passed: bool
    blocks: tuple[int, ...]
    base_of: str  # the horizon closing the unit below

    def to_dict(self) -> dict:
        return {"unit": self.unit, "deformed_area_m2": self.deformed_area_m2,
                "restored_area_m2": self.restored_area_m2,
                "mismatch_pct": _nan_none(self.mismatch_pct), "passed": self.passed,
                "blocks": list(self.blocks), "base_of": self.base_of}


@dataclass(frozen=True)
class ExcessAreaPoint:
    top_of: str
    regional_elevation_m: float  # the horizon's elevation at the pin line
    depth_m: float  # depth of the regional level below the fit's datum (positive down)
    excess_area_m2: float

    def to_dict(self) -> dict:
        return dict(self.__dict__)


# Below this R squared the area-depth line is not taken as a detachment (a choice made
# here, not a published value).
MIN_R_SQUARED = 0.9
# A regional level uncertain enough to move the detachment by more than this share of
# its depth below the datum leaves the depth undetermined (a choice made here).
MAX_REGIONAL_SHIFT_SHARE = 0.1


@dataclass
class DetachmentFit:
    """The least-squares line of excess area against depth (Epard & Groshong 1993).

    Depths are measured below ``datum`` (at elevation ``datum_elevation_m``),
    positive down. ``issues`` (each "short reason: explanation") lists why the
    fitted depth is not to be trusted (too few horizons, a poor fit, a level
    above folded horizons, an uncertain regional level); ``caveats`` what to
    bear in mind even when it is.
    """

    points: list[ExcessAreaPoint]
    displacement_m: float
    depth_to_detachment_m: float  # below the datum
    r_squared: float
    datum_elevation_m: float = 0.0
    datum: str = "elevation 0"
    issues: list[str] = field(default_factory=list)
    caveats: list[str] = field(default_factory=list)
    # How far the detachment moves per 10 m of error in every horizon's regional level.
    shift_per_10m_regional_m: float = float("nan")

    @property
    def detachment_elevation_m(self) -> float:
        return self.datum_elevation_m - self.depth_to_detachment_m

    @property
    def reliable(self) -> bool:
        return not self.issues

    @property
    def summary(self) -> str:
        """One plain sentence: the detachment with its datum and R², or why there is none."""
        fit = f"R² {self.r_squared:.3f}, {len(self.points)} horizons"
        if not self.reliable:
            return f"detachment not determined ({fit}): " + "; ".join(self.issues)
        return (f"detachment at elevation {self.detachment_elevation_m:.0f} m, "
                f"{self.depth_to_detachment_m:.0f} m below {self.datum} ({fit}), "
                f"displacement {self.displacement_m:.0f} m")

    def to_dict(self) -> dict:
        return {"summary": self.summary,
                "reliable": self.reliable,
                "displacement_m": _nan_none(self.displacement_m),
                "detachment_elevation_m": _nan_none(self.detachment_elevation_m),
                "depth_to_detachment_m": _nan_none(self.depth_to_detachment_m),
                "datum": self.datum,
                "datum_elevation_m": _nan_none(self.datum_elevation_m),
                "r_squared": _nan_none(self.r_squared),
                "n_horizons": len(self.points),
                "shift_per_10m_regional_m": _nan_none(self.shift_per_10m_regional_m),
                "issues": list(self.issues),
                "caveats": list(self.caveats),
                "points": [p.to_dict() for p in self.points]}


@dataclass
class AreaBalance:
    passed: bool
    threshold_pct: float
    units: list[UnitArea]
    detachment: DetachmentFit | None
    failures: list[str] = field(default_factory=list)
    # Three states (issue 12); the depth to detachment is a figure, not a part.
    parts: dict[str, Part] = field(default_factory=dict)
    status: str = NOT_TESTED
    reasons: list[str] = field(default_factory=list)

    def to_dict(self) -> dict:
        return {"passed": passed_of(self.status), "status": self.status,
                "reasons": list(self.reasons),
                "parts": {k: p.to_dict() for k, p in self.parts.items()},
                "threshold_pct": self.threshold_pct,
                "units": [u.to_dict() for u in self.units],
                "detachment": self.detachment.to_dict() if self.detachment else None,
                "failures": list(self.failures)}


def _polygon_between(top, base) -> Polygon:
    """The region between two x-ordered lines, closed by straight segments at both ends."""
    poly = Polygon(np.vstack([line_xy(top), line_xy(base)[::-1]]))
    if not poly.is_valid:
        poly = poly.buffer(0)  # a crossing pair of horizons: count the enclosed area once
    return poly


def area_balance(draft: Draft, restoration: Restoration, threshold_pct: float = 5.0,
                 ) -> AreaBalance:
    """Deformed against restored area of every unit between the pin and loose lines.

    The deformed area of a unit, per fault block, is the shapely polygon between
    its top horizon and the next older horizon of the same block (both with
    their above-ground parts), cut at the pin and loose verticals and closed
    along the fault where a block ends at one. The restored area is the restored
    unit polygon: the column thickness times the mean restored length of the two
    horizons. Passes when every unit's |mismatch| is within ``threshold_pct``
    (default 5 %, common practice).
    """
    if not (np.isfinite(threshold_pct) and threshold_pct > 0):
        raise CheckError(f"area balance: threshold must be > 0 %, got {threshold_pct}")
    joined = joined_horizons(draft)
    lo, hi = sorted((restoration.pin_m, restoration.loose_m))
    restored = {(u.unit, u.block): u for u in restoration.units}
    sums: dict[str, list] = {}
    for (unit, block), ru in restored.items():
        top, base = joined.get((unit, block)), joined.get((ru.base_of, block))
        if top is None or base is None:
            continue
        t, b = clip_x(top, lo, hi), clip_x(base, lo, hi)
        if t is None or b is None:
            continue
        area = _polygon_between(t, b).area
        s = sums.setdefault(unit, [0.0, 0.0, [], ru.base_of])
        s[0] += area
        s[1] += ru.area_m2
        s[2].append(block)
    units = []
    failures = []
    order = {n: i for i, n in enumerate(draft.column.names)}
    for unit in sorted(sums, key=lambda n: order.get(n, len(order))):
        dA, rA, blocks, base = sums[unit]
        mm = 100.0 * (dA - rA) / rA if rA > 0 else float("nan")
        ok = bool(np.isfinite(mm) and abs(mm) <= threshold_pct)
        if not ok:
            failures.append(f"unit {unit}: deformed area {dA / 1e6:.3f} km2 against restored "
                            f"{rA / 1e6:.3f} km2 ({mm:+.1f} %)")
        units.append(UnitArea(unit, float(dA), float(rA), float(mm), ok, tuple(sorted(blocks)),
                              base))
    if not units:
        part = Part.not_tested("no unit has both its top and its base horizon between the pin "
                               "and loose lines")
    elif failures:
        part = Part.measured(False, *failures)
    elif draft.method != "edited":
        # Constant thickness along the bed: deformed and restored areas agree by construction.
        part = Part.measured(True, f"{BY_CONSTRUCTION} (a constant-thickness draft built by "
                             "mapsection keeps each unit's area)")
    else:
        part = Part.measured(True)
    parts = {"unit_areas": part}
    status, reasons = combine(parts)
    fit = _detachment_fit(draft, restoration)
    return AreaBalance(status == "pass", float(threshold_pct), units, fit, failures, parts,
                       status, reasons)


def _detachment_fit(draft: Draft, restoration: Restoration) -> DetachmentFit | None:
    """The area-depth line of the section, its datum the ground at the pin line, judged."""
    datum_z = float(draft.profile.elevation_at(restoration.pin_m)) if draft.profile else np.nan
    datum = "the ground at the pin line"
    if not np.isfinite(datum_z):
        datum_z, datum = 0.0, "elevation 0"
    pts = excess_area_points(draft, restoration, datum_z)
    if len(pts) < 2:
        return None
    fit = depth_to_detachment([p.depth_m for p in pts], [p.excess_area_m2 for p in pts],
                              datum_elevation_m=datum_z, datum=datum)
    fit.points = pts
    width = abs(restoration.loose_m - restoration.pin_m)
    disp = fit.displacement_m
    if disp > 0:
        # Every regional level raised by dr takes width * dr from every excess area, which
        # moves the level where the line reaches zero by width * dr / D.
        fit.shift_per_10m_regional_m = 10.0 * width / disp
        off = _loose_end_offset(draft, restoration, pts)
        shift = abs(off) * width / disp
        if np.isfinite(off) and shift > MAX_REGIONAL_SHIFT_SHARE * abs(fit.depth_to_detachment_m):
            fit.issues.append(
                f"regional level uncertain: at the loose line the horizons lie {off:+.0f} m "
                f"on average from their regional level (their elevation at the pin line): the "
                f"section has no undeformed ground at both ends, and that uncertainty in the "
                f"regional level moves the detachment by about {shift:.0f} m")
        short = restoration.shortening_m
        if np.isfinite(short) and short > 0 and abs(disp - short) > 0.1 * short:
            fit.caveats.append(f"the displacement ({disp:.0f} m) differs from the shortening "
                               f"measured on the line lengths ({short:.0f} m) by "
                               f"{100 * (disp - short) / short:+.0f} %")
    lo, hi = sorted((restoration.pin_m, restoration.loose_m))
    band = box(lo, -1e6, hi, 1e6)
    faults = [f.name for f in draft.faults
              if f.geometry is not None and not f.geometry.is_empty and f.geometry.intersects(band)]
    if faults:
        fit.caveats.append(
            f"faults between the pin and loose lines ({', '.join(faults)}): the area-depth line "
            "describes a fold above one detachment (Epard & Groshong 1993); in a fault-related "
            "fold the fitted level is a detachment only where the fault flattens into it")
    return fit


def _loose_end_offset(draft: Draft, restoration: Restoration,
                      points: list[ExcessAreaPoint]) -> float:
    """Mean elevation of the horizons at the loose line minus their regional level (m)."""
    joined = joined_horizons(draft)
    regional = {p.top_of: p.regional_elevation_m for p in points}
    offsets = [float(y_at(g, restoration.loose_m)) - regional[t]
               for (t, _), g in joined.items() if t in regional]
    offsets = [o for o in offsets if np.isfinite(o)]
    return float(np.mean(offsets)) if offsets else float("nan")


def excess_area_points(draft: Draft, restoration: Restoration,
                       datum_elevation_m: float = 0.0) -> list[ExcessAreaPoint]:
    """Each horizon's excess area between the pin and loose lines (Epard & Groshong 1993).

    The regional level of a horizon is its elevation at the pin line, taken as
    horizontal (the pin sits in the least-dipping, least-deformed part of the
    section by default); the excess area is the signed area between the horizon
    and that level (above positive), summed over the fault blocks' pieces. Depths
    are those of the regional levels below ``datum_elevation_m``. Horizons that do
    not cross the pin line are left out.
    """
    joined = joined_horizons(draft)
    lo, hi = sorted((restoration.pin_m, restoration.loose_m))
    out = []
    order = {n: i for i, n in enumerate(draft.column.names)}
    names = sorted({k[0] for k in joined}, key=lambda n: order.get(n, len(order)))
    for top_of in names:
        lines = [g for (t, _), g in joined.items() if t == top_of]
        reg = [float(y_at(g, restoration.pin_m)) for g in lines]
        reg = [r for r in reg if np.isfinite(r)]
        if not reg:
            continue
        regional = max(reg)  # the block holding the pin line (one value unless cut there)
        area = 0.0
        for g in lines:
            piece = clip_x(g, lo, hi)
            if piece is None:
                continue
            c = line_xy(piece)
            area += float(np.trapezoid(c[:, 1] - regional, c[:, 0]))
        out.append(ExcessAreaPoint(top_of, regional, datum_elevation_m - regional, area))
    return out


def depth_to_detachment(depths, excess_areas, *, datum_elevation_m: float = 0.0,
                        datum: str = "elevation 0") -> DetachmentFit:
    """Least-squares line of excess area against depth (Chamberlin 1910; Epard & Groshong 1993).

    ``depths`` are the horizons' depths (metres below the datum, positive down)
    and ``excess_areas`` their excess areas (m2). With S = D (z_d - z):
    displacement D = -slope, depth to detachment z_d = where S = 0. The fit's
    ``issues`` say when z_d is not to be trusted: fewer than 3 horizons, R² below
    MIN_R_SQUARED, excess area not decreasing with depth, or z_d above some of
    the horizons (which a fold above one detachment cannot have).
    """
    z = np.asarray(depths, float)
    s = np.asarray(excess_areas, float)
    if z.shape != s.shape or len(z) < 2:
        raise CheckError("depth to detachment: needs at least two horizons with excess areas")
    if np.ptp(z) <= 0:
        raise CheckError("depth to detachment: the horizons' depths are all the same")
    slope, icpt = np.polyfit(z, s, 1)
    pred = icpt + slope * z
    ss_tot = float(np.sum((s - s.mean()) ** 2))
    r2 = 1.0 - float(np.sum((s - pred) ** 2)) / ss_tot if ss_tot > 0 else float("nan")
    disp = -float(slope)
    zd = -float(icpt) / float(slope) if abs(slope) > 1e-12 else float("nan")
    issues = []
    if len(z) < 3:
        issues.append(f"only {len(z)} horizons: a line through fewer than 3 says nothing")
    if not r2 >= MIN_R_SQUARED:
        issues.append(f"poor fit: the points do not lie on a line "
                      f"(R² {r2:.2f} < {MIN_R_SQUARED:g})")
    if not disp > 0:
        issues.append("no detachment below: excess area does not decrease with depth")
    elif (below := int(np.sum(z > zd + 0.02 * np.ptp(z)))) > 0:
        issues.append(f"level above {below} folded horizons: the fitted level lies above "
                      f"horizons that are folded too, so this is not a fold above one "
                      f"detachment")
    pts = [ExcessAreaPoint("", datum_elevation_m - float(a), float(a), float(b))
           for a, b in zip(z, s, strict=True)]
    return DetachmentFit(pts, disp, zd, r2, float(datum_elevation_m), datum, issues)
