"""The section sheet: paper sizes, the scale, fonts, the title block, half-arrows, labels.

Page sizes are checked against ISO 216 (A series, millimetres) and ANSI/ASME Y14.1 (letter
8.5 x 11 in, tabloid 11 x 17 in), read from the PDF by pypdf (the reference reader); PDF
points are 1/72 inch (ISO 32000-1, 8.3.2.3). The draft is the hand-made one of conftest.
"""

from __future__ import annotations

import math
import re
import xml.etree.ElementTree as ET
from types import SimpleNamespace

import numpy as np
import pytest
import shapely
from conftest import hand_draft
from matplotlib.backends.backend_agg import FigureCanvasAgg

from mapsection import __version__
from mapsection.errors import ParameterError
from mapsection.render.layout import nice_length
from mapsection.render.section import (
    LABEL_MIN_AREA_MM2,
    constrained_elevation,
    draw_section,
    section_figure,
)
from mapsection.render.sheet import (
    SheetOptions,
    TitleInfo,
    choose_scale,
    parse_scale,
    sheet_name,
    sheet_size_mm,
    vertical_datum,
)

pypdf = pytest.importorskip("pypdf")

PT_PER_MM = 72.0 / 25.4
# ISO 216 and ANSI/ASME Y14.1 sheets, portrait (width, height) in millimetres.
SHEETS = {"A4": (210, 297), "A3": (297, 420), "A2": (420, 594), "A1": (594, 841),
          "A0": (841, 1189), "letter": (215.9, 279.4), "tabloid": (279.4, 431.8)}


def _fonts(reader) -> list[tuple[str, str]]:
    """(base font, subtype) of every font of every page, descendants included."""
    out = []
    for page in reader.pages:
        fonts = page["/Resources"].get("/Font", {})
        for ref in fonts.values():
            f = ref.get_object()
            out.append((str(f.get("/BaseFont")), str(f.get("/Subtype"))))
            for d in f.get("/DescendantFonts", []):
                d = d.get_object()
                out.append((str(d.get("/BaseFont")), str(d.get("/Subtype"))))
    return out


@pytest.mark.parametrize("name, portrait", [(n, False) for n in SHEETS] + [("A3", True)])
def test_pdf_page_is_the_sheet_and_fonts_are_truetype(tmp_path, name, portrait):
    draft = hand_draft(2.0)
    (pdf,) = draw_section(draft, tmp_path / "s", formats=("pdf",),
                          sheet=SheetOptions(name.lower(), portrait))
    reader = pypdf.PdfReader(pdf)
    assert len(reader.pages) == 1
    box = reader.pages[0].mediabox
    w, h = SHEETS[name] if portrait else SHEETS[name][::-1]
    assert float(box.width) == pytest.approx(w * PT_PER_MM, abs=0.01)
    assert float(box.height) == pytest.approx(h * PT_PER_MM, abs=0.01)
    fonts = _fonts(reader)
    assert fonts and not any(sub == "/Type3" for _, sub in fonts)
    assert any(sub in ("/TrueType", "/CIDFontType2") for _, sub in fonts)


def _scale_bar_pt(svg) -> float:
    """The printed length (pt) of the section's scale bar, from its two halves' paths."""
    root = ET.parse(svg).getroot()
    xs = []
    for el in root.iter():
        if re.match(r"^scale-bar-\d$", el.get("id") or ""):
            for path in el.iter():
                d = path.get("d")
                if d:
                    nums = [float(v) for v in re.findall(r"-?\d+(?:\.\d+)?", d)]
                    xs += nums[0::2]
    return max(xs) - min(xs)


@pytest.mark.parametrize("scale", [25000.0, 50000.0])
def test_scale_bar_measures_true(tmp_path, scale):
    # Printed at 100 %, the bar's length on the page is its ground length / scale
    # (the definition of a representative fraction); 0.5 mm is the tolerance asked.
    draft = hand_draft(1.0)
    (svg,) = draw_section(draft, tmp_path / "s", formats=("svg",),
                          sheet=SheetOptions("A2" if scale < 50000 else "A3", scale=scale))
    ground = nice_length(draft.line.length)
    printed_mm = _scale_bar_pt(svg) / PT_PER_MM
    assert printed_mm == pytest.approx(ground / scale * 1000.0, abs=0.5)
    text = svg.read_text(encoding="utf-8")
    assert f"{ground / 1000:g} km" in text and f"Scale 1:{scale:,.0f}" in text


