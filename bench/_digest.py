"""Every decision a build wrote, as plain data, for floor (b) (``floor_minimal.py``).

``digest(score, midi, path)`` reads a score and a MIDI file that ``arrange build``
wrote (with the standard library's ElementTree and with mido, before any timing) and
stores what they hold as JSON: the score as a tree of ``[tag, attributes, text, children,
tail]`` with every text already escaped as XML needs it, the MIDI as one list of message
fields per track, the report's Markdown, and the preview's calls into verovio (recorded
while arrange's own preview writer draws the score once).  Floor (b) reads that and writes the same bytes with string
templates and mido: the least work that writes the same files, with no musical decision
left to make (those are ours to pay for; the floor gets them for free).
"""
from __future__ import annotations

import json
import xml.etree.ElementTree as ET
from pathlib import Path


def escape(text: str) -> str:
    return text.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")


def quoteattr(text: str) -> str:
    """An attribute value as ElementTree writes it (always in double quotes)."""
    return '"' + (escape(text).replace('"', "&quot;").replace("\r", "&#13;").replace("\n", "&#10;")
                  .replace("\t", "&#09;")) + '"'


def _node(el: ET.Element) -> list:
    attrs = [[k, quoteattr(v)] for k, v in el.attrib.items()]
    return [el.tag, attrs, escape(el.text) if el.text is not None else None,
            [_node(c) for c in el], escape(el.tail) if el.tail is not None else ""]


def digest(score: Path, midi: Path, report_md: Path, path: Path) -> Path:
    text = score.read_text(encoding="utf-8")
    start = text.index("<score-partwise")
    root = ET.fromstring(text[start:])
    data: dict = {"prolog": text[:start], "score": _node(root), "end": text[text.rindex(">") + 1:],
                  "report_md": report_md.read_text(encoding="utf-8")}
    import mido

    mf = mido.MidiFile(str(midi))
    data["midi"] = {"ticks": mf.ticks_per_beat, "type": mf.type,
                    "tracks": [[m.dict() | {"meta": m.is_meta} for m in trk] for trk in mf.tracks]}
    data["layout"] = _layout(score.read_bytes())
    path.write_text(json.dumps(data), encoding="utf-8")
    return path


def _layout(musicxml: bytes) -> list:
    """The preview's calls into verovio: arrange's preview writer runs once with a recording
    toolkit, and every call it made (options, documents loaded, pages drawn) is kept in
    order, so the floor makes the same calls with no choice of its own to make (verovio's
    drawing depends on the whole sequence: its generated element ids run on from one
    loaded document to the next)."""
    import sys

    import verovio

    sys.path.insert(0, str(Path(__file__).resolve().parent.parent))     # this checkout's arrange
    from arrange.writers import preview

    calls: list = []
    real = verovio.toolkit

    class Recording(real):  # type: ignore[misc, valid-type]
        def setOptions(self, options):  # noqa: ANN001, ANN202, N802
            calls.append(["setOptions", [options]])
            return super().setOptions(options)

        def loadData(self, data):  # noqa: ANN001, ANN202, N802
            calls.append(["loadData", [data]])
            return super().loadData(data)

        def getMEI(self, *args):  # noqa: ANN002, ANN202, N802
            calls.append(["getMEI", list(args)])
            return super().getMEI(*args)

        def getPageCount(self):  # noqa: ANN202, N802
            calls.append(["getPageCount", []])
            return super().getPageCount()

        def renderToSVG(self, *args):  # noqa: ANN002, ANN202, N802
            calls.append(["renderToSVG", list(args)])
            return super().renderToSVG(*args)

    verovio.toolkit = Recording
    try:
        preview.svg_bytes(musicxml)
    finally:
        verovio.toolkit = real
    return calls
