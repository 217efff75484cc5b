"""One unit's thickness: between its facing top and base planes with a block-bootstrap
uncertainty, else a lower bound from its outcrop, else why not (see :mod:`mapsection.thickness`)."""

from __future__ import annotations

import math

import numpy as np
import shapely

from .groups import ContactGroup
from .planes import CHUNK_PIXELS, MIN_PERCENTILE, MIN_POINTS, RESOLUTION, pole_angle
from .results import GroupThickness, UnitThickness

NO_CONTACT = "no contact with the unit above or below it in the column is mapped"


def _chunks(g: ContactGroup) -> list[np.ndarray]:
    """Indices of the kept points of a group in runs of CHUNK_PIXELS consecutive samples."""
    idx = np.flatnonzero(g.keep)
    if not len(idx):
        return []
    pos = np.arange(len(idx))
    start = np.ones(len(idx), bool)
    start[1:] = g.run[idx][1:] != g.run[idx][:-1]
    first = np.maximum.accumulate(np.where(start, pos, 0))
    key = np.cumsum(start | ((pos - first) % CHUNK_PIXELS == 0))
    return np.split(idx, np.flatnonzero(np.diff(key)) + 1)


def _between(nt, ct, nb, cb, centre) -> float:
    """Thickness between a top and a base plane along their mean normal, through ``centre``."""
    n = nt + nb
    n = n / np.linalg.norm(n)
    st = float(np.dot(nt, ct - centre)) / float(np.dot(nt, n))
    sb = float(np.dot(nb, cb - centre)) / float(np.dot(nb, n))
    return st - sb


def _resampled_planes(xyz: np.ndarray, chunks: list[np.ndarray], draws: np.ndarray
                      ) -> tuple[np.ndarray, np.ndarray]:
    """(upward normals, centroids) of the least-squares planes of block-bootstrap resamples.

    ``draws`` (resamples x chunks) holds the chunks each resample takes. Each plane is the
    one an SVD of the resample's centred points gives (the normal is the eigenvector of
    the smallest eigenvalue of their scatter matrix, Pearson 1901), computed from each
    chunk's sums rather than by one SVD per resample: the same planes to rounding.
    """
    ref = xyz.mean(axis=0)  # sums about a nearby point: no precision lost far from 0
    parts = [xyz[c] - ref for c in chunks]
    counts = np.array([len(q) for q in parts], float)
    sums = np.array([q.sum(axis=0) for q in parts])
    outer = np.array([q.T @ q for q in parts])
    times = np.zeros((len(draws), len(chunks)))
    np.add.at(times, (np.arange(len(draws))[:, None], draws), 1.0)
    n = times @ counts
    mean = (times @ sums) / n[:, None]
    scatter = (np.einsum("rk,kij->rij", times, outer)
               - n[:, None, None] * mean[:, :, None] * mean[:, None, :])
    normal = np.linalg.eigh(scatter)[1][:, :, 0]  # eigenvalues ascending
    normal = np.where(normal[:, 2:3] >= 0, normal, -normal)  # upward, as svd_normal
    return normal, mean + ref


def _pair(t: ContactGroup, b: ContactGroup, rng, bootstrap: int) -> tuple[float, float, int, float]:
    """(thickness, uncertainty, points, angle) between a top and a base plane."""
    pt, pb = t.xyz[t.keep], b.xyz[b.keep]
    centre = np.vstack([pt, pb]).mean(axis=0)
    nt, ct = np.asarray(t.plane.normal), np.asarray(t.plane.point)
    nb, cb = np.asarray(b.plane.normal), np.asarray(b.plane.point)
    thick = _between(nt, ct, nb, cb, centre)
    sigma = math.nan
    tc, bc = _chunks(t), _chunks(b)
    if bootstrap and len(tc) > 1 and len(bc) > 1:
        # The resamples' chunks drawn as before (top, base, top, base ...: the same draws
        # from the same seed); their planes then computed all at once.
        dt = np.empty((bootstrap, len(tc)), int)
        db = np.empty((bootstrap, len(bc)), int)
        for k in range(bootstrap):
            dt[k] = rng.integers(len(tc), size=len(tc))
            db[k] = rng.integers(len(bc), size=len(bc))
        n1, c1 = _resampled_planes(t.xyz, tc, dt)
        n2, c2 = _resampled_planes(b.xyz, bc, db)
        n = n1 + n2
        n = n / np.linalg.norm(n, axis=1)[:, None]
        st = np.einsum("ri,ri->r", n1, c1 - centre) / np.einsum("ri,ri->r", n1, n)
        sb = np.einsum("ri,ri->r", n2, c2 - centre) / np.einsum("ri,ri->r", n2, n)
        sigma = 2.0 * float(np.std(st - sb, ddof=1))  # 95 % half-width
    return thick, sigma, len(pt) + len(pb), pole_angle(nt, nb)


