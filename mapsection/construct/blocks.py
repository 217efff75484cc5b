"""Fault blocks: the stretch of section between two faults, with its own dips, dip
domains and contacts. Each block is constructed on its own (faults bound the blocks,
:mod:`mapsection.construct.faults`)."""

from __future__ import annotations

import dataclasses
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from ..angles import wrap180
from ..dips import ProjectedDips
from ..errors import ConstructionError
from ..notes import Notes
from ..topo_profile import Profile
from .constraints import Constraints
from .domains import Domain, dip_arrays, travel_angle
from .faults import FaultLine


@dataclass(frozen=True)
class DipSet:
    """Dips in section space, sorted by distance: ground distance, elevation, travel angle
    (see :mod:`mapsection.construct.domains`) and weight."""

    distance: np.ndarray
    elevation: np.ndarray
    phi: np.ndarray
    weight: np.ndarray

    def __len__(self) -> int:
        return len(self.distance)

    def subset(self, mask) -> DipSet:
        m = np.asarray(mask, bool)
        return DipSet(self.distance[m], self.elevation[m], self.phi[m], self.weight[m])

    def within(self, lo: float, hi: float) -> DipSet:
        """The dips with ``lo <= distance < hi``."""
        return self.subset((self.distance >= lo) & (self.distance < hi))

    @staticmethod
    def single(distance: float, elevation: float, phi: float) -> DipSet:
        return DipSet(np.array([distance]), np.array([elevation]), np.array([phi]),
                      np.array([1.0]))


@dataclass(frozen=True)
class FaultBlock:
    """One fault block: its stretch of ground ``start``-``end`` along the line, the dips
    and dip domains it is built from, and the constraints that position it.

    ``borrowed``: the block has no dips of its own and uses one dip borrowed from the
    nearest domain of a neighbouring block (or the section's default dip).
    """

    index: int
    start: float
    end: float
    dips: DipSet
    domains: tuple[Domain, ...]
    constraints: Constraints
    borrowed: bool = False


def section_dips(dips: ProjectedDips, notes: Notes) -> DipSet:
    """The finite dips of the corridor; poorly constrained ones (strike near the section's
    azimuth) left out unless every dip is poorly constrained (then kept, down-weighted)."""
    d, z, phi, w, poor = dip_arrays(dips)
    out = DipSet(d, z, phi, w)
    if poor.any() and not poor.all():
        notes.log(f"{int(poor.sum())} poorly constrained dip(s) (strike near the section's "
                  "azimuth) left out of the dip domains")
        out = out.subset(~poor)
    return out


def drop_fault_contacts(cons: Constraints, faults: list[FaultLine], profile: Profile,
                        notes: Notes) -> Constraints:
    """A contact where the line crosses a fault is the fault itself, not a stratigraphic
    contact: it does not position the beds."""
    if not faults or not len(cons):
        return cons
    px = float(profile.pixel_size) if np.isfinite(profile.pixel_size) else 0.0
    tol = max(px, 10.0)  # one DEM pixel: the map's contact and fault traces meet there
    fd = np.array([f.p0[0] for f in faults])
    near = np.min(np.abs(cons.distance[:, None] - fd[None, :]), axis=1) <= tol
    for i in np.flatnonzero(near):
        notes.log(f"contact {cons.before[i]}|{cons.after[i]} at {cons.distance[i]:.0f} m lies "
                  f"on a fault (within {tol:.0f} m): taken as the fault, not as a bed contact")
    return cons.subset(~near)


