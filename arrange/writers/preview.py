"""A picture of the score for a user with no notation program.

verovio (a general-purpose engraving library) lays the MusicXML out on pages;
every page goes into one tall SVG, stacked top to bottom, so the whole
passage is in one file.  ``png_bytes`` rasterises that SVG through cairosvg
when it is installed.  Both imports are lazy: without verovio the preview is
refused with a message that says how to get it.
"""
from __future__ import annotations

import re

from arrange.errors import OutputError

__all__ = ["svg_bytes", "png_bytes", "have_png", "PAGE_WIDTH", "MAX_PAGES"]

PAGE_WIDTH = 2100      # verovio units (tenths of a mm): an A4 page width
PAGE_HEIGHT = 2970
_SCALE = 40            # percent: a legible picture of a whole A4 page
_PIXELS = 1.5          # picture pixels per SVG unit: about 1260 pixels across
# the picture holds at most this many pages (6 A4 pages at 1.5 pixels a unit stay under
# cairo's 32,767-pixel image limit; a longer score is drawn from its first pages)
MAX_PAGES = 6


def _toolkit():  # noqa: ANN202
    try:
        import verovio
    except ImportError:
        raise OutputError("the preview needs the verovio library, which is not installed",
                          where="formats: preview",
                          accepted="pip install verovio, or leave 'preview' out of the formats") from None
    tk = verovio.toolkit()
    tk.setOptions({"pageWidth": PAGE_WIDTH, "pageHeight": PAGE_HEIGHT, "scale": _SCALE,
                   "adjustPageHeight": True, "footer": "none", "header": "auto",
                   "breaks": "auto", "svgViewBox": True, "xmlIdSeed": 1})
    return tk


def pages(musicxml: bytes, limit: int | None = None) -> tuple[list[str], int]:
    """The first ``limit`` pages (all by default) of the score as SVG documents
    (verovio's layout), and how many pages the score has."""
    tk = _toolkit()
    if not tk.loadData(_for_engraver(musicxml)):
        raise OutputError("verovio could not read the score it was given", where="preview",
                          accepted="a MusicXML score")
    total = tk.getPageCount()
    drawn = total if limit is None else min(total, limit)
    return [_plain_text_glyphs(tk.renderToSVG(i)) for i in range(1, drawn + 1)], total


# SMuFL metronome notes (SMuFL 1.4, "Metronome marks" range) and the plain Unicode
# music symbols that ordinary fonts carry: verovio writes them in its own music font,
# which an SVG viewer or cairosvg does not have, so the tempo would show a blank box.
# The same for the accidentals verovio writes inside chord symbols (its text-flat
# U+EA64, text-natural U+EA65, text-sharp U+EA66; and the standard SMuFL U+E260-E262).
_METRONOME_NOTES = {"\ueca5": "\u2669", "\ueca7": "\u266a", "\ueca6": "\u2669",
                    "\uea64": "\u266d", "\uea65": "\u266e", "\uea66": "\u266f",
                    "\ue260": "\u266d", "\ue261": "\u266e", "\ue262": "\u266f"}
_SMUFL_TEXT = re.compile(r'<tspan font-family="Leipzig" font-size="(\d+)px">([^<]*)</tspan>')


_DEGREE = re.compile(r"<degree print-object=\"no\">.*?</degree>\s*", re.S)


def _for_engraver(musicxml: bytes) -> str:
    """The score as verovio should draw it.  Our chord symbols carry their whole text
    in ``<kind text=...>`` and their extensions as ``<degree print-object="no">`` (the
    MusicXML 4.0 way to keep the meaning without printing it twice); verovio prints
    degrees anyway ("C7b9(b9)"), so the picture is drawn from a copy without them."""
    return _DEGREE.sub("", musicxml.decode("utf-8"))


def _plain_text_glyphs(svg: str) -> str:
    def swap(m: re.Match[str]) -> str:
        text = m.group(2)
        if not text or any(c not in _METRONOME_NOTES for c in text):
            return m.group(0)
        size = round(int(m.group(1)) * 0.6)
        return (f'<tspan font-family="DejaVu Sans, Segoe UI Symbol, sans-serif" font-size="{size}px">'
                + "".join(_METRONOME_NOTES[c] for c in text) + "</tspan>")

    return _SMUFL_TEXT.sub(swap, svg)


_VIEWBOX = re.compile(r'viewBox="0 0 ([\d.]+) ([\d.]+)"')


def svg_bytes(musicxml: bytes, notes: list[str] | None = None) -> bytes:
    """The pages (at most :data:`MAX_PAGES`) in one SVG, stacked, on a white ground;
    a one-line notice goes to ``notes`` when the score has more."""
    docs, total = pages(musicxml, MAX_PAGES)
    if total > len(docs) and notes is not None:
        notes.append(f"preview: the first {len(docs)} of {total} pages are drawn (the picture holds "
                     f"at most {MAX_PAGES}); the MusicXML score holds them all")
    sizes = []
    for d in docs:
        m = _VIEWBOX.search(d)
        sizes.append((float(m.group(1)), float(m.group(2))) if m else (float(PAGE_WIDTH), float(PAGE_HEIGHT)))
    width = max(w for w, _ in sizes)
    height = sum(h for _, h in sizes)
    body = []
    y = 0.0
    for d, (w, h) in zip(docs, sizes, strict=True):
        inner = d[d.index("<svg"):]
        inner = re.sub(r'<svg\b', f'<svg x="0" y="{y:g}" width="{w:g}" height="{h:g}"', inner, count=1)
        body.append(inner)
        y += h
    px_w = round(width * _PIXELS)
    px_h = round(height * _PIXELS)
    head = ('<?xml version="1.0" encoding="UTF-8"?>\n'
            f'<svg xmlns="http://www.w3.org/2000/svg" xmlns:xlink="http://www.w3.org/1999/xlink" '
            f'width="{px_w}" height="{px_h}" viewBox="0 0 {width:g} {height:g}">\n'
            f'<rect x="0" y="0" width="{width:g}" height="{height:g}" fill="white"/>\n')
    return (head + "\n".join(body) + "\n</svg>\n").encode("utf-8")


def have_png() -> bool:
    try:
        import cairosvg  # noqa: F401
    except (ImportError, OSError):
        return False
    return True


def png_bytes(svg: bytes) -> bytes:
    import cairosvg

    data: bytes = cairosvg.svg2png(bytestring=svg, background_color="white")
    return data
