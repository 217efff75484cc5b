"""``mapsection demo``: build the invented sample area, to see every output at once."""

from __future__ import annotations

import tempfile
from pathlib import Path

import click

from .. import CAUTION
from ._common import note, warn


def sample_project() -> Path | None:
    """The sample area's project file of a repository checkout, if there is one."""
    import mapsection

    path = Path(mapsection.__file__).resolve().parents[1] / "sample_area" / "project.toml"
    return path if path.is_file() else None


@click.command(
    "demo",
    epilog=f"CAUTION: {CAUTION}",
    context_settings={"help_option_names": ["-h", "--help"]},
)
@click.option("-o", "--output", "outdir", required=True, metavar="OUTDIR",
              help="Folder receiving one sub-folder per section (created if missing).")
def command(outdir: str) -> None:
    """Build every section of the sample area (invented data) into OUTDIR.

    Uses sample_area/project.toml of the source tree; when mapsection is installed
    without it, the sample area is generated afresh into a temporary folder first.
    Each OUTDIR/<section>/ holds section.gpkg, section_3d.gpkg, section.png/.svg/.pdf,
    build.log, checks.json and report.html, as 'mapsection build' writes them.

    \b
    Example:
      mapsection demo -o demo_out
    """
    from ..build import build_project

    project = sample_project()
    with tempfile.TemporaryDirectory(prefix="mapsection-sample-") as tmp:
        if project is None:
            from ..sample import generate

            note("sample_area/ not found beside the package: generating it")
            project = generate(tmp)["project.toml"]
        folders = build_project(project, outdir, warn=warn)
    for folder in folders:
        click.echo(str(folder))
    click.echo(f"CAUTION: {CAUTION}")
