"""The eroded hanging wall carried up the fault from the footwall
(mapsection.construct.carried)."""

from __future__ import annotations

import numpy as np
import pytest

from mapsection.construct.carried import CarriedModel

SLOPE = np.tan(np.radians(10.0))
UP = np.array([np.cos(np.radians(30.0)), np.sin(np.radians(30.0))])  # fault up-dip


class Paths:
    """A stand-in block model: horizon ``s`` is ``path(s)``."""

    def __init__(self, path):
        self.path = path

    def depth_at(self, distance, elevation):
        return -np.asarray(elevation, float)

    def horizon_path(self, s):
        return self.path(s)

    def horizon_pieces(self, s):
        return [self.path(s)]

    def axial_surfaces(self):
        return []


def footwall(s):
    # flat beds (the limb both walls share) turning up at 10° past x = 1000 m
    return np.array([[-1e4, -s], [1000.0, -s], [1e4, -s + 9000.0 * SLOPE]])


def hanging_wall(s, shift):
    # its own data show only the flat limb: carried on without end
    return np.array([[-1e4, -s + shift[1]], [1e4, -s + shift[1]]])


def model(slip=400.0, ground=-1e6, p0=(0.0, 0.0), off=0.0):
    shift = slip * UP
    own = Paths(lambda s: hanging_wall(s, shift + np.array([0.0, off])))
    return CarriedModel(own, Paths(footwall), shift, np.array([1.0, 0.0]),
                        lambda x: np.full(np.shape(x), ground), np.array(p0), 1.0), shift


def test_eroded_hanging_wall_is_the_footwall_translated_by_the_slip():
    # Analytic (Dahlstrom 1969: a rigid hanging wall on a planar fault is the footwall
    # translated by the slip): past the footwall's bend moved up the fault, the hanging
    # wall's beds are the footwall's, so any cutoff on the fault lies `slip` up-dip of
    # the footwall's.
    m, shift = model()
    for s in (0.0, 300.0):
        p = m.horizon_path(s)
        bend = np.array([1000.0, -s]) + shift
        assert p[1] == pytest.approx(bend)
        assert p[-1] == pytest.approx(footwall(s)[-1] + shift)
        # the hanging wall's own beds kept up to the bend
        assert p[0] == pytest.approx(hanging_wall(s, shift)[0])
        assert len(m.horizon_pieces(s)) == 1


def test_walls_not_on_one_line_keep_the_hanging_walls_own_beds():
    # 5 m off the translated footwall (more than the 1 m tolerance given): no join
    m, shift = model(off=5.0)
    own = hanging_wall(0.0, shift + np.array([0.0, 5.0]))
    assert m.horizon_path(0.0) == pytest.approx(own)


def test_bend_under_the_hanging_walls_own_ground_is_not_carried():
    # The carried bend lands before the fault's ground point (p0 at x = 5000 m) and under
    # the ground (at +1000 m): the hanging wall's own dips rule there.
    m, shift = model(ground=1000.0, p0=(5000.0, 0.0))
    assert m.horizon_path(0.0) == pytest.approx(hanging_wall(0.0, shift))
    # above the ground it is carried
    m, shift = model(ground=-1000.0, p0=(5000.0, 0.0))
    assert m.horizon_path(0.0)[1] == pytest.approx(np.array([1000.0, 0.0]) + shift)
