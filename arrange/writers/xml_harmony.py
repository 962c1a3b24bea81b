"""A chord symbol as a MusicXML 4.0 ``<harmony>`` element (ElementTree).

The kind is the chord's core (triad, sixth, seventh) as one of the standard's
``kind`` values; extensions and altered fifths are ``<degree>`` elements (not
printed: ``<kind text>`` already prints our canonical symbol), so a reader that
builds the chord from the element (music21) gets the same tones.
"""
from __future__ import annotations

import xml.etree.ElementTree as ET

from arrange.theory.chords import Chord

__all__ = ["harmony_element", "KINDS"]

# core intervals -> MusicXML kind value (the standard's kind-value list)
KINDS = {(0, 4, 7): "major", (0, 3, 7): "minor", (0, 3, 6): "diminished", (0, 4, 8): "augmented",
         (0, 2, 7): "suspended-second", (0, 5, 7): "suspended-fourth", (0, 4, 7, 9): "major-sixth",
         (0, 3, 7, 9): "minor-sixth", (0, 4, 7, 11): "major-seventh", (0, 3, 7, 10): "minor-seventh",
         (0, 3, 7, 11): "major-minor", (0, 4, 7, 10): "dominant", (0, 3, 6, 10): "half-diminished",
         (0, 3, 6, 9): "diminished-seventh", (0, 4, 8, 10): "augmented-seventh"}
_NATURAL = {9: 2, 11: 5, 13: 9}


def _root(parent: ET.Element, tag: str, name: str) -> None:
    ET.SubElement(parent, f"{tag}-step").text = name[0]
    alter = name.count("#") - name.count("b")
    if alter:
        ET.SubElement(parent, f"{tag}-alter").text = str(alter)


def _degree(parent: ET.Element, value: int, alter: int, kind: str) -> None:
    d = ET.SubElement(parent, "degree", {"print-object": "no"})
    ET.SubElement(d, "degree-value").text = str(value)
    ET.SubElement(d, "degree-alter").text = str(alter)
    ET.SubElement(d, "degree-type").text = kind


def harmony_element(chord: Chord, offset: int = 0) -> ET.Element:
    """``<harmony>`` for ``chord``; ``offset`` in divisions from the next note."""
    h = ET.Element("harmony", {"print-frame": "no"})
    root = ET.SubElement(h, "root")
    _root(root, "root", chord.root_name)
    core = tuple(sorted(chord.core))
    degrees: list[tuple[int, int, str]] = []
    if core not in KINDS:
        fifth = next((i for i, d in zip(chord.intervals, chord.degrees, strict=True) if d == 5), 7)
        seventh = next((i for i, d in zip(chord.intervals, chord.degrees, strict=True) if d == 7), None)
        base = tuple(sorted(7 if i == fifth else i for i in core))
        if base not in KINDS and seventh == 10 and 5 in core:      # 7sus4: sus4 plus the seventh
            base = (0, 5, 7)
            degrees.append((7, 0, "add"))
        if base not in KINDS:
            base = (0, 4, 7)
        if fifth != 7:
            degrees.append((5, fifth - 7, "alter"))
        core = base
    kind = ET.SubElement(h, "kind", {"text": chord.quality})
    kind.text = KINDS[core]
    if chord.bass_name:
        bass = ET.SubElement(h, "bass")
        _root(bass, "bass", chord.bass_name)
    for iv, d in zip(chord.intervals, chord.degrees, strict=True):
        if d >= 9:
            degrees.append((d, (iv - _NATURAL[d] + 6) % 12 - 6, "add"))
    for value, alter, kind_text in degrees:
        _degree(h, value, alter, kind_text)
    if offset:
        ET.SubElement(h, "offset").text = str(offset)
    return h
