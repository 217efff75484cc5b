"""Benchmark: one section of a large world, built on the whole world and on the world cut
around its line.

    python -m mapsection.bench world [--size 16000] [--polygons 100000]
        [--attitudes 1000000] [--length 20000] [--sections 1] [--growth]

Generates, in a temporary folder, an invented world in the project's own format:

- a ``size`` x ``size`` DEM at 10 m (a tiled, deflate-compressed GeoTIFF written block
  row by block row, so that memory stays small whatever its size), gentle hills;
- a geologic map of about ``polygons`` unit polygons in a GeoPackage (with its spatial
  index): the outcrop of upright cylindrical folds trending north, the fold belt cut
  into tiles as a compiled map is cut into sheets;
- ``attitudes`` bedding readings in a CSV (``id,x,y,strike,dip``) spread over the
  whole world, their dips those of the folds;

and a project file with one east-west section ``length`` metres long (kink-band method)
in the middle. The same section is then built (``mapsection build`` in a fresh
interpreter, one subprocess per build) on the whole world and on a copy whose map and
attitudes are cut to 3 km around the line (the same DEM), and the wall time and peak
memory (maximum resident set) of each build are printed with their ratios whole / cut.

Targets (issue 15): whole / cut at most 1.5x in wall time and in peak memory.

``--growth`` also prints growth tables (line length, attitudes, polygons, DEM size): the
whole-world build for each value, one input grown at a time from a base world, with the
fitted growth exponent (the slope of log time against log size). More attitudes or
polygons in the same world are denser, near the line too; a larger DEM is a larger world
with the same density of polygons and attitudes (so more of both, far from the line).
``--sections N`` puts N parallel sections in the project (built one after the other or in
parallel, as the build does; the cut world is cut around all of them).
"""

from __future__ import annotations

import argparse
import math
import os
import subprocess
import sys
import tempfile
import time
from dataclasses import dataclass
from pathlib import Path

import numpy as np

PIXEL = 10.0  # DEM pixel size, m
X0, Y0 = 500_000.0, 5_100_000.0  # the world's south-west corner (EPSG:32611)
CRS = "EPSG:32611"
UNITS = ("Corve Shale", "Pellin Sandstone", "Ashby Marl", "Tarran Limestone",
         "Wendle Dolomite", "Orrin Quartzite")
THICKNESS = 200.0  # each unit, m
WAVELENGTH = 6000.0  # of the folds, m
AMPLITUDE = 600.0  # of the folds, m
GROUND = 500.0  # mean ground elevation, m
CUT_M = 3000.0  # the cut world: map and attitudes within this distance of the lines
TARGET = 1.5


@dataclass(frozen=True)
class World:
    """A generated world: its project file and what it holds."""

    project: Path
    size: int
    polygons: int
    attitudes: int
    lines: tuple[tuple[tuple[float, float], tuple[float, float]], ...]


def _ground(x: np.ndarray, y: np.ndarray) -> np.ndarray:
    """Gentle hills (m): a few tens of metres of relief over kilometres."""
    return (GROUND + 40.0 * np.sin(x / 7000.0) * np.cos(y / 9000.0)
            + 15.0 * np.sin(x / 1300.0 + y / 1700.0))


def _depth(x: np.ndarray) -> np.ndarray:
    """Depth (m) of the ground plane below the top of the youngest unit, across the folds."""
    return 300.0 + AMPLITUDE * np.sin(2 * np.pi * x / WAVELENGTH)


def write_dem(path: Path, size: int, block: int = 256) -> None:
    """A ``size`` x ``size`` tiled, compressed GeoTIFF, written one row of blocks at a time."""
    import rasterio
    from rasterio.transform import from_origin

    width = size * PIXEL
    profile = {"driver": "GTiff", "width": size, "height": size, "count": 1,
               "dtype": "float32", "crs": CRS,
               "transform": from_origin(X0, Y0 + width, PIXEL, PIXEL),
               "tiled": True, "blockxsize": block, "blockysize": block,
               "compress": "deflate", "zlevel": 1, "predictor": 3, "BIGTIFF": "IF_SAFER"}
    xs = X0 + (np.arange(size) + 0.5) * PIXEL
    with rasterio.open(path, "w", **profile) as dst:
        for r0 in range(0, size, block):
            rows = min(block, size - r0)
            ys = Y0 + width - (r0 + np.arange(rows) + 0.5) * PIXEL
            z = _ground(xs[None, :], ys[:, None]).astype("float32")
            dst.write(z, 1, window=rasterio.windows.Window(0, r0, size, rows))


