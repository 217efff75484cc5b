"""A thrust's hanging wall drafted as a fault-bend fold (Suppe 1983, Geometry and
kinematics of fault-bend folding, American Journal of Science 283).

Over a thrust that steps up from a lower flat (its detachment) along a ramp, Suppe's
first-mode fold has, from the hinterland toward the foreland, the regional beds parallel
to the flat, the back limb parallel to the ramp between axial surface ``A`` (pinned at
the lower bend) and ``A'`` (the crest's hinge, carried up the ramp by the slip), and the
crest parallel to the flat again; both axial surfaces bisect the beds either side (bed
thickness kept, Suppe 1983; :mod:`mapsection.models.fbf`). Where the ramp reaches the
ground, that is what the hanging wall shows along the line; the front limb lies beyond
the ramp's top, above the ground.

Given the fault in the section (its ramp and lower flat), the fold has two unknowns: the
slip ``s`` (where ``A'`` lies: ``s`` up the ramp from the lower bend) and the level of the
beds. Both are solved by least squares over the hanging wall's map contacts and dips (the
level in closed form for each slip, the slip by a search over the ramp's length), so the
crest hinge is placed by the model where the map has no contact near it. The fold is a
dip-domain (kink) model with fixed dips, drawn by :class:`mapsection.construct.kink.KinkModel`.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np
from scipy.optimize import minimize_scalar
from shapely.geometry import LineString

from ..angles import wrap180
from ..notes import Notes
from .blocks import FaultBlock
from .domains import Domain, unit_vectors
from .faults import FaultLine
from .frame import SectionFrame
from .kink import KinkModel

if TYPE_CHECKING:  # pragma: no cover - typing only
    from ..topo_profile import Profile
    from .methods import BlockModel, BlockSetting


@dataclass(frozen=True)
class FaultBendFit:
    """The fitted fold: ``slip`` (m, up the ramp; ``resolved`` False when the crest has
    left the ground and the fit only bounds it from below), the hinges where the axial
    surfaces meet the ground (``hinge_a``: back syncline, ``hinge_crest``: the crest's
    anticline, NaN when not on the ground), and the misfits."""

    slip: float
    resolved: bool
    hinge_a: float
    hinge_crest: float
    contact_rms: float
    dip_rms: float
    n_contacts: int
    n_dips: int
    ramp_dip: float


def _travel(v: np.ndarray) -> float:
    """Travel angle (degrees) of upright beds parallel to direction ``v``."""
    v = v if v[0] >= 0 else -v
    return float(np.degrees(np.arctan2(v[1], v[0])))


def _ground_hit(point: np.ndarray, direction: np.ndarray, ground_line: LineString,
                reach: float) -> float:
    """Distance where the line through ``point`` along ``direction`` (upward) meets the
    ground; NaN if ``point`` lies above the ground or the line never meets it."""
    ray = LineString([point, point + reach * direction])
    hit = ray.intersection(ground_line)
    if hit.is_empty:
        return float("nan")
    pts = np.asarray([hit.coords[0]] if hit.geom_type == "Point" else
                     [g.coords[0] for g in getattr(hit, "geoms", [])])
    if not len(pts):
        return float("nan")
    return float(pts[np.argmin(np.hypot(*(pts - point).T)), 0])


class _Geometry:
    """The fault's lower bend, its ramp and flat directions, and the fold's dips."""

    def __init__(self, fl: FaultLine, ground: Callable, frame: SectionFrame,
                 ground_line: LineString) -> None:
        self.bend = np.asarray(fl.path[1], float)
        self.up = -np.asarray(fl.down, float)  # up the ramp, toward the foreland
        flat = np.asarray(fl.path[2], float) - self.bend  # under the hanging wall
        self.flat = flat / float(np.hypot(*flat))
        self.ground, self.ground_line, self.frame = ground, ground_line, frame
        self.phi_flat = _travel(self.flat)
        self.phi_ramp = _travel(self.up)
        self.ramp_dip = abs(float(wrap180(self.phi_ramp - self.phi_flat)))
        t, _ = unit_vectors([self.phi_flat, self.phi_ramp])
        axis = t[0] - t[1]  # the bisecting axial surface (kink locus S_flat = S_ramp)
        self.axis = axis / float(np.hypot(*axis)) * (1.0 if axis[1] > 0 else -1.0)
        self.transport_right = bool(self.up[0] > 0)
        self.ground_length = float(np.hypot(*(fl.p0 - self.bend)))
        self.hinge_a = _ground_hit(self.bend, self.axis, ground_line, frame.size * 4)

    def hinge_crest(self, slip: float) -> float:
        if slip >= self.ground_length:
            return float("nan")
        return _ground_hit(self.bend + slip * self.up, self.axis, self.ground_line,
                           self.frame.size * 4)

    def domains_and_hinges(self, slip: float) -> tuple[list[float], list[float]]:
        """The fold's travel angles and ground hinges, ordered by distance."""
        phis = [self.phi_flat, self.phi_ramp]
        hinges = [self.hinge_a]
        hc = self.hinge_crest(slip)
        if np.isfinite(hc):
            phis.append(self.phi_flat)
            hinges.append(hc)
        if not self.transport_right:  # the hinterland lies toward increasing distance
            phis, hinges = phis[::-1], hinges[::-1]
        return phis, hinges


