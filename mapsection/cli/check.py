"""``mapsection check``: the four tests of a section, as a table, with an exit code."""

from __future__ import annotations

from pathlib import Path

import click

from ..caution import CAUTION
from ..checking import plan_checks, summary_lines, verdict_line
from ._common import warn
from ._progress import start_progress


@click.command(
    "check",
    epilog=f"CAUTION: {CAUTION}",
    context_settings={"help_option_names": ["-h", "--help"]},
)
@click.argument("project_file", metavar="PROJECT.toml")
@click.option("--section", "section_name", metavar="NAME",
              help="Check only this section [default: every section of the project].")
@click.option("--from", "from_path", metavar="SECTION_GPKG",
              type=click.Path(dir_okay=False, path_type=Path),
              help="Check the horizons and faults of this section.gpkg (e.g. edited in a GIS) "
                   "instead of building the section.")
@click.option("--json", "json_path", metavar="FILE", type=click.Path(),
              help="Also write the results as JSON (one section only).")
@click.option("--html", "html_path", metavar="FILE", type=click.Path(),
              help="Also write a self-contained HTML report with its figures (one section only).")
def command(project_file: str, section_name: str | None, from_path: Path | None,
            json_path: str | None, html_path: str | None) -> None:
    """Run the topography, restoration, area-balance and kinematics tests and print a table.

    Without --from, each section is built from the project's data exactly as
    'mapsection build' builds it and then checked. With --from, the horizons
    and faults are read from a section.gpkg (as written by 'mapsection build',
    possibly edited by hand in a GIS) and not rebuilt; the ground profile, the
    map's contacts and the dips still come from the project's DEM, map and
    attitudes. With several sections in the project, --from checks the section
    named by --section, else the one recorded in the file by 'mapsection build',
    else the one its folder is named after (OUTDIR/<section>/section.gpkg).

    --json and --html write the checks.json and report.html that 'mapsection build'
    writes for the same section.

    Each test is PASS, FAIL or NOT TESTED (nothing to measure, with the reason);
    a test that cannot fail for a draft mapsection builds says "holds by
    construction". Exit code 0 when no test fails, 1 when any test fails, 2 for bad
    input; NOT TESTED is no failure, and no pass either. Thresholds are set in the
    [checks] table of the project file.

    \b
    Examples (the sample area):
      mapsection check sample_area/project.toml
      mapsection check sample_area/project_flawed.toml --section A
      mapsection build sample_area/project.toml -o out
      mapsection check sample_area/project.toml --from out/A/section.gpkg
    """
    run = plan_checks(project_file, section_name, from_path, json_path, html_path, warn)
    start_progress()
    for report in run.reports(warn):
        for line in summary_lines(report):
            click.echo(line)
    click.echo(verdict_line(run.statuses))
    click.get_current_context().exit(1 if run.failed else 0)