def _stripes(width: float) -> tuple[np.ndarray, np.ndarray]:
    """The x of the unit boundaries across the world and the unit of each stripe between."""
    xs = np.arange(0.0, width + 1.0, 1.0)
    unit = np.clip(np.floor(_depth(xs) / THICKNESS), 0, len(UNITS) - 1).astype(int)
    change = np.flatnonzero(np.diff(unit)) + 1
    edges = np.concatenate([[0.0], xs[change], [width]])
    return edges, np.concatenate([[unit[0]], unit[change]])


def write_map(path: Path, size: int, polygons: int) -> int:
    """The unit polygons: the fold belt's stripes cut into tiles; returns their number."""
    import geopandas as gpd
    import shapely

    width = size * PIXEL
    edges, units = _stripes(width)
    n_stripes = len(units)
    rows = max(1, math.ceil(polygons / n_stripes))
    yb = np.linspace(0.0, width, rows + 1)
    x0 = np.repeat(edges[:-1], rows)
    x1 = np.repeat(edges[1:], rows)
    y0 = np.tile(yb[:-1], n_stripes)
    y1 = np.tile(yb[1:], n_stripes)
    # Digitised boundaries carry vertices every 50 m or so, not just corners.
    geoms = shapely.segmentize(shapely.box(X0 + x0, Y0 + y0, X0 + x1, Y0 + y1), 50.0)
    names = np.array(UNITS, dtype=object)[np.repeat(units, rows)]
    gdf = gpd.GeoDataFrame({"unit": names}, geometry=geoms, crs=CRS)
    gdf.to_file(path, layer="units", driver="GPKG", engine="pyogrio")  # with its R-tree
    return len(gdf)


def write_attitudes(path: Path, size: int, n: int, seed: int = 15) -> None:
    """``n`` bedding readings over the whole world, dips those of the folds (+/- 2 degrees)."""
    import pandas as pd

    rng = np.random.default_rng(seed)
    width = size * PIXEL
    x = rng.uniform(0, width, n)
    y = rng.uniform(0, width, n)
    slope = AMPLITUDE * 2 * np.pi / WAVELENGTH * np.cos(2 * np.pi * x / WAVELENGTH)
    # Where the depth grows eastward (slope > 0) older beds come up to the east: the beds
    # dip west there (strike 180, right-hand rule), east elsewhere.
    dip = np.clip(np.degrees(np.arctan(np.abs(slope))) + rng.normal(0, 2, n), 1, 89)
    strike = np.where(slope > 0, 180.0, 0.0) + rng.normal(0, 3, n)
    pd.DataFrame({"id": [f"W{i:07d}" for i in range(n)], "x": np.round(X0 + x, 1),
                  "y": np.round(Y0 + y, 1), "strike": np.round(strike % 360, 0),
                  "dip": np.round(dip, 0)}).to_csv(path, index=False)


def section_lines(size: int, length: float, sections: int):
    """``sections`` parallel east-west lines ``length`` long about the world's centre,
    1.5 km apart."""
    c = X0 + size * PIXEL / 2, Y0 + size * PIXEL / 2
    length = min(length, 0.8 * size * PIXEL)
    out = []
    for k in range(sections):
        y = c[1] + (k - (sections - 1) / 2) * 1500.0 + 123.0  # off the tiles' edges
        out.append(((c[0] - length / 2, y), (c[0] + length / 2, y)))
    return tuple(out)


