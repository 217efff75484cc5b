"""A diagnosis that names the fix: likely causes of a failed topography test, ranked.

Three kinds of cause, each with the figure behind it:

* **Unit thickness.** Between two neighbouring map contacts on the ground (same
  fault block, no fault between them) the beds' stratigraphic separation is the
  distance between the two points measured perpendicular to the bedding, whose
  apparent dip there is that of the dip domain (or, without domains, of the
  nearest readings). That separation is the sum of the thicknesses of the units
  between the two contacts' horizons. Every pair gives one linear equation; the
  thicknesses that best fit all of them are found by least squares, with their
  standard errors from the residuals (ordinary least squares, e.g. Ragan,
  Structural Geology: an introduction to geometrical techniques, for the
  thickness of a unit from outcrop width and dip). A unit whose fitted thickness
  differs from the column's by more than twice its standard error and by more
  than 10 % of the column's figure (the tool's default) is a cause. Thicknesses
  are measured in the section plane, as the construction lays them.
* **Outliers.** An attitude whose apparent dip departs from the median of its
  neighbours (readings of the same fault block within 1000 m along the line, the
  tool's default) by a modified z-score above 3.5 (Iglewicz & Hoaglin 1993, How
  to detect and handle outliers: M = 0.6745 (x - median) / MAD) and by at least
  10 degrees, and that no neighbour within 5 degrees corroborates (two agreeing
  readings make a narrow dip domain, not a stray reading; the tool's defaults); a
  map contact that the best-fit thicknesses and
  the dips cannot place (the residuals of the pairs on either side of it, judged
  the same way against all contacts), by at least 2 DEM pixels or 50 m along the
  line (the tool's default).
* **Sparse stretches.** Runs of the line where consecutive readings in the
  corridor lie more than 1000 m apart (the tool's default) over at least 2000 m:
  the dip domains there rest on too few readings. Given the positions of all
  attitudes, the narrowest corridor (in 100 m steps) that would put a reading
  every 1000 m there is suggested.

Causes are ranked by a dimensionless strength: the thickness difference over its
standard error, the modified z-score of an outlier, and for a sparse stretch the
readings it needs over those it has. Pure functions: numpy only, no drawing, no
files.
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass, field

import numpy as np

from ..draft import Draft
from ..errors import ParameterError

__all__ = [
    "ThicknessFit",
    "AttitudeOutlier",
    "ContactOutlier",
    "SparseStretch",
    "Cause",
    "Diagnosis",
    "fit_thicknesses",
    "attitude_outliers",
    "contact_outliers",
    "sparse_stretches",
    "diagnose",
    "nearby_attitudes",
]

THICKNESS_FRACTION = 0.10  # a thickness cause differs from the column by more (the tool's default)
MODIFIED_Z = 3.5  # Iglewicz & Hoaglin (1993)
MIN_DIP_OUTLIER_DEG = 10.0  # the tool's default
DIP_MAD_FLOOR_DEG = 1.0  # readings are taken to whole degrees (the tool's default)
DIP_WINDOW_M = 1000.0  # the tool's default
CORROBORATE_DEG = 5.0  # a neighbour this close to a reading corroborates it (the tool's default)
MIN_CONTACT_OUTLIER_M = 50.0  # or 2 DEM pixels, whichever is larger (the tool's default)
SPACING_M = 1000.0  # one reading per this much line at least (the tool's default)
PAIR_DIP_TOLERANCE_DEG = 10.0  # two contacts in domains differing more are not paired
FAULT_GAP_M = 25.0  # contacts this close to a fault are fault contacts (as the topography test)


def _mod_z(r: float, mad: float, floor: float) -> float:
    return 0.6745 * abs(r) / max(mad, floor)


# --- (a) unit thickness ------------------------------------------------------------


@dataclass(frozen=True)
class ThicknessFit:
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

    def to_dict(self) -> dict:
        return {**asdict(self), "strength": self.strength}


def _blocks(draft: Draft) -> np.ndarray:
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
    return _fit(draft, fraction)[0]


def _fit(draft: Draft, fraction: float):
    """The least-squares fit; also each pair equation's contacts, gradient and residual."""
    names = list(draft.column.names)
    col = np.asarray(draft.column.thicknesses, float)
    cuts = _blocks(draft)
    rows = _contact_rows(draft, cuts)
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
        row = np.zeros(len(names))
        lo, hi = sorted((k0, k1))
        row[lo:hi] = 1.0 if k1 > k0 else -1.0
        eq.append(row)
        rhs.append(h)
        pairs.append((n_, n_ + 1, dip))
    out: list[ThicknessFit] = []
    if not eq:
        return [ThicknessFit(n, float("nan"), float("nan"), float(col[i]), float("nan"), 0,
                             "not_tested", ["no pair of neighbouring contacts with a dip"])
                for i, n in enumerate(names)], rows, [], np.empty(0)
    a, y = np.asarray(eq), np.asarray(rhs)
    used = np.any(a != 0, axis=0)
    au = a[:, used]
    sol, *_ = np.linalg.lstsq(au, y, rcond=None)
    pinv = np.linalg.pinv(au)
    ident = np.abs(np.diag(pinv @ au) - 1.0) < 1e-6  # thickness determined on its own
    rank = int(np.linalg.matrix_rank(au))
    dof = len(y) - rank
    resid = y - au @ sol
    s2 = float(resid @ resid / dof) if dof > 0 else float("nan")
    cov = s2 * (pinv @ pinv.T) if dof > 0 else None
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
            j += 1
            continue
        fit = float(sol[j])
        se = float(math.sqrt(max(cov[j, j], 0.0))) if cov is not None else float("nan")
        diff = fit - float(col[i])
        big = abs(diff) > fraction * col[i] and (not math.isfinite(se) or abs(diff) > 2.0 * se)
        reasons = []
        if big:
            reasons.append(f"the column looks too {'thick' if diff < 0 else 'thin'} by about "
                           f"{abs(diff):.0f} m")
        if not math.isfinite(se):
            reasons.append("no uncertainty: as many equations as unknowns")
        out.append(ThicknessFit(n, fit, se, float(col[i]), float(diff), npairs,
                                "fail" if big else "pass", reasons))
        j += 1
    return out, rows, pairs, resid


