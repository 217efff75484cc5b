"""Kink-band (dip-domain) construction (Suppe 1985, Principles of Structural Geology).

Within a dip domain the beds are straight and parallel at the domain's dip. Domain
``k``'s stack is one reference line (the top of the column) and its parallel
offsets: a point ``p`` lies at stratigraphic depth ``S_k(p) = c_k - n_k . p``
(``n_k`` the younging normal). Adjacent domains meet on their axial surface, the
locus ``S_i(p) = S_j(p)``: it bisects the two dips, and every horizon crosses it
with its thickness kept.

Positioning: a contact of known stratigraphic depth ``s`` at ground point ``p``
has the residual ``S_k(p) - s`` (perpendicular to bedding). The hinge between
domains ``k`` and ``k+1`` meets the ground at distance ``h_k`` somewhere in the
gap between their dips; continuity there fixes
``c_{k+1} = c_k - (n_k - n_{k+1}) . P(h_k)``. So the unknowns are one offset and
the hinge positions, each bounded to its gap, solved jointly by least squares over
all contacts of the block: the hinges are placed where the data put them, not at
the gaps' midpoints (a tiny pull toward the middle only breaks ties where the data
say nothing).

At depth and above the ground, a domain that narrows to nothing ends where its
two axial surfaces meet, and one new axial surface bisecting the two outer domains
continues (Suppe 1985): the horizons are traced level by level through those
events, the same result as offsetting the kinked reference with mitre joins.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from scipy.optimize import least_squares
from shapely.geometry import Point

from ..notes import Notes
from .constraints import Constraints
from .domains import Domain, unit_vectors
from .fitting import BatchedJacobian, best_of_starts, in_order, searchsorted_rows
from .frame import SectionFrame


@dataclass
class AxialPiece:
    left: int  # domain indices either side
    right: int
    s_top: float  # level range (stratigraphic depth) over which it is active
    s_bottom: float
    ground_distance: float = float("nan")


class KinkModel:
    """A block's fitted dip domains: reference offsets ``c``, hinge ground distances."""

    def __init__(self, domains: list[Domain], c: np.ndarray, hinges: np.ndarray,
                 hinge_z: np.ndarray, frame: SectionFrame, notes: Notes) -> None:
        self.domains, self.c, self.hinges, self.frame = domains, c, hinges, frame
        self.notes = notes
        self.hinge_z = hinge_z  # ground elevation at the hinges
        self.t, self.n = unit_vectors([d.phi for d in domains])
        self._sweep()

    # --- geometry primitives ------------------------------------------
    def _meet(self, i: int, j: int, s) -> np.ndarray:
        """Points where horizon level(s) ``s`` of domains i and j meet (on their axial surface)."""
        a = np.array([self.n[i], self.n[j]])
        s = np.atleast_1d(np.asarray(s, float))
        rhs = np.stack([self.c[i] - s, self.c[j] - s])  # (2, m)
        return np.linalg.solve(a, rhs).T  # (m, 2)

    def _width_coeffs(self, i: int, k: int, j: int) -> tuple[float, float]:
        """Domain k's width along its beds between axial surfaces (i,k) and (k,j): a + b*s."""
        p = self._meet(k, j, [0.0, 1.0]) - self._meet(i, k, [0.0, 1.0])
        w = p @ self.t[k]
        return float(w[0]), float(w[1] - w[0])

    def _widths(self, alive: list[int]) -> tuple[np.ndarray, np.ndarray]:
        """:meth:`_width_coeffs` of every inner domain of ``alive`` at once (a, b arrays)."""
        al = np.asarray(alive)
        i, k, j = al[:-2], al[1:-1], al[2:]

        def meet(u, v):  # (m, 2 levels, 2): where levels 0 and 1 of u and v meet
            a = np.stack([self.n[u], self.n[v]], axis=1)
            rhs = np.stack([self.c[u][:, None] - [0.0, 1.0], self.c[v][:, None] - [0.0, 1.0]],
                           axis=1)
            return np.swapaxes(np.linalg.solve(a, rhs), 1, 2)

        p = meet(k, j) - meet(i, k)
        w = np.einsum("mlx,mx->ml", p, self.t[k])
        return w[:, 0], w[:, 1] - w[:, 0]

    def depth_at(self, distance, elevation) -> np.ndarray:
        """Stratigraphic depth at ground points, each in the domain that holds it at the ground."""
        d = np.asarray(distance, float)
        k = np.searchsorted(self.hinges, d)
        p = np.column_stack([d, np.asarray(elevation, float)])
        return self.c[k] - np.einsum("ij,ij->i", self.n[k], p)

    def level_range(self) -> tuple[float, float]:
        b = self.frame.box.bounds
        corners = np.array([[b[0], b[1]], [b[0], b[3]], [b[2], b[1]], [b[2], b[3]]])
        s = self.c[:, None] - self.n @ corners.T
        margin = self.frame.size
        return float(s.min()) - margin, float(s.max()) + margin

    # --- the sweep through levels (axial surfaces merging) ----------------
    def _sweep(self) -> None:
        k_all = len(self.domains)
        s_lo, s_hi = self.level_range()
        self.s_lo, self.s_hi = s_lo, s_hi
        alive = list(range(k_all))
        self.s0 = float(np.median(self.depth_at(self.hinges, self.hinge_z))) if k_all > 1 else 0.0
        if k_all > 2:
            alive = self._start_level(alive)
        self.alive0 = tuple(alive)
        self.pieces: dict[tuple[int, int], AxialPiece] = {}
        for i, j in zip(alive[:-1], alive[1:], strict=True):
            self.pieces[(i, j)] = AxialPiece(i, j, s_lo, s_hi, self.hinges[i] if j == i + 1
                                             else float("nan"))
        self.extra: list[AxialPiece] = []
        self.events_down = self._events(list(alive), +1)
        self.events_up = self._events(list(alive), -1)

    def _start_level(self, alive: list[int]) -> list[int]:
        """A level at which every domain is present (positive width), near the ground."""
        s_ground = self.depth_at(self.hinges, self.hinge_z)
        s_pref = float(np.median(s_ground))
        while len(alive) > 2:
            a_all, b_all = self._widths(alive)  # all inner domains at once
            coeffs = list(zip(a_all.tolist(), b_all.tolist(), strict=True))
            pos, neg = b_all > 1e-12, b_all < -1e-12
            lo = float(np.max(-a_all[pos] / b_all[pos])) if pos.any() else -np.inf
            hi = float(np.min(-a_all[neg] / b_all[neg])) if neg.any() else np.inf
            if np.any(~pos & ~neg & (a_all <= 0)):
                lo, hi = np.inf, -np.inf
            if lo < hi:
                if lo < s_pref < hi:
                    self.s0 = s_pref
                elif np.isfinite(lo) and np.isfinite(hi):
                    self.s0 = 0.5 * (lo + hi)
                elif np.isfinite(lo):
                    self.s0 = max(s_pref, lo + 1.0)
                else:
                    self.s0 = min(s_pref, hi - 1.0)
                return alive
            # No level holds every domain: drop the one thinnest at the preferred level.
            w = [a + b * s_pref for a, b in coeffs]
            drop = alive[1 + int(np.argmin(w))]
            dm = self.domains[drop]
            self.notes.log(f"dip domain {dm.start:.0f}-{dm.end:.0f} m (dip {dm.dip:.1f}°) "
                            "conflicts with its neighbours' axial surfaces and was left out")
            alive.remove(drop)
        self.s0 = s_pref
        return alive

    def _events(self, alive: list[int], direction: int) -> list[tuple[float, tuple[int, ...]]]:
        """Merge events away from the start level: downward (+1) or upward (-1)."""
        s = self.s0
        events = []
        while len(alive) > 2:
            best = None
            a_all, b_all = self._widths(alive)  # all inner domains at once
            cand = direction * b_all < -1e-12
            with np.errstate(divide="ignore", invalid="ignore"):
                sz_all = np.where(cand, -a_all / b_all, np.nan)
            cand &= direction * (sz_all - s) > 0
            if cand.any():  # the nearest ahead (the first of equals)
                pick = int(np.argmin(np.where(cand, direction * sz_all, np.inf)))
                best = (float(sz_all[pick]), pick + 1)
            if best is None or not (self.s_lo < best[0] < self.s_hi):
                break
            sz, idx = best
            i, k, j = alive[idx - 1], alive[idx], alive[idx + 1]
            for pair in ((i, k), (k, j)):
                piece = self.pieces.get(pair)
                if piece is None:
                    piece = next(p for p in self.extra if (p.left, p.right) == pair)
                if direction > 0:
                    piece.s_bottom = sz
                else:
                    piece.s_top = sz
            new = AxialPiece(i, j, sz if direction > 0 else self.s_lo,
                             self.s_hi if direction > 0 else sz)
            self.extra.append(new)
            alive.pop(idx)
            events.append((sz, tuple(alive)))
            s = sz
            dl, dr = self.domains[i], self.domains[j]
            where = "at depth" if direction > 0 else "upward"
            p = self._meet(i, j, sz)[0]
            if self.frame.box.covers(Point(p)):
                self.notes.log(f"axial surfaces meet {where} at {p[0]:.0f} m, elevation "
                                f"{p[1]:.0f} m: one axial surface continues between dips "
                                f"{dl.dip:.1f}° and "
                                f"{dr.dip:.1f}°")
        return events

    def alive_at(self, s: float) -> tuple[int, ...]:
        alive = self.alive0
        if s >= self.s0:
            for se, al in self.events_down:
                if s > se:
                    alive = al
        else:
            for se, al in self.events_up:
                if s < se:
                    alive = al
        return alive

    # --- output -------------------------------------------------------------
    def horizon_path(self, s: float) -> np.ndarray:
        """The full horizon at stratigraphic depth ``s``, extended far beyond the frame."""
        alive = self.alive_at(s)
        if len(alive) == 1:
            k = alive[0]
            ctr = self.frame.centre
            verts = (ctr - (self.n[k] @ ctr - (self.c[k] - s)) * self.n[k])[None, :]
        else:
            verts = np.vstack([self._meet(i, j, s) for i, j in zip(alive[:-1], alive[1:],
                                                                    strict=True)])
        ctr = self.frame.centre
        reach = self.frame.size + float(np.max(np.hypot(*(verts - ctr).T)))
        first = verts[0] - reach * self.t[alive[0]]
        last = verts[-1] + reach * self.t[alive[-1]]
        return np.vstack([first, verts, last])

    def horizon_pieces(self, s: float) -> list[np.ndarray]:
        return [self.horizon_path(s)]

    def axial_surfaces(self) -> list[tuple[np.ndarray, float, float, float]]:
        """Each axial surface: (its two end points, its ground distance, the dips of the
        domains on its left and right)."""
        return [(pts, piece.ground_distance, self.domains[piece.left].dip,
                 self.domains[piece.right].dip) for pts, piece in self.axial_segments()]

    def axial_segments(self) -> list[tuple[np.ndarray, AxialPiece]]:
        out = []
        for piece in [*self.pieces.values(), *self.extra]:
            if piece.s_bottom <= piece.s_top:
                continue
            pts = self._meet(piece.left, piece.right, [piece.s_top, piece.s_bottom])
            out.append((pts, piece))
        return out


