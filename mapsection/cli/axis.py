"""``mapsection axis``: the fold axis (pi-axis) of bedding attitudes."""

from __future__ import annotations

import click

from ..caution import CAUTION
from ..foldaxis import MIN_CYLINDRICITY, recommended_azimuth
from ..settings import CONVENTIONS
from ..tasks import bedding_axis
from ._common import warn


@click.command(
    "axis",
    epilog=f"CAUTION: {CAUTION}",
    context_settings={"help_option_names": ["-h", "--help"]},
)
@click.argument("attitudes", type=click.Path(dir_okay=False))
@click.option("--within", "within", type=click.Path(dir_okay=False), default=None,
              help="Polygon vector file: use only the attitudes inside it (e.g. one fold).")
@click.option("--convention", type=click.Choice(CONVENTIONS), default="rhr", show_default=True,
              help="Attitude convention: right-hand-rule strike, dip direction, or quadrant.")
@click.option("--layer", default=None, help="Layer of a multi-layer vector attitudes file.")
def command(attitudes, within, convention, layer):
    """Fold axis of the bedding: the pi-axis of the pole orientation tensor (Woodcock 1977).

    Prints the axis trend and plunge, the normalised eigenvalues, the
    cylindricity, and the section azimuth it recommends (perpendicular to the
    trend); warns when the data are not cylindrical enough for down-plunge
    projection.

    \b
    Example:
      mapsection axis sample_area/attitudes.csv
    """
    ax = bedding_axis(attitudes, within=within, convention=convention, layer=layer, warn=warn)
    s1, s2, s3 = ax.eigenvalues
    rec = recommended_azimuth(ax)
    click.echo(f"fold axis (pi-axis, Woodcock 1977) from {ax.n} attitudes")
    click.echo(f"trend: {ax.trend:.1f}  plunge: {ax.plunge:.1f}")
    click.echo(f"eigenvalues: S1 {s1:.4f}  S2 {s2:.4f}  S3 {s3:.4f}")
    click.echo(
        f"cylindricity (1 - S3/S2): {ax.cylindricity:.3f} (>= {MIN_CYLINDRICITY} wanted); "
        f"Woodcock C = ln(S1/S3): {ax.woodcock_c:.2f}, K = ln(S1/S2)/ln(S2/S3): "
        f"{ax.woodcock_k:.2f}"
    )
    click.echo(
        f"recommended section azimuth: {rec:.1f} (or {(rec + 180) % 360:.1f}), "
        "perpendicular to the axis trend"
    )
    problems = ax.cylindrical_problems()
    for why in problems:
        warn(f"not cylindrical enough for down-plunge projection: {why}")
    if not problems:
        click.echo("cylindrical enough for down-plunge projection")
