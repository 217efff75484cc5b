"""Write outputs all-or-nothing: into a temporary sibling, then rename."""

from __future__ import annotations

import contextlib
import os
import shutil
import tempfile
from collections.abc import Iterator
from pathlib import Path

from .errors import OutputError


def _check_parent(path: Path) -> None:
    parent = path.parent if str(path.parent) else Path(".")
    if not parent.is_dir():
        raise OutputError(f"{path}: output folder {parent} does not exist")


@contextlib.contextmanager
def atomic_file(path: str | os.PathLike) -> Iterator[Path]:
    """Yield a temporary path beside ``path``; rename it onto ``path`` on success.

    On any exception the temporary file is removed and ``path`` is untouched.
    """
    path = Path(path)
    _check_parent(path)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=path.suffix, dir=path.parent)
    os.close(fd)
    tmp_path = Path(tmp)
    try:
        yield tmp_path
        os.replace(tmp_path, path)
    except BaseException:
        tmp_path.unlink(missing_ok=True)
        raise


@contextlib.contextmanager
def atomic_dir(path: str | os.PathLike) -> Iterator[Path]:
    """Yield a temporary folder beside ``path``; it replaces ``path`` whole on success.

    A previous folder at ``path`` is kept until the new one is complete, so a
    failed build never leaves a half-written or half-deleted output.
    """
    path = Path(path)
    _check_parent(path)
    tmp = Path(tempfile.mkdtemp(prefix=f".{path.name}.", dir=path.parent))
    try:
        yield tmp
        if path.exists():
            old = Path(tempfile.mkdtemp(prefix=f".{path.name}.old.", dir=path.parent))
            os.replace(path, old / "prev")
            os.replace(tmp, path)
            shutil.rmtree(old, ignore_errors=True)
        else:
            os.replace(tmp, path)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
