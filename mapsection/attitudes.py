"""Bedding attitudes: reading, validating and converting strike/dip measurements.

Three conventions of the trade are read:

* ``rhr`` — right-hand-rule strike and dip (the dip direction is strike + 90),
* ``dip-direction`` — dip direction (azimuth of the dip) and dip,
* ``quadrant`` — quadrant notation such as ``N30E 45SE`` (strike bearing from N or S
  toward E or W, then the dip and the quadrant it dips toward).

Inside mapsection every attitude is held as a right-hand-rule strike (0-360) and a
dip (0-90) in degrees from grid north of the working CRS.
"""

from __future__ import annotations

import csv
import dataclasses
import os
import re
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pyproj

from ._messages import Warn, human
from ._messages import default_warn as _default_warn
from .errors import AttitudeError
from .settings import CONVENTIONS

CSV_SUFFIXES = (".csv", ".txt", ".tsv")
LOGICAL_FIELDS = ("x", "y", "z", "strike", "dip", "dip_direction", "id", "overturned", "attitude")

_TRUE = {"true", "t", "yes", "y", "1"}
_FALSE = {"false", "f", "no", "n", "0", ""}


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


def _angle_between(a: float, b: float) -> float:
    """Smallest angle between two azimuths, 0-180."""
    return abs((a - b + 180.0) % 360.0 - 180.0)


def _parse_quadrant_one(text: str) -> tuple[float, float]:
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
        ok = [c for c in candidates if _angle_between(c, _CARDINAL[dq]) < 90.0 - _EPS]
    else:
        # Two letters: strictly inside that quadrant (a dip due E is written E, not NE/SE).
        centre = (sum(_QUADRANT_RANGE[dq]) / 2.0)
        ok = [c for c in candidates if _angle_between(c, centre) < 45.0 - _EPS]
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
            return _parse_quadrant_one(text)
        except ValueError as exc:
            raise AttitudeError(str(exc)) from None
    out = np.empty((len(text), 2))
    for i, t in enumerate(text):  # text parsing is per item by nature
        try:
            out[i] = _parse_quadrant_one(t)
        except ValueError as exc:
            raise AttitudeError(f"item {i + 1}: {exc}") from None
    return out[:, 0], out[:, 1]


def _fmt(v: float) -> str:
    return np.format_float_positional(round(float(v), 6), precision=6, trim="-")


def _dir_letters(dd: float) -> str:
    for name, az in _CARDINAL.items():
        if _angle_between(dd, az) < _EPS:
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
    dd = min(cands, key=lambda c: _angle_between(c, dd_true))
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


# --- reading ---------------------------------------------------------------------------


@dataclass
class _Table:
    """Raw attribute table: text columns plus the row label of each record."""

    columns: dict[str, list]  # original column name -> values
    rows: list[str]  # "line 7" or "feature 3"
    x: np.ndarray | None = None  # from geometry (vector files)
    y: np.ndarray | None = None
    z: np.ndarray | None = None
    crs: pyproj.CRS | None = None
    repeated: dict[str, list[int]] = dataclasses.field(default_factory=dict)
    # lower-case column name -> its column numbers (from 1), for names given more than once


def _read_csv(path: Path) -> _Table:
    try:
        with open(path, newline="", encoding="utf-8-sig") as fh:
            sample = fh.read(4096)
            fh.seek(0)
            try:
                dialect = csv.Sniffer().sniff(sample.splitlines()[0] if sample else "", ",;\t")
            except csv.Error:
                dialect = csv.excel
            reader = csv.reader(fh, dialect)
            header = next(reader, None)
            if header is None:
                raise AttitudeError(f"{path}: empty file (expected a header row)")
            names = [h.strip() for h in header]
            k = len(names)
            records: list[list[str]] = []
            lines: list[int] = []
            for rec in reader:
                if not "".join(rec).strip():
                    continue  # blank line
                lines.append(reader.line_num)
                records.append(rec if len(rec) == k else (rec + [""] * k)[:k])
            columns = list(zip(*records, strict=True)) if records else [()] * k
            cols = {n: [v.strip() for v in c] for n, c in zip(names, columns, strict=True)}
            rows = [f"line {n}" for n in lines]
            where: dict[str, list[int]] = {}
            for j, name in enumerate(names):
                where.setdefault(name.lower(), []).append(j + 1)
            repeated = {k: v for k, v in where.items() if len(v) > 1}
    except UnicodeDecodeError:
        raise AttitudeError(f"{path}: not a text CSV file (not UTF-8)") from None
    except OSError as exc:
        raise AttitudeError(f"{path}: cannot be read ({exc.strerror})") from None
    return _Table(cols, rows, repeated=repeated)


