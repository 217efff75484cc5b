"""Arc construction (Busk 1929, Earth Flexures; the construction is also given in Ragan,
Structural Geology: An Introduction to Geometrical Techniques).

Each dip is drawn with its normal (the line through the dip's position, perpendicular
to the bedding there). Between two adjacent normals the beds are circular arcs centred
where the two normals meet; where the two dips are parallel the beds are straight.
Successive sectors share the normal between them, so a horizon is continuous, with a
continuous tangent, from sector to sector, and every horizon is concentric with the
others: bed thickness is kept. A horizon whose radius shrinks to nothing reaches the
centre of curvature: Busk's construction cannot carry it round the hinge, so it ends
there (its two limbs are drawn to where they meet, on the line through the centre)
and the construction says so (horizons deeper than the radius beneath an anticlinal
centre, or higher than it above a synclinal one).

On real data (several noisy dips per limb) the dips are first grouped into dip
domains exactly as the kink method groups them (same ``dip_tolerance``): within a
domain the beds are straight and parallel (Busk: straight where adjacent dips are
parallel) and one circular arc joins two successive domains across the gap between
the last dip of one and the first dip of the next. The arc's two tangent points on
the ground (where its bounding normals leave the ground) are unknowns kept inside
that gap, found with the stack's offset by least squares over the block's map
contacts, starting from the kink solution's hinges (Suppe 1985) and, where the data
leave them free, opening the arc to span the whole gap. Where adjacent dips differ by
more than the tolerance every dip is its own domain and the construction is the
classic dip-by-dip Busk chain.

On normal ``i`` (through ``Q_i``) the reference horizon (top of the column) lies at
``Q_i + lambda_i n_i``; crossing sector ``i`` keeps the radius, which gives
``lambda_{i+1} = lambda_i - mu_i + nu_i`` (``O_i = Q_i + mu_i n_i = Q_{i+1} + nu_i n_{i+1}``).
One offset per block is left, fixed by least squares over the block's contacts.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
from scipy.optimize import least_squares

from ..angles import wrap180
from ..notes import Notes
from .arc_loops import _dedupe, _trim_loops
from .arc_steps import _BandedStep, _BuskJacobian
from .constraints import Constraints
from .domains import Domain, unit_vectors
from .fitting import (
    BatchedJacobian,
    SvdSubproblem,
    best_of_starts,
    in_order,
    searchsorted_rows,
)
from .frame import SectionFrame

_STRAIGHT_DEG = 0.05  # adjacent dips closer than this are drawn as straight, parallel beds
_MIN_SPAN = 0.02  # narrowest arc, as a fraction of its gap (a sharper hinge is a kink)
# From this many unknowns (two a hinge) the Busk fit's trust-region steps are solved
# from banded equations (time linear in the hinges) instead of scipy's SVD (cubic);
# below, scipy's own least_squares, whose SVD is the cheaper there (measured: about
# even at 60-80 km of folds every 2.5 km, docs/performance.md).
_BANDED_FROM = 56


class _Chain:
    """Busk's sectors between successive normals (points ``q`` sorted by distance)."""

    def __init__(self, q: np.ndarray, phi: np.ndarray) -> None:
        self.q = np.asarray(q, float).reshape(-1, 2)
        self.phi = np.asarray(phi, float)
        self.t, self.n = unit_vectors(self.phi)
        m = len(self.q)
        k = max(m - 1, 0)
        self.centre = np.full((k, 2), np.nan)
        self.mu, self.nu = np.zeros(k), np.zeros(k)
        self.e, self.e2 = np.ones(k), np.ones(k)
        # All sectors at once (one batched 2 x 2 solve): the fit calls this for every
        # trial of its unknowns, so a loop over sectors made the fit grow with the square
        # of the number of dips.
        dphi = np.asarray(wrap180(self.phi[1:] - self.phi[:-1]), float)
        dq = self.q[1:] - self.q[:-1]
        straight = np.abs(dphi) < _STRAIGHT_DEG
        turn = np.flatnonzero(~straight)
        mu = np.zeros(k)
        nu = np.zeros(k)
        if turn.size:
            a = np.stack([self.n[turn], -self.n[turn + 1]], axis=2)  # columns n_i, -n_i+1
            sol = np.linalg.solve(a, dq[turn][:, :, None])[:, :, 0]
            mu[turn], nu[turn] = sol[:, 0], sol[:, 1]
            straight[turn] = (np.sign(mu[turn]) != np.sign(nu[turn])) | (mu[turn] == 0)
        nbar = self.n[:-1] + self.n[1:]
        self.nbar = nbar / np.hypot(nbar[:, 0], nbar[:, 1])[:, None]
        arc = ~straight
        self.kind: list[str] = ["arc" if a else "straight" for a in arc]
        self.mu[arc], self.nu[arc] = mu[arc], nu[arc]
        self.centre[arc] = self.q[:-1][arc] + mu[arc, None] * self.n[:-1][arc]
        self.e[arc], self.e2[arc] = np.sign(-mu[arc]), np.sign(-nu[arc])
        # (matmul of 1 x 2 by 2 x 1 rounds exactly as the dot product of the two vectors)
        along = np.matmul(self.nbar[:, None, :], dq[:, :, None])[:, 0, 0]
        # a chain: each sector starts where the last one ended (summed in order)
        lam = [0.0]
        for is_arc, m_i, n_i, a_i in zip(arc.tolist(), mu.tolist(), nu.tolist(),
                                         along.tolist(), strict=True):
            lam.append(lam[-1] - m_i + n_i if is_arc else lam[-1] - a_i)
        lam = np.array(lam[:m] if m else [], float)
        self.is_arc = arc
        self.lam = lam

    # --- depth field ---------------------------------------------------
    def sector_of(self, distance) -> np.ndarray:
        """-1 before the first dip, i between dips i and i+1, m-1 after the last."""
        return np.searchsorted(self.q[:, 0], np.asarray(distance, float), side="right") - 1

    def depth_at(self, distance, elevation) -> np.ndarray:
        d = np.asarray(distance, float)
        p = np.column_stack([d, np.asarray(elevation, float)])
        m = len(self.q)
        sec = self.sector_of(d)
        out = np.empty(len(d))
        for mask, k in ((sec < 0, 0), (sec >= m - 1, m - 1)):  # straight beyond the ends
            out[mask] = self.lam[k] - (p[mask] - self.q[k]) @ self.n[k]
        inner = (sec >= 0) & (sec < m - 1)
        i = sec[inner]
        pi = p[inner]
        r = np.hypot(*(pi - np.nan_to_num(self.centre[i])).T)
        arc_s = self.lam[i] - self.mu[i] - self.e[i] * r
        straight_s = self.lam[i] - np.einsum("ij,ij->i", pi - self.q[i], self.nbar[i])
        out[inner] = np.where(self.is_arc[i], arc_s, straight_s)
        return out


