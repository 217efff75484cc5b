"""Checking a section from a project: build or read back a draft, run the four tests, summarise.

This is what ``mapsection check`` and ``mapsection demo`` call; use it from Python the same
way::

    from mapsection.checking import check_section, summary_lines
    from mapsection.project import load_project

    project = load_project("sample_area/project.toml")
    draft, report = check_section(project, project.section("A"))
    print("\n".join(summary_lines(report)))
"""

from __future__ import annotations

import json
import math
from collections.abc import Callable
from pathlib import Path

from ._messages import default_warn as _default_warn
from .checks import TESTS, units_worst
from .errors import CheckError


def _num(v, fmt: str) -> str:
    return "-" if v is None or (isinstance(v, float) and not math.isfinite(v)) else format(v, fmt)


def _detachment_text(fit: dict) -> str:
    """The area-depth result for the table: a depth only when the fit can be trusted."""
    if not fit:
        return "depth to detachment not measured (fewer than 2 horizons)"
    r2 = _num(fit.get("r_squared"), ".3f")
    if not fit.get("reliable"):
        why = "; ".join(str(i).split(":")[0] for i in fit.get("issues") or [])
        return f"depth to detachment not determined ({why}; R² {r2})"
    return (f"detachment at elevation {_num(fit.get('detachment_elevation_m'), '.0f')} m, "
            f"{_num(fit.get('depth_to_detachment_m'), '.0f')} m below {fit.get('datum')} "
            f"(R² {r2})")


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
            f"(<= {t.area_mismatch_pct:g}), {_detachment_text(fit)}"
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


def gpkg_layers_and_section(path: Path) -> tuple[list[str], str]:
    """The layers of a section.gpkg and the section name 'build' recorded in it (or "")."""
    import pyogrio

    if not path.is_file():
        raise CheckError(f"{path}: no such section file")
    from ._messages import first_line
    from .export import section_info

    try:
        layers = [str(row[0]) for row in pyogrio.list_layers(path)]
        # 'build' records the section's name in the profile layer (see mapsection.export).
        recorded = section_info(path, set(layers)).get("section") or ""
    except Exception as exc:  # pyogrio raises several kinds for unreadable files
        raise CheckError(f"{path}: not a readable GeoPackage ({first_line(exc)})") from None
    if "horizons" not in layers:
        raise CheckError(f"{path}: has no layer 'horizons' (layers: {', '.join(layers) or 'none'})")
    return layers, str(recorded)


def infer_section(project, path: Path):
    """The section a section.gpkg belongs to: the only one, the one recorded in the file by
    'mapsection build', or the name of its build folder (OUTDIR/<section>/section.gpkg)."""
    if len(project.sections) == 1:
        return project.sections[0]
    names = [s.name for s in project.sections]
    _, recorded = gpkg_layers_and_section(path)
    for candidate in (recorded, path.parent.name):
        if candidate in names:
            return project.section(candidate)
    raise CheckError(
        f"{path}: cannot tell which of the sections {', '.join(names)} it holds; "
        f"give --section NAME"
    )


def edited_draft(project, spec, path: Path, warn_fn: Callable[[str], None] = _default_warn):
    """A draft whose horizons and faults come from a section.gpkg, checked against real data.

    The profile, surface geology and dips are re-derived from the project's DEM,
    map and attitudes, so the topography test still compares with the real ground.
    """
    from .export import read_section_gpkg
    from .session import SectionSession

    _, recorded = gpkg_layers_and_section(path)
    if recorded and recorded != spec.name:
        warn_fn(f"{path}: was built for section {recorded!r}; checking it as section "
                f"{spec.name!r} as asked")
    with SectionSession.from_project(project, spec, warn=warn_fn) as session:
        data = session.run()
    draft = read_section_gpkg(path, project.column, data.line, spec.name, profile=data.profile,
                              geology=data.geology, dips=data.dips)
    return draft


def check_section(project, spec, from_path: Path | None = None,
                  warn_fn: Callable[[str], None] = _default_warn):
    """Build (or read back) one section and run the four tests on it."""
    from .checks import run_checks
    from .checks.topography import validate_thresholds

    try:  # before any building: a bad threshold is a one-line error naming the project file
        validate_thresholds(project.thresholds)
    except CheckError as exc:
        raise CheckError(f"{project.path}: {exc}") from None
    if from_path is None:
        from .build import build_section

        draft = build_section(project, spec, warn=warn_fn)
    else:
        draft = edited_draft(project, spec, from_path, warn_fn)
    from .build import _stage, reporting

    with reporting(None, spec.name), _stage(None, "checks"):  # told to a progress display
        return draft, run_checks(draft, project.thresholds, pin=spec.pin, loose=spec.loose)


def write_html_report(path: Path, draft, report) -> Path:
    """report.html with its figures drawn in a scratch folder and embedded."""
    import tempfile

    from .checks import write_check_figures
    from .figure import draw_section
    from .report import write_report

    with tempfile.TemporaryDirectory(prefix="mapsection-check-") as tmp:
        drawn = draw_section(draft, Path(tmp) / "section", formats=("png",))
        figures = {"section": Path(drawn[0])}
        figures.update(write_check_figures(report, draft, tmp))
        return write_report(path, draft, report, figures)


def summary_from_json(path: str | Path) -> str:
    """One line from a build's checks.json: each test PASS or FAIL."""
    path = Path(path)
    try:
        d = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError) as exc:
        raise CheckError(f"{path}: cannot read the check results ({exc})") from None
    parts = [f"{k} {'PASS' if (d.get(k) or {}).get('passed') else 'FAIL'}" for k in TESTS]
    return "  ".join(parts)
