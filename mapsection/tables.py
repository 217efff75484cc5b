"""CSV tables written by the single-purpose commands: a topographic profile and projected
dips. Each file is written whole or not at all."""

from __future__ import annotations

import csv
import os
from pathlib import Path

import numpy as np

from ._atomic import atomic_file
from .dips import ProjectedDips

PROFILE_COLUMNS = ["distance_m", "x", "y", "elevation_m"]
DIPS_COLUMNS = ("id", "distance_m", "offset_m", "elevation_m", "strike", "dip", "apparent_dip",
                "x", "y", "poorly_constrained", "overturned")
_DIPS_FORMAT = {"distance_m": "{:.3f}", "offset_m": "{:.3f}", "elevation_m": "{:.3f}",
                "strike": "{:.4f}", "dip": "{:.4f}", "apparent_dip": "{:.4f}",
                "x": "{:.3f}", "y": "{:.3f}"}


def _cell(name: str, value) -> str:
    if name in ("poorly_constrained", "overturned"):
        return "true" if bool(value) else "false"
    if name in _DIPS_FORMAT:
        return "" if not np.isfinite(value) else _DIPS_FORMAT[name].format(float(value))
    return str(value)


def write_dips_csv(dips: ProjectedDips, path: str | os.PathLike) -> Path:
    """Write projected dips as CSV (columns :data:`DIPS_COLUMNS`), all-or-nothing."""
    with atomic_file(path) as tmp, open(tmp, "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(DIPS_COLUMNS)
        cols = [getattr(dips, c) for c in DIPS_COLUMNS]
        for i in range(len(dips)):
            w.writerow([_cell(c, col[i]) for c, col in zip(DIPS_COLUMNS, cols, strict=True)])
    return Path(path)


def write_profile_csv(path: str | os.PathLike, distance, x, y, z, digits: int) -> Path:
    """Write a profile as CSV (columns :data:`PROFILE_COLUMNS`; positions rounded to
    ``digits``, distances and elevations to the millimetre), all-or-nothing."""
    import pandas as pd

    frame = pd.DataFrame(
        {
            "distance_m": np.round(distance, 3),
            "x": np.round(x, digits),
            "y": np.round(y, digits),
            "elevation_m": np.round(z, 3),
        },
        columns=PROFILE_COLUMNS,
    )
    with atomic_file(path) as tmp:
        frame.to_csv(tmp, index=False, na_rep="", lineterminator="\n")
    return Path(path)


__all__ = ["DIPS_COLUMNS", "PROFILE_COLUMNS", "write_dips_csv", "write_profile_csv"]
