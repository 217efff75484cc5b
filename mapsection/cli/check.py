"""``mapsection check``: the four tests of a section, as a table, with an exit code."""

from __future__ import annotations

from pathlib import Path

import click

from ..caution import CAUTION
from ..checking import check_section, infer_section, summary_lines, verdict_line
from ..errors import CheckError
from ._common import warn
from ._progress import start_progress


def _outputs(project, from_path: Path | None, json_path: str | None, html_path: str | None
             ) -> tuple[Path | None, Path | None]:
    """--json and --html as paths, once sure that neither replaces an input or the other."""
    from ..outputs import check_distinct, check_output, project_inputs

    sources = [*project_inputs(project), ("--from file", from_path)]
    for option, path in (("--json", json_path), ("--html", html_path)):
        if path is not None:
            check_output(path, sources, option=option, file=True)
    check_distinct([("--json", json_path), ("--html", html_path)])
    return (None if json_path is None else Path(json_path),
            None if html_path is None else Path(html_path))


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
    from ..project import load_project
    from ..render.section_folder import write_check_report, write_checks_json
    from ..session import load_inputs

    project = load_project(project_file, warn)
    if section_name is not None:
        specs = [project.section(section_name)]
    elif from_path is not None:
        specs = [infer_section(project, from_path)]
    else:
        specs = list(project.sections)
    if (json_path or html_path) and len(specs) > 1:
        raise CheckError("--json/--html: write one section at a time; add --section NAME")
    json_path, html_path = _outputs(project, from_path, json_path, html_path)
    start_progress()

    statuses: list[str] = []
    # Read once for every section: the report's section figure has its location inset on
    # the map, and a failed topography test's diagnosis looks at the attitudes nearby.
    inputs = load_inputs(project, warn, specs)  # the sections' neighbourhood of the map
    try:
        for spec in specs:
            draft, report = check_section(project, spec, from_path, warn, inputs=inputs)
            for line in summary_lines(report):
                click.echo(line)
            statuses += report.statuses.values()
            if json_path is not None:
                write_checks_json(report, json_path)
            if html_path is not None:
                from ..build import sheet_options, title_info

                # The same sheet and title block as a build's figure of the section.
                write_check_report(html_path, draft, report, inputs.map_data,
                                   sheet=sheet_options(spec, draft),
                                   info=title_info(project, inputs.dem.crs))
    finally:
        inputs.close()
    click.echo(verdict_line(statuses))
    click.get_current_context().exit(1 if "fail" in statuses else 0)