# --- (b) outliers ----------------------------------------------------------------------


@dataclass(frozen=True)
class AttitudeOutlier:
    id: str
    distance_m: float
    apparent_dip_deg: float
    neighbours_deg: float  # median apparent dip of its neighbours
    misfit_deg: float  # reading minus the neighbours' median
    modified_z: float
    n_neighbours: int

    @property
    def strength(self) -> float:
        return self.modified_z

    def text(self) -> str:
        return (f"attitude {self.id} at {self.distance_m:.0f} m: apparent dip "
                f"{self.apparent_dip_deg:.1f} deg against {self.neighbours_deg:.1f} deg around "
                f"it (misfit {self.misfit_deg:+.1f} deg)")

    def to_dict(self) -> dict:
        return {**asdict(self), "strength": self.strength}


def attitude_outliers(draft: Draft, *, window_m: float = DIP_WINDOW_M,
                      min_misfit_deg: float = MIN_DIP_OUTLIER_DEG) -> list[AttitudeOutlier]:
    """Attitudes that depart from their neighbours (modified z-score > 3.5, Iglewicz &
    Hoaglin 1993) by at least ``min_misfit_deg`` and that no neighbour corroborates,
    worst first. Neighbours: readings of the same fault block within ``window_m`` along
    the line (at least 3). Readings whose strike is within 15 degrees of the line
    (poorly constrained apparent dips) are left out."""
    dips = draft.dips
    dist = np.asarray(dips.distance_m, float)
    if not len(dist):
        return []
    app = np.asarray(dips.apparent_dip, float)
    ok = np.isfinite(app) & np.isfinite(dist) & ~np.asarray(dips.poorly_constrained, bool)
    block = np.searchsorted(_blocks(draft), dist)
    out = []
    for i in np.nonzero(ok)[0]:
        nb = ok & (block == block[i]) & (np.abs(dist - dist[i]) <= window_m)
        nb[i] = False
        if nb.sum() < 3:
            continue
        v = app[nb]
        med = float(np.median(v))
        mad = float(np.median(np.abs(v - med)))
        r = float(app[i] - med)
        z = _mod_z(r, mad, DIP_MAD_FLOOR_DEG)
        # A neighbour agreeing with it makes a (narrow) dip domain, not a stray reading.
        corroborated = bool(np.any(np.abs(v - app[i]) <= CORROBORATE_DEG))
        if z > MODIFIED_Z and abs(r) >= min_misfit_deg and not corroborated:
            out.append(AttitudeOutlier(str(dips.id[i]), float(dist[i]), float(app[i]), med, r,
                                       float(z), int(nb.sum())))
    out.sort(key=lambda o: -o.modified_z)
    return out


