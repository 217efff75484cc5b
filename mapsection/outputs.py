"""Output paths that can never destroy an input, and the folders a build may replace.

Every command knows its inputs (the project file, the DEM, the map, the attitudes,
the line file, the ``--from`` file). :func:`check_output` refuses, with an
:class:`~mapsection.errors.OutputError` naming both paths, an output that *is* an
input (same resolved path or same file), or that *contains* one (a folder holding
an input, which replacing would delete). Paths are compared resolved (symbolic
links followed) and by file identity (device and inode), not as strings.

A build replaces ``OUTDIR/<section>/`` only when that folder is a previous build:
it holds a ``build.log`` whose first line is the one every build writes
(``mapsection <version> build of section <name>``). An empty folder may be
replaced too; anything else there is refused, not deleted (:func:`check_build_target`).

Example::

    from mapsection.outputs import check_output
    check_output("profile.csv", [("DEM", "dem.tif")], option="-o")
"""

from __future__ import annotations

import os
import re
from collections.abc import Iterable, Sequence
from pathlib import Path

from .errors import OutputError, ProjectFileError

BUILD_LOG = "build.log"
_BUILD_LOG_FIRST = re.compile(r"^mapsection \S+ build of section ")
# Files that belong with an input file: a Shapefile's parts, GDAL's side files.
_SIDECARS = (".shx", ".dbf", ".prj", ".cpg", ".qix", ".sbn", ".sbx", ".aux.xml", ".ovr",
             ".tfw", ".tifw", ".msk")
MAX_SECTION_NAME_BYTES = 150  # the tool's default: room for temporaries' names within 255 bytes

Inputs = Iterable[tuple[str, "str | os.PathLike | None"]]


def folder_name(name: str) -> str:
    """A section name as a folder name (characters some systems forbid replaced by ``_``)."""
    bad = '<>:"/\\|?*'
    clean = "".join("_" if c in bad or ord(c) < 32 else c for c in name).strip().strip(".")
    return clean or "section"


def section_names_problem(names: Sequence[str]) -> str | None:
    """Why these section names cannot each have their own output folder; None when they can.

    A name must hold no path separator and fit in a file name; two names may not
    give the same folder, also on a file system that ignores case.
    """
    seen: dict[str, str] = {}
    for name in names:
        if "/" in name or "\\" in name:
            return f"section name {name!r} holds a path separator; use a name without / or \\"
        if name.strip().strip(".") == "":
            return f"section name {name!r} cannot name a folder; give the section a name"
        size = len(folder_name(name).encode())
        if size > MAX_SECTION_NAME_BYTES:
            return (f"section name {name[:40]!r}... is {size} bytes long; "
                    f"at most {MAX_SECTION_NAME_BYTES} fit in a folder name")
        key = folder_name(name).casefold()
        if key in seen:
            return (f"sections {seen[key]!r} and {name!r} would both be written to the folder "
                    f"{folder_name(name)!r}; rename one")
        seen[key] = name
    return None


def check_section_names(fname: str, names: Sequence[str]) -> None:
    """ProjectFileError naming the project file when section names clash (see above)."""
    problem = section_names_problem(names)
    if problem is not None:
        raise ProjectFileError(f"{fname}: section: {problem}")


def with_sidecars(path: str | os.PathLike) -> list[Path]:
    """``path`` and the side files beside it that belong to it (a Shapefile's .dbf, ...)."""
    path = Path(path)
    out = [path]
    for ext in _SIDECARS:
        for cand in (path.with_suffix(ext), path.with_name(path.name + ext)):
            if cand not in out and cand.is_file():
                out.append(cand)
    return out


def project_inputs(project) -> list[tuple[str, Path]]:
    """The input files of a project: the project file, the DEM, the map and the attitudes."""
    pairs = [("project file", project.path), ("DEM", project.dem_path),
             ("map", project.map_path), ("attitudes file", project.attitudes_path)]
    return [(label, p) for label, path in pairs for p in with_sidecars(path)]


def file_inputs(*pairs: tuple[str, str | os.PathLike | None]) -> list[tuple[str, Path]]:
    """(label, path) of the inputs given on a command line that are files, with side files.

    A LINE given as coordinates text names no file and is left out.
    """
    out = []
    for label, text in pairs:
        if text is None or str(text) == "" or not os.path.lexists(text):
            continue
        out += [(label, p) for p in with_sidecars(text)]
    return out


def _identity(path: str) -> tuple[int, int] | None:
    try:
        st = os.stat(path)
    except OSError:
        return None
    return st.st_dev, st.st_ino


