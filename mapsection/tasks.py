"""The library tasks behind the single-purpose commands ``profile``, ``dips`` and ``axis``:
each reads its inputs, computes, and returns values; the command only parses its options,
calls one of these and echoes (files are written by :mod:`mapsection.tables`).

Examples
--------
>>> from mapsection.tasks import bedding_axis, corridor_dips, line_profile
>>> table = line_profile("sample_area/dem.tif", "604658,5218819;612195,5213542")  # doctest: +SKIP
>>> found = corridor_dips("sample_area/attitudes.csv", "604658,5218819;612195,5213542",
...                       "sample_area/dem.tif", 600.0)  # doctest: +SKIP
>>> axis = bedding_axis("sample_area/attitudes.csv")  # doctest: +SKIP
"""

from __future__ import annotations

import os
from dataclasses import dataclass

import numpy as np
import pyproj
import shapely

from ._messages import default_note, default_warn
from .attitudes import Attitudes, reproject_attitudes, with_ground_elevations
from .crs import same_crs, transformer
from .dips import ProjectedDips, in_corridor, project_attitudes
from .errors import AttitudeError, ParameterError
from .foldaxis import FoldAxis, fold_axis, recommended_azimuth
from .line import SectionLine, projected_line
from .notes import Warn
from .readers.attitudes import read_attitudes
from .readers.dem import Dem
from .readers.line import read_line
from .readers.polygons import read_area
from .topo_profile import Profile, profile, resolve_line


@dataclass(frozen=True, eq=False)
class ProfileTable:
    """A profile and its sample positions in the CRS the line was given in (``digits``:
    decimals those positions are written with: 8 for degrees, 3 for metres)."""

    profile: Profile
    x: np.ndarray
    y: np.ndarray
    digits: int


def line_profile(dem: str | os.PathLike | Dem, line, *, crs=None, step: float | None = None,
                 warn: Warn | None = None, note: Warn | None = None) -> ProfileTable:
    """The topographic profile along ``line``, its positions back in the line's own CRS.

    Parameters
    ----------
    dem
        A DEM path or an open :class:`~mapsection.readers.dem.Dem`.
    line
        A vector file holding one line, ``"x1,y1;x2,y2[;...]"`` text, or a SectionLine.
    crs
        The CRS of ``line`` when it has none (default: the DEM's, when projected).
    step
        Metres between samples (default: the DEM's pixel size).
    warn, note
        Called with warnings and with notes (a geographic line measured in UTM).

    Returns
    -------
    ProfileTable
        The profile (measured in metres) and x, y in the CRS the line was given in.

    Examples
    --------
    >>> table = line_profile("sample_area/dem.tif", "604658,5218819;612195,5213542",
    ...                      step=25.0)  # doctest: +SKIP
    >>> table.profile.z[:3]  # doctest: +SKIP
    """
    own = not isinstance(dem, Dem)
    d = Dem.open(dem, warn=warn) if own else dem
    try:
        given = resolve_line(line, crs, d)
        prof = profile(d, projected_line(given, warn=note), step, warn=warn)
    finally:
        if own:
            d.close()
    x, y, digits = prof.x, prof.y, 3
    if given.crs.is_geographic:
        # Report positions in the CRS the line was given in.
        x, y = transformer(prof.crs, given.crs).transform(x, y)
        digits = 8
    return ProfileTable(prof, np.asarray(x), np.asarray(y), digits)


@dataclass(frozen=True, eq=False)
class CorridorDips:
    """Projected dips, how many attitudes were read, and the fold axis (plunge projection)."""

    dips: ProjectedDips
    n_read: int
    axis: FoldAxis | None = None


