"""The construction fits' batched Jacobian against scipy's own finite differences.

The kink (Suppe 1985) and Busk arc (Busk 1929) fits hand ``least_squares`` a Jacobian
whose columns are evaluated in one batch (construct/fitting.py); the reference is what
``scipy.optimize.least_squares`` computes itself with ``diff_step=1e-6`` (its
forward differences), which the fits used before.
"""

from __future__ import annotations

import numpy as np
import pytest
import shapely
from conftest import TRAIN_COLUMN, fold_train
from scipy.optimize import least_squares

from mapsection.construct import arc as arc_module
from mapsection.construct import build_draft
from mapsection.construct import kink as kink_module
from mapsection.construct.arc import _Chain, _chain_depth_rows
from mapsection.construct.fitting import (
    BatchedJacobian,
    SvdSubproblem,
    searchsorted_rows,
    trust_region_reflective,
)


def _rows(xs):
    # a coupled test residual (chained Rosenbrock terms; invented) for many vectors at once
    return np.concatenate([10 * (xs[:, 1:] - xs[:, :-1] ** 2), 1 - xs[:, :-1],
                           np.sin(xs) * np.cumsum(xs, axis=1)], axis=1)


def test_batched_jacobian_equals_scipys_forward_differences():
    # scipy.optimize.least_squares (reference library): its own 2-point differences at
    # the solution, with diff_step=1e-6 and steps flipped at the bounds.
    rng = np.random.default_rng(3)
    lb, ub = np.full(6, -0.5), np.full(6, 0.9)
    jac = BatchedJacobian(_rows, lb, ub, 1e-6)
    for _ in range(5):
        x0 = rng.uniform(-0.4, 0.8, 6)
        ref = least_squares(jac.residual, x0, bounds=(lb, ub), method="trf", diff_step=1e-6)
        got = jac(ref.x)
        assert np.allclose(got, ref.jac, rtol=1e-9, atol=1e-9)
        new = least_squares(jac.residual, x0, jac=jac, bounds=(lb, ub), method="trf")
        assert np.allclose(new.x, ref.x, atol=1e-6)


def test_rows_searchsorted_equals_numpy():
    # numpy.searchsorted (reference library), row by row
    rng = np.random.default_rng(0)
    edges = np.sort(rng.integers(0, 50, (30, 20)).astype(float), axis=1)
    values = rng.integers(-5, 55, 100).astype(float)
    for side in ("left", "right"):
        want = np.array([np.searchsorted(r, values, side=side) for r in edges])
        assert np.array_equal(searchsorted_rows(edges, values, side), want)


def test_batched_chain_depths_equal_the_chain():
    # The batched sectors give the depths of Busk's chain (Busk 1929) built one at a
    # time, on random chains with arcs, straight sectors and repeated dips.
    rng = np.random.default_rng(1)
    for _ in range(100):
        m = int(rng.integers(1, 12))
        phi = np.radians(np.cumsum(rng.uniform(-40, 40, m)))
        if m > 1 and rng.random() < 0.3:
            phi[1] = phi[0]
        q = np.column_stack([np.sort(rng.uniform(0, 10000, m)), rng.uniform(-100, 100, m)])
        d, z = rng.uniform(-1000, 11000, 50), rng.uniform(-200, 200, 50)
        want = _Chain(q, phi).depth_at(d, z)
        got = _chain_depth_rows(np.stack([q, q]), phi, d, z)
        ok = np.isfinite(want)
        for row in got:
            assert np.array_equal(np.isfinite(row), ok)
            assert np.abs(row[ok] - want[ok]).max() <= 1e-6


def _scipy_differences(real):
    """least_squares as the fits called it before: scipy's own forward differences."""
    def call(fun, x0, jac=None, **kw):
        return real(fun, x0, diff_step=1e-6, **kw)
    return call


def _horizons(method, args):
    draft = build_draft(*args, TRAIN_COLUMN, method=method, depth=3000.0, dip_tolerance=5.0)
    return draft, [(h.top_of, h.above_ground, shapely.get_coordinates(h.geometry))
                   for h in draft.horizons]


