"""Background layers in the MusicXML files: score staves and printable part files.

* :func:`layer_staves` -- one staff per layer part, after the lead section's, each
  section bracketed (MusicXML ``<part-group>``);
* :func:`layer_part_bytes` -- one printable file per layer part.

(The layers' MIDI tracks are written by :mod:`.midi`, their report entries by :mod:`.report`.)
"""
from __future__ import annotations

from fractions import Fraction

from arrange.voicing.layers import VoicedLayer
from arrange.voicing.voicer import Voiced
from arrange.writers import marks
from arrange.writers.common import shared_staves, written_parts
from arrange.writers.xml_document import StaffPart, document, heading, passage_bars, written_keys
from arrange.writers.xml_score import ScoreInfo, Staff, concert_clef, interval_of, part_abbreviation

__all__ = ["layer_staves", "layer_part_bytes", "add_layer_notes"]


def _staff(voiced: Voiced, layers: tuple[VoicedLayer, ...], li: int, k: int, info: ScoreInfo,
           concert: bool) -> Staff:
    """Layer part ``k``: notes spelled, key signatures changed and accidentals printed as
    in the lead section's parts; a hit accented; the dynamic at the first note and after
    every rest of a bar or more."""
    h = voiced.harmonized
    vl = layers[li]
    part = vl.layer.section.parts[k]
    ivl = interval_of(part.instrument, concert)
    clef = part.instrument.clef
    if concert and part.instrument.transposition:
        clef = concert_clef(clef, [p for n in vl.notes if (p := n.pitches[k]) is not None])
    staff = Staff(h.line, written_keys(h, ivl, info.signatures), clef, ivl, passage_bars(h.line))
    add_layer_notes(staff, voiced, layers, li, k, concert)
    return staff


def add_layer_notes(staff: Staff, voiced: Voiced, layers: tuple[VoicedLayer, ...], li: int, k: int,
                    concert: bool) -> None:
    """Layer ``li``'s part ``k`` written on ``staff`` (its own, or the staff its player reads
    in a form's section, ``common.shared_staves``)."""
    vl = layers[li]
    bar_len = voiced.harmonized.line.meter.bar
    voice = [n.pitches[k] for n in vl.notes]
    names = written_parts(voiced, layers, concert)[1][li][k]   # theory.written, one rule for all
    last_end: Fraction | None = None
    for i, n in enumerate(vl.notes):
        here = voice[i]
        if here is None:             # the part rests through a thinned chord
            continue
        # the dynamic at the first note and again after a rest of a bar or more (as the lead's)
        entered = last_end is not None and n.onset - last_end < bar_len
        last_end = n.onset + n.duration
        name = names[i]
        assert name is not None
        first = staff.add_note(name, n.onset, n.duration, "accent" if vl.layer.role == "hits" else "",
                               written=True)
        if not entered:
            staff.add_mark(first.measure, first.offset, 4, marks.dynamic(vl.layer.dynamics))


def layer_staves(voiced: Voiced, layers: tuple[VoicedLayer, ...], info: ScoreInfo,
                 first: int) -> tuple[list[StaffPart], list[tuple[int, int]]]:
    """The layers' staves (score indices from ``first``) and one bracket per section."""
    staves: list[StaffPart] = []
    groups = []
    index = first
    shared = shared_staves(voiced, layers)
    for li, vl in enumerate(layers):
        start = index
        for k, part in enumerate(vl.layer.section.parts):
            if (li, k) in shared:         # the player reads his section's staff
                continue
            staves.append(StaffPart(_staff(voiced, layers, li, k, info, info.concert), part,
                                    part_abbreviation(part), index))
            index += 1
        if index > start:
            groups.append((start, index - 1))
    return staves, groups


def layer_part_bytes(voiced: Voiced, info: ScoreInfo, layers: tuple[VoicedLayer, ...]) -> list[tuple[str, bytes]]:
    """One printable MusicXML file per layer part, in written pitch, as ``--parts``
    writes the lead section's: the part alone, with the tempo, style word and
    rehearsal letters a player needs, and its own name on the first page."""
    line = voiced.harmonized.line
    shift = 1 if line.pickup else 0
    letters = {bar - 1 + shift: letter for bar, letter in marks.rehearsal_plan(voiced).items()}
    out = []
    index = len(voiced.section.parts)
    shared = shared_staves(voiced, layers)
    for li, vl in enumerate(layers):
        for k, part in enumerate(vl.layer.section.parts):
            if (li, k) in shared:         # in the part file of his section's staff
                continue
            staff = _staff(voiced, layers, li, k, info, False)
            heading(staff, info, line)
            for m_i, letter in letters.items():
                staff.add_mark(m_i, Fraction(0), 0, marks.rehearsal(letter))
            out.append((part.name, document(info.title, info.version, part.name,
                                            [StaffPart(staff, part, part_abbreviation(part), index)], [])))
            index += 1
    return out