def split_blocks(ranges: list[tuple[float, float]], dips: DipSet, contacts: Constraints, *,
                 prepare: Callable[[DipSet], DipSet],
                 group: Callable[[DipSet], list[Domain]],
                 default_dip: float | None, ground: Callable, notes: Notes) -> list[FaultBlock]:
    """The fault blocks, each with its own dips (as ``prepare`` gives them to the method),
    dip domains (``group``) and contacts.

    A block without dips borrows the nearest neighbour's domain on its side (or the
    default dip).
    """
    own = [prepare(dips.within(lo, hi)) for lo, hi in ranges]
    domains = [group(ds) if len(ds) else [] for ds in own]
    with_dips = [i for i, ds in enumerate(own) if len(ds)]
    blocks = []
    for i, (lo, hi) in enumerate(ranges):
        ds, doms, borrowed = own[i], domains[i], False
        if not len(ds):
            mid = 0.5 * (lo + hi)
            if with_dips:
                j = min(with_dips, key=lambda j: abs(j - i))
                dm = domains[j][-1 if j < i else 0]
                phi = dm.phi
                notes.warn(f"block {i} ({lo:.0f}-{hi:.0f} m) has no dips: uses the dip "
                           f"{dm.dip:.1f}° of the nearest domain of block {j}")
            else:
                phi = float(travel_angle(default_dip, False))
            doms = [Domain(mid, mid, phi, 0)]
            ds = prepare(DipSet.single(mid, float(ground(mid)), phi))
            borrowed = True
        cons = contacts.subset((contacts.distance >= lo) & (contacts.distance < hi))
        blocks.append(FaultBlock(i, lo, hi, ds, tuple(doms), cons, borrowed))
    return blocks


def pool_across_faults(blocks: list[FaultBlock], faults: list[FaultLine], tolerance: float,
                       notes: Notes) -> list[FaultBlock]:
    """One limb cut by a planar fault: where the dip domains either side of a planar fault
    (no detachment) agree within ``tolerance``, both take their dips' weighted mean.

    A planar fault whose hanging wall moved rigidly does not change the limb's dip, so the
    two domains are one dip domain cut by the fault, and its dip is measured by the readings
    of both. Separations at the low cutoff angles of thrusts are very sensitive to the dip
    (a bed error ``e`` moves a cutoff by ``e / sin(cutoff angle)`` along the fault), and a
    mean of more readings is the better estimate. Fault-bend folds and listric faults
    rotate the beds: faults with a detachment keep their blocks' own dips.

    Parameters
    ----------
    blocks
        The fault blocks, block 0 first (as :func:`split_blocks` makes them).
    faults
        The faults between them (fault ``k`` between blocks ``k`` and ``k + 1``).
    tolerance
        Degrees: the section's dip tolerance.
    notes
        The section's notes (each pooling is logged).

    Returns
    -------
    list of FaultBlock
        The blocks, with the domains either side of such faults at their pooled dip.
    """
    out = list(blocks)
    for k, fl in enumerate(faults):
        if fl.setting is not None and fl.setting.detachment is not None:
            continue
        left, right = out[k], out[k + 1]
        if left.borrowed or right.borrowed or not left.domains or not right.domains:
            continue
        a, b = left.domains[-1], right.domains[0]
        diff = float(wrap180(b.phi - a.phi))
        if abs(diff) > tolerance or a.n_dips == 0 or b.n_dips == 0:
            continue
        phi = float(wrap180(a.phi + diff * b.n_dips / (a.n_dips + b.n_dips)))
        pooled = Domain(0.0, 0.0, phi, a.n_dips + b.n_dips)
        notes.log(f"fault {fl.name}: the dip domains either side ({a.dip:.1f}° and {b.dip:.1f}°) "
                  f"agree within {tolerance:g}°: one limb cut by the fault, drawn at "
                  f"{pooled.dip:.1f}° from its {pooled.n_dips} dips on both sides")
        out[k] = dataclasses.replace(left, domains=(*left.domains[:-1],
                                                    dataclasses.replace(a, phi=phi)))
        out[k + 1] = dataclasses.replace(right, domains=(dataclasses.replace(b, phi=phi),
                                                         *right.domains[1:]))
    return out


def neighbour_constraint(b: int, depth_at: dict[int, Callable], faults: list[FaultLine]
                         ) -> Constraints:
    """Level with a built neighbour (``depth_at[j]``, block j's depth function) at the
    shared fault's ground point."""
    for j, k in ((b - 1, b - 1), (b + 1, b)):
        if j in depth_at:
            p = faults[k].p0
            s = depth_at[j](np.array([p[0]]), np.array([p[1]]))
            return Constraints(np.array([p[0]]), np.array([p[1]]), s, np.ones(1), ("",),
                               np.zeros(1, bool), (None,), (None,))
    raise ConstructionError("no block has a map contact or a mapped unit: nothing positions "
                            "the horizons")


__all__ = ["DipSet", "FaultBlock", "drop_fault_contacts", "neighbour_constraint",
           "pool_across_faults",
           "section_dips", "split_blocks"]
