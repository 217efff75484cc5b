"""The project file: one TOML file naming the DEM, the map, the attitudes, the
stratigraphic column and the section lines.

Relative paths resolve against the project file's folder. Every missing or
wrong key is reported with its key path and the file's name, e.g.
``project.toml: section[1].corridor: must be a number > 0``.
"""

from __future__ import annotations

import math
import os
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any

import pyproj

from ._messages import Warn, human
from ._messages import default_warn as _default_warn
from .errors import ProjectFileError, SettingError, StratigraphyError, ThresholdError
from .line import self_crossing
from .settings import (
    CONVENTIONS,
    MAX_LINE_LENGTH_M,
    SECTION_SETTING_KEYS,
    THRESHOLD_KEYS,
    FaultSpec,
    SectionSettings,
    Thresholds,
)
from .stratigraphy import COVER_THICKNESS, INTRUSIVE_DEPTH, Column, Unit
from .toml_table import TableReader, array_of_tables, check_known

if TYPE_CHECKING:  # pragma: no cover - typing only
    from .line import SectionLine

# Every key each table accepts (anything else is reported as an unknown key).
TOP_KEYS = frozenset({"crs", "title", "dem", "map", "attitudes", "stratigraphy", "section",
                      "fault", "checks"})
DEM_KEYS = frozenset({"path", "source", "vertical_unit"})
FAULT_ROLES = ("dip", "dip_direction", "sense", "name")
MAP_KEYS = frozenset({"path", "source", "units_layer", "unit_field", "faults_layer",
                      "default_fault_dip",
                      *(f"fault_{r}_field" for r in FAULT_ROLES)})
FAULT_KEYS = frozenset({"name", "dip", "detachment", "radius", "cuts", "fold"})
FAULT_FOLDS = ("fault-bend",)
ATTITUDE_ROLES = ("x", "y", "z", "strike", "dip", "dip_direction", "id", "overturned",
                  "attitude")
ATTITUDE_KEYS = frozenset({"path", "source", "layer", "convention", "keep_readings",
                           *(f"{r}_field" for r in ATTITUDE_ROLES)})
UNIT_KEYS = frozenset({"unit", "thickness", "colour", "color", "age", "lithology", "label",
                       "kind", "unconformity", "depth"})
SECTION_KEYS = frozenset({"name", "line", "fold_axis", "sheet", "scale", "portrait",
                          "constrained_depth", *SECTION_SETTING_KEYS})
CHECK_KEYS = THRESHOLD_KEYS


@dataclass(frozen=True, kw_only=True)
class SectionSpec(SectionSettings):
    """One ``[[section]]`` of the project file: its name, its line and its settings
    (:class:`~mapsection.settings.SectionSettings`, defaults and ranges defined there)."""

    name: str
    line: tuple[tuple[float, float], ...]
    fold_axis: tuple[float, float] | None = None  # (trend, plunge): given, not computed
    sheet: str | None = None  # the figure's sheet (A4 ... A0, letter, tabloid); None: A3
    scale: float | None = None  # the figure's scale denominator; None: the largest that fits
    portrait: bool = False
    constrained_depth: float | None = None  # m below the lowest ground; dashed below


