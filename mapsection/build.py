"""Build draft sections from a project file and write every output of each section.

For each section of the project (or the one named), :func:`build_project` writes a
folder ``OUTDIR/<section name>/`` holding

- ``section.gpkg`` -- the section in section space (see :mod:`mapsection.export`);
- ``section_3d.gpkg`` -- the ground, horizons and faults as LineString Z in the
  project CRS;
- ``section.png``, ``section.svg``, ``section.pdf`` -- the figure
  (see :mod:`mapsection.render.section`);
- ``build.log`` -- what the construction did and every warning it gave;
- ``checks.json`` and ``report.html`` -- the balance checks; ``restored.png/.svg/.pdf``,
  ``area_depth.png`` and ``sequence/`` (frames and an animated GIF) -- their figures
  (see :mod:`mapsection.render.section_folder`, which ``mapsection check`` uses too).

Each folder is written into a temporary sibling and replaces a previous build
only once every file of the new one is complete: a failed build leaves the
previous folder untouched. A folder is replaced only when it is a previous build
(it holds the build.log a build writes) or empty, and never when it is or holds an
input (see :mod:`mapsection.outputs`). A build holds a lock on OUTDIR while it
writes there (a second build into it waits), and first removes the temporary
folders a killed build left there (see :mod:`mapsection._atomic`).

The map, the DEM and the attitudes are read once per project and shared by all
its sections.

Example::

    from mapsection.build import build_project
    folders = build_project("sample_area/project.toml", "out")   # out/A/, out/B/
"""

from __future__ import annotations

import contextlib
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from . import __version__
from ._atomic import atomic_dir, atomic_file, folder_lock, remove_stale
from ._messages import Warn
from ._messages import default_warn as _default_warn
from .build_jobs import run_jobs
from .build_jobs import workers_for as _workers
from .caution import CAUTION
from .draft import Draft
from .drafting import SectionData as _SectionData
from .drafting import build_section  # noqa: F401 (importable from mapsection.build)
from .drafting import construct as _construct
from .drafting import overridden as _overridden
from .drafting import section_data as _section_data
from .errors import OutputError, ParameterError
from .project import Project, SectionSpec, load_project
from .session import load_inputs
from .stages import STAGES, Progress, listen, listener, reporting  # noqa: F401 (importable from mapsection.build)
from .stages import stage as _stage
from .thickness import resolve_map_thicknesses

if TYPE_CHECKING:
    from .checks import CheckReport, KeyFigures

def sheet_options(spec: SectionSpec, draft: Draft, *, sheet: str | None = None,
                  scale: float | str | None = None, portrait: bool | None = None):
    """The figure's sheet of a section: the options given (``build --sheet/--scale/
    --portrait``) over the section's own settings; the constrained depth as an elevation."""
    from .render.sheet import DEFAULT_SHEET, SheetOptions

    z_c = None
    if spec.constrained_depth is not None:
        zg = draft.profile.z[np.isfinite(draft.profile.z)]
        z_c = (float(zg.min()) if zg.size else 0.0) - spec.constrained_depth
    return SheetOptions(sheet or spec.sheet or DEFAULT_SHEET,
                        spec.portrait if portrait is None else portrait,
                        scale if scale is not None else spec.scale, z_c)


def title_info(project: Project, dem_crs: Any = None):
    """The title block's project title, sources (file names and the project's ``source``
    texts) and the DEM's vertical datum."""
    from .render.sheet import TitleInfo, vertical_datum

    rows = []
    for key, what, path in (("dem", "DEM", project.dem_path), ("map", "Map", project.map_path),
                            ("attitudes", "Attitudes", project.attitudes_path)):
        text = Path(path).name
        if project.sources.get(key):
            text += f" ({project.sources[key]})"
        rows.append((what, text))
    return TitleInfo(project.title, tuple(rows), vertical_datum(dem_crs))


