"""The section figure: not blank, countable in SVG, dips drawn with the section's VE.

The draft used here is built by hand from the draft dataclasses (invented data,
self-consistency) so that the figure is tested apart from the construction.
"""

from __future__ import annotations

import math
import re
import xml.etree.ElementTree as ET

import numpy as np
import pytest
from conftest import APPARENT, hand_draft, hand_map
from matplotlib.backends.backend_agg import FigureCanvasAgg
from PIL import Image

from mapsection.render.colours import chart_colour, fault_kind, unit_colours
from mapsection.render.layout import compass_point, nice_length, sheet_layout, ve_text
from mapsection.render.section import draw_section, section_figure
from mapsection.stratigraphy import Column, Unit


def _gids(svg_path, prefix: str) -> set[str]:
    root = ET.parse(svg_path).getroot()
    pat = re.compile(rf"^{prefix}-\d+$")
    return {el.get("id") for el in root.iter() if pat.match(el.get("id") or "")}


def _tick_count(svg_path) -> int:
    """Dip ticks in an SVG: the paths of the one collection ``dip-ticks``."""
    root = ET.parse(svg_path).getroot()
    (group,) = [el for el in root.iter() if el.get("id") == "dip-ticks"]
    return sum(1 for el in group.iter() if el.tag.rsplit("}", 1)[-1] in ("path", "use"))


@pytest.fixture(scope="module")
def written(tmp_path_factory):
    folder = tmp_path_factory.mktemp("fig")
    draft = hand_draft(2.0)
    paths = draw_section(draft, folder / "section", hand_map(draft))
    return draft, paths


def test_three_formats_written(written):
    draft, paths = written
    assert [p.suffix for p in paths] == [".png", ".svg", ".pdf"]
    assert all(p.stat().st_size > 1000 for p in paths)
    assert paths[2].read_bytes()[:5] == b"%PDF-"  # PDF magic number (ISO 32000)


def test_png_is_not_blank(written):
    _, paths = written
    img = np.asarray(Image.open(paths[0]).convert("RGB"))
    assert img.shape[0] > 500 and img.shape[1] > 1000
    colours = np.unique(img.reshape(-1, 3), axis=0)
    assert len(colours) > 50  # fills, lines, antialiased text
    assert img.std() > 20
    # Not white where the section is: the unit fills cover a real share of the page.
    non_white = np.any(img < 235, axis=-1).mean()
    assert non_white > 0.1


def test_svg_counts_horizons_and_dip_ticks(written):
    draft, paths = written
    assert _gids(paths[1], "horizon") == {f"horizon-{i}" for i in range(len(draft.horizons))}
    assert _tick_count(paths[1]) == len(draft.dips)
    assert _gids(paths[1], "fault") == {"fault-0"}


def test_svg_states_ve_names_ends_and_caution(written):
    _, paths = written
    text = paths[1].read_text(encoding="utf-8")
    assert "V.E. 2×" in text
    # The ends face back along the first segment and ahead along the last: the first
    # segment (3000, 4000) has bearing atan2(3000, 4000) = 036.9°, so the start faces
    # 216.9° (SW); the last segment runs east (090.0°, E).
    assert "A′" in text and "SW  (bearing 216.9°)" in text
    assert "E  (bearing 090.0°)" in text
    assert "CAUTION: A draft section is an interpretation" in text  # the caution, wrapped
    assert "Location (geologic map" in text


def test_compass_points():
    # The 16-point compass rose: 22.5° sectors centred on N, NNE, NE ... (common practice)
    assert [compass_point(b) for b in (0, 11.0, 11.3, 45, 125, 180, 305, 348.7)] == \
        ["N", "N", "NNE", "NE", "SE", "S", "NW", "NNW"]


@pytest.mark.parametrize("ve", [1.0, 2.0])
def test_dip_ticks_drawn_at_exaggerated_angle(ve):
    # Vertical exaggeration of a dip: tan(a') = VE * tan(a) (the standard relation,
    # e.g. Ragan, Structural Geology: An Introduction to Geometrical Techniques).
    draft = hand_draft(ve)
    fig = section_figure(draft)
    FigureCanvasAgg(fig).draw()  # applies the axes aspect
    ax = fig.axes[0]
    (coll,) = [c for c in ax.collections if c.get_gid() == "dip-ticks"]
    ticks = coll.get_segments()  # one per reading, in the readings' order
    assert len(ticks) == len(APPARENT)
    for i, a in enumerate(APPARENT):
        xy = ax.transData.transform(np.asarray(ticks[i]))
        (x0, y0), (x1, y1) = xy
        on_page = math.degrees(math.atan2(-(y1 - y0), x1 - x0))  # positive: down to the right
        assert on_page == pytest.approx(math.degrees(math.atan(ve * math.tan(math.radians(a)))),
                                        abs=0.05)
    # The axes' box has the section's shape times VE: same screen scale for x and y/VE.
    sx = ax.transData.transform([[1000.0, 0.0]])[0, 0] - ax.transData.transform([[0.0, 0.0]])[0, 0]
    sy = ax.transData.transform([[0.0, 1000.0]])[0, 1] - ax.transData.transform([[0.0, 0.0]])[0, 1]
    assert sy / sx == pytest.approx(ve, rel=1e-3)