@dataclass(frozen=True)
class Project:
    path: Path
    crs: pyproj.CRS
    dem_path: Path
    map_path: Path
    units_layer: str
    unit_field: str
    faults_layer: str | None
    attitudes_path: Path
    attitudes_layer: str | None
    convention: str
    column: Column
    sections: tuple[SectionSpec, ...]
    thresholds: Thresholds = field(default_factory=Thresholds)
    fault_fields: dict[str, str] = field(default_factory=dict)
    attitude_fields: dict[str, str] = field(default_factory=dict)
    dem_vertical_unit: str | None = None  # [dem] vertical_unit: used when the DEM does not say
    keep_readings: tuple[str, ...] = ()  # ids kept in the dip domains whatever they say
    faults: tuple[FaultSpec, ...] = ()
    default_fault_dip: float | None = None  # true dip for faults with no dip anywhere
    title: str = ""
    sources: dict[str, str] = field(default_factory=dict)  # "dem"/"map"/"attitudes" -> text

    def section(self, name: str | SectionSpec) -> SectionSpec:
        """The section named ``name`` (a :class:`SectionSpec` is returned as it is): the one
        place where a section given by name becomes its settings."""
        if isinstance(name, SectionSpec):
            return name
        for s in self.sections:
            if s.name == name:
                return s
        names = ", ".join(s.name for s in self.sections)
        raise ProjectFileError(f"{self.path.name}: no section named {name!r} (sections: {names})")

    def section_line(self, spec: SectionSpec) -> SectionLine:
        """The section line of ``spec`` in the project's CRS, named after the section."""
        from .line import SectionLine

        return SectionLine(spec.line, self.crs, spec.name)


def load_project(path: str | os.PathLike, warn: Warn | None = None) -> Project:
    """Read and validate a project file.

    Every setting is checked against its documented range
    (:mod:`mapsection.settings`); a value in range but unusually large is said
    through ``warn``. A UTF-8 byte-order mark at the start of the file is accepted.
    The tables are read in turn: the CRS, ``[dem]``, ``[map]``, ``[attitudes]``,
    ``[[stratigraphy]]``, ``[[section]]``, ``[[fault]]``, ``[checks]``; the first
    problem found stops the reading with its key path.

    Parameters
    ----------
    path : the project file (TOML).
    warn : where notes on unusual settings are said (default: stderr).

    Returns
    -------
    Project
        Its paths resolved against the project file's folder.

    Raises
    ------
    ProjectFileError
        For a file that cannot be read or is not TOML, and for a missing, unknown or
        wrong key, naming the file and the key path.

    Examples
    --------
    >>> # project = load_project("sample_area/project.toml")
    >>> # project.crs.to_epsg(), [s.name for s in project.sections]  -> (32611, ['A', 'B'])
    """
    warn = warn or _default_warn
    path = Path(path)
    fname = path.name
    raw = _read_toml(path)
    base = path.resolve().parent
    top = TableReader(fname, raw)
    check_known(top, TOP_KEYS)
    crs = _crs(top)
    # Every input table is there and holds only known keys before any value is read.
    tables = {key: _table(top, key, keys) for key, keys in
              (("dem", DEM_KEYS), ("map", MAP_KEYS), ("attitudes", ATTITUDE_KEYS))}
    inputs = {**_dem(tables["dem"], base), **_map(tables["map"], base),
              **_attitudes(tables["attitudes"], base)}
    column = _column(fname, raw)
    sections = _sections(fname, raw, warn)
    faults = _faults(fname, raw, column)
    return Project(
        path=path,
        crs=crs,
        column=column,
        sections=sections,
        thresholds=_thresholds(top.sub("checks", required=False)),
        faults=faults,
        title=top.get("title", str, ""),
        sources={k: r.get("source", str) for k, r in tables.items() if "source" in r.table},
        **inputs,
    )


def _read_toml(path: Path) -> dict[str, Any]:
    """The project file's TOML; ProjectFileError for a file that cannot be read or parsed."""
    fname = path.name
    try:
        # utf-8-sig: a byte-order mark, as some editors write, is accepted and dropped.
        return tomllib.loads(path.read_text(encoding="utf-8-sig"))
    except FileNotFoundError:
        raise ProjectFileError(f"{path}: no such project file") from None
    except IsADirectoryError:
        raise ProjectFileError(f"{path}: is a folder, not a project file") from None
    except OSError as exc:
        raise ProjectFileError(f"{path}: cannot be read ({exc.strerror})") from None
    except UnicodeDecodeError as exc:
        raise ProjectFileError(f"{fname}: not UTF-8 text (byte {exc.start + 1} of the file); "
                               "save it as UTF-8") from None
    except tomllib.TOMLDecodeError as exc:
        raise ProjectFileError(f"{fname}: not valid TOML ({exc})") from None


