"""Reading bedding attitudes from a CSV or a point vector file, every row validated.

A row with an impossible value (dip outside 0-90, azimuth outside 0-360, text
that is not a number, inconsistent quadrant text) is reported through ``warn``
with its CSV line number (or feature number) and reason and dropped; the count
of dropped rows is reported once. CSV coordinates are taken to be in the
project's CRS; a vector file in another CRS is reprojected to it (its azimuths
rotated to the new grid north) and that is said once.

The value object and the conventions are in :mod:`mapsection.attitudes`.
"""

from __future__ import annotations

import csv
import dataclasses
import io
import os
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pyproj

from .._messages import default_warn as _default_warn
from .._messages import first_line, human
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

CSV_SUFFIXES = (".csv", ".txt", ".tsv")
LOGICAL_FIELDS = ("x", "y", "z", "strike", "dip", "dip_direction", "id", "overturned", "attitude")

_TRUE = {"true", "t", "yes", "y", "1"}
_FALSE = {"false", "f", "no", "n", "0", ""}


@dataclass
class _Table:
    """Raw attribute table: text columns plus the row label of each record."""

    columns: dict[str, list]  # original column name -> values
    rows: Sequence[str]  # "line 7" or "feature 3"
    x: np.ndarray | None = None  # from geometry (vector files)
    y: np.ndarray | None = None
    z: np.ndarray | None = None
    crs: pyproj.CRS | None = None
    repeated: dict[str, list[int]] = dataclasses.field(default_factory=dict)
    # lower-case column name -> its column numbers (from 1), for names given more than once


def _sniff(first_line: str) -> type[csv.Dialect] | csv.Dialect:
    """The CSV dialect of a file, sniffed from its header line (comma, semicolon or tab)."""
    try:
        return csv.Sniffer().sniff(first_line, ",;\t")
    except csv.Error:
        return csv.excel


def _read_csv(path: Path) -> _Table:
    """The CSV as text columns, parsed by pandas' C engine (no Python per row).

    Gives exactly what :func:`_read_csv_rows` gives (the csv module, row by row): the
    header's names stripped, blank lines skipped but counted in the line numbers,
    short rows padded with blanks and long ones cut to the header's length. Files
    where the two could differ go to :func:`_read_csv_rows`.
    """
    import warnings

    import pandas as pd

    try:
        raw = path.read_bytes()
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        raise AttitudeError(f"{path}: not a text CSV file (not UTF-8)") from None
    except OSError as exc:
        raise AttitudeError(f"{path}: cannot be read ({exc.strerror})") from None
    first = text[:4096].splitlines()[0] if text else ""
    if not first.strip() or "\x00" in text:
        return _read_csv_rows(path)
    dialect = _sniff(first)
    header_reader = csv.reader(io.StringIO(text[:1 << 20]), dialect)
    header = next(header_reader, None)
    if header is None or header_reader.line_num != 1:
        return _read_csv_rows(path)  # a quoted header over several lines
    # One record per physical line, or a quoted field runs over several: other line numbers.
    # (Counted on the bytes: in UTF-8 a newline byte is always a newline.)
    n_lines = raw.count(b"\n") + raw.count(b"\r") - raw.count(b"\r\n")
    if not raw.endswith((b"\n", b"\r")):
        n_lines += 1
    del text  # the C engine reads the bytes: no copy of the text as wide characters
    names = [h.strip() for h in header]
    k = len(names)
    try:
        with warnings.catch_warnings(record=True) as said:
            warnings.simplefilter("always", pd.errors.ParserWarning)
            # One column more than the header: a row ending in a delimiter stays here.
            df = pd.read_csv(
                io.BytesIO(raw), encoding="utf-8-sig", sep=dialect.delimiter,
                quotechar=dialect.quotechar,
                doublequote=dialect.doublequote, skipinitialspace=dialect.skipinitialspace,
                quoting=csv.QUOTE_MINIMAL, header=None, names=range(k + 1), skiprows=1,
                index_col=False, dtype=str, na_filter=False, keep_default_na=False,
                skip_blank_lines=False, engine="c")
    except Exception:  # noqa: BLE001 - anything the C engine refuses, the csv module decides
        return _read_csv_rows(path)
    if any(issubclass(w.category, pd.errors.ParserWarning) for w in said):
        return _read_csv_rows(path)  # a row longer still: cut by the csv module's rules
    del raw
    if len(df) + 1 != n_lines:
        return _read_csv_rows(path)
    stripped = [_stripped(df[j].to_numpy(dtype=object)) for j in range(k + 1)]
    # Blank lines (nothing but delimiters and spaces) are skipped, their lines still counted.
    keep = np.zeros(len(df), bool)
    for c in stripped:
        keep |= c != ""
    lines = np.flatnonzero(keep) + 2  # the header is line 1, one physical line per record
    cols = {n: c[keep].tolist() for n, c in zip(names, stripped[:k], strict=True)}
    where: dict[str, list[int]] = {}
    for j, name in enumerate(names):
        where.setdefault(name.lower(), []).append(j + 1)
    repeated = {key: v for key, v in where.items() if len(v) > 1}
    return _Table(cols, _LineLabels(lines), repeated=repeated)