def _relation(output: Path, inp: Path) -> str | None:
    """'is' / 'contains' when writing ``output`` would replace or delete ``inp``."""
    out_r = os.path.realpath(output)
    in_r = os.path.realpath(inp)
    if out_r == in_r:
        return "is"
    out_id, in_id = _identity(out_r), _identity(in_r)
    if out_id is not None and out_id == in_id:
        return "is"
    if out_id is None:  # not there yet: the same name in the same folder is the same path
        parent_id = _identity(os.path.dirname(out_r) or ".")
        if (parent_id is not None and parent_id == _identity(os.path.dirname(in_r) or ".")
                and os.path.basename(out_r) == os.path.basename(in_r)):
            return "is"
        return None
    if os.path.isdir(out_r):
        parent = os.path.dirname(in_r)
        while True:
            if _identity(parent) == out_id:
                return "contains"
            up = os.path.dirname(parent)
            if up == parent:
                return None
            parent = up
    return None


def check_output(output: str | os.PathLike | None, inputs: Inputs, *,
                 option: str = "-o", file: bool = False) -> Path:
    """The output path, once it is sure that writing it destroys no input.

    Parameters
    ----------
    output : path
        What the command is about to write (a file, or a folder it replaces whole).
    inputs : iterable of (label, path)
        The command's input files, e.g. ``[("DEM", "dem.tif")]``; None paths are skipped.
    option : str
        How the user gave the output (``-o``, ``--json``), for the message.
    file : bool
        The output is a file: an existing folder there is refused as such.

    Returns
    -------
    Path
        ``output`` as a Path.

    Raises
    ------
    OutputError
        The path is empty, is an input, or is a folder holding an input.

    Examples
    --------
    >>> check_output("", [])
    Traceback (most recent call last):
    ...
    mapsection.errors.OutputError: -o: empty output path; give a file or folder name
    """
    if output is None or str(output).strip() == "":
        raise OutputError(f"{option}: empty output path; give a file or folder name")
    out = Path(output)
    shown = os.fspath(output)  # as the user wrote it
    if file and out.is_dir():
        raise OutputError(f"{option} {shown}: is a folder; give the name of the file to write")
    for label, inp in inputs:
        if inp is None or str(inp) == "":
            continue
        relation = _relation(out, Path(inp))
        if relation == "is":
            raise OutputError(f"{option} {shown}: is the {label} {inp}; writing it would replace "
                              f"an input (choose another output path)")
        if relation == "contains":
            raise OutputError(f"{option} {shown}: holds the {label} {inp}; replacing it would "
                              f"delete an input (choose another output path)")
    return out


def check_distinct(outputs: Sequence[tuple[str, str | os.PathLike | None]]) -> None:
    """OutputError when two outputs of one command are the same path (one would be lost)."""
    given = [(opt, Path(p)) for opt, p in outputs if p is not None and str(p) != ""]
    for i, (opt_a, a) in enumerate(given):
        for opt_b, b in given[i + 1:]:
            if _relation(a, b) == "is":
                raise OutputError(f"{opt_a} {a} and {opt_b} {b}: are the same file; give "
                                  f"each output its own path")


def is_build_folder(folder: str | os.PathLike) -> bool:
    """True when ``folder`` holds the build.log a mapsection build writes."""
    log = Path(folder) / BUILD_LOG
    try:
        if log.is_symlink() or not log.is_file():
            return False
        with open(log, encoding="utf-8", errors="replace") as fh:
            return bool(_BUILD_LOG_FIRST.match(fh.readline()))
    except OSError:
        return False


def check_build_target(target: str | os.PathLike, inputs: Inputs, section: str) -> Path:
    """OutputError unless the build may write (and replace) the section folder ``target``."""
    target = Path(target)
    check_output(target, inputs, option=f"section {section}:")
    if not os.path.lexists(target):
        return target
    if target.is_symlink():
        raise OutputError(f"section {section}: {target} is a link, not a build folder; "
                          f"not replaced (move it away or choose another -o)")
    if not target.is_dir():
        raise OutputError(f"section {section}: {target} is a file, not a build folder; "
                          f"not replaced (move it away or choose another -o)")
    try:
        empty = not any(os.scandir(target))
    except OSError as exc:
        raise OutputError(f"section {section}: {target}: cannot read the folder "
                          f"({exc.strerror})") from None
    if not empty and not is_build_folder(target):
        raise OutputError(f"section {section}: {target} exists and is not a mapsection build "
                          f"(no {BUILD_LOG} written by a build); not replaced (move it away or "
                          f"choose another -o)")
    return target
