"""The stages of a build and who is told of them: progress and timings.

A build (and ``mapsection check``) goes through the stages :data:`STAGES`; each is timed
into a ``timings`` dict when one is kept, and told to a listener (the command line's
progress display, see :func:`listen`) as it starts.
"""

from __future__ import annotations

import contextlib
import time
from collections.abc import Callable, Iterator

# progress(section, stage): what a build is doing now ("" for the whole project)
Progress = Callable[[str, str], None]
STAGES = ("load", "section data", "construction", "checks", "check figures", "figures",
          "geopackages")


# Told (section, stage) as each stage starts (see listen, reporting); None: nobody listens.
_listener: Progress | None = None
_section = ""  # the section in progress


def listen(progress: Progress | None) -> None:
    """Tell ``progress`` every stage of every build from now on (None: stop telling).

    This is how the command line shows the progress of ``build``, ``check`` and ``demo``.
    """
    global _listener
    _listener = progress


@contextlib.contextmanager
def reporting(progress: Progress | None, section: str) -> Iterator[None]:
    """Within the block, stages are those of ``section``, told to ``progress`` (when given,
    else to the listener)."""
    global _listener, _section
    before = _listener, _section
    if progress is not None:
        _listener = progress
    _section = section
    try:
        yield
    finally:
        _listener, _section = before


@contextlib.contextmanager
def stage(timings: dict[str, float] | None, name: str) -> Iterator[None]:
    """Add the wall time of the block to ``timings[name]`` (when timings are kept)."""
    if _listener is not None:
        _listener(_section, name)
    t0 = time.perf_counter()
    try:
        yield
    finally:
        if timings is not None:
            timings[name] = timings.get(name, 0.0) + time.perf_counter() - t0


def listener() -> Progress | None:
    """Who is told of the stages now (see :func:`listen`, :func:`reporting`)."""
    return _listener
