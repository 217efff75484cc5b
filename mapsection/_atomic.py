"""Write outputs all-or-nothing: into a temporary sibling, then rename.

Temporary files and folders are hidden siblings of the output whose names record
their owner: ``.<name>.mstmp-<host>-<pid>-<start>-<random>`` (``<start>`` is the
owner process's start time where the system tells it, else 0). A run that is
killed (SIGKILL, power cut) leaves its temporary behind; :func:`remove_stale`
removes those whose owner process is gone, and never one a live process owns.

Folder swaps take a lock on the parent folder (:func:`folder_lock`), so that
several processes replacing the same folder at once each leave a whole folder.

Write errors of the file system (no space left, read-only, not writable) become
:class:`~mapsection.errors.OutputError` naming the output, with nothing left behind.
"""

from __future__ import annotations

import contextlib
import errno
import hashlib
import os
import re
import shutil
import socket
import tempfile
from collections.abc import Callable, Iterator
from pathlib import Path

from .errors import MapsectionError, OutputError

try:  # POSIX advisory locks; where there are none, folder swaps are not locked
    import fcntl
except ImportError:  # pragma: no cover - Windows
    fcntl = None  # type: ignore[assignment]

TAG = "mstmp"
# Errors that mean "this place cannot be written", whatever was being written.
_WRITE_ERRNOS = {errno.ENOSPC, errno.EROFS, errno.EFBIG, getattr(errno, "EDQUOT", errno.ENOSPC)}
_ACCESS_ERRNOS = {errno.EACCES, errno.EPERM}
# What writer libraries (GDAL, SQLite) say for those errors when they do not raise OSError.
_WRITE_TEXT = ("no space left on device", "disk quota exceeded", "read-only file system",
               "database or disk is full", "file too large")


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


# --- owners of temporaries ---------------------------------------------------------------
def process_start(pid: int) -> int:
    """Start time of a process (clock ticks since boot, from /proc); 0 where unknown."""
    try:
        with open(f"/proc/{pid}/stat", "rb") as fh:
            stat = fh.read()
        # Field 22 (starttime); the command name (field 2) may hold spaces: split after it.
        return int(stat[stat.rindex(b")") + 2:].split()[19])
    except (OSError, ValueError, IndexError):
        return 0


def _host() -> str:
    return hashlib.sha1(socket.gethostname().encode()).hexdigest()[:6]


def _short(name: str) -> str:
    """An output's name as its temporaries carry it: at most 100 bytes (file names stop at 255)."""
    return name.encode()[:100].decode(errors="ignore")


def owner_tag() -> str:
    """``mstmp-<host>-<pid>-<start>-``: the part of a temporary's name naming its owner."""
    pid = os.getpid()
    return f"{TAG}-{_host()}-{pid}-{process_start(pid)}-"


_STALE = re.compile(rf"^\.(?P<name>.+?)\.(?:old\.)?{TAG}-(?P<host>[0-9a-f]{{6}})-(?P<pid>\d+)-"
                    rf"(?P<start>\d+)-[^/]*$")


def owner_alive(pid: int, start: int) -> bool:
    """True while the process ``pid`` that started at ``start`` (0: unknown) runs."""
    if os.name == "nt":  # no harmless signal 0 there: never judge another's temporary dead
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:  # another user's live process
        pass
    now = process_start(pid)
    return not (start and now and now != start)  # a different process reusing the pid


def remove_stale(folder: str | os.PathLike, name: str | None = None) -> list[Path]:
    """Remove the temporaries in ``folder`` whose owner process is gone; return them.

    Only names this module makes are considered (``name``: only those of that
    output), only those made on this host, and never one whose owner still runs.
    """
    removed = []
    host = _host()
    try:
        entries = list(os.scandir(folder))
    except OSError:
        return removed
    for entry in entries:
        m = _STALE.match(entry.name)
        if m is None or m["host"] != host or (name is not None and m["name"] != _short(name)):
            continue
        if owner_alive(int(m["pid"]), int(m["start"])):
            continue
        path = Path(entry.path)
        prev = path / "prev"
        target = Path(folder) / m["name"]
        if (".old." in entry.name and prev.is_dir() and not os.path.lexists(target)
                and m["name"] == entry.name[1:].split(".old.")[0]):
            # Killed in the middle of a swap: the previous folder goes back in its place.
            with contextlib.suppress(OSError):
                os.replace(prev, target)
        if entry.is_dir(follow_symlinks=False):
            shutil.rmtree(path, ignore_errors=True)
        else:
            with contextlib.suppress(OSError):
                path.unlink()
        removed.append(path)
    return removed


