"""Typed reading of the tables of a TOML file, every error naming the file and the key path.

:class:`TableReader` wraps one table (``section[1].``): its ``get``, ``number``,
``text``, ``choice`` and ``path`` check a key's type and range and raise
:class:`~mapsection.errors.ProjectFileError` as ``project.toml: section[1].corridor:
must be a number > 0``. :mod:`mapsection.project` reads the project file with it.
"""

from __future__ import annotations

import os
from pathlib import Path
from typing import Any

from .errors import ProjectFileError, SettingError
from .settings import check_choice, check_number

__all__ = ["TableReader", "array_of_tables", "check_known"]


class TableReader:
    """Typed access to a TOML table that names the key path in every error."""

    def __init__(self, fname: str, table: dict[str, Any], prefix: str = ""):
        self.fname, self.table, self.prefix = fname, table, prefix

    def _key(self, key: str) -> str:
        return f"{self.prefix}{key}"

    def fail(self, key: str, msg: str) -> ProjectFileError:
        return ProjectFileError(f"{self.fname}: {self._key(key)}: {msg}")

    def sub(self, key: str, required: bool = True) -> TableReader | None:
        if key not in self.table:
            if required:
                raise self.fail(key, "missing table")
            return None
        val = self.table[key]
        if not isinstance(val, dict):
            raise self.fail(key, "must be a table")
        return TableReader(self.fname, val, f"{self._key(key)}.")

    def get(self, key: str, kind: type | tuple, default: Any = ...):
        """The value of ``key`` checked for its type (a missing key: ``default``, or an error)."""
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
        return val

    def number(self, key: str, default: Any = ...) -> float:
        """A number checked against its documented range (settings.RANGES[key])."""
        val = self.get(key, float, default)
        try:
            return val if val is None else check_number(key, val)
        except SettingError as exc:
            raise self.fail(exc.key, exc.reason) from None

    def text(self, key: str) -> str:
        """A required name: a string that is not blank."""
        val = self.get(key, str)
        if not val.strip():
            raise self.fail(key, "must not be empty")
        return val

    def choice(self, key: str, default: str) -> str:
        """A named choice (settings.CHOICES[key]), the error naming the choices."""
        try:
            return check_choice(key, self.get(key, str, default))
        except SettingError as exc:
            raise self.fail(exc.key, exc.reason) from None

    def path(self, key: str, base: Path) -> Path:
        val = self.get(key, str)
        p = Path(os.path.expanduser(val))
        return p if p.is_absolute() else (base / p)


def check_known(reader: TableReader, allowed: frozenset[str]) -> None:
    """ProjectFileError naming the first key of the table that is not ``allowed``."""
    extra = sorted(set(reader.table) - allowed)
    if extra:
        raise reader.fail(extra[0], f"unknown key (known keys: {', '.join(sorted(allowed))})")


def array_of_tables(fname: str, raw: dict[str, Any], key: str, what: str,
                     allowed: frozenset[str]) -> list[TableReader]:
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
        r = TableReader(fname, entry, f"{key}[{i}].")
        check_known(r, allowed)
        readers.append(r)
    return readers