def test_title_block_texts_are_text_in_the_svg(tmp_path):
    draft = hand_draft(2.0)
    info = TitleInfo("Tarn Hollow sheet", (("DEM", "dem.tif (survey 2019)"),), "NAVD88",
                     "2026-01-31")
    (svg,) = draw_section(draft, tmp_path / "s", formats=("svg",),
                          sheet=SheetOptions("A2", scale=25000), info=info)
    text = svg.read_text(encoding="utf-8")
    # EPSG:32611 is WGS 84 / UTM zone 11N (EPSG registry); the hand draft's ends are
    # (1000, 2000) and (8000, 6000).
    for needed in ("EPSG:32611", "WGS 84 / UTM zone 11N", "1000 E  2000 N", "8000 E  6000 N",
                   "1:25,000", "V.E. 2×", f"mapsection {__version__}", "Tarn Hollow sheet",
                   "dem.tif (survey 2019)", "2026-01-31", "Checked by", "m above NAVD88"):
        assert needed in text, needed


def _angle(v) -> float:
    return math.degrees(math.atan2(v[1], v[0]))


@pytest.mark.parametrize("ve", [1.0, 2.0, 5.0])
def test_half_arrows_parallel_to_the_fault_and_on_it(ve):
    # On the page (display coordinates), each half-arrow's shaft is parallel to the
    # fault within 2 degrees and lies within 3 mm of it.
    draft = hand_draft(ve)
    fig = section_figure(draft)
    FigureCanvasAgg(fig).draw()
    ax = fig.axes[0]
    lines = {}
    for ln in ax.get_lines():
        lines.setdefault(ln.get_gid(), []).append(ax.transData.transform(ln.get_xydata()))
    (fault_art,) = [c for c in ax.collections if c.get_gid() == "fault-0"]
    fault = max((ax.transData.transform(xy) for xy in fault_art.get_segments()),
                key=lambda xy: np.ptp(xy[:, 1]))
    arrows = lines["fault-0-motion"]
    assert len(arrows) == 2
    fault_line = shapely.LineString(fault)
    px_per_mm = fig.dpi / 25.4
    for arr in arrows:
        shaft = arr[1] - arr[0]
        mid = (arr[0] + arr[1]) / 2
        # the fault's direction at the point nearest the shaft's middle
        s = fault_line.project(shapely.Point(mid))
        p0 = np.array(fault_line.interpolate(max(s - 1.0, 0)).coords[0])
        p1 = np.array(fault_line.interpolate(s + 1.0).coords[0])
        diff = (_angle(shaft) - _angle(p1 - p0)) % 180.0
        assert min(diff, 180.0 - diff) < 2.0
        assert fault_line.distance(shapely.Point(mid)) < 3.0 * px_per_mm


def test_unit_polygons_large_on_the_page_are_labelled():
    # Every unit polygon of at least LABEL_MIN_AREA_MM2 on the page (the tool's default)
    # has a label whose anchor lies inside it.
    draft = hand_draft(2.0)
    opts = SheetOptions("A2", scale=25000)
    fig = section_figure(draft, sheet=opts)
    ax = fig.axes[0]
    labels = [(t.get_position(), t.get_text()) for t in ax.texts
              if (t.get_gid() or "").startswith("unit-label-")]
    mm_per_m = 1000.0 / 25000.0
    big = [u for u in draft.units if u.geometry.area * mm_per_m ** 2 * draft.ve
           >= LABEL_MIN_AREA_MM2]
    assert len(big) == 3
    for u in big:
        assert any(u.geometry.contains(shapely.Point(xy)) for xy, _ in labels), u.unit
    assert {"Tu", "Km", "Jl"} <= {text for _, text in labels}


def test_unconstrained_depth_is_dashed_and_queried():
    # The hand draft's mapped contact is Tu | Km: the deepest point of their horizons
    # (the top of Km, 750 m falling at 3 % over 8000 m... its lowest end) less the
    # thickness of Km (200 m) bounds the constrained part.
    draft = hand_draft(1.0)
    km = next(h for h in draft.horizons if h.top_of == "Km")
    assert constrained_elevation(draft) == pytest.approx(km.geometry.bounds[1] - 200.0)
    fig = section_figure(draft)
    ax = fig.axes[0]
    (fault,) = [c for c in ax.collections if c.get_gid() == "fault-0"]
    dashes = [d for _, d in fault.get_linestyles()]
    assert len(dashes) == 2 and dashes.count(None) == 1  # one solid part, one dashed
    assert any(t.get_gid() == "fault-0-query" for t in ax.texts)
    z_c = constrained_elevation(draft)
    for xy, d in zip(fault.get_segments(), dashes, strict=True):
        assert (xy[:, 1].min() >= z_c - 1e-6) if d is None else (xy[:, 1].max() <= z_c + 1e-6)


