"""The estimate of a whole column (:func:`estimate_column`): every contact of adjacent
layered units fitted by planes in each fault block and dip domain, then every unit measured
between its top and base planes (see :mod:`mapsection.thickness`)."""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np
import shapely

from ..stratigraphy import Column, Unit
from .groups import (
    ContactGroup,
    attitude_seeds,
    closest_cluster,
    connected_pieces,
    merge_coplanar,
    refine_planes,
    stretch_planes,
)
from .mapped import contact_points, domain_label, fault_blocks, orientation_clusters
from .planes import BOOTSTRAP, DOMAIN_TOLERANCE, Elevation, pole_angle, poles_of
from .results import ColumnEstimate, ContactFit, UnitThickness
from .unit import NO_CONTACT, unit_thickness

if TYPE_CHECKING:  # pragma: no cover - typing only
    from ..attitudes import Attitudes
    from ..mapdata import MapData


def estimate_column(column: Column, map_data: MapData, elevation: Elevation,
                    attitudes: Attitudes, pixel_size: float, *,
                    tolerance: float = DOMAIN_TOLERANCE, spacing: float | None = None,
                    bootstrap: int = BOOTSTRAP, seed: int = 0) -> ColumnEstimate:
    """Every unit's thickness from the map's contacts on the DEM (see the module docstring).

    Parameters
    ----------
    column : Column
        The stratigraphic column, youngest first; only the contacts of layered units
        adjacent in it are used (cover and intrusive units are skipped: a contact with
        one is no bedding contact, and they get no thickness, kind ``"none"``).
    map_data : MapData
        The unit polygons and fault lines (in the same projected CRS as the attitudes).
    elevation : callable
        ``elevation(x, y)`` -> ground elevation (NaN off the DEM), e.g. ``Dem.sample``.
    attitudes : Attitudes
        Bedding attitudes (for the dip domains and the misfit).
    pixel_size : float
        DEM pixel size, metres: contacts are sampled at this spacing (or ``spacing``).
    tolerance : float
        Degrees between poles of one dip domain.
    bootstrap : int
        Block-bootstrap resamples for the uncertainty (0: none).
    seed : int
        Seed of the bootstrap (results are reproducible).

    Returns
    -------
    ColumnEstimate
    """
    layered = column.layered().units
    names = [u.name for u in layered]  # adjacent layered units: cover and intrusive skipped
    st = _Setting(float(spacing or pixel_size), float(pixel_size), tolerance, bootstrap,
                  np.random.default_rng(seed), elevation,
                  attitude_index(map_data, attitudes, tolerance, pixel_size))
    geoms = {n: map_data.unit_geoms[map_data.unit_names == n] for n in names}
    avoid = shapely.union_all(st.index.faults) if st.index.faults else None
    everywhere: dict[tuple[str, str], tuple[np.ndarray, np.ndarray]] = {}
    groups: dict[tuple[str, str], list[ContactGroup]] = {}
    fits: list[ContactFit] = []
    for upper, lower in zip(names[:-1], names[1:], strict=True):
        if column.unit(upper).unconformity:
            continue  # an erosion surface, not a conformable contact: it measures nothing
        x, y, run = contact_points(geoms[upper], geoms[lower], st.step, 0.5 * pixel_size,
                                   avoid, 2.0 * pixel_size)
        z = np.asarray(elevation(x, y), float) if len(x) else np.empty(0)
        ok = np.isfinite(z)
        xyz = np.column_stack([x[ok], y[ok], z[ok]])
        found, found_fits, owner = _contact_groups(upper, lower, xyz, run[ok], st)
        fits += found_fits
        everywhere[(upper, lower)] = (xyz, owner)
        groups[(upper, lower)] = found
    fit_of = {id(f.plane): f for f in fits}
    units = [_unit_of(i, layered, groups, everywhere, fit_of, geoms[name], st)
             for i, name in enumerate(names)]
    measured = {u.unit: _named_neighbours(u, names) for u in units}
    units = [measured.get(u.name) or UnitThickness(
        u.name, "none", why=f"{'an' if u.kind == 'intrusive' else 'a'} {u.kind} unit is not "
                            "a layer: it has no thickness between bedding contacts")
        for u in column.units]
    return ColumnEstimate(tuple(units), tuple(fits), st.step)


