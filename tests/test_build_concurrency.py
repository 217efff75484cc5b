"""Builds that are killed, run together or swap folders at once leave whole results.

Real processes: a build is killed with SIGKILL while it writes, two builds are run
into one output folder at the same time, several processes swap one folder many
times. What is checked is the tool's own promise (docs/build.md): every folder
left is a whole build, and no temporary folder (hidden ``.X.mstmp-*``) outlives
the process that made it.
"""

from __future__ import annotations

import json
import multiprocessing
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

import mapsection
from mapsection._atomic import atomic_dir, folder_lock, owner_tag, process_start, remove_stale

SAMPLE = Path(__file__).resolve().parents[1] / "sample_area" / "project.toml"
ROOT = Path(mapsection.__file__).resolve().parents[1]
FILES = {"section.gpkg", "section_3d.gpkg", "section.png", "build.log", "checks.json"}
posix_only = pytest.mark.skipif(os.name != "posix", reason="needs POSIX signals and locks")


def _build_process(out: Path, *extra: str) -> subprocess.Popen:
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    return subprocess.Popen(
        [sys.executable, "-c", "from mapsection.cli.main import cli; cli()", "build",
         str(SAMPLE), "-o", str(out), "--section", "A", *extra],
        env=env, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)


def _whole(folder: Path) -> None:
    assert FILES <= {p.name for p in folder.iterdir()}
    assert not [p.name for p in folder.iterdir() if p.name.startswith(".")]
    for test in ("topography", "restoration", "area_balance", "kinematics"):
        assert isinstance(json.loads((folder / "checks.json").read_text())[test]["passed"], bool)


@posix_only
def test_killed_build_leaves_a_temporary_the_next_build_removes(tmp_path):
    from mapsection.build import build_project

    out = tmp_path / "out"
    proc = _build_process(out)
    try:
        deadline = time.monotonic() + 120
        while time.monotonic() < deadline and proc.poll() is None:
            temps = [p for p in out.glob(".A.mstmp-*")] if out.is_dir() else []
            if temps and any(temps[0].iterdir()):  # writing has started
                break
            time.sleep(0.01)
        assert proc.poll() is None, "the build ended before it could be killed"
        os.kill(proc.pid, signal.SIGKILL)
    finally:
        proc.wait()
    assert proc.returncode == -signal.SIGKILL
    left = sorted(p.name for p in out.iterdir())
    assert len(left) == 1 and left[0].startswith(".A.mstmp-")  # half-written, hidden
    said: list[str] = []
    build_project(SAMPLE, out, section="A", warn=lambda m: None, note=said.append, workers=1)
    assert sorted(p.name for p in out.iterdir()) == ["A"]
    assert any(left[0] in m and "stopped" in m for m in said), said
    _whole(out / "A")


def test_a_live_owners_temporary_is_kept(tmp_path):
    live = tmp_path / f".A.{owner_tag()}abc"  # this test's own process owns it
    live.mkdir()
    done = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"],
                          capture_output=True, text=True, check=True)
    dead_pid = int(done.stdout)  # that process has exited
    host = owner_tag().split("-")[1]
    dead = tmp_path / f".A.mstmp-{host}-{dead_pid}-0-xyz"
    dead.mkdir()
    (dead / "section.gpkg").write_bytes(b"half")
    other_host = tmp_path / f".A.mstmp-{'0' * 6 if host != '0' * 6 else '1' * 6}-{dead_pid}-0-x"
    other_host.mkdir()  # made on another machine sharing the folder: not ours to judge
    user = tmp_path / ".A.mine"
    user.mkdir()  # a hidden folder of the user's: not a temporary of ours
    removed = remove_stale(tmp_path)
    assert removed == [dead]
    assert live.is_dir() and other_host.is_dir() and user.is_dir() and not dead.exists()
    start = process_start(os.getpid())
    if start:  # the same pid, another start time: a new process reusing an old pid
        reused = tmp_path / f".A.mstmp-{host}-{os.getpid()}-{start + 1}-r"
        reused.mkdir()
        assert remove_stale(tmp_path) == [reused]


