"""The restoration's results: the restored horizons and units, each horizon's line-length
balance, the gaps between fault blocks, and the whole :class:`Restoration`."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import TYPE_CHECKING

from shapely.geometry import LineString, Polygon

from ..status import NOT_TESTED, Part, passed_of

if TYPE_CHECKING:
    from ..cutoffs import FaultRestorationCheck


@dataclass(frozen=True)
class RestoredHorizon:
    """One horizon piece (one fault block) laid flat."""

    top_of: str
    block: int
    restored_elevation_m: float
    bed_length_m: float  # along the bed between the pin and loose lines
    restored_x0_m: float  # restored start (pin side) and end
    restored_x1_m: float
    deformed_x0_m: float  # deformed start (pin side) and end, distance along the line
    deformed_x1_m: float
    local_pin_m: float  # the vertical the block was restored about
    geometry: LineString  # restored, section space
    # Restored x intervals of the bed that lie above the ground in the draft: eroded,
    # never observed (projected from the dips), drawn apart from preserved rock.
    eroded: tuple[tuple[float, float], ...] = ()

    @property
    def restored_length_m(self) -> float:
        return abs(self.restored_x1_m - self.restored_x0_m)


@dataclass(frozen=True)
class HorizonBalance:
    top_of: str
    restored_elevation_m: float
    deformed_length_m: float  # horizontal, from the pin to the horizon's loose-side end
    bed_length_m: float
    restored_length_m: float  # from the pin to its restored loose-side end (gaps included)
    shortening_m: float  # restored - deformed (negative: extension)
    shortening_pct: float
    reaches_loose: bool
    restored_loose_x_m: float

    def to_dict(self) -> dict:
        return dict(self.__dict__)


@dataclass(frozen=True)
class RestoredUnit:
    unit: str
    block: int
    base_of: str  # the horizon closing it below
    thickness_m: float
    geometry: Polygon
    area_m2: float


@dataclass(frozen=True)
class RestoredGap:
    """A gap (positive) or overlap between two blocks' pieces of a unit, restored."""

    unit: str
    blocks: tuple[int, int]
    gap_area_m2: float
    overlap_area_m2: float
    top_gap_m: float  # signed gap at the unit's top and base horizons (negative: overlap)
    base_gap_m: float

    def to_dict(self) -> dict:
        return {"unit": self.unit, "blocks": list(self.blocks), "gap_area_m2": self.gap_area_m2,
                "overlap_area_m2": self.overlap_area_m2, "top_gap_m": self.top_gap_m,
                "base_gap_m": self.base_gap_m}


@dataclass
class Restoration:
    section: str
    pin_m: float
    loose_m: float
    pin_source: str  # "given" or how the default was chosen
    direction: int  # +1 when the loose line lies at a larger distance than the pin
    threshold_pct: float
    pieces: list[RestoredHorizon]
    horizons: list[HorizonBalance]
    units: list[RestoredUnit]
    gaps: list[RestoredGap]
    line_length_mismatch_pct: float
    loose_line_spread_m: float
    loose_line_angle_deg: float
    loose_line_departure_m: float
    shortening_pct: float
    shortening_m: float
    passed: bool
    failures: list[str] = field(default_factory=list)
    column: object = None
    datum_elevation_m: float = 0.0
    # Three states (issue 12): line-length balance, gaps between blocks and, once judged
    # at each fault (with_fault_checks), cutoff mismatches and separation consistency.
    parts: dict[str, Part] = field(default_factory=dict)
    status: str = NOT_TESTED
    reasons: list[str] = field(default_factory=list)
    at_faults: FaultRestorationCheck | None = None

    @property
    def gap_overlap_pct(self) -> float:
        """Gaps plus overlaps between fault blocks, % of the restored units' area."""
        area = sum(u.area_m2 for u in self.units)
        gaps = sum(g.gap_area_m2 + g.overlap_area_m2 for g in self.gaps)
        return float(100.0 * gaps / area) if area > 0 else 0.0

    @property
    def restored_loose_line(self) -> LineString | None:
        pts = sorted(((h.restored_loose_x_m, h.restored_elevation_m)
                      for h in self.horizons if h.reaches_loose), key=lambda p: -p[1])
        return LineString(pts) if len(pts) >= 2 else None

    def to_dict(self) -> dict:
        return {
            "passed": passed_of(self.status),
            "status": self.status,
            "reasons": list(self.reasons),
            "parts": {k: p.to_dict() for k, p in self.parts.items()},
            "pin_m": self.pin_m,
            "loose_m": self.loose_m,
            "pin_source": self.pin_source,
            "shortening_pct": self.shortening_pct,
            "shortening_m": self.shortening_m,
            "shortening_basis": "mean over the horizons that reach the loose line",
            "line_length_mismatch_pct": self.line_length_mismatch_pct,
            "line_length_threshold_pct": self.threshold_pct,
            "loose_line_spread_m": self.loose_line_spread_m,
            "loose_line_angle_deg": self.loose_line_angle_deg,
            "loose_line_departure_m": self.loose_line_departure_m,
            "horizons": [h.to_dict() for h in self.horizons],
            "gaps": [g.to_dict() for g in self.gaps],
            "gap_area_m2": float(sum(g.gap_area_m2 for g in self.gaps)),
            "overlap_area_m2": float(sum(g.overlap_area_m2 for g in self.gaps)),
            "gap_overlap_pct": self.gap_overlap_pct,
            "restored_units": [{"unit": u.unit, "block": u.block, "area_m2": u.area_m2}
                               for u in self.units],
            "failures": list(self.failures),
            "faults": self.at_faults.to_dict() if self.at_faults is not None else None,
        }


__all__ = ["HorizonBalance", "Restoration", "RestoredGap", "RestoredHorizon", "RestoredUnit"]
