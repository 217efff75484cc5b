"""Benchmark: shifting the section line in a loaded session
(``python -m mapsection.bench shift``).

With the sample area's map and DEM and N (default 100 000) invented attitudes
scattered over its extent (bedding of the sample model at the ground), it times

* the first run: read the map, read the attitudes CSV, open the DEM, build the
  session (attitude elevations from the DEM, spatial indexes) and run section A;
* ~50 shifts of the line (random shifts of up to 300 m and turns of up to 8
  degrees of section A): the median time to re-project the dips, and the
  median time of the whole re-run (profile, surface geology, dips);
* for comparison, the dip projection over all attitudes without the index.

Times are printed as ratios against the first run, measured in the same run.
Targets: dips <= 50 ms, whole re-run <= 150 ms.
"""

from __future__ import annotations

import argparse
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

from ._report import medians, sample_project

DIPS_TARGET_S = 0.050
RERUN_TARGET_S = 0.150


def _write_attitudes(path: Path, project, n: int, rng: np.random.Generator) -> None:
    """N attitudes over the DEM's extent, bedding of the sample model at the ground."""
    from mapsection.readers.dem import Dem
    from mapsection.sample import SAMPLE_MODEL

    with Dem.open(project.dem_path) as dem:
        left, bottom, right, top = dem.bounds
        x = rng.uniform(left, right, n)
        y = rng.uniform(bottom, top, n)
        z = dem.sample(x, y)
    z = np.where(np.isfinite(z), z, np.nanmean(z))
    strike, dip = SAMPLE_MODEL.bedding_at(x, y, z)
    strike = np.asarray(strike, float) % 360.0
    dip = np.clip(np.asarray(dip, float), 0.0, 90.0)
    data = np.column_stack([x, y, strike, dip, np.arange(1, n + 1)])
    np.savetxt(path, data, delimiter=",", fmt=["%.2f", "%.2f", "%.2f", "%.2f", "%d"],
               header="x,y,strike,dip,id", comments="")


def _shifted(base: np.ndarray, rng: np.random.Generator) -> np.ndarray:
    c = base.mean(axis=0)
    t = np.radians(rng.uniform(-8.0, 8.0))
    rot = np.array([[np.cos(t), -np.sin(t)], [np.sin(t), np.cos(t)]])
    return (base - c) @ rot.T + c + rng.uniform(-300.0, 300.0, 2)


