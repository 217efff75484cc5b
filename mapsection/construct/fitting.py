"""The Jacobian of the construction fits, all its columns in one batched evaluation.

The kink and Busk fits (Suppe 1985; Busk 1929) are least squares over every hinge of a
block at once, solved with scipy's trust-region reflective method. Left to itself scipy
estimates the Jacobian by forward differences, one call of the residual per unknown,
so each iteration cost (unknowns x contacts) in Python calls and the fit grew with the
square of the hinges before any linear algebra. Here the same forward differences
(scipy's step rule for ``diff_step``, the same one-sided steps at the bounds) are taken
with the residual evaluated for every perturbed vector in one array call.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator
from contextlib import contextmanager
from functools import lru_cache

import numpy as np


@lru_cache(maxsize=1)
def _blas_controller():
    import scipy.linalg  # noqa: F401  (its BLAS must be loaded to be found)
    from threadpoolctl import ThreadpoolController

    return ThreadpoolController()


@contextmanager
def one_blas_thread() -> Iterator[None]:
    """Run the fits' linear algebra on one BLAS thread.

    Their matrices are small (contacts x hinges, an SVD per iteration): a threaded BLAS
    spends more on waking its threads than on the work, 10-20 times more on a busy
    two-core machine (measured in docs/performance.md)."""
    with _blas_controller().limit(limits=1, user_api="blas"):
        yield


_EPS2 = float(np.finfo(float).eps) ** 0.5  # scipy's fallback relative step (2-point)


def forward_steps(x0: np.ndarray, lb: np.ndarray, ub: np.ndarray,
                  rel_step: float) -> np.ndarray:
    """Forward-difference steps as ``scipy.optimize.least_squares`` takes them with
    ``diff_step=rel_step`` (relative to ``|x|``, flipped or shortened at the bounds)."""
    sign = (x0 >= 0).astype(float) * 2 - 1
    h = rel_step * sign * np.abs(x0)
    h = np.where((x0 + h) - x0 == 0, _EPS2 * sign * np.maximum(1.0, np.abs(x0)), h)
    lower, upper = x0 - lb, ub - x0
    x = x0 + h
    violated = (x < lb) | (x > ub)
    fitting = np.abs(h) <= np.maximum(lower, upper)
    h[violated & fitting] *= -1
    forward = (upper >= lower) & ~fitting
    h[forward] = upper[forward]
    backward = (upper < lower) & ~fitting
    h[backward] = -lower[backward]
    return h


class BatchedJacobian:
    """A ``jac`` callable for ``least_squares``: forward differences of a residual that
    takes a batch of parameter vectors (rows) and returns one residual vector per row.

    :meth:`residual` is the ``fun`` to hand to ``least_squares``: ``single`` if given
    (the fit's own residual for one vector), else the batch of one row."""

    def __init__(self, batch: Callable[[np.ndarray], np.ndarray], lb: np.ndarray,
                 ub: np.ndarray, rel_step: float = 1e-6,
                 single: Callable[[np.ndarray], np.ndarray] | None = None) -> None:
        self.batch, self.lb, self.ub, self.rel_step = batch, lb, ub, rel_step
        self.single = single if single is not None else (lambda x: batch(x[None, :])[0])

    def residual(self, x: np.ndarray) -> np.ndarray:
        return self.single(np.asarray(x, float))

    def __call__(self, x: np.ndarray) -> np.ndarray:
        x = np.asarray(x, float)
        h = forward_steps(x, self.lb, self.ub, self.rel_step)
        n = len(x)
        xs = np.repeat(x[None, :], n + 1, axis=0)  # the last row: the point itself
        idx = np.arange(n)
        xs[idx, idx] = x + h
        dx = (x + h) - x
        f = self.batch(xs)  # differences of one computation, rounded alike
        return ((f[:-1] - f[-1][None, :]) / dx[:, None]).T


def in_order(cons):
    """The constraints sorted by distance, elevation, depth and weight: the fits' sums
    then do not depend on the order the contacts came in (a cut map lists them in
    another order than the whole one), so the same contacts give the same fit."""
    order = np.lexsort((cons.weight, cons.depth, cons.elevation, cons.distance))
    return (cons.distance[order], cons.elevation[order], cons.depth[order],
            cons.weight[order])


def searchsorted_rows(edges: np.ndarray, values: np.ndarray, side: str = "left") -> np.ndarray:
    """``np.searchsorted`` of ``values`` in each row of ``edges`` (rows sorted): the count
    of edges below (``side="left"``) or not above (``"right"``) each value."""
    edges = np.atleast_2d(edges)
    values = np.asarray(values, float)
    # One comparison array while each row's is small; else a binary search per row (the
    # array grows with edges x values per row: the square of a long line's hinges).
    if edges.shape[1] * values.size <= 16_384:
        below = edges[:, None, :] < values[None, :, None] if side == "left" \
            else edges[:, None, :] <= values[None, :, None]
        return np.count_nonzero(below, axis=2)
    out = np.empty((len(edges), len(values)), int)
    for b, row in enumerate(edges):
        out[b] = np.searchsorted(row, values, side=side)
    return out


def best_of_starts(jac, starts, lb: np.ndarray, ub: np.ndarray, x_scale,
                   least_squares: Callable, subproblem: Callable | None = None) -> np.ndarray:
    """The least-squares solution (scipy.optimize.least_squares, method "trf", bounded) with
    the lowest cost over the starting vectors ``starts`` (each clipped to the bounds); a
    later start replaces an earlier one only when it is better by more than 1e-9. ``jac``
    is a :class:`BatchedJacobian`; the fits run on one BLAS thread. ``least_squares`` is
    scipy.optimize.least_squares as the calling module holds it. With ``subproblem``
    the same method runs with its trust-region steps solved by ``subproblem``
    (:func:`trust_region_reflective`)."""
    best = None
    with one_blas_thread():
        for x0 in starts:
            if subproblem is not None:
                sol = trust_region_reflective(jac.residual, jac, np.clip(x0, lb, ub), lb, ub,
                                              np.asarray(x_scale, float), subproblem)
            else:
                sol = least_squares(jac.residual, np.clip(x0, lb, ub), jac=jac,
                                    bounds=(lb, ub), method="trf", x_scale=x_scale)
            if best is None or sol.cost < best.cost - 1e-9:
                best = sol
    return best.x


class SvdSubproblem:
    """The trust-region step of scipy's exact solver: one SVD of the augmented Jacobian,
    then Moré's iteration on the Levenberg-Marquardt parameter
    (``scipy.optimize._lsq.common.solve_lsq_trust_region``)."""

    def __init__(self, J_h: np.ndarray, diag_h: np.ndarray, f: np.ndarray,
                 d: np.ndarray | None = None) -> None:
        from scipy.linalg import svd

        m, n = J_h.shape
        aug = np.empty((m + n, n))
        aug[:m] = J_h
        aug[m:] = np.diag(diag_h ** 0.5)
        f_aug = np.zeros(m + n)
        f_aug[:m] = f
        U, self.s, V = svd(aug, full_matrices=False)
        self.V = V.T
        self.uf = U.T.dot(f_aug)
        self.m, self.n = m, n

    def step(self, Delta: float, alpha: float) -> tuple[np.ndarray, float]:
        from scipy.optimize._lsq.common import solve_lsq_trust_region

        p_h, alpha, _ = solve_lsq_trust_region(self.n, self.m, self.uf, self.s, self.V,
                                               Delta, initial_alpha=alpha)
        return p_h, alpha


def trust_region_reflective(fun: Callable, jac: Callable, x0: np.ndarray, lb: np.ndarray,
                            ub: np.ndarray, x_scale: np.ndarray,
                            subproblem: Callable | None = None, ftol: float = 1e-8,
                            xtol: float = 1e-8, gtol: float = 1e-8):
    """``scipy.optimize.least_squares(fun, x0, jac=jac, bounds=(lb, ub), method="trf",
    x_scale=x_scale)`` (the trust-region reflective method of Branch, Coleman & Li 1999
    as scipy writes it, its exact solver, no loss function), step for step, with the
    trust-region subproblem left to ``subproblem(J_h, diag_h, f, d)`` (an object whose
    ``step(Delta, alpha)`` returns the step in scaled variables and the
    Levenberg-Marquardt parameter; default :class:`SvdSubproblem`, scipy's own).

    Returns an object with ``x``, ``cost``, ``nfev`` and ``status`` as scipy's."""
    from types import SimpleNamespace

    from numpy.linalg import norm
    from scipy.optimize._lsq.common import (
        CL_scaling_vector,
        check_termination,
        compute_grad,
        make_strictly_feasible,
        update_tr_radius,
    )
    from scipy.optimize._lsq.trf import select_step

    subproblem = subproblem or SvdSubproblem
    x = make_strictly_feasible(np.asarray(x0, float), lb, ub)
    f = np.atleast_1d(fun(x))
    J = np.atleast_2d(jac(x))
    nfev = 1
    n = x.size
    max_nfev = n * 100
    cost = 0.5 * np.dot(f, f)
    g = compute_grad(J, f)
    scale, scale_inv = x_scale, 1 / x_scale
    v, dv = CL_scaling_vector(x, g, lb, ub)
    v[dv != 0] *= scale_inv[dv != 0]
    Delta = norm(x * scale_inv / v ** 0.5)
    if Delta == 0:
        Delta = 1.0
    alpha = 0.0
    status = None
    while True:
        v, dv = CL_scaling_vector(x, g, lb, ub)
        g_norm = norm(g * v, ord=np.inf)
        if g_norm < gtol:
            status = 1
        if status is not None or nfev == max_nfev:
            break
        v[dv != 0] *= scale_inv[dv != 0]
        d = v ** 0.5 * scale
        diag_h = g * dv * scale
        g_h = d * g
        J_h = J * d
        sub = subproblem(J_h, diag_h, f, d)
        theta = max(0.995, 1 - g_norm)
        actual_reduction = -1
        while actual_reduction <= 0 and nfev < max_nfev:
            p_h, alpha = sub.step(Delta, alpha)
            p = d * p_h
            step, step_h, predicted_reduction = select_step(
                x, J_h, diag_h, g_h, p, p_h, d, Delta, lb, ub, theta)
            x_new = make_strictly_feasible(x + step, lb, ub, rstep=0)
            f_new = fun(x_new)
            nfev += 1
            step_h_norm = norm(step_h)
            if not np.all(np.isfinite(f_new)):
                Delta = 0.25 * step_h_norm
                continue
            cost_new = 0.5 * np.dot(f_new, f_new)
            actual_reduction = cost - cost_new
            Delta_new, ratio = update_tr_radius(Delta, actual_reduction, predicted_reduction,
                                                step_h_norm, step_h_norm > 0.95 * Delta)
            status = check_termination(actual_reduction, cost, norm(step), norm(x), ratio,
                                       ftol, xtol)
            if status is not None:
                break
            alpha *= Delta / Delta_new
            Delta = Delta_new
        if actual_reduction > 0:
            x, f, cost = x_new, f_new, cost_new
            J = np.atleast_2d(jac(x))
            g = compute_grad(J, f)
    return SimpleNamespace(x=x, cost=cost, nfev=nfev, status=0 if status is None else status)
