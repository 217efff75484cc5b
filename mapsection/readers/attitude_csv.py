"""Reading an attitudes CSV as text columns (the table itself: :mod:`.attitude_table`).

pyarrow's CSV reader parses the file (whole, or a piece of whole lines at a time) into
text columns where it gives exactly what the csv module gives row by row
(:func:`_read_csv_rows`, the reference): the values are stripped as ``str.strip`` strips
them and the numbers are parsed in pyarrow (:class:`_TextColumn`), with no Python per
row. Rows whose number of fields is not the header's are handed back by pyarrow and read
by the csv module, one by one. Files where the two could
differ (a field over several lines, a NUL byte, a blank or quoted multi-line header, a row
longer than the header by more than one delimiter, a quote after a space when the header
is sniffed with spaces after its delimiters) go to the csv module. Line numbers are the
file's physical lines, the header being line 1.

The validation of the values, and the public readers, are in
:mod:`mapsection.readers.attitudes`.
"""

from __future__ import annotations

import csv
import io
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..errors import AttitudeError
from .attitude_table import _LineLabels, _Table, _TextColumn

_ASCII_SPACE = (" ", "\t", "\x0b", "\x0c", "\x1c", "\x1d", "\x1e", "\x1f")

# The characters ``str.strip()`` takes off: those for which ``str.isspace`` is true
# (Python 3.11, Unicode 14; tests/test_attitudes.py checks the list against str.isspace).
_SPACES = ("\t\n\x0b\x0c\r\x1c\x1d\x1e\x1f \x85\xa0\u1680\u2000\u2001\u2002\u2003\u2004"
           "\u2005\u2006\u2007\u2008\u2009\u200a\u2028\u2029\u202f\u205f\u3000")

# pyarrow's block, and the first piece of a file read in chunks (later pieces are sized to
# the chunk's rows): about 100 000 rows of a five-column attitude file.
_BLOCK_BYTES = 1 << 22


    # lower-case column name -> its column numbers (from 1), for names given more than once


class _WholeFile(Exception):
    """pyarrow's reading cannot give the csv module's rows: read the file row by row."""


