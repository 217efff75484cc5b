"""Paper sheets and map scales: the page a section figure is printed on.

The sheet sizes are those of ISO 216 (A series, millimetres) and ANSI/ASME Y14.1
(letter 8.5 x 11 in, tabloid 11 x 17 in). The scale is a representative fraction
1:N; the default is the largest of the standard scales (1:5,000, 1:10,000,
1:25,000, 1:50,000, 1:100,000, 1:250,000, ... -- common practice for geological
maps and sections) at which the section fits the sheet.

>>> sheet_size_mm("a4"), sheet_size_mm("A4", portrait=True)
((297.0, 210.0), (210.0, 297.0))
>>> parse_scale("1:25000"), parse_scale("25,000"), parse_scale(50000)
(25000.0, 25000.0, 50000.0)
>>> choose_scale(9200.0, 250.0, 200.0, 150.0)
50000.0
"""

from __future__ import annotations

import datetime as _dt
import os
from dataclasses import dataclass, field

from ..errors import ParameterError

MM_PER_INCH = 25.4

# Portrait (width, height) in millimetres: ISO 216 and ANSI/ASME Y14.1.
SHEETS_MM: dict[str, tuple[float, float]] = {
    "A4": (210.0, 297.0),
    "A3": (297.0, 420.0),
    "A2": (420.0, 594.0),
    "A1": (594.0, 841.0),
    "A0": (841.0, 1189.0),
    "letter": (8.5 * MM_PER_INCH, 11.0 * MM_PER_INCH),
    "tabloid": (11.0 * MM_PER_INCH, 17.0 * MM_PER_INCH),
}
DEFAULT_SHEET = "A3"  # the tool's default: landscape A3 holds a 10-15 km section at 1:50,000

# The standard scales, largest first; past the list: 1, 2.5, 5 x 10^k.
_STANDARD = (5_000.0, 10_000.0, 25_000.0, 50_000.0, 100_000.0)


def standard_scales(limit: float = 1e9) -> list[float]:
    """Standard scale denominators up to ``limit``: 5,000, 10,000, 25,000, 50,000,
    100,000, 250,000, 500,000, 1,000,000, ..."""
    out = list(_STANDARD)
    k = 5
    while out[-1] < limit:
        out += [2.5 * 10**k, 5 * 10**k, 10 ** (k + 1)]
        k += 1
    return out


def sheet_name(name: str) -> str:
    """The sheet's canonical name (``a4`` -> ``A4``, ``LETTER`` -> ``letter``)."""
    key = str(name).strip()
    for known in SHEETS_MM:
        if key.lower() == known.lower():
            return known
    raise ParameterError(f"sheet {name!r}: must be one of {', '.join(SHEETS_MM)}")


def sheet_size_mm(name: str, portrait: bool = False) -> tuple[float, float]:
    """(width, height) of a sheet in millimetres, landscape unless ``portrait``."""
    w, h = SHEETS_MM[sheet_name(name)]
    return (w, h) if portrait else (h, w)


def parse_scale(value: str | float | int) -> float:
    """A scale denominator from ``25000``, ``"25000"``, ``"25,000"`` or ``"1:25000"``."""
    text = str(value).strip().replace(",", "").replace("_", "").replace(" ", "")
    if text.startswith("1:"):
        text = text[2:]
    try:
        n = float(text)
    except ValueError:
        raise ParameterError(f"scale {value!r}: must be a number such as 25000 or 1:25000") \
            from None
    if not (n >= 1 and n < 1e10):
        raise ParameterError(f"scale {value!r}: the denominator must be >= 1")
    return n


def scale_text(n: float) -> str:
    """``1:25,000``."""
    return f"1:{n:,.0f}"


def choose_scale(length_m: float, height_m: float, room_w_mm: float, room_h_mm: float) -> float:
    """The largest standard scale at which a section ``length_m`` long and ``height_m``
    high (already exaggerated) fits a box of ``room_w_mm`` x ``room_h_mm``."""
    need = max(length_m / max(room_w_mm, 1e-9), height_m / max(room_h_mm, 1e-9)) * 1000.0
    for n in standard_scales(need * 10):
        if n >= need:
            return n
    return need  # pragma: no cover - the list always reaches past ``need``


@dataclass(frozen=True)
class SheetOptions:
    """How a section figure is printed: the sheet, its orientation, the scale (``None``:
    the largest standard scale that fits) and the elevation below which horizons and
    faults are drawn dashed as unconstrained (``None``: worked out from the draft)."""

    sheet: str = DEFAULT_SHEET
    portrait: bool = False
    scale: float | None = None
    constrained_elevation: float | None = None

    def __post_init__(self) -> None:
        object.__setattr__(self, "sheet", sheet_name(self.sheet))
        if self.scale is not None:
            object.__setattr__(self, "scale", parse_scale(self.scale))


def _today() -> str:
    """Today's date (UTC), or that of SOURCE_DATE_EPOCH for reproducible builds."""
    epoch = os.environ.get("SOURCE_DATE_EPOCH")
    if epoch and epoch.strip().isdigit():
        return _dt.datetime.fromtimestamp(int(epoch), _dt.UTC).date().isoformat()
    return _dt.datetime.now(_dt.UTC).date().isoformat()


@dataclass(frozen=True)
class TitleInfo:
    """What the title block says beyond the draft itself: the project's title, the
    sources of the inputs as ``(what, text)`` rows, the DEM's vertical datum and the date."""

    project_title: str = ""
    sources: tuple[tuple[str, str], ...] = ()
    vertical_datum: str = "DEM datum"
    date: str = field(default_factory=_today)


def vertical_datum(crs) -> str:
    """The name of a CRS's vertical datum where it has one (a compound CRS), else
    ``"DEM datum"``."""
    for sub in getattr(crs, "sub_crs_list", None) or []:
        if getattr(sub, "is_vertical", False):
            datum = getattr(sub, "datum", None)
            return datum.name if datum is not None else sub.name
    if crs is not None and getattr(crs, "is_vertical", False):
        return crs.name
    return "DEM datum"
