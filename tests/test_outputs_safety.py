"""Outputs never destroy an input; write failures, kills and concurrent builds leave whole results.

Each refused output is run as a user would (the command line) against a copy of
the invented sample area, and asserts: exit code 2, exactly one line on stderr
naming both paths, no traceback, every input byte-identical afterwards (sha256),
and no new file or folder (visible or hidden) anywhere in the project folder.
The rule itself is the tool's own promise (docs/errors.md, docs/index.md).
"""

from __future__ import annotations

import errno
import hashlib
import os
import shutil
from pathlib import Path

import pytest
from click.testing import CliRunner

from mapsection.cli.main import cli

SAMPLE = Path(__file__).resolve().parents[1] / "sample_area"
LINE_A = "604658,5218819;612195,5213542"
INPUTS = ("project.toml", "dem.tif", "geology.gpkg", "attitudes.csv")


@pytest.fixture
def proj(tmp_path, monkeypatch):
    """A copy of the sample area's inputs in tmp_path/p, the current folder."""
    p = tmp_path / "p"
    p.mkdir()
    for name in INPUTS:
        shutil.copy2(SAMPLE / name, p / name)
    monkeypatch.chdir(p)
    return p


def _tree(folder: Path) -> dict[str, str]:
    """Every file and folder under ``folder`` (hidden ones too), files with their sha256."""
    out = {}
    for root, dirs, files in os.walk(folder):
        for d in dirs:
            out[os.path.relpath(os.path.join(root, d), folder)] = "folder"
        for f in files:
            p = os.path.join(root, f)
            with open(p, "rb") as fh:
                out[os.path.relpath(p, folder)] = hashlib.sha256(fh.read()).hexdigest()
    return out


def _refused(args: list[str], folder: Path, *names: str) -> str:
    """Run the command; assert the refusal contract; return the error line."""
    before = _tree(folder)
    result = CliRunner().invoke(cli, args)
    assert result.exit_code == 2, result.output
    lines = result.stderr.splitlines()
    assert len(lines) == 1 and lines[0].startswith("mapsection: error: "), result.stderr
    assert "Traceback" not in result.output
    for name in names:
        assert name in lines[0], (name, lines[0])
    assert _tree(folder) == before  # inputs byte-identical, nothing new, nothing hidden
    return lines[0]


# --- 1. outputs that are, or would replace, or hold an input --------------------------------
def _project_with(proj: Path, old: str, new: str, name: str = "p2.toml") -> str:
    text = (proj / "project.toml").read_text(encoding="utf-8")
    assert old in text
    (proj / name).write_text(text.replace(old, new), encoding="utf-8")
    return name


OUTPUT_CASES = {
    # case: (command line, names the message must carry)
    "profile -o DEM": (["profile", "dem.tif", LINE_A, "-o", "dem.tif"], ["-o dem.tif", "DEM"]),
    "profile -o DEM by another spelling": (
        ["profile", "dem.tif", LINE_A, "-o", "../p/./dem.tif"], ["../p/./dem.tif", "dem.tif"]),
    "profile -o the data folder": (["profile", "dem.tif", LINE_A, "-o", "."],
                                   ["-o .", "is a folder"]),
    "check --json the data folder": (["check", "project.toml", "--section", "A", "--json", "."],
                                     ["--json .", "is a folder"]),
    "profile -o empty": (["profile", "dem.tif", LINE_A, "-o", ""], ["-o", "empty"]),
    "dips -o attitudes": (["dips", "attitudes.csv", LINE_A, "--dem", "dem.tif", "--corridor",
                           "500", "-o", "attitudes.csv"], ["-o attitudes.csv", "attitudes file"]),
    "dips -o DEM": (["dips", "attitudes.csv", LINE_A, "--dem", "dem.tif", "--corridor", "500",
                     "-o", "dem.tif"], ["-o dem.tif", "DEM"]),
    "check --json project file": (["check", "project.toml", "--section", "A", "--json",
                                   "project.toml"], ["--json project.toml", "project file"]),
    "check --json DEM": (["check", "project.toml", "--section", "A", "--json", "dem.tif"],
                         ["--json dem.tif", "DEM"]),
    "check --html map": (["check", "project.toml", "--section", "A", "--html", "geology.gpkg"],
                         ["--html geology.gpkg", "map"]),
    "check --json and --html the same file": (
        ["check", "project.toml", "--section", "A", "--json", "r.out", "--html", "r.out"],
        ["--json r.out", "--html r.out"]),
    "check --json empty": (["check", "project.toml", "--section", "A", "--json", ""],
                           ["--json", "empty"]),
    "build -o empty": (["build", "project.toml", "-o", ""], ["-o", "empty"]),
    "demo -o empty": (["demo", "-o", ""], ["-o", "empty"]),
}


