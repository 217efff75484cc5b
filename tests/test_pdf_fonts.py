"""PDF figures embed TrueType fonts subset without their layout tables, glyphs unchanged.

The reference is the font file matplotlib ships (DejaVu Sans), read with fontTools, and
the page's text as pypdf extracts it from the same figure saved by matplotlib's own
subsetter.
"""

from __future__ import annotations

import io

import matplotlib
import pytest
from matplotlib.figure import Figure

from mapsection.render.fonts import pdf_fonts

pypdf = pytest.importorskip("pypdf")
ttLib = pytest.importorskip("fontTools.ttLib")

TEXT = "Section A–A′ dip 35° (m)"


def _pdf(lean: bool) -> bytes:
    fig = Figure(figsize=(3, 1))
    fig.text(0.1, 0.5, TEXT, fontsize=9)
    buf = io.BytesIO()
    if lean:
        with pdf_fonts():
            fig.savefig(buf, format="pdf", metadata={"CreationDate": None})
    else:
        with matplotlib.rc_context({"pdf.fonttype": 42}):
            fig.savefig(buf, format="pdf", metadata={"CreationDate": None})
    return buf.getvalue()


def _embedded(pdf: bytes):
    page = pypdf.PdfReader(io.BytesIO(pdf)).pages[0]
    fonts = []
    for ref in page["/Resources"]["/Font"].values():
        font = ref.get_object()
        desc = font["/DescendantFonts"][0].get_object()["/FontDescriptor"].get_object()
        fonts.append(ttLib.TTFont(io.BytesIO(desc["/FontFile2"].get_object().get_data())))
    return page, fonts


def test_subset_keeps_glyph_outlines_and_drops_layout_tables():
    page, fonts = _embedded(_pdf(lean=True))
    assert len(fonts) == 1
    sub = fonts[0]
    # the layout tables a PDF viewer does not read are gone; outlines and widths stay
    assert not {"GSUB", "GPOS", "GDEF", "kern"} & set(sub.keys())
    assert {"glyf", "hmtx", "cmap", "loca"} <= set(sub.keys())
    from matplotlib import font_manager

    original = ttLib.TTFont(font_manager.findfont("DejaVu Sans"))
    ocmap, scmap = original.getBestCmap(), sub.getBestCmap()
    oglyf, sglyf = original["glyf"], sub["glyf"]
    for ch in set(TEXT) - {" "}:
        og, sg = ocmap[ord(ch)], scmap[ord(ch)]
        a, b = oglyf[og], sglyf[sg]
        # the same outline: coordinates, contour ends and advance width (fontTools)
        assert a.getCoordinates(oglyf)[0] == b.getCoordinates(sglyf)[0], ch
        assert a.getCoordinates(oglyf)[1] == b.getCoordinates(sglyf)[1], ch
        assert original["hmtx"][og] == sub["hmtx"][sg], ch


def test_page_text_as_with_matplotlibs_subsetter():
    lean, full = _pdf(lean=True), _pdf(lean=False)
    assert len(lean) < len(full)
    text = pypdf.PdfReader(io.BytesIO(lean)).pages[0].extract_text()
    assert text == pypdf.PdfReader(io.BytesIO(full)).pages[0].extract_text()
    assert "Section" in text and "35" in text


def test_subsetter_restored_after_the_block():
    from matplotlib.backends import _backend_pdf_ps

    before = _backend_pdf_ps.get_glyphs_subset
    with pdf_fonts():
        assert matplotlib.rcParams["pdf.fonttype"] == 42
    assert _backend_pdf_ps.get_glyphs_subset is before