def _read_vector(path: Path, layer: str | None) -> _Table:
    import pyogrio
    import shapely

    from ._messages import first_line

    try:
        layers = [str(r[0]) for r in pyogrio.list_layers(path)]
    except Exception as exc:
        raise AttitudeError(
            f"{path}: not a CSV or a readable vector file ({first_line(exc)})"
        ) from None
    if layer is not None and layer not in layers:
        raise AttitudeError(f"{path}: no layer {layer!r} (layers: {', '.join(layers)})")
    if layer is None and len(layers) > 1:
        raise AttitudeError(f"{path}: holds several layers; name one (layers: {', '.join(layers)})")
    try:
        df = pyogrio.read_dataframe(path, layer=layer)
    except Exception as exc:
        raise AttitudeError(f"{path}: cannot be read ({first_line(exc)})") from None
    geom = np.asarray(df.geometry.values, dtype=object) if "geometry" in df else None
    if geom is None:
        raise AttitudeError(f"{path}: has no point geometry")
    types = shapely.get_type_id(geom)
    # Single-part MultiPoints are accepted as points.
    multi = types == 4
    if multi.any():
        one = shapely.get_num_geometries(geom) == 1
        geom = np.where(multi & one, shapely.get_geometry(geom, 0), geom)
        types = shapely.get_type_id(geom)
    bad = (types != 0) & (types != -1)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise AttitudeError(
            f"{path}: feature {i + 1} is a {geom[i].geom_type}; attitudes must be points"
        )
    ok = types == 0
    x = np.full(len(geom), np.nan)
    y = np.full(len(geom), np.nan)
    z = np.full(len(geom), np.nan)
    if ok.any():
        c = shapely.get_coordinates(geom[ok], include_z=True)
        x[ok], y[ok], z[ok] = c[:, 0], c[:, 1], c[:, 2]
    cols = {str(c): [("" if v is None else v) for v in df[c].tolist()]
            for c in df.columns if c != "geometry"}
    rows = [f"feature {i + 1}" for i in range(len(df))]
    crs = pyproj.CRS(df.crs) if df.crs is not None else None
    return _Table(cols, rows, x, y, z, crs)


def _to_float(values: list) -> tuple[np.ndarray, np.ndarray]:
    """Vectorised number parsing: (floats with NaN for blanks/bad, mask of non-numbers)."""
    import pandas as pd

    try:  # fast path: every value already a number or numeric text
        num = np.asarray(values, dtype=float)
        if np.all(np.isfinite(num)):
            return num, np.zeros(len(num), bool)
    except (ValueError, TypeError):
        pass
    s = pd.Series(values, dtype=object)
    text = s.astype(str).str.strip()
    blank = s.isna().to_numpy() | (text == "").to_numpy() | (text.str.lower() == "nan").to_numpy()
    num = pd.to_numeric(text.where(~blank, None), errors="coerce").to_numpy(dtype=float)
    bad = ~blank & ~np.isfinite(num)
    return num, bad


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
    if att.crs is None or att.crs.equals(target):
        return dataclasses.replace(att, crs=target)
    tr = pyproj.Transformer.from_crs(att.crs, target, always_xy=True)
    new_strike = _rotate_azimuths(tr, att.crs, att.x, att.y, att.strike)
    xt, yt = tr.transform(att.x, att.y)
    xt, yt = np.asarray(xt, float), np.asarray(yt, float)
    if not np.all(np.isfinite(xt) & np.isfinite(yt)):
        raise AttitudeError(f"{source}: coordinates cannot be transformed to {target.name}")
    turn = np.abs((new_strike - att.strike + 180.0) % 360.0 - 180.0)
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


