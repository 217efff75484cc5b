"""Reading bedding attitudes from a CSV or a point vector file, every row validated.

A row with an impossible value (dip outside 0-90, azimuth outside 0-360, text
that is not a number, inconsistent quadrant text) is reported through ``warn``
with its CSV line number (or feature number) and reason and dropped; the count
of dropped rows is reported once. CSV coordinates are taken to be in the
project's CRS; a vector file in another CRS is reprojected to it (its azimuths
rotated to the new grid north) and that is said once.

The value object and the conventions are in :mod:`mapsection.attitudes`; the CSV's
text reading in :mod:`mapsection.readers.attitude_csv`.
"""

from __future__ import annotations

import dataclasses
import os
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pyproj

from .._messages import default_warn as _default_warn
from .._messages import human
from ..attitudes import (
    Attitudes,
    Warn,
    dip_direction_to_strike,
    parse_one_quadrant,
    reproject_attitudes,
)
from ..crs import same_crs
from ..errors import AttitudeError
from ..settings import CONVENTIONS
from .attitude_csv import (
    _ASCII_SPACE,
    _read_csv,
    _read_csv_chunks,
    _read_csv_rows,
    _WholeFile,
)
from .attitude_table import _Rows, _TextColumn
from .attitude_vector import read_vector as _read_vector

CSV_SUFFIXES = (".csv", ".txt", ".tsv")
LOGICAL_FIELDS = ("x", "y", "z", "strike", "dip", "dip_direction", "id", "overturned", "attitude")

_TRUE = {"true", "t", "yes", "y", "1"}
_FALSE = {"false", "f", "no", "n", "0", ""}


def _to_float(values: Sequence) -> tuple[np.ndarray, np.ndarray]:
    """Vectorised number parsing: (floats with NaN for blanks/bad, mask of non-numbers)."""
    import pandas as pd

    if isinstance(values, _TextColumn):  # a CSV column parsed by pyarrow
        num = values.floats()
        if num is not None:  # every value a finite number, as float() reads it
            return num, np.zeros(len(num), bool)
        values = values.tolist()
    try:  # fast path: every value already a number or numeric text
        num = np.asarray(values, dtype=float)
        if np.all(np.isfinite(num)):
            return num, np.zeros(len(num), bool)
    except (ValueError, TypeError):
        pass
    s = pd.Series(values, dtype=object)
    text = s.astype(str).str.strip()
    blank = s.isna().to_numpy() | (text == "").to_numpy() | (text.str.lower() == "nan").to_numpy()
    num = pd.to_numeric(text.where(~blank, None), errors="coerce").to_numpy(dtype=float)
    bad = ~blank & ~np.isfinite(num)
    return num, bad


def read_attitudes(path: str | os.PathLike, *, convention: str = "rhr",
                   layer: str | None = None, fields: Mapping[str, str] | None = None,
                   crs: str | pyproj.CRS | None = None, warn: Warn | None = None) -> Attitudes:
    """Read bedding attitudes from a CSV or a point vector file, validating every row.

    CSV columns: ``x, y`` and, by ``convention``, ``strike, dip`` (``rhr``),
    ``dip_direction, dip`` (``dip-direction``) or ``attitude`` holding quadrant text
    (``quadrant``; ``strike`` and ``dip`` columns holding ``N30E`` and ``45SE`` also
    work). Optional: ``id`` (default: the data row number), ``z`` (elevation),
    ``overturned`` (true/false/yes/no/1/0). A point vector file (GeoPackage,
    GeoJSON, Shapefile) takes x, y (and z, when present) from its geometry.
    ``fields`` maps those logical names to the file's own column names; matching
    is case-insensitive.

    Rows with an impossible value are said and dropped (see the module's docstring).
    Raises :class:`AttitudeError` for a missing file, a missing column (listing the
    columns there are), an unknown convention, or a file with no usable rows.

    Parameters
    ----------
    path : the CSV (``.csv``, ``.txt``, ``.tsv``) or point vector file.
    convention : ``rhr``, ``dip-direction`` or ``quadrant``.
    layer : the vector file's layer (needed when it holds several).
    fields : logical name -> the file's column name.
    crs : the project CRS: CSV coordinates are in it, vector files are reprojected to it.
    warn : where dropped rows and the reprojection are said (default: stderr).

    Returns
    -------
    Attitudes
        The usable rows, azimuths as right-hand-rule strikes in 0-360.

    Examples
    --------
    >>> # attitudes.csv:  id,x,y,strike,dip  /  1,604200,5216300,30,45
    >>> # read_attitudes("attitudes.csv", crs="EPSG:32611").strike  -> array([30.])
    """
    return _read(path, convention, layer, fields, crs, warn, None, CHUNK_ROWS).attitudes


