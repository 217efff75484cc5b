"""Progress on stderr (never silent for long), the verdict line of build, demo's order.

The behaviour checked is the tool's own promise (docs/build.md): on a terminal one
line redrawn in place, piped plain lines once nothing has been said for a while.
"""

from __future__ import annotations

import io
import json
import time
from pathlib import Path
from types import SimpleNamespace

import pytest
from click.testing import CliRunner

from mapsection.cli._progress import Progress
from mapsection.cli.main import cli

SAMPLE = Path(__file__).resolve().parents[1] / "sample_area" / "project.toml"


@pytest.fixture(autouse=True)
def _progress_display_on(monkeypatch):
    monkeypatch.setenv("MAPSECTION_PROGRESS", "auto")  # conftest turns it off elsewhere


class _Tty(io.StringIO):
    def isatty(self) -> bool:
        return True


def test_plain_lines_only_after_a_quiet_spell():
    stream = io.StringIO()
    with Progress(stream, quiet=0.3) as progress:
        progress("A", "construction")
        progress.echo("mapsection: warning: something")
        time.sleep(0.1)
        assert stream.getvalue() == "mapsection: warning: something\n"  # quick: no progress
        time.sleep(0.6)
    lines = stream.getvalue().splitlines()
    assert lines[0] == "mapsection: warning: something"
    assert lines[1].startswith("mapsection: progress: section A: construction")
    assert "\r" not in stream.getvalue()  # piped: plain lines only


def test_off_means_off(monkeypatch):
    monkeypatch.setenv("MAPSECTION_PROGRESS", "off")
    stream = _Tty()
    with Progress(stream, quiet=0.0) as progress:
        progress("A", "construction")
        time.sleep(0.4)
        progress.echo("mapsection: warning: still said")
    assert stream.getvalue() == "mapsection: warning: still said\n"


def test_terminal_line_is_redrawn_and_cleared():
    stream = _Tty()
    with Progress(stream) as progress:
        progress("", "reading the project file")
        progress("B", "figures")
        progress.echo("mapsection: note: hello")
    text = stream.getvalue()
    assert "\r\x1b[Kmapsection: section B: figures" in text
    assert "mapsection: note: hello\n" in text
    assert text.endswith("\r\x1b[K")  # the progress line is gone at the end


def test_build_shows_progress_and_prints_the_verdict_of_each_section(tmp_path, monkeypatch):
    import mapsection.cli._progress as progress_module

    monkeypatch.setattr(progress_module, "QUIET", 0.1)  # a line after 0.1 s without one
    result = CliRunner().invoke(cli, ["build", str(SAMPLE), "-o", str(tmp_path / "o"),
                                      "--section", "A"])
    assert result.exit_code == 0, result.output
    said = [ln for ln in result.stderr.splitlines() if ln.startswith("mapsection: progress:")]
    # stages shorter than a tick may pass unseen; the writing of the figures never is
    assert any("section A: figures" in ln or "section A: check figures" in ln for ln in said), \
        result.stderr
    assert "\r" not in result.stderr  # not a terminal: plain lines
    out = result.stdout.splitlines()
    checks = json.loads((tmp_path / "o" / "A" / "checks.json").read_text())
    want = "  ".join(f"{k} {'PASS' if checks[k]['passed'] else 'FAIL'}"
                     for k in ("topography", "restoration", "area_balance", "kinematics"))
    assert out == [f"{tmp_path / 'o' / 'A'}: {want}"]  # the line demo prints for a section


def test_demo_says_each_projects_warnings_after_its_header(tmp_path, monkeypatch):
    import mapsection.build

    def fake_build(project, outdir, warn=None, **kw):
        warn(f"from {Path(project).name}")
        folder = Path(outdir) / "A"
        folder.mkdir(parents=True, exist_ok=True)
        tests = ("topography", "restoration", "area_balance", "kinematics")
        (folder / "checks.json").write_text(json.dumps({k: {"passed": True} for k in tests}))
        if kw.get("summaries") is not None:  # demo takes the key figures from the build
            kw["summaries"][folder] = SimpleNamespace(statuses=dict.fromkeys(tests, "pass"))
        return [folder]

    monkeypatch.setattr(mapsection.build, "build_project", fake_build)
    result = CliRunner().invoke(cli, ["demo", "-o", str(tmp_path / "d")])
    assert result.exit_code == 0, result.output
    lines = result.output.splitlines()
    first = lines.index("sample area: project.toml")
    second = next(i for i, ln in enumerate(lines) if ln.startswith("flawed variant"))
    assert first < lines.index("mapsection: warning: from project.toml") < second
    assert second < lines.index("mapsection: warning: from project_flawed.toml")