def _parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(prog="python -m mapsection.bench shift", description=__doc__,
                                formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("--project", type=Path, default=sample_project(),
                   help="project file (default: the sample area's)")
    p.add_argument("--section", default=None, help="section name (default: the first)")
    p.add_argument("--attitudes", type=int, default=100_000, help="number of attitudes")
    p.add_argument("--shifts", type=int, default=50, help="number of line shifts")
    p.add_argument("--seed", type=int, default=11)
    return p


def _first_run(project, spec, n: int, rng: np.random.Generator, said: list[str]):
    """Read the map, ``n`` invented attitudes and the DEM, build the session and run the
    section: (session, its line, the first run's data, the first run's time in s)."""
    from mapsection.readers.attitudes import read_attitudes
    from mapsection.readers.dem import Dem
    from mapsection.readers.map import read_map
    from mapsection.session import SectionSession

    with tempfile.TemporaryDirectory() as tmp:
        csv = Path(tmp) / "attitudes.csv"
        _write_attitudes(csv, project, n, rng)

        t0 = time.perf_counter()
        map_data = read_map(project.map_path, project.units_layer, project.unit_field,
                            project.faults_layer, project.fault_fields, crs=project.crs,
                            warn=said.append)
        attitudes = read_attitudes(csv, crs=project.crs, warn=said.append)
        dem = Dem.open(project.dem_path)
        session = SectionSession(dem, map_data, attitudes, spec.corridor, spec.projection,
                                 warn=said.append)

        base = project.section_line(spec)
        first_data = session.run(base)
        first = time.perf_counter() - t0
    return session, base, first_data, first


def _time_shifts(session, lines: list, said: list[str]) -> dict[str, list[float]]:
    """Per shifted line: the dips re-projection, profile, surface geology and whole re-run
    times; for the first ten, the dips over all attitudes without the index (s)."""
    from mapsection.dips import project_attitudes
    from mapsection.geology import surface_geology
    from mapsection.topo_profile import profile

    session.shift_line(lines[0])  # warm-up: first call of each code path
    t: dict[str, list[float]] = {k: [] for k in ("dips", "whole", "scan", "n_dips", "prof",
                                                 "geo")}
    for line in lines:
        t0 = time.perf_counter()
        dips = session.project_dips(line)
        t["dips"].append(time.perf_counter() - t0)
        t["n_dips"].append(len(dips))
        t0 = time.perf_counter()
        prof = profile(session.dem, line, session.step, warn=said.append)
        t["prof"].append(time.perf_counter() - t0)
        t0 = time.perf_counter()
        surface_geology(session.map_data, line, prof, warn=said.append)
        t["geo"].append(time.perf_counter() - t0)
        t0 = time.perf_counter()
        session.shift_line(line)
        t["whole"].append(time.perf_counter() - t0)
    for line in lines[:10]:
        t0 = time.perf_counter()
        project_attitudes(session.attitudes, line, session.corridor, method=session.projection,
                          axis=session.axis, warn=said.append)
        t["scan"].append(time.perf_counter() - t0)
    return t


def _print_report(args, spec, first: float, first_data, t: dict[str, list[float]]) -> bool:
    """Print the timings against the first run and the targets; True when they are met."""
    dips_med, whole_med, scan_med, prof_med, geo_med = medians(
        t["dips"], t["whole"], t["scan"], t["prof"], t["geo"])
    print(f"project {args.project.name}, section {spec.name}, corridor {spec.corridor:g} m, "
          f"{args.attitudes} attitudes, {args.shifts} shifts")
    print(f"first run (read map + attitudes CSV + open DEM + session + run): {first:.3f} s; "
          f"{len(first_data.geology.intervals)} unit intervals, {len(first_data.dips)} dips")
    print(f"median dips re-projection after a shift: {1e3 * dips_med:.1f} ms "
          f"(ratio to first run {dips_med / first:.4f}; target <= {1e3 * DIPS_TARGET_S:.0f} ms;"
          f" median {int(np.median(t['n_dips']))} dips in the corridor)")
    print(f"median whole re-run (profile, surface geology, dips): {1e3 * whole_med:.1f} ms "
          f"(ratio to first run {whole_med / first:.4f}; target <= "
          f"{1e3 * RERUN_TARGET_S:.0f} ms; of which profile "
          f"{1e3 * prof_med:.1f} ms, surface geology "
          f"{1e3 * geo_med:.1f} ms)")
    print(f"dips over all attitudes without the index: {1e3 * scan_med:.1f} ms "
          f"(index speed-up x{scan_med / dips_med:.1f})")
    ok = dips_med <= DIPS_TARGET_S and whole_med <= RERUN_TARGET_S
    print("targets met" if ok else "TARGETS MISSED")
    return ok


def main(argv: list[str] | None = None) -> int:
    args = _parser().parse_args(argv)
    from mapsection.project import load_project

    if not args.project.exists():
        print(f"mapsection.bench shift: error: {args.project}: no project file (generate the "
              "sample area first: python sample_area/generate.py)", file=sys.stderr)
        return 2
    project = load_project(args.project)
    spec = project.section(args.section) if args.section else project.sections[0]
    rng = np.random.default_rng(args.seed)
    said: list[str] = []
    session, base, first_data, first = _first_run(project, spec, args.attitudes, rng, said)
    lines = [session._as_line(_shifted(base.vertices, rng)) for _ in range(args.shifts)]
    t = _time_shifts(session, lines, said)
    session.close()
    return 0 if _print_report(args, spec, first, first_data, t) else 1
