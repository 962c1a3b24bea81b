"""A chord symbol as a MusicXML 4.0 ``<harmony>`` element (ElementTree): the one builder
every staff uses (the lead section's, the rhythm section's).

The kind is the chord's core (triad, sixth, seventh) as one of the standard's ``kind``
values, from :func:`.symbols.harmony_parts`; extensions and altered fifths are
``<degree>`` elements (not printed: ``<kind text>`` already prints our canonical symbol),
so a reader that builds the chord from the element (music21) gets the same tones.  Over a
transposed staff the root and bass are written for that staff (``ivl``), so a reader's
``toSoundingPitch`` gives the concert symbol back.
"""
from __future__ import annotations

import xml.etree.ElementTree as ET

from arrange.theory.chords import Chord
from arrange.theory.keys import Key
from arrange.theory.written import split_name as split_octave
from arrange.theory.written import written_name
from arrange.writers.symbols import harmony_parts
from arrange.writers.xml_score import Interval, split_name, transpose_name

__all__ = ["harmony_element"]


def _root(parent: ET.Element, tag: str, name: str) -> None:
    step, alter, _ = split_name(name)
    ET.SubElement(parent, f"{tag}-step").text = step
    if alter:
        ET.SubElement(parent, f"{tag}-alter").text = str(alter)


def _written(name: str, ivl: Interval, key: Key | None, chord: Chord | None) -> str:
    """A concert root or bass name as the staff writes it: by the notes' own rule
    (``theory.written.written_name``) where the concert key is known, so a staff whose key
    is the enharmonic one (concert F# major, alto in Eb major) reads Ebmaj7 over its Bb, not
    D#maj7; else moved by the interval."""
    if key is None or not (ivl.steps or ivl.semitones):
        return transpose_name(name, ivl)
    return split_octave(written_name(f"{name}4", ivl.semitones, key, chord))[0]


def harmony_element(chord: Chord, offset: int = 0, ivl: Interval = Interval(),  # noqa: B008
                    key: Key | None = None) -> ET.Element:
    """``<harmony>`` for ``chord`` written for a staff ``ivl`` from concert pitch in concert
    ``key``; ``offset`` in divisions from the next note (MusicXML ``<offset>``)."""
    h = ET.Element("harmony")
    _root(ET.SubElement(h, "root"), "root", _written(chord.root_name, ivl, key, chord))
    kind_value, degrees = harmony_parts(chord)
    kind = ET.SubElement(h, "kind", {"text": chord.quality})
    kind.text = kind_value
    if chord.bass_name:
        _root(ET.SubElement(h, "bass"), "bass", _written(chord.bass_name, ivl, key, chord))
    for value, alter, kind_text in degrees:
        d = ET.SubElement(h, "degree", {"print-object": "no"})
        ET.SubElement(d, "degree-value").text = str(value)
        ET.SubElement(d, "degree-alter").text = str(alter)
        ET.SubElement(d, "degree-type").text = kind_text
    if offset:
        ET.SubElement(h, "offset").text = str(offset)
    return h
