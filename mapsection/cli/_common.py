"""Small pieces shared by the command modules (options and messages)."""

from __future__ import annotations

import click


def warn(message: str) -> None:
    """One-line warning on stderr."""
    click.echo(f"mapsection: warning: {message}", err=True)


def note(message: str) -> None:
    click.echo(f"mapsection: note: {message}", err=True)
