"""The MusicXML 4.0 score and part files, built from our own values.

score-partwise -> part -> measure -> note, with the standard library's ElementTree
(:mod:`xml.etree.ElementTree`): it ships with Python (no dependency to install), its
element tree is built in C, and for the few thousand elements of a score its writer is
fast enough that the build stays near its floor (``bench/``).  music21 is not imported:
it stays the reader of motif files and a reference reader in the tests.

:func:`musicxml_bytes` writes the whole score (the lead section's parts, then the
layers' parts from :mod:`.xml_layers`); :func:`part_bytes` one file per lead part in
written pitch.  Staves come from :mod:`.xml_score`, marks from :mod:`.marks`.
"""
from __future__ import annotations

from fractions import Fraction
from typing import TYPE_CHECKING

from arrange.voicing.sections import score_rank
from arrange.voicing.voicer import Voiced
from arrange.writers import marks
from arrange.writers.common import written_parts
from arrange.writers.symbols import chord_changes
from arrange.writers.xml_harmony import harmony_element
from arrange.writers.xml_document import StaffPart, document, document_tree, heading, passage_bars, swing_ratio, written_keys  # noqa: F401
from arrange.writers.xml_score import ScoreInfo, Staff, concert_clef, interval_of, part_abbreviation

if TYPE_CHECKING:
    import xml.etree.ElementTree as ET

__all__ = ["ScoreInfo", "musicxml_bytes", "score_tree", "part_bytes", "swing_ratio", "lead_staff", "at_time",
           "score_rank"]

