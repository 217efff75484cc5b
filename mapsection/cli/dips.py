"""``mapsection dips``: bedding attitudes projected into a section, with apparent dips."""

from __future__ import annotations

import csv
import dataclasses
from pathlib import Path

import click
import numpy as np
import pyproj

from .. import CAUTION
from .._atomic import atomic_file
from ..attitudes import CONVENTIONS, read_attitudes, reproject_attitudes
from ..dem import Dem
from ..dips import METHODS, in_corridor, project_attitudes
from ..errors import OutputError, ParameterError
from ..foldaxis import fold_axis, recommended_azimuth
from ..line import projected_line, read_line
from ..outputs import check_output, file_inputs
from ._common import note, warn

COLUMNS = ("id", "distance_m", "offset_m", "elevation_m", "strike", "dip", "apparent_dip",
           "x", "y", "poorly_constrained", "overturned")
_FORMAT = {"distance_m": "{:.3f}", "offset_m": "{:.3f}", "elevation_m": "{:.3f}",
           "strike": "{:.4f}", "dip": "{:.4f}", "apparent_dip": "{:.4f}",
           "x": "{:.3f}", "y": "{:.3f}"}


def _cell(name: str, value) -> str:
    if name in ("poorly_constrained", "overturned"):
        return "true" if bool(value) else "false"
    if name in _FORMAT:
        return "" if not np.isfinite(value) else _FORMAT[name].format(float(value))
    return str(value)


def write_dips_csv(dips, path) -> None:
    """Write projected dips as CSV, all-or-nothing."""
    with atomic_file(path) as tmp, open(tmp, "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(COLUMNS)
        cols = [getattr(dips, c) for c in COLUMNS]
        for i in range(len(dips)):
            w.writerow([_cell(c, col[i]) for c, col in zip(COLUMNS, cols, strict=True)])


@click.command(
    "dips",
    epilog=f"CAUTION: {CAUTION}",
    context_settings={"help_option_names": ["-h", "--help"]},
)
@click.argument("attitudes", type=click.Path(dir_okay=False))
@click.argument("line")
@click.option("--dem", "dem_path", required=True, type=click.Path(dir_okay=False),
              help="DEM (GeoTIFF): elevation of each attitude; its CRS is the working CRS.")
@click.option("--corridor", required=True, type=float,
              help="Half-width in metres: attitudes farther from the line are left out.")
@click.option("-o", "--output", required=True, type=click.Path(dir_okay=False),
              help="Output CSV.")
@click.option("--projection", type=click.Choice(METHODS), default="perpendicular",
              show_default=True, help="How attitudes are carried onto the line.")
@click.option("--convention", type=click.Choice(CONVENTIONS), default="rhr", show_default=True,
              help="Attitude convention: right-hand-rule strike, dip direction, or quadrant.")
@click.option("--layer", default=None, help="Layer of a multi-layer vector attitudes file.")
@click.option("--crs", default=None, metavar="CRS",
              help="CRS of LINE when it has none [default: the DEM's].")
def command(attitudes, line, dem_path, corridor, output, projection, convention, layer, crs):
    """Project the bedding attitudes within a corridor into the section plane.

    ATTITUDES is a CSV (x, y, strike, dip; or dip_direction/dip; or quadrant
    text in 'attitude') or a point vector file. LINE is a vector file holding one
    line or 'x1,y1;x2,y2[;...]' (as for 'mapsection profile'; text in --crs,
    default the DEM's CRS). CSV attitude coordinates are in the DEM's CRS; a
    line or vector attitudes file in another CRS is reprojected to it, and that
    is said once. The elevation of each attitude
    is its z column where given, otherwise the DEM at the attitude. For
    --projection plunge the fold axis is computed from the attitudes in the
    corridor (pi-axis, Woodcock 1977) and reported.

    OUT.csv columns: id, distance_m, offset_m, elevation_m, strike, dip,
    apparent_dip (signed: positive descends toward increasing distance), x, y,
    poorly_constrained, overturned.

    \b
    Example:
      mapsection dips sample_area/attitudes.csv "604658,5218819;612195,5213542" \\
          --dem sample_area/dem.tif --corridor 600 -o dips_A.csv
    """
    if not np.isfinite(corridor) or corridor <= 0:
        raise ParameterError(f"--corridor {corridor:g} must be a distance in metres > 0")
    check_output(output, file_inputs(("attitudes file", attitudes), ("line file", line),
                                     ("DEM", dem_path)), file=True)
    if Path(output).is_dir():
        raise OutputError(f"{output}: is a folder; give the name of the CSV file to write")
    with Dem.open(dem_path) as dem:
        try:
            given = pyproj.CRS(crs) if crs is not None else dem.crs
        except pyproj.exceptions.CRSError:
            raise ParameterError(f"--crs {crs!r}: not a known CRS (give e.g. EPSG:32611)") from None
        sl = read_line(line, crs=given)
        if sl.crs is not None and not sl.crs.equals(dem.crs):
            note(f"section line reprojected from {sl.crs.name} to the DEM's CRS ({dem.crs.name})")
            sl = sl.to_crs(dem.crs)
        sl = projected_line(sl, note)  # a geographic DEM: measure in local UTM
        # CSV coordinates are in the DEM's CRS; vector files are reprojected to it.
        att = read_attitudes(attitudes, convention=convention, layer=layer, crs=dem.crs,
                             warn=warn)
        if not att.crs.equals(sl.crs):
            att = reproject_attitudes(att, sl.crs, warn=note, source=attitudes)
        missing = ~np.isfinite(att.z)
        if missing.any():
            z = att.z.copy()
            z[missing] = dem.sample(att.x[missing], att.y[missing], crs=sl.crs)
            att = dataclasses.replace(att, z=z)
    axis = None
    if projection == "plunge":
        mask, _ = in_corridor(att.x, att.y, sl, corridor)
        axis = fold_axis(att.strike[mask], att.dip[mask])
        note(
            f"fold axis from {axis.n} attitudes in the corridor (pi-axis, Woodcock 1977): "
            f"trend {axis.trend:.1f}, plunge {axis.plunge:.1f}, "
            f"cylindricity {axis.cylindricity:.3f}; "
            f"recommended section azimuth {recommended_azimuth(axis):.1f}"
        )
        for why in axis.cylindrical_problems():
            warn(f"down-plunge projection may mislead: {why}")
    dips = project_attitudes(att, sl, corridor, method=projection, axis=axis, warn=warn)
    if len(dips) == 0:
        warn(f"no attitudes within {corridor:g} m of the section line; writing a header only")
    n_nan = int((~np.isfinite(dips.elevation_m)).sum())
    if n_nan:
        warn(f"{n_nan} attitude(s) have no elevation (outside the DEM or on nodata)")
    write_dips_csv(dips, output)
    note(f"wrote {len(dips)} of {len(att)} attitudes to {output}"
         f" ({int(dips.poorly_constrained.sum())} poorly constrained)")
