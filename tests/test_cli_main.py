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


def test_usage_error_is_one_line():
    res = CliRunner().invoke(cli, ["dips", "a.csv", "1,2;3,4", "--dem", "d.tif",
                                   "--corridor", "wide", "-o", "o.csv"])
    assert res.exit_code == 2
    lines = [ln for ln in res.output.splitlines() if ln.strip()]
    assert len(lines) == 1 and lines[0].startswith("mapsection: error: mapsection dips: ")
    assert "--corridor" in lines[0] and "'wide'" in lines[0]


def test_real_console_script_bad_input_is_one_line(tmp_path):
    import subprocess

    out = tmp_path / "p.csv"
    res = subprocess.run(["mapsection", "profile", str(tmp_path / "missing.tif"), "1,1;2,2",
                          "-o", str(out)], capture_output=True, text=True, timeout=120)
    assert res.returncode == 2
    assert res.stderr.strip().splitlines() == [
        f"mapsection: error: {tmp_path / 'missing.tif'}: no such DEM file"]
    assert not out.exists()


def _examples(help_text: str) -> list[list[str]]:
    """The example command lines of a help text (continuation lines joined)."""
    import shlex

    text = help_text.replace("\\\n", " ")
    return [shlex.split(ln.strip()) for ln in text.splitlines()
            if ln.strip().startswith("mapsection ")]


def test_each_command_help_has_a_runnable_example_and_the_caution(tmp_path, monkeypatch):
    # self-consistency: the examples in the help texts run on the sample area as written
    from pathlib import Path

    from mapsection import CAUTION

    (tmp_path / "sample_area").symlink_to(Path(__file__).resolve().parents[1] / "sample_area")
    monkeypatch.chdir(tmp_path)
    for name in ("profile", "dips", "axis"):
        res = CliRunner().invoke(cli, [name, "--help"])
        assert res.exit_code == 0
        assert " ".join(CAUTION.split()) in " ".join(res.output.split())
        examples = _examples(res.output)
        assert examples, name
        for argv in examples:
            assert argv[:2] == ["mapsection", name]
            run = CliRunner().invoke(cli, argv[1:])
            assert run.exit_code == 0, (argv, run.output)
