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

__all__ = ["svg_bytes", "png_bytes", "have_png", "PAGE_WIDTH", "MAX_HEIGHT", "toolkit_for", "per_staff_keys", "pages",
           "symbol_gaps", "SYMBOL_GAP", "spaced_symbols",
           "staff_keys", "drawn_page"]

PAGE_WIDTH = 2100      # verovio units (tenths of a mm): an A4 page width
PAGE_HEIGHT = 2970
_SCALE = 40            # percent: a legible picture of a whole A4 page
_PIXELS = 1.5          # picture pixels per SVG unit: about 1260 pixels across
# the picture is at most this many pixels high: resvg (tiny-skia) has no image-size limit of
# its own (cairo's was 32,767 pixels), but it holds the whole picture in memory, about ten
# bytes a pixel while it draws and encodes (measured: 1260 x 12,000 pixels, 130 MB; 1260 x
# 40,000, 410 MB), so 24,000 pixels (about 250 MB) keeps an ordinary laptop comfortable
# and draws a 32-bar chart and its transition whole (about 12,000 pixels for a 9-staff
# score); a longer score is drawn from its first pages, and a notice says so
MAX_HEIGHT = 24_000


# the side page margins (verovio units; its default is 50): verovio measures texts in its
# own Times metrics, but the picture draws them in whatever serif the renderer has (DejaVu
# Serif, a fifth wider, on a plain Linux machine), so "Bass Trombone" ran past the page's
# left edge and a chord symbol on a system's last beat past its right; 100 units (30
# pixels more) keep them inside
_MARGIN = 100


def _toolkit(page: dict[str, object] | None = None):  # noqa: ANN202
    try:
        import verovio
    except ImportError:
        raise OutputError("the preview needs the verovio library, which is not installed",
                          where="formats: preview",
                          accepted="pip install verovio, or leave 'preview' out of the formats") from None
    tk = verovio.toolkit()
    tk.setOptions({"pageWidth": PAGE_WIDTH, "pageHeight": PAGE_HEIGHT, "scale": _SCALE,
                   "adjustPageHeight": True, "footer": "none", "header": "auto",
                   "breaks": "auto", "svgViewBox": True, "xmlIdSeed": 1, "pageMarginLeft": _MARGIN,
                   "pageMarginRight": _MARGIN,
                   **(page or {})})
    return tk


def toolkit_for(musicxml: bytes):  # noqa: ANN201
    """A verovio toolkit holding the score as the preview draws it: every staff keeps its
    own key signature at every key change (:func:`per_staff_keys`), and no two chord
    symbols come closer than :data:`SYMBOL_GAP` em (:func:`spaced_symbols`, :func:`_uncrowd`)."""
    return _layout(musicxml)[0]


def _layout(musicxml: bytes, page: dict[str, object] | None = None):  # noqa: ANN202
    """The toolkit and its pages (SVG with verovio's bounding boxes); ``page``: verovio
    options that set another page (the print writer's paper, scale and margins)."""
    tk = _toolkit(page)
    # the MusicXML is read only for verovio's MEI of it, which its line breaking does not
    # change: read with no breaks, it is not cut into systems and pages (more than half of
    # the read) before the MEI is laid out for the picture
    tk.setOptions({"breaks": "none"})
    if not tk.loadData(_for_engraver(musicxml)):
        raise OutputError("verovio could not read the score it was given", where="preview",
                          accepted="a MusicXML score")
    keys = staff_keys(musicxml)
    mei = tk.getMEI()
    if any(len(k) > 1 for k in keys.values()):
        mei = per_staff_keys(mei, keys)
    mei = spaced_symbols(mei)
    tk.setOptions({"breaks": (page or {}).get("breaks", "auto"), "lyricSize": _HARM_FONT * _HARM_SCALE,
                   "svgBoundingBoxes": True})
    tk.loadData(mei)
    return _uncrowd(tk, mei)


