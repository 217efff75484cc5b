"""The stratigraphic column: units youngest first, with thicknesses in metres."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .errors import StratigraphyError
from .settings import KINDS

BASE_WORD = "base"

# What a unit is, for the construction (project file key ``kind``):
# "layered" units are the column's beds, carried to depth;
# "cover" units are surficial deposits (alluvium, drift, landslide, colluvium) drawn as a thin
# veneer under the ground where the map has them, never carried to depth;
# "intrusive" units are not layers (stocks, dykes, melange): drawn where the map has them at the
# ground with vertical contacts to a short depth, left out of the layered construction.
COVER_THICKNESS = 10.0  # m, the tool's default veneer of a cover unit with no thickness
INTRUSIVE_DEPTH = 300.0  # m below the ground, the tool's default depth of an intrusive body
BASE_PREFIX = f"{BASE_WORD} of "  # the base of the oldest unit is the horizon "base of <unit>"


def horizon_name(top_of: str) -> str:
    """A horizon in words: "top of <unit>", or the base of the column as it is named
    ("base of <oldest unit>")."""
    return top_of if is_base_name(top_of) else f"top of {top_of}"


def is_base_name(top_of: str) -> bool:
    """True for a horizon at the base of the column: ``base of <oldest unit>`` as built, or
    any name starting with "base" (any case) in a hand-edited section."""
    return top_of.lower().startswith(BASE_WORD)


@dataclass(frozen=True)
class Unit:
    name: str
    thickness: float  # metres, measured perpendicular to bedding
    colour: str | None = None  # "#rrggbb"
    age: str | None = None  # chronostratigraphic name, e.g. "Jurassic" (for chart colours)
    lithology: str | None = None
    # thickness = "map" in the project file: measured from the map when the inputs are
    # loaded (mapsection.thickness); thickness is NaN until then.
    thickness_from_map: bool = False
    label: str | None = None  # a short label for the figures, e.g. "Jo"
    kind: str = "layered"  # one of KINDS
    # True: the unit's base is an erosion surface (an unconformity); it and the layered units
    # above it, up to the next such unit, form a younger sequence.
    unconformity: bool = False
    # intrusive units: how far below the ground their vertical contacts are drawn (m)
    depth: float = INTRUSIVE_DEPTH

    @property
    def layered(self) -> bool:
        return self.kind == "layered"


@dataclass(frozen=True)
class Column:
    """Units youngest first. Unit ``i``'s top lies ``depth_to_top[i]`` below the column's top."""

    units: tuple[Unit, ...]

    def __post_init__(self) -> None:
        if not self.units:
            raise StratigraphyError("stratigraphy: the column has no units")
        names = [u.name for u in self.units]
        dup = {n for n in names if names.count(n) > 1}
        if dup:
            raise StratigraphyError(f"stratigraphy: unit(s) listed twice: {', '.join(sorted(dup))}")
        for i, u in enumerate(self.units):
            _check_kind(i, u)
            if u.thickness_from_map and np.isnan(u.thickness) or u.kind == "intrusive":
                continue  # an intrusive unit has no thickness (it is not a layer)
            if not np.isfinite(u.thickness) or u.thickness <= 0:
                raise StratigraphyError(
                    f"stratigraphy[{i}] ({u.name}): thickness must be > 0 m, got {u.thickness}"
                )

        layered = [u for u in self.units if u.layered]
        if not layered:
            raise StratigraphyError("stratigraphy: the column has no layered unit (kind = "
                                    '"layered", the default) to carry to depth')

    @property
    def names(self) -> list[str]:
        return [u.name for u in self.units]

    @property
    def thicknesses(self) -> np.ndarray:
        return np.array([u.thickness for u in self.units], float)

    @property
    def depth_to_top(self) -> np.ndarray:
        """Stratigraphic depth of each unit's top below the top of the youngest unit."""
        return np.concatenate([[0.0], np.cumsum(self.thicknesses)[:-1]])

    @property
    def total_thickness(self) -> float:
        return float(self.thicknesses.sum())

    @property
    def base_name(self) -> str:
        """The name of the horizon at the base of the column (``base of <oldest unit>``)."""
        return f"{BASE_PREFIX}{self.names[-1]}"

    def index(self, unit: str) -> int:
        try:
            return self.names.index(unit)
        except ValueError:
            raise StratigraphyError(f"stratigraphy: unit {unit!r} is not in the column") from None

    def unit(self, name: str) -> Unit:
        return self.units[self.index(name)]

    def layered(self) -> Column:
        """The layered units only, youngest first (cover and intrusive units taken out): the
        column the construction carries to depth.

        Examples
        --------
        >>> col = Column((Unit("Qal", 10.0, kind="cover"), Unit("Ks", 200.0), Unit("Js", 300.0)))
        >>> col.layered().names
        ['Ks', 'Js']
        """
        if all(u.layered for u in self.units):
            return self
        return Column(tuple(u for u in self.units if u.layered))

    def check_unconformities(self) -> None:
        """A whole column (as the project file gives it) cannot put an unconformity at the base
        of its oldest layered unit: nothing older would lie below the erosion surface.
        (A sequence taken out of a column, :meth:`sequences`, keeps its flag.)"""
        oldest = self.layered().units[-1]
        if oldest.unconformity:
            raise StratigraphyError(
                f"stratigraphy ({oldest.name}): unconformity = true on the oldest layered "
                "unit: there is nothing older in the column for it to rest on; add the units "
                "below the erosion surface or remove the flag")

    def of_kind(self, kind: str) -> tuple[Unit, ...]:
        """The units of one kind ("layered", "cover" or "intrusive"), youngest first."""
        return tuple(u for u in self.units if u.kind == kind)

    def sequences(self) -> list[Column]:
        """The layered units split into sequences at unconformities, youngest sequence first.

        A unit with ``unconformity = True`` is the oldest unit of its sequence: its base is the
        erosion surface.

        Examples
        --------
        >>> col = Column((Unit("Cg", 350.0, unconformity=True), Unit("Ls", 200.0),
        ...               Unit("Sh", 300.0)))
        >>> [c.names for c in col.sequences()]
        [['Cg'], ['Ls', 'Sh']]
        """
        seqs: list[list[Unit]] = [[]]
        for u in self.layered().units:
            seqs[-1].append(u)
            if u.unconformity:
                seqs.append([])
        return [Column(tuple(s)) for s in seqs if s]

    def check_map_units(self, map_units, source: str = "map") -> None:
        """Every unit on the map must be in the column."""
        missing = sorted({str(u) for u in map_units if u is not None} - set(self.names))
        if missing:
            raise StratigraphyError(
                f"{source}: unit(s) not in the [[stratigraphy]] column: {', '.join(missing)}"
            )


def _check_kind(i: int, u: Unit) -> None:
    """A unit's kind and flags must make sense together (one line naming the unit)."""
    where = f"stratigraphy[{i}] ({u.name})"
    if u.kind not in KINDS:
        raise StratigraphyError(f"{where}: kind must be one of {', '.join(KINDS)}, got {u.kind!r}")
    if u.unconformity and not u.layered:
        raise StratigraphyError(
            f"{where}: a {u.kind} unit cannot carry unconformity = true: only a layered unit's "
            "base is an erosion surface in the column (cover and intrusive units are placed where "
            "the map has them)")
    if u.thickness_from_map and not u.layered:
        raise StratigraphyError(
            f'{where}: thickness = "map" is measured between the contacts of layered units; '
            f"give a {u.kind} unit a number"
            + (" (or leave it out: the veneer is then "
               f"{COVER_THICKNESS:g} m)" if u.kind == "cover" else " or leave it out"))
    if not np.isfinite(u.depth) or u.depth <= 0:
        raise StratigraphyError(f"{where}: depth must be > 0 m, got {u.depth}")
