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


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


def _publish_tree(folder: Path) -> None:
    """Give a finished temporary folder and its files the permissions new ones get."""
    mask = _umask()
    os.chmod(folder, 0o777 & ~mask)
    for root, dirs, files in os.walk(folder):
        for d in dirs:
            os.chmod(os.path.join(root, d), 0o777 & ~mask)
        for f in files:
            p = os.path.join(root, f)
            os.chmod(p, (os.stat(p).st_mode | 0o644) & 0o777 & ~mask)


@contextlib.contextmanager
def atomic_file(path: str | os.PathLike) -> Iterator[Path]:
    """Yield a temporary path beside ``path``; rename it onto ``path`` on success.

    On any exception the temporary file is removed and ``path`` is untouched.
    """
    path = Path(path)
    _check_parent(path)
    if path.is_dir():
        raise OutputError(f"{path}: is a folder; give a file name for the output")
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=path.suffix, dir=path.parent)
    os.close(fd)
    tmp_path = Path(tmp)
    try:
        yield tmp_path
        # mkstemp makes the file private (0600); give it the permissions a new file gets.
        os.chmod(tmp_path, 0o666 & ~_umask())
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
        _publish_tree(tmp)
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