@dataclass(frozen=True)
class AttitudesInBox:
    """The attitudes of a file inside a box, and where every usable row of the file lies.

    ``x`` and ``y`` (every usable row's position, in the project's CRS) let the whole
    file be checked against the DEM (:func:`mapsection.attitudes.check_attitudes_on_dem`)
    without keeping its other columns.
    """

    attitudes: Attitudes  # the usable rows inside the box, in the file's order
    x: np.ndarray
    y: np.ndarray

    def everywhere(self) -> Attitudes:
        """Every usable row of the file as positions only (no orientation), for checks
        that look at where the whole file lies."""
        n = len(self.x)
        return dataclasses.replace(
            Attitudes.from_arrays(self.x, self.y, np.zeros(n), np.zeros(n),
                                  crs=self.attitudes.crs),
            source=self.attitudes.source)


def read_attitudes_in_box(path: str | os.PathLike, box: tuple[float, float, float, float], *,
                          convention: str = "rhr", layer: str | None = None,
                          fields: Mapping[str, str] | None = None,
                          crs: str | pyproj.CRS | None = None, warn: Warn | None = None,
                          chunk_rows: int | None = None) -> AttitudesInBox:
    """Read the attitudes of a file that lie inside ``box``, every row still validated.

    A CSV is read ``chunk_rows`` records at a time and each chunk checked as
    :func:`read_attitudes` checks the whole file before its rows outside the box are let
    go, so that memory follows the rows kept, not the size of the file. Every message
    (bad rows with their line numbers, the count of rows dropped, missing columns) and
    every kept attitude (values, ids, order, ``source``) is what :func:`read_attitudes`
    gives for the whole file, the rows then taken inside the box. A vector file is read
    whole, reprojected, then cut.

    Parameters
    ----------
    path : the CSV or point vector file.
    box : (xmin, ymin, xmax, ymax) in the project's CRS; its edges are inside.
    convention, layer, fields, crs, warn : as for :func:`read_attitudes`.
    chunk_rows : records per chunk (default ``CHUNK_ROWS``).

    Returns
    -------
    AttitudesInBox

    Examples
    --------
    >>> # read_attitudes_in_box("attitudes.csv", (604000, 5216000, 605000, 5217000),
    >>> #                       crs="EPSG:32611").attitudes  -> the rows in that square
    """
    got = _read(path, convention, layer, fields, crs, warn, tuple(map(float, box)),
                chunk_rows or CHUNK_ROWS)
    att = got.attitudes
    if got.x is None:  # a vector file: cut after its reprojection
        x, y = np.asarray(att.x, float), np.asarray(att.y, float)
        return AttitudesInBox(att.subset(np.flatnonzero(_inside(x, y, box))), x, y)
    return got


# Records of a CSV checked at a time when only a box of it is kept (the tool's default:
# about 40 MB of text columns for five columns).
CHUNK_ROWS = 100_000


def _inside(x: np.ndarray, y: np.ndarray, box) -> np.ndarray:
    return (x >= box[0]) & (x <= box[2]) & (y >= box[1]) & (y <= box[3])


def _read(path, convention, layer, fields, crs, warn, box, chunk_rows) -> AttitudesInBox:
    """The reading behind :func:`read_attitudes` (``box`` None: every row) and
    :func:`read_attitudes_in_box` (a CSV's rows cut to ``box`` chunk by chunk)."""
    warn = warn or _default_warn
    path = Path(path)
    _check_path(path, convention)
    target = pyproj.CRS(crs) if crs is not None else None
    is_csv = path.suffix.lower() in CSV_SUFFIXES
    if is_csv and box is not None:
        try:
            gather = _Gather(path, box)
            for table in _read_csv_chunks(path, chunk_rows):
                gather.add(_checked(_Rows(path, table, fields), convention, True))
        except _WholeFile:
            gather = _Gather(path, box)
            gather.add(_checked(_Rows(path, _read_csv_rows(path), fields), convention, True))
    else:
        table = _read_csv(path) if is_csv else _read_vector(path, layer)
        gather = _Gather(path, None)
        gather.add(_checked(_Rows(path, table, fields), convention, is_csv))
    att = gather.finish(warn, target)
    if gather.src_crs is not None and target is not None and not same_crs(gather.src_crs, target):
        att = reproject_attitudes(att, target, warn=warn, source=str(path))
    if box is None or not is_csv:
        return AttitudesInBox(att, None, None)
    return AttitudesInBox(att, gather.every_x(), gather.every_y())


