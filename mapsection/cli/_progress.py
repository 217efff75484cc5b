"""What a long command is doing, on stderr, so that it is never silent for long.

On a terminal one line is redrawn in place (``mapsection: section A: construction 3 s``)
and cleared at the end. Piped or redirected, plain lines are written instead
(``mapsection: progress: section A: construction (3 s)``), but only once nothing
has been said for :data:`QUIET` seconds: a command that is quick, or stops at once
on bad input, writes no progress line at all. The environment variable
``MAPSECTION_PROGRESS=off`` turns the display off (scripts that want stderr to hold
warnings and errors only; the test suite).
"""

from __future__ import annotations

import contextlib
import os
import sys
import threading
import time
from collections.abc import Iterator
from typing import TextIO

QUIET = 1.5  # seconds without a line before a plain progress line is written
TICK = 0.25  # seconds between redraws of the terminal line


class Progress:
    """A ``progress(section, stage)`` callback with a display thread; use as a context."""

    def __init__(self, stream: TextIO | None = None, tty: bool | None = None,
                 quiet: float | None = None) -> None:
        self.stream = stream if stream is not None else sys.stderr
        if tty is None:
            isatty = getattr(self.stream, "isatty", None)
            tty = bool(isatty and isatty())
        self.tty = tty
        self.quiet = QUIET if quiet is None else quiet
        self.enabled = os.environ.get("MAPSECTION_PROGRESS", "auto").strip().lower() not in (
            "off", "0", "no", "false")
        self._lock = threading.RLock()
        self._label = ""
        self._since = time.monotonic()  # start of the current stage
        self._said = time.monotonic()  # last line written
        self._shown = 0  # width of the terminal line now shown
        self._text = ""  # and its text
        self._stop = threading.Event()
        self._thread: threading.Thread | None = None

    # --- the callback --------------------------------------------------------------------
    def __call__(self, section: str, stage: str) -> None:
        if not self.enabled:
            return
        label = f"section {section}: {stage}" if section and stage else section or stage
        with self._lock:
            if label != self._label:
                self._label, self._since = label, time.monotonic()
            if self.tty:
                self._draw()

    # --- messages while the display runs ------------------------------------------------------
    def echo(self, line: str) -> None:
        """Write a message line (a warning, a note) without mixing it into the progress line."""
        with self._lock:
            self._clear()
            self._write(line + "\n")
            self._said = time.monotonic()
            if self.tty:
                self._draw()

    # --- display -------------------------------------------------------------------------------
    def _write(self, text: str) -> None:
        try:
            self.stream.write(text)
            self.stream.flush()
        except (OSError, ValueError):  # a closed stream: progress is not worth a failure
            pass

    def _clear(self) -> None:
        if self._shown:
            self._write("\r\x1b[K")
            self._shown = 0

    def _draw(self) -> None:
        if not self._label:
            self._clear()
            return
        secs = int(time.monotonic() - self._since)
        text = f"mapsection: {self._label}" + (f" {secs} s" if secs else "")
        if self._shown and text == self._text:
            return  # unchanged: nothing to redraw
        self._write("\r\x1b[K" + text)
        self._shown, self._text = len(text), text

    def _tick(self) -> None:
        with self._lock:
            now = time.monotonic()
            if self.tty:
                self._draw()
            elif self._label and now - self._said >= self.quiet:
                secs = now - self._since
                self._write(f"mapsection: progress: {self._label}"
                            + (f" ({secs:.0f} s)" if secs >= 1 else "") + "\n")
                self._said = now

    def _run(self) -> None:
        while not self._stop.wait(TICK):
            self._tick()

    def start(self) -> None:
        if self._thread is None and self.enabled:
            self._stop.clear()
            self._thread = threading.Thread(target=self._run, name="mapsection-progress",
                                            daemon=True)
            self._thread.start()

    def stop(self) -> None:
        thread, self._thread = self._thread, None
        if thread is not None:
            self._stop.set()
            thread.join()
        with self._lock:
            self._clear()

    @contextlib.contextmanager
    def paused(self) -> Iterator[None]:
        """No display thread within the block (e.g. while worker processes are forked)."""
        running = self._thread is not None
        self.stop()
        try:
            yield
        finally:
            if running:
                self.start()

    def __enter__(self) -> Progress:
        self._said = time.monotonic()
        # Whatever else is written (results, warnings) first clears the progress line.
        self._streams = (sys.stdout, sys.stderr)
        if self.enabled:
            sys.stdout, sys.stderr = _Clearing(sys.stdout, self), _Clearing(sys.stderr, self)
        self.start()
        return self

    def __exit__(self, *exc) -> None:
        self.stop()
        if isinstance(sys.stdout, _Clearing) and sys.stdout._progress is self:
            sys.stdout = self._streams[0]
        if isinstance(sys.stderr, _Clearing) and sys.stderr._progress is self:
            sys.stderr = self._streams[1]


class _Clearing:
    """A text stream that clears the progress line before each write to it."""

    def __init__(self, stream: TextIO, progress: Progress) -> None:
        self._stream = stream
        self._progress = progress

    def write(self, text: str) -> int:
        progress = self._progress
        with progress._lock:
            progress._clear()
            n = self._stream.write(text)
            if text.endswith("\n"):
                progress._said = time.monotonic()
        return n

    def __getattr__(self, name: str):
        return getattr(self._stream, name)


_RUNNING: list[Progress] = []  # the display of the command running now, if any


def start_progress(ctx=None) -> Progress:
    """Show the progress of the running command until it ends (``ctx`` closes; default:
    the current click context). Started already: the running display.

    The stages of :mod:`mapsection.build` (also when ``check`` builds a section) are
    reported without being passed the display.
    """
    import click

    if _RUNNING:
        return _RUNNING[0]
    progress = Progress().__enter__()
    _RUNNING.append(progress)
    progress("", "starting")
    from .. import build  # after the display has started: importing takes a while

    build.listen(progress)

    def end() -> None:
        build.listen(None)
        progress.__exit__(None, None, None)
        _RUNNING.clear()

    (ctx or click.get_current_context()).call_on_close(end)
    return progress
