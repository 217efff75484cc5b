"""The sample area: an invented foreland fold-thrust belt and its generator.

The Varrow Range scenario (all names invented): a train of parallel kink folds
in a six-unit Devonian-Cretaceous cover, plunging gently north-east, cut by one
thrust (the Kelmby Thrust) that dips toward the hinterland (north-west) and
carries its hanging wall a few hundred metres up-dip toward the foreland.

The model is exact and cylindrical. In the profile plane (perpendicular to the
fold axis) the top of the column is a polyline with straight dip domains; every
deeper horizon is its parallel (constant perpendicular thickness) offset with
mitre joins, which is the kink-band construction: axial surfaces bisect the
limbs, and where two meet at depth one new axial surface continues (Suppe 1985,
Principles of Structural Geology). The hanging wall is the footwall geometry
translated rigidly along the planar fault.

Profile coordinates, from map coordinates (x, y, z) relative to the centre:
``a`` horizontal along the axis trend, ``u`` horizontal toward trend + 90
(toward the foreland), ``v = z cos(p) + a sin(p)`` (up, perpendicular to the
plunging axis). The geometry is independent of the along-axis coordinate.

``generate(folder)`` writes the committed sample area (DEM, map, attitudes,
project files) deterministically from the model and a fixed random seed.
These files are invented data for the demo and self-consistency tests only.
"""

from __future__ import annotations

import functools
import json
import os
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import shapely
from shapely.geometry import LineString

from .stratigraphy import Column, Unit

__all__ = ["SampleModel", "SAMPLE_MODEL", "SECTIONS", "generate", "DEFAULT_SEED", "bilinear",
           "project_text", "model_summary"]

DEFAULT_SEED = 20240611
CRS = "EPSG:32611"

# Sample-area grid: 400 x 400 cells of 25 m (10 km square) in UTM zone 11N.
X0, Y0 = 604_000.0, 5_212_000.0  # lower-left corner
CELL = 25.0
NCOLS = NROWS = 400
SUPERSAMPLE = 4  # the map is polygonised on a 6.25 m grid

# One colour source for the whole column: the CGMW/ICS chart colour of each unit's age.
COLUMN = Column((
    Unit("Brantel Shale", 300.0, None, "Cretaceous", "grey marine shale"),
    Unit("Osk Sandstone", 220.0, None, "Jurassic", "cross-bedded quartz sandstone"),
    Unit("Merrin Siltstone", 260.0, None, "Triassic", "red siltstone and mudstone"),
    Unit("Talvo Limestone", 180.0, None, "Permian", "cherty limestone"),
    Unit("Dunmarrow Dolomite", 350.0, None, "Carboniferous", "massive dolomite"),
    Unit("Hesk Quartzite", 240.0, None, "Devonian", "quartzite and conglomerate"),
))


