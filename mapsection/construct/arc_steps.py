"""The Busk fit's linear algebra on long blocks: its Jacobian taken hinge by hinge and
its trust-region steps solved from banded equations (see :func:`mapsection.construct.arc.fit_busk`).

A hinge's two unknowns move only its own two normals; every contact beyond them shifts
by one number. So hinges two apart share a trial chain (:class:`_BuskJacobian`: four
trial chains instead of one per unknown, scipy's forward differences and steps), and
each trust-region step, written for the summed levels after each hinge with the offset
bordered, is a banded system (:class:`_BandedStep`, banded Cholesky), equal to scipy's
SVD step (Branch, Coleman & Li 1999, the trust-region reflective method of
``scipy.optimize.least_squares``) to rounding.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from .fitting import BatchedJacobian, forward_steps


class _BuskJacobian:
    """The Jacobian of :func:`fit_busk`'s residual: scipy's forward differences (the
    steps of ``full``, a :class:`~.fitting.BatchedJacobian` of the same residual), each
    column taken from its own hinge's stretch of the chain.

    A hinge's unknowns move only its two normals (``2k``, ``2k+1``): the chain changes
    between the normals either side (``2k-1`` and ``2k+2``), and every contact beyond
    them only by the change of the summed reference level (one number), the whole
    residual then by the shift of the offset (a weighted mean). So the hinges two
    apart are perturbed in the same trial chain (four trial chains in all, not one per
    unknown), and filling the columns costs (contacts x unknowns) array work instead of
    a chain per unknown (which grew with the cube of the line: docs/performance.md).
    Where the normals are not in order (a degenerate gap) every unknown is perturbed
    in its own chain, as ``full`` does.

    ``chain_rows(xs)`` gives, for a batch of unknown vectors (rows), the contacts' depth
    misfits before the offset (rows of ``depth - stratigraphic depth``), the chain's
    reference levels on its normals and the normals' ground distances; ``tie_rows(xs)``
    the tie-breaking residuals (one per unknown, each of its own unknown only); ``cd``
    and ``w`` the contacts' distances (sorted) and weights."""

    def __init__(self, chain_rows: Callable, tie_rows: Callable, cd: np.ndarray,
                 w: np.ndarray, full: BatchedJacobian) -> None:
        self.chain_rows, self.tie_rows, self.full = chain_rows, tie_rows, full
        self.cd, self.w, self.sw = cd, w, np.sqrt(w)
        self.residual = full.residual
        self.structure: _BuskColumns | None = None

    def __call__(self, x: np.ndarray) -> np.ndarray:
        x = np.asarray(x, float)
        n = len(x)
        nk = n // 2  # hinges: unknowns c_0.., f_0..
        h = forward_steps(x, self.full.lb, self.full.ub, self.full.rel_step)
        dx = (x + h) - x
        hinge = np.arange(n) % nk
        group = (np.arange(n) // nk) * 2 + hinge % 2  # (c or f) x (hinge parity)
        xs = np.repeat(x[None, :], 5, axis=0)
        xs[group + 1, np.arange(n)] = x + h
        r0, lam, qd = self.chain_rows(xs)
        m = 2 * nk
        self.structure = None
        if np.any(np.diff(qd, axis=1) < 0):  # normals out of order: one chain per unknown
            return self.full(x)
        base = qd[0]
        lo_n = 2 * hinge - 1  # the unmoved normals either side of the hinge (-1: none)
        hi_n = 2 * hinge + 2  # (m: none)
        start = np.where(lo_n >= 0, np.searchsorted(self.cd, base[np.maximum(lo_n, 0)],
                                                    side="left"), 0)
        end = np.where(hi_n < m, np.searchsorted(self.cd, base[np.minimum(hi_n, m - 1)],
                                                 side="left"), len(self.cd))
        g = group + 1
        at_lo = np.where(lo_n >= 0, lam[g, np.maximum(lo_n, 0)] - lam[0, np.maximum(lo_n, 0)],
                         0.0)
        at_hi = np.where(hi_n < m, lam[g, np.minimum(hi_n, m - 1)]
                         - lam[0, np.minimum(hi_n, m - 1)], 0.0)
        idx = np.arange(len(self.cd))[:, None]
        inside = (idx >= start[None, :]) & (idx < end[None, :])
        beyond = idx >= end[None, :]
        d_r0 = (r0[g] - r0[0][None, :]).T  # (contacts, unknowns): each column's trial chain
        e = np.where(inside, d_r0 - at_lo[None, :],
                     np.where(beyond, (at_hi - at_lo)[None, :], 0.0))
        ties = self.tie_rows(xs)
        tie = (ties[g, np.arange(n)] - ties[0]) / dx
        # the parts of the columns (uncentred, per unit step) for a banded step solve
        self.structure = _BuskColumns(x, np.where(inside, d_r0 - at_lo[None, :], 0.0) / dx,
                                      (at_hi - at_lo) / dx, end[:nk], tie, self.sw, self.w)
        e -= (self.w @ e)[None, :] / np.sum(self.w)
        top = self.sw[:, None] * e / dx[None, :]
        return np.vstack([top, np.diag(tie)])


@dataclass(frozen=True)
class _BuskColumns:
    """The Busk fit's Jacobian at ``x`` in parts (before the offset is taken out):
    ``local`` (contacts x unknowns) each column inside its hinge's stretch, ``beyond``
    the one value it takes on every contact from ``end[k]`` on (hinge ``k``'s
    unknowns ``k`` and ``nk + k``), ``tie`` the tie-breaking rows' diagonal, ``sw`` and
    ``w`` the contacts' weights (square roots, weights)."""

    x: np.ndarray
    local: np.ndarray
    beyond: np.ndarray
    end: np.ndarray
    tie: np.ndarray
    sw: np.ndarray
    w: np.ndarray


class _BandedStep:
    """The trust-region step of scipy's exact solver (``SvdSubproblem``: Moré's
    iteration on the Levenberg-Marquardt parameter ``alpha``), each trial step solved
    from banded equations instead of an SVD: time linear in the hinges.

    In the step's linear least squares (no bounds there) a hinge's two unknowns are
    traded for one of them and the chain's summed level after the hinge (a linear
    change of variables, one-to-one where the level moves with the hinge); the offset
    is an unknown of its own. Each contact's row then holds the unknowns of its own and
    the neighbouring hinges only: banded normal equations, bordered by the offset. The
    step is the same vector as the SVD's (the same equations); ``ok`` is False where
    the change of variables does not hold (the SVD is then used)."""

    def __init__(self, st: _BuskColumns, J_h: np.ndarray, diag_h: np.ndarray,
                 f: np.ndarray, d: np.ndarray) -> None:
        n = len(d)
        nk = n // 2
        nz = 2 * nk  # per hinge: the unknown kept (2k), the level after it (2k + 1)
        p_rows = len(st.sw)
        a = st.beyond * d
        ac, af = a[:nk], a[nk:]
        piv_f = np.abs(af) >= np.abs(ac)
        a_p = np.where(piv_f, af, ac)
        a_o = np.where(piv_f, ac, af)
        self.ok = bool(np.all(np.abs(a_p) > 1e-9 * max(float(np.abs(a).max()), 1e-300)))
        if not self.ok:
            return
        k = np.arange(nk)
        other = np.where(piv_f, k, nk + k)  # the unknown kept
        pivot = np.where(piv_f, nk + k, k)  # the unknown traded for the level
        T = np.zeros((n, nz))  # unknowns = T @ new unknowns (a few entries a row)
        T[other, 2 * k] = 1.0
        T[pivot, 2 * k + 1] = 1.0 / a_p
        T[pivot, 2 * k] = -a_o / a_p
        T[pivot[1:], 2 * k[1:] - 1] = -1.0 / a_p[1:]
        loc = st.local * d[None, :]
        rc = np.zeros((p_rows, nz))  # the contacts' rows (before their weights)
        rc[:, 2 * k] = loc[:, other] + loc[:, pivot] * T[pivot, 2 * k][None, :]
        rc[:, 2 * k + 1] = loc[:, pivot] / a_p[None, :]
        rc[:, 2 * k[:-1] + 1] -= loc[:, pivot[1:]] / a_p[None, 1:]
        h = np.searchsorted(st.end, np.arange(p_rows), side="right") - 1  # levels passed
        has = np.flatnonzero(h >= 0)
        rc[has, 2 * h[has] + 1] += 1.0
        rc *= st.sw[:, None]
        rt = T * (st.tie * d)[:, None]
        # a contact lies in the stretches of two successive hinges at most: its row
        # holds five successive new unknowns; a row of T three
        self.bw = bw = min(4, nz - 1)

        def band(x: np.ndarray, wt: np.ndarray | None = None) -> np.ndarray:
            xw = x if wt is None else x * wt[:, None]
            out = np.zeros((bw + 1, nz))  # upper form: out[bw - q, i + q] = M[i, i + q]
            for q in range(bw + 1):
                out[bw - q, q:] = np.einsum("ji,ji->i", xw[:, :nz - q], x[:, q:])
            return out

        self.base = band(rc) + band(rt) + band(T, diag_h)
        self.tt = band(T)
        self.T = T
        self.nz = nz
        self.b = rc.T @ st.sw  # the offset's column
        self.c = float(np.sum(st.w))
        fc, ft = f[:p_rows], f[p_rows:]
        self.rhs_f = -np.concatenate([rc.T @ fc + rt.T @ ft, [st.sw @ fc]])
        self.g_norm = float(np.linalg.norm(J_h.T @ f))
        self._fac: dict[float, tuple] = {}

    def _factor(self, alpha: float):
        from scipy.linalg import cho_solve_banded, cholesky_banded

        if alpha in self._fac:
            return self._fac[alpha]
        c = cholesky_banded(self.base + alpha * self.tt)
        xb = cho_solve_banded((c, False), self.b)
        fac = (c, self.b, xb, self.c - self.b @ xb)  # the offset eliminated (bordered)
        self._fac[alpha] = fac
        return fac

    def _solve(self, fac, rhs: np.ndarray) -> np.ndarray:
        from scipy.linalg import cho_solve_banded

        c, b, xb, schur = fac
        nz = self.nz
        xr = cho_solve_banded((c, False), rhs[:nz])
        o = (rhs[nz] - b @ xr) / schur
        return self.T @ (xr - xb * o)

    def _step(self, fac) -> np.ndarray:
        return self._solve(fac, self.rhs_f)

    def _phi(self, alpha: float, Delta: float) -> tuple[float, float, np.ndarray]:
        fac = self._factor(alpha)
        p = self._step(fac)
        p_norm = float(np.linalg.norm(p))
        q = self._solve(fac, np.concatenate([self.T.T @ p, [0.0]]))
        return p_norm - Delta, -float(p @ q) / p_norm, p

    def step(self, Delta: float, alpha: float) -> tuple[np.ndarray, float]:
        """``scipy.optimize._lsq.common.solve_lsq_trust_region`` (rtol 0.01, at most ten
        iterations), the rank test replaced by the success of the factorisation."""
        from numpy.linalg import LinAlgError

        try:
            phi0, dphi0, p = self._phi(0.0, Delta)
            full_rank = bool(np.all(np.isfinite(p))) and phi0 + Delta > 0
        except (LinAlgError, ZeroDivisionError, FloatingPointError):
            full_rank = False
        if full_rank and phi0 <= 0:
            return p, 0.0
        alpha_upper = self.g_norm / Delta
        alpha_lower = -phi0 / dphi0 if full_rank else 0.0
        if alpha is None or not full_rank and alpha == 0:
            alpha = max(0.001 * alpha_upper, (alpha_lower * alpha_upper) ** 0.5)
        for _ in range(10):
            if alpha < alpha_lower or alpha > alpha_upper:
                alpha = max(0.001 * alpha_upper, (alpha_lower * alpha_upper) ** 0.5)
            phi, dphi, _ = self._phi(alpha, Delta)
            if phi < 0:
                alpha_upper = alpha
            ratio = phi / dphi
            alpha_lower = max(alpha_lower, alpha - ratio)
            alpha -= (phi + Delta) * ratio / Delta
            if np.abs(phi) < 0.01 * Delta:
                break
        p = self._step(self._factor(alpha))
        return p * (Delta / np.linalg.norm(p)), alpha
