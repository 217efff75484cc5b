"""Small pieces shared by the command modules (options and messages)."""

from __future__ import annotations

import click

from ._progress import active


def _say(line: str) -> None:
    progress = active()
    if progress is not None:
        progress.echo(line)  # not mixed into the progress line
    else:
        click.echo(line, err=True)


def warn(message: str) -> None:
    """One-line warning on stderr."""
    _say(f"mapsection: warning: {message}")


def note(message: str) -> None:
    _say(f"mapsection: note: {message}")


def echo(line: str) -> None:
    """A result line on stdout (the progress line, if shown, cleared first)."""
    progress = active()
    if progress is not None:
        progress.stdout(line)
    else:
        click.echo(line)
