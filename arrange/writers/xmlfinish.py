"""Last touches on music21's MusicXML text, for what its exporter leaves out.

* ``<instrument-sound>`` (MusicXML 4.0 standard sound ids) in each score-instrument;
* ``<measure-numbering>system</measure-numbering>`` so every system shows its bar number;
* our own software line, and no invented composer credit.

The edits are textual on music21's fixed layout and keep the schema's element order
(score-instrument: instrument-name, instrument-abbreviation?, instrument-sound?).
"""
from __future__ import annotations

import re
from typing import Any
from xml.sax.saxutils import escape

__all__ = ["finish", "add_sounds"]

_SCORE_INSTRUMENT = re.compile(rb'(<score-instrument id="P(\d+)-I1">)(.*?)(\s*</score-instrument>)', re.S)


def add_sounds(data: bytes, parts: Any, first: int = 0) -> bytes:
    """``<instrument-sound>`` for the score-instruments of parts ``P{first+1}`` onwards,
    ``parts`` in that order; a score-instrument that has one already is left alone."""
    def sound(m: re.Match[bytes]) -> bytes:
        k = int(m.group(2)) - 1 - first
        body = m.group(3)
        if b"<instrument-sound>" in body or not 0 <= k < len(parts):
            return m.group(0)
        indent = re.search(rb"\n(\s*)<instrument-name>", body)
        pad = indent.group(1) if indent else b""
        tag = b"\n" + pad + b"<instrument-sound>" + escape(parts[k].instrument.sound).encode() \
            + b"</instrument-sound>"
        return m.group(1) + body + tag + m.group(4)

    return _SCORE_INSTRUMENT.sub(sound, data)


def finish(data: bytes, voiced: Any, info: Any) -> bytes:
    data = add_sounds(data, voiced.section.parts)
    data = re.sub(rb'\s*<creator type="composer">Music21</creator>', b"", data)
    if info.version:
        data = re.sub(rb"(\n(\s*)<software>[^<]*</software>)",
                      lambda m: m.group(1) + b"\n" + m.group(2) + b"<software>arrange "
                      + info.version.encode() + b"</software>", data, count=1)
    # bar numbers at the start of every system, in each part's first measure
    # bar numbers at the start of every system, in each part's first measure
    data = _first_measures(data)
    return data


def _first_measures(data: bytes) -> bytes:
    out = []
    pos = 0
    for part in re.finditer(rb'<part id="[^"]+">\s*(?:<!--[^>]*-->\s*)?<measure [^>]*>(\n(\s*))', data):
        nl = part.group(1)
        out.append(data[pos:part.end(1) - len(nl)])
        out.append(nl + b"<print>" + nl + b"  <measure-numbering>system</measure-numbering>" + nl
                   + b"</print>" + nl)
        pos = part.end(1)
    out.append(data[pos:])
    return b"".join(out)
