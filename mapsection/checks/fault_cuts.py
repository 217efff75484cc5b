"""Where each horizon meets a fault, and the frame of a check judged fault by fault.

Shared by the cutoff-mismatch test (:mod:`mapsection.checks.cutoffs`) and the
separation-consistency test (:mod:`mapsection.checks.separations`): for each horizon
cut by a fault on both walls, the hanging-wall and footwall cutoffs, the separation
along the fault (+ hanging wall up), the cutoff angle, whether the cutoff lies above
the ground (on the fault projected upward, in the eroded part of the section) and the
straight stretch of the fault that holds it (a new stretch starts where the trace
bends; Suppe 1983, Geometry and kinematics of fault-bend folding, Am. J. Sci. 283).

Pure functions over a :class:`~mapsection.draft.Draft`: numpy and shapely only,
no drawing, no files.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import ClassVar

import numpy as np
from shapely.geometry import LineString, Point

from ..draft import Draft, FaultTrace
from ..errors import ParameterError
from .geometry import joined_horizons, line_xy, snap_tolerance

__all__ = ["BEND_DEG", "Cut", "PerFaultCheck", "check_setting", "fault_cuts", "threshold",
           "worst_status"]

BEND_DEG = 5.0  # fault segments within this angle of each other are one straight stretch


def worst_status(statuses: list[str]) -> str:
    """"fail" if any failed, else "pass" if any passed, else "not_tested"."""
    if "fail" in statuses:
        return "fail"
    if "pass" in statuses:
        return "pass"
    return "not_tested"


def check_setting(name: str, value: float, lo: float, hi: float) -> float:
    """A threshold setting checked against its range.

    Parameters
    ----------
    name
        The setting's name, for the error.
    value
        The value given.
    lo, hi
        The range, ends included.

    Returns
    -------
    float
        ``value`` as a float; :class:`~mapsection.errors.ParameterError` naming ``name``
        where it is not a finite number from ``lo`` to ``hi``.

    Examples
    --------
    >>> check_setting("cutoff mismatch pixels", 2, 0.0, 100.0)
    2.0
    """
    v = float(value)
    if not (math.isfinite(v) and lo <= v <= hi):
        raise ParameterError(f"{name}: must be a number from {lo:g} to {hi:g}, got {value!r}")
    return v


def threshold(fraction: float, pixels: float, mean_sep: float, pixel_size: float) -> float:
    """A fault's threshold: a share of its mean separation or DEM pixels, the larger.

    Parameters
    ----------
    fraction, mean_sep
        The share, and the fault's mean separation (m; its sign does not count).
    pixels, pixel_size
        The number of pixels and the DEM's pixel size (m; NaN: no pixel term).

    Returns
    -------
    float
        The threshold in metres.

    Examples
    --------
    >>> threshold(0.10, 2.0, -800.0, 30.0)
    80.0
    """
    px = pixels * pixel_size if math.isfinite(pixel_size) else 0.0
    return float(max(fraction * abs(mean_sep), px))


# --- where each horizon meets the fault ------------------------------------------


@dataclass(frozen=True)
class Cut:
    """One horizon cut by a fault on both walls."""

    top_of: str
    hw: tuple[float, float]
    fw: tuple[float, float]
    u_hw: float  # position along the extended fault
    u_fw: float
    projected: bool
    separation_m: float  # along the fault, + hanging wall up
    cutoff_angle_deg: float  # between the footwall bed and the fault at the footwall cutoff
    segment: int  # straight stretch of the fault holding the footwall cutoff


def _extended(fault: FaultTrace, reach: float) -> tuple[LineString, float, np.ndarray]:
    """The fault trace ordered from its upper end down, prolonged upward by ``reach``
    along its top segment (where eroded horizons are cut); also the top end's position
    along it and the trace's coordinates (top first)."""
    c = line_xy(fault.geometry)
    if c[0, 1] < c[-1, 1]:
        c = c[::-1]
    d = c[0] - c[1]
    n = float(np.hypot(*d))
    if n <= 0:
        return LineString(c), 0.0, c
    up = c[0] + d / n * reach
    return LineString(np.vstack([up, c])), float(reach), c


def _segments(c: np.ndarray) -> list[int]:
    """Straight-stretch number of each segment of a fault (top first): a new stretch
    starts where the trace bends by more than BEND_DEG."""
    d = np.diff(c, axis=0)
    ang = np.degrees(np.arctan2(d[:, 1], d[:, 0]))
    out, k = [0], 0
    for i in range(1, len(ang)):
        turn = abs((ang[i] - ang[i - 1] + 180.0) % 360.0 - 180.0)
        if turn > BEND_DEG:
            k += 1
        out.append(k)
    return out


def _bed_angle(line: LineString, end: np.ndarray, fault_dir: np.ndarray) -> float:
    c = line_xy(line)
    at_start = np.hypot(*(c[0] - end)) <= np.hypot(*(c[-1] - end))
    seg = c[1] - c[0] if at_start else c[-1] - c[-2]
    n = float(np.hypot(*seg))
    if n <= 0:
        return float("nan")
    cosv = abs(float(seg @ fault_dir) / n)
    return float(np.degrees(np.arccos(min(cosv, 1.0))))


