"""A project's column from the map: the estimate of its loaded inputs, the
``thickness = "map"`` entries resolved, and the ``[[stratigraphy]]`` text
(see :mod:`mapsection.thickness`)."""

from __future__ import annotations

import dataclasses
import math
from typing import TYPE_CHECKING

import numpy as np
import shapely

from ..errors import ProjectFileError
from ..stratigraphy import Column, Unit
from .estimate import estimate_column
from .planes import Warn
from .results import ColumnEstimate, UnitThickness

if TYPE_CHECKING:  # pragma: no cover - typing only
    from ..project import Project
    from ..session import ProjectInputs


def project_estimate(project: Project, inputs: ProjectInputs) -> ColumnEstimate:
    """The column estimate of a loaded project (computed once per loaded inputs)."""
    cached = inputs._column_estimate
    if cached is not None:
        return cached
    dem = inputs.dem
    crs = project.crs

    def elevation(x, y):
        return dem.sample(x, y, crs=crs)

    map_data, attitudes = _near_inputs(inputs)
    inputs._near_partial = map_data.partial
    est = estimate_column(project.column, map_data, elevation, attitudes,
                          float(dem.pixel_size))
    inputs._column_estimate = est
    return est


def _near_inputs(inputs: ProjectInputs):
    """The map and attitudes a build compares the column with: for a build's read
    (``inputs.near``), the polygons meeting the box around its corridors and the attitudes
    inside it (mapsection.extent.THICKNESS_NEAR_M); otherwise all of them."""
    md, att = inputs.map_data, inputs.attitudes
    if inputs.near is None:
        return md, att
    box = shapely.box(*inputs.near)
    idx = np.sort(md.unit_tree.query(box, predicate="intersects"))
    if len(idx) < len(md.unit_geoms):
        from ..mapdata import MapData

        md = MapData(md.units.iloc[idx].reset_index(drop=True), md.unit_field, md.faults,
                     dict(md.fault_fields), md.crs, window=inputs.near,
                     left_out=md.left_out + len(md.unit_geoms) - len(idx), extent=md.extent)
    x0, y0, x1, y1 = inputs.near
    x, y = np.asarray(att.x, float), np.asarray(att.y, float)
    inside = (x >= x0) & (x <= x1) & (y >= y0) & (y <= y1)
    if not inside.all():
        att = att.subset(np.flatnonzero(inside))
    return md, att


def measure_column(project: Project, warn: Warn | None = None) -> ColumnEstimate:
    """Read a project's map, attitudes and DEM and measure its column from the map (the edge).

    Examples
    --------
    >>> from mapsection.project import load_project
    >>> est = measure_column(load_project("sample_area/project.toml"))  # doctest: +SKIP
    >>> est.unit("Talvo Limestone").thickness  # doctest: +SKIP
    180.0...
    """
    from ..session import load_inputs

    inputs = load_inputs(project, warn)
    try:
        return project_estimate(project, inputs)
    finally:
        inputs.close()


def suggestion(estimate: ColumnEstimate) -> float | None:
    """A thickness to suggest where the map gives none: the mean of those it measured."""
    vals = [u.thickness for u in estimate.units if u.kind == "measured"]
    return float(np.mean(vals)) if vals else None