def fit_kink(domains: list[Domain], cons: Constraints, ground: Callable, frame: SectionFrame,
             scale: float, notes: Notes, rng_seed: int = 0) -> KinkModel:
    """Position the domains' stacks by the constraints (joint least squares over the
    block: one offset plus each hinge's ground position, bounded to its gap)."""
    c, h = fit_kink_offsets(domains, cons, ground, scale, rng_seed)
    return KinkModel(domains, c, h, ground(h), frame, notes)


def kink_depth_at(domains: list[Domain], c: np.ndarray, hinges: np.ndarray, distance,
                  elevation) -> np.ndarray:
    """:meth:`KinkModel.depth_at` from the fitted offsets and hinges alone (no sweep)."""
    _, n = unit_vectors([dm.phi for dm in domains])
    d = np.asarray(distance, float)
    k = np.searchsorted(hinges, d)
    p = np.column_stack([d, np.asarray(elevation, float)])
    return c[k] - np.einsum("ij,ij->i", n[k], p)


def _hinge_starts(k_all: int, rng_seed: int) -> list[np.ndarray]:
    """Where the fit starts each hinge, as fractions of its free range: five spreads, then
    four random ones (seeded: the same draft for the same data)."""
    rng = np.random.default_rng(rng_seed)
    starts = [np.full(k_all - 1, f) for f in (0.5, 0.25, 0.75, 0.1, 0.9)]
    return starts + [rng.uniform(0.05, 0.95, k_all - 1) for _ in range(4)]