def at_time(line, t: Fraction) -> tuple[int, Fraction]:  # noqa: ANN001
    """(written measure index, offset in it) of time ``t`` (quarter notes from bar 1's
    downbeat; a pickup is measure 0)."""
    shift = 1 if line.pickup else 0
    if t < 0:
        return 0, t + line.pickup
    bar = line.meter.bar
    m = int(t // bar)
    return m + shift, t - m * bar


def lead_staff(voiced: Voiced, k: int, info: ScoreInfo, lead: bool, top: bool | None = None,
               layers: tuple = ()) -> Staff:
    """Part ``k`` of the lead section; ``lead``: this staff carries the chord symbols;
    ``top`` (default ``lead``): it also carries tempo, style and letters (:func:`top_marks`;
    in the full score they go over the top staff, score order).  Symbols stand at the beat
    each chord starts (``symbols.chord_changes``) and over a transposed staff are written
    for it (the transposed score as its parts: one convention for every page a player or a
    reader takes the symbols from).  In a form whose passages have their own sections
    (``voiced.staffing``) the staff rests where its section does not play, and the symbols
    (and analysis) stand over each passage's lead staff in the score, over every part that
    plays the passage in a part file."""
    h = voiced.harmonized
    line = h.line
    part = voiced.section.parts[k]
    ivl = interval_of(part.instrument, info.concert)
    clef = part.instrument.clef
    if info.concert and part.instrument.transposition:
        clef = concert_clef(clef, [p for ve in voiced.events if (p := ve.pitches[k]) is not None])
    staff = Staff(line, written_keys(h, ivl, info.signatures), clef, ivl, passage_bars(line))
    names = written_parts(voiced, (), info.concert)[0][k]     # theory.written, one rule for all
    staffing = voiced.staffing
    firsts: list = []
    for i, ve in enumerate(voiced.events):
        n = ve.event.note
        if ve.pitches[k] is None:          # another section plays here: this staff rests
            firsts.append(None)
            continue
        # a held lead note cut at a chord change (harmony.split): every part keeping its
        # pitch across the cut is tied, the others move (common practice)
        tied = n.tied and i > 0 and voiced.events[i - 1].pitches[k] == ve.pitches[k]
        firsts.append(staff.add_note(names[i], n.onset, n.duration, n.articulation, written=True, tied=tied))
    if staffing is not None and layers:     # a layer's part its player plays where his section rests
        from arrange.writers.common import shared_staves
        from arrange.writers.xml_layers import add_layer_notes

        for (li, kk), staff_k in shared_staves(voiced, layers).items():
            if staff_k == k:
                add_layer_notes(staff, voiced, layers, li, kk, info.concert)
    mine = None if staffing is None else _own_times(voiced, k, info.only_part is not None)
    if lead and (mine is None or mine):
        for t, chord in chord_changes([ve.event for ve in voiced.events], h.framework):
            m, off = at_time(line, t)
            if m < len(staff.notes) and (mine is None or any(a <= t < b for a, b in mine)):
                staff.add_mark(m, off, 5, harmony_element(chord, ivl=ivl,
                                                          key=h.key_at(int(t // h.line.meter.bar) + 1)))
    part_k = None if staffing is None else k
    for i, dyn in marks.entrances(voiced, info.dynamics, part_k):
        staff.add_mark(firsts[i].measure, firsts[i].offset, 4, marks.dynamic(dyn))
    for start, end, kind in marks.hairpins(voiced, info.dynamics, part_k):     # a change inside a phrase
        staff.add_mark(firsts[start].measure, firsts[start].offset, 4, marks.wedge(kind))
        last = voiced.events[end - 1].event.note          # the hairpin closes as this note ends
        m, off = at_time(line, last.onset + last.duration)
        if off == 0 and m > 0:                            # on a bar line: the end of the bar before
            m -= 1
            off = line.pickup if (m == 0 and line.pickup) else line.meter.bar
        staff.add_mark(m, off, 3, marks.wedge("stop"))
    if lead if top is None else top:
        top_marks(staff, voiced, info)
    if lead and info.analysis and info.only_part is None:     # analysis: the score only, never a part
        _analysis(staff, voiced, firsts, None if staffing is None else k)
    return staff


def _own_times(voiced: Voiced, k: int, plays: bool) -> list[tuple[Fraction, Fraction]]:
    """The times of the passages staff ``k`` leads (``plays``: every passage it plays), from
    each passage's first bar line (its pickup included) to the next passage's."""
    staffing = voiced.staffing
    assert staffing is not None
    line = voiced.harmonized.line
    bar = line.meter.bar
    out = []
    spans = line.passages
    for j, ps in enumerate(spans):
        staves = staffing.staves[staffing.of_passage[j]]
        if (k in staves) if plays else staves[0] == k:
            first = voiced.events[ps.first_note].event.note.onset if ps.first_note < len(voiced.events) else 0
            lo = min(Fraction(ps.first_bar - 1) * bar, first) if j else Fraction(-10**9)
            nxt = spans[j + 1] if j + 1 < len(spans) else None
            hi = Fraction(10**9) if nxt is None else min(
                Fraction(nxt.first_bar - 1) * bar,
                voiced.events[nxt.first_note].event.note.onset if nxt.first_note < len(voiced.events) else 10**9)
            out.append((lo, hi))
    return out


def top_marks(staff: Staff, voiced: Voiced, info: ScoreInfo) -> None:
    """Style word, metronome mark and rehearsal letters: over the score's top staff."""
    line = voiced.harmonized.line
    heading(staff, info, line)
    shift = 1 if line.pickup else 0
    for bar, letter in marks.rehearsal_plan(voiced).items():
        staff.add_mark(bar - 1 + shift, Fraction(0), 0, marks.rehearsal(letter))


def score_order(staves: list[StaffPart], groups: list[tuple[int, int]]
                ) -> tuple[list[StaffPart], list[tuple[int, int]]]:
    """The staves in score order: each bracket (or lone staff) moves whole, by the family of
    its first part; a stable sort, so like families keep the order they were given."""
    firsts = {a: b for a, b in groups}
    blocks: list[list[int]] = []
    j = 0
    while j < len(staves):
        end = firsts.get(j, j)
        blocks.append(list(range(j, end + 1)))
        j = end + 1
    blocks.sort(key=lambda b: score_rank(staves[b[0]].part.instrument.sound))   # type: ignore[attr-defined]
    order = [j for b in blocks for j in b]
    where = {old: new for new, old in enumerate(order)}
    return [staves[j] for j in order], [(where[a], where[b]) for a, b in groups]


def _analysis(staff: Staff, voiced: Voiced, firsts: list, k: int | None = None) -> None:
    """Statement labels above the lead; the approach technique under each approach chord
    (once per chord, not again under a held one); ``k``: a form's staff, over the events it leads."""
    starts = {st.start: st for st in voiced.harmonized.line.segments}
    for i, ve in enumerate(voiced.events):
        at = firsts[i]
        if k is not None and (at is None or voiced.staffing is None or voiced.staffing.lead_staff(i) != k):
            continue
        if i in starts:
            staff.add_mark(at.measure, at.offset, 3, marks.words(marks.statement_label(starts[i]), "above",
                                                                 **{"font-style": "italic"}))
        prev = voiced.events[i - 1].event if i else None
        if ve.event.role == "approach" and ve.event.technique and \
                not (prev is not None and prev.role == "approach" and prev.chord == ve.event.chord):
            staff.add_mark(at.measure, at.offset, 3, marks.words(ve.event.technique, "below",
                                                                 **{"font-style": "italic", "font-size": "8"}))


def musicxml_bytes(voiced: Voiced, info: ScoreInfo, layers: tuple = ()) -> bytes:
    """The full score (``info.only_part`` None) or the file of lead part ``only_part``."""
    parts = voiced.section.parts
    if info.only_part is not None:
        k = info.only_part
        staff = lead_staff(voiced, k, info, lead=True, layers=layers)
        return document(info.title, info.version, parts[k].name,
                        [StaffPart(staff, parts[k], part_abbreviation(parts[k]), k)], [])
    return document(*_score(voiced, info, layers))


def score_tree(voiced: Voiced, info: ScoreInfo, layers: tuple = ()) -> ET.Element:
    """The full score's ``<score-partwise>`` element, not yet indented (for a writer that
    adds parts to it, ``xml_rhythm.rhythm_score_bytes``)."""
    return document_tree(*_score(voiced, info, layers))


def _score(voiced: Voiced, info: ScoreInfo, layers: tuple) -> tuple[str, str, str, list[StaffPart],
                                                                    list[tuple[int, int]]]:
    parts = voiced.section.parts
    leads = {0} if voiced.staffing is None else {st[0] for st in voiced.staffing.staves}
    staves = [StaffPart(lead_staff(voiced, k, info, lead=k in leads, top=False, layers=layers), p,
                        part_abbreviation(p), k)
              for k, p in enumerate(parts)]
    groups = marks.part_groups([(voiced.section, 0)], bracket_all=False)
    if layers:
        if not groups:
            groups = [(0, len(parts) - 1)]
        from arrange.writers.xml_layers import layer_staves

        more, layer_groups = layer_staves(voiced, layers, info, len(parts))
        staves += more
        groups += layer_groups
    staves, groups = score_order(staves, groups)
    top_marks(staves[0].staff, voiced, info)
    return (info.title, info.version, "Concert score" if info.concert else "Transposed score", staves, groups)


def part_bytes(voiced: Voiced, info: ScoreInfo, layers: tuple = ()) -> dict[int, bytes]:
    """One MusicXML file per part, in written pitch, each with its own marks (``layers``:
    a layer's part whose player reads this staff, ``common.shared_staves``)."""
    from dataclasses import replace

    return {k: musicxml_bytes(voiced, replace(info, only_part=k, concert=False), layers)
            for k in range(len(voiced.section.parts))}