def fault_cuts(draft: Draft, fault: FaultTrace, hw_block: int, fw_block: int) -> list[Cut]:
    """Where each horizon cut on both walls meets a fault.

    Parameters
    ----------
    draft
        The draft section.
    fault
        One of its faults; prolonged upward along its top segment so that horizons
        cut above the ground (in the eroded part) count too.
    hw_block, fw_block
        The fault's hanging-wall and footwall blocks
        (:func:`mapsection.checks.geometry.fault_blocks`).

    Returns
    -------
    list of Cut
        In column order (youngest first, base horizons last): the cutoffs nearest the
        fault's upper end, the separation along the fault, the cutoff angle and the
        straight stretch of the fault holding the footwall cutoff.

    Examples
    --------
    >>> fb = fault_blocks(draft)["F1"]  # doctest: +SKIP
    >>> [c.separation_m for c in fault_cuts(draft, fault, fb.hanging_wall, fb.footwall)]
    ... # doctest: +SKIP
    """
    joined = joined_horizons(draft)
    tol = snap_tolerance(draft)
    y_all = np.concatenate([line_xy(g)[:, 1] for g in joined.values()]) if joined else np.zeros(1)
    reach = 4.0 * max(float(np.ptp(y_all)), float(draft.line.length), 1.0)
    ext, top_u, trace = _extended(fault, reach)
    seg_of = _segments(trace)
    seg_start = np.concatenate([[0.0], np.cumsum(np.hypot(*np.diff(trace, axis=0).T))]) + top_u
    ends = _ends_at(joined, ext, tol, (hw_block, fw_block))
    p0 = trace[0]

    def nearest(pts: list[np.ndarray]) -> np.ndarray:
        return min(pts, key=lambda p: float(np.hypot(*(p - p0))))

    names = list(draft.column.names)

    def order(t: str) -> tuple[int, str]:  # column order, youngest first; base horizons last
        return (names.index(t) if t in names else len(names), t)

    out = []
    for top_of in sorted({t for t, _ in ends}, key=order):
        if (top_of, hw_block) not in ends or (top_of, fw_block) not in ends:
            continue
        hw = nearest(ends[(top_of, hw_block)])
        fw = nearest(ends[(top_of, fw_block)])
        u_hw, u_fw = float(ext.project(Point(hw))), float(ext.project(Point(fw)))
        sep = abs(u_hw - u_fw)
        sep = sep if hw[1] >= fw[1] else -sep
        angle = _bed_angle(joined[(top_of, fw_block)], fw, _direction_at(ext, u_fw))
        i = int(np.searchsorted(seg_start, u_fw, side="right")) - 1
        segment = seg_of[min(max(i, 0), len(seg_of) - 1)]
        projected = bool(min(hw[1], fw[1]) > float(trace[0, 1]) + tol)
        out.append(Cut(top_of, (float(hw[0]), float(hw[1])), (float(fw[0]), float(fw[1])),
                        u_hw, u_fw, projected, float(sep), angle, int(segment)))
    return out


def _ends_at(joined: dict, ext: LineString, tol: float, blocks: tuple[int, int]
             ) -> dict[tuple[str, int], list[np.ndarray]]:
    """The ends of the horizons of ``blocks`` that lie on the (prolonged) fault."""
    ends: dict[tuple[str, int], list[np.ndarray]] = {}
    for (top_of, block), line in joined.items():
        if block not in blocks:
            continue
        c = line_xy(line)
        for end in (c[0], c[-1]):
            if ext.distance(Point(end)) <= tol:
                ends.setdefault((top_of, block), []).append(end)
    return ends


def _direction_at(ext: LineString, u: float) -> np.ndarray:
    """The fault's unit direction at ``u`` metres along it, for the cutoff angle."""
    a = ext.interpolate(max(u - 5.0, 0.0))
    b = ext.interpolate(min(u + 5.0, ext.length))
    fdir = np.array([b.x - a.x, b.y - a.y])
    return fdir / max(float(np.hypot(*fdir)), 1e-12)


# --- a check judged fault by fault ---------------------------------------------


@dataclass
class PerFaultCheck:
    """A check judged fault by fault, with its threshold (a share of the fault's mean
    separation, or DEM pixels, the larger). Each fault's result has ``fault``,
    ``status`` and ``reasons``; subclasses say how a tested fault reads (``_line``)
    and what an untested one was not (``_untested``)."""

    faults: list
    fraction: float
    pixels: float
    status: str
    reasons: list[str] = field(default_factory=list)
    _untested: ClassVar[str] = "not tested"

    @classmethod
    def judged(cls, faults: list, fraction: float, pixels: float):
        """The check over its faults' results: the worst status, and the reasons of every
        fault that did not pass."""
        reasons = [f"fault {r.fault}: {x}" for r in faults for x in r.reasons
                   if r.status != "pass"]
        return cls(faults, fraction, pixels, worst_status([r.status for r in faults]), reasons)

    @property
    def passed(self) -> bool | None:
        return None if self.status == "not_tested" else self.status == "pass"

    def to_dict(self) -> dict:
        return {"status": self.status, "passed": self.passed, "reasons": list(self.reasons),
                "threshold_fraction_of_mean_separation": self.fraction,
                "threshold_pixels": self.pixels,
                "faults": [f.to_dict() for f in self.faults]}

    def _line(self, f) -> str:
        raise NotImplementedError

    def lines(self) -> list[str]:
        """One line per fault."""
        return [f"fault {f.fault}: {self._untested} ({'; '.join(f.reasons)})"
                if f.status == "not_tested" else self._line(f) for f in self.faults]
