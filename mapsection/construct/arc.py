"""Arc construction (Busk 1929, Earth Flexures; also given in Ragan, Structural Geology:
An Introduction to Geometrical Techniques).

Each dip is drawn with its normal (the line through the dip's position, perpendicular
to the bedding there). Between two adjacent dips the beds are circular arcs centred
where the two normals meet; where the two dips are parallel the beds are straight.
Successive arcs share the normal between them, so a horizon is continuous, with a
continuous tangent, from sector to sector, and every horizon is concentric with the
others: bed thickness is kept. A horizon whose radius shrinks to nothing reaches the
centre of curvature: it cannot be carried further, so it ends there, and the
construction says so (horizons deeper than the radius beneath an anticlinal centre,
or higher than it above a synclinal one).

On dip ``i``'s normal the reference horizon (top of the column) lies at
``Q_i + lambda_i n_i``; crossing sector ``i`` keeps the radius, which gives
``lambda_{i+1} = lambda_i - mu_i + nu_i`` (``O_i = Q_i + mu_i n_i = Q_{i+1} + nu_i n_{i+1}``).
One offset per block is left, fixed by least squares over the block's contacts.
"""

from __future__ import annotations

import numpy as np

from ._common import Constraints, Frame, unit_vectors, wrap180

_STRAIGHT_DEG = 0.05  # adjacent dips closer than this are drawn as straight, parallel beds


class ArcModel:
    """A block's Busk construction from its dips (sorted by distance)."""

    def __init__(self, distance, elevation, phi, cons: Constraints, frame: Frame,
                 column_depths: np.ndarray, names: list[str], log: list[str]) -> None:
        self.q = np.column_stack([distance, elevation]).astype(float)
        self.phi = np.asarray(phi, float)
        self.t, self.n = unit_vectors(self.phi)
        self.frame, self.log = frame, log
        m = len(self.q)
        self.kind: list[str] = []
        self.centre = np.full((max(m - 1, 0), 2), np.nan)
        self.mu = np.zeros(max(m - 1, 0))
        self.nu = np.zeros(max(m - 1, 0))
        self.e = np.ones(max(m - 1, 0))
        self.e2 = np.ones(max(m - 1, 0))
        lam = np.zeros(m)
        for i in range(m - 1):  # a chain: each sector starts where the last one ended
            dphi = float(wrap180(self.phi[i + 1] - self.phi[i]))
            a = np.column_stack([self.n[i], -self.n[i + 1]])
            dq = self.q[i + 1] - self.q[i]
            straight = abs(dphi) < _STRAIGHT_DEG
            if not straight:
                mu, nu = np.linalg.solve(a, dq)
                straight = np.sign(mu) != np.sign(nu) or mu == 0
            if straight:
                nbar = self.n[i] + self.n[i + 1]
                nbar /= np.hypot(*nbar)
                self.kind.append("straight")
                lam[i + 1] = lam[i] - nbar @ dq
                continue
            self.kind.append("arc")
            self.mu[i], self.nu[i] = mu, nu
            self.centre[i] = self.q[i] + mu * self.n[i]
            self.e[i], self.e2[i] = np.sign(-mu), np.sign(-nu)
            lam[i + 1] = lam[i] - mu + nu
        self.lam = lam
        if len(cons):
            b = self.depth_at(cons.distance, cons.elevation)
            shift = float(np.sum(cons.weight * (cons.depth - b)) / np.sum(cons.weight))
        else:
            shift = 0.0
        self.lam = lam + shift
        self._log_centres(column_depths, names)

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
        # straight ends, at the end dips
        for mask, k in ((sec < 0, 0), (sec >= m - 1, m - 1)):
            out[mask] = self.lam[k] - (p[mask] - self.q[k]) @ self.n[k]
        inner = (sec >= 0) & (sec < m - 1)
        i = sec[inner]
        is_arc = np.array([self.kind[j] == "arc" for j in i], bool)
        pi = p[inner]
        r = np.hypot(*(pi - np.nan_to_num(self.centre[i])).T)
        arc_s = self.lam[i] - self.mu[i] - self.e[i] * r
        nbar = self.n[i] + self.n[np.minimum(i + 1, m - 1)]
        nbar /= np.hypot(*nbar.T)[:, None]
        straight_s = self.lam[i] - np.einsum("ij,ij->i", pi - self.q[i], nbar)
        out[inner] = np.where(is_arc, arc_s, straight_s)
        return out

    def radius(self, i: int, s: float) -> float:
        """Radius of horizon level ``s`` in arc sector ``i`` (<= 0: beyond the centre)."""
        return float(self.e[i] * (self.lam[i] - s - self.mu[i]))

    # --- horizons -------------------------------------------------------
    def _on_normal(self, i: int, s: float) -> np.ndarray:
        return self.q[i] + (self.lam[i] - s) * self.n[i]

    def _arc_points(self, i: int, s: float) -> np.ndarray:
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
        m = len(self.q)
        reach = self.frame.size + float(np.max(np.hypot(*(self.q - self.frame.centre).T)))
        reach += abs(float(self.lam.max() - s)) + abs(float(self.lam.min() - s))
        start = self._on_normal(0, s)
        pieces: list[list[np.ndarray]] = [[np.array([start - reach * self.t[0], start])]]
        path: list[np.ndarray] = [pieces[0][0]]
        open_piece = True
        for i in range(m - 1):
            if self.kind[i] == "straight":
                seg = np.array([self._on_normal(i, s), self._on_normal(i + 1, s)])
            elif self.radius(i, s) > 0:
                seg = self._arc_points(i, s)
            else:  # the horizon has reached this sector's centre: it stops here
                path.append(self.centre[i][None, :])
                open_piece = False
                continue
            if not open_piece:
                pieces.append([])
                open_piece = True
            pieces[-1].append(seg)
            path.append(seg)
        end = self._on_normal(m - 1, s)
        tail = np.array([end, end + reach * self.t[m - 1]])
        if not open_piece:
            pieces.append([])
        pieces[-1].append(tail)
        path.append(tail)
        return [_dedupe(np.vstack(p)) for p in pieces if p], _dedupe(np.vstack(path))

    def horizon_pieces(self, s: float) -> list[np.ndarray]:
        return [p for p in self._walk(s)[0] if len(p) >= 2]

    def horizon_path(self, s: float) -> np.ndarray:
        """A closed-off path for polygons: where a horizon stops at a centre it runs along
        the two bounding normals through that centre (no area beyond the centre)."""
        return self._walk(s)[1]

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
            self.log.append(
                f"arc between dips at {self.q[i, 0]:.0f} and {self.q[i + 1, 0]:.0f} m: centre of "
                f"curvature at {cx:.0f} m, elevation {cz:.0f} m ({where} the beds); the "
                f"construction stops at the centre: {', '.join(cut)} end there")


def _dedupe(p: np.ndarray) -> np.ndarray:
    keep = np.concatenate([[True], np.any(np.abs(np.diff(p, axis=0)) > 1e-9, axis=1)])
    return p[keep]
