"""Chord symbols: the MusicXML ``<harmony>`` kind and degrees of our chords (the writer's),
and ``m21_figure``, the figure music21's own parser reads to the same tones (for tests
and readers that use music21 as the reference)."""
from __future__ import annotations

from arrange.theory.chords import Chord, parse_chord

__all__ = ["m21_figure", "harmony_parts"]


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