def write_project(folder: Path, lines, corridor: float = 300.0) -> Path:
    text = ['title = "Invented fold belt (benchmark world)"', f'crs = "{CRS}"', "",
            "[dem]", 'path = "dem.tif"', "", "[map]", 'path = "geology.gpkg"',
            'units_layer = "units"', 'unit_field = "unit"', "", "[attitudes]",
            'path = "attitudes.csv"', 'convention = "rhr"', ""]
    for u in UNITS:
        text += ["[[stratigraphy]]", f'unit = "{u}"', f"thickness = {THICKNESS:.1f}", ""]
    for k, (a, b) in enumerate(lines):
        text += ["[[section]]", f'name = "S{k + 1}"',
                 f"line = [[{a[0]:.1f}, {a[1]:.1f}], [{b[0]:.1f}, {b[1]:.1f}]]",
                 f"corridor = {corridor:.1f}", 'method = "kink"', ""]
    path = folder / "project.toml"
    path.write_text("\n".join(text), encoding="utf-8")
    return path


def generate_world(folder: str | os.PathLike, size: int = 16000, polygons: int = 100_000,
                   attitudes: int = 1_000_000, length: float = 20_000.0,
                   sections: int = 1, dem: Path | None = None) -> World:
    """Write a world (dem.tif, geology.gpkg, attitudes.csv, project.toml) into ``folder``.

    Parameters
    ----------
    folder : path
        Where the files go (created).
    size : int
        DEM width and height in pixels (10 m each).
    polygons : int
        About this many map polygons.
    attitudes : int
        Bedding readings.
    length : float
        Section length, m (at most 0.8 of the world's width).
    sections : int
        Parallel sections, 1.5 km apart.
    dem : path, optional
        An existing DEM of this ``size`` to link instead of writing a new one.

    Returns
    -------
    World

    Examples
    --------
    >>> w = generate_world(tmp, size=1000, polygons=500, attitudes=1000)  # doctest: +SKIP
    """
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    if dem is not None:
        os.symlink(Path(dem).resolve(), folder / "dem.tif")
    else:
        write_dem(folder / "dem.tif", size)
    n = write_map(folder / "geology.gpkg", size, polygons)
    write_attitudes(folder / "attitudes.csv", size, attitudes)
    lines = section_lines(size, length, sections)
    return World(write_project(folder, lines), size, n, attitudes, lines)


def cut_world(world: World, folder: str | os.PathLike, distance: float = CUT_M) -> World:
    """A copy of ``world`` whose map and attitudes are cut to ``distance`` around its lines
    (the polygons meeting that area, the attitudes inside it); the same DEM (linked)."""
    import geopandas as gpd
    import pandas as pd
    import shapely

    src = world.project.parent
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    area = shapely.union_all([shapely.LineString(ln).buffer(distance) for ln in world.lines])
    units = gpd.read_file(src / "geology.gpkg", layer="units", engine="pyogrio",
                          bbox=area.bounds)
    # The polygons meeting the area, kept whole: clipping would move their vertices by
    # rounding (a few 1e-7 m), and the two builds would no longer see the same map.
    units = units[units.intersects(area)]
    units.to_file(folder / "geology.gpkg", layer="units", driver="GPKG", engine="pyogrio")
    att = pd.read_csv(src / "attitudes.csv", dtype={"id": str})
    keep = shapely.contains_xy(area, att["x"].to_numpy(), att["y"].to_numpy())
    att[keep].to_csv(folder / "attitudes.csv", index=False)
    os.symlink((src / "dem.tif").resolve(), folder / "dem.tif")
    (folder / "project.toml").write_text((src / "project.toml").read_text("utf-8"), "utf-8")
    return World(folder / "project.toml", world.size, len(units), int(keep.sum()), world.lines)


