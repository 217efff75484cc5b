"""Writing a line the page drew into the project file, keeping the file's comments and layout.

:func:`save_line` is the only code of the page that writes an input file: it
edits the one ``line`` value with tomlkit, keeps the previous file as
``<file>.bak``, and moves the new file into place only after it loads as a
project.
"""

from __future__ import annotations

import os
import shutil
import tempfile
from pathlib import Path

import numpy as np
import tomlkit

from ..errors import ProjectFileError
from .payload import RequestError

__all__ = ["save_line"]

# What a new section takes from the section it is based on.
INHERITED = ("corridor", "method", "projection", "ve")


def save_line(project_path: Path, name: str, vertices: np.ndarray, base: str | None = None
              ) -> Path:
    """Write ``vertices`` as the line of section ``name`` in the project file.

    The file is edited with tomlkit, so its comments, order and layout stay as
    they were; only the ``line`` value of that ``[[section]]`` changes. A new
    section (``base`` given) is appended as a new ``[[section]]`` with the
    corridor, method and projection of section ``base``. The previous file is
    kept as ``<file>.bak``; the new one is written to a temporary file, checked
    by loading it as a project, and only then moved into place.

    Parameters
    ----------
    project_path : the project file.
    name : the section's name.
    vertices : (n, 2) vertices in the project CRS.
    base : for a new section, the existing section whose settings it takes.

    Returns
    -------
    The path of the backup.

    Examples
    --------
    >>> # save_line(Path("project.toml"), "A", np.array([[0.0, 0.0], [500.0, 0.0]]))
    >>> # -> Path("project.toml.bak"); section A's line is now [[0.0, 0.0], [500.0, 0.0]]
    """
    doc = tomlkit.parse(project_path.read_text(encoding="utf-8"))
    _put_line(doc, name, _toml_line(vertices), base)
    return _replace_checked(project_path, tomlkit.dumps(doc))


def _toml_line(vertices: np.ndarray):
    """The vertices as a TOML array of [x, y] pairs, to the centimetre."""
    line = tomlkit.array()
    for x, y in np.asarray(vertices, float).tolist():
        pair = tomlkit.array()
        pair.extend([round(x, 2), round(y, 2)])
        line.append(pair)
    return line


def _put_line(doc, name: str, line, base: str | None) -> None:
    """Set the line of ``[[section]]`` ``name`` in ``doc``, appending the section if new."""
    sections = doc.get("section")
    target = None
    if sections is not None:
        for table in sections:
            if table.get("name") == name:
                target = table
                break
    if target is not None:
        target["line"] = line
        return
    src = None
    for table in sections or []:
        if table.get("name") == base:
            src = table
    new = tomlkit.table()
    new["name"] = name
    new["line"] = line
    for key in INHERITED:
        if src is not None and key in src:
            new[key] = src[key]
    if sections is None:
        aot = tomlkit.aot()
        aot.append(new)
        doc["section"] = aot
    else:
        sections.append(new)


def _replace_checked(project_path: Path, new_text: str) -> Path:
    """Put ``new_text`` in place of the project file once it loads as a project; the backup."""
    from ..project import load_project

    fd, tmp_name = tempfile.mkstemp(prefix=f".{project_path.name}.", suffix=".tmp",
                                    dir=project_path.parent)
    tmp = Path(tmp_name)
    try:
        with os.fdopen(fd, "w", encoding="utf-8") as f:
            f.write(new_text)
        try:
            load_project(tmp)  # the new file must still be a valid project
        except ProjectFileError as exc:
            raise RequestError(f"not saved: {str(exc).replace(tmp.name, project_path.name)}",
                               422) from None
        shutil.copymode(project_path, tmp)
        backup = project_path.with_name(project_path.name + ".bak")
        shutil.copy2(project_path, backup)
        os.replace(tmp, project_path)
    finally:
        if tmp.exists():
            tmp.unlink()
    return backup
