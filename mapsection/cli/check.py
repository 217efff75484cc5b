"""``mapsection check``: the four tests of a section, as a table, with an exit code."""

from __future__ import annotations

import math
from pathlib import Path

import click

from .. import CAUTION
from ..checks import units_worst
from ..errors import CheckError
from ._common import warn


def _num(v, fmt: str) -> str:
    return "-" if v is None or (isinstance(v, float) and not math.isfinite(v)) else format(v, fmt)


def summary_lines(report) -> list[str]:
    """One line per test: name, PASS/FAIL and its key figures against the thresholds."""
    d = report.to_dict()
    t = report.thresholds
    topo, rest, area, kin = (d[k] for k in ("topography", "restoration", "area_balance",
                                             "kinematics"))
    unit, worst = units_worst(area.get("units"))
    fit = area.get("detachment") or {}
    unpaired = (len(topo.get("unpaired_map_contacts") or [])
                + len(topo.get("unpaired_section_contacts") or []))
    n_kin = len(kin.get("failures") or [])
    figures = {
        "topography": (
            f"contact RMS {_num(topo.get('contact_rms_m'), '.1f')} m "
            f"(<= {_num(topo.get('contact_threshold_m'), '.1f')}), "
            f"unit agreement {_num(topo.get('unit_agreement'), '.3f')} "
            f"(>= {t.unit_agreement:.2f}), dip RMS {_num(topo.get('dip_rms_deg'), '.1f')} deg "
            f"(<= {t.dip_rms_deg:g}), unpaired contacts "
            f"{unpaired} (<= {topo.get('max_unpaired')})"
        ),
        "restoration": (
            f"shortening {_num(rest.get('shortening_pct'), '.1f')} % "
            f"({_num(rest.get('shortening_m'), '.0f')} m), line-length spread "
            f"{_num(rest.get('line_length_mismatch_pct'), '.2f')} % "
            f"(<= {t.line_length_spread_pct:g})"
        ),
        "area_balance": (
            f"worst unit mismatch {_num(worst, '.2f')} %{f' ({unit})' if unit else ''} "
            f"(<= {t.area_mismatch_pct:g}), depth to detachment "
            f"{_num(fit.get('depth_to_detachment_m'), '.0f')} m"
        ),
        "kinematics": (f"{n_kin} inconsistenc{'y' if n_kin == 1 else 'ies'}, transport "
                       f"{kin.get('transport_direction') or '-'}, "
                       f"{len(kin.get('fault_bend_folds') or [])} fault-bend fold(s) compared"),
    }
    lines = [f"section {d['section']} (method {d['method']}, VE {report.ve:g})",
             f"  {'test':<13} {'result':<6} figures (thresholds)"]
    for k, text in figures.items():
        lines.append(f"  {k:<13} {'PASS' if d[k]['passed'] else 'FAIL':<6} {text}")
    return lines


def _gpkg_layers_and_section(path: Path) -> tuple[list[str], str]:
    """The layers of a section.gpkg and the section name 'build' recorded in it (or "")."""
    import pyogrio

    if not path.is_file():
        raise CheckError(f"{path}: no such section file")
    try:
        layers = [str(row[0]) for row in pyogrio.list_layers(path)]
        meta = (pyogrio.read_info(path, layer=layers[0]).get("dataset_metadata")
                if layers else None) or {}
    except Exception as exc:  # pyogrio raises several kinds for unreadable files
        first = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        raise CheckError(f"{path}: not a readable GeoPackage ({first})") from None
    if "horizons" not in layers:
        raise CheckError(f"{path}: has no layer 'horizons' (layers: {', '.join(layers) or 'none'})")
    return layers, str(meta.get("mapsection_section", "") or "")


def _infer_section(project, path: Path):
    """The section a section.gpkg belongs to: the only one, the one recorded in the file by
    'mapsection build', or the name of its build folder (OUTDIR/<section>/section.gpkg)."""
    if len(project.sections) == 1:
        return project.sections[0]
    names = [s.name for s in project.sections]
    _, recorded = _gpkg_layers_and_section(path)
    for candidate in (recorded, path.parent.name):
        if candidate in names:
            return project.section(candidate)
    raise CheckError(
        f"{path}: cannot tell which of the sections {', '.join(names)} it holds; "
        f"give --section NAME"
    )


def edited_draft(project, spec, path: Path, warn_fn=warn):
    """A draft whose horizons and faults come from a section.gpkg, checked against real data.

    The profile, surface geology and dips are re-derived from the project's DEM,
    map and attitudes, so the topography test still compares with the real ground.
    """
    from ..export import read_section_gpkg
    from ..session import SectionSession

    _, recorded = _gpkg_layers_and_section(path)
    if recorded and recorded != spec.name:
        warn_fn(f"{path}: was built for section {recorded!r}; checking it as section "
                f"{spec.name!r} as asked")
    with SectionSession.from_project(project, spec, warn=warn_fn) as session:
        data = session.run()
    draft = read_section_gpkg(path, project.column, data.line, spec.name, profile=data.profile,
                              geology=data.geology, dips=data.dips)
    return draft


def check_section(project, spec, from_path: Path | None = None, warn_fn=warn):
    """Build (or read back) one section and run the four tests on it."""
    from ..checks import run_checks

    if from_path is None:
        from ..build import build_section

        draft = build_section(project, spec, warn=warn_fn)
    else:
        draft = edited_draft(project, spec, from_path, warn_fn)
    return draft, run_checks(draft, project.thresholds, pin=spec.pin, loose=spec.loose)


def _write_html(path: Path, draft, report) -> Path:
    """report.html with its figures drawn in a scratch folder and embedded."""
    import tempfile

    from ..checks import write_check_figures
    from ..figure import draw_section
    from ..report import write_report

    with tempfile.TemporaryDirectory(prefix="mapsection-check-") as tmp:
        drawn = draw_section(draft, Path(tmp) / "section", formats=("png",))
        figures = {"section": Path(drawn[0])}
        figures.update(write_check_figures(report, draft, tmp))
        return write_report(path, draft, report, figures)


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

    Exit code 0 when every test passes, 1 when any test fails, 2 for bad input.
    Thresholds are set in the [checks] table of the project file.

    \b
    Examples (the sample area):
      mapsection check sample_area/project.toml
      mapsection check sample_area/project_flawed.toml --section A
      mapsection build sample_area/project.toml -o out
      mapsection check sample_area/project.toml --from out/A/section.gpkg
    """
    from ..checks import write_checks_json
    from ..project import load_project

    project = load_project(project_file)
    if section_name is not None:
        specs = [project.section(section_name)]
    elif from_path is not None:
        specs = [_infer_section(project, from_path)]
    else:
        specs = list(project.sections)
    if (json_path or html_path) and len(specs) > 1:
        raise CheckError("--json/--html: write one section at a time; add --section NAME")

    all_passed = True
    for spec in specs:
        draft, report = check_section(project, spec, from_path)
        for line in summary_lines(report):
            click.echo(line)
        all_passed &= report.passed
        if json_path is not None:
            write_checks_json(report, json_path)
        if html_path is not None:
            _write_html(html_path, draft, report)
    click.echo("all tests pass" if all_passed else "some tests FAIL")
    click.get_current_context().exit(0 if all_passed else 1)
