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
import dataclasses
import time
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from . import __version__
from ._atomic import atomic_dir, atomic_file, folder_lock, remove_stale
from ._messages import Warn
from ._messages import default_warn as _default_warn
from .caution import CAUTION
from .draft import Draft
from .errors import OutputError, ParameterError
from .project import Project, SectionSpec, load_project
from .session import ProjectInputs, SectionSession, load_inputs
from .thickness import resolve_map_thicknesses

if TYPE_CHECKING:
    from .checks import CheckReport, KeyFigures

# progress(section, stage): what a build is doing now ("" for the whole project)
Progress = Callable[[str, str], None]
STAGES = ("load", "section data", "construction", "checks", "check figures", "figures",
          "geopackages")


# Told (section, stage) as each stage starts (see listen, reporting); None: nobody listens.
_listener: Progress | None = None
_section = ""  # the section in progress


def listen(progress: Progress | None) -> None:
    """Tell ``progress`` every stage of every build from now on (None: stop telling).

    This is how the command line shows the progress of ``build``, ``check`` and ``demo``.
    """
    global _listener
    _listener = progress


@contextlib.contextmanager
def reporting(progress: Progress | None, section: str) -> Iterator[None]:
    """Within the block, stages are those of ``section``, told to ``progress`` (when given,
    else to the listener)."""
    global _listener, _section
    before = _listener, _section
    if progress is not None:
        _listener = progress
    _section = section
    try:
        yield
    finally:
        _listener, _section = before


@contextlib.contextmanager
def _stage(timings: dict[str, float] | None, name: str) -> Iterator[None]:
    """Add the wall time of the block to ``timings[name]`` (when timings are kept)."""
    if _listener is not None:
        _listener(_section, name)
    t0 = time.perf_counter()
    try:
        yield
    finally:
        if timings is not None:
            timings[name] = timings.get(name, 0.0) + time.perf_counter() - t0


def _overridden(spec: SectionSpec, method: str | None, ve: float | None) -> SectionSpec:
    """The section with the command line's ``method`` and ``ve``; the settings check them."""
    given = {k: v for k, v in (("method", method), ("ve", ve)) if v is not None}
    return dataclasses.replace(spec, **given) if given else spec


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


def build_section(project: Project, spec: SectionSpec | str, *, method: str | None = None,
                  ve: float | None = None, warn: Warn | None = None,
                  inputs: ProjectInputs | None = None,
                  timings: dict[str, float] | None = None) -> Draft:
    """Construct the draft of one section of a project.

    ``method`` (``kink`` or ``arc``) and ``ve`` override the section's settings.
    ``inputs`` (from :func:`load_inputs`) share the loaded map, attitudes and DEM
    between sections; without them they are read for this section alone.
    """
    spec = _overridden(project.section(spec), method, ve)
    with reporting(None, spec.name):
        return _build_section(project, spec, warn, inputs, timings)


def _build_section(project: Project, spec: SectionSpec, warn: Warn | None,
                   inputs: ProjectInputs | None, timings: dict[str, float] | None) -> Draft:
    warn = warn or _default_warn
    args = _section_data(project, spec, warn, inputs, timings)
    return _construct(*args, warn=warn, timings=timings)


@dataclass(eq=False)
class _SectionData:
    """What a section's construction needs once the inputs are read: the project (with
    its thicknesses resolved), the section and its data."""

    project: Project
    spec: SectionSpec
    data: Any  # mapsection.session.SectionData
    plunge_axis: tuple[float, float] | None


def _section_data(project: Project, spec: SectionSpec, warn: Warn,
                  inputs: ProjectInputs | None, timings: dict[str, float] | None
                  ) -> tuple[_SectionData]:
    """The section's data (profile, surface geology, dips, contacts beside the line)."""
    with _stage(timings, "section data"):
        own = inputs is None
        inputs = load_inputs(project, warn, [spec]) if own else inputs
        try:
            project = resolve_map_thicknesses(project, inputs, warn)  # thickness = "map"
            session = SectionSession.from_inputs(inputs, project, spec, warn)
            data = session.run()
            _ = data.corridor_contacts  # found while the inputs are open
        finally:
            if own:
                inputs.close()
    plunge_axis = spec.fold_axis
    if plunge_axis is None and session.axis is not None:
        plunge_axis = (float(session.axis.trend), float(session.axis.plunge))
    return (_SectionData(project, spec, data, plunge_axis),)


