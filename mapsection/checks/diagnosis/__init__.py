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
The three kinds live in :mod:`~mapsection.checks.diagnosis.thicknesses`,
:mod:`~mapsection.checks.diagnosis.outliers` and :mod:`~mapsection.checks.diagnosis.sparse`;
their names are importable from here.
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass, field

import numpy as np

from ...draft import Draft
from ...errors import ParameterError
from .outliers import AttitudeOutlier, ContactOutlier, attitude_outliers, contact_outliers
from .sparse import SPACING_M, SparseStretch, sparse_stretches
from .thicknesses import THICKNESS_FRACTION, ThicknessFit, fit_thicknesses

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
    causes = _ranked(thick, att, con, sparse)
    measured = (any(t.status != "not_tested" for t in thick) or len(draft.dips.distance_m) > 0)
    status = "fail" if causes else ("pass" if measured else "not_tested")
    return Diagnosis(causes, thick, att, con, sparse, status,
                     _unmeasured(draft, thick, attitude_xy))


def _ranked(thick: list[ThicknessFit], att: list[AttitudeOutlier], con: list[ContactOutlier],
            sparse: list[SparseStretch]) -> list[Cause]:
    """Every cause found, strongest first."""
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
    return [Cause(i + 1, k, subj, float(st), text, fig)
            for i, (st, k, subj, text, fig) in enumerate(found)]


def _unmeasured(draft: Draft, thick: list[ThicknessFit], attitude_xy) -> list[str]:
    """What the diagnosis could not look at, and why."""
    reasons = []
    if all(t.status == "not_tested" for t in thick):
        reasons.append("thicknesses not fitted: " + thick[0].reasons[0] if thick else
                       "thicknesses not fitted: the column is empty")
    if not len(draft.dips.distance_m):
        reasons.append("no attitude in the corridor: outliers not sought")
    if attitude_xy is None:
        reasons.append("attitude positions outside the corridor not given: no corridor "
                       "suggested")
    return reasons


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
