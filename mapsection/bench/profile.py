"""Benchmark: the profile of a ~100 km section line across a large tiled DEM.

``python -m mapsection.bench profile [--size 16000] [--keep] [--repeat 5] [--dem PATH]``

Builds a 256 x 256-tiled, deflate-compressed float32 GeoTIFF of SIZE x SIZE
cells of 10 m (smooth synthetic terrain, written one row of tiles at a time)
in a temporary folder, then times, each in a fresh Python process so that no
method profits from another's GDAL block cache:

- ``mapsection``: :func:`mapsection.topo_profile.profile` at the pixel size (opens the DEM,
  lays out the samples, reads the blocks it needs, interpolates);
- ``(a) sample``: rasterio's ``DatasetReader.sample`` on the same points (nearest
  pixel, one small read per point);
- ``(b) whole``: reading the whole raster and interpolating bilinearly;
- ``(c) blocks``: the lower bound: decoding just the DEM blocks the line
  touches (2 x 2 stencil included), each once, and nothing else; with GDAL's
  block cache off, as mapsection reads them (GDAL would otherwise keep a copy
  of every decoded block in fresh memory, which costs time);
- ``(c') blocks, GDAL cache``: the same with GDAL's default block cache, for
  comparison.

Every timing includes opening the raster and excludes the Python imports.
Memory is measured two ways per method, each in its own process: the rise of
the process's peak resident set over the resident set just before the method
(Linux ``VmHWM`` after resetting it; includes GDAL's own block cache and every
library allocation) and the tracemalloc peak (numpy and Python allocations
only).
"""

from __future__ import annotations

import argparse
import json
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
import tracemalloc
from pathlib import Path

import numpy as np

CELL = 10.0  # metres
TILE = 256
CRS = "EPSG:32611"
X0, Y_TOP = 300_000.0, 4_400_000.0  # upper-left corner of the raster
# Line vertices as fractions of the raster's side: ~100 km with one bend at SIZE 16000.
LINE_FRACTIONS = [(0.09, 0.125), (0.465, 0.375), (0.59, 0.5)]
METHODS = ["mapsection", "sample", "whole", "blocks", "blocks_cached"]
LABELS = {
    "mapsection": "mapsection profile()",
    "sample": "(a) rasterio sample()",
    "whole": "(b) whole raster + interpolate",
    "blocks": "(c) decode touched blocks only",
    "blocks_cached": "(c') same, GDAL block cache on",
}


def terrain(x: np.ndarray, y: np.ndarray) -> np.ndarray:
    """Smooth synthetic relief in metres (sums of long-wavelength sinusoids)."""
    tau = 2.0 * np.pi
    return (
        800.0
        + 400.0 * np.sin(tau * x / 37_000.0) * np.cos(tau * y / 53_000.0)
        + 150.0 * np.sin(tau * (x + 2.0 * y) / 11_000.0)
        + 30.0 * np.cos(tau * (3.0 * x - y) / 2_900.0)
        + 5.0 * np.sin(tau * x / 700.0) * np.sin(tau * y / 900.0)
    )


def build_dem(path: Path, size: int) -> None:
    """Write the benchmark DEM one row of tiles at a time (never the whole grid in memory)."""
    import rasterio
    from rasterio.transform import from_origin
    from rasterio.windows import Window

    profile = dict(
        driver="GTiff", width=size, height=size, count=1, dtype="float32", crs=CRS,
        transform=from_origin(X0, Y_TOP, CELL, CELL), tiled=True, blockxsize=TILE,
        blockysize=TILE, compress="deflate", nodata=-9999.0, BIGTIFF="IF_SAFER",
    )
    xs = X0 + (np.arange(size) + 0.5) * CELL
    with rasterio.open(path, "w", **profile) as ds:
        for r0 in range(0, size, TILE):
            h = min(TILE, size - r0)
            ys = Y_TOP - (np.arange(r0, r0 + h) + 0.5) * CELL
            ds.write(terrain(xs[None, :], ys[:, None]).astype("float32"), 1,
                     window=Window(0, r0, size, h))


def line_vertices(size: int) -> np.ndarray:
    side = size * CELL
    return np.array([(X0 + fx * side, Y_TOP - fy * side) for fx, fy in LINE_FRACTIONS])


