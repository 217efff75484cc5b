"""Warnings and one-line messages shared by the library's stages.

Library functions take a ``warn`` callback; without one they raise a
:class:`MapsectionWarning` through :mod:`warnings`, which Python shows once per place.
The command line passes its own callback that prints ``mapsection: warning: ...``.
"""

from __future__ import annotations

import sys
import warnings


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
