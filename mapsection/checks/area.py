"""Area balance and depth to detachment.

* Area balance: each unit's area in the deformed section, between the pin and
  loose lines, against its restored area (thickness times restored length).
  The deformed area is measured from the horizons themselves, closed above the
  ground by their projected (above-ground) parts, so a horizon moved by hand
  that thins or thickens a unit shows at once. A section that mapsection
  constructs with constant thickness balances by construction; the test earns
  its keep on edited and imported sections.
* Depth to detachment (Chamberlin 1910; Epard & Groshong 1993, Excess area and
  depth to detachment, AAPG Bulletin 77): the excess area S of each horizon (the
  area uplifted above its regional level between the pin and loose lines) is
  linear in the horizon's depth z: S = D (z_d - z). The least-squares line
  through (z, S) gives the displacement D (minus its slope) and the depth z_d of
  the detachment (where S = 0).
"""

from __future__ import annotations

import os
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
from shapely.geometry import Polygon

from .._atomic import atomic_file
from ..draft import Draft
from ..errors import CheckError
from .restore import Restoration, _xy, clip_x, joined_horizons, y_at

__all__ = [
    "UnitArea",
    "AreaBalance",
    "ExcessAreaPoint",
    "DetachmentFit",
    "area_balance",
    "excess_area_points",
    "depth_to_detachment",
    "draw_area_depth",
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
    depth_m: float  # = -regional elevation (depth below elevation 0)
    excess_area_m2: float

    def to_dict(self) -> dict:
        return dict(self.__dict__)


@dataclass
class DetachmentFit:
    """The least-squares line of excess area against depth (Epard & Groshong 1993)."""

    points: list[ExcessAreaPoint]
    displacement_m: float
    depth_to_detachment_m: float  # depth below elevation 0
    r_squared: float

    @property
    def detachment_elevation_m(self) -> float:
        return -self.depth_to_detachment_m

    def to_dict(self) -> dict:
        return {"displacement_m": _nan_none(self.displacement_m),
                "depth_to_detachment_m": _nan_none(self.depth_to_detachment_m),
                "detachment_elevation_m": _nan_none(self.detachment_elevation_m),
                "r_squared": _nan_none(self.r_squared),
                "points": [p.to_dict() for p in self.points]}


@dataclass
class AreaBalance:
    passed: bool
    threshold_pct: float
    units: list[UnitArea]
    detachment: DetachmentFit | None
    failures: list[str] = field(default_factory=list)

    def to_dict(self) -> dict:
        return {"passed": self.passed, "threshold_pct": self.threshold_pct,
                "units": [u.to_dict() for u in self.units],
                "detachment": self.detachment.to_dict() if self.detachment else None,
                "failures": list(self.failures)}


def _polygon_between(top, base) -> Polygon:
    """The region between two x-ordered lines, closed by straight segments at both ends."""
    poly = Polygon(np.vstack([_xy(top), _xy(base)[::-1]]))
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
        failures.append("no unit has both its top and its base horizon between the pin and "
                        "loose lines")
    pts = excess_area_points(draft, restoration)
    fit = None
    if len(pts) >= 2:
        fit = depth_to_detachment([p.depth_m for p in pts], [p.excess_area_m2 for p in pts])
        fit.points = pts
    passed = bool(units) and all(u.passed for u in units)
    return AreaBalance(passed, float(threshold_pct), units, fit, failures)


def excess_area_points(draft: Draft, restoration: Restoration) -> list[ExcessAreaPoint]:
    """Each horizon's excess area between the pin and loose lines (Epard & Groshong 1993).

    The regional level of a horizon is its elevation at the pin line (the pin
    sits in the least-dipping, least-deformed part of the section by default);
    the excess area is the signed area between the horizon and that level
    (above positive), summed over the fault blocks' pieces. Horizons that do
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
            c = _xy(piece)
            area += float(np.trapezoid(c[:, 1] - regional, c[:, 0]))
        out.append(ExcessAreaPoint(top_of, regional, -regional, area))
    return out


def depth_to_detachment(depths, excess_areas) -> DetachmentFit:
    """Least-squares line of excess area against depth (Chamberlin 1910; Epard & Groshong 1993).

    ``depths`` are the horizons' depths (metres below a datum, positive down)
    and ``excess_areas`` their excess areas (m2). With S = D (z_d - z):
    displacement D = -slope, depth to detachment z_d = where S = 0.
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
    pts = [ExcessAreaPoint("", -float(a), float(a), float(b)) for a, b in zip(z, s, strict=True)]
    return DetachmentFit(pts, disp, zd, r2)


def draw_area_depth(fit: DetachmentFit, path: str | os.PathLike) -> Path:
    """A small PNG: excess area against depth with the fitted line (for the report)."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    path = Path(path)
    z = np.array([p.depth_m for p in fit.points])
    s = np.array([p.excess_area_m2 for p in fit.points]) / 1e6
    fig = Figure(figsize=(4.2, 3.4))
    FigureCanvasAgg(fig)
    # Fixed margins instead of tight_layout (which draws the figure once more to measure it).
    fig.subplots_adjust(left=0.19, right=0.8, bottom=0.14, top=0.91)  # room for labels
    ax = fig.add_subplot()
    ax.plot(s, z, "o", color="#1a1a8c")
    for p in fit.points:
        if p.top_of:
            ax.annotate(p.top_of, (p.excess_area_m2 / 1e6, p.depth_m), fontsize=7,
                        textcoords="offset points", xytext=(4, 2))
    if np.isfinite(fit.depth_to_detachment_m):
        zz = np.linspace(min(z.min(), fit.depth_to_detachment_m), z.max(), 2)
        ax.plot(fit.displacement_m * (fit.depth_to_detachment_m - zz) / 1e6, zz, "-",
                color="#b00000", linewidth=1)
        ax.axhline(fit.depth_to_detachment_m, color="#b00000", linewidth=0.6, linestyle=":")
        ax.set_title(f"detachment {fit.depth_to_detachment_m:.0f} m deep, D = "
                     f"{fit.displacement_m:.0f} m, R² = {fit.r_squared:.3f}", fontsize=8,
                     y=1.0)
    ax.axvline(0.0, color="#777777", linewidth=0.5)
    ax.invert_yaxis()
    ax.set_xlabel("excess area (km²)")
    ax.set_ylabel("depth below elevation 0 (m)")
    with atomic_file(path) as tmp:
        fig.savefig(tmp, format="png", dpi=110, pil_kwargs={"compress_level": 3})
    return path
