"""The eroded part of a hanging wall carried up the fault from the footwall.

A hanging wall moved rigidly along a planar fault is the footwall's geometry
translated by the slip: every hanging-wall cutoff is its footwall cutoff moved up
the fault by the slip (Dahlstrom 1969, Balanced cross sections, Can. J. Earth Sci.
6; Woodward, Boyer & Suppe 1989, Balanced geological cross-sections, AGU Short
Course 6). Above the ground, beyond the fault's ground point, the hanging wall has
no dips of its own: left to itself it carries its last dip domain on until the
fault's upward projection, so a young horizon cut there misses an axial surface the
footwall's dips do show (the footwall's cutoff lies past that axial surface, the
hanging wall's would not).

Where the dip domains either side of a planar fault are one limb cut by the fault
(:func:`mapsection.construct.blocks.pool_across_faults`), the hanging wall's beds
past the footwall's first axial surface, carried up the fault by the slip the
horizons cut on that limb measure, are the footwall's beds so moved. In that pooled
limb both walls' beds lie on one line once moved, so the join is seamless; a level
where they do not (or where the carried axial surface would fall under the hanging
wall's own ground) keeps the hanging wall's own construction.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from shapely.geometry import LineString, Point

from ..angles import wrap180
from .blocks import FaultBlock
from .domains import unit_vectors
from .fault_regions import cutoff_along
from .faults import FaultLine
from .methods import BlockModel, BlockSetting

_STRAIGHT_RAD = 1e-4  # segments within this angle of the limb's beds are on the limb


@dataclass(eq=False)
class CarriedModel:
    """A hanging wall's model whose eroded part past the footwall's first axial surface
    is the footwall's, moved up the fault by ``shift`` (distance, elevation; metres).

    ``t``: the shared limb's bed direction, pointing to the side the footwall's beds are
    carried from; ``ground``, ``p0``: the ground and the fault's ground point; ``tol``:
    metres within which the two walls' beds must coincide on the shared limb.
    """

    own: BlockModel
    footwall: BlockModel
    shift: np.ndarray
    t: np.ndarray
    ground: Callable
    p0: np.ndarray
    tol: float

    def depth_at(self, distance, elevation) -> np.ndarray:
        return self.own.depth_at(distance, elevation)

    def horizon_path(self, s: float) -> np.ndarray:
        own = np.asarray(self.own.horizon_path(s), float)
        out = self._splice(own, np.asarray(self.footwall.horizon_path(s), float) + self.shift)
        return own if out is None else out

    def horizon_pieces(self, s: float) -> list[np.ndarray]:
        own = [np.asarray(p, float) for p in self.own.horizon_pieces(s)]
        car = [np.asarray(p, float) + self.shift for p in self.footwall.horizon_pieces(s)]
        if not own or not car:
            return own
        own.sort(key=lambda p: float(np.mean(p @ self.t)))
        car.sort(key=lambda p: float(np.mean(p @ self.t)))
        out = self._splice(own[-1], car[0])
        return own if out is None else [*own[:-1], out, *car[1:]]

    def axial_surfaces(self) -> list[tuple[np.ndarray, float, float, float]]:
        return self.own.axial_surfaces()

    def _splice(self, own: np.ndarray, car: np.ndarray) -> np.ndarray | None:
        """The hanging wall's own beds up to the carried footwall's first bend, the carried
        beds beyond it; None where the two do not meet on the shared limb."""
        reverse = len(own) > 1 and float((own[-1] - own[0]) @ self.t) < 0
        o = own[::-1] if reverse else own
        c = car[::-1] if float((car[-1] - car[0]) @ self.t) < 0 else car
        j = _first_bend(c, self.t)
        i = _last_bend(o, self.t)
        if j is None or i is None:
            return None  # the footwall carries no axial surface, or the wall ends off the limb
        f1 = c[j]
        n = np.array([-self.t[1], self.t[0]])
        if abs(float((f1 - o[i]) @ n)) > self.tol or float((f1 - o[i]) @ self.t) < -self.tol:
            return None  # not on one line, or the wall's own bend lies beyond the carried one
        side = np.sign(self.t[0]) if abs(self.t[0]) > 1e-12 else 1.0
        beyond = (f1[0] - self.p0[0]) * side >= 0
        if not beyond and float(f1[1]) <= float(self.ground(np.array([f1[0]]))[0]):
            return None  # under the hanging wall's own ground: its own dips rule there
        out = np.vstack([o[:i + 1], f1[None, :], c[j + 1:]])
        return out[::-1] if reverse else out


def _cross(a: np.ndarray, b: np.ndarray) -> float:
    return float(a[0] * b[1] - a[1] * b[0])


def _direction_ok(seg: np.ndarray, t: np.ndarray) -> bool:
    n = float(np.hypot(*seg))
    if n <= 1e-9:
        return True
    return abs(_cross(t, seg / n)) < _STRAIGHT_RAD and float(seg @ t) > 0


def _first_bend(c: np.ndarray, t: np.ndarray) -> int | None:
    """Index of the vertex where the path (ordered along ``t``) first leaves the limb."""
    if len(c) < 3 or not _direction_ok(c[1] - c[0], t):
        return None
    for j in range(1, len(c) - 1):
        if not _direction_ok(c[j + 1] - c[j], t):
            return j
    return None


def _last_bend(o: np.ndarray, t: np.ndarray) -> int | None:
    """Index of the vertex where the path (ordered along ``t``) last joins the limb."""
    if len(o) < 2 or not _direction_ok(o[-1] - o[-2], t):
        return None
    for i in range(len(o) - 2, 0, -1):
        if not _direction_ok(o[i] - o[i - 1], t):
            return i
    return 0


def carry_hanging_walls(faults: list[FaultLine], blocks: list[FaultBlock],
                        models: list[BlockModel], st: BlockSetting,
                        skip: frozenset[int] = frozenset()) -> list[BlockModel]:
    """Each hanging wall of a planar fault whose limb the fault cuts (one dip domain either
    side, :func:`~mapsection.construct.blocks.pool_across_faults`) gets its eroded beds
    past the footwall's first axial surface from the footwall, carried up the fault by the
    slip measured where both walls' beds lie on that limb.

    Parameters
    ----------
    faults
        The section's faults (fault ``k`` between blocks ``k`` and ``k + 1``).
    blocks, models
        The fault blocks and their fitted models.
    st
        The blocks' common setting (frame, ground, levels, notes).
    skip
        Indices of faults left alone (older faults cut by younger ones).

    Returns
    -------
    list
        The models, hanging walls so carried wrapped in :class:`CarriedModel`.

    Examples
    --------
    >>> models = carry_hanging_walls(faults, blocks, models, setting)  # doctest: +SKIP
    """
    out = list(models)
    reach = st.frame.size * 4
    for k, fl in enumerate(faults):
        if k in skip or fl.kinds != ("ramp",) or (
                fl.setting is not None and (fl.setting.detachment is not None
                                            or fl.setting.fold is not None)):
            continue
        hw, fw = (k + 1, k) if fl.hanging_wall_right else (k, k + 1)
        a, b = blocks[hw], blocks[fw]
        if a.borrowed or b.borrowed or not a.domains or not b.domains:
            continue
        da = a.domains[0] if fl.hanging_wall_right else a.domains[-1]
        db = b.domains[-1] if fl.hanging_wall_right else b.domains[0]
        if abs(float(wrap180(da.phi - db.phi))) > 1e-9:
            continue  # not one limb cut by the fault: the walls' beds need not line up
        t, _ = unit_vectors([da.phi])
        t = t[0] * (1.0 if t[0][0] * fl.up[0] >= 0 else -1.0)
        slip = _slip_on_limb(fl, out[hw], out[fw], t, st, reach)
        if slip is None:
            continue
        out[hw] = CarriedModel(out[hw], out[fw], slip * fl.up, t, st.ground, fl.p0,
                               max(1.0, 0.01 * st.scale))
        st.notes.log(f"fault {fl.name}: one limb cut by a planar fault: the hanging wall's "
                     "eroded beds past the footwall's first axial surface drawn as the "
                     f"footwall's carried {slip:.0f} m up the fault (the separation of the "
                     "horizons both walls hold on that limb; rigid hanging wall, Dahlstrom "
                     "1969)")
    return out


def _slip_on_limb(fl: FaultLine, hw: BlockModel, fw: BlockModel, t: np.ndarray,
                 st: BlockSetting, reach: float) -> float | None:
    """The separation of the horizons cut on the shared limb on both walls (their median:
    on one straight limb they agree), or None where no horizon is so cut."""
    line = fl.full(reach)
    s0 = line.project(Point(float(fl.p0[0]), float(fl.p0[1])))
    seps = []
    for s in st.levels:
        cut = []
        for m in (hw, fw):
            pieces = [LineString(p) for p in m.horizon_pieces(float(s)) if len(p) >= 2]
            u = cutoff_along(line, pieces, s0)
            if u is None or not _on_limb(pieces, line.interpolate(u), t):
                break
            cut.append(u)
        if len(cut) == 2:
            seps.append(cut[1] - cut[0])
    return float(np.median(seps)) if seps else None


def _on_limb(pieces: list[LineString], q: Point, t: np.ndarray) -> bool:
    """Whether the bed through ``q`` runs along ``t`` there."""
    piece = min(pieces, key=lambda g: g.distance(q))
    u = piece.project(q)
    a = np.asarray(piece.interpolate(max(u - 1.0, 0.0)).coords[0])
    b = np.asarray(piece.interpolate(min(u + 1.0, piece.length)).coords[0])
    d = b - a
    n = float(np.hypot(*d))
    return n > 0 and abs(_cross(t, d / n)) < 1e-3


__all__ = ["CarriedModel", "carry_hanging_walls"]