def _offsets(phis: list[float], hinges: list[float], ground: Callable) -> np.ndarray:
    """Each domain's offset relative to the first (continuity across the axial surfaces
    through the ground hinges)."""
    _, n = unit_vectors(phis)
    c = [0.0]
    for k, h in enumerate(hinges):
        p = np.array([h, float(ground(h))])
        c.append(c[-1] - float((n[k] - n[k + 1]) @ p))
    return np.array(c)


def fit_fault_bend(block: FaultBlock, fl: FaultLine, ground: Callable, frame: SectionFrame,
                   ground_line: LineString, scale: float, tolerance: float, notes: Notes
                   ) -> tuple[KinkModel, list[Domain], FaultBendFit] | None:
    """The hanging wall ``block`` of thrust ``fl`` (a ramp bending into its lower flat) as
    the Suppe (1983) fault-bend fold that best fits its contacts and dips.

    Parameters
    ----------
    block
        The hanging-wall block (its dips and contacts).
    fl
        The thrust: ``fl.kinds`` must start ramp, flat (a sharp lower bend).
    ground, frame, ground_line
        The ground function, the section's frame and the ground as a line.
    scale
        The thinnest unit's thickness (m): contact misfits are weighed against 5 % of it
        (the tool's default); dips against ``tolerance`` degrees.
    tolerance, notes
        The dip tolerance (degrees) and the section's notes.

    Returns
    -------
    tuple or None
        The fold as a :class:`KinkModel`, its dip domains and the :class:`FaultBendFit`;
        None when the fault has no ramp and flat.

    Examples
    --------
    >>> model, domains, fit = fit_fault_bend(block, fl, ground, frame, ground_line,
    ...                                      100.0, 5.0, notes)  # doctest: +SKIP
    >>> fit.slip, fit.resolved  # doctest: +SKIP
    """
    if len(fl.kinds) < 2 or fl.kinds[0] != "ramp" or fl.kinds[1] != "flat":
        return None
    geo = _Geometry(fl, ground, frame, ground_line)
    cons = block.constraints  # map contacts (weight 1), else the block's fallbacks
    real = np.asarray(cons.is_contact, bool)
    dips = block.dips
    misfit = _Misfit(geo, ground, cons, dips, max(0.05 * scale, 1.0), max(tolerance, 1.0))
    slip = _best_slip(misfit, geo.ground_length)
    cost, phis, hinges, c, res_c, res_d = misfit(slip)
    resolved = np.isfinite(geo.hinge_crest(slip))
    if not resolved:
        slip = geo.ground_length
    hz = np.array([float(ground(h)) for h in hinges])
    domains = _fold_domains(phis, hinges, dips.distance, block)
    model = KinkModel(domains, c, np.asarray(hinges, float), hz, frame, notes)
    fit = FaultBendFit(slip, bool(resolved), geo.hinge_a,
                       geo.hinge_crest(slip) if resolved else float("nan"),
                       float(np.sqrt(np.mean(res_c[real] ** 2))) if real.any() else float("nan"),
                       float(np.sqrt(np.mean(res_d ** 2))) if len(res_d) else float("nan"),
                       int(real.sum()), int(len(dips)), geo.ramp_dip)
    return model, domains, fit


