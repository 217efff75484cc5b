"""A digital elevation model read lazily, block by block, from a raster file.

:class:`Dem` samples ground elevation at map points by bilinear interpolation
between pixel centres. It decodes only the internal blocks (tiles or strips)
of the raster that the points need and keeps them decoded, so a long section
line across a large DEM reads a few dozen blocks, and moving the line nearby
reads few or none again.
"""

from __future__ import annotations

import contextlib
import os
from collections import OrderedDict
from pathlib import Path
from typing import Self

import numpy as np
import pyproj
import rasterio
from rasterio._err import CPLE_BaseError
from rasterio.errors import RasterioError, RasterioIOError
from rasterio.windows import Window

from .._messages import Warn
from .._messages import default_warn as _default_warn
from ..crs import same_crs, transformer
from ..errors import DEMError
from ..settings import VERTICAL_UNITS

# Strips wider than this are cached in pieces of this many columns, so that a
# line crossing a strip-organised raster keeps only the parts it needs.
_MAX_BLOCK_WIDTH = 1024
_PIECE_WIDTH = 512
# Rasters with at most this many cache blocks keep a block -> slot lookup array (4 bytes each).
_MAX_LOOKUP = 1 << 22


# The elevation units a raster may name (GDAL unit type or CRS axis), as settings.VERTICAL_UNITS.
_UNIT_NAMES = {
    **dict.fromkeys(("m", "metre", "meter", "metres", "meters"), "metre"),
    **dict.fromkeys(("ft", "foot", "feet", "international foot", "intl foot"), "foot"),
    **dict.fromkeys(("us-ft", "us ft", "ftus", "us survey foot", "us-foot", "survey foot",
                     "foot us", "us foot"), "us-foot"),
}

_PLURAL = {"metre": "metres", "foot": "feet", "us-foot": "US survey feet"}


class Closing:
    """Its own context manager: leaving a ``with`` block calls ``close()``.

    For the values that hold an open file (:class:`Dem`, and what holds a Dem).
    """

    def close(self) -> None:  # pragma: no cover - each subclass closes its own
        raise NotImplementedError

    def __enter__(self) -> Self:
        return self

    def __exit__(self, *exc) -> None:
        self.close()


