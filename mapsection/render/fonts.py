"""TrueType fonts embedded in the figures' PDFs, subset without their layout tables.

A PDF written with ``pdf.fonttype`` 42 embeds each font it uses as TrueType (Type 42),
subset to the glyphs on the page. Publishers refuse Type 3 fonts, so the figures keep
TrueType; but matplotlib's subsetter reads and subsets the font's OpenType layout tables
(GSUB, GPOS, GDEF: ligatures, kerning pairs, mark positioning) for every PDF, which was
most of the cost of writing a figure's PDF (about 0.3 s a font a page on the sample area).

A PDF viewer never uses those tables: the PDF places every glyph itself, and
matplotlib has already laid the text out before writing. :func:`pdf_fonts` subsets the
fonts without them; the glyph outlines (``glyf``), their widths (``hmtx``), the hinting
programs and the character map are kept as they were, so the page looks the same.
"""

from __future__ import annotations

import contextlib
import inspect
from collections.abc import Iterator
from typing import Any

import matplotlib

__all__ = ["PDF_RC", "pdf_fonts"]

# TrueType (Type 42) fonts in PDF and PostScript output: publishers refuse Type 3.
PDF_RC = {"pdf.fonttype": 42, "ps.fonttype": 42}

# Tables a PDF viewer does not read: text layout (OpenType and the older kerning
# table), already applied by matplotlib when it placed the glyphs.
_LAYOUT_TABLES = ("GSUB", "GPOS", "GDEF", "BASE", "JSTF", "MATH", "kern")


def _lean_subset(fontfile: Any, glyphs: Any):
    """The subset matplotlib's ``get_glyphs_subset`` makes, without the layout tables."""
    from fontTools import subset
    from matplotlib.backends import _backend_pdf_ps

    options = subset.Options(glyph_names=True, recommended_glyphs=True, layout_features=[])
    options.drop_tables += ["FFTM", "PfEd", "BDF", "meta", "MERG", "TSIV", "Zapf", "bdat",
                            "bloc", "cidg", "fdsc", "feat", "fmtx", "fond", "just", "kerx",
                            "ltag", "morx", "trak", "xref", *_LAYOUT_TABLES]
    options.font_number = getattr(fontfile, "face_index", 0)
    font = subset.load_font(fontfile, options)
    for tag in _LAYOUT_TABLES:  # gone before subsetting: the subsetter would still read them
        if tag in font:
            del font[tag]
    subsetter = subset.Subsetter(options=options)
    subsetter.populate(gids=glyphs)
    subsetter.subset(font)
    return _backend_pdf_ps.SubsetResults(font, subsetter.glyph_index_map)._as_cm()


def _patchable() -> Any:
    """matplotlib's PDF/PS helper module when its subsetter is the one this module
    replaces (``get_glyphs_subset(fontfile, glyphs)`` returning ``SubsetResults``, as in
    matplotlib 3.11), else None: other versions keep their own subsetter."""
    try:
        from matplotlib.backends import _backend_pdf_ps
    except ImportError:  # pragma: no cover - a matplotlib without it
        return None
    original = getattr(_backend_pdf_ps, "get_glyphs_subset", None)
    if original is None or not hasattr(_backend_pdf_ps, "SubsetResults"):
        return None
    try:
        params = list(inspect.signature(original).parameters)
    except (TypeError, ValueError):  # pragma: no cover
        return None
    return _backend_pdf_ps if params == ["fontfile", "glyphs"] else None


@contextlib.contextmanager
def pdf_fonts() -> Iterator[None]:
    """Within: PDF (and PostScript) figures embed TrueType fonts (:data:`PDF_RC`), subset
    without their layout tables (see the module's description).

    Examples
    --------
    >>> with pdf_fonts():  # doctest: +SKIP
    ...     fig.savefig("figure.pdf")
    """
    module = _patchable()
    with matplotlib.rc_context(PDF_RC):
        if module is None:
            yield
            return
        original = module.get_glyphs_subset
        module.get_glyphs_subset = _lean_subset
        try:
            yield
        finally:
            module.get_glyphs_subset = original
