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

from .errors import ProjectFileError, StratigraphyError
from .stratigraphy import Column, Unit

if TYPE_CHECKING:  # pragma: no cover - typing only
    from .line import SectionLine

METHODS = ("kink", "arc")
PROJECTIONS = ("perpendicular", "strike", "plunge")
CONVENTIONS = ("rhr", "dip-direction", "quadrant")

# Every key each table accepts (anything else is reported as an unknown key).
TOP_KEYS = frozenset({"crs", "title", "dem", "map", "attitudes", "stratigraphy", "section",
                      "checks"})
DEM_KEYS = frozenset({"path", "source"})
FAULT_ROLES = ("dip", "dip_direction", "sense", "name")
MAP_KEYS = frozenset({"path", "source", "units_layer", "unit_field", "faults_layer",
                      *(f"fault_{r}_field" for r in FAULT_ROLES)})
ATTITUDE_ROLES = ("x", "y", "z", "strike", "dip", "dip_direction", "id", "overturned",
                  "attitude")
ATTITUDE_KEYS = frozenset({"path", "source", "layer", "convention",
                           *(f"{r}_field" for r in ATTITUDE_ROLES)})
UNIT_KEYS = frozenset({"unit", "thickness", "colour", "color", "age", "lithology", "label"})
SECTION_KEYS = frozenset({"name", "line", "corridor", "method", "projection", "ve",
                          "dip_tolerance", "depth", "fault_depth", "default_dip", "pin", "loose",
                          "sheet", "scale", "portrait", "constrained_depth"})


@dataclass(frozen=True)
class Thresholds:
    """Pass thresholds of the balance checks (defaults are common practice)."""

    contact_rms_m: float = 50.0  # the larger of this and 2 DEM pixels
    contact_rms_pixels: float = 2.0
    unit_agreement: float = 0.95
    dip_rms_deg: float = 5.0
    area_mismatch_pct: float = 5.0
    line_length_spread_pct: float = 5.0


CHECK_KEYS = frozenset(Thresholds.__dataclass_fields__)


# [checks] key -> (lowest, highest, lowest allowed itself)
THRESHOLD_RANGES = {
    "contact_rms_m": (0.0, math.inf, True),
    "contact_rms_pixels": (0.0, math.inf, True),
    "unit_agreement": (0.0, 1.0, True),
    "dip_rms_deg": (0.0, 90.0, True),
    "area_mismatch_pct": (0.0, 100.0, False),
    "line_length_spread_pct": (0.0, 100.0, False),
}


def threshold_problem(thresholds: Thresholds) -> tuple[str, str] | None:
    """The first threshold out of its range, as (key, what is wrong); None when all are fine."""
    for key, (lo, hi, lo_ok) in THRESHOLD_RANGES.items():
        v = getattr(thresholds, key)
        ok = isinstance(v, int | float) and math.isfinite(v) and v <= hi
        if not (ok and (v >= lo if lo_ok else v > lo)):
            rng = (f"{'>=' if lo_ok else '>'} {lo:g}" if math.isinf(hi)
                   else f"from {lo:g} to {hi:g}" if lo_ok else f"above {lo:g} and at most {hi:g}")
            return key, f"must be {rng}, got {v!r}"
    if thresholds.contact_rms_m <= 0 and thresholds.contact_rms_pixels <= 0:
        return "contact_rms_m", "at least one of it and contact_rms_pixels must be > 0"
    return None


@dataclass(frozen=True)
class SectionSpec:
    name: str
    line: tuple[tuple[float, float], ...]
    corridor: float = 500.0
    method: str = "kink"
    projection: str = "perpendicular"
    ve: float = 1.0
    dip_tolerance: float = 5.0  # degrees; dips closer than this share a dip domain
    depth: float | None = None  # metres below the lowest ground; default: base of column
    fault_depth: float | None = None
    default_dip: float | None = None  # used, with a warning, where no dips fall in the corridor
    pin: float | None = None  # distance of the pin line along the section, metres
    loose: float | None = None
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