def corridor_dips(attitudes: str | os.PathLike, line, dem: str | os.PathLike, corridor: float,
                  *, projection: str = "perpendicular", convention: str = "rhr",
                  layer: str | None = None, crs=None, warn: Warn | None = None,
                  note: Warn | None = None) -> CorridorDips:
    """The attitudes within ``corridor`` metres of ``line`` projected into its section plane.

    The DEM's CRS is the working CRS: the line (text in ``crs``, default the DEM's) and
    a vector attitudes file in another CRS are reprojected to it, and CSV coordinates
    are taken to be in it. An attitude without elevation gets the DEM's. For the
    ``plunge`` projection the fold axis of the attitudes in the corridor is computed
    (pi-axis, Woodcock 1977) and said through ``note``.

    Parameters
    ----------
    attitudes
        CSV or point vector file of bedding attitudes.
    line
        A vector file holding one line or ``"x1,y1;x2,y2[;...]"`` text.
    dem
        The DEM (GeoTIFF).
    corridor
        Half-width in metres.
    projection, convention, layer
        As for :func:`mapsection.dips.project_attitudes` and
        :func:`mapsection.readers.attitudes.read_attitudes`.
    crs
        The CRS of ``line`` when it has none (default: the DEM's).
    warn, note
        Called with warnings and with notes.

    Returns
    -------
    CorridorDips

    Examples
    --------
    >>> found = corridor_dips("sample_area/attitudes.csv", "604658,5218819;612195,5213542",
    ...                       "sample_area/dem.tif", 600.0)  # doctest: +SKIP
    >>> len(found.dips), found.n_read  # doctest: +SKIP
    """
    warn, note = warn or default_warn, note or default_note
    with Dem.open(dem, warn=warn) as d:
        sl, att = _line_and_attitudes(line, attitudes, d, crs, convention, layer, warn, note)
    axis = _corridor_axis(att, sl, corridor, warn, note) if projection == "plunge" else None
    dips = project_attitudes(att, sl, corridor, method=projection, axis=axis, warn=warn)
    if len(dips) == 0:
        warn(f"no attitudes within {corridor:g} m of the section line; writing a header only")
    n_nan = int((~np.isfinite(dips.elevation_m)).sum())
    if n_nan:
        warn(f"{n_nan} attitude(s) have no elevation (outside the DEM or on nodata)")
    return CorridorDips(dips, len(att), axis)


def _line_and_attitudes(line, attitudes: str | os.PathLike, d: Dem, crs, convention: str,
                        layer: str | None, warn: Warn, note: Warn) -> tuple[SectionLine, Attitudes]:
    """The line and the attitudes read in the DEM's CRS (a geographic DEM: local UTM), the
    attitudes without elevation given the DEM's."""
    try:
        given = pyproj.CRS(crs) if crs is not None else d.crs
    except pyproj.exceptions.CRSError:
        raise ParameterError(f"--crs {crs!r}: not a known CRS (give e.g. EPSG:32611)") from None
    sl = read_line(line, crs=given)
    if not same_crs(sl.crs, d.crs):
        note(f"section line reprojected from {sl.crs.name} to the DEM's CRS ({d.crs.name})")
        sl = sl.to_crs(d.crs)
    sl = projected_line(sl, note)  # a geographic DEM: measure in local UTM
    # CSV coordinates are in the DEM's CRS; vector files are reprojected to it.
    att = read_attitudes(attitudes, convention=convention, layer=layer, crs=d.crs, warn=warn)
    if not same_crs(att.crs, sl.crs):
        att = reproject_attitudes(att, sl.crs, warn=note, source=str(attitudes))
    att, _ = with_ground_elevations(att, d, sl.crs)
    return sl, att


def _corridor_axis(att: Attitudes, line: SectionLine, corridor: float, warn: Warn,
                   note: Warn) -> FoldAxis:
    mask, _ = in_corridor(att.x, att.y, line, corridor)
    axis = fold_axis(att.strike[mask], att.dip[mask],
                     source=f"{att.source}, {int(mask.sum())} within the corridor")
    note(
        f"fold axis from {axis.n} attitudes in the corridor (pi-axis, Woodcock 1977): "
        f"trend {axis.trend:.1f}, plunge {axis.plunge:.1f}, "
        f"cylindricity {axis.cylindricity:.3f}; "
        f"recommended section azimuth {recommended_azimuth(axis):.1f}"
    )
    for why in axis.cylindrical_problems():
        warn(f"down-plunge projection may mislead: {why}")
    return axis


def bedding_axis(attitudes: str | os.PathLike, *, within: str | os.PathLike | None = None,
                 convention: str = "rhr", layer: str | None = None,
                 warn: Warn | None = None) -> FoldAxis:
    """The fold axis (pi-axis, Woodcock 1977) of the attitudes of a file, or of those
    inside the polygons of ``within``.

    Examples
    --------
    >>> axis = bedding_axis("sample_area/attitudes.csv")  # doctest: +SKIP
    >>> round(axis.trend), round(axis.plunge)  # doctest: +SKIP
    """
    att = read_attitudes(attitudes, convention=convention, layer=layer, warn=warn)
    if within is not None:
        area, area_crs = read_area(within)
        x, y = att.x, att.y
        if not same_crs(area_crs, att.crs):
            x, y = transformer(att.crs, area_crs).transform(x, y)
        mask = shapely.contains_xy(area, x, y) | shapely.intersects_xy(area.boundary, x, y)
        if not mask.any():
            raise AttitudeError(f"{attitudes}: no attitudes inside the polygons of {within}")
        att = att.subset(mask)
    where = att.source + (f", {len(att)} inside {within}" if within is not None else "")
    return fold_axis(att.strike, att.dip, source=where)


__all__ = ["CorridorDips", "ProfileTable", "bedding_axis", "corridor_dips", "line_profile"]
