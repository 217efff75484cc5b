"""Unit colours and line conventions for section figures.

Colours, in order of preference:

1. the unit's own ``colour`` from the project's ``[[stratigraphy]]`` column;
2. the colour of the unit's chronostratigraphic ``age`` on the International
   Chronostratigraphic Chart (colours as published by the Commission for the
   Geological Map of the World, CGMW, with the ICS);
3. a muted palette of mapsection's own, in column order.

Line conventions follow the spirit of the FGDC Digital Cartographic Standard for
Geologic Map Symbolization (FGDC-STD-013-2006): contacts solid where certain and
dashed where approximate or projected; faults heavier than contacts and carrying
their sense (thrust teeth on the hanging-wall side, bar-and-ball on the downthrown
side in map view; half-arrows of relative motion on either side of the fault in
section view); bedding attitudes as short ticks at their dip. Line widths and dash
patterns here are mapsection's own choices, not codes copied from any standard
table.

>>> from mapsection.stratigraphy import Column, Unit
>>> col = Column((Unit("Qal", 10.0, "#f0e68c"), Unit("Kls", 200.0, age="Late Cretaceous"),
...               Unit("Xb", 500.0)))
>>> unit_colours(col)["Qal"], unit_colours(col)["Kls"]
('#f0e68c', '#a6d84a')
"""

from __future__ import annotations

import re
from collections.abc import Iterable
from dataclasses import dataclass

from ..stratigraphy import Column

# International Chronostratigraphic Chart colours (CGMW/ICS), RGB 0-255.
# The twelve Phanerozoic periods (Quaternary ... Cambrian) agree with the chart's
# values as quoted by several independent public tables (the chart itself was not at
# hand); every other entry (eons, eras, epochs) is recalled from memory of the
# published chart and has NOT been checked entry by entry. Where a project needs exact
# chart colours it should give them as `colour = "#rrggbb"` in [[stratigraphy]].
_CHART_RGB: dict[str, tuple[int, int, int]] = {
    # eons / eras
    "phanerozoic": (154, 217, 221),
    "cenozoic": (242, 249, 29),
    "mesozoic": (103, 197, 202),
    "paleozoic": (153, 192, 141),
    "precambrian": (247, 67, 112),
    "proterozoic": (247, 53, 99),
    "archean": (240, 4, 127),
    "hadean": (174, 2, 126),
    # periods
    "quaternary": (249, 249, 127),
    "neogene": (255, 230, 25),
    "paleogene": (253, 154, 82),
    "tertiary": (253, 154, 82),  # informal; shown with the Paleogene colour
    "cretaceous": (127, 198, 78),
    "jurassic": (52, 178, 201),
    "triassic": (129, 43, 146),
    "permian": (240, 64, 40),
    "carboniferous": (103, 165, 153),
    "pennsylvanian": (153, 194, 181),
    "mississippian": (103, 143, 102),
    "devonian": (203, 140, 55),
    "silurian": (179, 225, 182),
    "ordovician": (0, 146, 112),
    "cambrian": (127, 160, 86),
    "ediacaran": (254, 217, 106),
    "cryogenian": (254, 204, 92),
    "tonian": (254, 191, 78),
    # epochs / series
    "holocene": (254, 242, 224),
    "pleistocene": (255, 242, 174),
    "pliocene": (255, 255, 153),
    "miocene": (255, 255, 0),
    "oligocene": (254, 192, 122),
    "eocene": (253, 180, 108),
    "paleocene": (253, 167, 95),
    "upper cretaceous": (166, 216, 74),
    "lower cretaceous": (140, 205, 87),
    "upper jurassic": (179, 227, 238),
    "middle jurassic": (128, 207, 216),
    "lower jurassic": (66, 174, 208),
    "upper triassic": (189, 140, 195),
    "middle triassic": (177, 104, 177),
    "lower triassic": (152, 57, 153),
    "lopingian": (251, 167, 148),
    "guadalupian": (251, 116, 92),
    "cisuralian": (239, 88, 69),
    "upper devonian": (241, 225, 157),
    "middle devonian": (241, 200, 104),
    "lower devonian": (229, 172, 77),
    "pridoli": (230, 245, 225),
    "ludlow": (191, 230, 207),
    "wenlock": (179, 225, 194),
    "llandovery": (153, 215, 179),
    "upper ordovician": (127, 202, 147),
    "middle ordovician": (77, 180, 126),
    "lower ordovician": (26, 157, 111),
    "furongian": (179, 224, 149),
    "miaolingian": (166, 207, 134),
    "terreneuvian": (140, 176, 108),
}

# mapsection's own muted palette for units with neither a colour nor a known age.
PALETTE: tuple[str, ...] = (
    "#d9c7a7", "#a9c4a0", "#c9a3a3", "#9fb6cf", "#e3d38f", "#b7a6c9",
    "#8fbfb3", "#d6ab7d", "#c2c2a0", "#a3b1a8", "#cfb6c8", "#b5c98f",
)