def test_ve_statement():
    assert ve_text(1.0) == "Vertical exaggeration 1:1"
    assert ve_text(2.0) == "V.E. 2×"
    fig = section_figure(hand_draft(1.0))
    texts = [t.get_text() for ax in fig.axes for t in ax.texts]
    assert "Vertical exaggeration 1:1" in texts


def test_scale_bar_length_is_round():
    assert nice_length(9000.0) == 1000.0
    assert nice_length(26000.0) == 5000.0
    assert nice_length(1200.0) == 200.0


def test_colours_project_then_chart_then_palette():
    # CGMW/ICS International Chronostratigraphic Chart colours, values from memory:
    # Jurassic RGB 52/178/201, Early Cretaceous 140/205/87, Eocene 253/180/108.
    assert chart_colour("Jurassic") == "#34b2c9"
    assert chart_colour("Early Cretaceous") == chart_colour("Lower Cretaceous") == "#8ccd57"
    assert chart_colour("Palaeogene") == chart_colour("Paleogene")
    assert chart_colour("Jurassic limestone") == "#34b2c9"
    assert chart_colour("no such age") is None
    col = Column((Unit("a", 1.0, "#123456", age="Jurassic"), Unit("b", 1.0, age="Eocene"),
                  Unit("c", 1.0), Unit("d", 1.0)))
    c = unit_colours(col, ["off-column"])
    assert c["a"] == "#123456" and c["b"] == "#fdb46c"
    assert len({c["c"], c["d"], c["off-column"]}) == 3


def test_fault_kinds():
    assert fault_kind("Thrust") == "thrust"
    assert fault_kind("reverse") == "reverse"
    assert fault_kind("normal") == "normal"
    assert fault_kind("strike-slip") is None and fault_kind(None) is None


def test_normal_fault_half_arrows_show_hanging_wall_down():
    # Section-view sense (FGDC-STD-013-2006 style): the hanging-wall arrow points down the dip.
    fig = section_figure(hand_draft(1.0))
    ax = fig.axes[0]
    arrows = [ln.get_xydata() for ln in ax.get_lines() if ln.get_gid() == "fault-0-motion"]
    assert len(arrows) == 2
    # Fault descends to +x, so its hanging wall lies on the +x side: the arrow on that
    # side has its tip (point 1) lower than its tail (point 0).
    hw = max(arrows, key=lambda a: a[:, 0].mean())
    fw = min(arrows, key=lambda a: a[:, 0].mean())
    assert hw[1, 1] < hw[0, 1]
    assert fw[1, 1] > fw[0, 1]


def test_bad_format_is_refused(tmp_path):
    from mapsection.errors import ParameterError

    with pytest.raises(ParameterError, match="tiff"):
        draw_section(hand_draft(), tmp_path / "s", formats=("tiff",))
    assert not list(tmp_path.iterdir())


def test_rebuild_gives_identical_files(tmp_path, written):
    # self-consistency: no dates or random ids in the files, so rebuilds are comparable.
    draft, paths = written
    again = draw_section(draft, tmp_path / "section", hand_map(draft))
    for a, b in zip(paths, again, strict=True):
        assert a.read_bytes() == b.read_bytes(), a.suffix


@pytest.mark.parametrize("ve", [1.0, 2.0, 6.0])
def test_nothing_overlaps_the_section(ve):
    # self-consistency: the location map, legend, title block and texts of the sheet sit
    # beside or under the section, none on top of it, all within the sheet.
    draft = hand_draft(ve)
    fig = section_figure(draft, hand_map(draft))
    canvas = FigureCanvasAgg(fig)
    canvas.draw()
    r = canvas.get_renderer()
    ax, inset = fig.axes
    box = ax.get_window_extent(r)
    others = [inset.get_window_extent(r), *[t.get_window_extent(r) for t in fig.texts],
              *[a.get_window_extent(r) for a in fig.artists if a.get_gid() != "neatline"]]
    for bb in others:
        assert not bb.overlaps(box)
        assert bb.x1 <= fig.get_figwidth() * fig.dpi + 1 and bb.y0 >= -1
    # The box keeps the section's exaggerated shape.
    ylo, yhi = ax.get_ylim()
    assert (box.height / box.width) == pytest.approx(ve * (yhi - ylo) / draft.line.length,
                                                     rel=1e-3)


def test_sheet_layout_scale_and_refusal():
    # The largest standard scale at which the section fits; a scale asked that does not
    # fit is refused with the one that would.
    from mapsection.errors import ParameterError
    from mapsection.render.layout import MM

    lay = sheet_layout(420 * MM, 297 * MM, 9000.0, 3000.0, 1.0, 14, 16)
    assert lay.scale == 50000.0  # 180 mm at 1:50,000; 360 mm at 1:25,000 does not fit
    assert lay.axes[2] == pytest.approx(9000.0 / 50000.0 * 1000 * MM)
    assert lay.axes[3] == pytest.approx(3000.0 / 50000.0 * 1000 * MM)
    with pytest.raises(ParameterError, match="1:50,000"):
        sheet_layout(420 * MM, 297 * MM, 9000.0, 3000.0, 1.0, 14, 16, scale=25000.0)
