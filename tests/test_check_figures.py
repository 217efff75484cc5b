"""The checks' figures: the area-depth graph and the incremental sequence (invented data)."""

from __future__ import annotations

import numpy as np
import pytest
from PIL import Image
from shapely.geometry import LineString

from mapsection.checks.area import DetachmentFit, ExcessAreaPoint
from mapsection.checks.sequence import Frame, FrameHorizon
from mapsection.render.area_depth import area_depth_figure, draw_area_depth
from mapsection.render.colours import chart_colour
from mapsection.render.sequence import FRAME_DPI, FRAME_WIDTH_IN, write_sequence
from mapsection.stratigraphy import Column, Unit


def _fit(issues=()):
    # Excess area S = D (z_d - z) (Chamberlin 1910; Epard & Groshong 1993): exact points
    # for D = 800 m and a detachment 2000 m deep.
    d, zd = 800.0, 2000.0
    pts = [ExcessAreaPoint(f"u{k}", 1500.0 - z, z, d * (zd - z)) for k, z in
           enumerate((200.0, 600.0, 1100.0))]
    return DetachmentFit(pts, d, zd, 1.0, 1500.0, "elevation 1500 m", list(issues))


def test_area_depth_line_reaches_zero_excess_area_at_the_detachment(tmp_path):
    fig = area_depth_figure(_fit(), "A")
    ax = fig.axes[0]
    line = next(ln for ln in ax.get_lines() if ln.get_gid() == "fit-line")
    s, z = line.get_xydata().T
    assert s.min() == pytest.approx(0.0, abs=1e-12) and z[np.argmin(s)] == pytest.approx(2000.0)
    texts = " ".join(t.get_text() for t in ax.texts) + ax.get_title()
    assert "D = 800 m" in texts and "Section A" in texts
    assert "2000 m below elevation 1500 m" in texts and "elevation -500 m" in texts
    doubtful = area_depth_figure(_fit(["poor fit: R² below 0.9"]), "A")
    assert "not determined" in doubtful.axes[0].get_title()
    assert draw_area_depth(_fit(), tmp_path / "a.png", "A").stat().st_size > 1000


def _frames():
    """Two fault blocks of three flat horizons rising by 100 m a frame (invented)."""
    out = []
    for k in range(3):
        hs = []
        for block, (x0, x1) in enumerate(((0.0, 4000.0), (4200.0, 8000.0))):
            for name, z in (("Ku", 1000.0), ("Jm", 800.0), ("Tl", 500.0)):
                zz = z + 100.0 * k * block
                hs.append(FrameHorizon(name, block, LineString([(x0, zz), (x1, zz)])))
        out.append(Frame(k, k / 2, hs, [LineString([(4100.0, 1200.0), (4100.0, 300.0)])]))
    return out


@pytest.mark.parametrize("ve", [1.0, 3.0])
def test_sequence_frames_have_fills_legend_and_loop(tmp_path, ve):
    column = Column((Unit("Ku", 200.0, age="Cretaceous"), Unit("Jm", 300.0, age="Jurassic"),
                     Unit("Tl", 400.0, age="Triassic")))
    d = np.linspace(0.0, 8000.0, 50)
    paths = write_sequence(_frames(), tmp_path, column=column, title="A", ve=ve,
                           ground=(d, np.full_like(d, 1150.0)))
    assert [p.name for p in paths] == ["sequence_01.png", "sequence_02.png",
                                       "sequence_03.png", "sequence.gif"]
    img = np.asarray(Image.open(paths[1]).convert("RGB"))
    assert img.shape[1] == round(FRAME_WIDTH_IN * FRAME_DPI)
    # The units between the horizons are filled with their chart colours (CGMW/ICS).
    for age in ("Cretaceous", "Jurassic"):
        rgb = np.array([int(chart_colour(age)[i:i + 2], 16) for i in (1, 3, 5)])
        assert (np.abs(img.astype(int) - rgb).sum(axis=-1) < 6).mean() > 0.01, age
    with Image.open(paths[-1]) as gif:
        assert gif.n_frames == 3 and gif.info.get("loop") == 0  # loops for ever


def test_sequence_frame_height_follows_the_ve(tmp_path):
    heights = []
    for ve in (1.0, 3.0):
        folder = tmp_path / str(ve)
        folder.mkdir()
        paths = write_sequence(_frames(), folder, ve=ve)
        heights.append(Image.open(paths[0]).size[1])
    assert heights[1] > heights[0]