_ASCII_SPACE = (" ", "\t", "\x0b", "\x0c", "\x1c", "\x1d", "\x1e", "\x1f")


def _stripped(column: np.ndarray) -> np.ndarray:
    """A column of text values (object array) without their surrounding whitespace, as
    ``str.strip`` takes it off; a column without any whitespace is given back as it is."""
    joined = "\x01".join(column)
    if joined.isascii() and not any(c in joined for c in _ASCII_SPACE):
        return column
    return np.strings.strip(column.astype(str)).astype(object)


class _LineLabels(Sequence):
    """The row labels ``"line 7"`` of a CSV's records, made when asked for."""

    def __init__(self, lines: np.ndarray) -> None:
        self._lines = lines

    def __len__(self) -> int:
        return len(self._lines)

    def __getitem__(self, i):
        if isinstance(i, slice):
            return [f"line {n}" for n in self._lines[i]]
        return f"line {int(self._lines[i])}"

    def __eq__(self, other) -> bool:
        return list(self) == list(other)


def _read_csv_rows(path: Path) -> _Table:
    """The CSV read record by record with the csv module: the reference, and the way
    for the files the C engine of :func:`_read_csv` leaves to it (a field over several
    lines, a NUL byte, a blank header)."""
    try:
        with open(path, newline="", encoding="utf-8-sig") as fh:
            sample = fh.read(4096)
            fh.seek(0)
            try:
                dialect = csv.Sniffer().sniff(sample.splitlines()[0] if sample else "", ",;\t")
            except csv.Error:
                dialect = csv.excel
            reader = csv.reader(fh, dialect)
            header = next(reader, None)
            if header is None:
                raise AttitudeError(f"{path}: empty file (expected a header row)")
            names = [h.strip() for h in header]
            k = len(names)
            records: list[list[str]] = []
            lines: list[int] = []
            for rec in reader:
                if not "".join(rec).strip():
                    continue  # blank line
                lines.append(reader.line_num)
                records.append(rec if len(rec) == k else (rec + [""] * k)[:k])
            columns = list(zip(*records, strict=True)) if records else [()] * k
            cols = {n: [v.strip() for v in c] for n, c in zip(names, columns, strict=True)}
            rows = [f"line {n}" for n in lines]
            where: dict[str, list[int]] = {}
            for j, name in enumerate(names):
                where.setdefault(name.lower(), []).append(j + 1)
            repeated = {k: v for k, v in where.items() if len(v) > 1}
    except UnicodeDecodeError:
        raise AttitudeError(f"{path}: not a text CSV file (not UTF-8)") from None
    except OSError as exc:
        raise AttitudeError(f"{path}: cannot be read ({exc.strerror})") from None
    return _Table(cols, rows, repeated=repeated)


def _read_vector(path: Path, layer: str | None) -> _Table:
    import pyogrio
    import shapely


    try:
        layers = [str(r[0]) for r in pyogrio.list_layers(path)]
    except Exception as exc:
        raise AttitudeError(
            f"{path}: not a CSV or a readable vector file ({first_line(exc)})"
        ) from None
    if layer is not None and layer not in layers:
        raise AttitudeError(f"{path}: no layer {layer!r} (layers: {', '.join(layers)})")
    if layer is None and len(layers) > 1:
        raise AttitudeError(f"{path}: holds several layers; name one (layers: {', '.join(layers)})")
    try:
        df = pyogrio.read_dataframe(path, layer=layer)
    except Exception as exc:
        raise AttitudeError(f"{path}: cannot be read ({first_line(exc)})") from None
    geom = np.asarray(df.geometry.values, dtype=object) if "geometry" in df else None
    if geom is None:
        raise AttitudeError(f"{path}: has no point geometry")
    types = shapely.get_type_id(geom)
    # Single-part MultiPoints are accepted as points.
    multi = types == 4
    if multi.any():
        one = shapely.get_num_geometries(geom) == 1
        geom = np.where(multi & one, shapely.get_geometry(geom, 0), geom)
        types = shapely.get_type_id(geom)
    bad = (types != 0) & (types != -1)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise AttitudeError(
            f"{path}: feature {i + 1} is a {geom[i].geom_type}; attitudes must be points"
        )
    ok = types == 0
    x = np.full(len(geom), np.nan)
    y = np.full(len(geom), np.nan)
    z = np.full(len(geom), np.nan)
    if ok.any():
        c = shapely.get_coordinates(geom[ok], include_z=True)
        x[ok], y[ok], z[ok] = c[:, 0], c[:, 1], c[:, 2]
    cols = {str(c): [("" if v is None else v) for v in df[c].tolist()]
            for c in df.columns if c != "geometry"}
    rows = [f"feature {i + 1}" for i in range(len(df))]
    crs = pyproj.CRS(df.crs) if df.crs is not None else None
    return _Table(cols, rows, x, y, z, crs)


