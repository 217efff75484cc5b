"""The draft section: what construction produces and the balance checks consume.

Everything here is in *section space*: x is distance along the section line in
metres, y is elevation in metres. One data model serves a section that
mapsection constructed and one read back from a hand-edited ``section.gpkg``.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from shapely.geometry import LineString, MultiPolygon, Polygon

from .dips import ProjectedDips
from .geology import SurfaceGeology
from .line import SectionLine
from .stratigraphy import Column
from .topo_profile import Profile


@dataclass(frozen=True)
class Horizon:
    """A piece of the top of one unit in the section.

    ``above_ground`` pieces are the projected (eroded) continuation above the
    topographic profile; they are stored and drawn apart from those below.
    ``block`` numbers the fault blocks from the start of the line (0, 1, ...).
    """

    top_of: str
    geometry: LineString
    above_ground: bool = False
    block: int = 0


@dataclass(frozen=True)
class FaultTrace:
    """A fault in the section, from the ground down to its constructed depth."""

    name: str
    geometry: LineString
    dip: float  # true dip, degrees
    dip_direction: float  # degrees clockwise from north
    apparent_dip: float  # signed, section plane
    sense: str | None = None  # "thrust", "reverse", "normal", ... as mapped
    # top_of -> separation of that horizon across the fault, metres measured
    # along the fault trace (positive: hanging wall up, i.e. reverse sense).
    separations: dict[str, float] = field(default_factory=dict)
    # The trace's segments from the ground down, as (kind, length along the fault in
    # metres): kind "ramp", "bend" (a listric curve) or "flat" (a detachment).
    segments: tuple[tuple[str, float], ...] = ()


@dataclass(frozen=True)
class UnitPolygon:
    unit: str
    geometry: Polygon | MultiPolygon
    block: int = 0


@dataclass(frozen=True)
class Unconformity:
    """A piece of an erosion surface in the section: the base of ``unit``, the oldest unit
    of a younger sequence (``unconformity = true`` in the column). ``above_ground`` pieces
    are its projected (eroded) continuation above the topographic profile."""

    unit: str
    geometry: LineString
    above_ground: bool = False
    block: int = 0


def unconformity_key(unit: str) -> str:
    """The name under which the checks pair the map's contacts between two sequences with the
    unconformity at the base of ``unit`` (a "base ..." name, never a unit's top)."""
    return f"base of {unit} (unconformity)"


@dataclass(frozen=True)
class DipDomain:
    """A run of consecutive dips within the tolerance, drawn at one dip."""

    start_m: float  # distance of its first dip
    end_m: float  # distance of its last dip
    dip: float  # signed apparent dip, degrees
    n_dips: int
    block: int = 0


@dataclass(frozen=True)
class DipOutlier:
    """A reading kept out of the dip domains: one reading that would have made a domain
    of its own (see docs/dips.md, "Outliers").

    ``kind`` is ``"outlier"`` (it disagrees with neighbours that agree with each other)
    or ``"hinge"`` (between two dip domains, fitting neither). ``misfit_deg`` is its
    apparent dip minus the one its neighbours give (``expected_dip``).
    """

    id: str
    distance_m: float
    elevation_m: float
    apparent_dip: float  # signed, section plane, degrees
    expected_dip: float
    misfit_deg: float
    kind: str
    why: str
    block: int = 0


@dataclass(frozen=True)
class AxialSurface:
    geometry: LineString  # section space, from its upper to its lower end
    ground_distance_m: float  # where it meets the ground (NaN if it does not)
    dip_left: float  # signed dips of the domains on either side
    dip_right: float


@dataclass(frozen=True)
class ContactResidual:
    """How far a constructed horizon misses a map contact that positioned it."""

    distance_m: float
    elevation_m: float
    top_of: str
    residual_m: float  # perpendicular to bedding, metres


@dataclass
class Draft:
    """A draft section (constructed, or read back from a section.gpkg)."""

    name: str
    method: str  # "kink", "arc", or "edited" when read from a file
    line: SectionLine
    profile: Profile
    geology: SurfaceGeology
    dips: ProjectedDips
    column: Column
    horizons: list[Horizon] = field(default_factory=list)
    faults: list[FaultTrace] = field(default_factory=list)
    units: list[UnitPolygon] = field(default_factory=list)
    domains: list[DipDomain] = field(default_factory=list)
    axial_surfaces: list[AxialSurface] = field(default_factory=list)
    residuals: list[ContactResidual] = field(default_factory=list)
    ve: float = 1.0
    base_elevation_m: float = float("nan")  # the section's lower edge
    log: list[str] = field(default_factory=list)
    outliers: list[DipOutlier] = field(default_factory=list)  # readings kept out of domains
    # A column with unconformities: the erosion surfaces, and one draft per sequence
    # (youngest first; see mapsection.construct.sequences); empty for one sequence.
    unconformities: list[Unconformity] = field(default_factory=list)
    sequences: list[Draft] = field(default_factory=list)
    # An older sequence's beds above the unconformity, as constructed: eroded, not drawn,
    # kept so that its restoration can report what was eroded.
    eroded_horizons: list[Horizon] = field(default_factory=list)
