"""Checking a section from a project: build or read back a draft, run the four tests, summarise.

This is what ``mapsection check`` and ``mapsection demo`` call; use it from Python the same
way::

    from mapsection.checking import check_section, summary_lines
    from mapsection.project import load_project

    project = load_project("sample_area/project.toml")
    draft, report = check_section(project, project.section("A"))
    print("\n".join(summary_lines(report)))

The figures of the table come from :func:`mapsection.checks.key_figures`; the files
(``--json``, ``--html``) are written by :mod:`mapsection.render.section_folder`, the
writer ``mapsection build`` uses.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from pathlib import Path
from typing import TYPE_CHECKING

from ._messages import default_warn as _default_warn
from .checks import CheckReport, KeyFigures, key_figures
from .checks.area import DetachmentFit
from .errors import CheckError

if TYPE_CHECKING:
    from .session import ProjectInputs


def _num(v, fmt: str) -> str:
    return "-" if v is None or (isinstance(v, float) and not math.isfinite(v)) else format(v, fmt)


def _detachment_text(fit: DetachmentFit | None) -> str:
    """The area-depth result for the table: a depth only when the fit can be trusted."""
    if fit is None:
        return "depth to detachment not measured (fewer than 2 horizons)"
    r2 = _num(fit.r_squared, ".3f")
    if not fit.reliable:
        why = "; ".join(str(i).split(":")[0] for i in fit.issues)
        return f"depth to detachment not determined ({why}; R² {r2})"
    return (f"detachment at elevation {_num(fit.detachment_elevation_m, '.0f')} m, "
            f"{_num(fit.depth_to_detachment_m, '.0f')} m below {fit.datum} "
            f"(R² {r2})")


def _fault_bend_text(fault_bend: dict) -> str:
    """The fault-bend fold comparison (``Kinematics.fault_bend``): a count only of what was
    compared."""
    if fault_bend.get("compared"):
        return f"{fault_bend['compared']} fault-bend fold(s) compared ({fault_bend.get('status')})"
    return "fault-bend fold comparison not tested"


def _figure_texts(key: KeyFigures) -> dict[str, str]:
    """Each test's key figures against its thresholds, as the table shows them."""
    t = key.thresholds
    topo, rest, area, kin = key.topography, key.restoration, key.area_balance, key.kinematics
    n_kin = kin.inconsistencies
    unit = area.worst_unit
    return {
        "topography": (
            f"contact RMS {_num(topo.contact_rms_m, '.1f')} m "
            f"(<= {_num(topo.contact_threshold_m, '.1f')}), "
            f"unit agreement {_num(topo.unit_agreement, '.3f')} "
            f"(>= {t.unit_agreement:.2f}), dip RMS {_num(topo.dip_rms_deg, '.1f')} deg "
            f"(<= {t.dip_rms_deg:g}), unpaired contacts "
            f"{topo.unpaired_contacts} (<= {topo.max_unpaired})"
        ),
        "restoration": (
            f"shortening {_num(rest.shortening_pct, '.1f')} % "
            f"({_num(rest.shortening_m, '.0f')} m), line-length spread "
            f"{_num(rest.line_length_mismatch_pct, '.2f')} % "
            f"(<= {t.line_length_spread_pct:g})"
        ),
        "area_balance": (
            f"worst unit mismatch {_num(area.worst_mismatch_pct, '.2f')} %"
            f"{f' ({unit})' if unit else ''} "
            f"(<= {t.area_mismatch_pct:g}), {_detachment_text(area.detachment)}"
        ),
        "kinematics": (f"{n_kin} inconsistenc{'y' if n_kin == 1 else 'ies'}, transport "
                       f"{kin.transport_direction or '-'}, "
                       + _fault_bend_text(kin.fault_bend)),
    }


STATUS_WORDS = {"pass": "PASS", "fail": "FAIL", "not_tested": "NOT TESTED"}


def status_word(status: str) -> str:
    """PASS, FAIL or NOT TESTED."""
    return STATUS_WORDS.get(status, status.upper())


def _restoration_fault_lines(key: KeyFigures) -> list[str]:
    """Per fault: the worst restored cutoff mismatch and the separations' spread."""
    out = []
    for f in key.restoration.faults:
        if f.cutoff_status != "not_tested":
            out.append(f"fault {f.fault}: worst cutoff mismatch {_num(f.worst_mismatch_m, '.0f')} m"
                       f" at the top of {f.worst_top_of} (<= "
                       f"{_num(f.mismatch_threshold_m, '.0f')} m) "
                       f"{status_word(f.cutoff_status)}")
        if f.separation_status != "not_tested":
            seps = "/".join(f"{v:.0f}" for v in f.separations_m)
            out.append(f"fault {f.fault}: separations {seps} m, spread "
                       f"{_num(f.spread_m, '.0f')} m (<= {_num(f.spread_threshold_m, '.0f')} m) "
                       f"{status_word(f.separation_status)}")
    return out


