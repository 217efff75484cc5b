"""Topographic profile along a section line, sampled from a DEM.

:func:`profile` lays sample points along the line in the line's CRS (metres),
transforms them to the DEM's CRS and interpolates the DEM bilinearly between
pixel centres, reading only the DEM blocks the line passes through.
"""

from __future__ import annotations

import os
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
import pyproj
import shapely
from shapely.geometry import LineString

from ._messages import default_warn as _default_warn
from ._messages import human
from .errors import DEMError, LineError, ParameterError, SettingError
from .line import SectionLine, projected_line
from .readers.dem import Dem
from .readers.line import read_line
from .settings import RANGES

# More samples than this is a mistaken step, not a profile (a 100 km line at 2 mm).
_MAX_SAMPLES = 50_000_000


@dataclass(frozen=True, eq=False)
class Profile:
    """The ground surface along a section line.

    ``distance`` is metres along the line from its first vertex; ``x``, ``y``
    are in the line's CRS; ``z`` is the DEM elevation in metres (NaN where the
    DEM has no data or the line leaves it).
    """

    distance: np.ndarray
    x: np.ndarray
    y: np.ndarray
    z: np.ndarray
    line: SectionLine
    crs: pyproj.CRS | None = None
    pixel_size: float = float("nan")  # the DEM's pixel size in metres

    def elevation_at(self, distance: np.ndarray) -> np.ndarray:
        """Ground elevation at distances along the line (linear between samples, NaN gaps kept)."""
        d = np.asarray(distance, float)
        ok = np.isfinite(self.z)
        z = np.interp(d, self.distance[ok], self.z[ok], left=np.nan, right=np.nan)
        # Keep gaps: a distance whose nearest samples are nodata has no elevation.
        gap = np.interp(d, self.distance, (~ok).astype(float), left=1.0, right=1.0) > 0.5
        return np.where(gap, np.nan, z)




def resolve_line(line, crs, dem: Dem) -> SectionLine:
    """The section line as a SectionLine with a CRS (its own, else ``crs``, else the DEM's)."""
    crs_obj = None
    if crs is not None:
        try:
            crs_obj = pyproj.CRS(crs)
        except pyproj.exceptions.CRSError:
            raise ParameterError(f"CRS {crs!r}: not a known CRS (give e.g. EPSG:32611)") from None
    if isinstance(line, SectionLine):
        sl = line
    elif isinstance(line, LineString):
        sl = SectionLine(shapely.get_coordinates(line), crs_obj)
    elif isinstance(line, (str, os.PathLike)):
        sl = read_line(line, crs=crs_obj)
    else:
        raise LineError(f"section line: cannot use a {type(line).__name__} as a line")
    if sl.crs is None:
        if crs_obj is not None:
            sl = SectionLine(sl.vertices, crs_obj, sl.name)
        elif not dem.crs.is_geographic:
            sl = SectionLine(sl.vertices, dem.crs, sl.name)
        else:
            raise LineError(
                f"section line {sl.name}: has no CRS and the DEM {dem.path.name} is geographic; "
                "give the line's CRS (--crs)".replace("line :", "line:")
            )
    return sl


