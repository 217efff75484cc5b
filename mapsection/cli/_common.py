"""Small pieces shared by the command modules (options and messages)."""

from __future__ import annotations

import click


def warn(message: str) -> None:
    """One-line warning on stderr."""
    click.echo(f"mapsection: warning: {message}", err=True)


def note(message: str) -> None:
    click.echo(f"mapsection: note: {message}", err=True)


def verdict(folder) -> str:
    """Each test PASS or FAIL, from the checks.json of a build's section folder."""
    import json
    from pathlib import Path

    from ..errors import OutputError

    path = Path(folder) / "checks.json"
    try:
        d = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError) as exc:
        raise OutputError(f"{path}: cannot read the check results ({exc})") from None
    tests = ("topography", "restoration", "area_balance", "kinematics")
    return "  ".join(f"{k} {'PASS' if (d.get(k) or {}).get('passed') else 'FAIL'}"
                     for k in tests)