def measure_build(project: Path, out: Path) -> tuple[float, float]:
    """Wall time (s) and peak memory (MB, maximum resident set) of ``mapsection build`` in a
    fresh interpreter (the build alone in its own child process; on Linux its ``VmHWM``,
    which, unlike ``ru_maxrss``, does not count the memory of this process before the
    child's exec)."""
    code = ("import resource, sys, time\n"
            "t0 = time.perf_counter()\n"
            "from mapsection.cli.main import cli\n"
            "try:\n"
            "    cli(sys.argv[1:])\n"
            "except SystemExit as e:\n"
            "    if e.code not in (0, None): raise\n"
            "peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss\n"
            # On Linux ru_maxrss keeps the resident set of the process forked before exec
            # (this benchmark, holding the world it generated); VmHWM is the build's own.
            "try:\n"
            "    peak = next(int(v.split()[1]) for v in open('/proc/self/status')\n"
            "                if v.startswith('VmHWM:'))\n"
            "except (OSError, StopIteration):\n"
            "    pass\n"
            "print(time.perf_counter() - t0, peak, file=sys.stderr)\n")
    t0 = time.perf_counter()
    run = subprocess.run([sys.executable, "-c", code, "build", str(project), "-o", str(out)],
                         stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True,
                         cwd=out.parent)
    wall = time.perf_counter() - t0
    if run.returncode != 0:
        raise RuntimeError(f"build of {project} failed:\n{run.stderr[-2000:]}")
    last = run.stderr.strip().splitlines()[-1].split()
    # ru_maxrss is in kB on Linux (bytes on macOS)
    rss_kb = float(last[1]) / (1024 if sys.platform == "darwin" else 1)
    return wall, rss_kb / 1024


def _slope(sizes, values) -> float:
    """The fitted growth exponent: the slope of log(value) against log(size)."""
    return float(np.polyfit(np.log(sizes), np.log(values), 1)[0])


def _growth(tmp: Path, base: dict, name: str, values: list, dem_cache: dict,
            repeat: int = 1) -> None:
    """One growth table: the whole-world build with ``name`` taking each of ``values``
    (median of ``repeat`` builds each)."""
    print()
    print(f"Growth with {name} (other inputs: {_said(base)})")
    print()
    print(f"| {name} | wall s | peak MB |")
    print("|---:|---:|---:|")
    walls, mems = [], []
    for v in values:
        kw = {**base, name: v}
        if name == "size":  # a larger world at the same density of polygons and attitudes
            grow = (v / base["size"]) ** 2
            kw["polygons"] = max(1, round(base["polygons"] * grow))
            kw["attitudes"] = max(1, round(base["attitudes"] * grow))
        folder = tmp / f"g-{name}-{v}"
        dem = dem_cache.get(kw["size"])
        w = generate_world(folder, dem=dem, **kw)
        dem_cache.setdefault(kw["size"], folder / "dem.tif")
        runs = [measure_build(w.project, folder / "out") for _ in range(max(repeat, 1))]
        wall, mem = (float(np.median(c)) for c in zip(*runs, strict=True))
        walls.append(wall)
        mems.append(mem)
        print(f"| {v} | {wall:.2f} | {mem:.0f} |", flush=True)
    print(f"fitted growth exponent: wall {_slope(values, walls):.2f}, "
          f"peak memory {_slope(values, mems):.2f}")


def _load() -> tuple[float, ...]:
    """The machine's load averages (1, 5, 15 min), where the system tells them."""
    try:
        return os.getloadavg()
    except (AttributeError, OSError):
        return ()


