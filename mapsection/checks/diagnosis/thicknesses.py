"""Diagnosis (a): the unit thicknesses that best fit the map contacts and the dips.

Between two neighbouring map contacts on the ground (same fault block, no fault
between them) the beds' stratigraphic separation is the distance between the two
points measured perpendicular to the bedding, whose apparent dip there is that of
the dip domain (or, without domains, of the nearest readings). That separation is the
sum of the thicknesses of the units between the two contacts' horizons. Every pair
gives one linear equation; the thicknesses that best fit all of them are found by
least squares, with their standard errors from the residuals (ordinary least squares,
e.g. Ragan, Structural Geology: an introduction to geometrical techniques, for the
thickness of a unit from outcrop width and dip). A unit whose fitted thickness differs
from the column's by more than twice its standard error and by more than 10 % of the
column's figure (the tool's default) is a cause. Thicknesses are measured in the
section plane, as the construction lays them. The residuals of the fit also place
the contact outliers (:mod:`mapsection.checks.diagnosis.outliers`).

Pure functions: numpy only, no drawing, no files.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ...draft import Draft
from .ranked import Ranked

__all__ = ["THICKNESS_FRACTION", "ThicknessFit", "Fit", "fit_thicknesses", "ground_faults",
           "least_squares_fit"]

THICKNESS_FRACTION = 0.10  # a thickness cause differs from the column by more (the tool's default)
PAIR_DIP_TOLERANCE_DEG = 10.0  # two contacts in domains differing more are not paired
FAULT_GAP_M = 25.0  # contacts this close to a fault are fault contacts (as the topography test)


@dataclass(frozen=True)
class ThicknessFit(Ranked):
    """The thickness of one unit that best fits the map contacts and the dips."""

    unit: str
    fitted_m: float
    standard_error_m: float  # NaN when there are no more equations than unknowns
    column_m: float
    difference_m: float  # fitted - column
    n_pairs: int  # contact pairs that span the unit
    status: str  # "pass" (agrees), "fail" (a cause) or "not_tested"
    reasons: list[str] = field(default_factory=list)

    @property
    def strength(self) -> float:
        se = self.standard_error_m
        floor = 0.02 * self.column_m  # keeps a perfect fit from ranking infinitely
        return abs(self.difference_m) / max(se if math.isfinite(se) else floor, floor, 1e-9)

    def text(self) -> str:
        se = (f" +/- {self.standard_error_m:.0f}" if math.isfinite(self.standard_error_m)
              else "")
        return (f"{self.unit}: the contacts fit {self.fitted_m:.0f}{se} m; the column says "
                f"{self.column_m:.0f} m")


def ground_faults(draft: Draft) -> np.ndarray:
    """Distances where faults meet the ground, sorted (block i lies between cut i-1 and i)."""
    xs = [f.distance_m for f in draft.geology.faults if math.isfinite(f.distance_m)]
    return np.sort(np.asarray(xs, float))


def _dip_at(draft: Draft, x: float, block: int, cuts: np.ndarray) -> float:
    """Apparent dip (degrees, + descending toward increasing distance) at a distance: the
    dip domain holding it (the nearer domain between two), else the median of the three
    nearest readings of the same block; NaN when there is neither."""
    doms = [d for d in draft.domains if int(np.searchsorted(cuts, 0.5 * (d.start_m + d.end_m)))
            == block] or [d for d in draft.domains if d.block == block]
    if doms:
        gap = [max(d.start_m - x, x - d.end_m, 0.0) for d in doms]
        return float(doms[int(np.argmin(gap))].dip)
    dist = np.asarray(draft.dips.distance_m, float)
    if not len(dist):
        return float("nan")
    same = np.searchsorted(cuts, dist) == block
    app = np.asarray(draft.dips.apparent_dip, float)
    ok = same & np.isfinite(app) & ~np.asarray(draft.dips.poorly_constrained, bool)
    if not ok.any():
        return float("nan")
    idx = np.nonzero(ok)[0]
    near = idx[np.argsort(np.abs(dist[idx] - x))[:3]]
    return float(np.median(app[near]))


def _contact_rows(draft: Draft, cuts: np.ndarray) -> list[tuple[float, float, int, int]]:
    """(distance, elevation, column index of the horizon, block) of each stratigraphic
    contact: the top of the older of its two units."""
    names = list(draft.column.names)
    rows = []
    for c in draft.geology.contacts:
        a, b = c.unit_before, c.unit_after
        if a not in names or b not in names or a == b:
            continue
        if len(cuts) and np.min(np.abs(cuts - c.distance_m)) <= FAULT_GAP_M:
            continue
        if not (math.isfinite(c.distance_m) and math.isfinite(c.elevation_m)):
            continue
        rows.append((float(c.distance_m), float(c.elevation_m),
                     max(names.index(a), names.index(b)), int(np.searchsorted(cuts, c.distance_m))))
    rows.sort()
    return rows


def fit_thicknesses(draft: Draft, *, fraction: float = THICKNESS_FRACTION) -> list[ThicknessFit]:
    """Per unit, the thickness that best fits the map contacts and the dips (least squares).

    Parameters
    ----------
    draft
        The draft: its surface geology (contacts on the ground, their elevations),
        dip domains or projected dips, and stratigraphic column.
    fraction
        A unit is a cause when its fit differs from the column by more than this
        fraction of the column's thickness and twice its standard error.

    Returns
    -------
    list of ThicknessFit
        One per unit of the column, in column order (``not_tested`` where no pair of
        contacts isolates it).

    Examples
    --------
    >>> [f.text() for f in fit_thicknesses(draft) if f.status == "fail"]  # doctest: +SKIP
    """
    return least_squares_fit(draft, fraction).units

@dataclass(frozen=True)
class Fit:
    """The least-squares fit: one :class:`ThicknessFit` per unit; the contacts
    ``(distance, elevation, column index of the horizon, block)`` along the line; each
    pair equation's two contact indices and mean dip (radians); its residual (m)."""

    units: list[ThicknessFit]
    rows: list[tuple[float, float, int, int]]
    pairs: list[tuple[int, int, float]]
    residuals: np.ndarray


