"""The sample area's model (see :mod:`mapsection.sample`): the grid, the column, the exact
cylindrical fold-thrust structure and the section lines."""

from __future__ import annotations

import functools
from dataclasses import dataclass

import numpy as np
import shapely
from shapely.geometry import LineString

from ..stratigraphy import Column, Unit

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


def plane_attitude(normal: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
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
        strike, dip = plane_attitude(np.cross(axis, along))
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
        return plane_attitude(np.cross(axis, along))

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


__all__ = ["CELL", "COLUMN", "CRS", "DEFAULT_SEED", "NCOLS", "NROWS", "SAMPLE_MODEL", "SECTIONS",
           "SUPERSAMPLE", "X0", "Y0", "SampleModel", "plane_attitude"]
