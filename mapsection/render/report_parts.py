"""The small pieces the report page is made of: numbers, bearings, badges and tables.

Lengths to the metre, angles to 0.1 degree, directions as compass bearings; a
figure not measured is a dash, and no value reads ``-0``. Every text that comes
from data is escaped here.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Sequence
from html import escape
from typing import Any

from ..checks.status import BY_CONSTRUCTION, Part, label

__all__ = ["BADGES", "DASH", "badge", "compass", "figures_table", "fmt", "parts_table", "table"]

BADGES = {"pass": ("pass", "PASS"), "fail": ("fail", "FAIL"),
          "not_tested": ("nottested", "NOT TESTED")}
DASH = "–"


def fmt(value: Any, decimals: int = 0) -> str:
    """A number to ``decimals`` places; a dash when missing or not finite; never ``-0``."""
    if value is None or isinstance(value, bool):
        return DASH if value is None else ("yes" if value else "no")
    try:
        v = float(value)
    except (TypeError, ValueError):
        return str(value)
    if not math.isfinite(v):
        return DASH
    text = f"{v:.{decimals}f}"
    if text.startswith("-") and not any(c in "123456789" for c in text):
        text = text[1:]  # a negative value that rounds to zero
    return text


_POINTS = ("N", "NNE", "NE", "ENE", "E", "ESE", "SE", "SSE",
           "S", "SSW", "SW", "WSW", "W", "WNW", "NW", "NNW")


def compass(azimuth: float) -> str:
    """A bearing as three digits and its point of the compass, e.g. ``062° (ENE)``."""
    if azimuth is None or not math.isfinite(azimuth):
        return DASH
    az = float(azimuth) % 360.0
    whole = int(round(az)) % 360
    return f"{whole:03d}° ({_POINTS[int((az + 11.25) // 22.5) % 16]})"


def badge(status: str) -> str:
    """A verdict as its coloured PASS / FAIL / NOT TESTED mark."""
    cls, text = BADGES.get(status, ("nottested", status.upper()))
    return f'<span class="{cls}">{text}</span>'


def table(head: Sequence[str], rows: Iterable[Sequence[Any]], numeric: Sequence[int] = ()
          ) -> str:
    """A table of formatted cells (strings, or (html, raw) for markup already escaped).

    Parameters
    ----------
    head : the column titles.
    rows : the rows, each a sequence of cells.
    numeric : the columns aligned right in a fixed-width font.

    Returns
    -------
    str
        The HTML table, or "none" when there is no row.

    Examples
    --------
    >>> table(("Unit", "Top (m)"), [("Osk <Sandstone>", "120")], numeric=(1,))[45:]
    '<tr><td>Osk &lt;Sandstone&gt;</td><td class="num">120</td></tr></table>'
    """
    rows = list(rows)
    if not rows:
        return "<p class='meta'>none</p>"
    out = ["<table><tr>" + "".join(f"<th>{escape(h)}</th>" for h in head) + "</tr>"]
    for r in rows:
        cells = []
        for i, c in enumerate(r):
            cls = ' class="num"' if i in numeric else ""
            html = c[0] if isinstance(c, tuple) else escape(str(c))
            cells.append(f"<td{cls}>{html}</td>")
        out.append("<tr>" + "".join(cells) + "</tr>")
    return "".join(out) + "</table>"


def figures_table(rows: Iterable[tuple[str, ...]]) -> str:
    """What was measured (with its unit), its value and, where there is one, what the test
    requires of it."""
    out = ["<table><tr><th>Figure</th><th>Value</th><th>Required</th></tr>"]
    for label_, value, *need in rows:
        num = ' class="num"' if _looks_numeric(value) else ""
        out.append(f"<tr><td>{escape(label_)}</td><td{num}>{escape(value)}</td>"
                   f"<td>{escape(need[0]) if need else ''}</td></tr>")
    return "".join(out) + "</table>"


def _looks_numeric(text: str) -> bool:
    return text == DASH or text.lstrip("-").replace(".", "", 1).isdigit()


def parts_table(parts: dict[str, Part]) -> str:
    """Each part of a test with its verdict and the reasons behind it."""
    rows = []
    for name, p in parts.items():
        why = "; ".join(p.reasons)
        if p.status == "pass" and BY_CONSTRUCTION in why:
            why_html = f'<span class="construction">{escape(why)}</span>'
        else:
            why_html = escape(why) if why else DASH
        rows.append((label(name).capitalize(), (badge(p.status), ""), (why_html, "")))
    return table(("Part", "Result", "Why"), rows)

