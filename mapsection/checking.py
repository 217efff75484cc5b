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


def summary_lines(report: CheckReport) -> list[str]:
    """One line per test: name, PASS/FAIL and its key figures against the thresholds."""
    key = key_figures(report)
    lines = [f"section {key.section} (method {key.method}, VE {key.ve:g})",
             f"  {'test':<13} {'result':<6} figures (thresholds)"]
    for k, text in _figure_texts(key).items():
        lines.append(f"  {k:<13} {'PASS' if key.results[k] else 'FAIL':<6} {text}")
    return lines


def result_line(key: KeyFigures) -> str:
    """One line: each test PASS or FAIL (what ``mapsection demo`` prints per section)."""
    return "  ".join(f"{k} {'PASS' if ok else 'FAIL'}" for k, ok in key.results.items())


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


def check_recorded_line(path: Path, project, spec, tol_m: float = 1.0) -> None:
    """Refuse a section.gpkg built along another line than the project's section line.

    'build' records the ground profile (layer ``profile_points``: distance, x, y);
    its two ends must lie within ``tol_m`` of the ends of the section line and its
    length must match. A file without that layer (drawn by hand) is not compared.
    """
    import numpy as np
    import pyogrio

    from ._messages import first_line

    try:
        layers = {str(r[0]) for r in pyogrio.list_layers(path)}
        if "profile_points" not in layers:
            return
        pts = pyogrio.read_dataframe(path, layer="profile_points", read_geometry=False,
                                     columns=["distance_m", "x", "y"])
    except Exception as exc:  # pyogrio raises several kinds for unreadable files
        raise CheckError(f"{path}: layer 'profile_points' unreadable ({first_line(exc)})") \
            from None
    d = pts["distance_m"].to_numpy(float) if "distance_m" in pts else np.empty(0)
    if not len(d) or not np.isfinite(d).any():
        return
    i0, i1 = int(np.nanargmin(d)), int(np.nanargmax(d))
    x, y = pts["x"].to_numpy(float), pts["y"].to_numpy(float)
    v = np.asarray(spec.line, float)
    length = float(np.hypot(*np.diff(v, axis=0).T).sum())
    start_off = float(np.hypot(x[i0] - v[0, 0], y[i0] - v[0, 1]))
    end_off = float(np.hypot(x[i1] - v[-1, 0], y[i1] - v[-1, 1]))
    if max(start_off, end_off, abs(d[i1] - d[i0] - length)) <= tol_m:
        return
    raise CheckError(
        f"{path}: the line recorded in the file, from ({x[i0]:.1f}, {y[i0]:.1f}) to "
        f"({x[i1]:.1f}, {y[i1]:.1f}), {d[i1] - d[i0]:.1f} m long, differs from the section "
        f"line of section {spec.name} in {Path(project.path).name}, from ({v[0, 0]:.1f}, "
        f"{v[0, 1]:.1f}) to ({v[-1, 0]:.1f}, {v[-1, 1]:.1f}), {length:.1f} m long; check the "
        "file with the project and section it was built from, or build it again"
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
    check_recorded_line(path, project, spec)
    from .session import load_inputs
    from .thickness import resolve_map_thicknesses

    own = inputs is None
    inputs = load_inputs(project, warn_fn) if own else inputs
    try:
        project = resolve_map_thicknesses(project, inputs, warn_fn)  # thickness = "map"
        data = SectionSession.from_inputs(inputs, project, spec, warn=warn_fn).run()
    finally:
        if own:
            inputs.close()
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

    # The thresholds were checked once, when the project was read (settings.Thresholds).
    if from_path is None:
        from .build import build_section

        draft = build_section(project, spec, warn=warn_fn, inputs=inputs)
    else:
        draft = edited_draft(project, spec, from_path, warn_fn, inputs=inputs)
    from .build import _stage, reporting

    with reporting(None, spec.name), _stage(None, "checks"):  # told to a progress display
        return draft, run_checks(draft, project.thresholds, pin=spec.pin, loose=spec.loose)