def _construct(sd: _SectionData, *, warn: Warn, timings: dict[str, float] | None) -> Draft:
    """The section's draft from its data (no file is read)."""
    from .construct import build_draft

    project, spec, data = sd.project, sd.spec, sd.data
    with _stage(timings, "construction"):
        return build_draft(
            data.line, data.profile, data.geology, data.dips, project.column,
            name=spec.name, method=spec.method, ve=spec.ve,
            dip_tolerance=spec.dip_tolerance, depth=spec.depth, fault_depth=spec.fault_depth,
            default_dip=spec.default_dip, keep_readings=project.keep_readings,
            corridor_contacts=data.corridor_contacts, plunge_axis=sd.plunge_axis,
            faults=project.faults, default_fault_dip=project.default_fault_dip, warn=warn)


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
    from .outputs import check_build_target, check_output, project_inputs
    from .render.sheet import parse_scale, sheet_name

    if sheet is not None:
        sheet = sheet_name(sheet)
    if scale is not None:
        scale = parse_scale(scale)
    warn = warn or _default_warn
    note = note or (lambda message: None)
    progress = progress if progress is not None else _listener
    check_output(outdir, ())  # an empty OUTDIR would be the current folder
    with _stage(timings, "load"):
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
    try:
        with contextlib.ExitStack() as folders_in_progress:
            # One build at a time writes into OUTDIR: a second one waits here.
            def waiting(message: str) -> None:
                note(message)
                if progress is not None:
                    progress("", "waiting for another build into the output folder")

            folders_in_progress.enter_context(folder_lock(outdir, waiting=waiting,
                                                          create=True))
            for gone in remove_stale(outdir):
                note(f"removed {gone}, left by a build that was stopped")
            for spec, target in zip(specs, targets, strict=True):
                check_build_target(target, sources, spec.name)  # again: it may have changed
            with _stage(timings, "load"):
                if progress is not None:
                    progress("", "reading the map, the attitudes and the DEM")
                # Only the neighbourhood of the sections built is read from the map.
                inputs = load_inputs(project, warn, specs)
                column_said: list[str] = []  # thickness = "map": said once, and in build.log

                def say(message: str) -> None:
                    column_said.append(message)
                    warn(message)

                try:
                    project = resolve_map_thicknesses(project, inputs, say)
                except BaseException:
                    inputs.close()
                    raise
                info = title_info(project, getattr(inputs.dem, "crs", None))
            jobs = []
            try:
                for spec, target in zip(specs, targets, strict=True):
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
            for job, said, job_timings, figures in _run_jobs(jobs, inputs.map_data,
                                                             _workers(workers), progress):
                for message in said[len(job.said):]:  # the checks' warnings, said in a worker
                    warn(_named(message, job.spec.name))
                if timings is not None:
                    for k, v in job_timings.items():
                        timings[k] = timings.get(k, 0.0) + v
                if summaries is not None:
                    summaries[job.target] = figures
    except BaseException:
        if created:
            with contextlib.suppress(OSError):
                outdir.rmdir()  # only if still empty
        raise
    if progress is not None:
        progress("", "")  # done
    return [job.target for job in jobs]


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


WORKERS_ENV = "MAPSECTION_WORKERS"


def _workers(workers: int | None) -> int:
    """How many sections are built at once: ``workers``, else the MAPSECTION_WORKERS
    environment variable, else one per CPU core."""
    import os

    if workers is None:
        text = os.environ.get(WORKERS_ENV, "").strip()
        if text:
            try:
                workers = int(text)
            except ValueError:
                raise ParameterError(f"{WORKERS_ENV}={text!r}: not a whole number of "
                                     "workers") from None
    if workers is not None and workers < 1:
        raise ParameterError(f"workers: {workers}: must be 1 or more")
    return workers or os.cpu_count() or 1


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


# The jobs of the build in progress, read by forked workers (nothing is pickled but an
# index), and the queue that carries the workers' progress to the parent (or None).
_JOBS: list[tuple[_Job, Any]] = []
_QUEUE: list[Any] = [None]


def _write_job_at(index: int) -> tuple[list[str], dict[str, float], KeyFigures]:
    job, map_data = _JOBS[index]
    queue = _QUEUE[0]
    progress = None if queue is None else (lambda section, stage: queue.put((section, stage)))
    with reporting(progress, job.spec.name):
        return _write_job_named(job, map_data)


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


def _run_jobs(jobs: list[_Job], map_data: Any, workers: int | None,
              progress: Progress | None = None):
    """Yield (job, said, timings, key figures) for each job, writing them in parallel where
    that pays."""
    import multiprocessing
    import os

    n = min(len(jobs), workers or os.cpu_count() or 1)
    if n < 2 or "fork" not in multiprocessing.get_all_start_methods():
        for job in jobs:
            with reporting(progress, job.spec.name):
                result = _write_job_named(job, map_data)
            yield (job, *result)
        return
    from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait

    # Import the construction, drawing and writing code once, here, so that workers
    # inherit it.
    from . import checks, construct, export  # noqa: F401
    from .render import area_depth, report, restoration, section, section_folder  # noqa: F401
    from .render import sequence as render_sequence  # noqa: F401

    _preload_writers()

    context = multiprocessing.get_context("fork")
    queue = context.SimpleQueue() if progress is not None else None

    def drain() -> None:
        while queue is not None and not queue.empty():
            progress(*queue.get())

    _JOBS[:] = [(job, map_data) for job in jobs]
    _QUEUE[0] = queue
    # A progress display pauses its own thread while the workers are forked.
    paused = getattr(progress, "paused", None)
    try:
        with ProcessPoolExecutor(n, mp_context=context) as pool:
            with paused() if paused is not None else contextlib.nullcontext():
                futures = [pool.submit(_write_job_at, i) for i in range(len(jobs))]
            pending = set(futures)
            while pending:
                _, pending = wait(pending, timeout=0.2, return_when=FIRST_COMPLETED)
                drain()
            drain()
            results = [f.result() for f in futures]
    finally:
        _JOBS.clear()
        _QUEUE[0] = None
        if queue is not None:
            queue.close()
    for job, result in zip(jobs, results, strict=True):
        yield (job, *result)


def _preload_writers() -> None:
    """Import, in the parent, what every worker would otherwise import for itself when it
    first writes a figure (the PDF and SVG backends, the font subsetter, the GIF writer):
    forked workers then share one copy instead of each paying the import."""
    import importlib

    for name in ("matplotlib.backends.backend_pdf", "matplotlib.backends.backend_svg",
                 "fontTools.subset", "PIL.GifImagePlugin", "PIL.PngImagePlugin"):
        try:
            importlib.import_module(name)
        except ImportError:  # not installed: the worker would have failed on it anyway
            pass


def _folder_name(name: str) -> str:
    """A section name as a folder name (see :func:`mapsection.outputs.folder_name`)."""
    from .outputs import folder_name

    return folder_name(name)
