"""Chord symbols: where they stand (:func:`chord_changes`), the MusicXML ``<harmony>`` kind
and degrees of our chords (:func:`harmony_parts`, which :mod:`.xml_harmony` builds the
element from), and ``m21_figure``, the figure music21's own parser reads to the same tones
(for tests and readers that use music21 as the reference)."""
from __future__ import annotations

from bisect import bisect_right
from collections.abc import Sequence
from fractions import Fraction
from typing import Any

from arrange.theory.chords import Chord, parse_chord

__all__ = ["m21_figure", "harmony_parts", "chord_changes"]


def chord_changes(events: Sequence[Any], framework: Sequence[Any]) -> list[tuple[Fraction, Chord]]:
    """(time, chord) of every chord symbol over the lead: each chord at the beat where it
    starts sounding (common practice of lead sheets and charts: a symbol marks a change of
    harmony, not a melody note).  ``events`` are the harmony stage's events (a lead note
    with the chord that sounds from its onset: approach chords start there; a held note the
    harmony stage cuts at a framework chord is an event of its own at that beat),
    ``framework`` its framework chords (``onset``, ``duration``, ``chord``).

    A framework chord whose beat falls where the lead rests takes its symbol at its own beat
    (the rhythm section and pads play it there), named as the first lead note inside it
    sounds it when that note keeps the chord's root (a sixth chord named maj7 for its
    voicing).  A pickup on the chord of bar 1 takes no symbol of its own: the symbol stands
    over bar 1, as lead sheets write it.  A symbol is written only where the name changes."""
    spans = [(e.note.onset, e.note.onset + e.note.duration) for e in events]
    first = framework[0] if framework else None

    def pickup_on_first(e: Any) -> bool:
        return e.note.onset < 0 and first is not None and e.role == "framework" and e.chord == first.chord

    over_bar_1 = any(pickup_on_first(e) for e in events)
    # looked up by bisection (a whole score's framework against all its notes): the spans by
    # start with the latest end so far, and the events in time order (sorted once; stable,
    # so events at one onset keep their order)
    by_start = sorted(spans)
    starts = [a for a, _b in by_start]
    reach: list[Fraction] = []
    for _a, b in by_start:
        reach.append(b if not reach or b > reach[-1] else reach[-1])
    in_time = sorted(events, key=lambda e: e.note.onset)
    onsets = [e.note.onset for e in in_time]

    def sounding(t: Fraction) -> bool:                      # a lead note sounds at t
        k = bisect_right(starts, t)
        return k > 0 and reach[k - 1] > t

    rows: list[tuple[Fraction, int, Chord]] = []          # (time, 0 framework beat / 1 note, chord)
    for fc in framework:
        if sounding(fc.onset) and not (fc is first and over_bar_1):
            continue                                        # a lead note sounds: its chord is there
        end = fc.onset + fc.duration
        k = bisect_right(onsets, fc.onset)                  # the first lead note inside the chord
        inside = in_time[k:k + 1] if k < len(in_time) and onsets[k] < end else []
        chord = fc.chord
        if inside and inside[0].role == "framework" and inside[0].chord.root == fc.chord.root:
            chord = inside[0].chord
        rows.append((fc.onset, 0, chord))
    for e in events:
        if pickup_on_first(e):
            continue
        rows.append((e.note.onset, 1, e.chord))
    rows.sort(key=lambda r: (r[0], r[1]))
    out: list[tuple[Fraction, Chord]] = []
    for t, _, chord in rows:
        if out and out[-1][0] == t:                        # a note on the beat names the chord there
            out[-1] = (t, chord)
            if len(out) > 1 and out[-2][1].symbol == chord.symbol:
                out.pop()
            continue
        if not out or out[-1][1].symbol != chord.symbol:
            out.append((t, chord))
    return out


_M21_CORE = {(0, 4, 7): "", (0, 3, 7): "m", (0, 3, 6): "dim", (0, 4, 8): "+", (0, 2, 7): "sus2",
             (0, 5, 7): "sus4", (0, 4, 7, 9): "6", (0, 3, 7, 9): "m6", (0, 4, 7, 11): "maj7",
             (0, 3, 7, 10): "m7", (0, 3, 7, 11): "mM7", (0, 4, 7, 10): "7", (0, 3, 6, 10): "ø7",
             (0, 3, 6, 9): "o7", (0, 5, 7, 10): "7sus4", (0, 4, 8, 10): "+7", (0, 4, 8, 11): "+M7"}


