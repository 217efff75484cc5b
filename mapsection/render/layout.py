"""The section page's geometry: its size and boxes in inches, the scale bar's length, the
dip ticks' end points and the words naming the vertical exaggeration and the section's ends.

Pure functions (numpy only): :mod:`mapsection.render.section` draws with them.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np


# --- small helpers ------------------------------------------------------------
def ve_text(ve: float) -> str:
    """How the figure states its vertical exaggeration."""
    return "Vertical exaggeration 1:1" if math.isclose(ve, 1.0) else f"V.E. {ve:g}×"


def end_names(name: str) -> tuple[str, str]:
    """Names of the section's two ends: ``A`` and ``A′``."""
    name = name or "A"
    return name, f"{name}′"


def nice_length(span: float) -> float:
    """A round scale-bar length (1, 2 or 5 times a power of ten) near a fifth of ``span``."""
    target = max(span / 5.0, 1e-9)
    p = 10.0 ** math.floor(math.log10(target))
    for m in (5.0, 2.0, 1.0):
        if m * p <= target:
            return m * p
    return p


# --- compass words ----------------------------------------------------------------
_POINTS16 = ("N", "NNE", "NE", "ENE", "E", "ESE", "SE", "SSE",
             "S", "SSW", "SW", "WSW", "W", "WNW", "NW", "NNW")