def write_build_log(draft: Draft, path: Path, warnings: list[str] = (),
                    checks: list[str] = ()) -> Path:
    lines = [
        f"mapsection {__version__} build of section {draft.name}",
        f"method: {draft.method}; vertical exaggeration: {draft.ve:g}",
        f"section line: {len(draft.line.vertices)} vertices, {draft.line.length:.1f} m",
        f"horizons: {len(draft.horizons)}; faults: {len(draft.faults)}; "
        f"unit polygons: {len(draft.units)}; dip domains: {len(draft.domains)}; "
        f"outliers: {sum(o.kind == 'outlier' for o in draft.outliers)}",
        "",
        *draft.log,
    ]
    if draft.outliers:
        lines += ["", "readings kept out of the dip domains (id, distance, dip, misfit, why):"]
        lines += [f"  {o.id}  {o.distance_m:.0f} m  {o.apparent_dip:.1f}°  "
                  f"{o.misfit_deg:+.1f}°  {o.kind}: {o.why}" for o in draft.outliers]
    if warnings:
        lines += ["", "warnings:", *[f"  {w}" for w in warnings]]
    if checks:
        lines += ["", "checks:", *checks]
    lines += ["", f"CAUTION: {CAUTION}"]
    with atomic_file(path) as tmp:
        tmp.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def write_section_outputs(draft: Draft, folder: str | Path, map_data: Any = None, *,
                          extra_layers: dict | None = None, warnings: list[str] = (),
                          timings: dict[str, float] | None = None,
                          log: bool = True, sheet: Any = None, info: Any = None,
                          checks: CheckReport | None = None) -> list[Path]:
    """Write section.gpkg, section_3d.gpkg, section.png/.svg/.pdf and (``log``) build.log.

    ``sheet`` (:class:`mapsection.render.sheet.SheetOptions`), ``info`` (``TitleInfo``)
    and ``checks`` (the section's check report: FAIL mark and misfits) go to the figure.
    """
    from .export import write_section_3d, write_section_gpkg
    from .render.section import draw_section

    folder = Path(folder)
    if not folder.is_dir():
        raise OutputError(f"{folder}: output folder does not exist")
    with _stage(timings, "geopackages"):
        out = [write_section_gpkg(draft, folder / "section.gpkg", extra_layers),
               write_section_3d(draft, folder / "section_3d.gpkg")]
    with _stage(timings, "figures"):
        out += draw_section(draft, folder / "section", map_data, sheet=sheet, info=info,
                            checks=checks)
    if log:
        out.append(write_build_log(draft, folder / "build.log", list(warnings)))
    return out


def _write_checks(folder: Path, draft: Draft, project: Project, spec: SectionSpec,
                  warn: Warn | None = None, timings: dict[str, float] | None = None,
                  attitude_xy: Any = None, report: CheckReport | None = None) -> CheckReport:
    """CHECKS CALL POINT: run the balance checks and write their outputs into ``folder``.

    The outputs are those of :func:`mapsection.render.section_folder.write_check_outputs`
    (checks.json, the restored layers in section.gpkg, restored.png/.svg/.pdf,
    area_depth.png, sequence/ and report.html). A failed test is a result and is written
    like a pass; CheckError (a bad pin or loose line) stops the build like any bad input.
    """
    from .checks import run_checks
    from .render.section_folder import write_check_outputs

    if report is None:
        with _stage(timings, "checks"):
            report = run_checks(draft, project.thresholds, pin=spec.pin, loose=spec.loose,
                                warn=warn, attitude_xy=attitude_xy, corridor_m=spec.corridor)
    with _stage(timings, "check figures"):
        write_check_outputs(folder, draft, report)
    return report


