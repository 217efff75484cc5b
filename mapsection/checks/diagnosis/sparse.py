"""Diagnosis (c): sparse stretches, runs of the line with too few readings.

Runs of the line where consecutive readings in the corridor lie more than 1000 m apart
(the tool's default) over at least 2000 m: the dip domains there rest on too few
readings. Given the positions of all attitudes, the narrowest corridor (in 100 m steps)
that would put a reading every 1000 m there is suggested.

Pure functions: numpy only, no drawing, no files.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ...draft import Draft
from ...errors import ParameterError
from .ranked import Ranked

__all__ = ["SPACING_M", "SparseStretch", "sparse_stretches"]

SPACING_M = 1000.0  # one reading per this much line at least (the tool's default)


@dataclass(frozen=True)
class SparseStretch(Ranked):
    """A run of the line with too few readings, and the corridor that would fill it;
    ranked by the readings it needs over those it has."""

    start_m: float
    end_m: float
    n_readings: int
    needed: int  # one reading every SPACING_M at least
    suggested_corridor_m: float | None  # half-width that would take in ``needed``
    readings_at_suggestion: int | None

    @property
    def strength(self) -> float:
        return self.needed / max(self.n_readings, 1)

    def text(self) -> str:
        km = (self.end_m - self.start_m) / 1000.0
        t = (f"{self.n_readings} reading{'s' if self.n_readings != 1 else ''} over {km:.1f} km "
             f"({self.start_m:.0f}-{self.end_m:.0f} m)")
        if self.suggested_corridor_m is not None:
            return (t + f"; widen the corridor to about {self.suggested_corridor_m:.0f} m to take "
                        f"in {self.readings_at_suggestion}")
        return t + "; the map has too few readings nearby to fill it"


def sparse_stretches(draft: Draft, *, attitude_xy=None, corridor_m: float | None = None,
                     spacing_m: float = SPACING_M,
                     max_corridor_m: float | None = None) -> list[SparseStretch]:
    """Stretches of the line where consecutive readings lie more than ``spacing_m`` apart
    over at least twice that length.

    Parameters
    ----------
    draft
        The draft (its projected dips are the readings in the corridor).
    attitude_xy
        Map positions (n, 2) of all the attitudes, inside the corridor or not: used to
        suggest a wider corridor. Without them no corridor is suggested.
    corridor_m
        The corridor's current half-width (metres); suggestions start above it.
    spacing_m
        The widest spacing of readings taken as enough (default 1000 m, the tool's
        default).
    max_corridor_m
        The widest corridor suggested (default: the larger of 3000 m and 4 times the
        current corridor).

    Returns
    -------
    list of SparseStretch
        Along the line, in order.
    """
    if not (math.isfinite(spacing_m) and spacing_m > 0):
        raise ParameterError(f"diagnosis spacing_m: must be a distance > 0, got {spacing_m!r}")
    d = np.sort(np.asarray(draft.dips.distance_m, float))
    d = d[np.isfinite(d)]
    pos = None
    if attitude_xy is not None:
        xy = np.asarray(attitude_xy, float).reshape(-1, 2)
        if len(xy):
            lp = draft.line.locate(xy[:, 0], xy[:, 1])
            pos = (np.asarray(lp.distance, float), np.abs(np.asarray(lp.offset, float)))
    cur = float(corridor_m) if corridor_m is not None else 0.0
    wmax = max_corridor_m if max_corridor_m is not None else max(3000.0, 4.0 * cur)
    out = []
    for a, b in _wide_runs(d, float(draft.line.length), spacing_m):
        n = int(np.count_nonzero((d >= a) & (d <= b)))
        need = int(math.ceil((b - a) / spacing_m)) + 1
        w_sug, n_sug = (None, None) if pos is None else _widen(pos, a, b, need, cur, wmax)
        out.append(SparseStretch(a, b, n, need, w_sug, n_sug))
    return out


def _wide_runs(d: np.ndarray, length: float, spacing_m: float) -> list[tuple[float, float]]:
    """(start, end) of each run of the line (0 to ``length``) where consecutive readings
    at sorted distances ``d`` lie more than ``spacing_m`` apart, over at least twice that."""
    marks = np.concatenate([[0.0], d, [length]])
    wide = np.diff(marks) > spacing_m
    runs, i = [], 0
    while i < len(wide):
        if not wide[i]:
            i += 1
            continue
        j = i
        while j + 1 < len(wide) and wide[j + 1]:
            j += 1
        a, b = float(marks[i]), float(marks[j + 1])
        if b - a >= 2.0 * spacing_m:
            runs.append((a, b))
        i = j + 1
    return runs


def _widen(pos: tuple[np.ndarray, np.ndarray], a: float, b: float, need: int, cur: float,
           wmax: float) -> tuple[float | None, int | None]:
    """The narrowest corridor half-width (100 m steps above ``cur``, at most ``wmax``) that
    takes in ``need`` of the attitudes at (distance, |offset|) ``pos`` between ``a`` and
    ``b``, and how many it takes in; (None, None) when none does."""
    inside = (pos[0] >= a) & (pos[0] <= b)
    w = math.floor(cur / 100.0) * 100.0 + 100.0
    while w <= wmax:
        k = int(np.count_nonzero(inside & (pos[1] <= w)))
        if k >= need:
            return float(w), k
        w += 100.0
    return None, None
