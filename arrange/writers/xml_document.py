"""The MusicXML 4.0 document around the staves: header, credits, part list, parts.

Built with the standard library's ElementTree (see :mod:`.musicxml` for why); shared by
the lead section's files (:mod:`.musicxml`) and the layers' (:mod:`.xml_layers`).
"""
from __future__ import annotations

import xml.etree.ElementTree as ET
from dataclasses import dataclass
from fractions import Fraction

from arrange.theory.keys import written_key
from arrange.writers import marks
from arrange.writers.common import channel_for
from arrange.writers.xml_score import Interval, ScoreInfo, Staff, sub

__all__ = ["StaffPart", "swing_ratio", "written_keys", "heading", "document", "passage_bars", "xml_text"]

_DOCTYPE = (b'<!DOCTYPE score-partwise PUBLIC "-//Recordare//DTD MusicXML 4.0 Partwise//EN" '
            b'"http://www.musicxml.org/dtds/partwise.dtd">\n')


@dataclass(frozen=True, slots=True, eq=False)
class StaffPart:
    """A staff with what the part list says of it."""
    staff: Staff
    part: object            # the section's Part (name, abbreviation, instrument)
    abbreviation: str
    index: int              # score order: P{index+1}, MIDI channel


def swing_ratio(line) -> tuple[int, int] | None:  # noqa: ANN001
    """``(first, second)`` of the MusicXML 4.0 ``<swing>`` element for a swung
    line written in straight eighths; None where playback is straight."""
    if line.groove not in ("swing", "shuffle") or line.notate == "12/8":
        return None
    r = Fraction(line.swing).limit_denominator(100)
    return r.numerator, r.denominator - r.numerator


def written_keys(harmonized, ivl: Interval, signatures: tuple | None = None) -> tuple[tuple[int, str], ...]:  # noqa: ANN001
    """(fifths, mode) of every written measure, in the staff's written key; ``signatures``:
    the (first bar, Key) changes written as signatures (None: the harmony's key changes)."""
    line = harmonized.line
    shift = 1 if line.pickup else 0
    changes = harmonized.keys if signatures is None else signatures

    def key_at(bar: int):  # noqa: ANN202
        current = harmonized.key
        for first, k in changes:
            if first <= bar:
                current = k
        return current

    out = []
    for m_i in range(line.measures):
        # the one key-signature rule (theory.keys.written_key): never past 7 accidentals,
        # a transposed key past 6 as its enharmonic key with fewer
        k = written_key(key_at(max(1, m_i + 1 - shift)), ivl.semitones)
        out.append((k.fifths, k.signature_mode))
    return tuple(out)


def passage_bars(line) -> frozenset[int]:  # noqa: ANN001
    """Written measures a form's later passages begin with (a double bar before each)."""
    shift = 1 if line.pickup else 0
    return frozenset(p.first_bar - 1 + shift for p in line.passages[1:])


def heading(staff: Staff, info: ScoreInfo, line) -> None:  # noqa: ANN001
    """Style word and metronome mark (with its playback swing) at the first note."""
    staff.add_mark(0, Fraction(0), 1, marks.words(info.style, "above", **{"font-weight": "bold"}))
    staff.add_mark(0, Fraction(0), 2, marks.metronome(info.tempo, line.tempo_scale != 1, swing_ratio(line)))


def _score_part(parent: ET.Element, sp: StaffPart) -> None:
    spec = sp.part.instrument          # type: ignore[attr-defined]
    pid = f"P{sp.index + 1}"
    el = sub(parent, "score-part", id=pid)
    sub(el, "part-name", sp.part.name)          # type: ignore[attr-defined]
    sub(el, "part-abbreviation", sp.abbreviation)
    si = sub(el, "score-instrument", id=f"{pid}-I1")
    sub(si, "instrument-name", spec.name)
    sub(si, "instrument-abbreviation", spec.abbreviation)
    sub(si, "instrument-sound", spec.sound)
    mi = sub(el, "midi-instrument", id=f"{pid}-I1")
    sub(mi, "midi-channel", channel_for(sp.index) + 1)
    sub(mi, "midi-program", spec.program)


def _transpose(ivl: Interval) -> list[ET.Element]:
    """``<transpose>``: written to sounding, octaves apart (MusicXML 4.0)."""
    if not ivl.steps and not ivl.semitones:
        return []
    octaves = int(ivl.semitones / 12)
    t = ET.Element("transpose")
    sub(t, "diatonic", -(ivl.steps - 7 * octaves))
    sub(t, "chromatic", -(ivl.semitones - 12 * octaves))
    if octaves:
        sub(t, "octave-change", -octaves)
    return [t]