@dataclass
class _Checked:
    """One table (a whole file or a chunk of a CSV) checked: its values and bad rows."""

    n: int
    x: np.ndarray
    y: np.ndarray
    z: np.ndarray
    strike: np.ndarray
    dip: np.ndarray
    overturned: np.ndarray
    ids: np.ndarray | None  # None: no id column (the data row numbers)
    ids_are_int: bool
    ids_txt: Sequence | None  # the id column as read
    reasons: dict[int, list[str]]
    labels: Sequence[str]
    src_crs: pyproj.CRS | None


def _checked(rows: _Rows, convention: str, is_csv: bool) -> _Checked:
    """Every value of ``rows`` parsed and every bad row given its reasons (in the order the
    columns are looked up, so that a missing column is said the same way)."""
    x, y, z, src_crs = _coordinates(rows, is_csv)
    strike, dip = _orientation(rows, convention)
    ids_txt = rows.column("id", False)  # looked up before 'overturned', flagged after it
    overturned = _overturned(rows)
    ids, are_int = _ids(rows, ids_txt)
    return _Checked(rows.n, x, y, z, strike, dip, overturned,
                    None if ids_txt is None else ids, are_int, ids_txt, rows.reasons,
                    rows.table.rows, src_crs)


class _Gather:
    """The usable rows of one or more checked tables (in the file's order), those inside
    ``box`` kept, and the first bad rows' messages and the counts for the whole file."""

    SHOWN = 20  # bad rows said one by one

    def __init__(self, path: Path, box) -> None:
        self.path, self.box = path, box
        self.n = 0
        self.dropped = 0
        self.said: list[str] = []  # the first SHOWN bad rows' messages
        self.first: str | None = None  # the file's first row's label and reasons
        self.parts: list[dict] = []
        self.ids_are_int = True
        self.has_ids = False
        self.src_crs: pyproj.CRS | None = None
        self._every: list[tuple[np.ndarray, np.ndarray]] = []

    def add(self, c: _Checked) -> None:
        self.src_crs = c.src_crs
        if not c.n:  # a chunk of blank lines (its empty columns would not be integers)
            return
        good = np.ones(c.n, bool)
        good[list(c.reasons)] = False
        if self.n == 0 and 0 in c.reasons:
            self.first = f"{c.labels[0]}: {'; '.join(c.reasons[0])}"
        for i in np.flatnonzero(~good)[: self.SHOWN - len(self.said)]:
            self.said.append(f"{self.path}, {c.labels[i]}: {'; '.join(c.reasons[i])}; "
                             "row dropped")
        keep, raw = good, None
        if self.box is not None:
            keep = good & _inside(c.x, c.y, self.box)
            self._every.append((c.x[good], c.y[good]))
        if c.ids is None:
            ids = np.arange(self.n + 1, self.n + c.n + 1)[keep]
        else:
            self.has_ids = True
            self.ids_are_int &= c.ids_are_int
            ids = c.ids[keep]
            if self.box is not None:  # text kept too: a later chunk may hold a text id
                if isinstance(c.ids_txt, _TextColumn):  # already stripped
                    raw = c.ids_txt.take(np.flatnonzero(keep))
                else:
                    raw = [str(c.ids_txt[i]).strip() for i in np.flatnonzero(keep)]
        self.parts.append({"id": ids, "raw": raw, "x": c.x[keep], "y": c.y[keep], "z": c.z[keep],
                           "strike": c.strike[keep], "dip": c.dip[keep],
                           "overturned": c.overturned[keep], "int": c.ids_are_int})
        self.n += c.n
        self.dropped += c.n - int(good.sum())

    def _ids(self) -> np.ndarray:
        parts = self.parts
        if self.has_ids and not self.ids_are_int:
            # Text ids where any row's id is not an integer, as when the whole file is read.
            return np.array([v for p in parts for v in (p["id"] if p["raw"] is None
                                                        else p["raw"])], dtype=object)
        return np.concatenate([p["id"] for p in parts])

    def finish(self, warn: Warn, target: pyproj.CRS | None) -> Attitudes:
        """The kept attitudes; the bad rows said (the first 20) and counted. AttitudeError
        when the file has no usable row."""
        path, n, dropped = self.path, self.n, self.dropped
        if dropped:
            for line in self.said:
                warn(line)
            if dropped > self.SHOWN:
                warn(f"{path}: ... and {dropped - self.SHOWN} more bad rows")
            warn(f"{path}: dropped {dropped} of {n} rows; kept {n - dropped}")
        if dropped == n:
            raise AttitudeError(
                f"{path}: no usable attitude rows"
                + (f" ({n} row{'s' if n != 1 else ''}, all bad; {self.first})" if n
                   else " (no data rows)"))
        col = {k: np.concatenate([p[k] for p in self.parts])
               for k in ("x", "y", "z", "strike", "dip", "overturned")}
        return Attitudes(
            id=self._ids(), x=col["x"], y=col["y"], z=col["z"], strike=col["strike"] % 360.0,
            dip=col["dip"], overturned=col["overturned"],
            crs=target if self.src_crs is None else self.src_crs,
            source=f"{path} ({n} row{'s' if n != 1 else ''} read, {n - dropped} usable)",
        )

    def every_x(self) -> np.ndarray:
        return np.concatenate([e[0] for e in self._every]) if self._every else np.zeros(0)

    def every_y(self) -> np.ndarray:
        return np.concatenate([e[1] for e in self._every]) if self._every else np.zeros(0)