_SYNONYMS = (
    (r"\blate\b", "upper"),
    (r"\bearly\b", "lower"),
    (r"\bmid(dle)?\b", "middle"),
    (r"palaeo", "paleo"),
    (r"archaean", "archean"),
)


def _hex(rgb: tuple[int, int, int]) -> str:
    return "#{:02x}{:02x}{:02x}".format(*rgb)


def chart_colour(age: str | None) -> str | None:
    """The CGMW/ICS chart colour of a chronostratigraphic name, or ``None``.

    Accepts "Late Jurassic" / "Upper Jurassic", "Palaeogene", and names embedded in
    longer text ("Jurassic limestone"): the longest chart name found wins.

    >>> chart_colour("Jurassic"), chart_colour("Early Cretaceous"), chart_colour("Unknown")
    ('#34b2c9', '#8ccd57', None)
    """
    if not age:
        return None
    text = age.strip().lower()
    for pat, rep in _SYNONYMS:
        text = re.sub(pat, rep, text)
    text = re.sub(r"\s+", " ", text)
    if text in _CHART_RGB:
        return _hex(_CHART_RGB[text])
    for name in sorted(_CHART_RGB, key=len, reverse=True):
        if re.search(rf"\b{name}\b", text):
            return _hex(_CHART_RGB[name])
    return None


def unit_colours(column: Column, extra_units: Iterable[str] = ()) -> dict[str, str]:
    """Colour of every unit of the column (plus ``extra_units`` not in it), as ``#rrggbb``."""
    out: dict[str, str] = {}
    k = 0
    for u in column.units:
        c = u.colour or chart_colour(u.age)
        if c is None:
            c = PALETTE[k % len(PALETTE)]
            k += 1
        out[u.name] = c.lower()
    for name in extra_units:
        if name is not None and name not in out:
            out[name] = PALETTE[k % len(PALETTE)]
            k += 1
    return out


def unit_palette(column: Column | None, names: Iterable[str]) -> dict[str, str]:
    """Colours for the checks' figures: the column's (:func:`unit_colours`, none without a
    column), or matplotlib's ``tab20`` palette where the column cannot give them."""
    names = list(names)
    try:
        return unit_colours(column, names) if column is not None else {}
    except Exception:  # colours not available: a plain palette
        import matplotlib

        cmap = matplotlib.colormaps["tab20"]
        return {n: matplotlib.colors.to_hex(cmap(i % 20)) for i, n in enumerate(names)}


@dataclass(frozen=True)
class LineStyle:
    """Width in points, colour, and dash pattern (``None`` = solid)."""

    width: float
    colour: str = "black"
    dashes: tuple[float, ...] | None = None
    wavy: bool = False  # drawn as a wave (the unconformity; see render.unconformity)

    def kwargs(self) -> dict:
        kw = {"linewidth": self.width, "color": self.colour}
        if self.dashes is not None:
            kw["dashes"] = self.dashes
        return kw


# Section-view conventions (after FGDC-STD-013-2006: certain solid, approximate
# or inferred long-dashed, projected/concealed short-dashed; faults heavier).
GROUND = LineStyle(1.4, "#3b2a1a")
CONTACT = LineStyle(0.8, "black")
CONTACT_PROJECTED = LineStyle(0.7, "#555555", (4.0, 2.5))
FAULT = LineStyle(2.0, "black")
AXIAL_SURFACE = LineStyle(0.5, "#7a7a7a", (1.0, 2.0))
DIP_TICK = LineStyle(1.3, "#1a1a8c")
SECTION_LINE = LineStyle(1.6, "#d00000")
CONTACT_INFERRED = LineStyle(0.8, "black", (6.0, 3.0))  # below the constrained depth
FAULT_INFERRED = LineStyle(2.0, "black", (6.0, 3.0))
MISFIT = LineStyle(1.2, "#d00000")
UNCONFORMITY = LineStyle(1.1, "black", None, True)  # our own symbol, explained in the legend


def colour_sources(column: Column) -> dict[str, str]:
    """Where each unit's colour comes from: ``project``, ``chart`` or ``palette``."""
    return {u.name: "project" if u.colour else "chart" if chart_colour(u.age) else "palette"
            for u in column.units}


def colour_note(column: Column) -> str | None:
    """A legend note when the column mixes colour sources (None when it uses one)."""
    src = colour_sources(column)
    kinds = set(src.values())
    if len(kinds) < 2:
        return None
    if "chart" in kinds:
        others = [n for n, k in src.items() if k != "chart"]
        return ("Colours: CGMW/ICS chart by age except " + ", ".join(others)
                + " (project or own colours)")
    return "Colours: project colours, the others mapsection's own"


def fault_kind(sense: str | None) -> str | None:
    """``"thrust"``, ``"reverse"``, ``"normal"`` or ``None`` (no sense symbol)."""
    if not sense:
        return None
    s = sense.strip().lower()
    if "thrust" in s:
        return "thrust"
    if "reverse" in s:
        return "reverse"
    if "normal" in s or "detach" in s:
        return "normal"
    return None
