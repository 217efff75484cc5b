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


# --- page layout (inches) ------------------------------------------------------------
LEGEND_FONT = 7.0  # points
LEGEND_EM = LEGEND_FONT / 72.0  # the legend font's em, inches
LEGEND_PITCH = 1.5 * LEGEND_EM  # one text line plus the label spacing of a legend
LEGEND_TITLE = 0.17  # the legend's title line
LEGEND_COLUMN_WIDTH = 2.45  # a swatch and a 38-character label
INSET_SIZE = 2.5  # the location inset is square
_MARGIN_LEFT, _MARGIN_RIGHT, _MARGIN_TOP = 0.8, 0.25, 0.8  # tick labels; end names, title
_GAP = 0.5  # between the section and the inset column
_XLABEL = 0.48  # tick labels and the axis label under the section
_ROW = 0.3  # the VE statement and the scale bar
_CAUTION = 0.32  # the caution (two lines) at the foot of the page
_PAGE_WIDTH = 11.2
_SECTION_HEIGHT = (1.0, 5.5)  # the section's box, least and most


@dataclass(frozen=True)
class PageLayout:
    """Where everything goes on the page, in inches from its lower left corner.

    ``axes`` (left, bottom, width, height) is the section's box, whose shape is the
    section's exaggerated shape; ``yspan`` its elevation range in metres (at least the
    one asked, more where a very long, flat section would be thinner than the least
    height); ``below`` the height of the VE / scale-bar row, just under the section;
    ``legend`` the top left corner of the legend, with ``legend_rows`` rows a column
    (the symbols start a column of their own when the legend is under the section);
    ``inset`` (left, bottom, size) of the location inset, beside the section.
    """

    width: float
    height: float
    axes: tuple[float, float, float, float]
    yspan: float
    below: float
    legend: tuple[float, float]
    legend_rows: int
    inset: tuple[float, float, float]


def page_layout(xspan: float, yspan: float, ve: float, legend_rows: tuple[int, int],
                with_inset: bool = True) -> PageLayout:
    """Size the page to the section: its box ``xspan`` wide and ``yspan * ve`` high at one
    scale; the inset beside it (top-aligned) and the legend (``legend_rows``: the number of
    unit rows and of symbol rows) beside it under the inset where that fits within the
    section's height, else under the section in columns, units apart from symbols."""
    side = _GAP + INSET_SIZE if with_inset else 0.0
    wa = _PAGE_WIDTH - _MARGIN_LEFT - _MARGIN_RIGHT - side
    ha = wa * yspan * ve / xspan
    lo, hi = _SECTION_HEIGHT
    if ha > hi:  # a tall section: narrower page, same scale both ways times VE
        wa, ha = wa * hi / ha, hi
    elif ha < lo:  # a long, flat one: more air above the ground keeps the scale exact
        yspan, ha = yspan * lo / ha, lo
    block = _MARGIN_TOP + ha + _XLABEL + _ROW  # the section with its labels and scale row
    n_units, n_symbols = legend_rows
    inset_top = _MARGIN_TOP + (INSET_SIZE + 0.35 if with_inset else 0.0)  # and a gap
    one_column = LEGEND_TITLE + (n_units + n_symbols) * LEGEND_PITCH
    beside = with_inset and inset_top + one_column <= block
    if beside:
        per_column, left_h, right_h = n_units + n_symbols, block, inset_top + one_column
    else:
        # The fewest rows that put the units, then the symbols, in their own columns.
        columns = max(2, int((wa + 0.5 * _MARGIN_LEFT) // LEGEND_COLUMN_WIDTH))
        per_column = max(n_units, n_symbols)
        for rows in range(1, per_column + 1):
            if -(-n_units // rows) + -(-n_symbols // rows) <= columns:
                per_column = rows
                break
        left_h = block + 0.15 + LEGEND_TITLE + per_column * LEGEND_PITCH
        right_h = inset_top
    # Beside a flat section a smaller inset keeps the page from growing below it.
    size = INSET_SIZE if beside else float(np.clip(left_h - _MARGIN_TOP, 1.6, INSET_SIZE))
    right_h -= INSET_SIZE - size
    height = max(left_h, right_h) + _CAUTION
    width = _MARGIN_LEFT + wa + side + _MARGIN_RIGHT
    ax_bottom = height - _MARGIN_TOP - ha
    right_x = _MARGIN_LEFT + wa + _GAP
    legend = ((right_x, height - inset_top) if beside
              else (_MARGIN_LEFT, height - block - 0.15))
    return PageLayout(width, height, (_MARGIN_LEFT, ax_bottom, wa, ha), yspan,
                      ax_bottom - _XLABEL - _ROW / 2, legend, per_column,
                      (right_x, height - _MARGIN_TOP - size, size))


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