def build_project(project_path: str | Path, outdir: str | Path, *, section: str | None = None,
                  method: str | None = None, ve: float | None = None, warn: Warn | None = None,
                  timings: dict[str, float] | None = None,
                  workers: int | None = None,
                  summaries: dict[Path, KeyFigures] | None = None,
                  progress: Progress | None = None, note: Warn | None = None,
                  sheet: str | None = None, scale: float | str | None = None,
                  portrait: bool | None = None) -> list[Path]:
    """Build every section of a project (or the one named) into ``outdir/<name>/``.

    Returns the section folders written. ``timings``, when given, receives the wall
    time of each stage (see ``STAGES``). The drafts are constructed one after the
    other; their outputs (figures, GeoPackages, checks) are written in up to
    ``workers`` processes at once (default: one per CPU core, where the system can
    fork). All or nothing: the section folders replace earlier builds only once
    every section has been written, so a failure leaves OUTDIR as it was.

    ``summaries``, when given, receives the key figures of each section's checks
    (:func:`mapsection.checks.key_figures`) by section folder. ``sheet``, ``scale`` and
    ``portrait`` override each section's figure settings (see :func:`sheet_options`).

    ``progress(section, stage)`` is told each stage as it starts; ``note`` receives
    what the build says that is not a warning (waiting for another build into
    OUTDIR, temporary folders of a killed build removed).

    Raises OutputError (before anything is read or written) when OUTDIR is empty
    or a section folder would be, or would hold, an input, or when a section
    folder is there and is not a previous build (see :mod:`mapsection.outputs`).
    """
    from .outputs import check_output
    from .render.sheet import parse_scale, sheet_name

    if sheet is not None:
        sheet = sheet_name(sheet)
    if scale is not None:
        scale = parse_scale(scale)
    warn = warn or _default_warn
    note = note or (lambda message: None)
    progress = progress if progress is not None else listener()
    check_output(outdir, ())  # an empty OUTDIR would be the current folder
    with _stage(timings, "load"):
        plan = _plan(project_path, outdir, section, method, ve, warn, progress)
    try:
        with contextlib.ExitStack() as folders_in_progress:
            _hold_outdir(plan, folders_in_progress, note, progress)
            with _stage(timings, "load"):
                inputs, project, column_said, info = _read_inputs(plan, warn, progress)
            jobs = []
            try:
                for spec, target in zip(plan.specs, plan.targets, strict=True):
                    said: list[str] = list(column_said)
                    with reporting(progress, spec.name):
                        (sd,) = _section_data(project, spec,
                                              _section_warn(warn, spec.name, said), inputs,
                                              timings)
                    tmp = folders_in_progress.enter_context(atomic_dir(target))
                    jobs.append(_Job(tmp, None, project, spec, said, target, None, None, info,
                                    sd, inputs.attitudes, (sheet, scale, portrait)))
            finally:
                # Closed before any fork: no GDAL file handle is shared with a worker.
                inputs.close()
            results = run_jobs(jobs, inputs.map_data, _workers(workers), progress,
                               _write_job_named, lambda job: job.spec.name)
            for job, said, job_timings, figures in results:
                for message in said[len(job.said):]:  # the checks' warnings, said in a worker
                    warn(_named(message, job.spec.name))
                _add_timings(timings, job_timings)
                if summaries is not None:
                    summaries[job.target] = figures
    except BaseException:
        if plan.created:
            with contextlib.suppress(OSError):
                plan.outdir.rmdir()  # only if still empty
        raise
    if progress is not None:
        progress("", "")  # done
    return [job.target for job in jobs]


@dataclass(frozen=True)
class _Plan:
    """What a build will write: the project's sections, their folders, the inputs that no
    output may touch."""

    project: Project
    specs: list[SectionSpec]
    outdir: Path
    created: bool  # OUTDIR did not exist before this build
    sources: Any  # the project's input files (mapsection.outputs.project_inputs)
    targets: list[Path]


def _plan(project_path, outdir, section: str | None, method: str | None, ve: float | None,
          warn: Warn, progress: Progress | None) -> _Plan:
    """Read the project file and check every section folder before anything is made; then
    make OUTDIR."""
    from .outputs import check_build_target, project_inputs

    if progress is not None:
        progress("", "reading the project file")
    project = load_project(project_path, warn)
    specs = [project.section(section)] if section is not None else list(project.sections)
    specs = [_overridden(spec, method, ve) for spec in specs]  # checked once, here
    if ve is not None:
        from .settings import large_note

        if (large := large_note("ve", ve)) is not None:
            warn(f"--ve: {large}")
    outdir = Path(outdir)
    if outdir.exists() and not outdir.is_dir():
        raise OutputError(f"{outdir}: exists and is not a folder")
    created = not outdir.exists()
    sources = project_inputs(project)
    targets = [outdir / _folder_name(spec.name) for spec in specs]
    for spec, target in zip(specs, targets, strict=True):
        check_build_target(target, sources, spec.name)  # refused before anything is made
    try:
        outdir.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise OutputError(f"{outdir}: cannot create the output folder ({exc.strerror})") \
            from None
    return _Plan(project, specs, outdir, created, sources, targets)


def _hold_outdir(plan: _Plan, stack: contextlib.ExitStack, note: Warn,
                 progress: Progress | None) -> None:
    """Take OUTDIR's lock (one build at a time writes there: a second one waits), remove
    what a killed build left, and check the section folders again (they may have changed
    while this build waited)."""
    from .outputs import check_build_target

    def waiting(message: str) -> None:
        note(message)
        if progress is not None:
            progress("", "waiting for another build into the output folder")

    stack.enter_context(folder_lock(plan.outdir, waiting=waiting, create=True))
    for gone in remove_stale(plan.outdir):
        note(f"removed {gone}, left by a build that was stopped")
    for spec, target in zip(plan.specs, plan.targets, strict=True):
        check_build_target(target, plan.sources, spec.name)