def _unit_vectors(trend: float, plunge: float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """East-north-up vectors: axis (down-plunge), u (horizontal, trend + 90), w (profile up)."""
    t, p = np.radians(trend), np.radians(plunge)
    axis = np.array([np.sin(t) * np.cos(p), np.cos(t) * np.cos(p), -np.sin(p)])
    uhat = np.array([np.cos(t), -np.sin(t), 0.0])
    what = np.array([np.sin(t) * np.sin(p), np.cos(t) * np.sin(p), np.cos(p)])
    return axis, uhat, what


def _plane_attitude(normal: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Strike (right-hand rule) and dip of planes from their normals (..., 3), vectorised."""
    n = np.where(normal[..., 2:3] < 0, -normal, normal)  # upward normal
    n = n / np.linalg.norm(n, axis=-1, keepdims=True)
    dip = np.degrees(np.arccos(np.clip(n[..., 2], -1.0, 1.0)))
    # The upward normal leans toward the dip direction.
    dipdir = np.degrees(np.arctan2(n[..., 0], n[..., 1])) % 360.0
    return (dipdir - 90.0) % 360.0, dip


@dataclass(frozen=True)
class SampleModel:
    """The known 3D structure of the sample area (invented; see the module docstring).

    ``ref_u``/``ref_v``: vertices of the top of the column in the footwall's
    profile plane (u toward the foreland, v up). ``fault_u``/``fault_v``: a
    point of the fault in the profile plane; ``fault_profile_dip``: its dip in
    that plane, toward the hinterland; ``slip``: hanging-wall displacement along
    the fault, up-dip (toward the foreland), metres.
    """

    column: Column = COLUMN
    basement: str = "Ulvane Gneiss"
    centre: tuple[float, float] = (X0 + NCOLS * CELL / 2, Y0 + NROWS * CELL / 2)
    trend: float = 35.0
    plunge: float = 2.0
    ref_u: tuple[float, ...] = (-40_000.0, -2_200.0, -600.0, 3_000.0, 40_000.0)
    ref_dips: tuple[float, ...] = (-15.0, 35.0, -12.0, 10.0)  # signed: + descends toward +u
    ref_v_at_last_hinge: float = 2_740.0
    fault_name: str = "Kelmby Thrust"
    fault_u: float = 1_500.0
    fault_v: float = 1_650.0
    fault_profile_dip: float = 32.0
    slip: float = 400.0
    strat_step: float = 5.0  # spacing of the bedding family used by bedding_at, metres

    # ---------------------------------------------------------------- geometry
    @functools.cached_property
    def _vectors(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        return _unit_vectors(self.trend, self.plunge)

    @functools.cached_property
    def ref_v(self) -> np.ndarray:
        """v of the reference (top of column) vertices, from the dips and the anchor."""
        u = np.asarray(self.ref_u)
        slopes = -np.tan(np.radians(self.ref_dips))
        v = np.concatenate([[0.0], np.cumsum(slopes * np.diff(u))])
        return v - v[-2] + self.ref_v_at_last_hinge

    @property
    def hanging_wall_shift(self) -> tuple[float, float]:
        """(du, dv): translation of the hanging wall in the profile plane."""
        th = np.radians(self.fault_profile_dip)
        return self.slip * np.cos(th), self.slip * np.sin(th)

    @functools.cached_property
    def horizons(self) -> dict[str, LineString]:
        """Footwall horizons in the profile plane (u, v), keyed by ``top_of``;
        the base of the column is keyed by the basement's name."""
        ref = LineString(np.column_stack([self.ref_u, self.ref_v]))
        names = self.column.names + [self.basement]
        depths = np.append(self.column.depth_to_top, self.column.total_thickness)
        return {n: self._offset(ref, d) for n, d in zip(names, depths, strict=True)}

    @staticmethod
    def _offset(ref: LineString, depth: float) -> LineString:
        """Parallel offset ``depth`` below ``ref`` with mitre joins (kink construction)."""
        if depth == 0:
            return ref
        # The line runs toward +u, so the right-hand side (negative distance) is below.
        off = shapely.offset_curve(ref, -depth, join_style="mitre", mitre_limit=20.0)
        if off.geom_type != "LineString":
            raise RuntimeError(f"offset at {depth} m is not one line: {off.geom_type}")
        xy = np.asarray(off.coords)
        if xy[0, 0] > xy[-1, 0]:
            xy = xy[::-1]
        if np.any(np.diff(xy[:, 0]) <= 0):
            raise RuntimeError(f"offset at {depth} m is not a function of u")
        return LineString(xy)

    @functools.cached_property
    def _horizon_arrays(self) -> list[tuple[np.ndarray, np.ndarray]]:
        return [(np.asarray(h.coords)[:, 0], np.asarray(h.coords)[:, 1])
                for h in self.horizons.values()]

    @functools.cached_property
    def _family(self) -> list[tuple[np.ndarray, np.ndarray]]:
        """Closely spaced parallel horizons through the column, for bedding_at."""
        ref = LineString(np.column_stack([self.ref_u, self.ref_v]))
        depths = np.arange(0.0, self.column.total_thickness + self.strat_step, self.strat_step)
        out = []
        for d in depths:
            xy = np.asarray(self._offset(ref, float(d)).coords)
            out.append((xy[:, 0], xy[:, 1]))
        return out

    # ------------------------------------------------------------ coordinates
    def to_profile(self, x, y, z=None):
        """Map (x, y[, z]) -> (u, a[, v]) with v = z cos(p) + a sin(p)."""
        _, uhat, _ = self._vectors
        t = np.radians(self.trend)
        dx = np.asarray(x, float) - self.centre[0]
        dy = np.asarray(y, float) - self.centre[1]
        a = dx * np.sin(t) + dy * np.cos(t)
        u = dx * uhat[0] + dy * uhat[1]
        if z is None:
            return u, a
        p = np.radians(self.plunge)
        return u, a, np.asarray(z, float) * np.cos(p) + a * np.sin(p)

    def _v_to_z(self, v, a):
        p = np.radians(self.plunge)
        return (v - a * np.sin(p)) / np.cos(p)

    def _fault_v(self, u):
        return self.fault_v + (u - self.fault_u) * np.tan(np.radians(self.fault_profile_dip))

    def _in_hanging_wall(self, u, v):
        return v > self._fault_v(u)

    # -------------------------------------------------------------- public API
    def fault_elevation(self, x, y) -> np.ndarray:
        """Elevation of the fault plane at map points (vectorised)."""
        u, a = self.to_profile(x, y)
        return self._v_to_z(self._fault_v(u), a)

    @property
    def fault_attitude(self) -> tuple[float, float]:
        """(dip, dip direction) of the fault plane, degrees."""
        axis, uhat, what = self._vectors
        th = np.radians(self.fault_profile_dip)
        along = np.cos(th) * uhat + np.sin(th) * what  # rises toward the foreland
        strike, dip = _plane_attitude(np.cross(axis, along))
        return float(dip), float((strike + 90.0) % 360.0)

    def horizon_elevation(self, top_of: str, x, y, block: str | None = None) -> np.ndarray:
        """True elevation of the top of unit ``top_of`` at map points (vectorised).

        ``block``: "hanging_wall" or "footwall" gives that block's surface (NaN
        where the fault cuts it out); None gives the hanging wall's where it
        exists above the fault, else the footwall's. Erosion is not applied:
        it is the full surface, above or below the ground. ``top_of`` may also
        be the basement's name (the base of the column).
        """
        names = list(self.horizons)
        if top_of not in names:
            raise KeyError(f"{top_of!r} is not a unit of the sample model ({', '.join(names)})")
        hu, hv = self._horizon_arrays[names.index(top_of)]
        u, a = self.to_profile(x, y)
        du, dv = self.hanging_wall_shift
        fv = self._fault_v(u)
        v_fw = np.interp(u, hu, hv)
        v_hw = np.interp(u - du, hu, hv) + dv
        fw_ok, hw_ok = v_fw < fv, v_hw > fv
        if block == "footwall":
            v = np.where(fw_ok, v_fw, np.nan)
        elif block == "hanging_wall":
            v = np.where(hw_ok, v_hw, np.nan)
        elif block is None:
            v = np.where(hw_ok, v_hw, np.where(fw_ok, v_fw, np.nan))
        else:
            raise ValueError(f"block must be None, 'hanging_wall' or 'footwall', got {block!r}")
        return self._v_to_z(v, a)

    def block_at(self, x, y, z) -> np.ndarray:
        """"hanging_wall" or "footwall" at 3D points (vectorised)."""
        u, _, v = self.to_profile(x, y, z)
        return np.where(self._in_hanging_wall(u, v), "hanging_wall", "footwall")

    def _restored(self, x, y, z):
        """Footwall-frame profile coordinates (u, v) of 3D points (hanging wall moved back)."""
        u, _, v = self.to_profile(x, y, z)
        hw = self._in_hanging_wall(u, v)
        du, dv = self.hanging_wall_shift
        return np.where(hw, u - du, u), np.where(hw, v - dv, v), hw

    def unit_index_at(self, x, y, z) -> np.ndarray:
        """Column index of the unit at 3D points: -1 above the column's top,
        len(column) in the basement (vectorised)."""
        u, v, _ = self._restored(x, y, z)
        above = np.zeros(np.shape(u), dtype=np.int16)
        for hu, hv in self._horizon_arrays:
            above += np.interp(u, hu, hv) >= v
        return above.astype(np.int16) - 1

    def unit_at(self, x, y, z) -> np.ndarray:
        """Name of the unit at 3D points (object array): None above the column's top,
        the basement's name below its base (vectorised)."""
        idx = self.unit_index_at(x, y, z)
        names = np.array([None] + self.column.names + [self.basement], dtype=object)
        return names[idx + 1]

    @functools.cached_property
    def _family_grid(self) -> tuple[np.ndarray, np.ndarray] | None:
        """The family as (ncurves, nvertices) arrays when every curve has the same
        vertices (no dip domain vanishes within the column), else None."""
        if len({len(fu) for fu, _ in self._family}) != 1:
            return None
        return (np.array([fu for fu, _ in self._family]),
                np.array([fv for _, fv in self._family]))

    def profile_dip_at(self, x, y, z) -> np.ndarray:
        """Signed bedding dip in the profile plane (+: descends toward the foreland)."""
        u, v, _ = self._restored(x, y, z)
        shape = np.shape(u)
        u, v = np.ravel(u), np.ravel(v)
        grid = self._family_grid
        if grid is None:  # general case: one pass per curve of the family
            slope = np.full(u.shape, np.nan)
            for fu, fv in self._family:  # top to bottom: the last curve above wins
                seg = np.clip(np.searchsorted(fu, u) - 1, 0, len(fu) - 2)
                s = (fv[seg + 1] - fv[seg]) / (fu[seg + 1] - fu[seg])
                slope = np.where(np.interp(u, fu, fv) >= v, s, slope)
        else:
            fu, fv = grid

            def on_curve(j):
                """(elevation, slope) of curve j (per point) at u."""
                uj, vj = fu[j], fv[j]
                seg = np.clip((uj <= u[:, None]).sum(axis=1) - 1, 0, fu.shape[1] - 2)
                rows = np.arange(len(u))
                u0, u1 = uj[rows, seg], uj[rows, seg + 1]
                v0, v1 = vj[rows, seg], vj[rows, seg + 1]
                s = (v1 - v0) / (u1 - u0)
                return v0 + (u - u0) * s, s

            # Curves are ordered top to bottom and never cross: bisect for the
            # deepest curve at or above each point.
            lo = np.zeros(len(u), int)
            hi = np.full(len(u), len(fu) - 1)
            top_ok = on_curve(lo)[0] >= v
            while np.any(hi - lo > 1):
                mid = (lo + hi) // 2
                above = on_curve(mid)[0] >= v
                lo = np.where(above, mid, lo)
                hi = np.where(above, hi, mid)
            last_ok = on_curve(hi)[0] >= v
            j = np.where(last_ok, hi, lo)
            slope = np.where(top_ok, on_curve(j)[1], np.nan)
        return -np.degrees(np.arctan(slope)).reshape(shape)

    def bedding_at(self, x, y, z) -> tuple[np.ndarray, np.ndarray]:
        """True bedding (strike RHR, dip) at 3D points (vectorised)."""
        axis, uhat, what = self._vectors
        phi = -np.radians(self.profile_dip_at(x, y, z))[..., None]  # slope angle in (u, v)
        along = np.cos(phi) * uhat + np.sin(phi) * what
        return _plane_attitude(np.cross(axis, along))

    def section_truth(self, vertices, distances) -> dict[str, dict[str, np.ndarray]]:
        """True horizons under a section line: ``{top_of: {"hanging_wall": z,
        "footwall": z}}`` at ``distances`` (metres along the polyline ``vertices``
        in the map CRS), NaN where a block does not hold the horizon. The base of
        the column is included under the basement's name."""
        line = LineString(np.asarray(vertices, float))
        pts = shapely.line_interpolate_point(line, np.asarray(distances, float))
        x, y = shapely.get_x(pts), shapely.get_y(pts)
        return {name: {b: self.horizon_elevation(name, x, y, block=b)
                       for b in ("hanging_wall", "footwall")} for name in self.horizons}

    def hinge_u(self) -> list[tuple[str, float]]:
        """(block, u) of each axial surface at the top of the column (profile plane)."""
        du, _ = self.hanging_wall_shift
        inner = list(self.ref_u[1:-1])
        return [("footwall", u) for u in inner] + [("hanging_wall", u + du) for u in inner]


SAMPLE_MODEL = SampleModel()


# Section lines of the sample area, built from the model's frame so that they
# run across the structure (hinterland to foreland).
def _section_lines(model: SampleModel) -> dict[str, list[tuple[float, float]]]:
    t = np.radians(model.trend)
    ahat = np.array([np.sin(t), np.cos(t)])
    uhat = np.array([np.cos(t), -np.sin(t)])
    c = np.asarray(model.centre)

    def pt(u, a):
        return tuple(float(round(v)) for v in c + u * uhat + a * ahat)

    return {
        "A": [pt(-4_600, -1_000), pt(4_600, -1_000)],
        "B": [pt(-4_200, 2_900), pt(-300, 2_300), pt(3_900, 600)],
    }


SECTIONS = _section_lines(SAMPLE_MODEL)


# ------------------------------------------------------------------ the DEM
# Transverse valleys (running along u, across the strike) at these along-axis
# positions a (metres), with depths; they drain toward the foreland (south-east).
_VALLEYS = ((-3_400.0, 330.0, 0.4), (-900.0, 300.0, 2.1), (1_700.0, 360.0, 4.0),
            (4_100.0, 280.0, 5.3))


def dem_surface(model: SampleModel, x, y, noise: np.ndarray | None = None) -> np.ndarray:
    """Smooth analytic relief at map points: a range descending to the north-east and
    the foreland, cut by meandering transverse valleys (``noise`` is added as given)."""
    u, a = model.to_profile(x, y)
    z = 1_880.0 - 0.03 * a - 0.02 * u - 60.0 * np.exp(-((u + 500.0) / 3_000.0) ** 2)
    z = z + 90.0 * np.exp(-((u + 2_000.0) / 1_800.0) ** 2)  # the range crest
    for a0, depth, phase in _VALLEYS:
        centre = a0 + 260.0 * np.sin(2 * np.pi * u / 4_200.0 + phase)
        width = 520.0 + 80.0 * np.sin(u / 1_700.0 + phase)
        floor = depth * (0.8 + 0.2 * np.tanh(u / 3_000.0))  # deepening downstream
        dist = (a - centre) / width
        z = z - floor / (1.0 + dist**2) ** 1.2
    if noise is not None:
        z = z + noise
    return z


# ------------------------------------------------------------- the generator
def _centres(n: int, cell: float) -> tuple[np.ndarray, np.ndarray]:
    """Pixel-centre coordinates (x ascending, y descending) of an n x n grid."""
    xs = X0 + (np.arange(n) + 0.5) * cell
    ys = Y0 + n * cell - (np.arange(n) + 0.5) * cell
    return xs, ys


def _noise(rng: np.random.Generator) -> np.ndarray:
    """Smooth random relief (metres) on the DEM grid: two scales of filtered noise."""
    from scipy.ndimage import gaussian_filter

    out = np.zeros((NROWS, NCOLS))
    for sigma, amp in ((9.0, 22.0), (2.5, 5.0)):
        f = gaussian_filter(rng.standard_normal((NROWS, NCOLS)), sigma, mode="reflect")
        out += amp * f / f.std()
    return out


def bilinear(dem: np.ndarray, x, y) -> np.ndarray:
    """Bilinear interpolation of the sample DEM between pixel centres (edge values
    held outside them), the way a profile samples it."""
    from scipy.ndimage import map_coordinates

    col = (np.asarray(x, float) - X0) / CELL - 0.5
    row = (Y0 + NROWS * CELL - np.asarray(y, float)) / CELL - 0.5
    coords = np.stack([np.ravel(row), np.ravel(col)])
    z = map_coordinates(dem.astype(np.float64), coords, order=1, mode="nearest")
    return z.reshape(np.shape(x))


def make_dem(model: SampleModel, rng: np.random.Generator) -> np.ndarray:
    xs, ys = _centres(NCOLS, CELL)
    gx, gy = np.meshgrid(xs, ys)
    return dem_surface(model, gx, gy, noise=_noise(rng)).astype(np.float32)


def map_units(model: SampleModel, dem: np.ndarray, supersample: int = SUPERSAMPLE):
    """Unit polygons at the ground: the model cut by the (bilinear) DEM surface,
    classified on a grid ``supersample`` times finer than the DEM, polygonised and
    dissolved by unit. Returns (names, geometries) in column order."""
    import rasterio.features
    from affine import Affine

    n, cell = NCOLS * supersample, CELL / supersample
    xs, ys = _centres(n, cell)
    gx, gy = np.meshgrid(xs, ys)
    idx = model.unit_index_at(gx, gy, bilinear(dem, gx, gy))
    if idx.min() < 0 or idx.max() >= len(model.column.units):
        raise RuntimeError("sample model: the ground leaves the column (above its top or "
                           "in the basement); adjust the model")
    transform = Affine(cell, 0.0, X0, 0.0, -cell, Y0 + NROWS * CELL)
    polys: dict[int, list] = {}
    for geom, val in rasterio.features.shapes(idx.astype(np.int16), transform=transform):
        polys.setdefault(int(val), []).append(shapely.geometry.shape(geom))
    keys = sorted(polys)
    merged = [shapely.union_all(polys[k]) for k in keys]
    # Removing the grid's stair steps (within a fraction of a DEM pixel), as one
    # coverage so that neighbouring polygons keep sharing their edges.
    simple = shapely.coverage_simplify(np.array(merged, dtype=object), cell * 0.5)
    names = [model.column.names[k] for k in keys]
    return names, [shapely.make_valid(g) for g in simple]


def fault_trace(model: SampleModel, dem: np.ndarray, supersample: int = SUPERSAMPLE):
    """The fault's outcrop: the zero contour of fault elevation minus ground."""
    import contourpy

    n, cell = NCOLS * supersample, CELL / supersample
    xs, ys = _centres(n, cell)
    gx, gy = np.meshgrid(xs, ys)
    diff = model.fault_elevation(gx, gy) - bilinear(dem, gx, gy)
    gen = contourpy.contour_generator(xs, ys, diff, line_type="Separate")
    lines = [LineString(c) for c in gen.lines(0.0) if len(c) > 1]
    lines = [ln for ln in lines if ln.length > 100.0]
    return sorted(lines, key=lambda ln: -ln.length)


def _domain_key(model, x, y, z):
    """(block, rounded profile dip) of points: identifies their dip domain."""
    dip = np.round(model.profile_dip_at(x, y, z), 3)
    hw = model.block_at(x, y, z) == "hanging_wall"
    return hw, dip


def _on_limb(model, dem, x, y, faults, radius=60.0):
    """True where a point is over ``radius`` from the fault trace and every point
    within ``radius`` around it has the same bedding (i.e. far from a hinge)."""
    z = bilinear(dem, x, y)
    hw, dip = _domain_key(model, x, y, z)
    ok = np.ones(np.shape(x), bool)
    for ang in np.radians(np.arange(0, 360, 30)):
        for r in (radius / 2, radius):
            xx, yy = x + r * np.sin(ang), y + r * np.cos(ang)
            hw2, dip2 = _domain_key(model, xx, yy, bilinear(dem, xx, yy))
            ok &= (hw2 == hw) & (np.abs(dip2 - dip) < 0.01)
    if faults:
        d = shapely.distance(shapely.MultiLineString(faults), shapely.points(x, y))
        ok &= d > radius
    return ok


def _noisy_attitudes(model, x, y, z, rng, sigma_deg=2.0):
    """True bedding with a small random rotation of its pole, rounded to whole degrees."""
    axis, uhat, what = model._vectors
    phi = -np.radians(model.profile_dip_at(x, y, z))[:, None]
    pole = np.cross(axis, np.cos(phi) * uhat + np.sin(phi) * what)
    pole /= np.linalg.norm(pole, axis=1, keepdims=True)
    # Two unit vectors perpendicular to each pole; Gaussian tilt in both.
    e1 = np.cross(pole, np.array([0.0, 0.0, 1.0]))
    e1 /= np.linalg.norm(e1, axis=1, keepdims=True)
    e2 = np.cross(pole, e1)
    g = rng.normal(0.0, np.radians(sigma_deg), size=(len(x), 2))
    tilted = pole + g[:, :1] * e1 + g[:, 1:] * e2
    strike, dip = _plane_attitude(tilted)
    strike = np.round(strike).astype(int) % 360
    return strike, np.clip(np.round(dip).astype(int), 0, 90)


def _line_domains(model, dem, vertices, step=10.0):
    """Runs of constant (block, dip domain) at the ground along a section line:
    list of (start_m, end_m, hanging_wall, profile_dip)."""
    line = LineString(vertices)
    d = np.arange(0.0, line.length, step)
    pts = shapely.line_interpolate_point(line, d)
    x, y = shapely.get_x(pts), shapely.get_y(pts)
    hw, dip = _domain_key(model, x, y, bilinear(dem, x, y))
    cut = np.flatnonzero((hw[1:] != hw[:-1]) | (dip[1:] != dip[:-1])) + 1
    starts = np.concatenate([[0], cut])
    ends = np.concatenate([cut, [len(d)]])
    return [(d[s], d[e - 1], bool(hw[s]), float(dip[s])) for s, e in zip(starts, ends, strict=True)]


def make_attitudes(model, dem, faults, rng, n_random=66, per_domain=5, corridor=600.0):
    """Bedding attitudes at random ground points on the limbs, plus enough in each
    dip domain of each section's corridor. Returns dict of arrays."""
    m = 200.0  # keep clear of the map's edge
    xs, ys = [], []
    while sum(len(a) for a in xs) < n_random:
        x = rng.uniform(X0 + m, X0 + NCOLS * CELL - m, 64)
        y = rng.uniform(Y0 + m, Y0 + NROWS * CELL - m, 64)
        ok = _on_limb(model, dem, x, y, faults)
        xs.append(x[ok])
        ys.append(y[ok])
    x = np.concatenate(xs)[:n_random]
    y = np.concatenate(ys)[:n_random]
    for vertices in SECTIONS.values():
        line = LineString(vertices)
        for start, end, hw, dip in _line_domains(model, dem, vertices):
            if end - start < 300.0:
                continue
            for _ in range(50):  # attempts; each adds points until the domain has enough
                pts = shapely.points(x, y)
                dist = shapely.line_locate_point(line, pts)
                off = shapely.distance(line, pts)
                hw_pt, dip_pt = _domain_key(model, x, y, bilinear(dem, x, y))
                have = ((off <= corridor) & (dist >= start) & (dist <= end)
                        & (hw_pt == hw) & (np.abs(dip_pt - dip) < 0.01)).sum()
                if have >= per_domain:
                    break
                dd = rng.uniform(start + 60.0, end - 60.0, 16)
                oo = rng.uniform(-0.8, 0.8, 16) * corridor
                p = shapely.line_interpolate_point(line, dd)
                px, py = _offset_points(line, dd, oo, shapely.get_x(p), shapely.get_y(p))
                inside = ((px > X0 + m) & (px < X0 + NCOLS * CELL - m)
                          & (py > Y0 + m) & (py < Y0 + NROWS * CELL - m))
                px, py = px[inside], py[inside]
                hw2, dip2 = _domain_key(model, px, py, bilinear(dem, px, py))
                good = _on_limb(model, dem, px, py, faults) & (hw2 == hw) & (
                    np.abs(dip2 - dip) < 0.01)
                k = np.flatnonzero(good)[: per_domain - have]
                x, y = np.append(x, px[k]), np.append(y, py[k])
    x, y = np.round(x, 1), np.round(y, 1)
    z = bilinear(dem, x, y)
    strike, dip = _noisy_attitudes(model, x, y, z, rng)
    ids = np.array([f"VR{i + 1:03d}" for i in range(len(x))])
    return {"id": ids, "x": x, "y": y, "strike": strike, "dip": dip}


def _offset_points(line: LineString, d, offset, px, py):
    """Points at distance d along ``line`` moved ``offset`` metres to its right."""
    eps = 1.0
    a = shapely.line_interpolate_point(line, np.clip(d - eps, 0, line.length))
    b = shapely.line_interpolate_point(line, np.clip(d + eps, 0, line.length))
    tx, ty = shapely.get_x(b) - shapely.get_x(a), shapely.get_y(b) - shapely.get_y(a)
    norm = np.hypot(tx, ty)
    return px + offset * ty / norm, py - offset * tx / norm  # right of travel


def _polygonal(g):
    """Keep only the polygonal part of a geometry (make_valid may add slivers of lines)."""
    if g.geom_type in ("Polygon", "MultiPolygon"):
        return g
    parts = [p for p in shapely.get_parts(g) if p.geom_type in ("Polygon", "MultiPolygon")]
    return shapely.union_all(parts)


def _write_dem(path: Path, dem: np.ndarray) -> None:
    import rasterio
    from affine import Affine

    from ._atomic import atomic_file

    profile = dict(driver="GTiff", width=NCOLS, height=NROWS, count=1, dtype="float32",
                   crs=CRS, transform=Affine(CELL, 0.0, X0, 0.0, -CELL, Y0 + NROWS * CELL),
                   nodata=-9999.0, tiled=True, blockxsize=128, blockysize=128,
                   compress="deflate", predictor=3)
    with atomic_file(path) as tmp, rasterio.open(tmp, "w", **profile) as dst:
        dst.write(dem, 1)


def _write_map(path: Path, model: SampleModel, names, geoms, faults) -> None:
    import geopandas as gpd

    from ._atomic import atomic_file

    col = model.column
    units = gpd.GeoDataFrame(
        {"unit": names,
         "age": [col.unit(n).age for n in names],
         "lithology": [col.unit(n).lithology for n in names]},
        geometry=[_polygonal(g) for g in geoms], crs=CRS)
    dip, dip_direction = model.fault_attitude
    fl = gpd.GeoDataFrame(
        {"name": [model.fault_name] * len(faults),
         "dip": [round(dip, 1)] * len(faults),
         "dip_direction": [round(dip_direction, 1)] * len(faults),
         "sense": ["thrust"] * len(faults)},
        geometry=list(faults), crs=CRS)
    with atomic_file(path) as tmp:
        tmp.unlink()  # the GeoPackage driver creates the file itself
        units.to_file(tmp, layer="units", driver="GPKG")
        fl.to_file(tmp, layer="faults", driver="GPKG")


def _write_attitudes(path: Path, att: dict) -> None:
    from ._atomic import atomic_file

    rows = ["id,x,y,strike,dip"]
    rows += [f"{i},{x:.1f},{y:.1f},{s:d},{d:d}"
             for i, x, y, s, d in zip(att["id"], att["x"], att["y"], att["strike"],
                                      att["dip"], strict=True)]
    with atomic_file(path) as tmp:
        tmp.write_text("\n".join(rows) + "\n", encoding="utf-8")


FLAWED_UNIT = "Talvo Limestone"
FLAWED_FACTOR = 1.4  # 40 % too thick


def project_text(model: SampleModel, flawed: bool = False) -> str:
    """The sample area's project file (or its deliberately flawed variant)."""
    out = []
    if flawed:
        wrong = model.column.unit(FLAWED_UNIT).thickness * FLAWED_FACTOR
        out += [
            "# Varrow Range sample area: DELIBERATELY FLAWED variant for the balance checks.",
            f"# The {FLAWED_UNIT} is given {wrong:.0f} m instead of its true "
            f"{model.column.unit(FLAWED_UNIT).thickness:.0f} m",
            "# (40 % too thick), so the drafted horizons below it miss the mapped contacts",
            "# and the topography test must fail. Everything else equals project.toml.",
        ]
    else:
        out += ["# Varrow Range sample area (invented data; see README.md).",
                "# Generated by generate.py from mapsection.sample.SAMPLE_MODEL."]
    out += ['title = "Varrow Range sample area"', f'crs = "{CRS}"', "",
            "[dem]", 'path = "dem.tif"', "",
            "[map]", 'path = "geology.gpkg"', 'units_layer = "units"', 'unit_field = "unit"',
            'faults_layer = "faults"', "",
            "[attitudes]", 'path = "attitudes.csv"', 'convention = "rhr"', ""]
    out.append("# Stratigraphic column, youngest first; thickness perpendicular to bedding (m).")
    for u in model.column.units:
        t = u.thickness * (FLAWED_FACTOR if flawed and u.name == FLAWED_UNIT else 1.0)
        out += ["[[stratigraphy]]", f'unit = "{u.name}"', f"thickness = {t:.1f}"]
        if u.colour:
            out.append(f'colour = "{u.colour}"')
        out += [f'age = "{u.age}"', f'lithology = "{u.lithology}"', ""]
    notes = {"A": "straight, across the fold axis (hinterland to foreland); kink-band method",
             "B": "with a bend, crossing the range further north-east; arc (Busk) method"}
    methods = {"A": "kink", "B": "arc"}
    for name, verts in SECTIONS.items():
        pts = ", ".join(f"[{x:.0f}, {y:.0f}]" for x, y in verts)
        out += [f"# Section {name}: {notes[name]}.", "[[section]]", f'name = "{name}"',
                f"line = [{pts}]", "corridor = 600.0", f'method = "{methods[name]}"', ""]
    return "\n".join(out)


def generate(folder: str | os.PathLike, seed: int = DEFAULT_SEED,
             model: SampleModel | None = None) -> dict[str, Path]:
    """Write the sample area into ``folder``: dem.tif, geology.gpkg, attitudes.csv,
    project.toml, project_flawed.toml and model.json. Deterministic for a given seed.
    Returns the paths written, by name."""
    from ._atomic import atomic_file

    model = SAMPLE_MODEL if model is None else model
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    rng = np.random.default_rng(seed)
    dem = make_dem(model, rng)
    names, geoms = map_units(model, dem)
    faults = fault_trace(model, dem)
    att = make_attitudes(model, dem, faults, rng)

    paths = {k: folder / k for k in ("dem.tif", "geology.gpkg", "attitudes.csv",
                                     "project.toml", "project_flawed.toml", "model.json")}
    _write_dem(paths["dem.tif"], dem)
    _write_map(paths["geology.gpkg"], model, names, geoms, faults)
    _write_attitudes(paths["attitudes.csv"], att)
    for key, flawed in (("project.toml", False), ("project_flawed.toml", True)):
        with atomic_file(paths[key]) as tmp:
            tmp.write_text(project_text(model, flawed) + "\n", encoding="utf-8")
    with atomic_file(paths["model.json"]) as tmp:
        tmp.write_text(json.dumps(model_summary(model, seed), indent=2) + "\n", encoding="utf-8")
    for p in paths.values():
        p.chmod(0o644)  # temporary files are created private; these are data to share
    return paths


def model_summary(model: SampleModel, seed: int = DEFAULT_SEED) -> dict:
    """The model's parameters, for the record (written as model.json)."""
    dip, dip_direction = model.fault_attitude
    du, dv = model.hanging_wall_shift
    return {
        "scenario": "Varrow Range (invented foreland fold-thrust belt)",
        "crs": CRS, "seed": seed,
        "grid": {"x0": X0, "y0": Y0, "cell_m": CELL, "ncols": NCOLS, "nrows": NROWS},
        "fold_axis": {"trend": model.trend, "plunge": model.plunge},
        "profile_centre": list(model.centre),
        "reference_horizon": {"top_of": model.column.names[0],
                              "u_vertices": list(model.ref_u[1:-1]),
                              "v_vertices": [round(float(v), 3) for v in model.ref_v[1:-1]],
                              "domain_dips": list(model.ref_dips)},
        "fault": {"name": model.fault_name, "dip": round(dip, 2),
                  "dip_direction": round(dip_direction, 2),
                  "profile_dip": model.fault_profile_dip, "slip_m": model.slip,
                  "heave_m": round(float(du), 2), "throw_m": round(float(dv), 2),
                  "u": model.fault_u, "v": model.fault_v, "sense": "thrust"},
        "column": [{"unit": u.name, "thickness": u.thickness, "age": u.age,
                    "lithology": u.lithology} for u in model.column.units],
        "basement": model.basement,
        "sections": {k: [list(p) for p in v] for k, v in SECTIONS.items()},
    }


def sample_project() -> Path | None:
    """The committed sample area's project file in a source checkout, or None when absent."""
    path = Path(__file__).resolve().parents[1] / "sample_area" / "project.toml"
    return path if path.is_file() else None
