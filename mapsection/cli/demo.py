"""``mapsection demo``: build the invented sample area, to see every output at once."""

from __future__ import annotations

import tempfile
from pathlib import Path

import click

from ..caution import CAUTION
from ._common import note, warn
from ._progress import start_progress


@click.command(
    "demo",
    epilog=f"CAUTION: {CAUTION}",
    context_settings={"help_option_names": ["-h", "--help"]},
)
@click.option("-o", "--output", "outdir", required=True, metavar="OUTDIR",
              help="Folder receiving one sub-folder per section (created if missing).")
def command(outdir: str) -> None:
    """Build every section of the sample area (invented data) into OUTDIR, and its flawed variant.

    Uses sample_area/project.toml of the source tree; when mapsection is installed
    without it, the sample area is generated afresh into a temporary folder first.
    Each OUTDIR/<section>/ holds section.gpkg, section_3d.gpkg, section.png/.svg/.pdf,
    restored.png/.svg/.pdf, the incremental sequence, build.log, checks.json and
    report.html, as 'mapsection build' writes them. OUTDIR/flawed/ holds the same for
    sample_area/project_flawed.toml, whose column has one unit 40 % too thick: its
    sections fail the topography test, as they should. OUTDIR/unconformity/ holds the
    second sample area (sample_unconformity/project.toml): a folded older sequence under an
    angular unconformity, flat-lying younger beds and valley alluvium, each sequence
    constructed and restored on its own. The summary lines give each
    test's verdict per section: PASS, FAIL or NOT TESTED (nothing to measure; never
    counted as a pass).

    \b
    Example:
      mapsection demo -o demo_out
    """
    from ..outputs import check_output

    check_output(outdir, ())  # an empty OUTDIR would be the current folder
    start_progress()
    from ..build import build_project
    from ..checking import result_line
    from ..sample import sample_project

    out = Path(outdir)
    with tempfile.TemporaryDirectory(prefix="mapsection-sample-") as tmp:
        project = sample_project()
        if project is None:
            from ..sample import generate

            note("sample_area/ not found beside the package: generating it")
            project = generate(tmp)["project.toml"]
        flawed = project.with_name("project_flawed.toml")
        runs = [("sample area", project, out)]
        if flawed.is_file():
            runs.append(("flawed variant (one unit 40 % too thick)", flawed, out / "flawed"))
        from ..sample_unconformity import unconformity_project

        second = unconformity_project()
        if second is None:
            from ..sample_unconformity import generate as generate_second

            note("sample_unconformity/ not found beside the package: generating it")
            second = generate_second(Path(tmp) / "unconformity")["project.toml"]
        runs.append(("second sample area (an angular unconformity, valley alluvium)", second,
                     out / "unconformity"))
        for title, proj, dest in runs:
            click.echo(f"{title}: {proj.name}")  # first: this project's warnings follow it
            summaries: dict = {}
            folders = build_project(proj, dest, warn=warn, note=note, summaries=summaries)
            for folder in folders:
                click.echo(f"  {folder}: {result_line(summaries[folder])}")
    click.echo(f"CAUTION: {CAUTION}")
