"""The fold axis from bedding attitudes: the pi-axis of the orientation tensor.

The poles to bedding of a cylindrical fold lie on a great circle (a girdle); the
fold axis is the pole to that girdle. Following Woodcock (1977, "Specification of
fabric shapes using an eigenvalue method", Geol. Soc. Am. Bull. 88, 1231-1236), the
orientation tensor T = (1/n)·Σ p·pᵀ of the unit poles p has normalised eigenvalues
S1 >= S2 >= S3 (summing to 1); the eigenvector of the least eigenvalue S3 is the
pi-axis.

Cylindricity: for a perfect girdle S3 = 0, and S3 grows as the poles scatter off the
girdle. This module reports ``cylindricity = 1 − S3/S2`` (1 for a perfect girdle,
0 for a uniform scatter), plus Woodcock's strength C = ln(S1/S3) and shape
K = ln(S1/S2)/ln(S2/S3) (K < 1: girdle, K > 1: cluster).

"Cylindrical enough for down-plunge projection" (common practice, thresholds
chosen for this tool, not from Woodcock 1977): cylindricity >= 0.9 (S3 at most a
tenth of S2), the poles spread around the girdle (S2 >= 0.02, otherwise the
bedding is nearly planar and the axis direction within it is undetermined), and at
least 5 attitudes.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .errors import AttitudeError

MIN_CYLINDRICITY = 0.9  # common practice: S3 <= 0.1·S2
MIN_GIRDLE_S2 = 0.02  # common practice: poles spread enough to define the girdle
MIN_ATTITUDES = 5


@dataclass(frozen=True)
class FoldAxis:
    """A fold axis: lower-hemisphere trend and plunge (degrees) and its fabric.

    ``eigenvalues`` are the normalised eigenvalues (S1, S2, S3) of the pole
    orientation tensor; ``cylindricity`` is 1 − S3/S2; ``n`` attitudes were used.
    """

    trend: float
    plunge: float
    eigenvalues: tuple[float, float, float]
    cylindricity: float
    n: int

    @property
    def woodcock_c(self) -> float:
        """Woodcock's (1977) fabric strength C = ln(S1/S3)."""
        s1, _, s3 = self.eigenvalues
        return float(np.log(s1 / s3)) if s3 > 0 else float("inf")

    @property
    def woodcock_k(self) -> float:
        """Woodcock's (1977) shape K = ln(S1/S2)/ln(S2/S3): < 1 girdle, > 1 cluster."""
        s1, s2, s3 = self.eigenvalues
        if s3 <= 0 or s2 <= 0:
            return 0.0
        den = np.log(s2 / s3)
        return float(np.log(s1 / s2) / den) if den > 0 else float("inf")

    def cylindrical_problems(self) -> list[str]:
        """Why the data are not cylindrical enough for down-plunge projection (empty: fine)."""
        out = []
        _, s2, s3 = self.eigenvalues
        if self.n < MIN_ATTITUDES:
            out.append(f"only {self.n} attitudes (at least {MIN_ATTITUDES} wanted)")
        if s2 < MIN_GIRDLE_S2:
            out.append(
                f"the poles hardly spread around a girdle (S2 = {s2:.3f} < {MIN_GIRDLE_S2}): "
                "the bedding is nearly planar, so the axis direction within it is undetermined"
            )
        if self.cylindricity < MIN_CYLINDRICITY:
            out.append(
                f"cylindricity 1 - S3/S2 = {self.cylindricity:.2f} is below {MIN_CYLINDRICITY}"
                " (the poles scatter off a single great circle)"
            )
        return out

    @property
    def is_cylindrical(self) -> bool:
        return not self.cylindrical_problems()


def poles(strike, dip) -> np.ndarray:
    """Unit poles to bedding (east, north, down), lower hemisphere; shape (n, 3).

    With the right-hand rule the pole trends strike − 90 and plunges 90 − dip.
    """
    s = np.radians(np.asarray(strike, float).ravel())
    d = np.radians(np.asarray(dip, float).ravel())
    # Pole trend s - 90: (sin, cos) = (-cos s, sin s); horizontal part sin d, down cos d.
    return np.column_stack([-np.cos(s) * np.sin(d), np.sin(s) * np.sin(d), np.cos(d)])


def _trend_plunge(v: np.ndarray) -> tuple[float, float]:
    e, n, dn = (float(c) for c in v / np.linalg.norm(v))
    if dn < 0:
        e, n, dn = -e, -n, -dn
    plunge = float(np.degrees(np.arcsin(np.clip(dn, -1.0, 1.0))))
    trend = float(np.degrees(np.arctan2(e, n)) % 360.0)
    if plunge < 1e-9:
        trend %= 180.0  # a horizontal axis: either end, report the one in 0-180
    return trend, plunge


def fold_axis(strike, dip, *, source: str = "") -> FoldAxis:
    """The pi-axis (Woodcock 1977) of bedding attitudes given as RHR strike and dip.

    The eigenvector of the least eigenvalue of the orientation tensor of the poles,
    as a lower-hemisphere trend and plunge. Raises :class:`AttitudeError` with fewer
    than two attitudes, naming ``source`` (the file and rows read) when given.
    """
    p = poles(strike, dip)
    p = p[np.all(np.isfinite(p), axis=1)]
    if len(p) < 2:
        where = f"{source}: " if source else ""
        raise AttitudeError(f"{where}a fold axis needs at least 2 attitudes, got {len(p)}")
    t = p.T @ p / len(p)
    w, vec = np.linalg.eigh(t)  # ascending
    w = np.clip(w, 0.0, None)
    w = w / w.sum()
    trend, plunge = _trend_plunge(vec[:, 0])
    s1, s2, s3 = float(w[2]), float(w[1]), float(w[0])
    cyl = 1.0 - s3 / s2 if s2 > 0 else 0.0
    return FoldAxis(trend, plunge, (s1, s2, s3), float(cyl), int(len(p)))


def recommended_azimuth(axis: FoldAxis) -> float:
    """Section azimuth perpendicular to the axis trend (trend + 90; the reverse serves too)."""
    return float((axis.trend + 90.0) % 360.0)
