"""Bedding attitudes: the value object, the conventions, and converting strike/dip
measurements (the file reader is :mod:`mapsection.readers.attitudes`).

Three conventions of the trade are read:

* ``rhr`` — right-hand-rule strike and dip (the dip direction is strike + 90),
* ``dip-direction`` — dip direction (azimuth of the dip) and dip,
* ``quadrant`` — quadrant notation such as ``N30E 45SE`` (strike bearing from N or S
  toward E or W, then the dip and the quadrant it dips toward).

Inside mapsection every attitude is held as a right-hand-rule strike (0-360) and a
dip (0-90) in degrees from grid north of the working CRS.
"""

from __future__ import annotations

import dataclasses
import re
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pyproj

from ._messages import Warn
from ._messages import default_warn as _default_warn
from .angles import angle_between
from .crs import same_crs, transformer
from .errors import AttitudeError
from .settings import CONVENTIONS  # noqa: F401  (the conventions, re-exported here)


@dataclass(frozen=True, eq=False)
class Attitudes:
    """Bedding attitudes in one CRS (one array entry per measurement).

    ``strike`` is the right-hand-rule strike (0-360), ``dip`` 0-90, ``z`` the
    elevation of the measurement (NaN when unknown), ``overturned`` True where the
    bed is overturned (its younging is reversed).
    """

    id: np.ndarray
    x: np.ndarray
    y: np.ndarray
    z: np.ndarray
    strike: np.ndarray
    dip: np.ndarray
    overturned: np.ndarray
    crs: pyproj.CRS | None = None
    source: str = ""  # where they were read, for messages: "attitudes.csv (99 rows read)"

    def __len__(self) -> int:
        return len(self.x)

    def subset(self, mask: np.ndarray) -> Attitudes:
        """The attitudes selected by a boolean mask or an index array."""
        m = np.asarray(mask)
        return Attitudes(
            self.id[m], self.x[m], self.y[m], self.z[m], self.strike[m], self.dip[m],
            self.overturned[m], self.crs, self.source,
        )

    @property
    def dip_direction(self) -> np.ndarray:
        return strike_to_dip_direction(self.strike)

    @classmethod
    def from_arrays(cls, x, y, strike, dip, *, z=None, id=None, overturned=None,
                    crs=None) -> Attitudes:
        """Build from plain arrays (strike RHR); missing z is NaN, ids default to 1..n."""
        x = np.asarray(x, float).ravel()
        n = len(x)
        return cls(
            id=np.arange(1, n + 1) if id is None else np.asarray(id).ravel(),
            x=x,
            y=np.asarray(y, float).ravel(),
            z=np.full(n, np.nan) if z is None else np.asarray(z, float).ravel(),
            strike=np.asarray(strike, float).ravel() % 360.0,
            dip=np.asarray(dip, float).ravel(),
            overturned=(np.zeros(n, bool) if overturned is None
                        else np.asarray(overturned, bool).ravel()),
            crs=pyproj.CRS(crs) if crs is not None else None,
        )


# --- conventions -----------------------------------------------------------------------
def strike_to_dip_direction(strike):
    """Dip direction of a right-hand-rule strike: strike + 90 (vectorised)."""
    return (np.asarray(strike, float) + 90.0) % 360.0


def dip_direction_to_strike(dip_direction):
    """Right-hand-rule strike of a dip direction: dip direction − 90 (vectorised)."""
    return (np.asarray(dip_direction, float) - 90.0) % 360.0


_NUM = r"(\d+(?:\.\d*)?|\.\d+)"
_QUADRANT = re.compile(
    rf"^\s*([NS])\s*{_NUM}\s*°?\s*([EW])\s*(?:[/,;]\s*|\s+){_NUM}\s*°?\s*(NE|NW|SE|SW|N|S|E|W)\s*$",
    re.IGNORECASE,
)
_EPS = 1e-9  # degrees: a dip direction this close to N, E, S or W is that direction
_CARDINAL = {"N": 0.0, "E": 90.0, "S": 180.0, "W": 270.0}
_QUADRANT_RANGE = {
    "NE": (0.0, 90.0), "SE": (90.0, 180.0), "SW": (180.0, 270.0), "NW": (270.0, 360.0),
}