def _crs(top: TableReader) -> pyproj.CRS:
    """``crs``: a projected CRS in metres."""
    crs_text = top.get("crs", str)
    try:
        crs = pyproj.CRS(crs_text)
    except pyproj.exceptions.CRSError:
        raise top.fail("crs", f"unknown CRS {crs_text!r}") from None
    axis_units = {a.unit_name.lower() for a in crs.axis_info[:2]}
    if not crs.is_projected or not axis_units <= {"metre", "meter"}:
        raise top.fail("crs", f"{crs_text} is not a projected CRS in metres")
    return crs


def _table(top: TableReader, key: str, allowed: frozenset[str]) -> TableReader:
    """A required table holding only the ``allowed`` keys."""
    table = top.sub(key)
    check_known(table, allowed)
    return table


def _dem(dem: TableReader, base: Path) -> dict[str, Any]:
    """``[dem]``: the DEM's path and the vertical unit to use when the DEM does not say."""
    return {"dem_path": dem.path("path", base),
            "dem_vertical_unit": (dem.choice("vertical_unit", "metre")
                                  if "vertical_unit" in dem.table else None)}


def _map(mp: TableReader, base: Path) -> dict[str, Any]:
    """``[map]``: the map's path, layers, fields and the faults' default dip."""
    return {"map_path": mp.path("path", base),
            "units_layer": mp.get("units_layer", str),
            "unit_field": mp.get("unit_field", str),
            "faults_layer": mp.get("faults_layer", str, None),
            "fault_fields": {k: mp.get(f"fault_{k}_field", str, k) for k in FAULT_ROLES},
            "default_fault_dip": mp.number("default_fault_dip", None)}


def _attitudes(att: TableReader, base: Path) -> dict[str, Any]:
    """``[attitudes]``: the file's path, layer, convention, fields and readings kept."""
    return {"attitudes_path": att.path("path", base),
            "attitudes_layer": att.get("layer", str, None),
            "convention": att.choice("convention", CONVENTIONS[0]),
            "attitude_fields": {k: att.get(f"{k}_field", str, k) for k in ATTITUDE_ROLES},
            "keep_readings": _keep_readings(att)}


def _column(fname: str, raw: dict[str, Any]) -> Column:
    """``[[stratigraphy]]``: the column, youngest unit first, its unconformities checked."""
    units = [_unit(r) for r in array_of_tables(fname, raw, "stratigraphy", "list of units",
                                                UNIT_KEYS)]
    try:
        column = Column(tuple(units))
        column.check_unconformities()
    except StratigraphyError as exc:
        raise ProjectFileError(f"{fname}: {exc}") from None
    return column


def _unit(r: TableReader) -> Unit:
    """One ``[[stratigraphy]]`` unit."""
    colour = r.get("colour", str, None) or r.get("color", str, None)
    if colour is not None and not _is_hex_colour(colour):
        raise r.fail("colour", f"must be '#rrggbb', got {colour!r}")
    # "map": measured from the map's contacts when the inputs are loaded (thickness.py)
    from_map = r.table.get("thickness") == "map"
    if isinstance(r.table.get("thickness"), str) and not from_map:
        raise r.fail("thickness", f'must be a number of metres or "map", '
                                  f'got {r.table["thickness"]!r}')
    kind = r.choice("kind", "layered")
    # a cover unit's thickness is optional: a thin veneer by default
    default = COVER_THICKNESS if kind == "cover" else (
        math.nan if kind == "intrusive" else ...)
    # an intrusive unit is no layer: no thickness unless one is given (then unused)
    no_number = from_map or (kind == "intrusive" and "thickness" not in r.table)
    thickness = math.nan if no_number else r.number("thickness", default)
    return Unit(
        r.text("unit"),
        thickness,
        colour,
        r.get("age", str, None),
        r.get("lithology", str, None),
        thickness_from_map=from_map,
        label=r.get("label", str, None),
        kind=kind,
        unconformity=r.get("unconformity", bool, False),
        depth=r.number("depth", INTRUSIVE_DEPTH),
    )


