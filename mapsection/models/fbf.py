"""Fault-bend folding after Suppe (1983, Geometry and kinematics of fault-bend
folding, American Journal of Science 283).

Two parts:

* the angle relations of mode-I fault-bend folding: the fault bend angle ``phi``,
  the cutoff angle ``theta`` of the beds against the fault below the bend and the
  axial angle ``gamma`` (the angle between the beds and the axial surface, the
  same on both sides because bed thickness is kept);
* a forward model of a flat-ramp-flat thrust: the hanging-wall horizons after a
  slip, by kink-band migration through axial surfaces pinned to the fault bends.

The forward model moves every hanging-wall point with the velocity of the dip
domain it is in (parallel to the fault segment beneath it), crossing the axial
surfaces exactly. The velocities across each axial surface keep the normal
component continuous (no gaps, no overlaps), and the axial angles come from
Suppe's equation, so the beds keep their length and thickness (Dahlstrom 1969)
and the area is kept.

All angles in the public functions are degrees. The construction (a hanging wall drafted
as a fault-bend fold, :mod:`mapsection.construct.fbf`) and the checks
(:mod:`mapsection.checks.fbf`) share this module.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np
from scipy.optimize import brentq, minimize_scalar
from shapely.geometry import LineString

from ..errors import ParameterError

__all__ = [
    "FBFModel",
    "FBFHorizon",
    "ModelAxialSurface",
    "axial_angle",
    "fault_bend_angle",
    "slip_ratio",
    "front_limb_dip",
    "fault_bend_fold",
]


def _phi_rad(gamma: np.ndarray | float, theta: float) -> np.ndarray:
    """Suppe's (1983) mode-I equation, radians: the bend angle for a given axial angle."""
    g = np.asarray(gamma, float)
    a = np.sin(2.0 * g - theta) - np.sin(theta)
    num = -np.sin(g - theta) * a
    den = np.cos(g - theta) * a - np.sin(g)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.arctan(num / den)


def fault_bend_angle(theta: float, gamma: float) -> float:
    """Fault bend angle phi (degrees) for cutoff angle ``theta`` and axial angle ``gamma``.

    phi = atan{ -sin(gamma - theta) [sin(2 gamma - theta) - sin theta] /
                ( cos(gamma - theta) [sin(2 gamma - theta) - sin theta] - sin gamma ) }
    (Suppe 1983, mode-I fault-bend folding).
    """
    return float(np.degrees(_phi_rad(np.radians(gamma), np.radians(theta))))


def axial_angle(theta: float, phi: float | None = None) -> float:
    """Axial angle gamma (degrees) of a mode-I fault-bend fold (Suppe 1983).

    ``theta`` is the cutoff angle of the beds against the fault below the bend,
    ``phi`` the fault bend angle; for the bend at the top of a ramp that steps up
    from a flat (beds parallel to the flat), ``phi = theta`` (the default).

    Of the two roots of Suppe's equation in (theta, 90], the one on the branch
    that starts at gamma = 90 for phi = 0 (no fold) is returned: the first mode,
    with the gentler front limb. The two roots merge at theta = phi = 30 degrees,
    gamma = 60 degrees; steeper ramps have no mode-I solution (ParameterError).
    """
    if phi is None:
        phi = theta
    if not (0.0 < theta < 90.0) or not (0.0 < phi < 90.0):
        raise ParameterError(f"fault-bend fold: cutoff angle {theta:g} and bend angle {phi:g} "
                             "must lie between 0 and 90 degrees")
    t, p = np.radians(theta), np.radians(phi)
    top = np.pi / 2.0

    def g_(x):
        return float(_phi_rad(x, t)) - p

    grid = np.linspace(top, t + 1e-9, 4000)  # from 90 degrees downward
    vals = _phi_rad(grid, t) - p
    # Walk down from 90 degrees along the continuous branch (arctan jumps by ~pi at poles).
    jumps = np.abs(np.diff(vals)) > 1.0
    stop = int(np.argmax(jumps)) if jumps.any() else len(grid) - 1
    branch, bvals = grid[: stop + 1], vals[: stop + 1]
    sign_change = np.nonzero((bvals[1:] >= 0.0) & (bvals[:-1] < 0.0))[0]
    if len(sign_change):
        i = int(sign_change[0])
        return float(np.degrees(brentq(g_, branch[i + 1], branch[i], xtol=1e-14)))
    # No sign change: a double root (the limit theta = phi = 30 degrees) or no solution.
    i = int(np.argmax(bvals))
    lo, hi = branch[min(i + 1, len(branch) - 1)], branch[max(i - 1, 0)]
    res = minimize_scalar(lambda x: -g_(x), bounds=(lo, hi), method="bounded",
                          options={"xatol": 1e-12})
    if -res.fun >= -1e-7:
        return float(np.degrees(res.x))
    raise ParameterError(f"fault-bend fold: no mode-I solution for cutoff angle {theta:.1f} and "
                         f"bend angle {phi:.1f} degrees (ramps steeper than about 30 degrees "
                         "have none; Suppe 1983)")