class Dem(Closing):
    """A single-band elevation raster (metres), opened read-only.

    Attributes: ``path``, ``crs`` (pyproj.CRS), ``transform`` (affine),
    ``pixel_size`` (the smaller side of a pixel, in metres; for a geographic DEM
    measured on the ellipsoid at the DEM's centre), ``nodata``, ``bounds``
    (left, bottom, right, top in the DEM's CRS), ``width``, ``height``.

    ``cache_bytes`` bounds the decoded blocks kept between calls (least recently
    used go first); one call always keeps every block it needs.

    Elevations are returned in metres. The vertical unit is the file's own (GDAL's
    unit type of the band, else the vertical axis of a compound CRS); where the file
    does not say, ``vertical_unit`` (a key of ``settings.VERTICAL_UNITS``, default
    metre). A conversion from feet is said once through ``warn``. The unit used is
    ``vertical_unit`` afterwards.
    """

    def __init__(self, path: str | os.PathLike, *, cache_bytes: int = 512 * 2**20,
                 vertical_unit: str | None = None, warn: Warn | None = None) -> None:
        self.path = Path(path)
        if not self.path.exists():
            raise DEMError(f"{self.path}: no such DEM file")
        if self.path.is_dir():
            raise DEMError(f"{self.path}: is a folder, not a DEM raster")
        try:
            ds = rasterio.open(self.path)
        except RasterioIOError as exc:
            first = str(exc).splitlines()[0] if str(exc) else "unknown format"
            raise DEMError(f"{self.path}: not a readable raster ({first})") from None
        try:
            self._check(ds)
        except DEMError:
            ds.close()
            raise
        self._ds = ds
        self.crs = pyproj.CRS.from_wkt(ds.crs.to_wkt())
        self.transform = ds.transform
        self._inverse = ~ds.transform
        self.nodata = ds.nodata
        self.bounds = ds.bounds
        self.width, self.height = ds.width, ds.height
        self._scale = float(ds.scales[0]) if ds.scales else 1.0
        self._offset = float(ds.offsets[0]) if ds.offsets else 0.0
        self.vertical_unit = self._vertical_unit(ds, vertical_unit, warn or _default_warn)
        to_metres = VERTICAL_UNITS[self.vertical_unit]
        self._scale *= to_metres
        self._offset *= to_metres
        bh, bw = ds.block_shapes[0]
        if bw >= self.width and bw > _MAX_BLOCK_WIDTH:
            bw = _PIECE_WIDTH  # a strip: cache it in pieces (GDAL decodes the strip once)
        self.block_shape = (int(bh), int(bw))
        self._nbcols = -(-self.width // self.block_shape[1])
        self._nblocks = -(-self.height // self.block_shape[0]) * self._nbcols
        # GDAL's block cache is redundant where cache blocks are the file's own tiles.
        self._gdal_cache_needed = (ds.driver != "GTiff" or (bh, bw) != self.block_shape)
        src = np.dtype(ds.dtypes[0])
        wide = src.itemsize > 4 or src in (np.dtype("int32"), np.dtype("uint32"))
        self._dtype = np.dtype("float64") if wide else np.dtype("float32")
        self._same_dtype = src == self._dtype
        self._capacity = max(int(cache_bytes // (bh * bw * self._dtype.itemsize)), 1)
        self._pool = np.empty((0, bh, bw), self._dtype)  # decoded blocks, one per slot
        self._slots: OrderedDict[int, int] = OrderedDict()  # block id -> slot, LRU order
        # Block id -> slot (-1: not cached) as an array, for one vectorised lookup per call;
        # rasters of very many blocks (e.g. one-row strips) look slots up in ``_slots``.
        self._slot_of = (np.full(self._nblocks, -1, np.int32)
                         if self._nblocks <= _MAX_LOOKUP else None)
        self.blocks_read = 0  # decoded blocks, for tests and benchmarks
        self.pixel_size = self._pixel_size_m()
        # The nodata value as the cache stores it (rounded to float32 like the pixels), or None.
        self._nodata_stored: float | None = None
        if self.nodata is not None and not np.isnan(self.nodata):
            with np.errstate(over="ignore"):
                self._nodata_stored = float(self._dtype.type(self.nodata))
        self._last_crs: tuple[object, pyproj.Transformer | None] = (None, None)

    def _vertical_unit(self, ds, setting: str | None, warn: Warn) -> str:
        """The unit of the elevations: the file's own, else ``setting``, else metre."""
        raw = (ds.units[0] if ds.units else "") or ""
        source = "unit type"
        if not raw.strip():
            up = [a for a in self.crs.axis_info if a.direction.lower() == "up"]
            raw, source = (up[0].unit_name, "vertical CRS axis") if up else ("", "")
        said = _UNIT_NAMES.get(raw.strip().lower().replace("_", " ")) if raw.strip() else None
        name = self.path.name
        if raw.strip() and said is None:
            if setting is None:
                raise DEMError(f"{self.path}: elevation unit {raw.strip()!r} ({source}) is not "
                               "metres or feet; convert the DEM to metres, or set [dem] "
                               "vertical_unit if the file is wrong")
            said, source = setting, "[dem] vertical_unit"
        if said is not None and setting is not None and setting != said:
            warn(f"{name}: the file gives its elevations in {_PLURAL[said]} ({source}); "
                 f"[dem] vertical_unit = {setting!r} is not used")
        unit = said or setting or "metre"
        if unit != "metre":
            why = f"the file's {source}" if said else "[dem] vertical_unit"
            warn(f"{name}: elevations are in {_PLURAL[unit]} ({why}); converted to metres "
                 f"(x {VERTICAL_UNITS[unit]:.6f})")
        return unit

    @classmethod
    def open(cls, path: str | os.PathLike, **kwargs) -> Dem:
        """Open ``path``; DEMError naming the file if it is missing, not a raster, or has no CRS."""
        return cls(path, **kwargs)

    def _check(self, ds) -> None:
        if ds.count < 1:
            raise DEMError(f"{self.path}: raster has no bands")
        if ds.crs is None:
            raise DEMError(f"{self.path}: the DEM has no CRS; assign one (e.g. gdal_edit -a_srs)")
        if ds.transform.is_identity:
            raise DEMError(f"{self.path}: the DEM has no georeferencing (identity transform)")

    # --- context manager (Closing) ----------------------------------------
    def close(self) -> None:
        self._ds.close()

    def __repr__(self) -> str:
        return f"Dem({str(self.path)!r}, {self.width}x{self.height}, {self.pixel_size:.3g} m)"

    @property
    def cached_blocks(self) -> set[tuple[int, int]]:
        """(block row, block column) of every block held decoded."""
        return {divmod(b, self._nbcols) for b in self._slots}

    # --- measures ----------------------------------------------------------
    def _pixel_size_m(self) -> float:
        t = self.transform
        xres, yres = float(np.hypot(t.a, t.d)), float(np.hypot(t.b, t.e))
        if self.crs.is_geographic:
            # Degrees to metres on the DEM's ellipsoid at the DEM's centre.
            geod = self.crs.get_geod() or pyproj.Geod(ellps="WGS84")
            cx, cy = t @ (self.width / 2.0, self.height / 2.0)
            lon = np.array([cx, cx + t.a, cx + t.b])
            lat = np.array([cy, cy + t.d, cy + t.e])
            _, _, dist = geod.inv(lon[[0, 0]], lat[[0, 0]], lon[1:], lat[1:])
            return float(min(dist))
        factor = self.crs.axis_info[0].unit_conversion_factor if self.crs.axis_info else 1.0
        return min(xres, yres) * float(factor)

    # --- sampling ----------------------------------------------------------
    def sample(self, x, y, crs: pyproj.CRS | str | None = None) -> np.ndarray:
        """Elevation at map points by bilinear interpolation between pixel centres.

        ``x``, ``y`` are in ``crs`` (default: the DEM's) and are transformed to
        the DEM's CRS with pyproj. NaN where a point lies outside the DEM or any
        of its four neighbouring pixels is nodata. Points between the outermost
        pixel centres and the raster edge take the edge pixels' values.
        """
        return self._sample(x, y, crs)[0]

    def inside(self, x, y, crs: pyproj.CRS | str | None = None) -> np.ndarray:
        """True where points fall within the raster's footprint."""
        col, row = self._pixel_coords(x, y, crs)
        return self._inside(col, row)

    def _to_dem_crs(self, crs) -> pyproj.Transformer | None:
        """The transformer from ``crs`` to the DEM's CRS; None when they are the same CRS."""
        if crs is self._last_crs[0]:  # the same CRS object as last time: skip the lookup
            return self._last_crs[1]
        # The same CRS (the usual case) needs no transformer: even an identity one costs.
        tr = None if same_crs(crs, self.crs) else transformer(crs, self.crs)
        self._last_crs = (crs, tr)
        return tr

    def _pixel_coords(self, x, y, crs) -> tuple[np.ndarray, np.ndarray]:
        x = np.asarray(x, dtype=float)
        y = np.asarray(y, dtype=float)
        if crs is not None and crs is not self.crs:
            tr = self._to_dem_crs(crs)
            if tr is not None:
                x, y = tr.transform(x, y)
                x, y = np.asarray(x, float), np.asarray(y, float)
        inv = self._inverse
        if inv.b == 0.0 and inv.d == 0.0:  # north-up raster: one multiply-add per axis
            return inv.a * x + inv.c, inv.e * y + inv.f
        col = inv.a * x + inv.b * y + inv.c
        row = inv.d * x + inv.e * y + inv.f
        return col, row

    def _inside(self, col: np.ndarray, row: np.ndarray) -> np.ndarray:
        with np.errstate(invalid="ignore"):
            return (col >= 0) & (col <= self.width) & (row >= 0) & (row <= self.height)

    def _sample(self, x, y, crs) -> tuple[np.ndarray, np.ndarray]:
        col, row = self._pixel_coords(x, y, crs)
        shape = col.shape
        col, row = col.ravel(), row.ravel()
        inside = self._inside(col, row)
        if inside.all():
            z = self._bilinear(col, row)
        else:
            z = np.full(col.shape, np.nan)
            if inside.any():
                z[inside] = self._bilinear(col[inside], row[inside])
        return z.reshape(shape), inside.reshape(shape)

    def _bilinear(self, col: np.ndarray, row: np.ndarray) -> np.ndarray:
        # Pixel centres sit at half-integer pixel coordinates.
        c, r = col - 0.5, row - 0.5
        c0f, r0f = np.floor(c), np.floor(r)
        fx, fy = c - c0f, r - r0f
        ci, ri = c0f.astype(np.intp), r0f.astype(np.intp)
        last_c, last_r = self.width - 1, self.height - 1
        c0, c1 = np.clip(ci, 0, last_c), np.clip(ci + 1, 0, last_c)
        r0, r1 = np.clip(ri, 0, last_r), np.clip(ri + 1, 0, last_r)
        v00, v01, v10, v11 = self._values((r0, r0, r1, r1), (c0, c1, c0, c1))
        top = v00 * (1 - fx) + v01 * fx
        bottom = v10 * (1 - fx) + v11 * fx
        z = top * (1 - fy) + bottom * fy
        nd = self._nodata_stored
        if nd is not None:
            # Blocks are cached as stored: nodata is found among the few values taken.
            z[(v00 == nd) | (v01 == nd) | (v10 == nd) | (v11 == nd)] = np.nan
        if self._scale != 1.0 or self._offset != 0.0:
            z *= self._scale
            z += self._offset
        return z

    def _values(self, rows: tuple, cols: tuple) -> list[np.ndarray]:
        """Stored pixel values (float64) at each pair of integer index arrays.

        Decodes the blocks not cached yet, then takes each array's values in one
        gather from the cache's flat storage.
        """
        bh, bw = self.block_shape
        nb = self._nbcols
        brow = {id(r): r // bh for r in rows}  # block row / column of each distinct array
        bcol = {id(c): c // bw for c in cols}
        bids = [brow[id(r)] * nb + bcol[id(c)] for r, c in zip(rows, cols, strict=True)]
        slots = self._ensure(bids)
        flat = self._pool.reshape(-1)
        out = []
        for r, c, s in zip(rows, cols, slots, strict=True):
            # slot, then row and column within the block
            idx = (s * bh + (r - brow[id(r)] * bh)) * bw + (c - bcol[id(c)] * bw)
            out.append(flat[idx].astype(float))
        return out

    def _ensure(self, bids: list[np.ndarray]) -> list[np.ndarray]:
        """Cache slots of the blocks in each array of ids, decoding the blocks not cached."""
        needed = _distinct(bids, self._nblocks)
        slots = self._slots
        for b in needed.tolist():  # mark as recently used
            if b in slots:
                slots.move_to_end(b)
        lut = self._slot_of
        if lut is not None:
            missing = needed[lut[needed] < 0].tolist()
        else:
            missing = [b for b in needed.tolist() if b not in slots]
        if missing:
            free = self._free_slots(len(missing), keep=len(needed) - len(missing))
            with self._decode_env():
                for b, slot in zip(missing, free, strict=True):
                    self._decode(b, slot)
                    slots[b] = slot
            if lut is not None:
                lut[missing] = free
        if lut is not None:
            return [lut[b] for b in bids]
        slot_of_needed = np.fromiter((slots[b] for b in needed.tolist()), np.intp, len(needed))
        return [slot_of_needed[np.searchsorted(needed, b)] for b in bids]

    def _free_slots(self, n: int, keep: int) -> list[int]:
        """``n`` slots for new blocks: evict least recently used, grow the pool if needed."""
        used = len(self._slots)
        # Never more than ``n``: a call that needed more blocks than the cache holds has
        # grown the pool past its capacity, and evicting down to the capacity would hand
        # out more slots than blocks to decode.
        n_evict = max(0, min(used - keep, used + n - self._capacity, n))
        free = []
        for _ in range(n_evict):
            b, slot = self._slots.popitem(last=False)
            if self._slot_of is not None:
                self._slot_of[b] = -1
            free.append(slot)
        if len(free) < n and len(self._slots) + len(free) < len(self._pool):
            in_use = set(self._slots.values()) | set(free)
            free += [s for s in range(len(self._pool)) if s not in in_use][: n - len(free)]
        short = n - len(free)
        if short > 0:
            start = len(self._pool)
            grow = max(short, min(start, self._capacity - start))
            extra = np.empty((grow, *self._pool.shape[1:]), self._dtype)
            self._pool = np.concatenate([self._pool, extra]) if start else extra
            free += list(range(start, start + short))
        return free

    def _decode_env(self):
        """GDAL settings while decoding blocks into the cache.

        The cache holds every decoded block already, so for a tiled GeoTIFF
        (cache blocks = the file's blocks) GDAL's own block cache would only keep
        a second copy of each, in fresh memory: it is switched off while reading.
        Strips read in pieces keep it, so that GDAL decodes each strip once.
        """
        if self._gdal_cache_needed:
            return contextlib.nullcontext()
        return rasterio.Env(GDAL_CACHEMAX=0)

    def _decode(self, block_id: int, slot: int) -> None:
        bh, bw = self.block_shape
        bi, bj = divmod(block_id, self._nbcols)
        r0, c0 = bi * bh, bj * bw
        h, w = min(bh, self.height - r0), min(bw, self.width - c0)
        window = Window(c0, r0, w, h)
        out = self._pool[slot]
        try:
            if h == bh and w == bw and self._same_dtype:
                self._ds.read(1, window=window, out=out)  # decode straight into the cache
            else:
                out[:h, :w] = self._ds.read(1, window=window)
                out[h:, :] = np.nan
                out[:, w:] = np.nan
        except (RasterioError, CPLE_BaseError) as exc:  # truncated or corrupt: a block fails
            first = _gdal_reason(exc)
            raise DEMError(f"{self.path}: cannot read the pixels of rows {r0}-{r0 + h - 1}, "
                           f"columns {c0}-{c0 + w - 1}: the file is truncated or corrupt "
                           f"({first})") from None
        self.blocks_read += 1


def _gdal_reason(exc: BaseException) -> str:
    """GDAL's own reason for a failed read (rasterio's message points to the exception before)."""
    for e in (exc.__cause__, exc.__context__, exc):
        text = str(e or "").strip()
        if text and "see previous exception" not in text.lower():
            return text.splitlines()[0].rsplit(": ", 1)[-1].rstrip(".")
    return type(exc).__name__


def _distinct(ids: list[np.ndarray], n: int) -> np.ndarray:
    """Sorted distinct values of arrays of non-negative integers below ``n``."""
    size = sum(i.size for i in ids)
    if size == 0:  # no points (e.g. an empty sample): no blocks
        return np.zeros(0, np.intp)
    if size * 8 < n:  # few ids among very many blocks: sort them
        s = np.sort(np.concatenate([i.ravel() for i in ids]))
        return s[np.concatenate([[True], s[1:] != s[:-1]])]
    seen = np.zeros(n, bool)
    for i in ids:
        seen[i] = True
    return np.flatnonzero(seen)