def summary_lines(report: CheckReport) -> list[str]:
    """One line per test: name, PASS / FAIL / NOT TESTED and its key figures against the
    thresholds; then, under a test that did not pass, why (and, for a failed topography
    test, its likely causes, ranked)."""
    key = key_figures(report)
    lines = [f"section {key.section} (method {key.method}, VE {key.ve:g})",
             f"  {'test':<13} {'result':<10} figures (thresholds)"]
    verdicts = {"topography": key.topography, "restoration": key.restoration,
                "area_balance": key.area_balance, "kinematics": key.kinematics}
    for k, text in _figure_texts(key).items():
        v = verdicts[k]
        lines.append(f"  {k:<13} {status_word(v.status):<10} {text}")
        reasons = list(v.reasons)
        if k == "restoration":
            fault_lines = _restoration_fault_lines(key)
            lines += [f"{'':26}{t}" for t in fault_lines]
            if fault_lines:  # the per-fault lines say it; keep what they do not
                reasons = [r for r in reasons if not r.startswith(
                    ("cutoffs at faults: fault", "separation consistency: fault"))]
        lines += [f"{'':26}- {r}" for r in reasons]
        if k == "topography" and key.topography.diagnosis:
            lines.append(f"{'':26}likely causes, strongest first:")
            lines += [f"{'':28}{t}" for t in key.topography.diagnosis]
    return lines


def result_line(key: KeyFigures) -> str:
    """One line: each test PASS, FAIL or NOT TESTED (what ``mapsection demo`` and
    ``mapsection build`` print per section)."""
    return "  ".join(f"{k} {status_word(st)}" for k, st in key.statuses.items())


def verdict_line(statuses) -> str:
    """The closing line of ``mapsection check``: how many tests passed, failed and were
    not tested."""
    statuses = list(statuses)
    n = {st: statuses.count(st) for st in ("pass", "fail", "not_tested")}
    counts = f"{n['pass']} passed, {n['fail']} failed, {n['not_tested']} not tested"
    return (f"some tests FAIL ({counts})" if n["fail"] else
            f"no test fails ({counts})")


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


def edited_draft(project, spec, path: Path, warn_fn: Callable[[str], None] = _default_warn,
                 *, inputs: ProjectInputs | None = None):
    """A draft whose horizons and faults come from a section.gpkg, checked against real data.

    The profile, surface geology and dips are re-derived from the project's DEM,
    map and attitudes (``inputs``, when already loaded), so the topography test still
    compares with the real ground.
    """
    from .export import read_section_gpkg
    from .session import SectionSession

    _, recorded = gpkg_layers_and_section(path)
    if recorded and recorded != spec.name:
        warn_fn(f"{path}: was built for section {recorded!r}; checking it as section "
                f"{spec.name!r} as asked")
    if inputs is not None:
        data = SectionSession.from_inputs(inputs, project, spec, warn=warn_fn).run()
    else:
        with SectionSession.from_project(project, spec, warn=warn_fn) as session:
            data = session.run()
    draft = read_section_gpkg(path, project.column, data.line, spec.name, profile=data.profile,
                              geology=data.geology, dips=data.dips)
    return draft


def check_section(project, spec, from_path: Path | None = None,
                  warn_fn: Callable[[str], None] = _default_warn, *,
                  inputs: ProjectInputs | None = None):
    """Build (or read back) one section and run the four tests on it.

    ``inputs`` (from :func:`mapsection.session.load_inputs`) share the loaded map,
    attitudes and DEM, as ``mapsection build`` does; without them they are read for
    this section alone. Returns the draft and its :class:`~mapsection.checks.CheckReport`.
    """
    from .checks import run_checks
    from .checks.topography import validate_thresholds

    try:  # before any building: a bad threshold is a one-line error naming the project file
        validate_thresholds(project.thresholds)
    except CheckError as exc:
        raise CheckError(f"{project.path}: {exc}") from None
    if from_path is None:
        from .build import build_section

        draft = build_section(project, spec, warn=warn_fn, inputs=inputs)
    else:
        draft = edited_draft(project, spec, from_path, warn_fn, inputs=inputs)
    xy = nearby_attitudes(inputs.attitudes, draft.line, spec.corridor) if inputs else None
    return draft, run_checks(draft, project.thresholds, pin=spec.pin, loose=spec.loose,
                             attitude_xy=xy, corridor_m=spec.corridor)


def nearby_attitudes(attitudes, line, corridor_m: float):
    """Map positions (n, 2) of the attitudes within a generous radius of a section line
    (the larger of 3000 m and 4 corridors, as far as the diagnosis suggests widening the
    corridor), for the diagnosis of a failed topography test."""
    import numpy as np

    xy = np.column_stack([np.asarray(attitudes.x, float), np.asarray(attitudes.y, float)])
    v = np.asarray(line.vertices, float)
    r = max(3000.0, 4.0 * float(corridor_m))
    lo, hi = v.min(axis=0) - r, v.max(axis=0) + r
    keep = np.all((xy >= lo) & (xy <= hi), axis=1)
    return xy[keep]
