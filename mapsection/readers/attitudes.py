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
from collections.abc import Callable, Iterator, Mapping, Sequence
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


def _read_csv_chunks(path: Path, chunk_rows: int) -> Iterator[_Table]:
    """The CSV as :func:`_read_csv` gives it, in tables of ``chunk_rows`` records (their
    line numbers the file's), parsed by pandas' C engine a chunk at a time.

    The file is first scanned in blocks (UTF-8, NUL bytes, its physical lines) so that
    its errors are those of :func:`_read_csv`; raises :class:`_WholeFile` where the
    reading would differ from the csv module's (the caller then reads it row by row).
    """
    import codecs
    import warnings

    import pandas as pd

    decoder = codecs.getincrementaldecoder("utf-8-sig")()
    head = ""
    n_lines = 0
    nul = False
    last = b""
    try:
        with open(path, "rb") as fh:
            while block := fh.read(1 << 23):
                text = decoder.decode(block)
                if len(head) < 1 << 20:
                    head += text[: (1 << 20) - len(head)]
                nul |= b"\x00" in block
                # A newline byte is always a newline in UTF-8; CR LF across blocks counted once.
                n_lines += block.count(b"\n") + block.count(b"\r") - block.count(b"\r\n")
                if last == b"\r" and block[:1] == b"\n":
                    n_lines -= 1
                last = block[-1:]
            decoder.decode(b"", final=True)
    except UnicodeDecodeError:
        raise AttitudeError(f"{path}: not a text CSV file (not UTF-8)") from None
    except OSError as exc:
        raise AttitudeError(f"{path}: cannot be read ({exc.strerror})") from None
    if last not in (b"\n", b"\r"):
        n_lines += 1
    first = head[:4096].splitlines()[0] if head else ""
    if not first.strip() or nul:
        raise _WholeFile
    dialect = _sniff(first)
    header_reader = csv.reader(io.StringIO(head), dialect)
    header = next(header_reader, None)
    if header is None or header_reader.line_num != 1:
        raise _WholeFile  # a quoted header over several lines
    del head
    names = [h.strip() for h in header]
    k = len(names)
    where: dict[str, list[int]] = {}
    for j, name in enumerate(names):
        where.setdefault(name.lower(), []).append(j + 1)
    repeated = {key: v for key, v in where.items() if len(v) > 1}
    done = 0  # records read so far
    chunks = None
    try:
        while True:
            # The parser's warnings caught around the parsing only, not the caller's work.
            with warnings.catch_warnings(record=True) as said:
                warnings.simplefilter("always", pd.errors.ParserWarning)
                try:
                    if chunks is None:
                        # As in _read_csv: one column more than the header keeps a trailing
                        # delimiter.
                        chunks = pd.read_csv(
                            path, encoding="utf-8-sig", sep=dialect.delimiter,
                            quotechar=dialect.quotechar, doublequote=dialect.doublequote,
                            skipinitialspace=dialect.skipinitialspace, quoting=csv.QUOTE_MINIMAL,
                            header=None, names=range(k + 1), skiprows=1, index_col=False,
                            dtype=str, na_filter=False, keep_default_na=False,
                            skip_blank_lines=False, engine="c", chunksize=chunk_rows)
                    df = next(chunks, None)
                except Exception:  # noqa: BLE001 - what the C engine refuses, the csv module decides
                    raise _WholeFile from None
            if any(issubclass(w.category, pd.errors.ParserWarning) for w in said):
                raise _WholeFile  # a row longer still: cut by the csv module's rules
            if df is None:
                break
            stripped = [_stripped(df[j].to_numpy(dtype=object)) for j in range(k + 1)]
            del df
            # Blank lines (nothing but delimiters and spaces) skipped, their lines still counted.
            keep = np.zeros(len(stripped[0]), bool)
            for c in stripped:
                keep |= c != ""
            lines = np.flatnonzero(keep) + 2 + done
            done += len(keep)
            cols = {n: c[keep].tolist() for n, c in zip(names, stripped[:k], strict=True)}
            del stripped
            yield _Table(cols, _LineLabels(lines), repeated=repeated)
    finally:
        if chunks is not None:
            chunks.close()
    if done == 0:
        yield _Table({n: [] for n in names}, _LineLabels(np.zeros(0, int)), repeated=repeated)
    if done + 1 != n_lines:
        raise _WholeFile  # a quoted field over several lines: other line numbers


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


class _WholeFile(Exception):
    """The chunked C-engine reading cannot give the csv module's rows: read it row by row."""


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
    ids_txt: list | None  # the id column as read
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


def _digit_ids(ids_txt: list) -> np.ndarray | None:
    """The ids as integers when every one is text of 1 to 18 ASCII digits (where ``int``
    and numpy's parsing agree and nothing overflows), parsed without Python per row; else
    None."""
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


def _ids(rows: _Rows, ids_txt: list | None) -> tuple[np.ndarray, bool]:
    """The optional ``id`` column (integers where all are), else the data row number; and
    whether they are integers."""
    if ids_txt is None:
        return np.arange(1, rows.n + 1), True
    fast = _digit_ids(ids_txt)
    if fast is not None:
        return fast, True
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