def _sections(fname: str, raw: dict[str, Any], warn: Warn) -> tuple[SectionSpec, ...]:
    """``[[section]]``: the sections, each with a name (and folder) of its own."""
    sections = [_section(r, warn) for r in array_of_tables(fname, raw, "section",
                                                      "list of section lines", SECTION_KEYS)]
    names = [s.name for s in sections]
    dup = sorted({n for n in names if names.count(n) > 1})
    if dup:
        raise ProjectFileError(f"{fname}: section: two sections share the name {dup[0]!r}")
    from .outputs import check_section_names

    check_section_names(fname, names)  # each section needs a folder of its own
    return tuple(sections)


def _thresholds(checks: TableReader | None) -> Thresholds:
    """The optional ``[checks]`` table: the tests' thresholds."""
    if checks is None:
        return Thresholds()
    check_known(checks, CHECK_KEYS)
    vals = {k: checks.get(k, float, dflt) for k, dflt in Thresholds().__dict__.items()}
    try:  # the ranges are checked once, by Thresholds itself
        return Thresholds(**vals)
    except ThresholdError as exc:
        raise checks.fail(exc.key, exc.reason) from None


def _keep_readings(att: TableReader) -> tuple[str, ...]:
    """``[attitudes] keep_readings``: ids (strings or integers) of readings kept in the dip
    domains even where their neighbours disagree with them."""
    ids = att.get("keep_readings", list, [])
    for j, v in enumerate(ids):
        if isinstance(v, bool) or not isinstance(v, str | int):
            raise att.fail(f"keep_readings[{j}]", f"must be a reading id (text or integer), "
                                                   f"got {v!r}")
    return tuple(str(v) for v in ids)


def _faults(fname: str, raw: dict[str, Any], column: Column) -> tuple[FaultSpec, ...]:
    """The optional ``[[fault]]`` tables."""
    if "fault" not in raw:
        return ()
    out = []
    for r in array_of_tables(fname, raw, "fault", "list of faults", FAULT_KEYS):
        dip = r.number("dip", None)
        det = r.get("detachment", (float, int, str), None)
        if isinstance(det, int | float):
            det = float(det)
            if not math.isfinite(det):
                raise r.fail("detachment", f"must be a finite elevation, got {det!r}")
        elif isinstance(det, str) and det not in column.names:
            raise r.fail("detachment", f"unit {det!r} is not in the stratigraphic column "
                                       f"({', '.join(column.names)})")
        cuts = r.get("cuts", list, [])
        if not all(isinstance(c, str) for c in cuts):
            raise r.fail("cuts", f"must be a list of fault names, got {cuts!r}")
        fold = r.get("fold", str, None)
        if fold is not None and fold not in FAULT_FOLDS:
            raise r.fail("fold", f"must be one of {', '.join(FAULT_FOLDS)}, got {fold!r}")
        if fold is not None and det is None:
            raise r.fail("fold", "a fault-bend fold needs the fault's detachment (its lower "
                                 "flat): set detachment")
        out.append(FaultSpec(r.text("name"), dip, det,
                             r.number("radius", None), tuple(cuts), fold))
    names = [f.name for f in out]
    dup = sorted({n for n in names if names.count(n) > 1})
    if dup:
        raise ProjectFileError(f"{fname}: fault: two [[fault]] tables share the name {dup[0]!r}")
    for i, f in enumerate(out):
        if f.name in f.cuts:
            raise ProjectFileError(f"{fname}: fault[{i}].cuts: a fault cannot cut itself")
    return tuple(out)