def test_failed_draft_carries_fail_mark_and_misfits():
    draft = hand_draft(1.0)
    misfit = SimpleNamespace(top_of="Km", map_distance_m=3000.0, section_distance_m=3400.0,
                             misfit_m=400.0, elevation_m=800.0)
    small = SimpleNamespace(top_of="Km", map_distance_m=5000.0, section_distance_m=5010.0,
                            misfit_m=10.0, elevation_m=800.0)
    checks = SimpleNamespace(
        topography=SimpleNamespace(passed=False, contact_threshold_m=50.0,
                                   contact_misfits=[misfit, small]),
        restoration=SimpleNamespace(passed=True), area_balance=SimpleNamespace(passed=None),
        kinematics=SimpleNamespace(passed=False))
    from conftest import hand_map

    fig = section_figure(draft, hand_map(draft), checks=checks)
    fail = [t.get_text() for t in fig.texts if t.get_gid() == "fail-mark"]
    assert fail == ["FAIL: topography, kinematics"]
    ax, inset = fig.axes
    marks = [ln for ln in ax.get_lines() if (ln.get_gid() or "").startswith("misfit-")]
    assert len(marks) == 1  # only the misfit beyond the threshold
    assert marks[0].get_xydata()[:, 0].tolist() == [3000.0, 3400.0]
    assert [ln.get_gid() for ln in inset.get_lines()].count("map-misfit-0") == 1
    # a passed draft: no mark
    checks.topography.passed = False
    checks.topography.passed, checks.kinematics.passed = True, True
    fig = section_figure(draft, checks=checks)
    assert not [t for t in fig.texts if t.get_gid() == "fail-mark"]


def test_pin_and_loose_lines_drawn_where_the_restoration_put_them():
    # issue 12: pin and loose lines on the section as on the restoration
    draft = hand_draft(1.0)
    checks = SimpleNamespace(restoration=SimpleNamespace(passed=True, pin_m=7500.0,
                                                         loose_m=500.0))
    ax = section_figure(draft, checks=checks).axes[0]
    at = {ln.get_gid(): ln.get_xdata()[0] for ln in ax.get_lines()
          if ln.get_gid() in ("pin-line", "loose-line")}
    assert at == {"pin-line": 7500.0, "loose-line": 500.0}


def test_sheet_names_scales_and_errors():
    assert sheet_name("a3") == "A3" and sheet_name("Letter") == "letter"
    assert sheet_size_mm("tabloid") == pytest.approx((431.8, 279.4))
    with pytest.raises(ParameterError, match="sheet 'B5'"):
        sheet_name("B5")
    assert parse_scale("1:25,000") == parse_scale(" 25000 ") == 25000.0
    for bad in ("1:x", "0", "-5"):
        with pytest.raises(ParameterError, match="scale"):
            parse_scale(bad)
    # 9 km in 250 mm needs 1:36,000: the next standard scale is 1:50,000 (common practice:
    # 1:5,000, 1:10,000, 1:25,000, 1:50,000, 1:100,000, 1:250,000 ...)
    assert choose_scale(9000.0, 100.0, 250.0, 200.0) == 50000.0
    assert choose_scale(900.0, 100.0, 250.0, 200.0) == 5000.0
    assert choose_scale(200000.0, 100.0, 250.0, 200.0) == 1000000.0


def test_vertical_datum_from_a_compound_crs():
    # pyproj: EPSG:5703 is NAVD88 height; a compound CRS names its vertical datum.
    import pyproj

    compound = pyproj.CRS("EPSG:32611+5703")
    assert "North American Vertical Datum 1988" in vertical_datum(compound)
    assert vertical_datum(pyproj.CRS("EPSG:32611")) == "DEM datum"
    assert vertical_datum(None) == "DEM datum"


def test_project_sheet_keys(tmp_path):
    # self-consistency: the documented keys of docs/index.md load as written
    from conftest import GOOD_PROJECT as GOOD

    from mapsection.errors import ProjectFileError
    from mapsection.project import load_project

    text = GOOD.replace('method = "arc"', 'method = "arc"\nsheet = "a2"\nscale = "1:25,000"\n'
                        'portrait = true\nconstrained_depth = 800.0')
    text = text.replace('path = "dem.tif"', 'path = "dem.tif"\nsource = "LiDAR 2019"')
    text = text.replace('thickness = 250.0', 'thickness = 250.0\nlabel = "Up"')
    p = tmp_path / "project.toml"
    p.write_text('title = "Tarn Hollow"\n' + text)
    proj = load_project(p)
    b = proj.sections[1]
    assert (b.sheet, b.scale, b.portrait, b.constrained_depth) == ("A2", 25000.0, True, 800.0)
    assert proj.sections[0].sheet is None and proj.sections[0].scale is None
    assert proj.title == "Tarn Hollow" and proj.sources == {"dem": "LiDAR 2019"}
    assert proj.column.units[0].label == "Up"
    for bad, key in (('sheet = "B5"', "section[1].sheet"), ('scale = "1:x"', "section[1].scale"),
                     ("scale = true", "section[1].scale"), ('portrait = "yes"',
                                                             "section[1].portrait")):
        p.write_text(GOOD.replace('method = "arc"', f'method = "arc"\n{bad}'))
        with pytest.raises(ProjectFileError, match=rf"^project.toml: {re.escape(key)}: "):
            load_project(p)