def parse_one_quadrant(text: str) -> tuple[float, float]:
    """Parse one quadrant attitude; ValueError with the reason when it is not valid."""
    m = _QUADRANT.match(str(text))
    if not m:
        raise ValueError(f"attitude {text!r} is not quadrant notation such as 'N30E 45SE'")
    ns, sa, ew, da, dq = m.groups()
    ns, ew, dq = ns.upper(), ew.upper(), dq.upper()
    a, dip = float(sa), float(da)
    if a > 90.0:
        raise ValueError(f"attitude {text!r}: strike angle {a:g} is more than 90 degrees from {ns}")
    if dip > 90.0:
        raise ValueError(f"attitude {text!r}: dip {dip:g} is outside 0-90")
    bearing = {("N", "E"): a, ("N", "W"): 360.0 - a, ("S", "E"): 180.0 - a, ("S", "W"): 180.0 + a}[
        (ns, ew)
    ] % 360.0
    candidates = ((bearing + 90.0) % 360.0, (bearing + 270.0) % 360.0)
    if len(dq) == 1:
        # One letter: the dip direction must lie within 90 degrees of it (and only one can).
        ok = [c for c in candidates if angle_between(c, _CARDINAL[dq]) < 90.0 - _EPS]
    else:
        # Two letters: strictly inside that quadrant (a dip due E is written E, not NE/SE).
        centre = (sum(_QUADRANT_RANGE[dq]) / 2.0)
        ok = [c for c in candidates if angle_between(c, centre) < 45.0 - _EPS]
    if len(ok) != 1:
        raise ValueError(
            f"attitude {text!r}: a bed striking {ns}{a:g}{ew} dips toward "
            f"{_dir_letters(candidates[0])} or {_dir_letters(candidates[1])}, not {dq}"
        )
    return float((ok[0] - 90.0) % 360.0), dip


def parse_quadrant(text: str | Sequence[str]):
    """Quadrant notation -> (right-hand-rule strike, dip) in degrees.

    Accepts ``"N30E 45SE"``, ``"N30E/45SE"``, ``"S45W 30NW"``, ``"N90E 20S"`` (case and
    a degree sign are ignored). The dip quadrant must agree with the strike: a bed
    striking N30E dips toward SE or NW, so ``"N30E 45NE"`` is an error. A sequence of
    texts gives two arrays. Raises :class:`AttitudeError` naming the text at fault.
    """
    if isinstance(text, str):
        try:
            return parse_one_quadrant(text)
        except ValueError as exc:
            raise AttitudeError(str(exc)) from None
    out = np.empty((len(text), 2))
    for i, t in enumerate(text):  # text parsing is per item by nature
        try:
            out[i] = parse_one_quadrant(t)
        except ValueError as exc:
            raise AttitudeError(f"item {i + 1}: {exc}") from None
    return out[:, 0], out[:, 1]


def _fmt(v: float) -> str:
    return np.format_float_positional(round(float(v), 6), precision=6, trim="-")


def _dir_letters(dd: float) -> str:
    for name, az in _CARDINAL.items():
        if angle_between(dd, az) < _EPS:
            return name
    dd = dd % 360.0
    return "NE" if dd < 90 else "SE" if dd < 180 else "SW" if dd < 270 else "NW"


def _format_one(strike: float, dip: float) -> str:
    s = float(strike) % 360.0
    # The strike line as a bearing in the northern half: N q E or N q W.
    b = s % 180.0  # 0..180 (east half) -> the northern end is b if b <= 90 else b + 180
    if b <= 90.0:
        q, ew = round(b, 6), "E"
        line = q
    else:
        q, ew = round(180.0 - b, 6), "W"
        line = 360.0 - q
    # Dip direction from the rounded strike line, on the side nearest the true one.
    cands = ((line + 90.0) % 360.0, (line + 270.0) % 360.0)
    dd_true = (s + 90.0) % 360.0
    dd = min(cands, key=lambda c: angle_between(c, dd_true))
    return f"N{_fmt(q)}{ew} {_fmt(dip)}{_dir_letters(dd)}"


def format_quadrant(strike, dip):
    """Right-hand-rule strike and dip -> quadrant notation (``"N30E 45SE"``).

    A scalar pair gives a string, arrays give an array of strings. The strike is
    written from north (``N..E`` or ``N..W``); a dip direction exactly on a cardinal
    direction is written with one letter (``"N90E 20S"``).
    """
    if np.ndim(strike) == 0 and np.ndim(dip) == 0:
        return _format_one(strike, dip)
    s, d = np.broadcast_arrays(np.asarray(strike, float), np.asarray(dip, float))
    return np.array([_format_one(a, b) for a, b in zip(s.ravel(), d.ravel(), strict=True)]).reshape(
        s.shape
    )


def _rotate_azimuths(tr: pyproj.Transformer, src: pyproj.CRS, x, y, az) -> np.ndarray:
    """Azimuths measured from north in ``src`` re-expressed from grid north of the target.

    A short step along each azimuth is transformed and its bearing re-measured, so
    the grid convergence between the two CRSs is applied point by point.
    """
    if src.is_geographic:
        # True azimuths: step 10 m along the geodesic (pyproj.Geod, built once).
        geod = src.get_geod() or pyproj.Geod(ellps="WGS84")
        x1, y1, _ = geod.fwd(x, y, az, np.full(np.shape(x), 10.0))
        dx, dy = np.asarray(x1) - x, np.asarray(y1) - y
    else:
        r = np.radians(az)
        dx, dy = np.sin(r), np.cos(r)
    x0, y0 = tr.transform(x, y)
    x1, y1 = tr.transform(x + dx, y + dy)
    return np.degrees(np.arctan2(x1 - x0, y1 - y0)) % 360.0