# --- locks ---------------------------------------------------------------------------------
_HELD: dict[tuple[int, int], int] = {}  # (st_dev, st_ino) of the folders this process locked


@contextlib.contextmanager
def _holding(key) -> Iterator[None]:
    """This process holds the lock of ``key`` (a folder's device and inode) meanwhile;
    counted, so that the same folder can be held again inside (reentrant)."""
    _HELD[key] = _HELD.get(key, 0) + 1
    try:
        yield
    finally:
        _HELD[key] -= 1
        if not _HELD[key]:
            del _HELD[key]


@contextlib.contextmanager
def folder_lock(folder: str | os.PathLike, waiting: Callable[[str], None] | None = None,
                create: bool = False) -> Iterator[None]:
    """Hold an exclusive lock on ``folder`` (an advisory lock on the folder itself).

    Another process asking for the same folder waits until it is released;
    ``waiting`` is told once when that happens. The lock goes with the process,
    so a killed process never leaves it held; no lock file is written. Reentrant
    within a process. ``create``: make the folder (again) if it is not there.

    Parameters
    ----------
    folder : the folder to lock.
    waiting : told (once) when another process holds the folder and this one waits.
    create : make the folder first when it is not there.

    Examples
    --------
    >>> # with folder_lock("out", waiting=print, create=True):
    >>> #     ...  # no other mapsection run writes into out/ meanwhile
    """
    folder = Path(folder)
    if fcntl is None:  # pragma: no cover - no POSIX locks
        yield
        return
    told = False
    while True:
        fd = _open_folder(folder, create)
        st = os.fstat(fd)
        key = (st.st_dev, st.st_ino)
        if key in _HELD:  # this process holds it already
            os.close(fd)
            with _holding(key):
                yield
            return
        try:
            locked, waited = _flock(fd, folder, None if told else waiting)
            told = told or waited
            if locked and not _same_folder(folder, key):
                continue  # the folder was removed (and maybe made again) meanwhile: lock anew
            with _holding(key):
                yield
            return
        finally:
            os.close(fd)  # closing the descriptor releases the lock


def _open_folder(folder: Path, create: bool) -> int:
    """A descriptor of ``folder`` (made first when ``create``); OutputError if impossible."""
    if create:
        try:
            folder.mkdir(parents=True, exist_ok=True)
        except OSError as exc:
            raise OutputError(f"{folder}: cannot create the output folder "
                              f"({exc.strerror})") from None
    try:
        return os.open(folder, os.O_RDONLY | getattr(os, "O_DIRECTORY", 0))
    except OSError as exc:
        raise OutputError(f"{folder}: cannot open the output folder ({exc.strerror})") \
            from None


def _flock(fd: int, folder: Path, waiting: Callable[[str], None] | None
           ) -> tuple[bool, bool]:
    """Lock ``fd`` exclusively, waiting while another process holds it (``waiting`` is told).

    Returns (locked, told): not locked on a file system without locks (some network
    shares), where the run goes on unlocked.
    """
    try:
        fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
    except BlockingIOError:
        if waiting is not None:
            waiting(f"{folder}: another mapsection run is writing here; waiting for it")
        fcntl.flock(fd, fcntl.LOCK_EX)
        return True, waiting is not None
    except OSError:
        return False, False
    return True, False


def _same_folder(folder: Path, key: tuple[int, int]) -> bool:
    """Whether ``folder`` is still the folder of device and inode ``key``."""
    try:
        st = os.stat(folder)
    except OSError:
        return False
    return (st.st_dev, st.st_ino) == key


# --- write errors ----------------------------------------------------------------------------
def _disk_full(folder: str | os.PathLike | None) -> bool:
    """True when the file system of ``folder`` has (almost) no space left for us."""
    if folder is None or not hasattr(os, "statvfs"):
        return False
    try:
        st = os.statvfs(folder)
    except OSError:
        return False
    return st.f_bavail * st.f_frsize < _NEARLY_FULL