@dataclass
class AttitudeIndex:
    """The attitudes as the estimate asks for them: each one's fault block and dip-domain
    cluster, each cluster's mean pole in each block, and nearest-attitude lookups."""

    faults: list
    fault_names: object
    fault_dip_directions: object
    simplify: float
    poles: np.ndarray
    block: np.ndarray
    cluster: np.ndarray
    trees: dict  # block -> (KD-tree of its attitudes, their rows)
    means: dict  # (block, cluster) -> mean pole
    cluster_trees: dict  # (block, cluster) -> (KD-tree of its attitudes, their rows)

    def label(self, x, y) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """(block, domain cluster, nearest attitude) of points; -1 where the block has none."""
        blk = fault_blocks(x, y, self.faults, self.fault_names, self.fault_dip_directions,
                           simplify=self.simplify)
        dom = np.full(len(x), -1, int)
        near = np.full(len(x), -1, int)
        for b in dict.fromkeys(blk.tolist()):
            if b in self.trees:
                m = blk == b
                _, i = self.trees[b][0].query(np.column_stack([x[m], y[m]]))
                near[m] = self.trees[b][1][i]
                dom[m] = self.cluster[near[m]]
        return blk, dom, near

    def domain_name(self, b: str, d: int) -> str:
        return domain_label(self.poles[(self.block == b) & (self.cluster == d)]) if d >= 0 \
            else "no attitudes"

    def near_of(self, b: str, d: int, pts: np.ndarray) -> np.ndarray:
        """The attitudes of a domain nearest to points (each point's nearest, once)."""
        if (b, d) not in self.cluster_trees or not len(pts):
            return np.empty(0, int)
        tree, rows = self.cluster_trees[(b, d)]
        return np.unique(rows[tree.query(pts[:, :2])[1]])


def attitude_index(map_data: MapData, attitudes: Attitudes, tolerance: float,
                   pixel_size: float) -> AttitudeIndex:
    """The attitudes' fault blocks (the map's fault traces, simplified by a quarter pixel),
    dip-domain clusters and their mean poles, with KD-trees for the nearest ones."""
    from scipy.spatial import cKDTree

    faults = list(map_data.fault_geoms)
    rows = np.arange(len(faults))
    fnames = map_data.fault_value("name", rows) if faults else None
    fdd = map_data.fault_value("dip_direction", rows) if faults else None
    simple = 0.25 * pixel_size
    ax, ay = np.asarray(attitudes.x, float), np.asarray(attitudes.y, float)
    apoles = poles_of(attitudes.strike, attitudes.dip)
    ablock = fault_blocks(ax, ay, faults, fnames, fdd, simplify=simple)
    acluster = orientation_clusters(attitudes.strike, attitudes.dip, tolerance)
    trees = {b: (cKDTree(np.column_stack([ax[ablock == b], ay[ablock == b]])),
                 np.flatnonzero(ablock == b)) for b in dict.fromkeys(ablock.tolist())}
    # mean pole of each attitude cluster in each block
    means = {}
    for b, c in dict.fromkeys(zip(ablock.tolist(), acluster.tolist(), strict=True)):
        v = apoles[(ablock == b) & (acluster == c)].sum(axis=0)
        means[(b, c)] = v / np.linalg.norm(v)
    ctrees = {k: (cKDTree(np.column_stack([ax[m], ay[m]])), np.flatnonzero(m))
              for k in means for m in [(ablock == k[0]) & (acluster == k[1])]}
    return AttitudeIndex(faults, fnames, fdd, simple, apoles, ablock, acluster, trees, means,
                         ctrees)


@dataclass
class _Setting:
    """What every contact and unit of one estimate is measured with."""

    step: float  # metres between contact points
    pixel: float
    tolerance: float
    bootstrap: int
    rng: np.random.Generator
    elevation: Elevation
    index: AttitudeIndex