class _Reader:
    """Typed access to a TOML table that names the key path in every error."""

    def __init__(self, fname: str, table: dict[str, Any], prefix: str = ""):
        self.fname, self.table, self.prefix = fname, table, prefix

    def _key(self, key: str) -> str:
        return f"{self.prefix}{key}"

    def fail(self, key: str, msg: str) -> ProjectFileError:
        return ProjectFileError(f"{self.fname}: {self._key(key)}: {msg}")

    def sub(self, key: str, required: bool = True) -> _Reader | None:
        if key not in self.table:
            if required:
                raise self.fail(key, "missing table")
            return None
        val = self.table[key]
        if not isinstance(val, dict):
            raise self.fail(key, "must be a table")
        return _Reader(self.fname, val, f"{self._key(key)}.")

    def get(
        self, key: str, kind: type | tuple, default: Any = ..., *, choices=None, positive=False
    ):
        if key not in self.table:
            if default is ...:
                raise self.fail(key, "missing key")
            return default
        val = self.table[key]
        if kind is float and isinstance(val, int) and not isinstance(val, bool):
            val = float(val)
        if not isinstance(val, kind) or isinstance(val, bool) and kind is not bool:
            name = getattr(kind, "__name__", "value")
            raise self.fail(key, f"must be a {'number' if kind is float else name}, got {val!r}")
        if kind is float and (not math.isfinite(val) or (positive and val <= 0)):
            raise self.fail(key, f"must be a number{' > 0' if positive else ''}, got {val!r}")
        if choices is not None and val not in choices:
            raise self.fail(key, f"must be one of {', '.join(choices)}, got {val!r}")
        return val

    def path(self, key: str, base: Path) -> Path:
        val = self.get(key, str)
        p = Path(os.path.expanduser(val))
        return p if p.is_absolute() else (base / p)


def _unknown(reader: _Reader, allowed: frozenset[str]) -> None:
    extra = sorted(set(reader.table) - allowed)
    if extra:
        raise reader.fail(extra[0], f"unknown key (known keys: {', '.join(sorted(allowed))})")


def _array_of_tables(fname: str, raw: dict[str, Any], key: str, what: str,
                     allowed: frozenset[str]) -> list[_Reader]:
    """Readers over a ``[[key]]`` array of tables; at least one table is required."""
    entries = raw.get(key)
    if entries is None or isinstance(entries, list) and not entries:
        raise ProjectFileError(f"{fname}: {key}: missing [[{key}]] {what}")
    if not isinstance(entries, list):
        raise ProjectFileError(f"{fname}: {key}: must be a [[{key}]] {what}")
    readers = []
    for i, entry in enumerate(entries):
        if not isinstance(entry, dict):
            raise ProjectFileError(f"{fname}: {key}[{i}]: must be a table")
        r = _Reader(fname, entry, f"{key}[{i}].")
        _unknown(r, allowed)
        readers.append(r)
    return readers