def m21_figure(chord: Chord | str) -> str:
    """Our chord to a figure music21's ChordSymbol reads to the same tones: the core
    (triad, sixth, seventh) as one of music21's kinds, every extension as ``add``
    with its alteration (music21 rejects spellings such as ``Ebm9`` or ``Cmaj9``,
    and reads ``C13`` with an 11), flats as ``-``."""
    from arrange.theory.spelling import m21_name

    ch = parse_chord(chord) if isinstance(chord, str) else chord
    core = tuple(sorted(ch.core))
    five = ""
    if ch.quality == "7alt":    # voiced 1 3 b7 #9 b13: the dominant seventh without its fifth
        return m21_name(ch.root_name) + "7omit5add#9addb13" + (f"/{m21_name(ch.bass_name)}" if ch.bass_name else "")
    if core not in _M21_CORE:   # an altered fifth on a core music21 has no kind for
        fifth = next(i for i, d in zip(ch.intervals, ch.degrees, strict=True) if d == 5)
        core = tuple(sorted(7 if i == fifth else i for i in core))
        five = {6: "b5", 8: "#5"}[fifth]
    out = m21_name(ch.root_name) + _M21_CORE[core] + five
    for iv, d in zip(ch.intervals, ch.degrees, strict=True):
        if d >= 9:
            diff = (iv - {9: 2, 11: 5, 13: 9}[d] + 6) % 12 - 6
            out += "add" + ("b" * -diff if diff < 0 else "#" * diff) + str(d)
    if ch.bass_name:
        out += "/" + m21_name(ch.bass_name)
    return out


# a chord's core (triad, sixth, seventh) -> MusicXML 4.0 <kind> value
_KINDS = {(0, 4, 7): "major", (0, 3, 7): "minor", (0, 3, 6): "diminished", (0, 4, 8): "augmented",
          (0, 2, 7): "suspended-second", (0, 5, 7): "suspended-fourth", (0, 4, 7, 9): "major-sixth",
          (0, 3, 7, 9): "minor-sixth", (0, 4, 7, 11): "major-seventh", (0, 3, 7, 10): "minor-seventh",
          (0, 3, 7, 11): "major-minor", (0, 4, 7, 10): "dominant", (0, 3, 6, 10): "half-diminished",
          (0, 3, 6, 9): "diminished-seventh", (0, 4, 8, 10): "augmented-seventh"}
# the unaltered interval of each degree, as MusicXML <degree-alter> counts from it
# (the seventh from the dominant's minor seventh)
_PLAIN = {2: 2, 4: 5, 5: 7, 6: 9, 7: 10, 9: 2, 11: 5, 13: 9}


def harmony_parts(chord: Chord) -> tuple[str, list[tuple[int, int, str]]]:
    """The MusicXML ``<kind>`` value of ``chord`` and its ``<degree>`` rows (value, alter,
    type): an altered fifth on a core with no kind of its own is an ``alter``, every
    tone outside the kind an ``add`` (so a reader rebuilds the same tones)."""
    core = tuple(sorted(chord.core))
    degrees: list[tuple[int, int, str]] = []
    if core not in _KINDS:
        fifth = next((i for i, d in zip(chord.intervals, chord.degrees, strict=True) if d == 5), None)
        if fifth in (6, 8) and tuple(sorted(7 if i == fifth else i for i in core)) in _KINDS:
            core = tuple(sorted(7 if i == fifth else i for i in core))
            degrees.append((5, fifth - 7, "alter"))
    if core not in _KINDS:
        triad = tuple(i for i, d in zip(chord.intervals, chord.degrees, strict=True) if d <= 5 or d in (2, 4))
        triad = tuple(sorted(triad))
        kind = _KINDS.get(triad, "other")
        for i, d in zip(chord.intervals, chord.degrees, strict=True):
            if 5 < d <= 7 or (d <= 5 and i not in triad):
                degrees.append((d, (i - _PLAIN.get(d, i) + 6) % 12 - 6, "add"))
    else:
        kind = _KINDS[core]
    for iv, d in zip(chord.intervals, chord.degrees, strict=True):
        if d >= 9:
            degrees.append((d, (iv - _PLAIN[d] + 6) % 12 - 6, "add"))
    return kind, degrees