def fit_kink_offsets(domains: list[Domain], cons: Constraints, ground: Callable,
                     scale: float, rng_seed: int = 0) -> tuple[np.ndarray, np.ndarray]:
    """The kink fit's reference offsets ``c`` (one per domain) and hinge ground
    distances, without building the model (:func:`fit_kink`)."""
    k_all = len(domains)
    _, n = unit_vectors([d.phi for d in domains])
    d, z, s, w = in_order(cons)
    p = np.column_stack([d, z])
    sw = np.sqrt(w)
    lo = np.array([domains[k].end for k in range(k_all - 1)])
    hi = np.array([domains[k + 1].start for k in range(k_all - 1)])
    hi = np.maximum(hi, lo + 1e-3)
    mid, width = 0.5 * (lo + hi), hi - lo
    eps = 0.01 * scale  # metres: breaks ties only where the data leave a hinge free

    def offsets(h):
        if k_all == 1:
            return np.zeros(1)
        ph = np.column_stack([h, ground(h)])
        inc = -np.einsum("ij,ij->i", n[:-1] - n[1:], ph)
        return np.concatenate([[0.0], np.cumsum(inc)])

    def base_resid(h):
        c = offsets(h)
        k = np.searchsorted(h, d)
        return c[k] - np.einsum("ij,ij->i", n[k], p) - s, c

    def c0_of(r0):
        return -np.sum(w * r0) / np.sum(w)

    def resid(h):
        r0, _ = base_resid(h)
        r = sw * (r0 + c0_of(r0))
        return np.concatenate([r, eps * (h - mid) / width])

    # The residual for a batch of hinge vectors (rows), for the Jacobian's columns in
    # one call (fitting.BatchedJacobian): the same sums as base_resid, row by row.
    dn = n[:-1] - n[1:]
    np_all = p @ n.T  # (contacts, domains): n_k . p for every domain

    def resid_rows(hs):
        gs = ground(hs)
        inc = -(dn[:, 0] * hs + dn[:, 1] * gs)
        c = np.concatenate([np.zeros((len(hs), 1)), np.cumsum(inc, axis=1)], axis=1)
        k = searchsorted_rows(hs, d)
        rows = np.arange(len(hs))[:, None]
        r0 = c[rows, k] - np_all[np.arange(len(d))[None, :], k] - s
        c0 = -np.sum(w * r0, axis=1) / np.sum(w)
        r = sw * (r0 + c0[:, None])
        return np.concatenate([r, eps * (hs - mid) / width], axis=1)

    if k_all == 1:
        h = np.zeros(0)
    else:
        jac = BatchedJacobian(resid_rows, lo, hi, 1e-6, single=resid)
        h = best_of_starts(jac, [lo + f * (hi - lo) for f in _hinge_starts(k_all, rng_seed)],
                           lo, hi, width, least_squares)
    r0, c = base_resid(h)
    return c + c0_of(r0), h
