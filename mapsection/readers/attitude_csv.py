"""Reading an attitudes CSV as text columns: the raw table and the table being validated.

pandas' C engine reads the file (whole, or a chunk of records at a time) where it gives
exactly what the csv module gives row by row (:func:`_read_csv_rows`, the reference);
files where the two could differ (a field over several lines, a NUL byte, a blank or
quoted multi-line header, a row longer than the C engine takes) go to the csv module.
Line numbers are the file's physical lines, the header being line 1.

The validation of the values, and the public readers, are in
:mod:`mapsection.readers.attitudes`.
"""

from __future__ import annotations

import csv
import dataclasses
import io
import warnings
from collections.abc import Callable, Iterator, Mapping, Sequence
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pyproj

from ..errors import AttitudeError

_ASCII_SPACE = (" ", "\t", "\x0b", "\x0c", "\x1c", "\x1d", "\x1e", "\x1f")


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


class _WholeFile(Exception):
    """The chunked C-engine reading cannot give the csv module's rows: read it row by row."""


@dataclass
class _Scan:
    """What a scan of a CSV's bytes found: its first characters, physical lines, NUL bytes."""

    head: str  # the first 1 << 20 characters of the text
    n_lines: int  # physical lines (a last line without a newline counted)
    nul: bool  # a NUL byte somewhere in the file


def _sniff(first_line: str) -> type[csv.Dialect] | csv.Dialect:
    """The CSV dialect of a file, sniffed from its header line (comma, semicolon or tab)."""
    try:
        return csv.Sniffer().sniff(first_line, ",;\t")
    except csv.Error:
        return csv.excel


def _repeated(names: list[str]) -> dict[str, list[int]]:
    """Lower-case column name -> its column numbers (from 1), for names given more than once."""
    where: dict[str, list[int]] = {}
    for j, name in enumerate(names):
        where.setdefault(name.lower(), []).append(j + 1)
    return {key: v for key, v in where.items() if len(v) > 1}


def _header(head: str, nul: bool) -> tuple[type[csv.Dialect] | csv.Dialect, list[str]] | None:
    """The dialect and the stripped column names from the start of a CSV's text; None where
    the C engine is not to read it (a blank first line, a NUL byte, a quoted header over
    several lines)."""
    first = head[:4096].splitlines()[0] if head else ""
    if not first.strip() or nul:
        return None
    dialect = _sniff(first)
    header_reader = csv.reader(io.StringIO(head), dialect)
    header = next(header_reader, None)
    if header is None or header_reader.line_num != 1:
        return None  # a quoted header over several lines
    return dialect, [h.strip() for h in header]


def _c_engine_options(dialect, k: int) -> dict:
    """pandas.read_csv's options for a CSV of ``k`` columns read as the csv module reads it.

    One column more than the header: a row ending in a delimiter stays here.
    """
    return dict(
        encoding="utf-8-sig", sep=dialect.delimiter, quotechar=dialect.quotechar,
        doublequote=dialect.doublequote, skipinitialspace=dialect.skipinitialspace,
        quoting=csv.QUOTE_MINIMAL, header=None, names=range(k + 1), skiprows=1,
        index_col=False, dtype=str, na_filter=False, keep_default_na=False,
        skip_blank_lines=False, engine="c")


@contextmanager
def _c_engine() -> Iterator[None]:
    """Around pandas' C engine: :class:`_WholeFile` where it refuses the file, or warns of a
    row longer still (cut by the csv module's rules). Its warnings are caught around the
    parsing only, not the caller's work."""
    import pandas as pd

    with warnings.catch_warnings(record=True) as said:
        warnings.simplefilter("always", pd.errors.ParserWarning)
        try:
            yield
        except Exception:  # noqa: BLE001 - anything the C engine refuses, the csv module decides
            raise _WholeFile from None
    if any(issubclass(w.category, pd.errors.ParserWarning) for w in said):
        raise _WholeFile  # a row longer still: cut by the csv module's rules


def _stripped(column: np.ndarray) -> np.ndarray:
    """A column of text values (object array) without their surrounding whitespace, as
    ``str.strip`` takes it off; a column without any whitespace is given back as it is."""
    joined = "\x01".join(column)
    if joined.isascii() and not any(c in joined for c in _ASCII_SPACE):
        return column
    return np.strings.strip(column.astype(str)).astype(object)


def _stripped_columns(df, k: int) -> list[np.ndarray]:
    """The ``k + 1`` text columns of a frame the C engine read, each stripped."""
    return [_stripped(df[j].to_numpy(dtype=object)) for j in range(k + 1)]