def _pair_equations(draft: Draft, rows: list, cuts: np.ndarray, n_units: int):
    """One equation per pair of neighbouring contacts of one block with a dip: the sum of
    the thicknesses between their horizons equals their separation across the bedding."""
    eq, rhs, pairs = [], [], []
    for n_, ((x0, y0, k0, b0), (x1, y1, k1, b1)) in enumerate(zip(rows[:-1], rows[1:],
                                                                   strict=True)):
        if b0 != b1 or k0 == k1:
            continue
        d0, d1 = _dip_at(draft, x0, b0, cuts), _dip_at(draft, x1, b1, cuts)
        if not (math.isfinite(d0) and math.isfinite(d1)) or abs(d0 - d1) > PAIR_DIP_TOLERANCE_DEG:
            continue
        dip = math.radians(0.5 * (d0 + d1))
        # height across the bedding: n = (sin dip, cos dip) points up-section
        h = math.sin(dip) * (x0 - x1) + math.cos(dip) * (y0 - y1)  # h0 - h1 = D1 - D0
        row = np.zeros(n_units)
        lo, hi = sorted((k0, k1))
        row[lo:hi] = 1.0 if k1 > k0 else -1.0
        eq.append(row)
        rhs.append(h)
        pairs.append((n_, n_ + 1, dip))
    return eq, rhs, pairs


def _unit_fit(name: str, column_m: float, fit: float, se: float, npairs: int,
              fraction: float) -> ThicknessFit:
    """A unit whose fit the contacts determine on their own, judged against the column."""
    diff = fit - column_m
    big = abs(diff) > fraction * column_m and (not math.isfinite(se) or abs(diff) > 2.0 * se)
    reasons = []
    if big:
        reasons.append(f"the column looks too {'thick' if diff < 0 else 'thin'} by about "
                       f"{abs(diff):.0f} m")
    if not math.isfinite(se):
        reasons.append("no uncertainty: as many equations as unknowns")
    return ThicknessFit(name, fit, se, column_m, float(diff), npairs,
                        "fail" if big else "pass", reasons)


def least_squares_fit(draft: Draft, fraction: float = THICKNESS_FRACTION) -> Fit:
    """The least-squares fit of the unit thicknesses (see :func:`fit_thicknesses`); also
    each pair equation's contacts, dip and residual, which place the contact outliers."""
    names = list(draft.column.names)
    col = np.asarray(draft.column.thicknesses, float)
    cuts = ground_faults(draft)
    rows = _contact_rows(draft, cuts)
    eq, rhs, pairs = _pair_equations(draft, rows, cuts, len(names))
    if not eq:
        return Fit([ThicknessFit(n, float("nan"), float("nan"), float(col[i]), float("nan"), 0,
                                 "not_tested", ["no pair of neighbouring contacts with a dip"])
                    for i, n in enumerate(names)], rows, [], np.empty(0))
    a, y = np.asarray(eq), np.asarray(rhs)
    used = np.any(a != 0, axis=0)
    au = a[:, used]
    sol, *_ = np.linalg.lstsq(au, y, rcond=None)
    pinv = np.linalg.pinv(au)
    ident = np.abs(np.diag(pinv @ au) - 1.0) < 1e-6  # thickness determined on its own
    dof = len(y) - int(np.linalg.matrix_rank(au))
    resid = y - au @ sol
    s2 = float(resid @ resid / dof) if dof > 0 else float("nan")
    cov = s2 * (pinv @ pinv.T) if dof > 0 else None
    out: list[ThicknessFit] = []
    j = 0
    for i, n in enumerate(names):
        npairs = int(np.count_nonzero(a[:, i]))
        if not used[i]:
            out.append(ThicknessFit(n, float("nan"), float("nan"), float(col[i]), float("nan"),
                                    0, "not_tested", ["no pair of contacts spans the unit"]))
            continue
        if not ident[j]:
            out.append(ThicknessFit(n, float("nan"), float("nan"), float(col[i]), float("nan"),
                                    npairs, "not_tested",
                                    ["the contacts give it only together with its neighbours"]))
        else:
            se = float(math.sqrt(max(cov[j, j], 0.0))) if cov is not None else float("nan")
            out.append(_unit_fit(n, float(col[i]), float(sol[j]), se, npairs, fraction))
        j += 1
    return Fit(out, rows, pairs, resid)