def _check_path(path: Path, convention: str) -> None:
    """Refuse an unknown convention, a missing file and a folder."""
    if convention not in CONVENTIONS:
        raise AttitudeError(
            f"unknown attitude convention {convention!r} (use {', '.join(CONVENTIONS)})"
        )
    if not path.exists():
        raise AttitudeError(f"{path}: no such attitudes file")
    if path.is_dir():
        raise AttitudeError(f"{path}: is a folder, not an attitudes file")


def _coordinates(rows: _Rows, is_csv: bool
                 ) -> tuple[np.ndarray, np.ndarray, np.ndarray, pyproj.CRS | None]:
    """x, y, z of every row (a CSV's columns or a vector file's points) and the file's CRS."""
    if is_csv:
        xs, ys = rows.column("x", True), rows.column("y", True)
        x, bx = _to_float(xs)
        y, by = _to_float(ys)
        rows.flag(bx | ~np.isfinite(x), lambda i: f"x {xs[i]!r} is not a number")
        rows.flag(by | ~np.isfinite(y), lambda i: f"y {ys[i]!r} is not a number")
        z = np.full(rows.n, np.nan)
        src_crs = None
    else:
        x, y, z = rows.table.x, rows.table.y, rows.table.z
        rows.flag(~np.isfinite(x), lambda i: "has no point geometry")
        src_crs = rows.table.crs
    zs = rows.column("z", False)
    if zs is not None:
        zc, bz = _to_float(zs)
        rows.flag(bz, lambda i: f"z {zs[i]!r} is not a number")
        z = np.where(np.isfinite(zc), zc, z)
    return x, y, z, src_crs


def _orientation(rows: _Rows, convention: str) -> tuple[np.ndarray, np.ndarray]:
    """Strike (right-hand rule) and dip of every row, by ``convention``."""
    if convention == "quadrant":
        return _quadrant(rows)
    az_name = "strike" if convention == "rhr" else "dip_direction"
    other = "dip_direction" if convention == "rhr" else "strike"
    hint = (f"; the file has {other!r}: use convention "
            f"{'dip-direction' if other == 'dip_direction' else 'rhr'}"
            if rows.has(other) else "")
    az_txt = rows.column(az_name, True, hint)
    d_txt = rows.column("dip", True)
    az, baz = _to_float(az_txt)
    dip, bd = _to_float(d_txt)
    rows.flag(baz | ~np.isfinite(az) & ~baz,
              lambda i: f"{az_name} {az_txt[i]!r} is not a number")
    rows.flag(bd | ~np.isfinite(dip) & ~bd, lambda i: f"dip {d_txt[i]!r} is not a number")
    rows.flag(np.isfinite(az) & ((az < 0) | (az > 360)),
              lambda i: f"{az_name} {human(az[i])} is outside 0-360")
    rows.flag(np.isfinite(dip) & ((dip < 0) | (dip > 90)),
              lambda i: f"dip {human(dip[i])} is outside 0-90")
    with np.errstate(invalid="ignore"):  # an infinite azimuth: its row is flagged above
        strike = az % 360.0 if convention == "rhr" else dip_direction_to_strike(az)
    return strike, dip


