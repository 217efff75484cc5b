"""Reading a section line: from a vector file (one LineString) or ``"x1,y1;x2,y2"`` text."""

from __future__ import annotations

import os
import re
from pathlib import Path

import numpy as np
import pyproj
import shapely
from shapely.geometry import LineString, MultiLineString

from .._messages import first_line
from ..errors import LineError
from ..line import SectionLine

_NUMBER = r"[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?"
_TEXT_LINE = re.compile(
    rf"^\s*{_NUMBER}\s*,\s*{_NUMBER}\s*(;\s*{_NUMBER}\s*,\s*{_NUMBER}\s*)+;?\s*$"
)


def parse_line_text(text: str, crs: pyproj.CRS | None = None, name: str = "") -> SectionLine:
    """Parse ``"x1,y1;x2,y2[;...]"`` into a line."""
    if not _TEXT_LINE.match(text):
        raise LineError(f"section line text {text!r}: expected 'x1,y1;x2,y2[;...]'")
    pts = [tuple(float(c) for c in p.split(",")) for p in text.strip().strip(";").split(";")]
    try:
        return SectionLine(np.asarray(pts), crs, name)
    except LineError as exc:  # name the text the user gave
        why = str(exc).split(": ", 1)[-1]
        raise LineError(f"section line text {text!r}: {why}") from None


def read_line(
    spec: str | os.PathLike, crs: str | pyproj.CRS | None = None, name: str = ""
) -> SectionLine:
    """Read a section line from a vector file (one LineString) or ``"x1,y1;x2,y2"`` text.

    ``crs`` is the CRS of text coordinates; for a file it overrides a missing CRS.
    """
    crs_obj = pyproj.CRS(crs) if crs is not None else None
    text = os.fspath(spec)
    if not Path(text).exists():
        if ";" in text or "," in text:
            return parse_line_text(text, crs_obj, name)
        raise LineError(f"{text}: no such line file")
    import pyogrio

    try:
        df = pyogrio.read_dataframe(text)
    except Exception as exc:  # pyogrio raises several kinds for unreadable files
        raise LineError(f"{text}: not a readable vector file ({first_line(exc)})") from None
    geoms = [g for g in df.geometry if g is not None and not g.is_empty]
    lines = []
    for g in geoms:
        if isinstance(g, LineString):
            lines.append(g)
        elif isinstance(g, MultiLineString) and len(g.geoms) == 1:
            lines.append(g.geoms[0])
        else:
            raise LineError(f"{text}: holds a {g.geom_type}; expected one LineString")
    if len(lines) != 1:
        raise LineError(f"{text}: holds {len(lines)} lines; expected exactly one LineString")
    file_crs = df.crs if df.crs is not None else crs_obj
    coords = shapely.get_coordinates(lines[0])
    return SectionLine(
        coords, pyproj.CRS(file_crs) if file_crs is not None else None, name or Path(text).stem
    )


__all__ = ["parse_line_text", "read_line"]
