"""Checking a section from a project: build or read back a draft, run the four tests, summarise.

This is what ``mapsection check`` and ``mapsection demo`` call; use it from Python the same
way::

    from mapsection.checking import check_section, summary_lines
    from mapsection.project import load_project

    project = load_project("sample_area/project.toml")
    draft, report = check_section(project, project.section("A"))
    print("\n".join(summary_lines(report)))

or, as ``mapsection check`` does, for every section of a project with its files::

    from mapsection.checking import plan_checks

    run = plan_checks("sample_area/project.toml", section="A", html_path="A.html")
    for report in run.reports():
        print("\n".join(summary_lines(report)))
    run.failed  # any test failed

The figures of the table come from :func:`mapsection.checks.key_figures`; the files
(``--json``, ``--html``) are written by :mod:`mapsection.render.section_folder`, the
writer ``mapsection build`` uses.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING

from ._messages import default_warn as _default_warn
from .checks.summary import result_line, status_word, summary_lines, verdict_line
from .errors import CheckError

__all__ = ["CheckRun", "check_section", "edited_draft", "gpkg_layers_and_section",
           "infer_section", "plan_checks", "result_line", "status_word", "summary_lines",
           "verdict_line"]

if TYPE_CHECKING:
    from .checks import CheckReport
    from .project import Project, SectionSpec
    from .session import ProjectInputs


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
    inputs = load_inputs(project, warn_fn, [spec]) if own else inputs
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
    from .checks.diagnosis import nearby_attitudes
    from .stages import reporting
    from .stages import stage as _stage

    xy = nearby_attitudes(inputs.attitudes, draft.line, spec.corridor) if inputs else None
    with reporting(None, spec.name), _stage(None, "checks"):  # told to a progress display
        return draft, run_checks(draft, project.thresholds, pin=spec.pin, loose=spec.loose,
                                 attitude_xy=xy, corridor_m=spec.corridor)


@dataclass
class CheckRun:
    """The sections one ``mapsection check`` tests, checked before any is built, and the
    files it writes (``json_path``, ``html_path``: one section only)."""

    project: Project
    specs: list[SectionSpec]
    from_path: Path | None = None
    json_path: Path | None = None
    html_path: Path | None = None
    statuses: list[str] = field(default_factory=list)  # every test's, as the reports came

    @property
    def failed(self) -> bool:
        """Whether any test of the reports so far failed."""
        return "fail" in self.statuses

    def reports(self, warn_fn: Callable[[str], None] = _default_warn
                ) -> Iterator[CheckReport]:
        """Check each section in turn: its report as soon as it is done, then its
        checks.json and report.html when asked (written as the iteration goes on)."""
        from .build import sheet_options, title_info
        from .render.section_folder import write_check_report, write_checks_json
        from .session import load_inputs

        # Read once for every section: the report's section figure has its location inset on
        # the map, and a failed topography test's diagnosis looks at the attitudes nearby.
        inputs = load_inputs(self.project, warn_fn, self.specs)  # the sections' neighbourhood
        try:
            for spec in self.specs:
                draft, report = check_section(self.project, spec, self.from_path, warn_fn,
                                              inputs=inputs)
                self.statuses += report.statuses.values()
                yield report  # said before its files are written, as the command has it
                if self.json_path is not None:
                    write_checks_json(report, self.json_path)
                if self.html_path is not None:
                    # The same sheet and title block as a build's figure of the section.
                    write_check_report(self.html_path, draft, report, inputs.map_data,
                                       sheet=sheet_options(spec, draft),
                                       info=title_info(self.project, inputs.dem.crs))
        finally:
            inputs.close()


def plan_checks(project_file: str | Path, section: str | None = None,
                from_path: Path | None = None, json_path: str | None = None,
                html_path: str | None = None,
                warn_fn: Callable[[str], None] = _default_warn) -> CheckRun:
    """What ``mapsection check`` will test and write, every argument checked first.

    Parameters
    ----------
    project_file : the project file.
    section : the one section to check; default: every section (with ``from_path``: the
        section the file belongs to, see :func:`infer_section`).
    from_path : a section.gpkg whose horizons and faults are checked instead of a build.
    json_path, html_path : checks.json and report.html to write (one section only); neither
        may replace an input or the other.
    warn_fn : where notes on the project file are said.

    Returns
    -------
    CheckRun
        Its :meth:`CheckRun.reports` runs the checks.

    Raises
    ------
    CheckError
        For --json/--html with several sections; OutputError for an output that would
        replace an input; the project's own errors for a bad project file.

    Examples
    --------
    >>> # run = plan_checks("sample_area/project.toml", section="A")
    >>> # [r.status for r in run.reports()], run.failed  -> (['pass'], False)
    """
    from .project import load_project

    project = load_project(project_file, warn_fn)
    if section is not None:
        specs = [project.section(section)]
    elif from_path is not None:
        specs = [infer_section(project, from_path)]
    else:
        specs = list(project.sections)
    if (json_path or html_path) and len(specs) > 1:
        raise CheckError("--json/--html: write one section at a time; add --section NAME")
    json_out, html_out = _output_paths(project, from_path, json_path, html_path)
    return CheckRun(project, specs, from_path, json_out, html_out)


def _output_paths(project, from_path: Path | None, json_path: str | None,
                  html_path: str | None) -> tuple[Path | None, Path | None]:
    """--json and --html as paths, once sure that neither replaces an input or the other."""
    from .outputs import check_distinct, check_output, project_inputs

    sources = [*project_inputs(project), ("--from file", from_path)]
    for option, path in (("--json", json_path), ("--html", html_path)):
        if path is not None:
            check_output(path, sources, option=option, file=True)
    check_distinct([("--json", json_path), ("--html", html_path)])
    return (None if json_path is None else Path(json_path),
            None if html_path is None else Path(html_path))