def _chain_depth_rows(q: np.ndarray, phi: np.ndarray, distance: np.ndarray,
                      elevation: np.ndarray) -> np.ndarray:
    """:meth:`_Chain.depth_at` for a batch of chains sharing their dips: ``q`` (B, m, 2)
    the normals' ground points of each chain, sorted by distance. Returns (B, points).

    The same sums as the chain itself, chain by chain, so that the fits can evaluate
    several perturbed chains in one call (:class:`_BuskJacobian`)."""
    return _chain_rows(q, phi, distance, elevation)[0]


def _chain_rows(q: np.ndarray, phi: np.ndarray, distance: np.ndarray,
                elevation: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """:func:`_chain_depth_rows` and the chains' reference levels on their normals
    (``lam``, (B, m): 0 on the first normal, summed sector by sector)."""
    q = np.asarray(q, float)
    bn, m = q.shape[0], q.shape[1]
    k = max(m - 1, 0)
    t, n = unit_vectors(np.asarray(phi, float))
    d = np.asarray(distance, float)
    p = np.column_stack([d, np.asarray(elevation, float)])
    dphi = np.asarray(wrap180(phi[1:] - phi[:-1]), float)
    dq = q[:, 1:] - q[:, :-1]  # (B, k, 2)
    straight = np.broadcast_to(np.abs(dphi) < _STRAIGHT_DEG, (bn, k)).copy()
    turn = np.flatnonzero(~straight[0]) if k else np.zeros(0, int)
    mu, nu = np.zeros((bn, k)), np.zeros((bn, k))
    if turn.size:
        a = np.stack([n[turn], -n[turn + 1]], axis=2)  # (T, 2, 2) columns n_i, -n_i+1
        sol = np.linalg.solve(np.broadcast_to(a, (bn, *a.shape)), dq[:, turn][..., None])[..., 0]
        mu[:, turn], nu[:, turn] = sol[..., 0], sol[..., 1]
        straight[:, turn] = (np.sign(mu[:, turn]) != np.sign(nu[:, turn])) | (mu[:, turn] == 0)
    nbar = n[:-1] + n[1:]
    nbar = nbar / np.hypot(nbar[:, 0], nbar[:, 1])[:, None]
    arc = ~straight
    mu, nu = np.where(arc, mu, 0.0), np.where(arc, nu, 0.0)
    centre = q[:, :-1] + mu[..., None] * n[None, :-1]
    e = np.where(arc, np.sign(-mu), 1.0)
    along = dq[..., 0] * nbar[:, 0] + dq[..., 1] * nbar[:, 1]
    lam = np.zeros((bn, m))
    lam[:, 1:] = np.cumsum(np.where(arc, -mu + nu, -along), axis=1)
    sec = searchsorted_rows(q[:, :, 0], d, side="right") - 1  # (B, points)
    rows = np.arange(bn)[:, None]
    first = lam[:, :1] - (p[None, :, 0] - q[:, :1, 0]) * n[0, 0] \
        - (p[None, :, 1] - q[:, :1, 1]) * n[0, 1]
    last = lam[:, -1:] - (p[None, :, 0] - q[:, -1:, 0]) * n[-1, 0] \
        - (p[None, :, 1] - q[:, -1:, 1]) * n[-1, 1]
    i = np.clip(sec, 0, max(k - 1, 0))
    if k:
        dx = p[None, :, 0] - q[rows, i, 0]
        dz = p[None, :, 1] - q[rows, i, 1]
        r = np.hypot(p[None, :, 0] - centre[rows, i, 0], p[None, :, 1] - centre[rows, i, 1])
        arc_s = lam[rows, i] - mu[rows, i] - e[rows, i] * r
        straight_s = lam[rows, i] - (dx * nbar[i, 0] + dz * nbar[i, 1])
        inner = np.where(arc[rows, i], arc_s, straight_s)
    else:
        inner = first
    return np.where(sec < 0, first, np.where(sec >= m - 1, last, inner)), lam


class ArcModel(_Chain):
    """A block's Busk construction.

    Called with a block's dips (sorted by distance, one per position). With their dip
    ``domains`` (grouped by the build at the section's ``dip_tolerance``) the arcs are
    fitted to the contacts (:func:`fit_busk`); without them, every dip is its own sector
    boundary (the classic construction through the dips).
    ``ground``: the ground elevation at distances (default: interpolated between the
    contacts, which lie on the ground).
    """

    def __init__(self, distance, elevation, phi, cons: Constraints, frame: SectionFrame,
                 column_depths: np.ndarray, names: list[str], notes: Notes, *,
                 domains: list[Domain] | None = None, ground: Callable | None = None) -> None:
        d = np.asarray(distance, float)
        z = np.asarray(elevation, float)
        phi = np.asarray(phi, float)
        self.domains: list[Domain] | None = None
        if domains is not None and len(d) > 1:
            ground = ground or _ground_estimate(cons, d, z)
            depths = np.asarray(column_depths, float)
            scale = float(np.min(np.diff(depths))) if len(depths) > 1 else 100.0
            self.domains = domains
            q, ph = fit_busk(self.domains, cons, ground, frame, scale)
        else:
            q, ph = np.column_stack([d, z]), phi
        super().__init__(q, ph)
        self.frame, self.notes = frame, notes
        if len(cons):
            b = self.depth_at(cons.distance, cons.elevation)
            shift = float(np.sum(cons.weight * (cons.depth - b)) / np.sum(cons.weight))
        else:
            shift = 0.0
        self.lam = self.lam + shift
        self._cache: dict[float, tuple[list[np.ndarray], np.ndarray]] = {}
        self._log_arcs()
        self._log_centres(np.asarray(column_depths, float), names)

    def radius(self, i: int, s: float) -> float:
        """Radius of horizon level ``s`` in arc sector ``i`` (<= 0: beyond the centre)."""
        return float(self.e[i] * (self.lam[i] - s - self.mu[i]))

    # --- horizons -------------------------------------------------------
    def _on_normal(self, i: int, s: float) -> np.ndarray:
        return self.q[i] + (self.lam[i] - s) * self.n[i]

    def _arc_points(self, i: int, s: float) -> np.ndarray:
        """The arc of level ``s`` in sector ``i``; beyond the centre (radius < 0) the
        mirrored arc, which makes a loop trimmed away in :meth:`_walk`."""
        r = self.radius(i, s)
        u0, u1 = self.e[i] * self.n[i], self.e2[i] * self.n[i + 1]
        ang = np.arctan2(u0[0] * u1[1] - u0[1] * u1[0], u0 @ u1)
        k = max(int(np.ceil(abs(np.degrees(ang)) / 0.5)), 1)
        a0 = np.arctan2(u0[1], u0[0])
        th = a0 + np.linspace(0.0, ang, k + 1)
        pts = self.centre[i] + r * np.column_stack([np.cos(th), np.sin(th)])
        pts[0], pts[-1] = self._on_normal(i, s), self._on_normal(i + 1, s)  # exact joins
        return pts

    def _walk(self, s: float) -> tuple[list[np.ndarray], np.ndarray]:
        s = float(s)
        if s in self._cache:
            return self._cache[s]
        m = len(self.q)
        reach = self.frame.size + float(np.max(np.hypot(*(self.q - self.frame.centre).T)))
        reach += abs(float(self.lam.max() - s)) + abs(float(self.lam.min() - s))
        start, end = self._on_normal(0, s), self._on_normal(m - 1, s)
        parts = [np.array([start - reach * self.t[0], start])]
        for i in range(m - 1):
            if self.kind[i] == "straight":
                parts.append(np.array([self._on_normal(i, s), self._on_normal(i + 1, s)]))
            else:
                parts.append(self._arc_points(i, s))
        parts.append(np.array([end, end + reach * self.t[m - 1]]))
        path, cusps = _trim_loops(_dedupe(np.vstack(parts)))
        # A horizon beyond a centre of curvature ends there: its limbs stop where they meet.
        cuts = [0, *cusps, len(path) - 1]
        pieces = [path[a:b + 1] for a, b in zip(cuts[:-1], cuts[1:], strict=True) if b > a]
        self._cache[s] = (pieces, path)
        return pieces, path

    def horizon_pieces(self, s: float) -> list[np.ndarray]:
        return [p for p in self._walk(s)[0] if len(p) >= 2]

    def horizon_path(self, s: float) -> np.ndarray:
        """The whole horizon for polygons: where it stops at a centre its two limbs meet
        at a point (no area beyond the centre)."""
        return self._walk(s)[1]

    def axial_surfaces(self) -> list[tuple[np.ndarray, float, float, float]]:
        """Busk's construction has hinges of finite width, no axial surfaces."""
        return []

    def _log_arcs(self) -> None:
        """One line per hinge of the fitted construction: where its arc sits in its gap."""
        if not self.domains or len(self.domains) < 2:
            return
        for k, (left, right) in enumerate(zip(self.domains[:-1], self.domains[1:],
                                              strict=True)):
            i = 2 * k  # sector 2k is the arc between domains k and k+1
            a, b = self.q[i, 0], self.q[i + 1, 0]
            if self.kind[i] == "arc":
                cx, cz = self.centre[i]
                shape = (f"centre of curvature at {cx:.0f} m, elevation {cz:.0f} m, radius of "
                         f"the top of the column {abs(self.radius(i, 0.0)):.0f} m")
            else:
                shape = "normals do not meet on the beds' side: drawn straight"
            self.notes.log(f"arc between dip domains {left.dip:.1f}° and {right.dip:.1f}°: "
                            f"tangent points at {a:.0f} and {b:.0f} m on the ground (gap "
                            f"{left.end:.0f}-{right.start:.0f} m, placed by the contacts); "
                            f"{shape}")

    def _log_centres(self, depths: np.ndarray, names: list[str]) -> None:
        box = self.frame.box.bounds
        for i, kind in enumerate(self.kind):
            if kind != "arc":
                continue
            cx, cz = self.centre[i]
            if not (box[0] <= cx <= box[2] and box[1] <= cz <= box[3]):
                continue
            cut = [nm for nm, s in zip(names, depths, strict=True) if self.radius(i, s) <= 0]
            if not cut:
                continue
            where = "below" if self.e[i] > 0 else "above"
            self.notes.log(
                f"arc between normals at {self.q[i, 0]:.0f} and {self.q[i + 1, 0]:.0f} m: centre "
                f"of curvature at {cx:.0f} m, elevation {cz:.0f} m ({where} the beds); the "
                f"construction stops at the centre: {', '.join(cut)} end there (limbs drawn "
                "to where they meet)")


def fit_busk(domains: list[Domain], cons: Constraints, ground: Callable, frame: SectionFrame,
             scale: float) -> tuple[np.ndarray, np.ndarray]:
    """Busk arcs between successive dip domains, fitted to the contacts.

    Returns the normals' ground points (distance, elevation) and travel angles: for each
    domain the normals at its two ends share its dip (a straight sector), and the arc
    between domains ``k`` and ``k+1`` runs between the normal of ``k`` at ground distance
    ``a_k`` and that of ``k+1`` at ``b_k``, ``end_k <= a_k < b_k <= start_{k+1}``. Unknowns
    per hinge: the arc's middle ``c`` in the gap and its half-width fraction ``f``
    (``a = c - f (c - lo)``, ``b = c + f (hi - c)``), solved by least squares over the
    contacts jointly with the offset (eliminated in closed form). Starts from the kink
    solution's hinges (Suppe 1985); small pulls toward the kink hinge and toward an arc
    spanning its gap (the classic Busk arc through the bounding dips) only break ties
    where the contacts leave a hinge free.
    """
    from .kink import fit_kink

    k_all = len(domains)
    phis = np.array([dm.phi for dm in domains])
    if k_all == 1:
        mid = 0.5 * (domains[0].start + domains[0].end)
        return np.array([[mid, float(ground(mid))]]), phis
    lo = np.array([domains[k].end for k in range(k_all - 1)])
    hi = np.array([domains[k + 1].start for k in range(k_all - 1)])
    hi = np.maximum(hi, lo + 1e-3)
    width = hi - lo
    ph = np.repeat(phis, 2)[1:-1]  # phi_0, phi_1, phi_1, phi_2, ...
    cd, cz, cs, w = in_order(cons)
    eps = 0.01 * scale  # metres: breaks ties only where the data leave a hinge free
    pr = _BuskProblem(k_all, lo, hi, ground, ph, cd, cz, cs, w, eps)
    if not len(cons):
        return pr.points(np.concatenate([0.5 * (lo + hi), np.ones(k_all - 1)])), ph
    pr.h = fit_kink(domains, cons, ground, frame, scale, Notes()).hinges
    lb = np.concatenate([lo, np.full(k_all - 1, _MIN_SPAN)])
    ub = np.concatenate([hi, np.ones(k_all - 1)])
    full = BatchedJacobian(pr.resid_rows, lb, ub, 1e-6, single=pr.resid)
    jac = _BuskJacobian(pr.chain_rows, pr.tie_rows, cd, w, full)

    def banded(J_h, diag_h, f, d):
        st = jac.structure
        if st is not None:
            step = _BandedStep(st, J_h, diag_h, f, d)
            if step.ok:
                return step
        return SvdSubproblem(J_h, diag_h, f)

    starts = [np.concatenate([pr.h, np.full(k_all - 1, f0)]) for f0 in (1.0, 0.6, 0.3, 0.1)]
    return pr.points(best_of_starts(jac, starts, lb, ub,
                                    np.concatenate([width, np.ones(k_all - 1)]), least_squares,
                                    banded if 2 * (k_all - 1) >= _BANDED_FROM else None)), ph


class _BuskProblem:
    """The Busk fit's unknowns (each hinge's arc middle ``c`` and half-width fraction
    ``f``) turned into the normals' ground points and the weighted residuals at the
    contacts (one vector ``x``, or a batch of them as rows ``xs``), with the small pulls
    toward the kink hinges ``h`` and toward an arc spanning its gap."""

    def __init__(self, k_all: int, lo: np.ndarray, hi: np.ndarray, ground: Callable,
                 ph: np.ndarray, cd: np.ndarray, cz: np.ndarray, cs: np.ndarray,
                 w: np.ndarray, eps: float) -> None:
        self.n = k_all - 1
        self.lo, self.hi, self.width = lo, hi, hi - lo
        self.ground, self.ph = ground, ph
        self.cd, self.cz, self.cs, self.w, self.sw = cd, cz, cs, w, np.sqrt(w)
        self.eps = eps
        self.h = np.empty(0)  # the kink solution's hinges, set before fitting

    def points(self, x: np.ndarray) -> np.ndarray:
        c, f = x[:self.n], x[self.n:]
        a, b = c - f * (c - self.lo), c + f * (self.hi - c)
        dist = np.column_stack([a, b]).ravel()
        return np.column_stack([dist, self.ground(dist)])

    def points_rows(self, xs: np.ndarray) -> np.ndarray:
        c, f = xs[:, :self.n], xs[:, self.n:]
        a, b = c - f * (c - self.lo), c + f * (self.hi - c)
        dist = np.stack([a, b], axis=2).reshape(len(xs), -1)
        return np.stack([dist, self.ground(dist)], axis=2)

    def tie_rows(self, xs: np.ndarray) -> np.ndarray:
        c, f = xs[:, :self.n], xs[:, self.n:]
        return np.concatenate([self.eps * (c - self.h) / self.width, self.eps * (1.0 - f)],
                              axis=1)

    def resid_rows(self, xs: np.ndarray) -> np.ndarray:
        w = self.w
        r0 = _chain_depth_rows(self.points_rows(xs), self.ph, self.cd, self.cz) - self.cs
        r = self.sw * (r0 - (np.sum(w * r0, axis=1) / np.sum(w))[:, None])
        return np.concatenate([r, self.tie_rows(xs)], axis=1)

    def resid(self, x: np.ndarray) -> np.ndarray:
        w = self.w
        r0 = _Chain(self.points(x), self.ph).depth_at(self.cd, self.cz) - self.cs
        r = self.sw * (r0 - np.sum(w * r0) / np.sum(w))
        c, f = x[:self.n], x[self.n:]
        return np.concatenate([r, self.eps * (c - self.h) / self.width,
                               self.eps * (1.0 - f)])

    def chain_rows(self, xs: np.ndarray):
        q = self.points_rows(xs)
        depth, lam = _chain_rows(q, self.ph, self.cd, self.cz)
        return depth - self.cs, lam, q[:, :, 0]


def _ground_estimate(cons: Constraints, d: np.ndarray, z: np.ndarray) -> Callable:
    """Ground elevation between the contacts (they lie on the ground); the dips'
    measurement elevations only where fewer than two contacts exist."""
    if len(cons) >= 2:
        gd, gz = cons.distance, cons.elevation
    else:
        gd, gz = np.concatenate([cons.distance, d]), np.concatenate([cons.elevation, z])
    ok = np.isfinite(gd) & np.isfinite(gz)
    order = np.argsort(gd[ok])
    gd, gz = gd[ok][order], gz[ok][order]

    def ground(x):
        return np.interp(np.asarray(x, float), gd, gz)

    return ground