def _section(r: TableReader, warn: Warn) -> SectionSpec:
    name = r.text("name")
    line = r.get("line", list)
    if len(line) < 2:
        raise r.fail("line", "needs at least two vertices [[x1, y1], [x2, y2]]")
    pts = []
    for j, p in enumerate(line):
        ok = (
            isinstance(p, list)
            and len(p) == 2
            and all(isinstance(c, int | float) and not isinstance(c, bool) for c in p)
        )
        if not ok:
            raise r.fail(f"line[{j}]", f"must be [x, y] numbers, got {p!r}")
        pts.append((float(p[0]), float(p[1])))
    if all(p == pts[0] for p in pts):
        raise r.fail("line", "has zero length")
    length = float(sum(((b[0] - a[0]) ** 2 + (b[1] - a[1]) ** 2) ** 0.5
                       for a, b in zip(pts[:-1], pts[1:], strict=True)))
    if length > MAX_LINE_LENGTH_M:
        raise r.fail("line", f"is {length:.1f} m long; a section line is at most "
                             f"{MAX_LINE_LENGTH_M:.0f} m long (check the coordinates and the crs)")
    crossing = self_crossing(pts)
    if crossing is not None:
        raise r.fail("line", f"crosses itself at ({human(crossing[0], 1)}, "
                             f"{human(crossing[1], 1)}); a section line must not")
    # The defaults and the ranges are SectionSettings' own (mapsection.settings).
    given = {k: r.get(k, str if k in ("method", "projection") else float)
             for k in SECTION_SETTING_KEYS if k in r.table}
    try:
        spec = SectionSpec(name=name, line=tuple(pts), fold_axis=_fold_axis(r),
                           **_sheet_keys(r), **given)
    except SettingError as exc:
        raise r.fail(exc.key, exc.reason) from None
    for key in ("pin", "loose"):
        value = getattr(spec, key)
        if value is not None and value > length:
            raise r.fail(key, f"{value:.1f} m lies beyond the end of the section line "
                              f"({length:.1f} m long)")
    for note in spec.notes():
        warn(f"{r.fname}: {r.prefix}{note}")
    return spec


def _fold_axis(r: TableReader) -> tuple[float, float] | None:
    """``fold_axis = [trend, plunge]`` (degrees) of a [[section]], or None."""
    val = r.get("fold_axis", list, None)
    if val is None:
        return None
    ok = len(val) == 2 and all(isinstance(v, int | float) and not isinstance(v, bool)
                               and math.isfinite(v) for v in val)
    if not ok or not (0.0 <= val[0] <= 360.0 and 0.0 <= val[1] <= 90.0):
        raise r.fail("fold_axis", f"must be [trend, plunge] in degrees (trend 0-360, plunge "
                                  f"0-90), got {val!r}")
    return float(val[0]) % 360.0, float(val[1])


def _sheet_keys(r: TableReader) -> dict[str, Any]:
    """The figure's sheet, scale, orientation and constrained depth of a [[section]]."""
    from .errors import ParameterError
    from .render.sheet import parse_scale, sheet_name

    out: dict[str, Any] = {"portrait": r.get("portrait", bool, False),
                           "constrained_depth": r.number("constrained_depth", None)}
    sheet = r.get("sheet", str, None)
    try:
        out["sheet"] = sheet_name(sheet) if sheet is not None else None
    except ParameterError as exc:
        raise r.fail("sheet", str(exc).split(": ", 1)[1]) from None
    scale = r.get("scale", (str, int, float), None)
    try:
        out["scale"] = parse_scale(scale) if scale is not None else None
    except ParameterError as exc:
        raise r.fail("scale", str(exc).split(": ", 1)[1]) from None
    return out


def _is_hex_colour(text: str) -> bool:
    return (
        len(text) == 7 and text[0] == "#" and all(c in "0123456789abcdefABCDEF" for c in text[1:])
    )