def read_attitudes(
    path: str | os.PathLike,
    *,
    convention: str = "rhr",
    layer: str | None = None,
    fields: Mapping[str, str] | None = None,
    crs: str | pyproj.CRS | None = None,
    warn: Warn | None = None,
) -> Attitudes:
    """Read bedding attitudes from a CSV or a point vector file, validating every row.

    CSV columns: ``x, y`` and, by ``convention``, ``strike, dip`` (``rhr``),
    ``dip_direction, dip`` (``dip-direction``) or ``attitude`` holding quadrant text
    (``quadrant``; ``strike`` and ``dip`` columns holding ``N30E`` and ``45SE`` also
    work). Optional: ``id`` (default: the data row number), ``z`` (elevation),
    ``overturned`` (true/false/yes/no/1/0). A point vector file (GeoPackage,
    GeoJSON, Shapefile) takes x, y (and z, when present) from its geometry.
    ``fields`` maps those logical names to the file's own column names; matching
    is case-insensitive.

    A row with an impossible value (dip outside 0-90, azimuth outside 0-360, text
    that is not a number, inconsistent quadrant text) is reported through ``warn``
    with its CSV line number (or feature number) and reason and dropped; the count
    of dropped rows is reported once. CSV coordinates are taken to be in ``crs``;
    a vector file in another CRS is reprojected to ``crs`` (its azimuths rotated to
    the new grid north) and that is said once.

    Raises :class:`AttitudeError` for a missing file, a missing column (listing the
    columns there are), an unknown convention, or a file with no usable rows.
    """
    warn = warn or _default_warn
    path = Path(path)
    if convention not in CONVENTIONS:
        raise AttitudeError(
            f"unknown attitude convention {convention!r} (use {', '.join(CONVENTIONS)})"
        )
    if not path.exists():
        raise AttitudeError(f"{path}: no such attitudes file")
    if path.is_dir():
        raise AttitudeError(f"{path}: is a folder, not an attitudes file")
    target = pyproj.CRS(crs) if crs is not None else None
    is_csv = path.suffix.lower() in CSV_SUFFIXES
    table = _read_csv(path) if is_csv else _read_vector(path, layer)
    n = len(table.rows)
    existing = list(table.columns)
    lower = {c.lower(): c for c in existing}
    fields = dict(fields or {})

    def column(logical: str, required: bool, hint: str = "") -> list | None:
        name = fields.get(logical) or logical
        real = lower.get(name.lower())
        if real is None and required:
            listed = ", ".join(existing) if existing else "none"
            raise AttitudeError(
                f"{path}: no column {name!r}{hint} (columns: {listed})"
            )
        if real is not None and real.lower() in table.repeated:
            nums = table.repeated[real.lower()]
            raise AttitudeError(
                f"{path}: column {real!r} appears {len(nums)} times in the header (columns "
                f"{', '.join(map(str, nums))}); keep one or rename the others"
            )
        return None if real is None else table.columns[real]

    reasons: dict[int, list[str]] = {}  # bad rows only

    def flag(mask: np.ndarray, why: Callable[[int], str]) -> None:
        for i in np.flatnonzero(mask):  # only the bad rows are visited
            reasons.setdefault(int(i), []).append(why(int(i)))

    # Coordinates
    if is_csv:
        xs, ys = column("x", True), column("y", True)
        x, bx = _to_float(xs)
        y, by = _to_float(ys)
        flag(bx | ~np.isfinite(x), lambda i: f"x {xs[i]!r} is not a number")
        flag(by | ~np.isfinite(y), lambda i: f"y {ys[i]!r} is not a number")
        z = np.full(n, np.nan)
        src_crs = None
    else:
        x, y, z = table.x, table.y, table.z
        flag(~np.isfinite(x), lambda i: "has no point geometry")
        src_crs = table.crs
    zs = column("z", False)
    if zs is not None:
        zc, bz = _to_float(zs)
        flag(bz, lambda i: f"z {zs[i]!r} is not a number")
        z = np.where(np.isfinite(zc), zc, z)

    # Orientation
    strike = np.full(n, np.nan)
    dip = np.full(n, np.nan)
    if convention == "quadrant":
        att = column("attitude", False)
        if att is None:
            s_txt, d_txt = column("strike", False), column("dip", False)
            if s_txt is None or d_txt is None:
                column("attitude", True, " with quadrant text such as 'N30E 45SE'")
            att = [f"{a} {b}" for a, b in zip(s_txt, d_txt, strict=True)]
        for i, t in enumerate(att):  # text parsing is per row by nature
            try:
                strike[i], dip[i] = _parse_quadrant_one(str(t))
            except ValueError as exc:
                reasons.setdefault(i, []).append(str(exc))
    else:
        az_name = "strike" if convention == "rhr" else "dip_direction"
        other = "dip_direction" if convention == "rhr" else "strike"
        hint = (f"; the file has {other!r}: use convention "
                f"{'dip-direction' if other == 'dip_direction' else 'rhr'}"
                if (fields.get(other) or other).lower() in lower else "")
        az_txt = column(az_name, True, hint)
        d_txt = column("dip", True)
        az, baz = _to_float(az_txt)
        dip, bd = _to_float(d_txt)
        flag(baz | ~np.isfinite(az) & ~baz, lambda i: f"{az_name} {az_txt[i]!r} is not a number")
        flag(bd | ~np.isfinite(dip) & ~bd, lambda i: f"dip {d_txt[i]!r} is not a number")
        flag(np.isfinite(az) & ((az < 0) | (az > 360)),
             lambda i: f"{az_name} {human(az[i])} is outside 0-360")
        flag(np.isfinite(dip) & ((dip < 0) | (dip > 90)),
             lambda i: f"dip {human(dip[i])} is outside 0-90")
        strike = az % 360.0 if convention == "rhr" else dip_direction_to_strike(az)

    # Optional columns
    ids_txt = column("id", False)
    ov_txt = column("overturned", False)
    overturned = np.zeros(n, bool)
    if ov_txt is not None:
        low = np.array([str(v).strip().lower() for v in ov_txt], dtype=object)
        is_true = np.isin(low, list(_TRUE))
        is_false = np.isin(low, list(_FALSE)) | np.array([v is None for v in ov_txt], bool)
        overturned = is_true
        flag(~is_true & ~is_false,
             lambda i: f"overturned {ov_txt[i]!r} is not true/false/yes/no/1/0")
    if ids_txt is not None:
        raw = [str(v).strip() for v in ids_txt]
        try:
            ids = np.array([int(v) for v in raw])
        except ValueError:
            ids = np.array(raw, dtype=object)
        flag(np.array([v == "" for v in raw], bool), lambda i: "id is blank")
    else:
        ids = np.arange(1, n + 1)

    good = np.ones(n, bool)
    good[list(reasons)] = False
    dropped = n - int(good.sum())
    if dropped:
        shown = 0
        for i in np.flatnonzero(~good):
            if shown == 20:
                warn(f"{path}: ... and {dropped - 20} more bad rows")
                break
            warn(f"{path}, {table.rows[i]}: {'; '.join(reasons[i])}; row dropped")
            shown += 1
        warn(f"{path}: dropped {dropped} of {n} rows; kept {n - dropped}")
    if not good.any():
        raise AttitudeError(
            f"{path}: no usable attitude rows"
            + (f" ({n} row{'s' if n != 1 else ''}, all bad; {table.rows[0]}: "
               f"{'; '.join(reasons[0])})" if n else " (no data rows)")
        )

    att = Attitudes(
        id=ids[good], x=x[good], y=y[good], z=z[good], strike=strike[good] % 360.0,
        dip=dip[good], overturned=overturned[good], crs=target if src_crs is None else src_crs,
        source=f"{path} ({n} row{'s' if n != 1 else ''} read, {n - dropped} usable)",
    )
    if src_crs is not None and target is not None and not src_crs.equals(target):
        att = reproject_attitudes(att, target, warn=warn, source=str(path))
    return att