class _Misfit:
    """The weighted misfit of the fold at a slip to the block's contacts (against
    ``sig_c`` metres) and dips (against ``sig_d`` degrees)."""

    def __init__(self, geo: _Geometry, ground: Callable, cons, dips, sig_c: float,
                 sig_d: float) -> None:
        self.geo, self.ground, self.cons, self.dips = geo, ground, cons, dips
        self.w = np.asarray(cons.weight, float)
        self.p = np.column_stack([cons.distance, cons.elevation])
        self.sig_c, self.sig_d = sig_c, sig_d

    def __call__(self, slip: float):
        """(cost, travel angles, hinges, domain offsets, contact and dip residuals)."""
        cons, dips, w = self.cons, self.dips, self.w
        phis, hinges = self.geo.domains_and_hinges(slip)
        rel = _offsets(phis, hinges, self.ground)
        _, n = unit_vectors(phis)
        k = np.searchsorted(hinges, cons.distance)
        pred = rel[k] - np.einsum("ij,ij->i", n[k], self.p)
        c0 = float(np.sum(w * (cons.depth - pred)) / np.sum(w)) if len(cons) else 0.0
        res_c = pred + c0 - cons.depth
        kd = np.searchsorted(hinges, dips.distance)
        res_d = wrap180(dips.phi - np.asarray(phis)[kd])
        cost = float(np.sum(w * (res_c / self.sig_c) ** 2)
                     + np.sum(dips.weight * (res_d / self.sig_d) ** 2))
        return cost, phis, hinges, rel + c0, res_c, res_d


def _best_slip(misfit: _Misfit, top: float) -> float:
    """The slip (0 to ``top``) of least misfit: a grid of 801, refined around its best."""
    grid = np.linspace(0.0, top, 801)
    costs = np.array([misfit(s)[0] for s in grid])
    i = int(np.argmin(costs))
    step = grid[1] - grid[0]
    sol = minimize_scalar(lambda s: misfit(s)[0], bounds=(max(grid[i] - step, 0.0),
                                                          min(grid[i] + step, top)),
                          method="bounded", options={"xatol": 1e-3})
    return float(sol.x) if sol.fun <= costs[i] else float(grid[i])


def _fold_domains(phis: list[float], hinges: list[float], dip_distance: np.ndarray,
                  block: FaultBlock) -> list[Domain]:
    """The fold's dip domains, each spanning its dips (else the stretch between hinges)."""
    kd = np.searchsorted(hinges, dip_distance)
    domains = []
    for k, phi in enumerate(phis):
        mine = dip_distance[kd == k]
        lo = hinges[k - 1] if k > 0 else block.start
        hi = hinges[k] if k < len(hinges) else block.end
        start, end = (float(mine.min()), float(mine.max())) if len(mine) else (lo, hi)
        domains.append(Domain(start, end, float(phi), int(len(mine))))
    return domains