@pytest.mark.parametrize("case", list(OUTPUT_CASES))
def test_output_that_is_an_input_is_refused(proj, case):
    args, names = OUTPUT_CASES[case]
    _refused(args, proj.parent, *names)


def test_output_through_a_link_or_second_name_is_refused(proj):
    # identity, not strings: a symbolic link to the DEM and a hard link to the attitudes
    (proj / "link.tif").symlink_to(proj / "dem.tif")
    os.link(proj / "attitudes.csv", proj / "same.csv")
    _refused(["profile", "dem.tif", LINE_A, "-o", "link.tif"], proj.parent, "link.tif", "DEM")
    _refused(["dips", "attitudes.csv", LINE_A, "--dem", "dem.tif", "--corridor", "500",
              "-o", "same.csv"], proj.parent, "same.csv", "attitudes.csv")


def test_line_file_and_check_from_file_are_inputs(proj):
    line = proj / "line.geojson"
    line.write_text('{"type": "FeatureCollection", "features": [{"type": "Feature", '
                    '"properties": {}, "geometry": {"type": "LineString", "coordinates": '
                    '[[604658, 5218819], [612195, 5213542]]}}]}', encoding="utf-8")
    _refused(["profile", "dem.tif", "line.geojson", "-o", "line.geojson"], proj.parent,
             "-o line.geojson", "line file")
    (proj / "edited.gpkg").write_bytes(b"not read: refused before")
    _refused(["check", "project.toml", "--section", "A", "--from", "edited.gpkg", "--json",
              "edited.gpkg"], proj.parent, "--json edited.gpkg", "--from file")


def test_build_section_named_like_an_input_is_refused(proj):
    # `build -o .` in the input folder with a section called like the map
    name = _project_with(proj, 'name = "A"', 'name = "geology.gpkg"')
    line = _refused(["build", name, "-o", "."], proj.parent, "section geology.gpkg", "map")
    assert "geology.gpkg" in line


def test_build_folder_that_holds_an_input_is_refused(proj):
    (proj / "out" / "A").mkdir(parents=True)
    shutil.move(proj / "dem.tif", proj / "out" / "A" / "dem.tif")
    name = _project_with(proj, 'path = "dem.tif"', 'path = "out/A/dem.tif"')
    _refused(["build", name, "-o", "out"], proj.parent, "out/A", "DEM")


def test_build_never_replaces_what_it_did_not_build(proj):
    out = proj / "out"
    out.mkdir()
    (out / "A").write_text("a user's file", encoding="utf-8")
    _refused(["build", "project.toml", "-o", "out"], proj.parent, "out/A", "is a file")
    (out / "A").unlink()
    (out / "A").mkdir()
    (out / "A" / "notes.txt").write_text("a user's notes", encoding="utf-8")
    _refused(["build", "project.toml", "-o", "out"], proj.parent, "out/A", "not a mapsection")
    # a build.log that a build did not write is not a marker either
    (out / "A" / "build.log").write_text("my own log\n", encoding="utf-8")
    _refused(["build", "project.toml", "-o", "out"], proj.parent, "out/A", "not a mapsection")


@pytest.mark.parametrize("names, words", [
    (("X/Y", "B"), ["'X/Y'", "path separator"]),
    (("A:B", "A_B"), ["'A:B'", "'A_B'", "folder 'A_B'"]),
    (("a", "A"), ["'a'", "'A'"]),
    (("N" * 200, "B"), ["200 bytes", "150"]),
    (("..", "B"), ["'..'", "cannot name a folder"]),
])
def test_section_names_that_cannot_each_have_a_folder(proj, names, words):
    text = (proj / "project.toml").read_text(encoding="utf-8")
    text = text.replace('name = "A"', f'name = "{names[0]}"').replace('name = "B"',
                                                                       f'name = "{names[1]}"')
    (proj / "p2.toml").write_text(text, encoding="utf-8")
    line = _refused(["build", "p2.toml", "-o", "out"], proj.parent, "p2.toml", *words)
    assert "section" in line


def test_a_previous_build_is_replaced(proj):
    from mapsection.build import build_project
    from mapsection.outputs import is_build_folder

    out = proj / "out"
    (out / "A").mkdir(parents=True)  # an empty folder may be filled
    build_project("project.toml", out, section="A", warn=lambda m: None, workers=1)
    assert is_build_folder(out / "A")
    (out / "A" / "stray.txt").write_text("x", encoding="utf-8")
    build_project("project.toml", out, section="A", warn=lambda m: None, workers=1)
    assert not (out / "A" / "stray.txt").exists()
    assert sorted(os.listdir(out)) == ["A"]


# --- 2. files that cannot be written: one line, exit 2, nothing left ------------------------
def _enospc(*args, **kwargs):
    raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))


