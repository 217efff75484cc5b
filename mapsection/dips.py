"""Bedding attitudes projected into the section plane, with their apparent dips.

Three projections carry a measurement from the map onto the section line:
perpendicular (nearest point), along strike, and down-plunge along a fold axis.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from ._messages import default_warn as _default_warn
from .angles import line_angle_between
from .attitudes import Attitudes
from .errors import ParameterError
from .foldaxis import FoldAxis
from .line import LinePosition, SectionLine
from .settings import check_choice, check_number


@dataclass(frozen=True, eq=False)
class ProjectedDips:
    """Attitudes within the corridor, in section coordinates (one array entry per attitude).

    ``apparent_dip`` is signed degrees: positive means the bed descends toward
    increasing distance along the line. Sorted by ``distance_m``.
    """

    id: np.ndarray  # str or int ids
    x: np.ndarray  # map position of the measurement
    y: np.ndarray
    distance_m: np.ndarray  # projected position along the line
    offset_m: np.ndarray  # signed offset of the measurement from the line (right positive)
    elevation_m: np.ndarray  # the measurement's elevation (attitudes.z), shifted for plunge
    strike: np.ndarray  # right-hand-rule strike, degrees
    dip: np.ndarray  # true dip, degrees
    apparent_dip: np.ndarray
    poorly_constrained: np.ndarray  # bool: strike within 15 degrees of the section azimuth
    overturned: np.ndarray  # bool: bedding overturned (younging reversed)

    def __len__(self) -> int:
        return len(self.distance_m)


# --- apparent dip ----------------------------------------------------------------------
def apparent_dip(strike, dip, azimuth):
    """Signed apparent dip (degrees) of beds in a vertical section of a given azimuth.

    tan(a) = tan(d)·sin(A − strike), with the strike by the right-hand rule and A the
    section (segment) azimuth: the classic apparent-dip relation (e.g. Ragan,
    Structural Geology: An Introduction to Geometrical Techniques). Its magnitude is
    tan(d)·|sin b|, b the angle between strike and section; the sign is positive
    where the bed descends toward increasing distance along the section.
    Written as atan2(sin d·sin b, cos d) so that vertical beds give ±90 without
    overflow (a vertical bed parallel to the section gives 0). Vectorised.
    """
    d = np.radians(np.asarray(dip, float))
    b = np.radians(np.asarray(azimuth, float) - np.asarray(strike, float))
    return np.degrees(np.arctan2(np.sin(d) * np.sin(b), np.cos(d)))


def exaggerated_dip(apparent, ve):
    """The dip drawn at vertical exaggeration ``ve``: atan(VE·tan a), degrees, signed."""
    ve_a = np.asarray(ve, float)
    if np.any(~np.isfinite(ve_a)) or np.any(ve_a <= 0):
        raise ParameterError(f"vertical exaggeration {ve!r} must be a number > 0")
    a = np.radians(np.asarray(apparent, float))
    return np.degrees(np.arctan2(ve_a * np.sin(a), np.cos(a)))


# --- projection ------------------------------------------------------------------------
STRIKE_SKIP_DEG = 10.0  # along-strike / down-plunge projection skipped at or below this angle
POORLY_CONSTRAINED_DEG = 15.0  # strike this close to the section azimuth: flagged


def in_corridor(x, y, line: SectionLine, corridor: float) -> tuple[np.ndarray, LinePosition]:
    """Mask of map points inside the corridor, and their perpendicular positions.

    The corridor is the flat-ended band ``|offset| <= corridor`` beside the line:
    points whose perpendicular foot falls beyond the first or last vertex are out.
    """
    check_number("corridor", corridor)
    x = np.atleast_1d(np.asarray(x, float))
    y = np.atleast_1d(np.asarray(y, float))
    pos = line.locate(x, y)
    v = line.vertices
    u0 = (v[1] - v[0]) / np.hypot(*(v[1] - v[0]))
    u1 = (v[-1] - v[-2]) / np.hypot(*(v[-1] - v[-2]))
    before = (pos.segment == 0) & ((x - v[0, 0]) * u0[0] + (y - v[0, 1]) * u0[1] < 0)
    last = len(v) - 2
    after = (pos.segment == last) & ((x - v[-1, 0]) * u1[0] + (y - v[-1, 1]) * u1[1] > 0)
    mask = (np.abs(pos.offset) <= corridor) & ~before & ~after
    return mask, pos


def carry_to_line(line: SectionLine, x, y, ux, uy, min_angle: float, direction_az):
    """Carry points along directions (ux, uy) to where they first meet the line.

    Every segment is tried at once; a segment counts where the crossing lies on it
    and the direction is more than ``min_angle`` from the segment's azimuth. The
    crossing nearest the point wins.

    Parameters
    ----------
    line
        The section line.
    x, y
        Map points (arrays).
    ux, uy
        Unit direction of travel of each point (east, north components).
    min_angle
        Degrees: a segment within this angle of the direction is not met.
    direction_az
        The directions as azimuths (degrees), to compare with the segments'.

    Returns
    -------
    tuple
        ``(ok, segment, distance, s)``: which points meet the line, the segment met,
        the distance along the line there, and ``s`` the signed distance travelled
        along (ux, uy) (NaN where not met).

    Examples
    --------
    >>> import numpy as np
    >>> line = SectionLine(np.array([[0.0, 0.0], [1000.0, 0.0]]))
    >>> ok, seg, d, s = carry_to_line(line, np.array([300.0]), np.array([50.0]),
    ...                               0.0, -1.0, 10.0, 180.0)
    >>> bool(ok[0]), float(d[0]), float(s[0])
    (True, 300.0, 50.0)
    """
    v0 = line.vertices[:-1]
    dv = np.diff(line.vertices, axis=0)
    seg_len = np.hypot(dv[:, 0], dv[:, 1])
    qx = v0[None, :, 0] - x[:, None]
    qy = v0[None, :, 1] - y[:, None]
    ux = np.broadcast_to(ux, x.shape)[:, None]
    uy = np.broadcast_to(uy, x.shape)[:, None]
    denom = ux * dv[None, :, 1] - uy * dv[None, :, 0]
    with np.errstate(divide="ignore", invalid="ignore"):
        t = (qx * dv[None, :, 1] - qy * dv[None, :, 0]) / denom
        w = (qx * uy - qy * ux) / denom
    steep = line_angle_between(np.broadcast_to(direction_az, x.shape)[:, None],
                          line.segment_azimuths[None, :]) > min_angle
    eps = 1e-9
    valid = steep & np.isfinite(t) & (w >= -eps) & (w <= 1 + eps)
    score = np.where(valid, np.abs(t), np.inf)
    seg = np.argmin(score, axis=1)
    rows = np.arange(len(x))
    ok = valid[rows, seg]
    ww = np.clip(np.where(ok, w[rows, seg], 0.0), 0.0, 1.0)
    distance = line.cumulative[seg] + ww * seg_len[seg]
    s = np.where(ok, t[rows, seg], np.nan)
    return ok, seg, distance, s


def project_attitudes(attitudes: Attitudes, line: SectionLine, corridor: float, *,
                      method: str = "perpendicular", axis: FoldAxis | None = None,
                      warn: Callable[[str], None] | None = None) -> ProjectedDips:
    """Project the attitudes within ``corridor`` metres of the line into the section.

    Only attitudes with ``|offset| <= corridor`` are used, the offset measured
    perpendicular to the line at the attitude (right of travel positive) for every
    method. Each attitude uses the azimuth of the segment it lands on for its
    apparent dip (:func:`apparent_dip`) and is flagged ``poorly_constrained`` where
    its strike is within 15 degrees of that azimuth (modulo 180). Vectorised.

    Parameters
    ----------
    attitudes, line, corridor
        The attitudes (in the line's CRS), the section line, the corridor's half-width (m).
    method, axis
        ``perpendicular``: to the nearest point of the line (``SectionLine.locate``);
        ``strike``: along the attitude's own strike line to where it meets the section,
        on a bent line the first segment hit nearest the attitude; ``plunge``:
        down-plunge along the fold ``axis`` (a :class:`FoldAxis`), in either direction
        along its trend, the elevation shifted z' = z − s·tan(plunge), s the signed
        horizontal distance travelled along the trend (positive toward the trend).
        Along strike or plunge an attitude is skipped where the direction is within 10
        degrees of the segment's azimuth or misses the line: one note, to ``warn``.

    Returns
    -------
    ProjectedDips
        Sorted by distance; the elevation is ``attitudes.z`` (NaN when unknown).

    Examples
    --------
    >>> p = project_attitudes(attitudes, line, 500.0, method="strike")  # doctest: +SKIP
    >>> p.distance_m, p.apparent_dip  # doctest: +SKIP
    """
    warn = warn or _default_warn
    check_choice("projection", method)
    if method == "plunge" and axis is None:
        raise ParameterError("plunge projection needs a fold axis (trend and plunge)")
    mask, pos = in_corridor(attitudes.x, attitudes.y, line, corridor)
    idx = np.flatnonzero(mask)
    z = attitudes.z[idx].astype(float)
    offset = pos.offset[idx]
    if method == "perpendicular":
        seg, distance = pos.segment[idx], pos.distance[idx]
        keep = np.ones(len(idx), bool)
    else:
        keep, seg, distance, z = _carried(attitudes, idx, z, line, method, axis, warn)
    sel = idx[keep]
    seg, distance, z, offset = seg[keep], distance[keep], z[keep], offset[keep]
    az = line.segment_azimuths[seg]
    strike = attitudes.strike[sel]
    dip = attitudes.dip[sel]
    app = apparent_dip(strike, dip, az)
    poor = line_angle_between(strike, az) <= POORLY_CONSTRAINED_DEG
    o = np.argsort(distance, kind="stable")
    return ProjectedDips(id=attitudes.id[sel][o], x=attitudes.x[sel][o], y=attitudes.y[sel][o],
                         distance_m=distance[o], offset_m=offset[o], elevation_m=z[o],
                         strike=strike[o], dip=dip[o], apparent_dip=app[o],
                         poorly_constrained=poor[o], overturned=attitudes.overturned[sel][o])


def _carried(attitudes: Attitudes, idx: np.ndarray, z: np.ndarray, line: SectionLine,
             method: str, axis: FoldAxis | None, warn: Callable[[str], None]):
    """The attitudes ``idx`` carried along strike or down plunge to the line: which
    arrive, their segments, distances and elevations (shifted down the plunge); one note
    names those that do not."""
    x, y = attitudes.x[idx], attitudes.y[idx]
    if method == "strike":
        direction = attitudes.strike[idx]
    else:
        direction = np.full(len(idx), float(axis.trend) % 360.0)
    r = np.radians(direction)
    keep, seg, distance, s = carry_to_line(line, x, y, np.sin(r), np.cos(r), STRIKE_SKIP_DEG,
                                           direction)
    if method == "plunge":
        z = z - s * np.tan(np.radians(float(axis.plunge)))
    n_skip = int((~keep).sum())
    if n_skip:
        what = "strike" if method == "strike" else f"fold-axis trend ({axis.trend:.1f})"
        shown = ", ".join(str(v) for v in attitudes.id[idx][~keep][:10])
        more = ", ..." if n_skip > 10 else ""
        warn(
            f"{n_skip} attitude(s) in the corridor not projected along {what}: within "
            f"{STRIKE_SKIP_DEG:g} degrees of the section line or not meeting it "
            f"(id {shown}{more})"
        )
    return keep, seg, distance, z
