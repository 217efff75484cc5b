"""Faults in the construction: a thrust (and a normal fault) of known slip cutting a
homocline; each block built from its own data, horizons ending at the fault, and the
separation measured along the fault (analytic: a rigid translation of the hanging
wall along a planar fault separates every horizon by the slip)."""

from __future__ import annotations

import numpy as np
import pytest
import shapely

from mapsection.construct import build_draft
from mapsection.dips import ProjectedDips
from mapsection.geology import Contact, FaultCrossing, SurfaceGeology, UnitInterval
from mapsection.line import SectionLine
from mapsection.stratigraphy import Column, Unit
from mapsection.topo_profile import Profile

L = 10000.0
X_FAULT = 5000.0
BED_DIP = 20.0  # descends toward +x: the ground goes up-section toward +x
FAULT_DIP = -30.0  # descends toward -x: the hanging wall is the left block
COLUMN = Column(tuple(Unit(n, 250.0) for n in ("Ant", "Bex", "Cal", "Dor", "Eve", "Fal",
                                               "Gim", "Hal", "Ivo", "Jun")))


def faulted_homocline(slip: float):
    line = SectionLine(np.array([[0.0, 0.0], [L, 0.0]]), name="F")
    d = np.linspace(0.0, L, 2001)
    prof = Profile(d, d, np.zeros_like(d), np.zeros_like(d), line, None, 5.0)
    a = np.radians(BED_DIP)
    n = np.array([np.sin(a), np.cos(a)])  # younging normal of beds dipping toward +x
    f = np.radians(-FAULT_DIP)
    up = np.array([np.cos(f), np.sin(f)])  # up the fault (toward +x)
    c_fw = 1400.0 + X_FAULT * n[0]  # footwall: stratigraphic depth 1400 m at the fault

    def depth(x, hanging):
        p = np.column_stack([x, np.zeros_like(x)])
        shift = slip * (n @ up) if hanging else 0.0  # hanging wall moved up the fault by slip
        return c_fw - p @ n + shift

    contacts = []
    for lo, hi, hw in ((0.0, X_FAULT, True), (X_FAULT, L, False)):
        x = np.linspace(lo + 1, hi - 1, 20001)
        s = depth(x, hw)
        for i, top in enumerate(COLUMN.depth_to_top[1:], start=1):
            j = np.flatnonzero(np.diff(np.sign(s - top)) != 0)
            for k in j:
                xc = x[k] + (top - s[k]) * (x[k + 1] - x[k]) / (s[k + 1] - s[k])
                # s decreases toward +x: the older unit is before the contact
                contacts.append(Contact(float(xc), 0.0, COLUMN.names[i], COLUMN.names[i - 1]))
    contacts.sort(key=lambda c: c.distance_m)
    fault = FaultCrossing(X_FAULT, 0.0, 35.0, 315.0, FAULT_DIP, "thrust", "Test Thrust")
    geology = SurfaceGeology((UnitInterval(0.0, L, "Ant"),), tuple(contacts), (fault,))
    xs = np.array([800.0, 2000.0, 3500.0, 6500.0, 8000.0, 9500.0])
    ap = np.full(6, BED_DIP)
    z = np.zeros(6)
    dips = ProjectedDips(np.arange(6), xs, z, xs, z, z, z, ap, ap, np.zeros(6, bool),
                         np.zeros(6, bool))
    return line, prof, geology, dips


@pytest.mark.parametrize("slip", [800.0, -300.0])  # thrust (reverse) and normal sense
def test_fault_blocks_separation_and_cut_horizons(slip):
    line, prof, geology, dips = faulted_homocline(slip)
    draft = build_draft(line, prof, geology, dips, COLUMN, depth=3000.0)
    assert len(draft.faults) == 1
    fault = draft.faults[0]
    # The trace: from the ground at the fault's apparent dip down to the section base.
    c = np.asarray(fault.geometry.coords)
    assert c[0] == pytest.approx([X_FAULT, 0.0])
    # It ends at the section's base, or where it leaves the section's start first.
    assert c[-1][1] == pytest.approx(draft.base_elevation_m) or c[-1][0] == pytest.approx(0.0)
    slope = np.degrees(np.arctan2(c[0][1] - c[-1][1], c[0][0] - c[-1][0]))
    assert slope == pytest.approx(-FAULT_DIP)
    # Each block from its own contacts: all residuals vanish on both sides.
    assert max(abs(r.residual_m) for r in draft.residuals) < 1e-6
    assert {d.block for d in draft.domains} == {0, 1}
    # Horizons end at the fault: every block-0 piece lies on the fault's left side and
    # every block-1 piece on its right, and pieces of both blocks end on the fault.
    down = (c[-1] - c[0]) / np.hypot(*(c[-1] - c[0]))
    ends_on_fault = {0: 0, 1: 0}
    for h in draft.horizons:
        pts = shapely.get_coordinates(h.geometry)
        side = down[0] * (pts[:, 1] - c[0][1]) - down[1] * (pts[:, 0] - c[0][0])
        if h.block == 0:
            assert side.max() < 1e-6, h.top_of
        else:
            assert side.min() > -1e-6, h.top_of
        ends_on_fault[h.block] += int(np.sum(np.abs(side[[0, -1]]) < 1e-6))
    assert ends_on_fault[0] >= 8 and ends_on_fault[1] >= 8
    # Separation along the fault = the slip for every horizon (analytic).
    cut = [t for t in COLUMN.names if t in fault.separations]
    assert len(cut) >= 8
    for t in cut:
        assert fault.separations[t] == pytest.approx(slip, abs=0.5), t
    if slip > 0:
        assert all(v > 0 for v in fault.separations.values())  # reverse: hanging wall up


def test_block_without_dips_borrows_its_neighbours_domain():
    line, prof, geology, dips = faulted_homocline(800.0)
    keep = dips.distance_m > X_FAULT
    dips = ProjectedDips(*(getattr(dips, f)[keep] for f in (
        "id", "x", "y", "distance_m", "offset_m", "elevation_m", "strike", "dip",
        "apparent_dip", "poorly_constrained", "overturned")))
    msgs = []
    draft = build_draft(line, prof, geology, dips, COLUMN, depth=3000.0, warn=msgs.append)
    assert any("block 0" in m and "has no dips" in m for m in msgs)
    assert draft.faults[0].separations["Dor"] == pytest.approx(800.0, abs=0.5)