def test_full_disk_while_writing_a_profile(proj, monkeypatch):
    import pandas as pd

    real = pd.DataFrame.to_csv

    def half_then_full(self, path, *args, **kwargs):
        real(self.head(3), path, *args, **kwargs)  # a part is written, then the disk is full
        _enospc()

    monkeypatch.setattr(pd.DataFrame, "to_csv", half_then_full)
    _refused(["profile", "dem.tif", LINE_A, "-o", "prof.csv"], proj.parent, "prof.csv",
             "No space left on device")


def test_full_disk_while_writing_a_build(proj, monkeypatch):
    import mapsection.export

    def full(draft, path, *args, **kwargs):
        Path(path).write_bytes(b"half a file")
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC), str(path))

    monkeypatch.setattr(mapsection.export, "write_section_3d", full)
    _refused(["build", "project.toml", "-o", "out", "--section", "A"], proj.parent,
             "out/A", "No space left on device")


@pytest.mark.parametrize("code", [errno.EROFS, errno.EACCES])
def test_read_only_or_not_writable_output_folder(proj, monkeypatch, code):
    import tempfile

    def refuse(*args, **kwargs):
        raise OSError(code, os.strerror(code), kwargs.get("dir"))

    monkeypatch.setattr(tempfile, "mkstemp", refuse)
    monkeypatch.setattr(tempfile, "mkdtemp", refuse)
    _refused(["profile", "dem.tif", LINE_A, "-o", "prof.csv"], proj.parent, "prof.csv",
             os.strerror(code))
    (proj / "out").mkdir()
    _refused(["build", "project.toml", "-o", "out", "--section", "A"], proj.parent, "out/A",
             os.strerror(code))


@pytest.mark.skipif(os.name != "posix" or os.geteuid() == 0,
                    reason="a folder's permissions do not stop the superuser")
def test_not_writable_folder_for_real(proj):
    ro = proj / "ro"
    ro.mkdir()
    ro.chmod(0o555)
    try:
        _refused(["profile", "dem.tif", LINE_A, "-o", "ro/prof.csv"], proj.parent,
                 "ro/prof.csv", "Permission denied")
    finally:
        ro.chmod(0o755)


@pytest.fixture
def small_disk(tmp_path):
    """A 256 KiB tmpfs at tmp_path/disk, where the test may mount one."""
    import subprocess

    disk = tmp_path / "disk"
    disk.mkdir()
    if os.name != "posix" or os.geteuid() != 0 or not shutil.which("mount"):
        pytest.skip("mounting a small tmpfs needs root; the simulated ENOSPC tests cover it")
    done = subprocess.run(["mount", "-t", "tmpfs", "-o", "size=256k", "tmpfs", str(disk)],
                          capture_output=True)
    if done.returncode != 0:
        pytest.skip(f"cannot mount a tmpfs here: {done.stderr.decode().strip()}")
    try:
        yield disk
    finally:
        subprocess.run(["umount", str(disk)], check=False)


def test_full_disk_for_real(proj, small_disk):
    before = _tree(proj)
    result = CliRunner().invoke(cli, ["profile", "dem.tif", LINE_A, "--step", "0.5", "-o",
                                      str(small_disk / "prof.csv")])
    assert result.exit_code == 2, result.output
    assert result.stderr.startswith("mapsection: error: ") and len(
        result.stderr.splitlines()) == 1
    assert "prof.csv" in result.stderr and "No space left on device" in result.stderr
    result = CliRunner().invoke(cli, ["build", "project.toml", "-o", str(small_disk / "out"),
                                      "--section", "A"])
    assert result.exit_code == 2, result.output
    errors = [ln for ln in result.stderr.splitlines() if ln.startswith("mapsection: error:")]
    assert len(errors) == 1 and "out/A" in errors[0], result.stderr
    assert "No space left on device" in errors[0]
    assert "Traceback" not in result.output
    assert os.listdir(small_disk) == []  # nothing left, not even the new OUTDIR
    assert _tree(proj) == before


# --- 2b. a corrupt DEM: one line naming it ---------------------------------------------------
@pytest.mark.parametrize("damage", ["truncated", "overwritten"])
def test_corrupt_dem_is_named(proj, damage):
    data = bytearray((proj / "dem.tif").read_bytes())
    if damage == "truncated":
        data = data[: len(data) // 2]
    else:
        data[len(data) // 3: len(data) // 3 + 20000] = b"\xab" * 20000
    (proj / "dem.tif").write_bytes(bytes(data))
    for args in (["profile", "dem.tif", LINE_A, "-o", "prof.csv"],
                 ["dips", "attitudes.csv", LINE_A, "--dem", "dem.tif", "--corridor", "5000",
                  "-o", "dips.csv"],
                 ["build", "project.toml", "-o", "out"]):
        line = _refused(args, proj.parent, "dem.tif", "truncated or corrupt")
        assert "internal error" not in line