def test_cli_bad_sheet_is_one_line(tmp_path):
    # One line on stderr naming the option's value, exit code 2, nothing written.
    import os
    import subprocess
    import sys
    from pathlib import Path

    root = Path(__file__).resolve().parents[1]
    project = root / "sample_area" / "project.toml"
    env = {**os.environ, "PYTHONPATH": str(root)}
    res = subprocess.run([sys.executable, "-c", "from mapsection.cli.main import main; main()",
                          "build", str(project), "-o", str(tmp_path / "out"), "--sheet", "B5"],
                         capture_output=True, text=True, timeout=120, env=env)
    assert res.returncode == 2
    lines = res.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("mapsection: error: sheet 'B5'")
    assert not (tmp_path / "out").exists()


def test_period_chart_colours_and_one_colour_source():
    # CGMW/ICS International Chronostratigraphic Chart period colours (RGB), as quoted by
    # independent public tables of the chart: Quaternary 249/249/127 ... Cambrian 127/160/86.
    from mapsection.render.colours import chart_colour, colour_note
    from mapsection.sample import COLUMN
    from mapsection.stratigraphy import Column, Unit

    chart = {"Quaternary": "#f9f97f", "Neogene": "#ffe619", "Paleogene": "#fd9a52",
             "Cretaceous": "#7fc64e", "Jurassic": "#34b2c9", "Triassic": "#812b92",
             "Permian": "#f04028", "Carboniferous": "#67a599", "Devonian": "#cb8c37",
             "Silurian": "#b3e1b6", "Ordovician": "#009270", "Cambrian": "#7fa056"}
    for age, hexa in chart.items():
        assert chart_colour(age) == hexa, age
    # The sample's column takes all its colours from the chart: its Permian unit is red
    # (Permian), no longer a blue that reads as Jurassic; no mixed-source note.
    assert colour_note(COLUMN) is None
    assert chart_colour(COLUMN.unit("Talvo Limestone").age) == chart["Permian"]
    mixed = Column((Unit("a", 1.0, "#123456"), Unit("b", 1.0, age="Jurassic")))
    assert "except a" in colour_note(mixed)


def test_build_refuses_a_scale_the_sheet_cannot_hold(tmp_path):
    # Bad input stops the build before anything is written, naming the section, the sheet
    # and the largest standard scale that fits (9.2 km on landscape A4: 1:100,000).
    from pathlib import Path

    from mapsection.build import build_project

    project = Path(__file__).resolve().parents[1] / "sample_area" / "project.toml"
    with pytest.raises(ParameterError, match=r"^section A: A4 sheet: scale 1:5,000: .*"
                                             r"largest standard scale that fits is 1:100,000"):
        build_project(project, tmp_path / "out", section="A", sheet="a4", scale="1:5000",
                      warn=lambda m: None)
    assert not (tmp_path / "out").exists()


@pytest.fixture(scope="module")
def sample_draft_b():
    from pathlib import Path

    from mapsection.build import build_section
    from mapsection.project import load_project

    project = load_project(Path(__file__).resolve().parents[1] / "sample_area" / "project.toml")
    return build_section(project, "B", ve=2.0, warn=lambda m: None)


def test_sample_unit_polygons_are_labelled_and_bend_named(sample_draft_b):
    # The sample's section B (a bend, a thrust, folded units) on A2 at 1:25,000, VE 2: every
    # unit polygon of at least LABEL_MIN_AREA_MM2 on the page has a label inside it.
    draft = sample_draft_b
    fig = section_figure(draft, sheet=SheetOptions("A2", scale=25000))
    ax = fig.axes[0]
    anchors = [shapely.Point(t.get_position()) for t in ax.texts
               if (t.get_gid() or "").startswith("unit-label-")]
    k = (1000.0 / 25000.0) ** 2 * draft.ve  # mm² on the page per m² of section
    checked = 0
    for u in draft.units:
        for part in shapely.get_parts(u.geometry):
            if part.area * k >= LABEL_MIN_AREA_MM2:
                checked += 1
                assert any(part.contains(a) for a in anchors), u.unit
    assert checked >= 8
    texts = [t.get_text() for t in fig.texts]
    v = draft.line.vertices[1]
    assert f"bend 1: {v[0]:.0f} E  {v[1]:.0f} N" in texts
