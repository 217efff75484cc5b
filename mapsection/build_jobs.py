"""Writing the sections of a build, one after the other or in forked workers.

:func:`mapsection.build.build_project` reads the inputs once and gathers, for each
section, a :class:`Job` (its data, its temporary folder); :func:`run_jobs` then constructs
each draft, runs its checks and writes its folder, in up to ``workers`` processes at once
where the system can fork (the workers inherit the loaded inputs, nothing is pickled but
an index). Writing a folder whole or not at all, and swapping the folders in only once
every section is written, stay with ``build_project``.
"""

from __future__ import annotations

import contextlib
from collections.abc import Callable
from typing import Any

from .errors import ParameterError
from .stages import Progress, reporting

WORKERS_ENV = "MAPSECTION_WORKERS"


def workers_for(workers: int | None) -> int:
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


# The jobs of the build in progress, read by forked workers (nothing is pickled but an
# index), and the queue that carries the workers' progress to the parent (or None).
_JOBS: list[tuple] = []
_QUEUE: list[Any] = [None]


def _write_job_at(index: int) -> tuple:
    job, map_data, write, name = _JOBS[index]
    queue = _QUEUE[0]
    progress = None if queue is None else (lambda section, stage: queue.put((section, stage)))
    with reporting(progress, name(job)):
        return write(job, map_data)


def run_jobs(jobs: list, map_data: Any, workers: int | None,
             progress: Progress | None, write: Callable, name: Callable[[Any], str]):
    """Yield ``(job, *write(job, map_data))`` for each job, in parallel where that pays
    (``workers`` processes at most, forked: they inherit ``jobs`` and ``map_data``);
    ``name(job)`` names the section whose stages the progress shows."""
    import multiprocessing
    import os

    n = min(len(jobs), workers or os.cpu_count() or 1)
    if n < 2 or "fork" not in multiprocessing.get_all_start_methods():
        for job in jobs:
            with reporting(progress, name(job)):
                result = write(job, map_data)
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

    _JOBS[:] = [(job, map_data, write, name) for job in jobs]
    _QUEUE[0] = queue
    # A progress display pauses its own thread while the workers are forked.
    paused = getattr(progress, "paused", None)
    try:
        with ProcessPoolExecutor(n, mp_context=context) as pool:
            with paused() if paused is not None else contextlib.nullcontext(), _frozen():
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


@contextlib.contextmanager
def _frozen():
    """While the workers are forked, the parent's objects are kept out of the garbage
    collector's reach (``gc.freeze``): a worker's collections then do not write to the
    pages it shares with the parent (copy-on-write), which would copy them."""
    import gc

    gc.collect()
    gc.freeze()
    try:
        yield
    finally:
        gc.unfreeze()


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