def slip_ratio(theta: float, gamma: float, phi: float | None = None) -> float:
    """Ratio R of hanging-wall slip above to below a fault bend (Suppe 1983).

    Derived from the kinematics: each dip domain moves parallel to the fault
    segment beneath it and the component of velocity normal to the axial surface
    is the same on both sides. The fault below the bend makes the angle
    ``gamma - theta`` with the axial surface and the fault above it
    ``gamma - theta + phi``, hence

        R = sin(gamma - theta) / sin(gamma - theta + phi)

    (for a ramp stepping up from a flat, phi = theta: R = sin(gamma - theta) / sin gamma).
    """
    if phi is None:
        phi = theta
    g, t, p = np.radians([gamma, theta, phi])
    return float(np.sin(g - t) / np.sin(g - t + p))


def front_limb_dip(theta: float) -> float:
    """Front-limb dip (degrees) of a fault-bend fold over a ramp of dip ``theta`` from a flat.

    The axial surface bisects the crest (parallel to the flat) and the front
    limb, so the front limb dips 180 - 2 gamma.
    """
    return 180.0 - 2.0 * axial_angle(theta)


# --- forward model -------------------------------------------------------------


@dataclass(frozen=True)
class FBFHorizon:
    name: str
    depth_m: float  # height of the horizon above the lower flat before slip
    regional_elevation_m: float
    geometry: LineString  # section space, deformed
    fold_x: tuple[float, float]  # x range where the horizon left its regional level


@dataclass(frozen=True)
class ModelAxialSurface:
    name: str  # "A" (syncline at the lower bend), "A'" , "B", "B'" (see FBFModel)
    kind: str  # "active" (pinned to a fault bend) or "passive" (moving with the beds)
    geometry: LineString