# Chord symbols never touch (common practice of engraving: about an em between two symbols,
# so "Bb7 Cmaj7" never reads "Bb7Cmaj7").  verovio widens a measure so that two chord
# symbols keep two drawing units apart, counted in the font it lays them out in (its lyric
# font: option ``lyricSize``, 4.5 units by default).  The symbols are laid out in that font
# made 1.78 times larger and drawn at the usual size (an MEI ``<rend fontsize>``), so the
# space verovio keeps is 2 x 1.78 = 3.56 units, about 0.79 em of the drawn symbol.  Where a
# full system still squeezes them (verovio then compresses the whole system), the system is
# split in two (:func:`_uncrowd`), as an engraver gives a crowded line more room.
SYMBOL_GAP = 0.75         # em: the least space between two chord symbols in the picture
_HARM_FONT = 4.5          # verovio's default lyricSize: the drawn size of a chord symbol
_HARM_SCALE = 8.0 / 4.5   # verovio's largest lyricSize over it
_PASSES = 4               # layouts at most: each splits every crowded system in two
_BBOX = re.compile(r'<g id="bbox-[^"]*"[^>]*?(?:/>|>\s*<rect[^>]*/>\s*</g>)\s*')
_SYSTEM = re.compile(r'<g id="[^"]*" class="system"')
_MEASURE = re.compile(r'<g id="([^"]+)" class="measure"')
_HARM_BOX = re.compile(r'class="harm">.*?class="text bounding-box">\s*<rect x="(-?\d+)" y="(-?\d+)" '
                       r'height="(\d+)" width="(\d+)".*?font-size="(\d+)px"', re.S)


_HEAD = re.compile(r"<pgHead\b.*?</pgHead>", re.S)
_HEAD_REND = re.compile(r"(<rend\b[^>]*>)([^<]+)(</rend>)")
_TEXTS = re.compile(r"(<(harm|dir|tempo|label|labelAbbr|reh)\b[^>]*(?<!/)>)(.*?)(</\2>)", re.S)


# A tempo mark or a style word must clear the notes under it (common practice of engraving).
# verovio keeps it off the noteheads it measures, but in Times metrics, while the picture may
# draw it in a wider serif (DejaVu Serif sets " = 144" about a third wider), and it does not
# count ledger lines (which reach half a space to the left of a notehead): the mark is laid
# out with trailing no-break spaces (drawn as nothing) worth a third of its text and a space
# more, so verovio lifts it over every note the drawn text can reach.
_PAD_TAGS = ("tempo", "dir")
_NBSP = "\u00a0"
_TAG = re.compile(r"<[^>]+>")


