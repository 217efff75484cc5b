"""Map contacts beside the line: sampled, projected like the attitudes, and used to
position a fault block that has no contact on the line (invented data)."""

from __future__ import annotations

import math

import geopandas as gpd
import numpy as np
import pytest
import shapely

from mapsection.construct import build_draft
from mapsection.corridor import CorridorContacts, corridor_contacts
from mapsection.dips import ProjectedDips
from mapsection.foldaxis import FoldAxis
from mapsection.geology import Contact, FaultCrossing, SurfaceGeology, UnitInterval
from mapsection.line import SectionLine
from mapsection.mapdata import MapData
from mapsection.stratigraphy import Column, Unit
from mapsection.topo_profile import Profile

L = 6000.0
COLUMN = Column((Unit("A", 200.0), Unit("B", 300.0), Unit("C", 400.0), Unit("D", 500.0)))
LINE = SectionLine(np.array([[0.0, 0.0], [L, 0.0]]), name="N")


# --- two normal faults, the middle block with no contact on the line -------------------
# Horizontal beds; the top of the column lies at 900 m (block 0), 660 m (block 1) and
# 400 m (block 2): each normal fault (60°, down to the east) drops the beds.
TOP_A = (900.0, 660.0, 400.0)


def _ground(d):
    d = np.asarray(d, float)
    return np.where(d < 2000.0, 800.0 - 0.15 * d,
                    np.where(d < 4000.0, 450.0, 450.0 - 0.15 * (d - 4000.0)))


def _normal_fault_pair():
    d = np.linspace(0.0, L, 1201)
    prof = Profile(d, d, np.zeros_like(d), _ground(d), LINE, None, 5.0)
    # top of B (depth 200) meets the sloping ground: block 0 at 667 m, block 2 at 5667 m
    x0 = (800.0 - (TOP_A[0] - 200.0)) / 0.15
    x2 = 4000.0 + (450.0 - (TOP_A[2] - 200.0)) / 0.15
    contacts = (Contact(x0, 700.0, "B", "A"), Contact(x2, 200.0, "A", "B"))
    intervals = (UnitInterval(0.0, x0, "B"), UnitInterval(x0, 2000.0, "A"),
                 UnitInterval(2000.0, 4000.0, "B"),  # the ground at 450 m, in B (460-160 m)
                 UnitInterval(4000.0, x2, "A"), UnitInterval(x2, L, "B"))
    faults = tuple(FaultCrossing(x, float(_ground(x - 1.0)), 60.0, 90.0, 60.0, "normal",
                                 f"F{k}") for k, x in enumerate((2000.0, 4000.0)))
    geology = SurfaceGeology(intervals, contacts, faults)
    dd = np.array([300.0, 900.0, 1500.0, 2400.0, 3000.0, 3600.0, 4400.0, 5000.0, 5600.0])
    n = len(dd)
    dips = ProjectedDips(np.array([f"d{i}" for i in range(n)]), dd, np.zeros(n), dd,
                         np.zeros(n), _ground(dd), np.zeros(n), np.zeros(n), np.zeros(n),
                         np.zeros(n, bool), np.zeros(n, bool))
    # Beside the line, 20 m to the north, a hillside reaches the A|B contact at 460 m.
    beside = CorridorContacts(np.array([3000.0]), np.array([20.0]), np.array([3000.0]),
                              np.array([-20.0]), np.array([TOP_A[1] - 200.0]), ("A",), ("B",),
                              25.0, 500.0, np.array([False]))
    return prof, geology, dips, beside


def _top_b_error(draft, block):
    pts = np.vstack([np.asarray(h.geometry.coords) for h in draft.horizons
                     if h.top_of == "B" and h.block == block])
    return float(np.max(np.abs(pts[:, 1] - (TOP_A[block] - 200.0))))