@dataclass
class _Scan:
    """What a scan of a CSV's bytes found: its first characters, NUL bytes, quotes."""

    head: str  # the first 1 << 20 characters of the text
    nul: bool  # a NUL byte somewhere in the file
    quotes: frozenset[str]  # the quote characters (' and ") found in the file


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
    pyarrow is not to read it (a blank first line, a NUL byte, a quoted header over
    several lines)."""
    first = head[:4096].splitlines()[0] if head else ""
    if not first.strip() or nul:
        return None
    dialect = _sniff(first)
    # Lines split at CR, LF and CR LF, as in the file the csv module reads (newline="").
    header_reader = csv.reader(io.StringIO(head, newline=""), dialect)
    header = next(header_reader, None)
    if header is None or header_reader.line_num != 1:
        return None  # a quoted header over several lines
    return dialect, [h.strip() for h in header]


def _arrow_can_read(dialect, quotes: frozenset[str]) -> bool:
    """Whether pyarrow reads the file's fields as the csv module does: not where a quote
    may follow the spaces the csv module skips after a delimiter (pyarrow does not skip
    them), nor with an escape character."""
    if dialect.escapechar:
        return False
    return not (dialect.skipinitialspace and dialect.quotechar in quotes)


class _OddRows:
    """pyarrow's handler of the rows whose number of fields is not the header's: keeps
    each one's row number and text for the csv module; refuses (ends the reading) a row
    longer than the header by more than one delimiter, which the caller reads row by row."""

    def __init__(self, k: int) -> None:
        self.k = k
        self.rows: list[tuple[int, str]] = []  # (row number from 1, text), in order

    def __call__(self, row) -> str:
        if row.number is None or row.actual_columns > self.k + 1:
            return "error"
        self.rows.append((row.number, row.text))
        return "skip"


def _arrow_options(dialect, k: int, odd: _OddRows) -> dict:
    """pyarrow.csv's options for lines of a CSV of ``k`` columns read as the csv module
    reads them: every field text (nothing null), empty lines kept as rows (their lines
    counted), one thread (so that the odd rows' numbers are known)."""
    import pyarrow as pa
    import pyarrow.csv as pcsv

    names = [f"f{j}" for j in range(k)]
    return dict(
        read_options=pcsv.ReadOptions(use_threads=False, block_size=_BLOCK_BYTES,
                                      column_names=names),
        parse_options=pcsv.ParseOptions(
            delimiter=dialect.delimiter, quote_char=dialect.quotechar or False,
            double_quote=dialect.doublequote, escape_char=False, newlines_in_values=True,
            ignore_empty_lines=False, invalid_row_handler=odd),
        convert_options=pcsv.ConvertOptions(
            column_types=dict.fromkeys(names, pa.string()), strings_can_be_null=False,
            quoted_strings_can_be_null=False))


def _lines_in(buf: bytes) -> int:
    """Physical lines of ``buf`` (CR, LF or CR LF; a last line without one counted). In
    UTF-8 a newline byte is always a newline."""
    n = buf.count(b"\n")
    if b"\r" in buf:
        n += buf.count(b"\r") - buf.count(b"\r\n")
    if buf and not buf.endswith((b"\n", b"\r")):
        n += 1
    return n


def _piece(buf: bytes, first: int, dialect, names: list[str], quoted: bool
           ) -> tuple[dict[str, _TextColumn], np.ndarray, int]:
    """The records of ``buf``, whole lines of the CSV from physical line ``first`` (1: the
    file's start, the header), parsed by pyarrow: the stripped columns of the non-blank
    records after the header, their lines, and the lines read.

    Raises :class:`_WholeFile` where the csv module could read them otherwise: a field
    over several lines (fewer records than lines, or a line break inside a value), a
    row longer than the header by more than one delimiter, a header read otherwise.
    """
    import pyarrow as pa
    import pyarrow.csv as pcsv

    k = len(names)
    odd = _OddRows(k)
    if first > 1 and buf.startswith(b"\xef\xbb\xbf"):
        raise _WholeFile  # pyarrow would take a U+FEFF starting this line for a BOM
    try:
        table = pcsv.read_csv(pa.BufferReader(buf), **_arrow_options(dialect, k, odd))
    except pa.ArrowException:  # a row too long, or anything pyarrow refuses
        raise _WholeFile from None
    n_lines = _lines_in(buf)
    if table.num_rows + len(odd.rows) != n_lines:
        raise _WholeFile  # a quoted field over several lines: other line numbers
    columns = table.columns
    del table
    if first == 1 and (any(n == 1 for n, _ in odd.rows)
                       or not _header_matches(columns, names)):
        raise _WholeFile
    if quoted and any(_has_line_break(c) for c in columns):
        raise _WholeFile  # a quoted field going on past these lines
    columns, lines, odd_kept = _merged(columns, odd.rows, first, dialect, k)
    cols, lines = _records_of(columns, lines, odd_kept, names, _spaced(buf))
    return cols, lines, n_lines


def _has_line_break(column) -> bool:
    import pyarrow.compute as pc

    return any(pc.any(pc.match_substring(column, c)).as_py() for c in "\n\r")


def _merged(columns: list, odd: list[tuple[int, str]], first: int, dialect, k: int
            ) -> tuple[list, np.ndarray, np.ndarray | None]:
    """The ``k`` columns of the rows pyarrow read (the lines from ``first`` on) with the
    odd rows ``odd`` (read by the csv module: padded with blanks or cut to ``k``) put
    back in their lines; each row's line, and which odd rows are not blank (a field
    beyond the header's counts)."""
    import pyarrow as pa

    n = len(columns[0])
    if not odd:
        return columns, np.arange(first, first + n), None
    try:
        fields = [next(csv.reader([text + "\n"], dialect), []) for _, text in odd]
    except csv.Error:
        raise _WholeFile from None
    if any("\n" in f or "\r" in f for rec in fields for f in rec):
        raise _WholeFile  # a quoted field going on past its line
    odd_lines = np.array([number for number, _ in odd]) + (first - 1)
    # The lines of pyarrow's rows: those from ``first`` on that are not odd rows.
    span = np.arange(first, first + n + len(odd))
    lines = np.concatenate([span[~np.isin(span, odd_lines)], odd_lines])
    odd_kept = np.concatenate([np.zeros(n, bool),
                               [bool("".join(rec).strip()) for rec in fields]])
    padded = [(rec + [""] * k)[:k] for rec in fields]
    order = pa.array(np.argsort(lines, kind="stable"))
    merged = [pa.chunked_array([*_chunks(c), pa.array([r[j] for r in padded], pa.string())])
              .take(order) for j, c in enumerate(columns)]
    return merged, np.sort(lines), odd_kept[order.to_numpy()]


def _chunks(column) -> list:
    return list(column.chunks) if hasattr(column, "chunks") else [column]


def _records_of(columns: list, lines: np.ndarray, odd_kept: np.ndarray | None,
                names: list[str], spaced: bool = True
                ) -> tuple[dict[str, _TextColumn], np.ndarray]:
    """The stripped columns of the non-blank records after the header, and their lines
    (``columns`` is emptied as they are stripped; ``spaced`` False: the text holds no
    character ``str.strip`` takes off, nothing to strip)."""
    import pyarrow as pa
    import pyarrow.compute as pc

    # Blank lines (nothing but delimiters and spaces) are skipped, their lines still counted.
    nonblank = np.zeros(len(lines), bool) if odd_kept is None else odd_kept.copy()
    stripped = []
    while columns:
        c = columns.pop(0)
        if spaced:
            c = pc.utf8_trim(c, _SPACES)  # as str.strip() strips
        nonblank |= np.asarray(pc.not_equal(c, "").to_numpy(zero_copy_only=False), bool)
        stripped.append(c)
    keep = (lines > 1) & nonblank  # line 1: the header
    if len(keep) and not keep[0] and keep[1:].all():
        stripped = [c.slice(1) for c in stripped]  # the header only: no copy
        lines = lines[1:]
    elif not keep.all():
        mask = pa.array(keep)
        stripped = [c.filter(mask) for c in stripped]
        lines = lines[keep]
    cols = {n: _TextColumn(c) for n, c in zip(names, stripped, strict=True)}
    return cols, lines


def _spaced(buf: bytes) -> bool:
    """Whether ``buf`` may hold a character ``str.strip`` takes off (other than line
    breaks, which in a value send the file to the csv module)."""
    return not buf.isascii() or any(c.encode() in buf for c in _ASCII_SPACE)


def _header_matches(columns: list, names: list[str]) -> bool:
    """Whether pyarrow's first row is the header the csv module read (stripped)."""
    import pyarrow.compute as pc

    if len(columns) != len(names) or not len(columns[0]):
        return False
    return [pc.utf8_trim(c[0:1], _SPACES)[0].as_py() for c in columns] == names


def _read_csv(path: Path) -> _Table:
    """The CSV as text columns, parsed by pyarrow (no Python per row).

    Gives exactly what :func:`_read_csv_rows` gives (the csv module, row by row): the
    header's names stripped, blank lines skipped but counted in the line numbers,
    short rows padded with blanks and long ones cut to the header's length. Files
    where the two could differ go to :func:`_read_csv_rows`.
    """
    try:
        raw = path.read_bytes()
        if raw.isascii():
            head, nul = raw[: 1 << 20].decode("ascii"), b"\x00" in raw
        else:
            text = raw.decode("utf-8-sig")  # the whole file checked
            head, nul = text[: 1 << 20], "\x00" in text
            del text
    except UnicodeDecodeError:
        raise AttitudeError(f"{path}: not a text CSV file (not UTF-8)") from None
    except OSError as exc:
        raise AttitudeError(f"{path}: cannot be read ({exc.strerror})") from None
    header = _header(head, nul)
    quotes = frozenset(q for q in "\"'" if q.encode() in raw)
    if header is None or not _arrow_can_read(header[0], quotes):
        return _read_csv_rows(path)
    dialect, names = header
    try:
        cols, lines, _ = _piece(raw, 1, dialect, names, dialect.quotechar in quotes)
    except _WholeFile:
        return _read_csv_rows(path)
    return _Table(cols, _LineLabels(lines), repeated=_repeated(names))


def _scan(path: Path) -> _Scan:
    """The CSV's bytes scanned in blocks: UTF-8 checked (the errors of :func:`_read_csv`),
    NUL bytes, quote characters and the start of its text."""
    import codecs

    decoder = codecs.getincrementaldecoder("utf-8-sig")()
    head = ""
    nul = False
    quotes: set[str] = set()
    try:
        with open(path, "rb") as fh:
            while block := fh.read(1 << 23):
                if block.isascii() and not decoder.getstate()[0]:
                    text = block[: 1 << 20].decode("ascii") if len(head) < 1 << 20 else ""
                else:
                    text = decoder.decode(block)
                if len(head) < 1 << 20:
                    head += text[: (1 << 20) - len(head)]
                nul |= b"\x00" in block
                quotes.update(q for q in "\"'" if q.encode() in block)
            decoder.decode(b"", final=True)
    except UnicodeDecodeError:
        raise AttitudeError(f"{path}: not a text CSV file (not UTF-8)") from None
    except OSError as exc:
        raise AttitudeError(f"{path}: cannot be read ({exc.strerror})") from None
    return _Scan(head, nul, frozenset(quotes))


def _pieces(path: Path, chunk_rows: int) -> Iterator[bytes]:
    """The file's bytes in pieces of whole lines (never a CR LF split), of about
    ``chunk_rows`` lines each (the size guessed from the first piece's lines)."""
    size, guessed = _BLOCK_BYTES, False
    carry = b""
    with open(path, "rb") as fh:
        while block := fh.read(size):
            buf = carry + block if carry else block
            # After the last line break; a CR at the very end may be the start of a CR LF.
            cut = max(buf.rfind(b"\n"), buf.rfind(b"\r", 0, len(buf) - 1)) + 1
            if not cut:
                carry = buf  # no whole line yet
                continue
            piece, carry = buf[:cut], buf[cut:]
            if not guessed:
                per_line = len(piece) / max(_lines_in(piece), 1)
                # a little under: a piece's records in one table, not one and a sliver
                size = int(0.97 * per_line * chunk_rows)
                size, guessed = min(max(size, _BLOCK_BYTES >> 6), _BLOCK_BYTES << 4), True
            yield piece
    if carry:
        yield carry


def _read_csv_chunks(path: Path, chunk_rows: int) -> Iterator[_Table]:
    """The CSV as :func:`_read_csv` gives it, in tables of at most ``chunk_rows`` records
    (their line numbers the file's), parsed by pyarrow a piece of the file at a time.

    The file is first scanned in blocks (UTF-8, NUL bytes, quotes) so that its errors
    are those of :func:`_read_csv`; raises :class:`_WholeFile` where the reading would
    differ from the csv module's (the caller then reads it row by row).
    """
    scan = _scan(path)
    header, quotes = _header(scan.head, scan.nul), scan.quotes
    del scan
    if header is None or not _arrow_can_read(header[0], quotes):
        raise _WholeFile
    dialect, names = header
    repeated = _repeated(names)
    first = 1  # the physical line the next piece starts at
    yielded = False
    for buf in _pieces(path, chunk_rows):
        cols, lines, n_lines = _piece(buf, first, dialect, names, dialect.quotechar in quotes)
        del buf
        first += n_lines
        for i in range(0, len(lines), chunk_rows):
            yielded = True
            yield _Table({n: _TextColumn(c.values.slice(i, chunk_rows))
                          for n, c in cols.items()},
                         _LineLabels(lines[i:i + chunk_rows]), repeated=repeated)
    if not yielded:
        import pyarrow as pa

        empty = {n: _TextColumn(pa.array([], pa.string())) for n in names}
        yield _Table(empty, _LineLabels(np.zeros(0, int)), repeated=repeated)


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


