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
    from ..build import STAGES, build_project

    if args.sections:
        return _many_sections(args.project, args.sections, args.repeat)

    with tempfile.TemporaryDirectory(prefix="mapsection-bench-") as tmpdir:
        tmp = Path(tmpdir)
        project = _project(args.project, tmp).resolve()
        cli = [sys.executable, "-c", "from mapsection.cli.main import cli; cli()", "build",
               str(project), "-o", str(tmp / "cli")]
        base = [sys.executable, "-c", IMPORTS]
        start = [sys.executable, "-c", STARTUP]
        prev_env = None
        if args.previous:
            tree = Path(args.previous).resolve()
            if not (tree / "mapsection" / "__init__.py").is_file():
                ap.error(f"--previous {args.previous}: no mapsection/ package in that folder")
            prev_env = {**os.environ,
                        "PYTHONPATH": os.pathsep.join([str(tree),
                                                       os.environ.get("PYTHONPATH", "")])}
            prev_cli = [*cli[:-1], str(tmp / "prev")]
        _run(base, tmp)  # warm the file cache once
        walls, floors, cpus, floor_cpus, prevs, prev_cpus = [], [], [], [], [], []
        starts, prev_starts = [], []
        for _ in range(args.repeat):
            starts.append(_run(start, tmp)[0])
            if prev_env is not None:
                prev_starts.append(_run(start, tmp, prev_env)[0])
            w, c = _run(base, tmp)
            floors.append(w)
            floor_cpus.append(c)
            w, c = _run(cli, tmp)
            walls.append(w)
            cpus.append(c)
            if prev_env is not None:
                w, c = _run(prev_cli, tmp, prev_env)
                prevs.append(w)
                prev_cpus.append(c)
        runs: list[dict[str, float]] = []
        totals = []
        # One warm-up run in this process: the stage shares below are of warm runs, and
        # the command's start-up and imports are what the fresh-interpreter wall adds.
        build_project(project, tmp / "warm", warn=lambda m: None)
        parallels = []
        for i in range(args.repeat):
            timings: dict[str, float] = {}
            t0 = time.perf_counter()
            folders = build_project(project, tmp / f"lib{i}", warn=lambda m: None,
                                    timings=timings, workers=1)
            totals.append(time.perf_counter() - t0)
            runs.append(timings)
            # The same with the sections' outputs written in parallel (the default).
            t0 = time.perf_counter()
            build_project(project, tmp / f"par{i}", warn=lambda m: None)
            parallels.append(time.perf_counter() - t0)

    wall = statistics.median(walls)
    floor = statistics.median(floors)
    cpu = statistics.median(cpus)
    floor_cpu = statistics.median(floor_cpus)
    total = statistics.median(totals)
    parallel = statistics.median(parallels)
    print(f"mapsection build of {project.name} ({len(folders)} sections), "
          f"median of {args.repeat} runs")
    print(f"command wall time (fresh interpreter): {wall:.2f} s   target {TARGET_S:.1f} s   "
          f"{'within' if wall <= TARGET_S else 'OVER'} target")
    st = statistics.median(starts)
    print(f"start-up (imports before the project is read): {st:.2f} s   target "
          f"{STARTUP_TARGET_S:.1f} s   {'within' if st <= STARTUP_TARGET_S else 'OVER'} target; "
          f"the rest: {wall - st:.2f} s   target {REST_TARGET_S:.1f} s   "
          f"{'within' if wall - st <= REST_TARGET_S else 'OVER'} target; load average "
          f"{os.getloadavg()[0]:.1f} on {os.cpu_count()} cores")
    print(f"command CPU time (user + system): {cpu:.2f} s (wall above CPU means the machine "
          f"was shared)")
    print(f"baseline, fresh interpreter importing the libraries: {floor:.2f} s wall, "
          f"{floor_cpu:.2f} s CPU   build / baseline = {wall / floor:.2f} (wall), "
          f"{cpu / floor_cpu:.2f} (CPU)")
    if prevs:
        pw, pc = statistics.median(prevs), statistics.median(prev_cpus)
        print(f"previous version ({args.previous}): {pw:.2f} s wall, {pc:.2f} s CPU   "
              f"build / previous = {wall / pw:.2f} (wall), {cpu / pc:.2f} (CPU); its "
              f"start-up {statistics.median(prev_starts):.2f} s")
    print(f"in-process build_project, warm: {parallel:.2f} s with the sections' outputs written "
          f"in parallel (the default), {total:.2f} s one section after the other "
          f"(parallel / serial = {parallel / total:.2f}); interpreter start-up and imports "
          f"take about {max(wall - parallel, 0.0):.2f} s of the command's wall time")
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
    return 0


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