def _read_inputs(plan: _Plan, warn: Warn, progress: Progress | None):
    """The map (the sections' neighbourhood only), attitudes and DEM, read once for every
    section; the project with its ``thickness = "map"`` units measured (what that said,
    for each build.log); the title block's information."""
    if progress is not None:
        progress("", "reading the map, the attitudes and the DEM")
    inputs = load_inputs(plan.project, warn, plan.specs)
    column_said: list[str] = []  # thickness = "map": said once, and in build.log

    def say(message: str) -> None:
        column_said.append(message)
        warn(message)

    try:
        project = resolve_map_thicknesses(plan.project, inputs, say)
    except BaseException:
        inputs.close()
        raise
    return inputs, project, column_said, title_info(project, getattr(inputs.dem, "crs", None))


def _add_timings(timings: dict[str, float] | None, more: dict[str, float]) -> None:
    if timings is not None:
        for k, v in more.items():
            timings[k] = timings.get(k, 0.0) + v


@dataclass(eq=False)
class _Job:
    """One section's outputs to write: its draft and the temporary folder they go in."""

    folder: Path
    draft: Draft
    project: Project
    spec: SectionSpec
    said: list[str]
    target: Path
    attitude_xy: Any = None  # attitudes near the line, for a failed test's diagnosis
    sheet: Any = None
    info: Any = None
    data: _SectionData | None = None  # the draft is constructed from it (in the worker)
    attitudes: Any = None
    options: tuple = (None, None, None)  # the command line's sheet, scale and portrait


def _prepare(job: _Job, said: list[str], timings: dict[str, float]) -> None:
    """Construct the job's draft (where it runs: in a worker when built in parallel), check
    that it fits its sheet, and find the attitudes near its line."""
    from .render.section import plan_sheet

    if job.data is None:
        return
    spec = job.spec
    draft = _construct(job.data, warn=said.append, timings=timings)  # named by the parent
    sheet, scale, portrait = job.options
    options = sheet_options(spec, draft, sheet=sheet, scale=scale, portrait=portrait)
    try:  # the section fits its sheet, or the build stops here
        plan_sheet(draft, options, job.info)
    except ParameterError as exc:
        raise ParameterError(f"section {spec.name}: {options.sheet} sheet: {exc}") from None
    job.draft, job.sheet = draft, options
    job.attitude_xy = _nearby_attitudes(job.attitudes, draft.line, spec.corridor)
    job.data = None


def _nearby_attitudes(attitudes, line, corridor_m: float):
    from .checks.diagnosis import nearby_attitudes

    return nearby_attitudes(attitudes, line, corridor_m)


def _named(message: str, name: str) -> str:
    return message if message.startswith(f"section {name}") else f"section {name}: {message}"


def _section_warn(warn: Warn, name: str, said: list[str]) -> Warn:
    """Warn with the section's name, and remember what was said for build.log."""

    def section_warn(message: str) -> None:
        said.append(message)
        warn(_named(message, name))

    return section_warn


def _write_job(job: _Job, map_data: Any) -> tuple[list[str], dict[str, float], KeyFigures]:
    """Write one section's folder; returns everything said, the stage timings and the key
    figures of the checks."""
    from .checks import key_figures, run_checks
    from .checks.summary import summary_lines

    said = list(job.said)
    timings: dict[str, float] = {}
    _prepare(job, said, timings)
    # The checks first: the figure marks a failed draft and its misfits.
    with _stage(timings, "checks"):
        report = run_checks(job.draft, job.project.thresholds, pin=job.spec.pin,
                            loose=job.spec.loose, warn=said.append,
                            attitude_xy=job.attitude_xy, corridor_m=job.spec.corridor)
    write_section_outputs(job.draft, job.folder, map_data, timings=timings, log=False,
                          sheet=job.sheet, info=job.info, checks=report)
    _write_checks(job.folder, job.draft, job.project, job.spec, said.append, timings,
                  report=report)
    # with the checks' notes and their table (a failure's reasons and diagnosis) too
    write_build_log(job.draft, job.folder / "build.log", said, summary_lines(report))
    return said, timings, key_figures(report)


def _write_job_named(job: _Job, map_data: Any) -> tuple[list[str], dict[str, float], KeyFigures]:
    """:func:`_write_job`; a full disk or a folder that cannot be written: OutputError naming
    the section folder."""
    from ._atomic import output_error

    try:
        return _write_job(job, map_data)
    except Exception as exc:
        err = output_error(job.target, exc)
        if err is not None:
            raise err from None
        if isinstance(exc, OutputError) and str(job.folder) in str(exc):
            # name the section folder, not its temporary (which is gone)
            raise OutputError(str(exc).replace(str(job.folder), str(job.target))) from None
        raise


def _folder_name(name: str) -> str:
    """A section name as a folder name (see :func:`mapsection.outputs.folder_name`)."""
    from .outputs import folder_name

    return folder_name(name)
