"""The command group: help with cautions, version, one-line errors, --debug tracebacks."""

from __future__ import annotations

from click.testing import CliRunner

from mapsection import __version__
from mapsection.cli.main import cli


def test_help_lists_commands_and_caution():
    res = CliRunner().invoke(cli, ["--help"])
    assert res.exit_code == 0
    assert "qualified" in res.output and "geologist" in res.output
    for name in ("profile", "dips", "axis", "build", "check", "demo"):
        assert name in res.output


def test_version():
    res = CliRunner().invoke(cli, ["--version"])
    assert res.exit_code == 0 and __version__ in res.output


def test_error_is_one_line_and_debug_shows_traceback(tmp_path):
    missing = tmp_path / "missing.toml"
    res = CliRunner().invoke(cli, ["build", str(missing), "-o", str(tmp_path / "out")])
    assert res.exit_code == 2
    lines = [ln for ln in res.stderr.splitlines() if ln.strip()]
    assert len(lines) == 1 and "missing.toml" in lines[0] and "Traceback" not in res.stderr
    assert not (tmp_path / "out").exists()
    res = CliRunner().invoke(cli, ["--debug", "build", str(missing), "-o", str(tmp_path / "out")])
    assert res.exit_code != 0 and res.exc_info is not None