def log_fit(fit: FaultBendFit, block: FaultBlock, name: str, notes: Notes) -> None:
    """What the fold model placed, for build.log."""
    how = (f"slip {fit.slip:.0f} m" if fit.resolved else
           f"slip at least {fit.slip:.0f} m (the crest has left the ground: not resolved)")
    notes.log(f"fault {name}: hanging wall (block {block.index}) drafted as a Suppe (1983) "
              f"fault-bend fold over its {fit.ramp_dip:.1f}° ramp: {how}, by least squares "
              f"over {fit.n_contacts} contact(s) and {fit.n_dips} dip(s) (contact RMS "
              f"{fit.contact_rms:.1f} m, dip RMS {fit.dip_rms:.1f}°); it replaces the "
              "block's dip domains above")
    cons = block.constraints.subset(block.constraints.is_contact)
    for label, h in (("back syncline (axial surface A, from the fault's lower bend)",
                      fit.hinge_a),
                     (f"crest anticline (axial surface A', {fit.slip:.0f} m up the ramp)",
                      fit.hinge_crest)):
        if not np.isfinite(h):
            continue
        near = cons.distance[np.abs(cons.distance - h) <= 0.5 * abs(block.end - block.start)]
        left = block.dips.distance[block.dips.distance < h]
        right = block.dips.distance[block.dips.distance > h]
        lo = float(left.max()) if len(left) else block.start
        hi = float(right.min()) if len(right) else block.end
        inside = near[(near > lo) & (near < hi)]
        gap = (f"no map contact in its gap {lo:.0f}-{hi:.0f} m" if not len(inside) else
               f"{len(inside)} map contact(s) in its gap {lo:.0f}-{hi:.0f} m")
        notes.log(f"fault {name}: hinge of the {label} meets the ground at {h:.0f} m, "
                  f"placed by the fault-bend fold model ({gap})")


def fault_bend_folds(faults: list[FaultLine], blocks: list[FaultBlock],
                      models: list[BlockModel], st: BlockSetting, profile: Profile) -> None:
    """Hanging walls drafted as Suppe (1983) fault-bend folds where the project asks for it
    (``fold = "fault-bend"``); ``blocks`` and ``models`` are updated in place. A hanging
    wall that does not fit the model (dips or contacts off by more than the tolerances)
    keeps its own construction, with a warning."""
    wanted = [(k, fl) for k, fl in enumerate(faults)
              if fl.setting is not None and fl.setting.fold == "fault-bend"]
    if not wanted:
        return
    d, z = np.asarray(profile.distance, float), np.asarray(profile.z, float)
    ok = np.isfinite(d) & np.isfinite(z)
    far = st.frame.size * 4
    ground_line = LineString(np.column_stack([np.concatenate([[d[ok][0] - far], d[ok],
                                                              [d[ok][-1] + far]]),
                                              np.concatenate([[z[ok][0]], z[ok],
                                                              [z[ok][-1]]])]))
    for k, fl in wanted:
        hw = k + 1 if fl.hanging_wall_right else k
        out = fit_fault_bend(blocks[hw], fl, st.ground, st.frame, ground_line, st.scale,
                             st.tolerance, st.notes)
        if out is None:
            st.notes.warn(f"fault {fl.name}: no ramp and flat in the section: the hanging wall "
                          "is drafted from its own dips, not as a fault-bend fold")
            continue
        model, domains, fit = out
        bad = (np.isfinite(fit.dip_rms) and fit.dip_rms > st.tolerance) or (
            np.isfinite(fit.contact_rms) and fit.contact_rms > 0.15 * st.scale)
        if bad:
            st.notes.warn(f"fault {fl.name}: the hanging wall does not fit a fault-bend fold "
                          f"(dip RMS {fit.dip_rms:.1f}°, contact RMS {fit.contact_rms:.0f} m): "
                          "drafted from its own dips")
            continue
        models[hw] = model
        blocks[hw] = dataclasses.replace(blocks[hw], domains=tuple(domains))
        log_fit(fit, blocks[hw], fl.name, st.notes)


__all__ = ["FaultBendFit", "fault_bend_folds", "fit_fault_bend", "log_fit"]
