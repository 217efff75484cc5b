"""``mapsection column``: each unit's thickness measured from the map's contacts and the DEM."""

from __future__ import annotations

import math
from pathlib import Path

import click

from .._atomic import atomic_file
from ..caution import CAUTION
from ..errors import OutputError
from ._common import note, warn

HEADER = ("unit", "given_m", "map_m", "+/-_m", "points", "spread_m", "misfit_deg", "blocks")
PLANES = ("contact", "block", "dip_domain", "strike/dip", "points", "rms_m", "misfit_deg")


def _num(value, digits: int = 0) -> str:
    return "-" if value is None or not math.isfinite(value) else f"{value:.{digits}f}"


@click.command(
    "column",
    epilog=f"CAUTION: {CAUTION}",
    context_settings={"help_option_names": ["-h", "--help"]},
)
@click.argument("project", metavar="PROJECT.toml", type=click.Path(dir_okay=False))
@click.option("-o", "--output", metavar="FILE.toml",
              help="Write a [[stratigraphy]] block with the map's thicknesses (replaced whole).")
def command(project: str, output: str | None) -> None:
    """Measure each unit's thickness from the map: contacts on the DEM fitted by planes.

    For every contact between two adjacent units of the [[stratigraphy]] column,
    the mapped boundary is sampled every DEM pixel, given its elevation from the
    DEM and fitted by a plane in each fault block and dip domain (the three-point
    problem, by least squares). A unit's thickness is the distance perpendicular
    to bedding between its top and base planes. The table gives the thickness
    given in the project file, the map's estimate and its uncertainty (about
    95 %, block bootstrap), the contact points used, their RMS distance from the
    planes (spread), the mean angle between the planes and the attitudes nearby
    (misfit) and the fault blocks. "min" marks a lower bound: a unit with only
    one contact mapped is at least as thick as its outcrop reaches. A second table
    lists every contact plane: its fault block, dip domain, strike/dip
    (right-hand rule), points, RMS residual and misfit to the attitudes nearby.

    With -o, FILE.toml receives the column as [[stratigraphy]] tables, youngest
    first, with the map's thicknesses and the column's other keys, to paste into
    the project file (or use thickness = "map" there).

    \b
    Example (the sample area):
      mapsection column sample_area/project.toml
      mapsection column sample_area/project.toml -o column.toml
    """
    from ..project import load_project
    from ..thickness import measure_column, stratigraphy_toml

    proj = load_project(project)
    if output is not None:
        _check_output(Path(output), proj)
    est = measure_column(proj, warn)
    rows = [HEADER]
    for u in proj.column.units:
        e = est.unit(u.name)
        given = "map" if u.thickness_from_map else _num(u.thickness)
        value = _num(e.thickness) + (" min" if e.kind == "minimum" else "")
        rows.append((u.name, given, value if e.kind != "none" else "-", _num(e.uncertainty, 1),
                     str(e.n_points) if e.n_points else "-", _num(e.spread, 1),
                     _num(e.misfit_deg, 1), "; ".join(e.blocks) or "-"))
    _table(rows)
    click.echo("")
    planes = [PLANES]
    for c in est.contacts:
        p = c.plane
        planes.append((f"{c.upper} / {c.lower}", c.block, c.domain,
                       f"{p.strike:03.0f}/{p.dip:.1f}", str(p.n_points), _num(p.rms, 1),
                       _num(c.misfit_deg, 1)))
    _table(planes)
    for u in proj.column.units:
        e = est.unit(u.name)
        if e.kind != "measured":
            note(f"{u.name}: {e.why}")
    if output is not None:
        with atomic_file(output) as tmp:
            tmp.write_text(stratigraphy_toml(proj.column, est), encoding="utf-8")
        note(f"wrote the [[stratigraphy]] block to {output}")


def _table(rows: list[tuple[str, ...]]) -> None:
    widths = [max(len(r[k]) for r in rows) for k in range(len(rows[0]))]
    for r in rows:
        click.echo("  ".join(c.ljust(w) for c, w in zip(r, widths, strict=True)).rstrip())


def _check_output(path: Path, proj) -> None:
    """Refuse to write onto one of the project's input files."""
    if path.is_dir():
        raise OutputError(f"{path}: is a folder; give the name of the .toml file to write")
    inputs = [proj.path, proj.dem_path, proj.map_path, proj.attitudes_path]
    for p in inputs:
        try:
            same = path.resolve() == Path(p).resolve()
        except OSError:
            same = False
        if same:
            what = "the project file" if p == proj.path else f"an input named in {proj.path}"
            raise OutputError(f"{path}: would overwrite {what} ({p}); give another output file")