def _said(kw: dict) -> str:
    return (f"DEM {kw['size']}^2, {kw['polygons']} polygons, {kw['attitudes']} attitudes, "
            f"{kw.get('sections', 1)} section(s) of {kw['length'] / 1000:g} km")


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(prog="python -m mapsection.bench world", description=__doc__,
                                 formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--size", type=int, default=16000, help="DEM pixels a side [16000]")
    ap.add_argument("--polygons", type=int, default=100_000, help="map polygons [100000]")
    ap.add_argument("--attitudes", type=int, default=1_000_000, help="attitudes [1000000]")
    ap.add_argument("--length", type=float, default=20_000.0, help="section length, m [20000]")
    ap.add_argument("--sections", type=int, default=1, help="parallel sections [1]")
    ap.add_argument("--growth", action="store_true",
                    help="also the growth tables (line length, attitudes, polygons, DEM size, "
                         "sections)")
    ap.add_argument("--repeat", type=int, default=1,
                    help="builds of each world, interleaved; medians are shown (the growth "
                         "tables too) [1]")
    ap.add_argument("--keep", metavar="DIR",
                    help="generate into DIR and keep it (a world already there is reused)")
    args = ap.parse_args(argv)
    for name in ("size", "polygons", "attitudes", "sections"):
        if getattr(args, name) < 1:
            ap.error(f"--{name} must be at least 1")
    with tempfile.TemporaryDirectory(prefix="mapsection-world-") as tmpdir:
        tmp = Path(args.keep) if args.keep else Path(tmpdir)
        world, cut = _worlds(args, tmp)
        _whole_against_cut(world, cut, tmp, args.repeat)
        if args.growth:
            base = {"size": args.size, "polygons": args.polygons, "attitudes": args.attitudes,
                    "length": args.length, "sections": args.sections}
            dems: dict[int, Path] = {args.size: world.project.parent / "dem.tif"}
            _growth(tmp, base, "length", [args.length / 4, args.length / 2, args.length], dems,
                    args.repeat)
            _growth(tmp, base, "attitudes",
                    [args.attitudes // 4, args.attitudes // 2, args.attitudes], dems, args.repeat)
            _growth(tmp, base, "polygons",
                    [args.polygons // 4, args.polygons // 2, args.polygons], dems, args.repeat)
            _growth(tmp, base, "size", [args.size // 2, int(args.size / 1.41), args.size],
                    dems, args.repeat)
            # More sections in one project: built in parallel, one worker per core.
            _growth(tmp, base, "sections", [args.sections, 2 * args.sections,
                                            4 * args.sections], dems, args.repeat)
    return 0


def _worlds(args, tmp: Path) -> tuple[World, World]:
    """The whole world and its cut, generated into ``tmp`` (or reused from there)."""
    t0 = time.perf_counter()
    if (tmp / "whole" / "project.toml").is_file() and (tmp / "cut" / "project.toml").is_file():
        world = World(tmp / "whole" / "project.toml", args.size, -1, -1,
                      section_lines(args.size, args.length, args.sections))
        cut = World(tmp / "cut" / "project.toml", args.size, -1, -1, world.lines)
        print(f"reusing the world in {tmp} (counts not known: -1)")
    else:
        world = generate_world(tmp / "whole", args.size, args.polygons, args.attitudes,
                               args.length, args.sections)
        cut = cut_world(world, tmp / "cut")
    print(f"world ready in {time.perf_counter() - t0:.1f} s: DEM {args.size}^2 at "
          f"{PIXEL:g} m, {world.polygons} polygons, {world.attitudes} attitudes; "
          f"{args.sections} section(s) of {args.length / 1000:g} km; cut to "
          f"{CUT_M / 1000:g} km around the line(s): {cut.polygons} polygons, "
          f"{cut.attitudes} attitudes")
    return world, cut


def _whole_against_cut(world: World, cut: World, tmp: Path, repeat: int) -> None:
    """Build both worlds ``repeat`` times, interleaved (both see the same machine load), and
    print the medians and the ratios against the target."""
    runs = []
    for i in range(max(repeat, 1)):
        runs.append((*measure_build(world.project, tmp / "whole" / "out"),
                     *measure_build(cut.project, tmp / "cut" / "out")))
        tw, mw, tc, mc = runs[-1]
        print(f"run {i + 1}: whole {tw:.2f} s {mw:.0f} MB, cut {tc:.2f} s {mc:.0f} MB "
              f"({tw / tc:.2f}x, {mw / mc:.2f}x); load average "
              f"{', '.join(f'{v:.1f}' for v in _load())}", flush=True)
    t_whole, m_whole, t_cut, m_cut = (float(np.median(c)) for c in zip(*runs, strict=True))
    print()
    print("| build | wall s | peak MB |")
    print("|---|---:|---:|")
    print(f"| whole world | {t_whole:.2f} | {m_whole:.0f} |")
    print(f"| cut world | {t_cut:.2f} | {m_cut:.0f} |")
    rt, rm = t_whole / t_cut, m_whole / m_cut
    print(f"| whole / cut | {rt:.2f}x {'within' if rt <= TARGET else 'OVER'} "
          f"{TARGET:g}x | {rm:.2f}x {'within' if rm <= TARGET else 'OVER'} {TARGET:g}x |")


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