def _to_float(values: list) -> tuple[np.ndarray, np.ndarray]:
    """Vectorised number parsing: (floats with NaN for blanks/bad, mask of non-numbers)."""
    import pandas as pd

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
    warn = warn or _default_warn
    path = Path(path)
    _check_path(path, convention)
    target = pyproj.CRS(crs) if crs is not None else None
    is_csv = path.suffix.lower() in CSV_SUFFIXES
    rows = _Rows(path, _read_csv(path) if is_csv else _read_vector(path, layer), fields)
    x, y, z, src_crs = _coordinates(rows, is_csv)
    strike, dip = _orientation(rows, convention)
    ids_txt = rows.column("id", False)  # looked up before 'overturned', flagged after it
    overturned = _overturned(rows)
    ids = _ids(rows, ids_txt)
    good = _kept(rows, warn)
    n = rows.n
    att = Attitudes(
        id=ids[good], x=x[good], y=y[good], z=z[good], strike=strike[good] % 360.0,
        dip=dip[good], overturned=overturned[good], crs=target if src_crs is None else src_crs,
        source=f"{path} ({n} row{'s' if n != 1 else ''} read, {int(good.sum())} usable)",
    )
    if src_crs is not None and target is not None and not same_crs(src_crs, target):
        att = reproject_attitudes(att, target, warn=warn, source=str(path))
    return att


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


class _Rows:
    """A table being validated: its columns by logical name, and each bad row's reasons."""

    def __init__(self, path: Path, table: _Table, fields: Mapping[str, str] | None) -> None:
        self.path = path
        self.table = table
        self.n = len(table.rows)
        self.existing = list(table.columns)
        self.lower = {c.lower(): c for c in self.existing}
        self.fields = dict(fields or {})
        self.reasons: dict[int, list[str]] = {}  # bad rows only

    def has(self, logical: str) -> bool:
        """Whether the file has the column for ``logical``."""
        return (self.fields.get(logical) or logical).lower() in self.lower

    def column(self, logical: str, required: bool, hint: str = "") -> list | None:
        """The values of the column for ``logical``; None if absent and not required."""
        table = self.table
        name = self.fields.get(logical) or logical
        real = self.lower.get(name.lower())
        if real is None and required:
            listed = ", ".join(self.existing) if self.existing else "none"
            raise AttitudeError(
                f"{self.path}: no column {name!r}{hint} (columns: {listed})"
            )
        if real is not None and real.lower() in table.repeated:
            nums = table.repeated[real.lower()]
            raise AttitudeError(
                f"{self.path}: column {real!r} appears {len(nums)} times in the header "
                f"(columns {', '.join(map(str, nums))}); keep one or rename the others"
            )
        return None if real is None else table.columns[real]

    def flag(self, mask: np.ndarray, why: Callable[[int], str]) -> None:
        """Give each row of ``mask`` the reason ``why(row)``."""
        for i in np.flatnonzero(mask):  # only the bad rows are visited
            self.reasons.setdefault(int(i), []).append(why(int(i)))


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
    low = np.array([str(v).strip().lower() for v in ov_txt], dtype=object)
    is_true = np.isin(low, list(_TRUE))
    is_false = np.isin(low, list(_FALSE)) | np.array([v is None for v in ov_txt], bool)
    rows.flag(~is_true & ~is_false,
              lambda i: f"overturned {ov_txt[i]!r} is not true/false/yes/no/1/0")
    return is_true


def _ids(rows: _Rows, ids_txt: list | None) -> np.ndarray:
    """The optional ``id`` column (integers where all are), else the data row number."""
    if ids_txt is None:
        return np.arange(1, rows.n + 1)
    raw = [str(v).strip() for v in ids_txt]
    try:
        ids = np.array([int(v) for v in raw])
    except ValueError:
        ids = np.array(raw, dtype=object)
    rows.flag(np.array([v == "" for v in raw], bool), lambda i: "id is blank")
    return ids


def _kept(rows: _Rows, warn: Warn) -> np.ndarray:
    """The rows without a reason to drop them; the others said (the first 20) and counted.
    AttitudeError when none is left."""
    path, n, reasons, labels = rows.path, rows.n, rows.reasons, rows.table.rows
    good = np.ones(n, bool)
    good[list(reasons)] = False
    dropped = n - int(good.sum())
    if dropped:
        shown = 0
        for i in np.flatnonzero(~good):
            if shown == 20:
                warn(f"{path}: ... and {dropped - 20} more bad rows")
                break
            warn(f"{path}, {labels[i]}: {'; '.join(reasons[i])}; row dropped")
            shown += 1
        warn(f"{path}: dropped {dropped} of {n} rows; kept {n - dropped}")
    if not good.any():
        raise AttitudeError(
            f"{path}: no usable attitude rows"
            + (f" ({n} row{'s' if n != 1 else ''}, all bad; {labels[0]}: "
               f"{'; '.join(reasons[0])})" if n else " (no data rows)")
        )
    return good