def _records(stripped: list[np.ndarray], names: list[str], first: int
             ) -> tuple[dict[str, list], np.ndarray]:
    """The columns of the non-blank records, and each one's line number (``first``: the
    line of the first record read)."""
    # Blank lines (nothing but delimiters and spaces) are skipped, their lines still counted.
    keep = np.zeros(len(stripped[0]), bool)
    for c in stripped:
        keep |= c != ""
    lines = np.flatnonzero(keep) + first
    cols = {n: c[keep].tolist() for n, c in zip(names, stripped[: len(names)], strict=True)}
    return cols, lines


def _read_csv(path: Path) -> _Table:
    """The CSV as text columns, parsed by pandas' C engine (no Python per row).

    Gives exactly what :func:`_read_csv_rows` gives (the csv module, row by row): the
    header's names stripped, blank lines skipped but counted in the line numbers,
    short rows padded with blanks and long ones cut to the header's length. Files
    where the two could differ go to :func:`_read_csv_rows`.
    """
    import pandas as pd

    try:
        raw = path.read_bytes()
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        raise AttitudeError(f"{path}: not a text CSV file (not UTF-8)") from None
    except OSError as exc:
        raise AttitudeError(f"{path}: cannot be read ({exc.strerror})") from None
    header = _header(text[:1 << 20], "\x00" in text)
    if header is None:
        return _read_csv_rows(path)
    dialect, names = header
    # One record per physical line, or a quoted field runs over several: other line numbers.
    # (Counted on the bytes: in UTF-8 a newline byte is always a newline.)
    n_lines = raw.count(b"\n") + raw.count(b"\r") - raw.count(b"\r\n")
    if not raw.endswith((b"\n", b"\r")):
        n_lines += 1
    del text  # the C engine reads the bytes: no copy of the text as wide characters
    try:
        with _c_engine():
            df = pd.read_csv(io.BytesIO(raw), **_c_engine_options(dialect, len(names)))
    except _WholeFile:
        return _read_csv_rows(path)
    del raw
    if len(df) + 1 != n_lines:
        return _read_csv_rows(path)
    cols, lines = _records(_stripped_columns(df, len(names)), names, 2)
    return _Table(cols, _LineLabels(lines), repeated=_repeated(names))


def _scan(path: Path) -> _Scan:
    """The CSV's bytes scanned in blocks: UTF-8 checked (the errors of :func:`_read_csv`),
    NUL bytes, physical lines, and the start of its text."""
    import codecs

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
    return _Scan(head, n_lines, nul)


def _read_csv_chunks(path: Path, chunk_rows: int) -> Iterator[_Table]:
    """The CSV as :func:`_read_csv` gives it, in tables of ``chunk_rows`` records (their
    line numbers the file's), parsed by pandas' C engine a chunk at a time.

    The file is first scanned in blocks (UTF-8, NUL bytes, its physical lines) so that
    its errors are those of :func:`_read_csv`; raises :class:`_WholeFile` where the
    reading would differ from the csv module's (the caller then reads it row by row).
    """
    import pandas as pd

    scan = _scan(path)
    header, n_lines = _header(scan.head, scan.nul), scan.n_lines
    del scan
    if header is None:
        raise _WholeFile
    dialect, names = header
    repeated = _repeated(names)
    done = 0  # records read so far
    chunks = None
    try:
        while True:
            with _c_engine():
                if chunks is None:
                    chunks = pd.read_csv(path, **_c_engine_options(dialect, len(names)),
                                         chunksize=chunk_rows)
                df = next(chunks, None)
            if df is None:
                break
            stripped = _stripped_columns(df, len(names))
            del df
            cols, lines = _records(stripped, names, 2 + done)
            done += len(stripped[0])
            del stripped
            yield _Table(cols, _LineLabels(lines), repeated=repeated)
    finally:
        if chunks is not None:
            chunks.close()
    if done == 0:
        yield _Table({n: [] for n in names}, _LineLabels(np.zeros(0, int)), repeated=repeated)
    if done + 1 != n_lines:
        raise _WholeFile  # a quoted field over several lines: other line numbers


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
            dialect = _sniff(sample.splitlines()[0] if sample else "")
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
            repeated = _repeated(names)
    except UnicodeDecodeError:
        raise AttitudeError(f"{path}: not a text CSV file (not UTF-8)") from None
    except OSError as exc:
        raise AttitudeError(f"{path}: cannot be read ({exc.strerror})") from None
    return _Table(cols, rows, repeated=repeated)



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
