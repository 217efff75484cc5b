"""What a request of the section page carries, checked: its line, its section name.

Every malformed request raises :class:`RequestError`, whose one-line message
the page shows and whose ``status`` the server answers with.
"""

from __future__ import annotations

import re
from typing import Any

import numpy as np

from ..errors import MapsectionError

__all__ = ["MAX_VERTICES", "RequestError", "parse_line", "section_name"]

MAX_VERTICES = 200


class RequestError(MapsectionError):
    """A request the page sent is malformed (not JSON, a missing or wrong field).

    ``status`` is the HTTP status the server answers with.
    """

    def __init__(self, message: str, status: int = 400) -> None:
        super().__init__(message)
        self.status = status


def parse_line(value: Any, what: str = "line") -> np.ndarray:
    """``[[x, y], ...]`` from a request as an (n, 2) float array; RequestError if malformed.

    Parameters
    ----------
    value : the request's field, a list of [x, y] pairs in the project CRS.
    what : the field's name, as the error message says it.

    Returns
    -------
    The vertices, an (n, 2) float array (2 <= n <= MAX_VERTICES).

    Examples
    --------
    >>> parse_line([[0, 0], [300.5, 400]]).tolist()
    [[0.0, 0.0], [300.5, 400.0]]
    """
    if not isinstance(value, list):
        raise RequestError(f"{what}: must be a list of [x, y] pairs in the project CRS")
    if len(value) < 2:
        raise RequestError(f"{what}: needs at least two vertices, got {len(value)}", 422)
    if len(value) > MAX_VERTICES:
        raise RequestError(f"{what}: at most {MAX_VERTICES} vertices, got {len(value)}", 422)
    out = np.empty((len(value), 2), float)
    for i, p in enumerate(value):
        if (not isinstance(p, list | tuple) or len(p) != 2
                or not all(isinstance(c, int | float) and not isinstance(c, bool) for c in p)):
            raise RequestError(f"{what}[{i}]: must be a pair of numbers [x, y], got {p!r}"[:200])
        out[i] = p
    if not np.all(np.isfinite(out)):
        raise RequestError(f"{what}: vertices must be finite numbers", 422)
    if float(np.hypot(*np.diff(out, axis=0).T).sum()) <= 0:
        raise RequestError(f"{what}: has zero length", 422)
    return out


_NAME_OK = re.compile(r"^[^\x00-\x1f\x7f]{1,60}$")


def section_name(value: Any) -> str:
    """A section name from a request, stripped; RequestError if it is not one."""
    if not isinstance(value, str) or not value.strip():
        raise RequestError("section: must be a section name (text)")
    name = value.strip()
    if not _NAME_OK.match(name):
        raise RequestError("section: a name of 1 to 60 characters without control characters",
                           422)
    return name