_NEARLY_FULL = 1 << 20  # bytes: below this, a failed write is taken for a full disk


def write_problem(exc: BaseException, folder: str | os.PathLike | None = None) -> str | None:
    """What a file-system write error says, in a few words; None for any other error.

    Writer libraries (GDAL, SQLite) do not always say that the disk is full ("Failed
    to commit transaction"): any failure while the file system of ``folder`` has
    next to no space left counts as a full disk.
    """
    if isinstance(exc, OSError) and exc.errno in _WRITE_ERRNOS | _ACCESS_ERRNOS:
        return os.strerror(exc.errno)
    if isinstance(exc, MapsectionError) and not isinstance(exc, OutputError):
        return None  # bad input found while the output was being made: not a write error
    if isinstance(exc, Exception) and _disk_full(folder):
        return os.strerror(errno.ENOSPC)
    if isinstance(exc, OutputError):
        return None
    text = str(exc).lower()
    for words in _WRITE_TEXT:
        if words in text:
            return words[0].upper() + words[1:]
    return None


def output_error(path: Path, exc: BaseException) -> OutputError | None:
    """An OutputError naming ``path`` for a write error of the file system, else None."""
    if isinstance(exc, OutputError) and "nothing was written" in str(exc):
        return None  # said already
    why = write_problem(exc, Path(path).parent)
    if why is None:
        return None
    return OutputError(f"{path}: cannot write the output ({why}); nothing was written")


@contextlib.contextmanager
def atomic_file(path: str | os.PathLike) -> Iterator[Path]:
    """Yield a temporary path beside ``path``; rename it onto ``path`` on success.

    On any exception the temporary file is removed and ``path`` is untouched.
    """
    path = Path(path)
    _check_parent(path)
    if path.is_dir():
        raise OutputError(f"{path}: is a folder; give a file name for the output")
    remove_stale(path.parent, path.name)
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{_short(path.name)}.{owner_tag()}", suffix=path.suffix,
                                   dir=path.parent)
    except OSError as exc:
        raise output_error(path, exc) or exc from None
    os.close(fd)
    tmp_path = Path(tmp)
    try:
        yield tmp_path
        # mkstemp makes the file private (0600); give it the permissions a new file gets.
        os.chmod(tmp_path, 0o666 & ~_umask())
        os.replace(tmp_path, path)
    except BaseException as exc:
        tmp_path.unlink(missing_ok=True)
        err = output_error(path, exc)
        if err is not None:
            raise err from None
        raise


@contextlib.contextmanager
def atomic_dir(path: str | os.PathLike) -> Iterator[Path]:
    """Yield a temporary folder beside ``path``; it replaces ``path`` whole on success.

    A previous folder at ``path`` is kept until the new one is complete, so a
    failed build never leaves a half-written or half-deleted output. The swap
    holds the lock of the parent folder: concurrent swaps of one folder queue.
    """
    path = Path(path)
    _check_parent(path)
    try:
        tmp = Path(tempfile.mkdtemp(prefix=f".{_short(path.name)}.{owner_tag()}", dir=path.parent))
    except OSError as exc:
        raise output_error(path, exc) or exc from None
    try:
        yield tmp
        _publish_tree(tmp)
        with folder_lock(path.parent):
            _swap(tmp, path)
    except BaseException as exc:
        shutil.rmtree(tmp, ignore_errors=True)
        err = output_error(path, exc)
        if err is not None:
            raise err from None
        raise


def _swap(tmp: Path, path: Path) -> None:
    """Put the folder ``tmp`` at ``path``; a folder there goes only once ``tmp`` is in place."""
    if not os.path.lexists(path):
        os.replace(tmp, path)
        return
    old = Path(tempfile.mkdtemp(prefix=f".{_short(path.name)}.old.{owner_tag()}", dir=path.parent))
    os.replace(path, old / "prev")
    try:
        os.replace(tmp, path)
    except BaseException:
        os.replace(old / "prev", path)  # put the previous folder back
        shutil.rmtree(old, ignore_errors=True)
        raise
    shutil.rmtree(old, ignore_errors=True)
