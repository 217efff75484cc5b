"""``mapsection dips``: bedding attitudes projected into a section, with apparent dips."""

from __future__ import annotations

from pathlib import Path

import click

from ..caution import CAUTION
from ..errors import OutputError
from ..outputs import check_output, file_inputs
from ..settings import CONVENTIONS, PROJECTIONS, check_number, large_note
from ..tables import write_dips_csv
from ..tasks import corridor_dips
from ._common import note, warn


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
@click.option("--projection", type=click.Choice(PROJECTIONS), default="perpendicular",
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
    check_number("corridor", corridor)
    if (large := large_note("corridor", corridor)) is not None:
        warn(f"--corridor: {large}")
    check_output(output, file_inputs(("attitudes file", attitudes), ("line file", line),
                                     ("DEM", dem_path)), file=True)
    if Path(output).is_dir():
        raise OutputError(f"{output}: is a folder; give the name of the CSV file to write")
    found = corridor_dips(attitudes, line, dem_path, corridor, projection=projection,
                          convention=convention, layer=layer, crs=crs, warn=warn, note=note)
    dips = found.dips
    write_dips_csv(dips, output)
    note(f"wrote {len(dips)} of {found.n_read} attitudes to {output}"
         f" ({int(dips.poorly_constrained.sum())} poorly constrained)")
