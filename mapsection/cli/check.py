"""``mapsection check``: the four tests of a section, as a table, with an exit code."""

from __future__ import annotations

from pathlib import Path

import click

from .. import CAUTION
from ..checking import check_section, infer_section, summary_lines
from ..errors import CheckError
from ._common import warn


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
@click.option("--json", "json_path", metavar="FILE", type=click.Path(path_type=Path),
              help="Also write the results as JSON (one section only).")
@click.option("--html", "html_path", metavar="FILE", type=click.Path(path_type=Path),
              help="Also write a self-contained HTML report with its figures (one section only).")
def command(project_file: str, section_name: str | None, from_path: Path | None,
            json_path: Path | None, html_path: Path | None) -> None:
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

    Exit code 0 when every test passes, 1 when any test fails, 2 for bad input.
    Thresholds are set in the [checks] table of the project file.

    \b
    Examples (the sample area):
      mapsection check sample_area/project.toml
      mapsection check sample_area/project_flawed.toml --section A
      mapsection build sample_area/project.toml -o out
      mapsection check sample_area/project.toml --from out/A/section.gpkg
    """
    from ..project import load_project
    from ..render.section_folder import write_check_report, write_checks_json
    from ..session import load_inputs

    project = load_project(project_file)
    if section_name is not None:
        specs = [project.section(section_name)]
    elif from_path is not None:
        specs = [infer_section(project, from_path)]
    else:
        specs = list(project.sections)
    if (json_path or html_path) and len(specs) > 1:
        raise CheckError("--json/--html: write one section at a time; add --section NAME")

    all_passed = True
    # The report's section figure has its location inset on the map, as a build's has.
    inputs = load_inputs(project, warn) if html_path is not None else None
    try:
        for spec in specs:
            draft, report = check_section(project, spec, from_path, warn, inputs=inputs)
            for line in summary_lines(report):
                click.echo(line)
            all_passed &= report.passed
            if json_path is not None:
                write_checks_json(report, json_path)
            if html_path is not None:
                from ..build import sheet_options, title_info

                # The same sheet and title block as a build's figure of the section.
                write_check_report(html_path, draft, report, inputs.map_data,
                                   sheet=sheet_options(spec, draft),
                                   info=title_info(project, inputs.dem.crs))
    finally:
        if inputs is not None:
            inputs.close()
    click.echo("all tests pass" if all_passed else "some tests FAIL")
    click.get_current_context().exit(0 if all_passed else 1)
