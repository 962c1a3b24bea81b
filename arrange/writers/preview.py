"""A picture of the score for a user with no notation program.

verovio (a general-purpose engraving library) lays the MusicXML out on pages;
every page goes into one tall SVG, stacked top to bottom, so the whole
passage is in one file.  ``png_bytes`` rasterises that SVG through resvg (the
``resvg-py`` wheel: a compiled renderer with no system library to install, unlike
cairosvg, which needs the system's Cairo and silently lost the PNG on a machine without
it).  Both imports are lazy: without verovio the preview is refused with a message that
says how to get it.
"""
from __future__ import annotations

import re

from arrange.errors import OutputError

__all__ = ["svg_bytes", "png_bytes", "have_png", "PAGE_WIDTH", "MAX_PAGES", "toolkit_for", "per_staff_keys",
           "staff_keys"]

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


def toolkit_for(musicxml: bytes):  # noqa: ANN201
    """A verovio toolkit holding the score as the preview draws it: every staff keeps its
    own key signature at every key change (:func:`per_staff_keys`)."""
    tk = _toolkit()
    if not tk.loadData(_for_engraver(musicxml)):
        raise OutputError("verovio could not read the score it was given", where="preview",
                          accepted="a MusicXML score")
    keys = staff_keys(musicxml)
    if any(len(k) > 1 for k in keys.values()):
        tk.loadData(per_staff_keys(tk.getMEI(), keys))
    return tk


def pages(musicxml: bytes, limit: int | None = None) -> tuple[list[str], int]:
    """The first ``limit`` pages (all by default) of the score as SVG documents
    (verovio's layout), and how many pages the score has."""
    tk = toolkit_for(musicxml)
    total = tk.getPageCount()
    drawn = total if limit is None else min(total, limit)
    return [_fonts(_plain_text_glyphs(tk.renderToSVG(i))) for i in range(1, drawn + 1)], total


# verovio names "Times, serif" for its text; a renderer takes the first family it has, so
# the usual serif faces of Windows, macOS and Linux stand before the generic name
_SERIF = "Times, 'Times New Roman', 'Liberation Serif', 'DejaVu Serif', 'Noto Serif', serif"


def _fonts(svg: str) -> str:
    return svg.replace('font-family="Times, serif"', f'font-family="{_SERIF}"')


# SMuFL metronome notes (SMuFL 1.4, "Metronome marks" range) and the plain Unicode
# music symbols that ordinary fonts carry: verovio writes them in its own music font,
# which an SVG viewer or a PNG renderer does not have, so the tempo would show a blank box.
# The same for the accidentals verovio writes inside chord symbols (its text-flat
# U+EA64, text-natural U+EA65, text-sharp U+EA66; and the standard SMuFL U+E260-E262).
_METRONOME_NOTES = {"\ueca5": "\u2669", "\ueca7": "\u266a", "\ueca6": "\u2669",
                    "\uea64": "\u266d", "\uea65": "\u266e", "\uea66": "\u266f",
                    "\ue260": "\u266d", "\ue261": "\u266e", "\ue262": "\u266f",
                    "\uecb7": ".", " ": ""}     # the metronome's augmentation dot (a dotted beat)
_SMUFL_TEXT = re.compile(r'<tspan font-family="Leipzig" font-size="(\d+)px">([^<]*)</tspan>')


def staff_keys(musicxml: bytes) -> dict[int, dict[str, int]]:
    """Staff number (1-based, in part order) -> {measure number: fifths} of every key
    signature our MusicXML writes."""
    import xml.etree.ElementTree as ET

    text = musicxml.decode("utf-8")
    root = ET.fromstring(text[text.index("<score-partwise"):])
    out: dict[int, dict[str, int]] = {}
    for n, part in enumerate(root.iter("part"), start=1):
        out[n] = {m.get("number", ""): int(m.findtext("attributes/key/fifths") or 0)
                  for m in part.iter("measure") if m.find("attributes/key") is not None}
    return out


_KEY_CHANGE = re.compile(r'<scoreDef [^>]*>\s*<keySig [^>]*?mode="([^"]*)"[^>]*/>\s*</scoreDef>(\s*<measure [^>]*\bn="([^"]+)")')


def per_staff_keys(mei: str, keys: dict[int, dict[str, int]]) -> str:
    """verovio's MusicXML importer turns a key change into one signature for every staff
    (the first part's; an open upstream limitation), so transposing staves would be drawn
    in the wrong key.  Its own MEI is handed back with each such change written per staff:
    a ``<scoreDef>`` whose ``<staffDef n=..>`` each carry the staff's ``<keySig>`` from
    our MusicXML (MEI's way to change a definition for some staves only)."""
    def fix(m: re.Match[str]) -> str:
        mode, number = m.group(1), m.group(3)
        defs = []
        for n, by_measure in sorted(keys.items()):
            if number in by_measure:
                f = by_measure[number]
                sig = f"{f}s" if f > 0 else f"{-f}f" if f < 0 else "0"
                defs.append(f'<staffDef n="{n}"><keySig mode="{mode}" sig="{sig}"/></staffDef>')
        return "<scoreDef><staffGrp>" + "".join(defs) + "</staffGrp></scoreDef>" + m.group(2)

    return _KEY_CHANGE.sub(fix, mei)


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
        import resvg_py  # noqa: F401
    except ImportError:
        return False
    return True


def png_bytes(svg: bytes) -> bytes:
    import resvg_py

    data = resvg_py.svg_to_bytes(svg_string=svg.decode("utf-8"), background="white")
    return bytes(data)