HEAD = b'<?xml version="1.0" encoding="UTF-8"?>\n' + _DOCTYPE     # what precedes the root


def document(title: str, version: str, kind: str, staves: list[StaffPart],
             groups: list[tuple[int, int]]) -> bytes:
    """The whole ``<score-partwise>`` file; ``groups``: (first, last) indices in ``staves``
    of each bracket (bar lines drawn through)."""
    root = document_tree(title, version, kind, staves, groups)
    return HEAD + xml_text(root, " ").encode("utf-8") + b"\n"


def _escape_text(text: str) -> str:
    """Character data as ElementTree escapes it (``&``, ``<``, ``>``)."""
    if "&" in text:
        text = text.replace("&", "&amp;")
    if "<" in text:
        text = text.replace("<", "&lt;")
    if ">" in text:
        text = text.replace(">", "&gt;")
    return text


def _escape_value(text: str) -> str:
    """An attribute value as ElementTree escapes it (also quotes and line breaks)."""
    text = _escape_text(text)
    if '"' in text:
        text = text.replace('"', "&quot;")
    if "\r" in text:
        text = text.replace("\r", "&#13;")
    if "\n" in text:
        text = text.replace("\n", "&#10;")
    if "\t" in text:
        text = text.replace("\t", "&#09;")
    return text


def xml_text(root: ET.Element, space: str) -> str:
    """``root`` as ``ET.indent(root, space=space)`` then ``ET.tostring(root,
    encoding="unicode")`` write it, character for character, in one pass that leaves the
    tree as it was: an element with children has its text and each child's tail (when
    empty or blank) set to the next level's indentation, the last child's to its own
    level's; empty elements are written ``<tag />``, attributes in the order given.  The
    standard library's pair walks the tree three times (indent, a namespace scan, the
    writer); our trees have no namespaces, comments or processing instructions.  About
    half their time (``tests/test_musicxml.py`` checks the two agree)."""
    out: list[str] = []
    write = out.append
    indents = ["\n"]

    def walk(elem: ET.Element, level: int) -> None:
        tag = elem.tag
        items = elem.items()
        if items:
            write("<" + tag + "".join(f' {k}="{_escape_value(v)}"' for k, v in items))
        else:
            write("<" + tag)
        text = elem.text
        if len(elem):
            if level + 1 == len(indents):
                indents.append(indents[level] + space)
            inner = indents[level + 1]
            if not text or not text.strip():
                text = inner
            write(">" + _escape_text(text))
            last = len(elem) - 1
            for j, child in enumerate(elem):
                walk(child, level + 1)
                tail = child.tail
                if not tail or not tail.strip():
                    write(inner if j < last else indents[level])
                else:
                    write(_escape_text(tail))
            write("</" + tag + ">")
        elif text:
            write(">" + _escape_text(text) + "</" + tag + ">")
        else:
            write(" />")

    walk(root, 0)
    if root.tail:
        write(_escape_text(root.tail))
    return "".join(out)


def document_tree(title: str, version: str, kind: str, staves: list[StaffPart],
                  groups: list[tuple[int, int]]) -> ET.Element:
    """The ``<score-partwise>`` element of :func:`document`, not yet indented."""
    root = ET.Element("score-partwise", version="4.0")
    sub(sub(root, "work"), "work-title", title)
    sub(root, "movement-title", title)
    enc = sub(sub(root, "identification"), "encoding")
    sub(enc, "software", f"arrange {version}".strip())
    for element in ("beam", "accidental", "stem"):
        sub(enc, "supports", element=element, type="yes" if element != "stem" else "no")
    scaling = sub(sub(root, "defaults"), "scaling")
    sub(scaling, "millimeters", 7)
    sub(scaling, "tenths", 40)
    root.extend(marks.credits(title, kind))
    plist = sub(root, "part-list")
    starts = {a: n for n, (a, _) in enumerate(groups, start=1)}
    stops = {b: n for n, (_, b) in enumerate(groups, start=1)}
    for j, sp in enumerate(staves):
        if j in starts:
            g = sub(plist, "part-group", number=str(starts[j]), type="start")
            sub(g, "group-symbol", "bracket")
            sub(g, "group-barline", "yes")
        _score_part(plist, sp)
        if j in stops:
            sub(plist, "part-group", number=str(stops[j]), type="stop")
    for sp in staves:
        part = sub(root, "part", id=f"P{sp.index + 1}")
        part.extend(sp.staff.measures(_transpose(sp.staff.transpose)))
    return root