@pytest.mark.parametrize(("method", "args", "tol"), [
    # many noisy dips: lone readings screened, dozens of kink domains (Suppe 1985)
    ("kink", fold_train(10_000.0, spacing=100.0, noise=8.0), 1e-4),
    # Busk arcs along a 20 km train (Busk 1929); the arc fit's optimum is flatter
    ("arc", fold_train(20_000.0), 1e-3),
])
def test_fits_give_the_horizons_of_scipys_differences(monkeypatch, method, args, tol):
    fast, got = _horizons(method, args)
    with monkeypatch.context() as m:
        m.setattr(kink_module, "least_squares", _scipy_differences(least_squares))
        m.setattr(arc_module, "least_squares", _scipy_differences(least_squares))
        plain, want = _horizons(method, args)
    assert len(got) == len(want) > 10
    for (name, above, xy), (name0, above0, xy0) in zip(got, want, strict=True):
        assert (name, above) == (name0, above0)
        assert xy.shape == xy0.shape
        assert np.abs(xy - xy0).max() <= tol
    assert fast.log == plain.log


def _busk_fit_jacobian(monkeypatch, length, **train):
    """The Jacobian object, bounds and scales fit_busk hands its least-squares fit on a
    fold train (captured where the fit starts)."""
    seen = []
    real = arc_module.best_of_starts

    def capture(jac, starts, lb, ub, x_scale, ls, subproblem=None):
        seen.append((jac, lb, ub, x_scale, starts))
        return real(jac, starts, lb, ub, x_scale, ls, subproblem)

    with monkeypatch.context() as m:
        m.setattr(arc_module, "best_of_starts", capture)
        build_draft(*fold_train(length, **train), TRAIN_COLUMN, method="arc", depth=3000.0,
                    dip_tolerance=5.0)
    return seen[-1]


def test_busk_jacobian_by_hinge_equals_scipys_forward_differences(monkeypatch):
    # scipy.optimize.least_squares (reference library): its own 2-point differences
    # (diff_step=1e-6) of the Busk fit's residual on a 40 km train (16 hinges), at the
    # point where scipy's fit stops and at random points inside the bounds. The
    # columns taken hinge by hinge (construct/arc.py _BuskJacobian: four trial chains,
    # each contact beyond a hinge's stretch moved by the change of the summed level)
    # must be the same differences up to their rounding (1e-7 of the largest entry).
    jac, lb, ub, x_scale, starts = _busk_fit_jacobian(monkeypatch, 40_000.0)
    assert isinstance(jac, arc_module._BuskJacobian)
    ref = least_squares(jac.residual, np.clip(starts[0], lb, ub), bounds=(lb, ub),
                        method="trf", x_scale=x_scale, diff_step=1e-6)
    got = jac(ref.x)
    assert got.shape == ref.jac.shape == (len(jac.residual(ref.x)), len(lb))
    assert np.abs(got - ref.jac).max() <= 1e-7 * np.abs(ref.jac).max()
    # its nonzeros: every contact beyond a hinge moves with it (the summed offset), so
    # the pattern is the true one, not a band (scipy's differences, the reference)
    assert np.array_equal(np.abs(got) > 0, np.abs(ref.jac) > 0)
    rng = np.random.default_rng(5)
    for _ in range(3):
        x = lb + rng.uniform(0.0, 1.0, len(lb)) * (ub - lb)
        want = jac.full(x)  # one trial chain per unknown: checked against scipy above
        assert np.abs(jac(x) - want).max() <= 1e-7 * np.abs(want).max()


def test_busk_jacobian_at_the_bounds_steps_as_scipy(monkeypatch):
    # At the upper bounds (arcs spanning their gaps: f = 1, hinges at the gap's end)
    # scipy flips its steps inward; the hinge-by-hinge columns take the same steps
    # (reference: scipy.optimize.least_squares with diff_step=1e-6 stopped after its
    # first evaluation, which returns the Jacobian at its start: the upper bounds moved
    # inside by scipy's own rule for a strictly feasible start).
    jac, lb, ub, x_scale, _ = _busk_fit_jacobian(monkeypatch, 20_000.0)
    ref = least_squares(jac.residual, ub, bounds=(lb, ub), method="trf", x_scale=x_scale,
                        diff_step=1e-6, max_nfev=1)
    assert ref.nfev == 1 and np.all(ub - ref.x < 1e-6 * np.maximum(1.0, np.abs(ub)))
    assert np.abs(jac(ref.x) - ref.jac).max() <= 1e-7 * np.abs(ref.jac).max()