def _quadrant(rows: _Rows) -> tuple[np.ndarray, np.ndarray]:
    """Strike and dip from quadrant text: an ``attitude`` column, or ``strike`` and ``dip``."""
    strike = np.full(rows.n, np.nan)
    dip = np.full(rows.n, np.nan)
    att = rows.column("attitude", False)
    if att is None:
        s_txt, d_txt = rows.column("strike", False), rows.column("dip", False)
        if s_txt is None or d_txt is None:
            rows.column("attitude", True, " with quadrant text such as 'N30E 45SE'")
        att = [f"{a} {b}" for a, b in zip(s_txt, d_txt, strict=True)]
    for i, t in enumerate(att):  # text parsing is per row by nature
        try:
            strike[i], dip[i] = parse_one_quadrant(str(t))
        except ValueError as exc:
            rows.reasons.setdefault(i, []).append(str(exc))
    return strike, dip


def _overturned(rows: _Rows) -> np.ndarray:
    """The optional ``overturned`` column as booleans (false where absent)."""
    ov_txt = rows.column("overturned", False)
    if ov_txt is None:
        return np.zeros(rows.n, bool)
    is_true = is_false = None
    if isinstance(ov_txt, _TextColumn):  # a CSV column parsed by pyarrow (stripped text)
        is_true, is_false = ov_txt.lower_in(_TRUE), ov_txt.lower_in(_FALSE)
    if is_true is None or is_false is None:
        low = np.array([str(v).strip().lower() for v in ov_txt], dtype=object)
        is_true = np.isin(low, list(_TRUE))
        is_false = np.isin(low, list(_FALSE)) | np.array([v is None for v in ov_txt], bool)
    rows.flag(~is_true & ~is_false,
              lambda i: f"overturned {ov_txt[i]!r} is not true/false/yes/no/1/0")
    return is_true


def _digit_ids(ids_txt: Sequence) -> np.ndarray | None:
    """The ids as integers when every one is text of 1 to 18 ASCII digits (where ``int``
    and numpy's parsing agree and nothing overflows), parsed without Python per row; else
    None."""
    if isinstance(ids_txt, _TextColumn):  # a CSV column parsed by pyarrow
        return ids_txt.digits()
    try:
        joined = "\x01".join(ids_txt)
    except TypeError:  # not all text (a vector file's numbers)
        return None
    if (not joined.isascii() or not joined.replace("\x01", "").isdigit()
            or "\x01\x01" in joined or joined.startswith("\x01") or joined.endswith("\x01")):
        return None
    text = np.array(ids_txt, dtype=str)
    if text.dtype.itemsize // 4 > 18:
        return None
    return text.astype(np.int64)


def _ids(rows: _Rows, ids_txt: Sequence | None) -> tuple[np.ndarray, bool]:
    """The optional ``id`` column (integers where all are), else the data row number; and
    whether they are integers."""
    if ids_txt is None:
        return np.arange(1, rows.n + 1), True
    fast = _digit_ids(ids_txt)
    if fast is not None:
        return fast, True
    if isinstance(ids_txt, _TextColumn):
        ids_txt = ids_txt.tolist()  # text ids: Python strings from here on
    try:
        joined = "\x01".join(ids_txt)
    except TypeError:  # not all text (a vector file's numbers)
        joined = None
    if joined is not None and joined.isascii() and not any(
            c in joined for c in (*_ASCII_SPACE, "\n", "\r")):
        raw = ids_txt  # text with no surrounding whitespace: str.strip would change nothing
    else:
        raw = [str(v).strip() for v in ids_txt]
    try:
        return np.array([int(v) for v in raw]), True  # no blank id: int("") fails
    except ValueError:
        ids = np.array(raw, dtype=object)
    rows.flag(ids == "", lambda i: "id is blank")
    return ids, False
