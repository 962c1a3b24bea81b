"""Chord symbols as music21 ChordSymbol objects that print our canonical symbol
and read back (music21's own parser) to the same tones."""
from __future__ import annotations

from arrange.theory.chords import Chord, parse_chord

__all__ = ["m21_figure", "chord_symbol"]


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


_SYMBOLS: dict[tuple[str, str], object] = {}


def chord_symbol(chord: Chord):  # noqa: ANN201
    """A music21 ChordSymbol for ``chord`` that prints our canonical symbol.

    music21 works out a symbol's pitches through its scale networks (about
    10 ms each), so one prototype per figure is built and copied."""
    import copy

    from music21 import harmony

    key = (m21_figure(chord), chord.quality)
    proto = _SYMBOLS.get(key)
    if proto is None:
        cs = harmony.ChordSymbol(key[0])
        cs.chordKindStr = chord.quality
        cs.writeAsChord = False
        _SYMBOLS[key] = proto = cs
    return copy.deepcopy(proto)