def test_a_block_without_a_contact_on_the_line_uses_the_corridor():
    prof, geology, dips, beside = _normal_fault_pair()
    draft = build_draft(LINE, prof, geology, dips, COLUMN, depth=1500.0,
                        corridor_contacts=beside, warn=lambda m: None)
    # Horizontal beds (analytic): the top of B lies at 460 m in the middle block.
    thinnest = float(COLUMN.thicknesses.min())
    assert _top_b_error(draft, 1) < 0.15 * thinnest  # the target
    assert _top_b_error(draft, 1) < 1.0
    assert any("block 1" in e and "contacts from the corridor" in e and "A|B" in e
               for e in draft.log)
    assert not any("mid-unit" in e for e in draft.log)
    # Separations across the two normal faults: the true throws (240 m, 260 m) along
    # a 60° fault are 240/sin 60° and 260/sin 60° (plane geometry), normal sense (-).
    seps = [f.separations["B"] for f in draft.faults]
    assert seps == pytest.approx([-240.0 / math.sin(math.radians(60.0)),
                                  -260.0 / math.sin(math.radians(60.0))], abs=2.0)


def test_without_the_corridor_the_block_falls_back_to_mid_unit():
    prof, geology, dips, _ = _normal_fault_pair()
    shown = []
    draft = build_draft(LINE, prof, geology, dips, COLUMN, depth=1500.0, warn=shown.append)
    assert any("mid-unit" in m for m in shown)
    assert _top_b_error(draft, 1) > 100.0  # what the corridor contact corrects


# --- sampling the map's boundaries and projecting them ------------------------------------

def _map():
    hill = shapely.box(2900.0, 20.0, 3100.0, 300.0)  # A beside the line, not reaching it
    ground = shapely.box(0.0, -500.0, L, 500.0).difference(hill)
    return MapData(gpd.GeoDataFrame({"unit": ["A", "B"]}, geometry=[hill, ground]), "unit")


def test_corridor_contacts_perpendicular():
    cc = corridor_contacts(_map(), LINE, 200.0, lambda x, y: np.full(len(x), 460.0),
                           spacing=10.0)
    assert len(cc) > 0 and not np.asarray(cc.crosses_line).any()
    assert {frozenset(p) for p in zip(cc.unit_a, cc.unit_b, strict=True)} == {frozenset("AB")}
    # Perpendicular projection onto an east-west line: distance = x, offset = -y (the
    # north lies left of travel), only within the 200 m corridor.
    assert np.allclose(cc.distance_m, cc.x) and np.allclose(cc.offset_m, -cc.y)
    assert np.all((cc.y >= 20.0 - 1e-9) & (cc.y <= 200.0 + 1e-9))
    assert np.allclose(cc.elevation_m, 460.0)


def test_corridor_contacts_down_plunge():
    # Axis trending 030, plunging 15°: a point carried along the trend by s metres
    # (s < 0: against the trend) drops s·tan(15°) (Ragan: down-plunge projection).
    axis = FoldAxis(30.0, 15.0, (0.9, 0.09, 0.01), 0.9, 10)
    cc = corridor_contacts(_map(), LINE, 200.0, lambda x, y: np.full(len(x), 460.0),
                           method="plunge", axis=axis, spacing=10.0)
    s = -cc.y / math.cos(math.radians(30.0))  # along the trend back to y = 0
    assert np.allclose(cc.distance_m, cc.x + s * math.sin(math.radians(30.0)))
    assert np.allclose(cc.elevation_m, 460.0 - s * math.tan(math.radians(15.0)))


def test_corridor_contacts_along_strike_and_faults():
    # Along a strike of 000 the points move due south; a fault between the hill and the
    # line puts them in another block: they are left out.
    cc = corridor_contacts(_map(), LINE, 200.0, lambda x, y: np.full(len(x), 460.0),
                           method="strike", strike_at=lambda x, y: np.zeros(len(x)),
                           spacing=10.0)
    assert len(cc) and np.allclose(cc.distance_m, cc.x)
    m = _map()
    faults = gpd.GeoDataFrame({"dip": [60.0], "dip_direction": [0.0]},
                              geometry=[shapely.LineString([(0.0, 10.0), (L, 10.0)])])
    faulted = MapData(m.units, "unit", faults, {"dip": "dip", "dip_direction": "dip_direction"})
    cc = corridor_contacts(faulted, LINE, 200.0, lambda x, y: np.full(len(x), 460.0),
                           spacing=10.0)
    assert len(cc) == 0