def profile(dem: Dem | str | os.PathLike, line: SectionLine | LineString | str | os.PathLike,
            step: float | None = None, *, crs: pyproj.CRS | str | None = None,
            warn: Callable[[str], None] | None = None) -> Profile:
    """The ground surface along a section line, sampled from a DEM.

    Samples lie every ``step`` metres along the line and at every vertex, distance
    cumulative over bends; elevations are bilinear between pixel centres of the DEM (see
    :meth:`Dem.sample`), in whatever CRS the DEM is.

    Parameters
    ----------
    dem
        An open :class:`~mapsection.readers.dem.Dem` or the path of a GeoTIFF.
    line
        A SectionLine, a shapely LineString, a vector file holding one LineString, or
        the text ``"x1,y1;x2,y2[;...]"``. Its CRS is its own, else ``crs``, else the
        DEM's when that is projected. A line in a geographic CRS is measured in metres
        in its local UTM zone (said through ``warn``, else on stderr).
    step
        Metres between samples (default: the DEM's pixel size).
    crs
        The line's CRS when it has none.
    warn
        Called with warnings (default: on stderr).

    Returns
    -------
    Profile
        Distances, map points and elevations. Samples off the DEM or on nodata are NaN,
        with a warning; a line wholly off the DEM is a DEMError.

    Examples
    --------
    >>> p = profile("sample_area/dem.tif", "604658,5218819;612195,5213542")  # doctest: +SKIP
    >>> p.distance[-1], p.z.max()  # doctest: +SKIP
    """
    note = warn  # None: projected_line says it on stderr
    warn = warn or _default_warn
    own = not isinstance(dem, Dem)
    d = Dem.open(dem) if own else dem
    try:
        sl = projected_line(resolve_line(line, crs, d), warn=note)
        step = _checked_step(d.pixel_size if step is None else step, sl)
        distance, x, y = _layout(sl, step)
        z, inside = d._sample(x, y, sl.crs)
        _judge_coverage(d, sl, distance, z, inside, warn)
        return Profile(distance, x, y, z, sl, sl.crs, d.pixel_size)
    finally:
        if own:
            d.close()


def _checked_step(step, sl: SectionLine) -> float:
    """``step`` as metres: a number in the setting's range, giving at most _MAX_SAMPLES."""
    try:
        step = float(step)
    except (TypeError, ValueError):
        raise ParameterError(f"step {step!r}: must be a number of metres") from None
    problem = RANGES["step"].problem(step)
    if problem is not None:  # the value first: "step 0: sample step must be ..."
        raise SettingError(f"step {human(step)}", problem)
    if sl.length / step > _MAX_SAMPLES:
        raise ParameterError(
            f"step {human(step)}: gives {sl.length / step:.0f} samples along a "
            f"{sl.length:.1f} m line; use a step of at least "
            f"{human(sl.length / _MAX_SAMPLES)} m"
        )
    return step


def _judge_coverage(d: Dem, sl: SectionLine, distance: np.ndarray, z: np.ndarray,
                    inside: np.ndarray, warn: Callable[[str], None]) -> None:
    """DEMError where the line misses the DEM or its data wholly; a warning where in part."""
    name = f"section line {sl.name}".rstrip()
    if not inside.any():
        b = d.bounds
        raise DEMError(
            f"{d.path}: {name} lies wholly outside the DEM (DEM bounds {b.left:.1f}, "
            f"{b.bottom:.1f}, {b.right:.1f}, {b.top:.1f} in {d.crs.name})"
        )
    if not np.isfinite(z).any():
        raise DEMError(f"{d.path}: the DEM has no data along {name}")
    off = ~inside
    if off.any():
        gap = _gap_length(distance, off)
        warn(
            f"{name} leaves the DEM {d.path.name} over about {gap:.0f} m "
            f"of its {sl.length:.0f} m; elevations there are empty"
        )
    nodata = inside & ~np.isfinite(z)
    if nodata.any():
        warn(
            f"{name} crosses nodata in the DEM {d.path.name} over about "
            f"{_gap_length(distance, nodata):.0f} m; elevations there are empty"
        )


def _layout(sl: SectionLine, step: float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Sample distances (``sl.densify(step)``) and their map points, linear between vertices."""
    distance = sl.densify(step)
    x = np.interp(distance, sl.cumulative, sl.vertices[:, 0])
    y = np.interp(distance, sl.cumulative, sl.vertices[:, 1])
    return distance, x, y


def _gap_length(distance: np.ndarray, gap: np.ndarray) -> float:
    """Length of line covered by flagged samples (each sample stands for half its two spacings)."""
    spacing = np.gradient(distance) if len(distance) > 1 else np.ones(1)
    return float(np.sum(spacing[gap]))