def resolve_map_thicknesses(project: Project, inputs: ProjectInputs,
                            warn: Warn | None = None) -> Project:
    """The project with ``thickness = "map"`` replaced by the map's estimate.

    A number given in the project file is kept; where the map's estimate differs
    from it by more than the estimate's uncertainty, ``warn`` says so with both
    figures. A unit with only one contact mapped takes the lower bound its
    outcrop gives (said through ``warn``). A ``"map"`` unit without any usable
    contact is a :class:`ProjectFileError` naming the unit and suggesting a number.
    """
    from .._messages import default_warn

    warn = warn or default_warn
    column = project.column
    if not any(u.thickness_from_map for u in column.units) and inputs._thickness_said:
        return project
    est = project_estimate(project, inputs)
    say = not inputs._thickness_said
    inputs._thickness_said = True
    fname = project.path.name
    units = []
    for i, u in enumerate(column.units):
        e = est.unit(u.name)
        if not u.thickness_from_map:
            if (say and e.kind == "measured" and e.uncertainty is not None
                    and math.isfinite(e.uncertainty)
                    and abs(e.thickness - u.thickness) > e.uncertainty):
                near = " near the sections" if inputs._near_partial else ""
                warn(f"{fname}: stratigraphy[{i}] ({u.name}): thickness {u.thickness:g} m given; "
                     f"the map's contacts{near} give {e.thickness:.0f} +/- {_m(e.uncertainty)} m "
                     f"({e.n_points} points; see 'mapsection column')")
            units.append(u)
            continue
        if e.kind == "none":
            s = suggestion(est)
            hint = (f"give a number instead, e.g. thickness = {s:.0f}.0 (the mean of the "
                    f"thicknesses measured from the map)" if s is not None
                    else "give a number of metres instead")
            raise ProjectFileError(f"{fname}: stratigraphy[{i}].thickness: \"map\" for "
                                   f"{u.name}: {e.why}; {hint}")
        if e.kind == "minimum" and say:
            warn(f"{fname}: stratigraphy[{i}] ({u.name}): thickness \"map\": {e.why}; using "
                 f"{e.thickness:.0f} m, a lower bound")
        elif say:
            unc = (f" +/- {_m(e.uncertainty)}" if e.uncertainty is not None
                   and math.isfinite(e.uncertainty) else "")
            warn(f"{fname}: stratigraphy[{i}] ({u.name}): thickness from the map: "
                 f"{e.thickness:.0f}{unc} m ({e.n_points} points)")
        units.append(dataclasses.replace(u, thickness=round(float(e.thickness), 1),
                                         thickness_from_map=False))
    return dataclasses.replace(project, column=Column(tuple(units)))


def unit_line(u: Unit, e: UnitThickness) -> list[str]:
    """The ``[[stratigraphy]]`` entry of one unit, with the map's thickness where measured."""
    lines = ["[[stratigraphy]]", f"unit = {_toml_str(u.name)}"]
    measured = e.kind == "measured" and e.thickness is not None
    if not u.layered:  # cover and intrusive units: their own keys, no measured thickness
        lines.append(f"kind = {_toml_str(u.kind)}")
        lines.append(f"thickness = {u.thickness:.1f}" if u.kind == "cover"
                     else f"depth = {u.depth:.1f}")
    elif measured:
        unc = (f"+/- {_m(e.uncertainty)} m, " if e.uncertainty is not None
               and math.isfinite(e.uncertainty) else "")
        lines.append(f"thickness = {e.thickness:.1f}  # from the map: {unc}{e.n_points} points")
    elif not u.thickness_from_map:
        bound = f"at least {e.thickness:.0f} m" if e.kind == "minimum" else "no estimate"
        lines.append(f"thickness = {u.thickness:.1f}  # as given; the map: {bound} ({e.why})")
    elif e.kind == "minimum":
        lines.append(f"thickness = {e.thickness:.1f}  # from the map: a lower bound ({e.why})")
    else:
        lines.append(f'thickness = "map"  # not measured: {e.why}')
    for key, val in (("colour", u.colour), ("age", u.age), ("lithology", u.lithology)):
        if val is not None:
            lines.append(f"{key} = {_toml_str(val)}")
    return lines


def stratigraphy_toml(column: Column, estimate: ColumnEstimate) -> str:
    """A ``[[stratigraphy]]`` block, youngest first, with the map's thicknesses."""
    out = ["# Stratigraphic column, youngest first; thicknesses measured from the map",
           "# (mapsection column); check them before use.", ""]
    for u in column.units:
        out += unit_line(u, estimate.unit(u.name)) + [""]
    return "\n".join(out)


def _m(value: float) -> str:
    """Metres to show: one decimal below 10 m, none above."""
    return f"{value:.1f}" if value < 10 else f"{value:.0f}"


def _toml_str(text: str) -> str:
    return '"' + text.replace("\\", "\\\\").replace('"', '\\"') + '"'


__all__ = ["measure_column", "project_estimate", "resolve_map_thicknesses", "stratigraphy_toml",
           "suggestion", "unit_line"]
