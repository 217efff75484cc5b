"""The topography test's results: each measure's rows and the test's whole result."""

from __future__ import annotations

from dataclasses import asdict, dataclass, field

from ..status import NOT_TESTED, Part, passed_of


@dataclass(frozen=True)
class ContactMisfit:
    top_of: str
    map_distance_m: float
    section_distance_m: float
    misfit_m: float  # section minus map, metres along the line
    elevation_m: float  # ground elevation at the map contact
    kind: str = "paired"  # or "sliver": half of a narrow outcrop only one side shows


@dataclass(frozen=True)
class UnpairedContact:
    distance_m: float
    top_of: str
    elevation_m: float
    units: str = ""  # "A | B" for a map contact (unit before | unit after)


@dataclass(frozen=True)
class ConcealedStretch:
    """A stretch of the line where the map shows a cover or an intrusive unit: not compared."""

    from_m: float
    to_m: float
    unit: str
    kind: str  # "cover" (bedrock concealed) or "intrusive" (drawn there by construction)


@dataclass(frozen=True)
class UnitDisagreement:
    from_m: float
    to_m: float
    map_unit: str
    section_unit: str | None  # None where the section has no unit below the ground


@dataclass(frozen=True)
class DipMisfit:
    id: str
    distance_m: float
    elevation_m: float
    measured_deg: float  # signed apparent dip
    section_deg: float  # signed local dip of the nearest horizon
    misfit_deg: float  # section minus measured, wrapped to (-90, 90]
    top_of: str
    horizon_distance_m: float  # how far the nearest horizon is from the measurement
    poorly_constrained: bool


@dataclass
class TopographyCheck:
    """Result of the topography test (a failed test is a result, not an error)."""

    passed: bool
    contact_rms_m: float
    contact_worst_m: float
    contact_worst_distance_m: float
    contact_threshold_m: float
    pairing_radius_m: float
    max_unpaired: int
    n_map_contacts: int
    contact_misfits: list[ContactMisfit]
    unpaired_map_contacts: list[UnpairedContact]
    unpaired_section_contacts: list[UnpairedContact]
    fault_contacts: list[UnpairedContact]
    unverified_section_contacts: list[UnpairedContact]  # in map gaps: nothing to compare with
    unit_agreement: float
    unit_agreement_threshold: float
    compared_length_m: float
    disagreements: list[UnitDisagreement]
    unit_source: str  # "unit polygons" or "horizon stack"
    dip_rms_deg: float
    dip_worst_deg: float
    dip_worst_id: str
    dip_worst_distance_m: float
    dip_threshold_deg: float
    dip_misfits: list[DipMisfit]
    construction_residuals: list[dict] = field(default_factory=list)
    failures: list[str] = field(default_factory=list)
    # Three states (issue 12): each measure's verdict, and the test's.
    parts: dict[str, Part] = field(default_factory=dict)
    status: str = NOT_TESTED
    reasons: list[str] = field(default_factory=list)
    # Likely causes of a failure (mapsection.checks.diagnosis.Diagnosis), when diagnosed.
    diagnosis: object = None
    # Cover and intrusive stretches of the map along the line: not compared (see above).
    concealed: list[ConcealedStretch] = field(default_factory=list)
    concealed_length_m: float = 0.0  # under cover
    intrusive_length_m: float = 0.0  # intrusive at the ground
    concealed_section_contacts: list[UnpairedContact] = field(default_factory=list)

    def to_dict(self) -> dict:
        d = asdict(self)
        d["passed"] = passed_of(self.status)
        d["parts"] = {k: p.to_dict() for k, p in self.parts.items()}
        d["diagnosis"] = self.diagnosis.to_dict() if self.diagnosis is not None else None
        return d


__all__ = ["ConcealedStretch", "ContactMisfit", "DipMisfit", "TopographyCheck",
           "UnitDisagreement", "UnpairedContact"]