@dataclass
class FBFModel:
    """A flat-ramp-flat thrust and its hanging-wall fold after ``slip`` (Suppe 1983).

    Axial surfaces: ``A`` pinned at the lower bend (back syncline), ``A'`` the
    back-limb anticline (passive while the slip is less than the ramp length,
    then pinned at the upper bend), ``B`` the front-limb anticline (pinned at the
    upper bend while the hanging-wall cutoffs cross it, then passive), ``B'``
    the front syncline (passive).
    """

    ramp_height_m: float
    ramp_dip: float
    slip_m: float  # slip on the lower flat (= slip on the ramp: the first bend keeps it)
    flat_elevation_m: float
    ramp_x_m: float  # distance of the lower bend
    direction: int  # +1: transport toward increasing distance, -1: toward decreasing
    gamma: float  # axial angle of the front limb (degrees)
    slip_ratio: float  # slip on the upper flat / slip on the ramp while the front limb grows
    back_limb_dip: float
    front_limb_dip: float
    fault: LineString
    horizons: list[FBFHorizon] = field(default_factory=list)
    axial_surfaces: list[ModelAxialSurface] = field(default_factory=list)

    @property
    def ramp_length_m(self) -> float:
        return self.ramp_height_m / np.sin(np.radians(self.ramp_dip))

    @property
    def fold_x(self) -> tuple[float, float]:
        lo = min(h.fold_x[0] for h in self.horizons)
        hi = max(h.fold_x[1] for h in self.horizons)
        return float(lo), float(hi)

    def horizon(self, name: str) -> FBFHorizon:
        for h in self.horizons:
            if h.name == name:
                return h
        raise KeyError(name)

    def to_dict(self) -> dict:
        return {
            "ramp_height_m": self.ramp_height_m,
            "ramp_dip": self.ramp_dip,
            "slip_m": self.slip_m,
            "flat_elevation_m": self.flat_elevation_m,
            "ramp_x_m": self.ramp_x_m,
            "direction": self.direction,
            "axial_angle_deg": self.gamma,
            "slip_ratio": self.slip_ratio,
            "back_limb_dip": self.back_limb_dip,
            "front_limb_dip": self.front_limb_dip,
            "fold_x_m": list(self.fold_x) if self.horizons else None,
        }


def _cross(d: np.ndarray, v: np.ndarray) -> np.ndarray:
    return d[0] * v[..., 1] - d[1] * v[..., 0]


def _advect(p: np.ndarray, slip: float, theta: float, gamma: float, r: float,
            h: float) -> tuple[np.ndarray, np.ndarray]:
    """Move hanging-wall points (local frame: lower bend at the origin, transport +x).

    Returns the moved points and a flag telling which left the lower flat's domain.
    """
    xb = h / np.tan(theta)
    ramp_len = h / np.sin(theta)
    d_a = np.array([-np.sin(theta / 2.0), np.cos(theta / 2.0)])  # bisector (A, A', B2)
    d_b = np.array([np.cos(gamma), np.sin(gamma)])  # front-limb axial surface B
    o_a = np.array([0.0, 0.0])
    o_b = np.array([xb, h])
    v = [np.array([1.0, 0.0]), np.array([np.cos(theta), np.sin(theta)]), np.array([r, 0.0])]

    q = p.astype(float).copy()
    left_a = _cross(d_a, q - o_a) > 0.0
    right_b = (q[:, 1] > h) & (_cross(d_b, q - o_b) < 0.0)
    dom = np.where(left_a, 0, np.where(right_b, 2, 1))
    dom0 = dom.copy()

    def run(q, dom, tau, bounds, vel):
        tau = np.full(len(q), float(tau))
        for _ in range(3):
            for k in (0, 1):
                m = (dom == k) & (tau > 0)
                if not m.any():
                    continue
                d, o = bounds[k]
                t_hit = -_cross(d, q[m] - o) / _cross(d, vel[k])
                t_hit = np.maximum(t_hit, 0.0)
                step = np.minimum(t_hit, tau[m])
                q[m] += step[:, None] * vel[k]
                tau[m] -= step
                crossed = t_hit <= step + 1e-12
                idx = np.nonzero(m)[0][crossed]
                dom[idx] = k + 1
            m = (dom == 2) & (tau > 0)
            q[m] += tau[m][:, None] * vel[2]
            tau[m] = 0.0
        return q, dom

    t1 = min(slip, ramp_len)
    q, dom = run(q, dom, t1, [(d_a, o_a), (d_b, o_b)], v)
    if slip > ramp_len:
        # The back-limb anticline A' has reached the upper bend: from now on the
        # beds arriving there are parallel to the ramp, the bend's axial surface is
        # the bisector (parallel to A) and the slip is the same on every segment.
        dom[(dom == 1) & (_cross(d_a, q - o_b) < 0.0)] = 2
        v2 = [v[0], v[1], np.array([1.0, 0.0])]
        q, dom = run(q, dom, slip - ramp_len, [(d_a, o_a), (d_a, o_b)], v2)
    # Folded or uplifted: crossed an axial surface, or rode up the ramp.
    return q, (dom != dom0) | (dom0 == 1)