def _pad(m: re.Match[str]) -> str:
    if m.group(2) not in _PAD_TAGS:
        return ""
    text = _TAG.sub("", m.group(3)).strip()
    return _NBSP * (2 + (2 * len(text) + 2) // 3)     # a no-break space is about half a character


def spaced_symbols(mei: str) -> str:
    """Every ``<harm>`` of verovio's MEI drawn through a ``<rend>`` at 1 / ``_HARM_SCALE``
    of the font verovio spaces it in; the other texts that font sizes (directions, tempo,
    staff labels, rehearsal letters, the page head) are drawn back at their usual size the
    same way, so only the chord symbols' spacing changes (verovio's own measure numbers
    keep the larger font)."""
    size = f"{100 / _HARM_SCALE:.0f}%"

    def wrap(m: re.Match[str]) -> str:
        return f'{m.group(1)}<rend fontsize="{size}">{m.group(3)}{_pad(m)}</rend>{m.group(4)}'

    def head(m: re.Match[str]) -> str:
        return _HEAD_REND.sub(lambda r: f'{r.group(1)}<rend fontsize="{size}">{r.group(2)}</rend>{r.group(3)}',
                              m.group(0))

    return _HEAD.sub(head, _TEXTS.sub(wrap, mei))


def symbol_gaps(svg: str) -> list[tuple[list[str], float]]:
    """Per system of a page drawn with verovio's ``svgBoundingBoxes``: its measures' ids and
    the least distance between two of its chord symbols' boxes, in em of the symbol."""
    out = []
    cuts = [m.start() for m in _SYSTEM.finditer(svg)] + [len(svg)]
    for a, b in zip(cuts, cuts[1:], strict=False):
        part = svg[a:b]
        boxes = [tuple(int(v) for v in m.groups()) for m in _HARM_BOX.finditer(part)]
        least = float("inf")
        for i, (x1, y1, h1, w1, f1) in enumerate(boxes):
            for x2, y2, h2, w2, _ in boxes[i + 1:]:
                dx = max(0, x2 - (x1 + w1), x1 - (x2 + w2))
                dy = max(0, y2 - (y1 + h1), y1 - (y2 + h2))
                least = min(least, (dx * dx + dy * dy) ** 0.5 / max(f1, 1))
        out.append(([m.group(1) for m in _MEASURE.finditer(part)], least))
    return out


def _uncrowd(tk, mei: str):  # noqa: ANN001, ANN202
    """Lay the score out; while a system holds two chord symbols closer than
    :data:`SYMBOL_GAP`, split each such system at its middle measure (MEI ``<sb/>``, read
    as verovio's encoded line breaks) and lay it out again.  The toolkit and its pages."""
    for _ in range(_PASSES):
        svgs = [tk.renderToSVG(p) for p in range(1, tk.getPageCount() + 1)]
        systems = [s for svg in svgs for s in symbol_gaps(svg)]
        crowded = [ids for ids, gap in systems if gap < SYMBOL_GAP and len(ids) > 1]
        if not crowded:
            return tk, svgs
        starts = [ids[0] for ids, _ in systems[1:] if ids] + [ids[len(ids) // 2] for ids in crowded]
        broken = mei
        for mid in starts:
            broken = broken.replace(f'<measure xml:id="{mid}"', f'<sb/><measure xml:id="{mid}"', 1)
        tk.setOptions({"breaks": "line"})
        tk.loadData(broken)
    return tk, [tk.renderToSVG(p) for p in range(1, tk.getPageCount() + 1)]


def pages(musicxml: bytes, limit: int | None = None,
          page: dict[str, object] | None = None) -> tuple[list[str], int]:
    """The first ``limit`` pages (all by default) of the score as SVG documents
    (verovio's layout; ``page``: verovio options for another page), and how many pages
    the score has."""
    svgs = _layout(musicxml, page)[1]
    drawn = len(svgs) if limit is None else min(len(svgs), limit)
    return [drawn_page(svg) for svg in svgs[:drawn]], len(svgs)


def drawn_page(svg: str) -> str:
    """One page of verovio's SVG as the picture shows it: no measuring box, plain-font
    glyphs in texts, the usual serif faces named, music glyphs filled only."""
    return _filled_glyphs(_fonts(_plain_text_glyphs(_BBOX.sub("", svg))))


# verovio's page style strokes every path (``#id path {stroke:currentColor}``, meant for
# stems, staff lines and ties, which carry their own stroke-width), and so also the outline
# of every music glyph it defines once and places with <use>, at SVG's default width of
# one unit of the glyph's own space: about 0.04 pixel in the picture, below what an eye can
# see (no pixel of a demo's picture moves by more than 13 of 255 grey levels), yet tracing
# every curve of every notehead, clef and accidental again cost the PNG renderer a sixth of
# its time.  The glyphs are drawn as the music font draws them: filled, with no outline.
_GLYPH_DEFS = re.compile(r"<defs>.*?</defs>", re.S)


def _filled_glyphs(svg: str) -> str:
    return _GLYPH_DEFS.sub(lambda m: m.group(0).replace("<path ", '<path style="stroke:none" '), svg)


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
        # verovio draws a SMuFL glyph in text at the size of the text around it (a <rend> of
        # spaced_symbols), about 0.56 of the music font it would use: the plain glyph
        # takes 0.6 of that music font, as before
        size = round(int(m.group(1)) * 0.6 * _HARM_SCALE)
        return (f'<tspan font-family="DejaVu Sans, Segoe UI Symbol, sans-serif" font-size="{size}px">'
                + "".join(_METRONOME_NOTES[c] for c in text) + "</tspan>")

    return _SMUFL_TEXT.sub(swap, svg)


_VIEWBOX = re.compile(r'viewBox="0 0 ([\d.]+) ([\d.]+)"')


def svg_bytes(musicxml: bytes, notes: list[str] | None = None) -> bytes:
    """Every page in one SVG, stacked, on a white ground, as long as the picture stays within
    :data:`MAX_HEIGHT` pixels; a one-line notice goes to ``notes`` when pages are left out."""
    docs = _layout(musicxml)[1]
    total = len(docs)
    sizes = []
    for d in docs:
        m = _VIEWBOX.search(d)
        sizes.append((float(m.group(1)), float(m.group(2))) if m else (float(PAGE_WIDTH), float(PAGE_HEIGHT)))
    drawn, high = 0, 0.0
    while drawn < len(docs) and (drawn == 0 or (high + sizes[drawn][1]) * _PIXELS <= MAX_HEIGHT):
        high += sizes[drawn][1]
        drawn += 1
    docs, sizes = [drawn_page(d) for d in docs[:drawn]], sizes[:drawn]
    if total > drawn and notes is not None:
        notes.append(f"preview: the first {drawn} of {total} pages are drawn (the picture holds at most "
                     f"{MAX_HEIGHT:,} pixels in height); the MusicXML score holds them all")
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
