"""Print-ready PDF of a score or a part, from the engraving the preview uses.

The MusicXML goes through the preview's own layout (:func:`.preview.pages`: verovio,
every staff in its own key, chord symbols spaced), now on real paper: A4 or US letter,
verovio's pages cut to the paper's height (``adjustPageHeight`` off) at a staff size a
player reads (:data:`PART_SCALE`) or a conductor's score holds (:data:`SCORE_SCALE`).
Each page is drawn by resvg (the ``resvg-py`` wheel the preview's PNG already uses, so the
printed page looks exactly as the picture) at :data:`DPI` dots an inch, in grey, and laid
on a PDF page by fpdf2 (a pure-Python PDF library: no system library), with a footer of
real PDF text: the title, the score or part name, and "page n of N" (a reader can find
and copy them).  The PDF carries no creation date, so one project gives one PDF, byte for
byte.
"""
from __future__ import annotations

import io
from datetime import datetime, timezone

from arrange.errors import OutputError

__all__ = ["PAPER", "pdf_bytes", "have_pdf", "DPI", "PART_SCALE", "SCORE_SCALE"]

PAPER = {"a4": (210.0, 297.0), "letter": (215.9, 279.4)}    # mm (ISO 216; ANSI letter 8.5 x 11 in)
DPI = 300                 # a printer's usual resolution for line art on the page (common practice)
PART_SCALE = 90           # verovio percent: a staff about 6.5 mm high, a part's usual size (from memory)
SCORE_SCALE = 60          # about 4.3 mm: a score of many staves on one page (from memory)
_MARGIN = 120             # verovio units at 100 %: 12 mm round the music
_FOOTER_MM = 10.0         # the footer line's distance from the paper's foot


def have_pdf() -> bool:
    try:
        import fpdf  # noqa: F401
    except ImportError:
        return False
    return True


def _page(paper: str, scale: int) -> dict[str, object]:
    """verovio options for one sheet of ``paper`` at ``scale`` percent (page sizes in
    tenths of a mm at 100 %)."""
    w, h = PAPER[paper]
    k = 100 / scale
    margin = round(_MARGIN * k)
    return {"pageWidth": round(w * 10 * k), "pageHeight": round(h * 10 * k), "scale": scale,
            "adjustPageHeight": False, "pageMarginLeft": margin, "pageMarginRight": margin,
            "pageMarginTop": margin, "pageMarginBottom": round(margin * 1.4)}


def pdf_bytes(musicxml: bytes, title: str, label: str, paper: str = "a4", part: bool = True) -> bytes:
    """The whole score (``part`` False) or one part as PDF pages of ``paper``; ``label``
    (the part's name, or "Transposed score") stands in every page's footer."""
    if paper not in PAPER:
        raise OutputError(f"paper {paper!r} is not known", where="output.paper", accepted=", ".join(PAPER))
    try:
        from fpdf import FPDF
        from PIL import Image
    except ImportError:
        raise OutputError("the PDF needs the fpdf2 library, which is not installed", where="formats: pdf",
                          accepted="pip install fpdf2, or leave 'pdf' out of the formats") from None
    import resvg_py

    from arrange.writers.preview import pages

    w, h = PAPER[paper]
    svgs, total = pages(musicxml, page=_page(paper, PART_SCALE if part else SCORE_SCALE))
    doc = FPDF(unit="mm", format=(w, h))
    doc.set_creation_date(datetime(1970, 1, 1, tzinfo=timezone.utc))   # fpdf2 then writes no date stamp
    doc.set_title(f"{title} - {label}")
    doc.set_creator("arrange")
    doc.set_auto_page_break(False)
    width_px = round(w / 25.4 * DPI)
    for n, svg in enumerate(svgs, start=1):
        png = resvg_py.svg_to_bytes(svg_string=svg, background="white", width=width_px)
        grey = Image.open(io.BytesIO(bytes(png))).convert("L")
        doc.add_page()
        doc.image(grey, x=0, y=0, w=w)
        doc.set_font("Helvetica", size=9)
        doc.set_text_color(0)
        doc.set_xy(12, h - _FOOTER_MM - 2)
        doc.cell(w - 24, 4, _latin(f"{title} - {label}"), align="L")
        doc.set_xy(12, h - _FOOTER_MM - 2)
        doc.cell(w - 24, 4, f"page {n} of {total}", align="R")
    return bytes(doc.output())


def _latin(text: str) -> str:
    """The footer in the PDF's standard Helvetica (Latin-1): anything else as '?'."""
    return text.encode("latin-1", "replace").decode("latin-1")
