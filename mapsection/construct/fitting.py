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
                   least_squares: Callable) -> np.ndarray:
    """The least-squares solution (scipy.optimize.least_squares, method "trf", bounded) with
    the lowest cost over the starting vectors ``starts`` (each clipped to the bounds); a
    later start replaces an earlier one only when it is better by more than 1e-9. ``jac``
    is a :class:`BatchedJacobian`; the fits run on one BLAS thread. ``least_squares`` is
    scipy.optimize.least_squares as the calling module holds it."""
    best = None
    with one_blas_thread():
        for x0 in starts:
            sol = least_squares(jac.residual, np.clip(x0, lb, ub), jac=jac, bounds=(lb, ub),
                                method="trf", x_scale=x_scale)
            if best is None or sol.cost < best.cost - 1e-9:
                best = sol
    return best.x