def _trf_scaled(jac, x, lb, ub, x_scale):
    """The scaled Jacobian, diagonal and residual of a trust-region step at ``x`` as
    scipy's trf (Coleman-Li scaling) forms them."""
    from scipy.optimize._lsq.common import CL_scaling_vector

    f = jac.residual(x)
    J = jac(x)
    g = J.T @ f
    v, dv = CL_scaling_vector(x, g, lb, ub)
    v[dv != 0] /= x_scale[dv != 0]
    d = v ** 0.5 * x_scale
    return J * d, g * dv * x_scale, f, d


def test_banded_trust_region_step_equals_scipys_svd_step(monkeypatch):
    # The step of scipy's exact trust-region solver (reference: its SVD and
    # scipy.optimize._lsq.common.solve_lsq_trust_region, wrapped as SvdSubproblem)
    # against the same step from banded equations (construct/arc.py _BandedStep: the
    # hinges' width steps traded for the summed levels, the offset bordered), on a
    # 40 km train (32 unknowns) at random points, radii from the Gauss-Newton step to
    # a thousandth of it: the same vector within 1e-9 of its length.
    jac, lb, ub, x_scale, _ = _busk_fit_jacobian(monkeypatch, 40_000.0)
    rng = np.random.default_rng(2)
    for _ in range(4):
        x = lb + rng.uniform(0.01, 0.99, len(lb)) * (ub - lb)
        J_h, diag_h, f, d = _trf_scaled(jac, x, lb, ub, x_scale)
        svd_step = SvdSubproblem(J_h, diag_h, f)
        banded = arc_module._BandedStep(jac.structure, J_h, diag_h, f, d)
        assert banded.ok
        for delta in (1e3, 0.3, 0.01, 1e-3):
            want, alpha0 = svd_step.step(delta, 0.0)
            got, alpha = banded.step(delta, 0.0)
            assert np.linalg.norm(got - want) <= 1e-9 * np.linalg.norm(want)
            assert alpha == pytest.approx(alpha0, rel=1e-6, abs=1e-12)


def test_trust_region_loop_is_scipys_step_for_step(monkeypatch):
    # With scipy's own step (its SVD), the trust-region loop of construct/fitting.py
    # follows scipy.optimize.least_squares (method "trf", the reference) bit for bit
    # on the Busk fit of a 40 km train, from the fit's four starts.
    jac, lb, ub, x_scale, starts = _busk_fit_jacobian(monkeypatch, 40_000.0)
    for x0 in starts:
        x0 = np.clip(x0, lb, ub)
        want = least_squares(jac.residual, x0, jac=jac, bounds=(lb, ub), method="trf",
                             x_scale=x_scale)
        got = trust_region_reflective(jac.residual, jac, x0, lb, ub, x_scale)
        assert np.array_equal(got.x, want.x)
        assert (got.cost, got.nfev, got.status) == (want.cost, want.nfev, want.status)


def test_banded_fit_reaches_scipys_optimum(monkeypatch):
    # The Busk fit of a 60 km train (23 hinges, 46 unknowns; banded steps from 24
    # unknowns on, below the tool's default switch) against the
    # same fit by scipy.optimize.least_squares with its own differences (the
    # reference). The optimum is flat (contacts leave the arcs' widths nearly free), so
    # where either stops can move with rounding (docs/performance.md gives the
    # movements measured on longer trains); here the best costs agree within scipy's
    # stopping tolerance (ftol 1e-8 of the cost) and the horizons within 1e-3 m, the
    # arc fit's tolerance of the test above (measured: 3e-5 m).
    def fit(method_patch):
        costs = []
        real = arc_module.best_of_starts

        def record(jac, starts, lb, ub, x_scale, ls, subproblem=None):
            x = real(jac, starts, lb, ub, x_scale, ls, subproblem)
            costs.append(0.5 * float(np.sum(jac.residual(x) ** 2)))
            return x

        with monkeypatch.context() as m:
            m.setattr(arc_module, "best_of_starts", record)
            method_patch(m)
            _, hz = _horizons("arc", fold_train(60_000.0))
        return costs[-1], hz

    def scipy_only(m):
        m.setattr(arc_module, "_BANDED_FROM", 10 ** 9)
        m.setattr(arc_module, "least_squares", _scipy_differences(least_squares))

    cost, got = fit(lambda m: m.setattr(arc_module, "_BANDED_FROM", 24))
    cost0, want = fit(scipy_only)
    assert cost == pytest.approx(cost0, rel=1e-8)
    for (name, above, xy), (name0, above0, xy0) in zip(got, want, strict=True):
        assert (name, above) == (name0, above0) and xy.shape == xy0.shape
        assert np.abs(xy - xy0).max() <= 1e-3