@dataclass(frozen=True)
class ContactOutlier:
    id: str  # "top of <unit> at <distance> m"
    top_of: str
    map_distance_m: float
    elevation_m: float
    misfit_m: float  # how far along the line the best-fit thicknesses would put it
    stratigraphic_misfit_m: float  # the same across the bedding
    modified_z: float

    @property
    def strength(self) -> float:
        return self.modified_z

    def text(self) -> str:
        return (f"contact {self.id}: the fitted thicknesses and the dips place it about "
                f"{abs(self.misfit_m):.0f} m "
                f"{'further along' if self.misfit_m > 0 else 'back along'} the line "
                f"({abs(self.stratigraphic_misfit_m):.0f} m across the bedding)")

    def to_dict(self) -> dict:
        return {**asdict(self), "strength": self.strength}


def _ground_slope(draft: Draft, x: float) -> float:
    d = np.asarray(draft.profile.distance, float)
    z = np.asarray(draft.profile.z, float)
    ok = np.isfinite(z)
    if ok.sum() < 2:
        return 0.0
    a, b = np.interp([x - 25.0, x + 25.0], d[ok], z[ok])
    return float((b - a) / 50.0)


def contact_outliers(draft: Draft, *, fraction: float = THICKNESS_FRACTION) \
        -> list[ContactOutlier]:
    """Map contacts the best-fit thicknesses and the dips cannot place, worst first.

    A contact wrongly placed by ``e`` across the bedding leaves residuals ``-e`` and
    ``+e`` in the equations of the pairs before and after it: ``e`` is estimated as half
    their difference, turned into a distance along the ground with the local dip and
    ground slope, and judged by its modified z-score against all contacts (Iglewicz &
    Hoaglin 1993) and by at least the larger of 50 m and 2 DEM pixels along the line.
    """
    names = list(draft.column.names)
    _, rows, pairs, resid = _fit(draft, fraction)
    if len(pairs) < 4:
        return []
    before = {p[1]: (r, p[2]) for p, r in zip(pairs, resid, strict=True)}
    after = {p[0]: (r, p[2]) for p, r in zip(pairs, resid, strict=True)}
    idx = [i for i in before if i in after]
    if len(idx) < 4:
        return []
    e = np.array([0.5 * (after[i][0] - before[i][0]) for i in idx])
    med = float(np.median(e))
    mad = float(np.median(np.abs(e - med)))
    pixel = float(getattr(draft.profile, "pixel_size", float("nan")))
    floor = max(MIN_CONTACT_OUTLIER_M, 2.0 * pixel if math.isfinite(pixel) else 0.0)
    out = []
    for k, i in enumerate(idx):
        x, y, col, _ = rows[i]
        dip = 0.5 * (after[i][1] + before[i][1])
        # how the height across the bedding changes along the ground here
        g = math.sin(dip) + math.cos(dip) * _ground_slope(draft, x)
        g = math.copysign(max(abs(g), 0.05), g)
        r = float(e[k] - med)
        along = -r / g  # the contact sits r too high: it belongs where h is r lower
        z = _mod_z(r, mad, 1.0)
        if z > MODIFIED_Z and abs(along) >= floor:
            out.append(ContactOutlier(f"top of {names[col]} at {x:.0f} m", names[col], x, y,
                                      float(along), r, float(z)))
    out.sort(key=lambda o: -o.modified_z)
    return out


