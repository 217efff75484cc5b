"""Benchmark: ``mapsection build`` of the whole sample area, with the share of each stage.

    python -m mapsection.bench build [--repeat N] [--project PROJECT.toml]

Measures, in the same run:

- the wall time of the command ``mapsection build PROJECT -o TMP`` in a fresh
  interpreter (what a user waits for, start-up and imports included), median of N,
  and its CPU time (on a shared machine wall time also holds waiting for a core);
- a baseline: a fresh interpreter importing the libraries the build stands on
  (numpy, shapely, pyproj, rasterio, geopandas, pyogrio, scipy.optimize,
  matplotlib.figure), and the ratio of the build to it;
- optionally (``--previous TREE``) the same command run from another source tree of
  mapsection (a folder holding an earlier ``mapsection/`` package, put first on
  PYTHONPATH), interleaved with the others, and the ratio of the build to it;
- the in-process build (``build_project`` with stage timings) after one warm-up
  run, median of N, and the share of each stage: load (project, map, attitudes,
  DEM), section data (profile, surface geology, dips), construction, checks (with
  their figures and report), figures, GeoPackages.

- the command's start-up: a fresh interpreter importing what ``mapsection build`` imports
  before it reads the project file (the command group and ``mapsection.build``), median
  of N; the rest of the command's wall time is the build itself.

Targets: the whole sample area within 3 s wall (issue 4); start-up under 0.5 s and the
rest under 1.5 s (issue 15).

    python -m mapsection.bench build --sections 10 [--repeat N]

Measures instead, in the same run, the in-process build of a copy of the project with
``N`` sections (the project's own lines, repeated with numbered names) built with every
core (the default: each section constructed and written in its own process) against one
section after the other (``workers=1``); median of the runs, interleaved. Target (issue
15): 10 sections in parallel within 0.65 x of one at a time, on 2 cores.
"""

from __future__ import annotations

import argparse
import os
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

TARGET_S = 3.0
STARTUP_TARGET_S = 0.5  # issue 15: start-up ...
REST_TARGET_S = 1.5  # ... and the rest of the command's wall time
STARTUP = ("from mapsection.cli.main import cli; from mapsection.build import build_project; "
           "from mapsection.checking import result_line")
IMPORTS = ("import numpy, shapely, pyproj, rasterio, geopandas, pyogrio, scipy.optimize, "
           "matplotlib.figure")


def _project(arg: str | None, tmp: Path) -> Path:
    if arg:
        return Path(arg)
    from ..sample import generate, sample_project

    found = sample_project()
    if found is not None:
        return found

    return generate(tmp / "sample_area")["project.toml"]


