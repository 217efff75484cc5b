"""The sample area's generator pieces (see :mod:`mapsection.sample`): the DEM, the map's
units and fault trace, and the attitudes, from the model and a random generator."""

from __future__ import annotations

import numpy as np
import shapely
from shapely.geometry import LineString

from .model import CELL, NCOLS, NROWS, SECTIONS, SUPERSAMPLE, X0, Y0, SampleModel, plane_attitude

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
    from affine import Affine

    n, cell = NCOLS * supersample, CELL / supersample
    xs, ys = _centres(n, cell)
    gx, gy = np.meshgrid(xs, ys)
    idx = model.unit_index_at(gx, gy, bilinear(dem, gx, gy))
    if idx.min() < 0 or idx.max() >= len(model.column.units):
        raise RuntimeError("sample model: the ground leaves the column (above its top or "
                           "in the basement); adjust the model")
    transform = Affine(cell, 0.0, X0, 0.0, -cell, Y0 + NROWS * CELL)
    keys, geoms = polygonised_units(idx, transform, cell)
    return [model.column.names[k] for k in keys], geoms


def polygonised_units(idx: np.ndarray, transform, cell: float) -> tuple[list[int], list]:
    """A grid of unit indices as one polygon per index: (the indices in order, their valid
    geometries), each dissolved and simplified within half a ``cell``.

    Examples
    --------
    >>> from affine import Affine
    >>> keys, geoms = polygonised_units(np.array([[0, 0, 1], [0, 1, 1]]),
    ...                                 Affine(1.0, 0, 0, 0, -1.0, 2.0), 1.0)
    >>> keys, round(sum(g.area for g in geoms), 6)
    ([0, 1], 6.0)
    """
    import rasterio.features

    polys: dict[int, list] = {}
    for geom, val in rasterio.features.shapes(idx.astype(np.int16), transform=transform):
        polys.setdefault(int(val), []).append(shapely.geometry.shape(geom))
    keys = sorted(polys)
    merged = [shapely.union_all(polys[k]) for k in keys]
    # Removing the grid's stair steps (within a fraction of a pixel), as one coverage so
    # that neighbouring polygons keep sharing their edges.
    simple = shapely.coverage_simplify(np.array(merged, dtype=object), cell * 0.5)
    return keys, [shapely.make_valid(g) for g in simple]


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
    strike, dip = plane_attitude(tilted)
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


__all__ = ["bilinear", "dem_surface", "fault_trace", "make_attitudes", "make_dem", "map_units"]
