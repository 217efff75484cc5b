"""``mapsection profile``: the topographic profile along a section line."""

from __future__ import annotations

from pathlib import Path

import click
import numpy as np

from .._messages import human
from ..caution import CAUTION
from ..errors import OutputError, ParameterError
from ..outputs import check_output, file_inputs
from ..tables import write_profile_csv
from ..tasks import line_profile
from ._common import note, warn


def _step(text: str | None) -> float | None:
    if text is None:
        return None
    try:
        return float(text)
    except ValueError:
        raise ParameterError(f"--step {text!r}: must be a number of metres") from None


@click.command(
    "profile",
    epilog=f"CAUTION: {CAUTION}",
    context_settings={"help_option_names": ["-h", "--help"]},
)
@click.argument("dem", metavar="DEM")
@click.argument("line", metavar="LINE")
@click.option(
    "-o", "--output", required=True, metavar="OUT.csv", help="CSV file to write (replaced whole)."
)
@click.option(
    "--step", metavar="METRES", help="Sample spacing along the line [default: DEM pixel size]."
)
@click.option(
    "--crs", metavar="CRS", help="CRS of LINE when it has none [default: the DEM's, if projected]."
)
def command(dem: str, line: str, output: str, step: str | None, crs: str | None) -> None:
    """Sample the DEM along a section line and write the profile as CSV.

    DEM is a raster (GeoTIFF) in any CRS. LINE is a vector file holding one
    LineString (GeoJSON, GeoPackage, Shapefile) or the text "x1,y1;x2,y2[;...]"
    (bends allowed; distance is cumulative along the line). A line in a
    geographic CRS is measured in metres in its local UTM zone. Elevations are
    bilinear between DEM pixel centres; only the DEM blocks the line passes
    through are read.

    OUT.csv columns: distance_m, x, y (in the line's CRS), elevation_m (empty
    where the DEM has nodata or the line leaves it).

    \b
    Example (the sample area's section A):
      mapsection profile sample_area/dem.tif "604658,5218819;612195,5213542" -o profile_A.csv
    \b
    The same line in longitude, latitude (coordinates that start with a minus
    sign go after "--"):
      mapsection profile sample_area/dem.tif --crs EPSG:4326 -o profile_A_lonlat.csv \\
          -- "-115.6204,47.1146;-115.5224,47.0659"
    """
    step_m = _step(step)
    check_output(output, file_inputs(("DEM", dem), ("line file", line)), file=True)
    if Path(output).is_dir():
        raise OutputError(f"{output}: is a folder; give the name of the CSV file to write")
    table = line_profile(dem, line, crs=crs, step=step_m, warn=warn, note=note)
    prof = table.profile
    write_profile_csv(output, prof.distance, table.x, table.y, prof.z, table.digits)
    gaps = int(np.count_nonzero(~np.isfinite(prof.z)))
    note(
        f"wrote {len(prof.distance)} samples every {human(step_m or prof.pixel_size)} m "
        f"along {prof.line.length:.1f} m to {output}" + (f" ({gaps} empty)" if gaps else "")
    )