# --- (c) sparse stretches -------------------------------------------------------------


@dataclass(frozen=True)
class SparseStretch:
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

    def to_dict(self) -> dict:
        return {**asdict(self), "strength": self.strength}


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
    length = float(draft.line.length)
    d = np.sort(np.asarray(draft.dips.distance_m, float))
    d = d[np.isfinite(d)]
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
    pos = None
    if attitude_xy is not None:
        xy = np.asarray(attitude_xy, float).reshape(-1, 2)
        if len(xy):
            lp = draft.line.locate(xy[:, 0], xy[:, 1])
            pos = (np.asarray(lp.distance, float), np.abs(np.asarray(lp.offset, float)))
    cur = float(corridor_m) if corridor_m is not None else 0.0
    wmax = max_corridor_m if max_corridor_m is not None else max(3000.0, 4.0 * cur)
    out = []
    for a, b in runs:
        n = int(np.count_nonzero((d >= a) & (d <= b)))
        need = int(math.ceil((b - a) / spacing_m)) + 1
        w_sug, n_sug = None, None
        if pos is not None:
            inside = (pos[0] >= a) & (pos[0] <= b)
            w = math.floor(cur / 100.0) * 100.0 + 100.0
            while w <= wmax:
                k = int(np.count_nonzero(inside & (pos[1] <= w)))
                if k >= need:
                    w_sug, n_sug = float(w), k
                    break
                w += 100.0
        out.append(SparseStretch(a, b, n, need, w_sug, n_sug))
    return out


# --- the diagnosis ---------------------------------------------------------------------


@dataclass(frozen=True)
class Cause:
    rank: int
    kind: str  # "thickness", "attitude_outlier", "contact_outlier", "sparse_readings"
    subject: str  # the unit, attitude id, contact id or stretch
    strength: float
    text: str
    figures: dict

    def to_dict(self) -> dict:
        return asdict(self)


@dataclass
class Diagnosis:
    """Likely causes of a failed topography test, strongest first.

    ``status``: "fail" when causes were found, "pass" when the measurements ran and
    found none, "not_tested" when there was nothing to measure (see ``reasons``).
    """

    causes: list[Cause]
    thicknesses: list[ThicknessFit]
    attitude_outliers: list[AttitudeOutlier]
    contact_outliers: list[ContactOutlier]
    sparse_stretches: list[SparseStretch]
    status: str
    reasons: list[str] = field(default_factory=list)

    def to_dict(self) -> dict:
        """JSON for ``topography.diagnosis`` in checks.json."""
        return {"status": self.status, "reasons": list(self.reasons),
                "causes": [c.to_dict() for c in self.causes],
                "thicknesses": [t.to_dict() for t in self.thicknesses],
                "attitude_outliers": [o.to_dict() for o in self.attitude_outliers],
                "contact_outliers": [o.to_dict() for o in self.contact_outliers],
                "sparse_stretches": [s.to_dict() for s in self.sparse_stretches]}

    def lines(self) -> list[str]:
        """One line per cause, strongest first (for the CLI, build.log and the report)."""
        if not self.causes:
            return [f"no likely cause found ({'; '.join(self.reasons) or 'all measured'})"]
        return [f"{c.rank}. {c.text}" for c in self.causes]