def _contact_groups(upper: str, lower: str, xyz: np.ndarray, run: np.ndarray, st: _Setting
                    ) -> tuple[list[ContactGroup], list[ContactFit], np.ndarray]:
    """The planes one contact's points fit, each in a fault block and dip domain; the fits;
    and which group owns each point (-1: none)."""
    index, pixel = st.index, st.pixel
    blk, dom, _ = index.label(xyz[:, 0], xyz[:, 1])
    seeds = []
    for b, d in dict.fromkeys(zip(blk.tolist(), dom.tolist(), strict=True)):
        m = np.flatnonzero((blk == b) & (dom == d))
        seeds += [(b, d, m[idx]) for idx, _, _ in
                  stretch_planes(xyz[m], connected_pieces(xyz[m, :2], st.step), pixel)]
    seeds += attitude_seeds(xyz, blk, index.means, pixel)
    by_domain: dict[tuple[str, int], list] = {}
    for b, _, idx, plane, keep in refine_planes(xyz, blk, seeds, pixel):
        # The plane's dip domain: the block's attitude cluster closest to it in
        # orientation; a plane far from all of them (points of two limbs, or a contact
        # bent in a hinge) measures nothing and is left out.
        d, angle = closest_cluster(plane, b, index.means)
        if angle is None or angle <= st.tolerance:
            by_domain.setdefault((b, d), []).append((idx, plane, keep))
    found: list[ContactGroup] = []
    fits: list[ContactFit] = []
    owner = np.full(len(xyz), -1, int)
    for (b, d), planes in by_domain.items():
        planes = merge_coplanar(xyz, planes, pixel)
        for k, (idx, plane, keep) in enumerate(planes):
            name = index.domain_name(b, d) + (f" #{k + 1}" if len(planes) > 1 else "")
            seen = index.near_of(b, d, xyz[idx][keep])
            mis = (float(np.mean([pole_angle(plane.normal, index.poles[i]) for i in seen]))
                   if len(seen) else None)
            owner[idx] = len(found)
            found.append(ContactGroup(upper, lower, b, d, xyz[idx], run[idx], plane, keep,
                                      name))
            fits.append(ContactFit(upper, lower, b, name, plane, int((~keep).sum()), mis,
                                   len(seen)))
    return found, fits, owner


def _unit_of(i: int, layered: tuple[Unit, ...], groups: dict, everywhere: dict, fit_of: dict,
             unit_geoms, st: _Setting) -> UnitThickness:
    """The ``i``-th layered unit's thickness between its contacts' planes."""
    names = [u.name for u in layered]
    name = names[i]
    top = groups.get((names[i - 1], name), []) if i > 0 else []
    base = groups.get((name, names[i + 1]), []) if i + 1 < len(names) else []
    above = everywhere.get((names[i - 1], name)) if i > 0 else None
    below = everywhere.get((name, names[i + 1])) if i + 1 < len(names) else None
    u = unit_thickness(name, top, base, fit_of, st.step, st.rng, st.bootstrap, unit_geoms,
                       st.elevation, st.index.label, st.tolerance, above, below)
    for side, k in (("base", i), ("top", i - 1)):  # the erosion surface measures nothing
        if k >= 0 and layered[k].unconformity and u.why:
            u = dataclasses.replace(u, why=u.why.replace(
                f"its {side} contact is not mapped",
                f"its {side} is an unconformity (an erosion surface, not a conformable "
                "contact)"))
    return u


def _named_neighbours(u: UnitThickness, names: list[str]) -> UnitThickness:
    """A unit without any mapped contact: its why names the units it was looked for with."""
    if u.kind != "none" or u.why != NO_CONTACT:
        return u
    i = names.index(u.unit)
    near = [f"{names[i - 1]} (above)"] if i > 0 else []
    near += [f"{names[i + 1]} (below)"] if i + 1 < len(names) else []
    return dataclasses.replace(u, why=f"no contact with {' or '.join(near)}, its neighbours "
                                      "among the layered units of the column, is mapped")


__all__ = ["AttitudeIndex", "attitude_index", "estimate_column"]