@dataclass(frozen=True)
class _Frame:
    """The model's local frame (lower bend at the origin, transport +x) in the section."""

    ramp_x: float
    direction: int
    flat_elevation: float

    def to_section(self, q: np.ndarray) -> np.ndarray:
        return np.column_stack([self.ramp_x + self.direction * q[:, 0],
                                self.flat_elevation + q[:, 1]])

    def ray(self, origin: np.ndarray, d: np.ndarray, length: float) -> LineString:
        return LineString(self.to_section(np.array([origin, origin + length * d])))


def _check_model(ramp_height: float, slip: float, direction: int) -> None:
    if not (np.isfinite(ramp_height) and ramp_height > 0):
        raise ParameterError(f"fault-bend fold: ramp height must be > 0 m, got {ramp_height}")
    if not (np.isfinite(slip) and slip >= 0):
        raise ParameterError(f"fault-bend fold: slip must be >= 0 m, got {slip}")
    if direction not in (1, -1):
        raise ParameterError(f"fault-bend fold: direction must be +1 or -1, got {direction}")


def _named_depths(horizons_depths: Sequence[float] | Mapping[str, float]) \
        -> list[tuple[str, float]]:
    """(name, depth above the lower flat) of each horizon; ParameterError unless > 0."""
    if isinstance(horizons_depths, Mapping):
        named = [(str(k), float(v)) for k, v in horizons_depths.items()]
    else:
        named = [(f"h{i}", float(v)) for i, v in enumerate(horizons_depths)]
    for name, dep in named:
        if not (np.isfinite(dep) and dep > 0):
            raise ParameterError(f"fault-bend fold: horizon {name} must lie above the flat "
                                 f"(depth > 0 m), got {dep}")
    return named


def _model_horizon(name: str, dep: float, slip: float, theta: float, gamma: float, r: float,
                   h: float, frame: _Frame, step: float | None) -> FBFHorizon:
    """One hanging-wall horizon ``dep`` above the lower flat, moved by ``slip``."""
    xb = h / np.tan(theta)
    x0 = -dep * np.tan(theta / 2.0) - slip - 2.0 * h
    x1 = xb + max(dep - h, 0.0) / np.tan(gamma) + slip + 2.0 * h
    if dep < h:
        x1 = dep / np.tan(theta)  # the hanging-wall cutoff on the ramp
    ds = step or max((x1 - x0) / 4000.0, 0.25)
    xs = np.append(np.arange(x0, x1, ds), x1)
    p = np.column_stack([xs, np.full(len(xs), dep)])
    q, moved = _advect(p, slip, theta, gamma, r, h)
    pts = frame.to_section(q)
    if frame.direction < 0:
        pts = pts[::-1]
        moved = moved[::-1]
    fx = pts[moved, 0] if moved.any() else pts[:1, 0]
    geom = LineString(pts).simplify(1e-6)
    return FBFHorizon(name, dep, frame.flat_elevation + dep, geom,
                      (float(fx.min()), float(fx.max())))


