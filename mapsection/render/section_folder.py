"""The one writer of a section's check outputs, for ``mapsection build`` and ``mapsection check``.

:func:`write_check_outputs` writes, into a section folder:

- ``checks.json`` -- the four tests (:meth:`mapsection.checks.CheckReport.to_dict`);
- ``restored.png``, ``.svg``, ``.pdf`` -- the restored section;
- ``sequence/sequence_01.png`` ... and ``sequence/sequence.gif`` -- the incremental
  sequence from the restored state to the draft;
- ``area_depth.png`` -- excess area against depth (when at least two horizons have one);
- ``report.html`` -- the self-contained report, embedding ``section.png`` when the folder
  holds one and the figures above;
- the layers ``restored_horizons`` and ``restored_units`` added to ``section.gpkg`` when
  the folder holds one (a build's folder).

``mapsection check --html FILE`` runs the same writer in a scratch folder, after drawing
the section figure there, and keeps its report.html (:func:`write_check_report`): the
report is the one ``mapsection build`` writes for the same section.

Example::

    from mapsection.render.section_folder import write_check_outputs
    write_check_outputs("out/A", draft, run_checks(draft, project.thresholds))
"""

from __future__ import annotations

import json
import os
import shutil
import tempfile
from pathlib import Path

from .._atomic import atomic_file
from ..checks import CheckReport
from ..checks.sequence import incremental_sequence
from ..draft import Draft
from ..errors import OutputError
from ..mapdata import MapData

__all__ = ["write_check_outputs", "write_check_report", "write_checks_json"]


def write_checks_json(report: CheckReport, path: str | os.PathLike) -> Path:
    """Write ``report.to_dict()`` as JSON (no NaN: RFC 8259), all-or-nothing."""
    path = Path(path)
    text = json.dumps(report.to_dict(), indent=2, allow_nan=False)
    with atomic_file(path) as tmp:
        tmp.write_text(text + "\n", encoding="utf-8")
    return path


def _write_check_figures(folder: Path, draft: Draft, report: CheckReport
                         ) -> tuple[list[Path], dict[str, Path]]:
    """The checks' figures; returns the paths written and the report's figures by name."""
    from ..export import add_layers, restoration_frames
    from .area_depth import draw_area_depth
    from .restoration import draw_restoration
    from .sequence import write_sequence

    out: list[Path] = []
    figures = {"section": folder / "section.png"}
    restoration = report.restoration
    if (folder / "section.gpkg").is_file():
        add_layers(folder / "section.gpkg", restoration_frames(restoration))
    # TrueType (Type 42) fonts in the PDF, as on the section sheet (see .fonts).
    out += draw_restoration(restoration, folder / "restored")
    figures["restored"] = folder / "restored.png"
    # The structure forming step by step: sequence/sequence_01.png ... and a GIF.
    seq = folder / "sequence"
    seq.mkdir()
    frames = incremental_sequence(draft, restoration)
    written = write_sequence(frames, seq, column=draft.column, title=draft.name,
                             ve=float(draft.ve or 1.0),
                             ground=(draft.profile.distance, draft.profile.z))
    out += written
    pngs = [p for p in written if p.suffix == ".png"]
    if pngs:
        figures["sequence_first"], figures["sequence_last"] = pngs[0], pngs[-1]
    gifs = [p for p in written if p.suffix == ".gif"]
    if gifs:
        figures["sequence"] = gifs[0]
    fit = report.area_balance.detachment
    if fit is not None and len(fit.points) >= 2:
        out.append(draw_area_depth(fit, folder / "area_depth.png", draft.name))
        figures["area_depth"] = folder / "area_depth.png"
    return out, figures


def write_check_outputs(folder: str | os.PathLike, draft: Draft, report: CheckReport
                        ) -> list[Path]:
    """Write checks.json, the checks' figures and report.html into a section folder.

    Parameters
    ----------
    folder : path
        An existing folder; ``section.png`` and ``section.gpkg`` in it, when there,
        go into the report and receive the restored layers.
    draft : Draft
        The section the checks were run on.
    report : CheckReport
        What :func:`mapsection.checks.run_checks` returned for ``draft``.

    Returns
    -------
    list of Path
        Every file written, ``checks.json`` first and ``report.html`` last.

    Examples
    --------
    >>> write_check_outputs("out/A", draft, report)  # doctest: +SKIP
    """
    from .report import write_report

    folder = Path(folder)
    if not folder.is_dir():
        raise OutputError(f"{folder}: output folder does not exist")
    out = [write_checks_json(report, folder / "checks.json")]
    written, figures = _write_check_figures(folder, draft, report)
    out += written
    out.append(write_report(folder / "report.html", draft, report, figures))
    return out


def write_check_report(path: str | os.PathLike, draft: Draft, report: CheckReport,
                       map_data: MapData | None = None, *, sheet=None, info=None) -> Path:
    """Write report.html alone: the report a build writes for the section, all-or-nothing.

    The section figure (with its location map when ``map_data`` is given, the FAIL mark
    and contact misfits of ``report``; ``sheet`` and ``info`` as for
    :func:`mapsection.render.section.draw_section`) and the checks' outputs are drawn in
    a scratch folder by :func:`write_check_outputs`; only the report, which embeds them,
    is kept.
    """
    from .section import draw_section

    path = Path(path)
    with tempfile.TemporaryDirectory(prefix="mapsection-check-") as tmp:
        draw_section(draft, Path(tmp) / "section", map_data, formats=("png",), sheet=sheet,
                     info=info, checks=report)
        write_check_outputs(tmp, draft, report)
        with atomic_file(path) as target:
            shutil.copyfile(Path(tmp) / "report.html", target)
    return path
