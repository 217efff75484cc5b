"""An attitude file's raw table and the table being validated: text columns (a list, or a
pyarrow column turned into Python strings only where asked), each record's row label
(``"line 7"``, ``"feature 3"``), and each bad row's reasons.

Read by :mod:`mapsection.readers.attitude_csv` (CSV) and
:mod:`mapsection.readers.attitude_vector` (point layers); validated in
:mod:`mapsection.readers.attitudes`.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable, Iterator, Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pyproj

from ..errors import AttitudeError


@dataclass
class _Table:
    """Raw attribute table: text columns plus the row label of each record."""

    columns: dict[str, Sequence]  # original column name -> values (a list or a _TextColumn)
    rows: Sequence[str]  # "line 7" or "feature 3"
    x: np.ndarray | None = None  # from geometry (vector files)
    y: np.ndarray | None = None
    z: np.ndarray | None = None
    crs: pyproj.CRS | None = None
    repeated: dict[str, list[int]] = dataclasses.field(default_factory=dict)


class _TextColumn(Sequence):
    """A CSV column's stripped text values, held by pyarrow; the Python strings are made
    (all at once, then kept) only when asked for: a bad row's message, text ids."""

    def __init__(self, values) -> None:
        self.values = values  # a pyarrow (chunked) array of strings, no nulls
        self._list: list[str] | None = None

    def __len__(self) -> int:
        return len(self.values)

    def tolist(self) -> list[str]:
        if self._list is None:
            self._list = self.values.to_pylist()
        return self._list

    def __getitem__(self, i):
        if self._list is None and isinstance(i, int | np.integer):
            return self.values[int(i)].as_py()  # one value for a message: no list made
        return self.tolist()[i]

    def take(self, rows: np.ndarray) -> list[str]:
        """The values of ``rows`` (positions) as Python strings."""
        if self._list is not None:
            return [self._list[i] for i in rows.tolist()]
        import pyarrow as pa

        return self.values.take(pa.array(rows, pa.int64())).to_pylist()

    def __iter__(self) -> Iterator[str]:
        return iter(self.tolist())

    def __array__(self, dtype=None, copy=None) -> np.ndarray:
        return np.array(self.tolist(), dtype=object if dtype is None else dtype)

    def __eq__(self, other) -> bool:
        if not isinstance(other, Sequence):
            return NotImplemented
        return self.tolist() == list(other)

    __hash__ = None  # type: ignore[assignment]

    def __repr__(self) -> str:
        return f"_TextColumn({self.tolist()!r})"

    def floats(self) -> np.ndarray | None:
        """The values as numbers when pyarrow parses every one to a finite number; else
        None (the caller then parses the text as before).

        Every string pyarrow parses to a finite float, Python's ``float()`` (and numpy's
        conversion of a list of str) parses to the same float (tests/test_attitudes.py);
        what pyarrow reads as non-finite (``nan``, ``inf``, ``nan(1)``, overflow) is left
        to the caller's rules.
        """
        import pyarrow as pa
        import pyarrow.compute as pc

        try:
            num = pc.cast(self.values, pa.float64())
        except (pa.ArrowInvalid, pa.ArrowNotImplementedError):
            return None
        out = np.array(num.to_numpy(), dtype=float)  # a writable copy
        return out if np.isfinite(out).all() else None

    def lower_in(self, words: set[str]) -> np.ndarray | None:
        """Whether each value, lower-cased as ``str.lower`` does, is one of ``words``;
        None when a value is not ASCII (where ASCII lower-casing could differ)."""
        import pyarrow as pa
        import pyarrow.compute as pc

        v = self.values
        if not pc.all(pc.string_is_ascii(v)).as_py():
            return None
        found = pc.is_in(pc.ascii_lower(v), value_set=pa.array(sorted(words), pa.string()))
        return np.asarray(found.to_numpy(zero_copy_only=False), bool)

    def digits(self) -> np.ndarray | None:
        """The values as integers when every one is text of 1 to 18 ASCII digits (as
        ``_digit_ids`` in :mod:`mapsection.readers.attitudes` takes them); else None."""
        import pyarrow as pa
        import pyarrow.compute as pc

        v = self.values
        if not len(v) or not pc.all(pc.ascii_is_decimal(v)).as_py():
            return None
        if pc.max(pc.utf8_length(v)).as_py() > 18:
            return None
        return np.array(pc.cast(v, pa.int64()).to_numpy(), dtype=np.int64)


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