def diagnose(draft: Draft, *, attitude_xy=None,
             corridor_m: float | None = None,
             thickness_fraction: float = THICKNESS_FRACTION,
             spacing_m: float = SPACING_M) -> Diagnosis:
    """Rank the likely causes of a failed topography test.

    Parameters
    ----------
    draft
        The draft section.
    attitude_xy
        Map positions (n, 2) of all the attitudes (inside and outside the corridor),
        for the corridor suggestion of sparse stretches.
    corridor_m
        The section's corridor half-width (metres).
    thickness_fraction
        Relative difference from the column below which a thickness is no cause
        (default 0.10, the tool's default).
    spacing_m
        Reading spacing taken as enough (default 1000 m, the tool's default).

    Returns
    -------
    Diagnosis
        ``causes`` ranked, the measurements behind them, ``to_dict()`` and ``lines()``.

    Examples
    --------
    >>> print("\\n".join(diagnose(draft).lines()))  # doctest: +SKIP
    1. Talvo Limestone: the contacts fit 183 +/- 12 m; the column says 252 m
    """
    if not (math.isfinite(thickness_fraction) and 0.0 < thickness_fraction < 1.0):
        raise ParameterError("diagnosis thickness_fraction: must lie between 0 and 1, got "
                             f"{thickness_fraction!r}")
    thick = fit_thicknesses(draft, fraction=thickness_fraction)
    att = attitude_outliers(draft)
    con = contact_outliers(draft, fraction=thickness_fraction)
    sparse = sparse_stretches(draft, attitude_xy=attitude_xy, corridor_m=corridor_m,
                              spacing_m=spacing_m)
    found: list[tuple[float, str, str, str, dict]] = []
    for t in thick:
        if t.status == "fail":
            found.append((t.strength, "thickness", t.unit, t.text(), t.to_dict()))
    for o in att:
        found.append((o.strength, "attitude_outlier", o.id, o.text(), o.to_dict()))
    for o in con:
        found.append((o.strength, "contact_outlier", o.id, o.text(), o.to_dict()))
    for s in sparse:
        found.append((s.strength, "sparse_readings", f"{s.start_m:.0f}-{s.end_m:.0f} m",
                      s.text(), s.to_dict()))
    found.sort(key=lambda f: -f[0])
    causes = [Cause(i + 1, k, subj, float(st), text, fig)
              for i, (st, k, subj, text, fig) in enumerate(found)]
    reasons = []
    if all(t.status == "not_tested" for t in thick):
        reasons.append("thicknesses not fitted: " + thick[0].reasons[0] if thick else
                       "thicknesses not fitted: the column is empty")
    if not len(draft.dips.distance_m):
        reasons.append("no attitude in the corridor: outliers not sought")
    if attitude_xy is None:
        reasons.append("attitude positions outside the corridor not given: no corridor "
                       "suggested")
    measured = (any(t.status != "not_tested" for t in thick) or len(draft.dips.distance_m) > 0)
    status = "fail" if causes else ("pass" if measured else "not_tested")
    return Diagnosis(causes, thick, att, con, sparse, status, reasons)


def nearby_attitudes(attitudes, line, corridor_m: float) -> np.ndarray:
    """Map positions (n, 2) of the attitudes within a generous reach of a section line: the
    box around the line widened by the larger of 3000 m and 4 corridors (as far as
    :func:`sparse_stretches` suggests widening the corridor).

    ``attitudes``: anything with ``x`` and ``y`` arrays in the line's CRS (the project's
    :class:`mapsection.attitudes.Attitudes`); ``line``: a
    :class:`mapsection.line.SectionLine`.
    """
    xy = np.column_stack([np.asarray(attitudes.x, float), np.asarray(attitudes.y, float)])
    v = np.asarray(line.vertices, float)
    reach = max(3000.0, 4.0 * float(corridor_m))
    lo, hi = v.min(axis=0) - reach, v.max(axis=0) + reach
    return xy[np.all((xy >= lo) & (xy <= hi), axis=1)]