def load_project(path: str | os.PathLike) -> Project:
    """Read and validate a project file."""
    path = Path(path)
    fname = path.name
    try:
        raw = tomllib.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise ProjectFileError(f"{path}: no such project file") from None
    except IsADirectoryError:
        raise ProjectFileError(f"{path}: is a folder, not a project file") from None
    except (tomllib.TOMLDecodeError, UnicodeDecodeError) as exc:
        raise ProjectFileError(f"{fname}: not valid TOML ({exc})") from None
    base = path.resolve().parent
    top = _Reader(fname, raw)
    _unknown(top, TOP_KEYS)

    crs_text = top.get("crs", str)
    try:
        crs = pyproj.CRS(crs_text)
    except pyproj.exceptions.CRSError:
        raise top.fail("crs", f"unknown CRS {crs_text!r}") from None
    axis_units = {a.unit_name.lower() for a in crs.axis_info[:2]}
    if not crs.is_projected or not axis_units <= {"metre", "meter"}:
        raise top.fail("crs", f"{crs_text} is not a projected CRS in metres")

    dem = top.sub("dem")
    _unknown(dem, DEM_KEYS)
    mp = top.sub("map")
    _unknown(mp, MAP_KEYS)
    att = top.sub("attitudes")
    _unknown(att, ATTITUDE_KEYS)

    fault_fields = {k: mp.get(f"fault_{k}_field", str, k) for k in FAULT_ROLES}
    attitude_fields = {k: att.get(f"{k}_field", str, k) for k in ATTITUDE_ROLES}

    units = []
    for r in _array_of_tables(fname, raw, "stratigraphy", "list of units", UNIT_KEYS):
        colour = r.get("colour", str, None) or r.get("color", str, None)
        if colour is not None and not _is_hex_colour(colour):
            raise r.fail("colour", f"must be '#rrggbb', got {colour!r}")
        thickness = r.get("thickness", float)
        if thickness <= 0:
            raise r.fail("thickness", f"must be > 0 m, got {thickness}")
        units.append(
            Unit(
                r.get("unit", str),
                thickness,
                colour,
                r.get("age", str, None),
                r.get("lithology", str, None),
                r.get("label", str, None),
            )
        )
    try:
        column = Column(tuple(units))
    except StratigraphyError as exc:
        raise ProjectFileError(f"{fname}: {exc}") from None

    sections = [_section(r) for r in _array_of_tables(fname, raw, "section",
                                                      "list of section lines", SECTION_KEYS)]
    names = [s.name for s in sections]
    dup = sorted({n for n in names if names.count(n) > 1})
    if dup:
        raise ProjectFileError(f"{fname}: section: two sections share the name {dup[0]!r}")

    checks = top.sub("checks", required=False)
    thresholds = Thresholds()
    if checks is not None:
        _unknown(checks, CHECK_KEYS)
        vals = {k: checks.get(k, float, dflt) for k, dflt in Thresholds().__dict__.items()}
        thresholds = Thresholds(**vals)
        problem = threshold_problem(thresholds)
        if problem is not None:
            raise checks.fail(*problem)

    return Project(
        path=path,
        crs=crs,
        dem_path=dem.path("path", base),
        map_path=mp.path("path", base),
        units_layer=mp.get("units_layer", str),
        unit_field=mp.get("unit_field", str),
        faults_layer=mp.get("faults_layer", str, None),
        attitudes_path=att.path("path", base),
        attitudes_layer=att.get("layer", str, None),
        convention=att.get("convention", str, "rhr", choices=CONVENTIONS),
        column=column,
        sections=tuple(sections),
        thresholds=thresholds,
        fault_fields=fault_fields,
        attitude_fields=attitude_fields,
        title=top.get("title", str, ""),
        sources={k: r.get("source", str) for k, r in (("dem", dem), ("map", mp),
                                                     ("attitudes", att))
                 if "source" in r.table},
    )


def _section(r: _Reader) -> SectionSpec:
    name = r.get("name", str)
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

    def opt(key: str, positive=False):
        return r.get(key, float, None, positive=positive)

    ve = r.get("ve", float, 1.0, positive=True)
    tol = r.get("dip_tolerance", float, 5.0, positive=True)
    default_dip = opt("default_dip")
    if default_dip is not None and not -90 < default_dip < 90:
        raise r.fail("default_dip", f"must be between -90 and 90 degrees, got {default_dip}")
    return SectionSpec(
        name=name,
        line=tuple(pts),
        corridor=r.get("corridor", float, 500.0, positive=True),
        method=r.get("method", str, "kink", choices=METHODS),
        projection=r.get("projection", str, "perpendicular", choices=PROJECTIONS),
        ve=ve,
        dip_tolerance=tol,
        depth=opt("depth", positive=True),
        fault_depth=opt("fault_depth", positive=True),
        default_dip=default_dip,
        pin=opt("pin"),
        loose=opt("loose"),
        **_sheet_keys(r),
    )


def _sheet_keys(r: _Reader) -> dict[str, Any]:
    """The figure's sheet, scale, orientation and constrained depth of a [[section]]."""
    from .errors import ParameterError
    from .render.sheet import parse_scale, sheet_name

    out: dict[str, Any] = {"portrait": r.get("portrait", bool, False),
                           "constrained_depth": r.get("constrained_depth", float, None,
                                                      positive=True)}
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
