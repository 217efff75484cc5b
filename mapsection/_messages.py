"""Warnings and one-line messages shared by the library's stages.

Library functions take a ``warn`` callback; without one they raise a
:class:`MapsectionWarning` through :mod:`warnings`, which Python shows once per place.
The command line passes its own callback that prints ``mapsection: warning: ...``.
"""

from __future__ import annotations

import math
import sys
import warnings
from collections.abc import Callable

# A warning callback: takes one message (the command line prints it, the library warns).
Warn = Callable[[str], None]


class MapsectionWarning(UserWarning):
    """Something the geologist should know that does not stop the work."""


def default_warn(message: str) -> None:
    warnings.warn(message, MapsectionWarning, stacklevel=3)


def default_note(message: str) -> None:
    """A note (not a warning) for a library caller who gave no callback: one line on stderr."""
    print(f"mapsection: note: {message}", file=sys.stderr)


def first_line(exc: BaseException) -> str:
    """The first line of an exception's message (its type name when it has none)."""
    text = str(exc).strip()
    return text.splitlines()[0] if text else type(exc).__name__


def human(value: object, decimals: int | None = None) -> str:
    """A number written for people: no exponent, ``decimals`` places when given (metres:
    1), else at most 6 significant decimals with trailing zeros dropped.

    >>> human(1e9), human(8476.736195115833, 1), human(1e-6), human(2.0)
    ('1000000000', '8476.7', '0.000001', '2')
    """
    if isinstance(value, bool) or not isinstance(value, int | float):
        return str(value)
    v = float(value)
    if not math.isfinite(v):
        return str(v)
    if decimals is not None:
        text = f"{v:.{decimals}f}"
        return "0" if float(text) == 0 and decimals == 0 else text
    if v == int(v) and abs(v) < 1e16:
        return str(int(v))
    text = f"{v:.6f}".rstrip("0").rstrip(".")
    if text in ("0", "-0"):  # smaller than the decimals shown: keep 3 significant digits
        text = f"{v:.3g}" if abs(v) >= 1e-15 else "0"
        if "e" in text:
            mant, exp = text.split("e")
            places = -int(exp) + max(len(mant.replace("-", "").replace(".", "")) - 1, 0)
            text = f"{v:.{places}f}"
    return text