def _facing(tops: list[ContactGroup], bases: list[ContactGroup]
            ) -> list[tuple[ContactGroup, ContactGroup]]:
    """Top and base planes of one block and domain that face each other across the unit's
    outcrop: each is the other's nearest (median distance) among the other contact's."""
    from scipy.spatial import cKDTree

    def nearest(g: ContactGroup, others: list[ContactGroup]) -> ContactGroup | None:
        cands = [o for o in others if (o.block, o.domain) == (g.block, g.domain)]
        if not cands:
            return None
        d = [float(np.median(cKDTree(o.xyz[:, :2]).query(g.xyz[:, :2])[0])) for o in cands]
        return cands[int(np.argmin(d))]

    pairs = []
    for t in tops:
        b = nearest(t, bases)
        if b is not None and nearest(b, tops) is t:
            pairs.append((t, b))
    return pairs


def unit_thickness(name, top, base, fit_of, step, rng, bootstrap, unit_geoms,
                   elevation, label, tolerance, above, below) -> UnitThickness:
    """One unit's thickness: measured between its facing top and base planes, else a lower
    bound from its outcrop and its one contact, else ``"none"`` with the reason."""
    if not len(unit_geoms):
        return UnitThickness(name, "none", why="it is not on the map")
    results, skipped = _pairs(top, base, rng, bootstrap, tolerance)
    if results:
        return _measured(name, results, fit_of)
    one, side = (base, "top") if base else (top, "base")
    if one:
        bound = _minimum(unit_geoms, one, below if base else above, step, elevation, label,
                         below=not base)
        if bound is not None:
            value, n, blocks = bound
            return UnitThickness(name, "minimum", value, None, n, None, blocks, None, (),
                                 f"its {side} contact is not mapped, and its outcrop reaches "
                                 f"{value:.0f} m from its other contact")
    if skipped:
        why = "its top and base planes disagree (" + "; ".join(skipped) + ")"
    elif one:
        why = (f"only its {'base' if base else 'top'} contact fits a plane, and too little of "
               "its outcrop lies near it to bound its thickness")
    elif above is not None and len(above[0]) or below is not None and len(below[0]):
        n = sum(len(c[0]) for c in (above, below) if c is not None)
        why = (f"its mapped contacts ({n} points) fit no plane in any fault block and dip "
               "domain (too few points, points nearly on one line, or planes at odds with "
               "the attitudes)")
    else:
        why = NO_CONTACT
    return UnitThickness(name, "none", why=why)


def _pairs(top: list[ContactGroup], base: list[ContactGroup], rng, bootstrap: int,
           tolerance: float) -> tuple[list, list[str]]:
    """The thickness between each facing top and base plane; the pairs left out, and why."""
    results, skipped = [], []
    for t, b in _facing(top, base):
        thick, sigma, n, angle = _pair(t, b, rng, bootstrap)
        where = f"{t.block}, {t.name}"
        if angle > 2 * tolerance:
            skipped.append(f"top and base {angle:.0f} degrees apart in {where}")
            continue
        if not thick > 0:
            skipped.append(f"base above top in {where}")
            continue
        results.append((t, b, GroupThickness(t.block, t.name, thick, sigma, n, angle)))
    return results, skipped