def touched_blocks(x: np.ndarray, y: np.ndarray, size: int) -> np.ndarray:
    """(block row, block col) of every tile holding a pixel of a point's 2 x 2 stencil."""
    c = (x - X0) / CELL - 0.5
    r = (Y_TOP - y) / CELL - 0.5
    c0, r0 = np.floor(c).astype(int), np.floor(r).astype(int)
    cols = np.clip(np.concatenate([c0, c0 + 1, c0, c0 + 1]), 0, size - 1)
    rows = np.clip(np.concatenate([r0, r0, r0 + 1, r0 + 1]), 0, size - 1)
    return np.unique(np.column_stack([rows // TILE, cols // TILE]), axis=0)


def _bilinear_full(arr: np.ndarray, x: np.ndarray, y: np.ndarray) -> np.ndarray:
    """Bilinear between pixel centres on an in-memory grid (the whole-raster baseline)."""
    h, w = arr.shape
    c = (x - X0) / CELL - 0.5
    r = (Y_TOP - y) / CELL - 0.5
    c0f, r0f = np.floor(c), np.floor(r)
    fx, fy = c - c0f, r - r0f
    c0 = np.clip(c0f.astype(int), 0, w - 1)
    c1 = np.clip(c0f.astype(int) + 1, 0, w - 1)
    r0 = np.clip(r0f.astype(int), 0, h - 1)
    r1 = np.clip(r0f.astype(int) + 1, 0, h - 1)
    z00, z01 = arr[r0, c0].astype(float), arr[r0, c1].astype(float)
    z10, z11 = arr[r1, c0].astype(float), arr[r1, c1].astype(float)
    return (z00 * (1 - fx) + z01 * fx) * (1 - fy) + (z10 * (1 - fx) + z11 * fx) * fy


def _status_kib(key: str) -> int:
    """A memory figure of this process from /proc/self/status (Linux), in KiB."""
    with open("/proc/self/status") as f:
        for line in f:
            if line.startswith(key + ":"):
                return int(line.split()[1])
    return 0


def _reset_peak_rss() -> None:
    # Reset the resident-set high-water mark to the current resident set (Linux >= 4.0), so
    # that the peak seen afterwards belongs to the method alone.
    try:
        with open("/proc/self/clear_refs", "w") as f:
            f.write("5")
    except OSError:
        pass


def _run_method(method: str, dem: Path, data: dict) -> np.ndarray | None:
    """Run one method; returns its elevations (None for the block-decoding bound)."""
    import rasterio
    from rasterio.windows import Window

    if method == "mapsection":
        prof = mapsection_profile(str(dem), data["line"], step=CELL, warn=lambda m: None)
        return prof.z
    x, y = data["x"], data["y"]
    if method == "sample":
        with rasterio.open(dem) as ds:
            return np.array(list(ds.sample(zip(x, y, strict=True), indexes=1)), float)[:, 0]
    if method == "whole":
        with rasterio.open(dem) as ds:
            return _bilinear_full(ds.read(1), x, y)
    if method in ("blocks", "blocks_cached"):
        # GDAL_CACHEMAX=0: the setting mapsection's Dem reads its tiles with.
        env = {} if method == "blocks_cached" else {"GDAL_CACHEMAX": 0}
        with rasterio.Env(**env), rasterio.open(dem) as ds:
            for bi, bj in data["blocks"]:
                ds.read(1, window=Window(int(bj) * TILE, int(bi) * TILE, TILE, TILE))
        return None
    raise ValueError(method)


def mapsection_profile(*args, **kwargs):
    from mapsection.topo_profile import profile

    return profile(*args, **kwargs)


def worker(method: str, dem: Path, data_path: Path, trace: bool) -> dict:
    """One measurement in this (fresh) process: wall time and memory of one method."""
    import numpy.ma  # noqa: F401  (numpy imports it lazily on the first np.unique)
    import pyproj
    import rasterio  # imports are not timed

    import mapsection.topo_profile  # noqa: F401
    from mapsection.line import SectionLine

    npz = np.load(data_path)
    data = {k: npz[k] for k in npz.files}
    data["line"] = SectionLine(data["vertices"], pyproj.CRS(CRS))
    # Warm up GDAL and PROJ (driver registration, database) outside the measurement.
    with rasterio.open(dem) as ds:
        pyproj.CRS.from_wkt(ds.crs.to_wkt())
    if trace:
        tracemalloc.start()
    _reset_peak_rss()
    rss0 = _status_kib("VmRSS")
    t0 = time.perf_counter()
    z = _run_method(method, dem, data)
    wall = time.perf_counter() - t0
    # VmHWM: this process image's peak resident set (unlike ru_maxrss, which Linux carries
    # over from the parent across fork and exec).
    peak_rss = _status_kib("VmHWM")
    out = {"method": method, "wall_s": wall, "rss_rise_mb": max(peak_rss - rss0, 0) / 1024}
    if trace:
        out["traced_peak_mb"] = tracemalloc.get_traced_memory()[1] / 2**20
        tracemalloc.stop()
    if z is not None:
        np.save(data_path.with_name(f"z_{method}.npy"), z)
    return out


def _spawn(method: str, dem: Path, data_path: Path, trace: bool) -> dict:
    cmd = [sys.executable, "-m", "mapsection.bench.profile", "--worker", method,
           "--dem", str(dem), "--data", str(data_path)] + (["--trace"] if trace else [])
    res = subprocess.run(cmd, capture_output=True, text=True, check=False)
    if res.returncode != 0:
        raise RuntimeError(f"{method} worker failed:\n{res.stderr}")
    return json.loads(res.stdout.strip().splitlines()[-1])


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(prog="python -m mapsection.bench profile", description=__doc__,
                                 formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--size", type=int, default=16000, help="raster side in cells (10 m)")
    ap.add_argument("--keep", action="store_true", help="keep the temporary folder and DEM")
    ap.add_argument("--dem", type=Path, help="reuse a DEM built by an earlier --keep run")
    ap.add_argument("--repeat", type=int, default=5, help="timed runs per method (median)")
    ap.add_argument("--worker", choices=METHODS, help=argparse.SUPPRESS)
    ap.add_argument("--data", type=Path, help=argparse.SUPPRESS)
    ap.add_argument("--trace", action="store_true", help=argparse.SUPPRESS)
    args = ap.parse_args(argv)
    if args.worker:
        print(json.dumps(worker(args.worker, args.dem, args.data, args.trace)))
        return 0

    from mapsection.line import SectionLine

    folder = Path(tempfile.mkdtemp(prefix="mapsection-bench-profile-"))
    try:
        dem = args.dem
        if dem is None:
            dem = folder / f"dem_{args.size}.tif"
            print(f"building {args.size} x {args.size} tiled deflate float32 DEM in {folder} ...",
                  flush=True)
            t0 = time.perf_counter()
            build_dem(dem, args.size)
            print(f"  built in {time.perf_counter() - t0:.1f} s, "
                  f"{dem.stat().st_size / 2**20:.0f} MB on disk", flush=True)
        size = _raster_size(dem)
        vertices = line_vertices(size)
        line = SectionLine(vertices)
        d = line.densify(CELL)
        x, y = line.point_at(d)
        blocks = touched_blocks(x, y, size)
        data_path = folder / "points.npz"
        np.savez(data_path, vertices=vertices, x=x, y=y, blocks=blocks)
        print(f"line {line.length / 1000:.1f} km, {len(d)} samples every {CELL:g} m, "
              f"touching {len(blocks)} of {(-(-size // TILE)) ** 2} tiles", flush=True)

        times: dict[str, list[float]] = {m: [] for m in METHODS}
        rss: dict[str, list[float]] = {m: [] for m in METHODS}
        for _ in range(args.repeat):  # interleaved so that drifts in load hit every method
            for m in METHODS:
                r = _spawn(m, dem, data_path, trace=False)
                times[m].append(r["wall_s"])
                rss[m].append(r["rss_rise_mb"])
        traced = {m: _spawn(m, dem, data_path, trace=True)["traced_peak_mb"] for m in METHODS}
        _report(times, rss, traced, folder, args.repeat)
    finally:
        if args.keep:
            print(f"kept {folder}")
        else:
            shutil.rmtree(folder, ignore_errors=True)
    return 0


def _raster_size(dem: Path) -> int:
    import rasterio

    with rasterio.open(dem) as ds:
        if ds.width != ds.height or ds.block_shapes[0] != (TILE, TILE):
            raise SystemExit(f"{dem}: not a DEM built by this benchmark")
        return ds.width


def _report(times, rss, traced, folder: Path, repeat: int) -> None:
    t = {m: statistics.median(v) for m, v in times.items()}
    mem = {m: statistics.median(v) for m, v in rss.items()}
    print(f"\n{'method':34s} {'wall s':>9s} {'peak RSS rise MB':>17s} {'traced peak MB':>15s}"
          f"   (median of {repeat}; each run in a fresh process)")
    for m in METHODS:
        print(f"{LABELS[m]:34s} {t[m]:9.3f} {mem[m]:17.1f} {traced[m]:15.1f}"
              f"   (wall {min(times[m]):.3f}-{max(times[m]):.3f})")
    z_ours = np.load(folder / "z_mapsection.npy")
    z_whole = np.load(folder / "z_whole.npy")
    z_sample = np.load(folder / "z_sample.npy")
    ours = t["mapsection"]
    print("\nratios (targets in brackets):")
    print(f"  mapsection / (c) blocks-only bound : {ours / t['blocks']:6.2f}x  [<= 1.5]")
    print(f"  (a) sample / mapsection            : {t['sample'] / ours:6.1f}x  [>= 5]")
    print(f"  (b) whole / mapsection             : {t['whole'] / ours:6.1f}x  [>= 20]")
    print(f"  (a) sample / (c) bound             : {t['sample'] / t['blocks']:6.1f}x"
          "  (the most any method that decodes the touched blocks can reach)")
    print(f"  mapsection / (c') cached blocks    : {ours / t['blocks_cached']:6.2f}x")
    print(f"  peak RSS rise, mapsection / (b)    : {100 * mem['mapsection'] / mem['whole']:6.2f} %"
          "  [<= 5]")
    print(f"  traced peak, mapsection / (b)      : "
          f"{100 * traced['mapsection'] / traced['whole']:6.2f} %  [<= 5]")
    print("\nagreement:")
    print(f"  max |mapsection - (b) bilinear|    : {np.nanmax(np.abs(z_ours - z_whole)):.2e} m")
    rms = float(np.sqrt(np.nanmean((z_ours - z_sample) ** 2)))
    print(f"  RMS mapsection - (a) nearest pixel : {rms:.3f} m (nearest vs bilinear)")


if __name__ == "__main__":
    sys.exit(main())
