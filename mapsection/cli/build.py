"""``mapsection build``: draft sections of a project, with figures, GeoPackages and checks."""

from __future__ import annotations

import click

from ..caution import CAUTION
from ..settings import METHODS
from ._common import note, warn
from ._progress import start_progress


@click.command(
    "build",
    epilog=f"CAUTION: {CAUTION}",
    context_settings={"help_option_names": ["-h", "--help"]},
)
@click.argument("project", metavar="PROJECT.toml", type=click.Path(dir_okay=False))
@click.option("-o", "--output", "outdir", required=True, metavar="OUTDIR",
              help="Folder receiving one sub-folder per section (created if missing).")
@click.option("--section", metavar="NAME", help="Build only the section of this name.")
@click.option("--method", type=click.Choice(METHODS),
              help="Construction method for every section [default: each section's own].")
@click.option("--ve", type=click.FloatRange(min=0.0, min_open=True), metavar="FACTOR",
              help="Vertical exaggeration of the figures [default: each section's own, 1].")
@click.option("--sheet", metavar="NAME",
              help="Sheet of the section figure: A4, A3, A2, A1, A0, letter or tabloid, "
                   "landscape [default: each section's own, A3].")
@click.option("--scale", metavar="N",
              help="Horizontal scale 1:N of the figure (25000 or 1:25000) [default: each "
                   "section's own, else the largest of 1:5,000, 1:10,000, 1:25,000, "
                   "1:50,000, 1:100,000 ... at which the section fits the sheet].")
@click.option("--portrait", is_flag=True, default=None,
              help="Portrait sheet (map, legend and title block under the section).")
@click.option("--workers", type=click.IntRange(min=1), metavar="N",
              help="Sections built at once, each in its own process (1: one after "
                   "another) [default: the MAPSECTION_WORKERS environment variable, else "
                   "one per CPU core].")
def command(project: str, outdir: str, section: str | None, method: str | None,
            ve: float | None, sheet: str | None = None, scale: str | None = None,
            portrait: bool | None = None, workers: int | None = None) -> None:
    """Construct the draft section of each section line of a project and write its outputs.

    For every [[section]] of PROJECT.toml (or the one named with --section), the
    beds are carried to depth by the kink-band (dip-domain) method or by Busk arcs,
    and OUTDIR/<section name>/ receives: section.gpkg (the section in section space:
    x = distance along the line, y = elevation, in metres), section_3d.gpkg (the
    same horizons and faults as 3D lines in the project CRS), section.png/.svg/.pdf
    (the figure), build.log, and the balance checks: checks.json, report.html,
    restored.png/.svg/.pdf, area_depth.png and sequence/ (frames and a GIF).
    A previous build of a section is replaced only once the new one is complete;
    a folder there that is not a previous build (no build.log of a build) is never
    replaced, nor one that is or holds an input. A second build into OUTDIR waits
    for the first. Progress goes to stderr; stdout gets one line per section
    folder with its tests' verdicts (PASS, FAIL or NOT TESTED); a failed test is a
    result, not an error: the exit code is 0 once the outputs are written (see
    'mapsection check' for an exit code that follows the tests).

    \b
    Example (the sample area):
      mapsection build sample_area/project.toml -o out
      mapsection build sample_area/project.toml -o out --section B --method arc --ve 2
      mapsection build sample_area/project.toml -o out --sheet A2 --scale 1:25000
    """
    start_progress()
    from ..build import build_project
    from ..checking import result_line

    summaries: dict = {}
    folders = build_project(project, outdir, section=section, method=method, ve=ve, warn=warn,
                            note=note, summaries=summaries, sheet=sheet, scale=scale,
                            portrait=portrait or None, workers=workers)
    for folder in folders:
        # the line demo prints for a section: PASS, FAIL or NOT TESTED (never a pass unmeasured)
        click.echo(f"{folder}: {result_line(summaries[folder])}" if folder in summaries
                   else str(folder))
    note(f"built {len(folders)} section(s); each is a draft to be reviewed")