def _measured(name: str, results: list, fit_of: dict) -> UnitThickness:
    """The groups' thicknesses combined: weighted by their bootstrap uncertainty (else by
    their points), the uncertainty at least the scatter between groups and the map's
    resolution."""
    gt = [r[2] for r in results]
    th = np.array([g.thickness for g in gt])
    sg = np.array([g.uncertainty for g in gt])
    boot = bool(np.all(np.isfinite(sg) & (sg > 0)))
    w = 1.0 / sg**2 if boot else np.array([g.n_points for g in gt], float)
    mean = float(np.sum(w * th) / np.sum(w))
    unc = float(1.0 / math.sqrt(np.sum(w))) if boot else math.nan
    if len(th) > 1:
        between = 2.0 * math.sqrt(float(np.sum(w * (th - mean) ** 2))
                                  / ((len(th) - 1) * float(np.sum(w))))
        unc = between if not boot else max(unc, between)
    # Contacts drawn on a map do not resolve a thickness better than about 1 % (the
    # tool's default floor), whatever the bootstrap says about a near-perfect map.
    unc = max(unc, RESOLUTION * mean) if math.isfinite(unc) else unc
    planes = [g.plane for r in results for g in r[:2]]
    spread = math.sqrt(sum(p.rms**2 * p.n_points for p in planes)
                       / sum(p.n_points for p in planes))
    mis = [fit_of[id(p)] for p in planes if fit_of[id(p)].misfit_deg is not None]
    misfit = (float(np.average([f.misfit_deg for f in mis],
                               weights=[max(f.n_attitudes, 1) for f in mis]))
              if mis else None)
    return UnitThickness(name, "measured", mean, unc, int(sum(g.n_points for g in gt)),
                         float(spread), tuple(sorted({g.block for g in gt})), misfit,
                         tuple(gt))


def _minimum(unit_geoms, groups: list[ContactGroup], contact: tuple[np.ndarray, np.ndarray], step,
             elevation, label, below: bool) -> tuple[float, int, tuple[str, ...]] | None:
    """Lower bound of a unit's thickness: how far its outcrop reaches from its one contact.

    The unit's ground is sampled on a grid; a point is measured against the plane
    of its nearest contact point, in its own fault block (points nearest to a stretch
    of contact that no plane fits are not measured); the bound is the largest, over
    planes, of the 99th percentile of the points' distance from the plane
    (perpendicular to it).
    """
    from scipy.spatial import cKDTree

    area = shapely.union_all(np.asarray(unit_geoms, dtype=object))
    x0, y0, x1, y1 = area.bounds
    grid = max(step, math.sqrt(max(area.area, 1.0) / 40_000.0))
    gx, gy = np.meshgrid(np.arange(x0 + grid / 2, x1, grid), np.arange(y0 + grid / 2, y1, grid))
    gx, gy = gx.ravel(), gy.ravel()
    inside = shapely.contains_xy(area, gx, gy)
    gx, gy = gx[inside], gy[inside]
    xyz, owner_of = contact
    if not len(gx) or not len(xyz):
        return None
    gz = np.asarray(elevation(gx, gy), float)
    blk, _, _ = label(gx, gy)
    owner = owner_of[cKDTree(xyz[:, :2]).query(np.column_stack([gx, gy]))[1]]
    best, count, blocks = None, 0, set()
    for k, g in enumerate(groups):
        m = (owner == k) & (blk == g.block) & np.isfinite(gz)
        if m.sum() < MIN_POINTS:
            continue
        h = g.plane.height(gx[m], gy[m], gz[m])
        value = float(np.percentile(-h if below else h, MIN_PERCENTILE))
        count += int(m.sum())
        blocks.add(g.block)
        if value > 0 and (best is None or value > best):
            best = value
    if best is None:
        return None
    return best, count, tuple(sorted(blocks))


__all__ = ["NO_CONTACT", "_between", "unit_thickness"]