@posix_only
def test_two_builds_into_one_folder_both_finish_whole(tmp_path):
    out = tmp_path / "out"
    out.mkdir()
    firsts = []
    with folder_lock(out):  # held here: both builds must wait for it, then take turns
        procs = [_build_process(out) for _ in range(2)]
        for p in procs:
            line = p.stderr.readline()  # blocks until the build says something
            while line.startswith("mapsection: progress:"):
                line = p.stderr.readline()
            firsts.append(line)
        assert [p.poll() for p in procs] == [None, None]  # waiting, not failed
        assert list(out.iterdir()) == []  # nothing written while the lock is held
    results = [p.communicate(timeout=300) for p in procs]
    assert [p.returncode for p in procs] == [0, 0], (firsts, results)
    for first, (stdout, stderr) in zip(firsts, results, strict=True):
        assert "waiting for it" in first  # said at once, on stderr
        assert "Traceback" not in stderr
        assert "topography" in stdout and "A:" in stdout  # the verdict line
    assert sorted(p.name for p in out.iterdir()) == ["A"]
    _whole(out / "A")


def _swapper(args: tuple[str, int, int]) -> int:
    """Swap a folder ``n`` times; each version holds two files with one token."""
    target, who, n = args
    failures = 0
    for i in range(n):
        token = f"{who}-{i}"
        try:
            with atomic_dir(target) as tmp:
                (tmp / "a.txt").write_text(token)
                (tmp / "b.txt").write_text(token)
        except Exception:
            failures += 1
    return failures


@posix_only
def test_folder_swap_stress(tmp_path):
    # 6 processes x 60 swaps of one folder (a few seconds): none fails, nothing left over.
    target = tmp_path / "C"
    ctx = multiprocessing.get_context("fork" if "fork" in multiprocessing.get_all_start_methods()
                                      else "spawn")
    with ctx.Pool(6) as pool:
        failures = pool.map(_swapper, [(str(target), k, 60) for k in range(6)])
    assert failures == [0] * 6
    assert sorted(os.listdir(tmp_path)) == ["C"]  # no hidden .C.old.* or .C.mstmp-*
    assert sorted(os.listdir(target)) == ["a.txt", "b.txt"]
    assert (target / "a.txt").read_text() == (target / "b.txt").read_text()  # one version


def test_lock_is_reentrant_and_leaves_no_file(tmp_path):
    with folder_lock(tmp_path):
        with folder_lock(tmp_path):  # the same process: no deadlock
            pass
        with atomic_dir(tmp_path / "X") as tmp:  # a swap under the build's own lock
            (tmp / "f").write_text("x")
    assert sorted(os.listdir(tmp_path)) == ["X"]


def test_a_killed_writers_temporary_file_goes_with_the_next_write(tmp_path):
    from mapsection._atomic import atomic_file

    done = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"],
                          capture_output=True, text=True, check=True)
    host = owner_tag().split("-")[1]
    dead = tmp_path / f".prof.csv.mstmp-{host}-{int(done.stdout)}-0-abc.csv"
    dead.write_text("half a profile")
    live = tmp_path / f".prof.csv.{owner_tag()}def.csv"
    live.write_text("being written by this process")
    other = tmp_path / f".dips.csv.mstmp-{host}-{int(done.stdout)}-0-abc.csv"
    other.write_text("another output's: left for its own next write")
    with atomic_file(tmp_path / "prof.csv") as tmp:
        tmp.write_text("distance_m\n")
    assert sorted(os.listdir(tmp_path)) == sorted([live.name, other.name, "prof.csv"])


def test_killed_in_the_middle_of_a_swap_puts_the_previous_folder_back(tmp_path):
    # killed after the old folder was moved aside and before the new one was moved in
    done = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"],
                          capture_output=True, text=True, check=True)
    host = owner_tag().split("-")[1]
    aside = tmp_path / f".A.old.mstmp-{host}-{int(done.stdout)}-0-q"
    (aside / "prev").mkdir(parents=True)
    (aside / "prev" / "build.log").write_text("mapsection 0.1.0 build of section A\n")
    new = tmp_path / f".A.mstmp-{host}-{int(done.stdout)}-0-r"
    new.mkdir()
    remove_stale(tmp_path)
    assert sorted(os.listdir(tmp_path)) == ["A"]
    assert (tmp_path / "A" / "build.log").read_text().startswith("mapsection 0.1.0 build")
