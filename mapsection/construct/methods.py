"""The construction methods, chosen from a table: how each reads a block's dips, groups
them into dip domains and fits the block's model.

Both models satisfy :class:`BlockModel`: stratigraphic depth at ground points and
the horizons at any stratigraphic depth, which is all the build needs from them.

* ``"kink"``: kink-band / dip-domain construction (Suppe 1985),
  :mod:`mapsection.construct.kink`.
* ``"arc"``: circular arcs between dip domains (Busk 1929),
  :mod:`mapsection.construct.arc`.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Protocol

import numpy as np

from ..angles import wrap180
from ..notes import Notes
from .arc import ArcModel
from .blocks import DipSet, FaultBlock
from .constraints import Constraints
from .domains import Domain, group_domains
from .frame import SectionFrame
from .kink import KinkModel, fit_kink


class BlockModel(Protocol):
    """What the build needs of a fitted block, whatever the method."""

    def depth_at(self, distance, elevation) -> np.ndarray:
        """Stratigraphic depth (metres below the top of the column) at ground points."""

    def horizon_pieces(self, s: float) -> list[np.ndarray]:
        """The drawn pieces of the horizon at stratigraphic depth ``s``."""

    def horizon_path(self, s: float) -> np.ndarray:
        """The whole horizon at depth ``s`` (for the unit polygons)."""

    def axial_surfaces(self) -> list[tuple[np.ndarray, float, float, float]]:
        """Axial surfaces as (points, ground distance, dip on the left, dip on the right)."""


@dataclass(frozen=True, eq=False)
class BlockSetting:
    """What every block of one section is fitted in: the frame, the ground, the column's
    levels (``levels``, stratigraphic depths of the horizons ``names``), the thinnest
    unit (``scale``), the dip tolerance and the section's notes."""

    frame: SectionFrame
    ground: Callable
    scale: float
    levels: np.ndarray
    names: list[str]
    tolerance: float
    notes: Notes


@dataclass(frozen=True)
class Method:
    """One construction method: ``prepare`` gives a block's dips as the method uses them,
    ``group`` makes its dip domains, ``fit`` positions the block's model."""

    prepare: Callable[[DipSet, Callable], DipSet]
    group: Callable[[DipSet, float], list[Domain]]
    fit: Callable[[FaultBlock, BlockSetting], BlockModel]


def _as_measured(dips: DipSet, ground: Callable) -> DipSet:
    return dips


def _weighted_domains(dips: DipSet, tolerance: float) -> list[Domain]:
    return group_domains(dips.distance, dips.phi, dips.weight, tolerance)


def _fit_kink(block: FaultBlock, st: BlockSetting) -> KinkModel:
    model = fit_kink(list(block.domains), block.constraints, st.ground, st.frame, st.scale,
                     st.notes)
    _log_kink(model, block.constraints, block.index, st.notes)
    return model


def _log_kink(model: KinkModel, cons: Constraints, b: int, notes: Notes) -> None:
    k = np.searchsorted(model.hinges, cons.distance)
    own = np.bincount(k[cons.is_contact], minlength=len(model.domains))
    for i, dm in enumerate(model.domains):
        if own[i] == 0 and len(model.domains) > 1:
            notes.log(f"block {b}: dip domain {dm.start:.0f}-{dm.end:.0f} m (dip {dm.dip:.1f}°) "
                      "has no map contact of its own: positioned from its neighbours "
                      "(continuity across its axial surfaces, kept inside their gaps)")
    for i, h in enumerate(model.hinges):
        lo, hi = model.domains[i].end, model.domains[i + 1].start
        notes.log(f"block {b}: axial surface between dips {model.domains[i].dip:.1f}° and "
                  f"{model.domains[i + 1].dip:.1f}° meets the ground at {h:.0f} m "
                  f"(gap {lo:.0f}-{hi:.0f} m, placed by the contacts)")


# Busk: dips grouped into domains as for the kink method (dips at one distance averaged);
# straight beds within a domain, one arc tangent to both limbs between domains.
def _merge_close(dips: DipSet, ground: Callable, tol: float = 1.0) -> DipSet:
    """Dips less than ``tol`` metres apart along the line are averaged (Busk needs one
    normal per position); a dip without elevation is put on the ground."""
    d, z, phi, w = dips.distance, dips.elevation, dips.phi, dips.weight
    if len(d) == 0:
        return dips
    group = np.concatenate([[0], np.cumsum(np.diff(d) > tol)])
    n = group[-1] + 1
    sw = np.bincount(group, w, n)
    ref = phi[np.searchsorted(group, np.arange(n))]
    rel = wrap180(phi - ref[group])
    pm = wrap180(ref + np.bincount(group, w * rel, n) / sw)
    dd, zz = np.bincount(group, w * d, n) / sw, np.bincount(group, w * z, n) / sw
    return DipSet(dd, np.where(np.isfinite(zz), zz, ground(dd)), pm, sw)


def _position_domains(dips: DipSet, tolerance: float) -> list[Domain]:
    """Busk's domains: one dip per position, each counted once."""
    return group_domains(dips.distance, dips.phi, np.ones(len(dips)), tolerance)


def _fit_arc(block: FaultBlock, st: BlockSetting) -> ArcModel:
    ds = block.dips
    return ArcModel(ds.distance, ds.elevation, ds.phi, block.constraints, st.frame, st.levels,
                    st.names, st.notes, domains=list(block.domains), ground=st.ground)


METHOD_TABLE: dict[str, Method] = {
    "kink": Method(_as_measured, _weighted_domains, _fit_kink),
    "arc": Method(_merge_close, _position_domains, _fit_arc),
}

__all__ = ["METHOD_TABLE", "BlockModel", "BlockSetting", "Method"]