def reproject_attitudes(att: Attitudes, crs: str | pyproj.CRS, *, warn: Warn | None = None,
                        source: str = "attitudes") -> Attitudes:
    """Attitudes in another CRS: points transformed, strikes rotated to the new grid north.

    Says so once through ``warn``. Attitudes without a CRS are taken to be in ``crs``.
    """
    target = pyproj.CRS(crs)
    if same_crs(att.crs, target):
        return dataclasses.replace(att, crs=target)
    tr = transformer(att.crs, target)
    new_strike = _rotate_azimuths(tr, att.crs, att.x, att.y, att.strike)
    xt, yt = tr.transform(att.x, att.y)
    xt, yt = np.asarray(xt, float), np.asarray(yt, float)
    if not np.all(np.isfinite(xt) & np.isfinite(yt)):
        raise AttitudeError(f"{source}: coordinates cannot be transformed to {target.name}")
    turn = angle_between(new_strike, att.strike)
    (warn or _default_warn)(
        f"{source}: attitudes are in {att.crs.name}; reprojected to {target.name}"
        f" (strikes rotated to its grid north by up to {float(turn.max(initial=0)):.2f} degrees)"
    )
    return Attitudes(att.id, xt, yt, att.z, new_strike, att.dip, att.overturned, target,
                     att.source)


def check_attitudes_on_dem(att: Attitudes, dem) -> None:
    """Refuse attitudes that all lie outside the DEM (``dem``: an open Dem).

    Raises :class:`AttitudeError` naming the file and the DEM's extent, and asking
    whether x and y are swapped when the swapped points would mostly fall on it.
    """
    if not len(att):
        return
    x, y = np.asarray(att.x, float), np.asarray(att.y, float)
    if dem.inside(x, y, crs=att.crs).any():
        return
    swapped = dem.inside(y, x, crs=att.crs)
    hint = ("are x and y swapped?" if swapped.mean() > 0.5
            else "check their coordinates and the project's crs")
    b = dem.bounds
    raise AttitudeError(
        f"{att.source or 'attitudes'}: all {len(att)} attitudes lie outside the DEM "
        f"{Path(dem.path).name} (x {b.left:.1f} to {b.right:.1f}, y {b.bottom:.1f} to "
        f"{b.top:.1f}): {hint}"
    )


def with_ground_elevations(att: Attitudes, dem, crs=None,
                           where: np.ndarray | None = None) -> tuple[Attitudes, int]:
    """Attitudes with z from the DEM where they carry none (sampled once, vectorised), and
    how many are still without one (off the DEM or on nodata).

    ``dem``: anything with ``sample(x, y, crs=...)`` (an open
    :class:`mapsection.readers.dem.Dem`); ``crs``: the CRS of the attitudes' x, y
    (default: their own); ``where``: a boolean mask of the attitudes to sample (default:
    all). Attitudes outside ``where`` keep their z (NaN when they had none) and are not
    counted.
    """
    n = len(att)
    z = np.asarray(att.z, float) if att.z is not None else None
    if z is None or len(z) != n:
        z = np.full(n, np.nan)
    want = np.ones(n, bool) if where is None else np.asarray(where, bool)
    todo = want & ~np.isfinite(z)
    if not todo.any():
        return att, 0
    # Only the attitudes asked for are sampled: the DEM blocks under the others are not read.
    idx = np.flatnonzero(todo)
    x, y = np.asarray(att.x, float), np.asarray(att.y, float)
    ground = np.asarray(dem.sample(x[idx], y[idx],
                                   crs=crs if crs is not None else att.crs), float)
    z = z.copy()
    z[idx] = ground
    return dataclasses.replace(att, z=z), int(np.count_nonzero(~np.isfinite(z[want])))


def within_corridors(att: Attitudes, lines: Sequence, corridors: Sequence[float]) -> np.ndarray:
    """Boolean mask of the attitudes within ``corridor`` metres of any of the ``lines``.

    ``lines``: :class:`mapsection.line.SectionLine` objects in the attitudes' CRS;
    ``corridors``: the half-width of each. A point is kept when its distance to the
    line is at most the corridor (shapely's ``dwithin`` through an STRtree of the
    points, no per-point Python): a superset of the flat-ended corridor of
    :func:`mapsection.dips.in_corridor`, whose offset is the distance to the nearest
    segment.
    """
    import shapely

    n = len(att)
    mask = np.zeros(n, bool)
    if not n or not len(lines):
        return mask
    points = shapely.points(np.asarray(att.x, float), np.asarray(att.y, float))
    tree = shapely.STRtree(points)
    geoms = [shapely.linestrings(np.asarray(ln.vertices, float)) for ln in lines]
    # A hair wider than the corridor, so that rounding never drops a point on its edge.
    reach = [float(c) * (1 + 1e-9) + 1e-6 for c in corridors]
    for geom, d in zip(geoms, reach, strict=True):
        mask[tree.query(geom, predicate="dwithin", distance=d)] = True
    return mask
