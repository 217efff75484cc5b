"""The stratigraphic column: units youngest first, with thicknesses in metres."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .errors import StratigraphyError

BASE_WORD = "base"
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
            if u.thickness_from_map and np.isnan(u.thickness):
                continue
            if not np.isfinite(u.thickness) or u.thickness <= 0:
                raise StratigraphyError(
                    f"stratigraphy[{i}] ({u.name}): thickness must be > 0 m, got {u.thickness}"
                )

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

    def check_map_units(self, map_units, source: str = "map") -> None:
        """Every unit on the map must be in the column."""
        missing = sorted({str(u) for u in map_units if u is not None} - set(self.names))
        if missing:
            raise StratigraphyError(
                f"{source}: unit(s) not in the [[stratigraphy]] column: {', '.join(missing)}"
            )