def _axial_surfaces(slip: float, theta: float, gamma: float, r: float, h: float, top: float,
                    frame: _Frame) -> list[ModelAxialSurface]:
    """The axial surfaces A, A' (back limb) and B, B' (front limb) after ``slip``, up to
    ``top`` above the lower flat."""
    xb = h / np.tan(theta)
    ramp_len = h / np.sin(theta)
    t1 = min(slip, ramp_len)
    d_a = np.array([-np.sin(theta / 2.0), np.cos(theta / 2.0)])
    d_b = np.array([np.cos(gamma), np.sin(gamma)])
    bend = np.array([xb, h])
    a_prime = np.array([t1 * np.cos(theta), t1 * np.sin(theta)])
    b_shift = (slip - ramp_len) if slip > ramp_len else 0.0
    b_pos = bend + np.array([b_shift, 0.0])
    bp_pos = bend + np.array([r * t1 + b_shift, 0.0])
    ray = frame.ray
    return [
        ModelAxialSurface("A", "active", ray(np.zeros(2), d_a, top / d_a[1])),
        ModelAxialSurface("A'", "active" if slip >= ramp_len else "passive",
                          ray(a_prime, d_a, max(top - a_prime[1], 0.0) / d_a[1])),
        ModelAxialSurface("B", "passive" if slip > ramp_len else "active",
                          ray(b_pos, d_b, max(top - h, 0.0) / d_b[1])),
        ModelAxialSurface("B'", "passive", ray(bp_pos, d_b, max(top - h, 0.0) / d_b[1])),
    ]


def fault_bend_fold(ramp_height: float, ramp_dip: float, slip: float, flat_elevation: float,
                    horizons_depths: Sequence[float] | Mapping[str, float], *,
                    ramp_x: float = 0.0, direction: int = 1,
                    step: float | None = None) -> FBFModel:
    """Forward model of a fault-bend fold over a flat-ramp-flat thrust (Suppe 1983).

    For a slip less than the ramp length the anticline grows with a crest between the
    passive back-limb anticline A' and the pinned front-limb anticline B; beyond it
    the front limb stops growing and translates.

    Parameters
    ----------
    ramp_height, ramp_dip
        The ramp's height (m, > 0) and dip (degrees); it rises from the lower flat
        starting at distance ``ramp_x`` toward the transport ``direction``.
    slip
        The hanging wall's slip on the lower flat (m, >= 0).
    flat_elevation
        Elevation of the lower flat (m).
    horizons_depths
        For each hanging-wall horizon, how far above the lower flat it lies before
        slip (metres, > 0): a sequence, or a mapping name -> depth. Horizons below
        the ramp top end at their hanging-wall cutoff on the fault.
    ramp_x, direction
        Distance along the section of the lower bend (m); +1: transport toward
        increasing distance, -1: toward decreasing distance.
    step
        Sampling step of the horizons (m; default: their length / 4000, at least 0.25).

    Returns
    -------
    FBFModel
        The fault, the folded horizons and the axial surfaces in section space, with
        the model's angles (axial angle, slip ratio, limb dips).

    Examples
    --------
    >>> m = fault_bend_fold(800.0, 15.0, 1000.0, 0.0, [1200.0], ramp_x=5000.0)
    >>> [s.name for s in m.axial_surfaces]
    ['A', "A'", 'B', "B'"]
    """
    _check_model(ramp_height, slip, direction)
    gamma_deg = axial_angle(ramp_dip)
    theta, gamma = np.radians(ramp_dip), np.radians(gamma_deg)
    r = slip_ratio(ramp_dip, gamma_deg)
    h = float(ramp_height)
    xb = h / np.tan(theta)
    named = _named_depths(horizons_depths)
    frame = _Frame(ramp_x, direction, flat_elevation)
    top = max([dep for _, dep in named], default=h) + h
    horizons = [_model_horizon(name, dep, slip, theta, gamma, r, h, frame, step)
                for name, dep in named]
    surfaces = _axial_surfaces(slip, theta, gamma, r, h, top, frame)
    fault = LineString(frame.to_section(np.array([[-slip - 4 * h - top, 0.0], [0.0, 0.0],
                                                  [xb, h], [xb + slip + 4 * h + top, h]])))
    return FBFModel(h, float(ramp_dip), float(slip), float(flat_elevation), float(ramp_x),
                    int(direction), gamma_deg, r, float(ramp_dip), 180.0 - 2.0 * gamma_deg,
                    fault, horizons, surfaces)