def _run(cmd: list[str], cwd: Path, env: dict[str, str] | None = None) -> tuple[float, float]:
    """Wall time and CPU time (user + system) of a child process.

    Run in a neutral folder: ``python -c`` puts the working folder first on sys.path,
    which would shadow the tree given with ``--previous``.
    """
    r0 = resource.getrusage(resource.RUSAGE_CHILDREN)
    t0 = time.perf_counter()
    subprocess.run(cmd, check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
                   cwd=cwd, env=env)
    wall = time.perf_counter() - t0
    r1 = resource.getrusage(resource.RUSAGE_CHILDREN)
    return wall, (r1.ru_utime - r0.ru_utime) + (r1.ru_stime - r0.ru_stime)


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(prog="python -m mapsection.bench build", description=__doc__,
                                 formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--repeat", type=int, default=3, help="runs of each measurement [3]")
    ap.add_argument("--project", help="project file [the sample area]")
    ap.add_argument("--previous", metavar="TREE",
                    help="also time the command from this source tree (the folder holding "
                         "an earlier mapsection/ package)")
    ap.add_argument("--sections", type=int, metavar="N",
                    help="time a copy of the project with N sections, in parallel against "
                         "one at a time")
    args = ap.parse_args(argv)
    if args.sections:
        return _many_sections(args.project, args.sections, args.repeat)
    prev_env = None
    if args.previous:
        tree = Path(args.previous).resolve()
        if not (tree / "mapsection" / "__init__.py").is_file():
            ap.error(f"--previous {args.previous}: no mapsection/ package in that folder")
        prev_env = {**os.environ,
                    "PYTHONPATH": os.pathsep.join([str(tree),
                                                   os.environ.get("PYTHONPATH", "")])}
    with tempfile.TemporaryDirectory(prefix="mapsection-bench-") as tmpdir:
        tmp = Path(tmpdir)
        project = _project(args.project, tmp).resolve()
        t = _time_commands(project, tmp, args.repeat, prev_env)
        lib = _time_library(project, tmp, args.repeat)
    _print_commands(project, t, lib, args.repeat, args.previous)
    _print_stages(lib)
    return 0


def _time_commands(project: Path, tmp: Path, repeat: int, prev_env: dict | None
                   ) -> dict[str, list[float]]:
    """Wall and CPU times of the command in fresh interpreters (and of the previous tree's),
    of its start-up, and of a fresh interpreter importing the libraries (the baseline)."""
    cli = [sys.executable, "-c", "from mapsection.cli.main import cli; cli()", "build",
           str(project), "-o", str(tmp / "cli")]
    base = [sys.executable, "-c", IMPORTS]
    start = [sys.executable, "-c", STARTUP]
    prev_cli = [*cli[:-1], str(tmp / "prev")]
    _run(base, tmp)  # warm the file cache once
    t: dict[str, list[float]] = {k: [] for k in ("wall", "cpu", "floor", "floor_cpu", "prev",
                                                 "prev_cpu", "start", "prev_start")}
    for _ in range(repeat):
        t["start"].append(_run(start, tmp)[0])
        if prev_env is not None:
            t["prev_start"].append(_run(start, tmp, prev_env)[0])
        for wall, cpu, cmd, env in (("floor", "floor_cpu", base, None),
                                    ("wall", "cpu", cli, None),
                                    ("prev", "prev_cpu", prev_cli, prev_env)):
            if wall == "prev" and prev_env is None:
                continue
            w, c = _run(cmd, tmp, env)
            t[wall].append(w)
            t[cpu].append(c)
    return t


def _time_library(project: Path, tmp: Path, repeat: int) -> dict:
    """Warm in-process builds: each stage's time one section after the other, and the whole
    build with the sections in parallel (the default)."""
    from ..build import build_project

    runs: list[dict[str, float]] = []
    totals, parallels = [], []
    # One warm-up run in this process: the stage shares below are of warm runs, and
    # the command's start-up and imports are what the fresh-interpreter wall adds.
    build_project(project, tmp / "warm", warn=lambda m: None)
    for i in range(repeat):
        timings: dict[str, float] = {}
        t0 = time.perf_counter()
        folders = build_project(project, tmp / f"lib{i}", warn=lambda m: None,
                                timings=timings, workers=1)
        totals.append(time.perf_counter() - t0)
        runs.append(timings)
        t0 = time.perf_counter()
        build_project(project, tmp / f"par{i}", warn=lambda m: None)
        parallels.append(time.perf_counter() - t0)
    return {"runs": runs, "totals": totals, "parallels": parallels, "n": len(folders)}


def _within(value: float, target: float) -> str:
    return "within" if value <= target else "OVER"


def _print_commands(project: Path, t: dict[str, list[float]], lib: dict, repeat: int,
                    previous: str | None) -> None:
    med = {k: statistics.median(v) for k, v in t.items() if v}
    wall, cpu, floor, floor_cpu, st = (med[k] for k in ("wall", "cpu", "floor", "floor_cpu",
                                                         "start"))
    total = statistics.median(lib["totals"])
    parallel = statistics.median(lib["parallels"])
    print(f"mapsection build of {project.name} ({lib['n']} sections), median of {repeat} runs")
    print(f"command wall time (fresh interpreter): {wall:.2f} s   target {TARGET_S:.1f} s   "
          f"{_within(wall, TARGET_S)} target")
    print(f"start-up (imports before the project is read): {st:.2f} s   target "
          f"{STARTUP_TARGET_S:.1f} s   {_within(st, STARTUP_TARGET_S)} target; "
          f"the rest: {wall - st:.2f} s   target {REST_TARGET_S:.1f} s   "
          f"{_within(wall - st, REST_TARGET_S)} target; load average "
          f"{os.getloadavg()[0]:.1f} on {os.cpu_count()} cores")
    print(f"command CPU time (user + system): {cpu:.2f} s (wall above CPU means the machine "
          f"was shared)")
    print(f"baseline, fresh interpreter importing the libraries: {floor:.2f} s wall, "
          f"{floor_cpu:.2f} s CPU   build / baseline = {wall / floor:.2f} (wall), "
          f"{cpu / floor_cpu:.2f} (CPU)")
    if "prev" in med:
        pw, pc = med["prev"], med["prev_cpu"]
        print(f"previous version ({previous}): {pw:.2f} s wall, {pc:.2f} s CPU   "
              f"build / previous = {wall / pw:.2f} (wall), {cpu / pc:.2f} (CPU); its "
              f"start-up {med['prev_start']:.2f} s")
    print(f"in-process build_project, warm: {parallel:.2f} s with the sections' outputs written "
          f"in parallel (the default), {total:.2f} s one section after the other "
          f"(parallel / serial = {parallel / total:.2f}); interpreter start-up and imports "
          f"take about {max(wall - parallel, 0.0):.2f} s of the command's wall time")


def _print_stages(lib: dict) -> None:
    from ..stages import STAGES

    runs, totals = lib["runs"], lib["totals"]
    total = statistics.median(totals)
    print()
    print("Stages of the serial in-process build (both sections):")
    print()
    print("| stage | seconds | share |")
    print("|---|---:|---:|")
    for stage in STAGES:
        secs = statistics.median(r.get(stage, 0.0) for r in runs)
        print(f"| {stage} | {secs:.3f} | {100 * secs / total:.0f} % |")
    other = statistics.median(t - sum(r.get(s, 0.0) for s in STAGES)
                              for t, r in zip(totals, runs, strict=True))
    print(f"| other (logs, folder swap) | {other:.3f} | {100 * other / total:.0f} % |")


def _many_sections(project_arg: str | None, n: int, repeat: int) -> int:
    import shutil
    import tomllib

    from ..build import build_project

    with tempfile.TemporaryDirectory(prefix="mapsection-bench-") as tmpdir:
        tmp = Path(tmpdir)
        source = _project(project_arg, tmp).resolve()
        area = tmp / "area"
        shutil.copytree(source.parent, area)
        text = source.read_text(encoding="utf-8")
        sections = tomllib.loads(text)["section"]
        head = text[:text.index("[[section]]")]
        body = []
        for i in range(n):
            spec = sections[i % len(sections)]
            body.append("[[section]]")
            for key, value in spec.items():
                if key == "name":
                    value = f"{value}{i + 1}"
                body.append(f"{key} = {_toml(value)}")
            body.append("")
        project = area / "many.toml"
        project.write_text(head + "\n".join(body), encoding="utf-8")
        build_project(project, tmp / "warm", warn=lambda m: None)  # warm-up
        serial, parallel = [], []
        for i in range(repeat):
            t0 = time.perf_counter()
            build_project(project, tmp / f"one{i}", warn=lambda m: None, workers=1)
            serial.append(time.perf_counter() - t0)
            t0 = time.perf_counter()
            folders = build_project(project, tmp / f"all{i}", warn=lambda m: None)
            parallel.append(time.perf_counter() - t0)
    s, p = statistics.median(serial), statistics.median(parallel)
    print(f"{len(folders)} sections of {source.name}, {os.cpu_count()} cores, median of "
          f"{repeat} in-process builds (warm)")
    print(f"one after another (workers=1): {s:.2f} s   in parallel (default): {p:.2f} s   "
          f"parallel / one at a time = {p / s:.2f}   target 0.65   "
          f"{'met' if p / s <= 0.65 else 'NOT met'}")
    return 0


def _toml(value) -> str:
    if isinstance(value, str):
        return '"' + value.replace("\\", "\\\\").replace('"', '\\"') + '"'
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, list):
        return "[" + ", ".join(_toml(v) for v in value) + "]"
    return repr(value)


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