def compass_point(bearing: float) -> str:
    """The 16-point compass direction of a bearing in degrees (N, NNE, NE, ...).

    >>> compass_point(125.0), compass_point(305.0), compass_point(359.0)
    ('SE', 'NW', 'N')
    """
    return _POINTS16[int(((bearing % 360.0) + 11.25) // 22.5) % 16]


def end_bearings(first_azimuth: float, last_azimuth: float) -> tuple[float, float]:
    """The directions the section's two ends face: the start looks back along the first
    segment, the end ahead along the last."""
    return (first_azimuth + 180.0) % 360.0, last_azimuth % 360.0


# --- the sheet's layout (inches) ----------------------------------------------------
Box = tuple[float, float, float, float]  # left, bottom, width, height
LEGEND_FONT = 6.5  # points
LEGEND_EM = LEGEND_FONT / 72.0  # the legend font's em, inches
LEGEND_PITCH = 1.45 * LEGEND_EM  # one text line plus the label spacing of a legend
LEGEND_TITLE = 0.17  # the legend's title line
TITLE_FONT = 6.0  # the title block's font, points
TITLE_PITCH = 1.4 * TITLE_FONT / 72.0
MM = 1.0 / 25.4  # inches per millimetre
MARGIN = 10 * MM  # around everything (the neatline sits at 6 mm)
HEADER = 11 * MM  # the figure's title line and its FAIL mark
ENDS = 11 * MM  # end names and compass directions above the section
AXIS_LEFT, AXIS_RIGHT = 14 * MM, 14 * MM  # elevation labels on both sides
BELOW = 19 * MM  # distance labels, the scale bar and the VE statement under the section
GAP = 6 * MM


@dataclass(frozen=True)
class SheetLayout:
    """Where everything goes on the sheet, in inches from its lower left corner.

    ``axes`` (left, bottom, width, height) is the section's box: exactly ``xspan / scale``
    wide and ``yspan * ve / scale`` high, so that the printed sheet measures true;
    ``room`` the box the section may use (left, bottom, width, height); ``below`` the
    baseline of the scale-bar row; ``inset``, ``legend`` and ``title_block`` are
    (left, bottom, width, height) boxes of the location map, the legend and the title
    block (beside the section on a landscape sheet, under it on a portrait one).
    """

    width: float
    height: float
    scale: float
    axes: tuple[float, float, float, float]
    room: tuple[float, float, float, float]
    below: float
    inset: tuple[float, float, float, float]
    legend: tuple[float, float, float, float]
    title_block: tuple[float, float, float, float]
    legend_rows: int


def legend_height(rows: int) -> float:
    return LEGEND_TITLE + rows * LEGEND_PITCH


def sheet_layout(width: float, height: float, xspan: float, yspan: float, ve: float,
                 legend_rows: int, title_rows: int, scale: float | None = None,
                 portrait: bool = False) -> SheetLayout:
    """Lay the sheet out (sizes in inches; ``xspan``, ``yspan`` in metres).

    Parameters
    ----------
    width, height : float
        The sheet, inches.
    xspan, yspan : float
        The section's length and elevation range, metres.
    ve : float
        Vertical exaggeration.
    legend_rows, title_rows : int
        Rows of the legend and of the title block.
    scale : float, optional
        The scale denominator; default: the largest standard scale that fits.
    portrait : bool
        Location map, legend and title block under the section instead of beside it.

    Returns
    -------
    SheetLayout

    Raises
    ------
    ParameterError
        When the section does not fit the sheet at the scale asked.

    Examples
    --------
    >>> lay = sheet_layout(16.54, 11.69, 6000.0, 1500.0, 1.0, legend_rows=8, title_rows=6)
    >>> lay.scale, round(lay.axes[2] * 25.4, 1)   # the section's box: 6 km at 1:25 000, in mm
    (25000.0, 240.0)
    """
    top = height - MARGIN - HEADER
    tb_h = (title_rows + 1) * TITLE_PITCH
    side, room = _side_and_room(width, height, top, tb_h, portrait)
    scale = _fitting_scale(xspan, yspan * ve, room, scale)
    aw = xspan / scale * 1000 * MM
    ah = yspan * ve / scale * 1000 * MM
    axes = (room[0], top - ENDS - ah, aw, ah)
    below = axes[1] - 13 * MM
    inset, legend, tb = _boxes(side, room, below, tb_h, legend_height(legend_rows), portrait)
    return SheetLayout(width, height, float(scale), axes, room, below, inset, legend, tb,
                       legend_rows)


def _side_and_room(width: float, height: float, top: float, tb_h: float, portrait: bool
                   ) -> tuple[Box, Box]:
    """The box of the location map, legend and title block (beside the section, or under
    it on a portrait sheet) and the room left for the section."""
    if portrait:
        strip = max(tb_h, 0.25 * height)
        side = (MARGIN, MARGIN, width - 2 * MARGIN, strip)
        room = (MARGIN + AXIS_LEFT, MARGIN + strip + GAP + BELOW,
                width - 2 * MARGIN - AXIS_LEFT - AXIS_RIGHT, 0.0)
    else:
        sw = float(np.clip(0.27 * width, 70 * MM, 125 * MM))
        side = (width - MARGIN - sw, MARGIN, sw, top - MARGIN)
        room = (MARGIN + AXIS_LEFT, MARGIN + BELOW,
                width - 2 * MARGIN - sw - GAP - AXIS_LEFT - AXIS_RIGHT, 0.0)
    return side, (room[0], room[1], room[2], top - ENDS - room[1])


def _fitting_scale(xspan: float, yspan_ve: float, room: Box, scale: float | None) -> float:
    """The scale asked for, or the largest standard one that fits; ParameterError when the
    section does not fit the room at the scale asked."""
    from ..errors import ParameterError
    from .sheet import choose_scale, scale_text

    fit = choose_scale(xspan, yspan_ve, room[2] / MM, room[3] / MM)
    if scale is None:
        return fit
    if scale < fit * (1 - 1e-9) and (xspan / scale * 1000 * MM > room[2] * 1.0001
                                     or yspan_ve / scale * 1000 * MM > room[3] * 1.0001):
        raise ParameterError(
            f"scale {scale_text(scale)}: the section ({xspan / 1000:.2f} km long) does not fit "
            f"the sheet at that scale; the largest standard scale that fits is "
            f"{scale_text(fit)} (or choose a larger sheet)")
    return scale


def _boxes(side: Box, room: Box, below: float, tb_h: float, lg_h: float, portrait: bool
           ) -> tuple[Box, Box, Box]:
    """The location map's, the legend's and the title block's boxes: the legend under the
    section where there is room for it, else beside (or, portrait, under) it."""
    sl, sb, sw_, sh = side
    floor = sb + sh + GAP if portrait else MARGIN  # the lowest the legend may reach under
    under = below - 8 * MM - floor  # the room left under the section's scale row
    legend_under = under >= lg_h
    if legend_under:
        legend = (MARGIN, floor, room[0] + room[2] + AXIS_RIGHT - MARGIN, under)
    if portrait:
        # Under the section: location map, (legend,) title block side by side.
        tb_w = min(110 * MM, 0.45 * sw_)
        tb = (sl + sw_ - tb_w, sb, tb_w, tb_h)
        inset_s = min(sh, 0.4 * sw_)
        inset = (sl, sb + sh - inset_s, inset_s, inset_s)
        if not legend_under:
            legend = (sl + inset_s + GAP, sb, sw_ - inset_s - tb_w - 2 * GAP, sh)
        else:
            inset = (sl, sb, sw_ - tb_w - GAP, sh)
    else:
        tb = (sl, sb, sw_, tb_h)
        if legend_under:  # the map takes the column
            inset_h = sh - tb_h - GAP
            inset = (sl, sb + sh - inset_h, sw_, inset_h)
        else:
            free = sh - tb_h - lg_h - 2 * GAP
            inset_s = float(min(sw_, max(free, 40 * MM)))
            inset = (sl, sb + sh - inset_s, sw_, inset_s)
            legend = (sl, sb + tb_h + GAP, sw_, sh - inset_s - tb_h - 2 * GAP)
    return inset, legend, tb


def tick_segment(d, z, apparent_dip, ve: float, half_length: float):
    """End points (data coordinates) of dip ticks centred on (d, z).

    The tick's direction in data space has slope ``-tan(a)`` (positive apparent dip
    descends toward increasing distance); drawn on axes whose aspect is ``ve`` it
    appears at ``atan(ve * tan a)``. ``half_length`` is in distance units on the page,
    so every tick looks the same length whatever its dip.
    """
    a = np.radians(np.asarray(apparent_dip, float))
    theta = np.arctan(ve * np.tan(a))  # angle on the page
    dx = half_length * np.cos(theta)
    dy = half_length * np.sin(theta) / ve
    d = np.asarray(d, float)
    z = np.asarray(z, float)
    return np.stack([d - dx, z + dy], -1), np.stack([d + dx, z - dy], -1)
