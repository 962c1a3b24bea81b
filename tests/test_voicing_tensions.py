"""Hand-worked voicings with a tension (or a clash) in the lead, every voicing type.

Reference: common practice of big-band and studio arranging (no single published source):
a four-voice structure holds the chord's 3rd and 7th; a tension in the lead stands for the
root (9) or the fifth (13, #11, b13); a lead outside the chord and its tensions keeps the
chord's own root, 3rd and 7th under it (it stands for the fifth).  The close shapes below
are worked by hand (C4 = 60); drop 2 / drop 3 / drop 2-4 move the second / third / second
and fourth voice from the top an octave down (the definitions of the trade).  music21
``harmony.ChordSymbol`` names each symbol's guide tones independently.
"""
from __future__ import annotations

import pytest

from arrange.theory.chords import parse_chord
from arrange.voicing.shapes import recipes, shapes, structures

DROPS = {"close": (), "drop2": (1,), "drop3": (2,), "drop2-4": (1, 3)}

# (symbol, lead, close shape by hand, what the lead is)
HAND = [
    # major
    ("Cmaj7", 74, (74, 71, 67, 64), "9 for the root: D5 B4 G4 E4"),
    ("Cmaj7", 69, (69, 64, 62, 59), "13 for the fifth, 9 for the root: A4 E4 D4 B3"),
    ("Cmaj7#11", 66, (66, 64, 60, 59), "#11 for the fifth: F#4 E4 C4 B3"),
    ("Cmaj7", 68, (68, 64, 60, 59), "b13 is no tension of Cmaj7 (a clash): Ab4 E4 C4 B3, root kept"),
    # minor
    ("Cm7", 74, (74, 70, 67, 63), "9 for the root: D5 Bb4 G4 Eb4"),
    ("Cm7", 69, (69, 63, 60, 58), "13 for the fifth: A4 Eb4 C4 Bb3"),
    ("Cm7", 66, (66, 63, 60, 58), "#11 is no tension of Cm7 (a clash): F#4 Eb4 C4 Bb3"),
    ("Cm7", 68, (68, 63, 60, 58), "b13 is an avoid note in dorian (a clash): Ab4 Eb4 C4 Bb3"),
    # dominant
    ("C7", 74, (74, 70, 67, 64), "9 for the root: D5 Bb4 G4 E4"),
    ("C7", 69, (69, 64, 60, 58), "13 for the fifth: A4 E4 C4 Bb3"),
    ("C7", 66, (66, 64, 60, 58), "#11 for the fifth: F#4 E4 C4 Bb3"),
    ("C7", 68, (68, 64, 60, 58), "b13 for the fifth: Ab4 E4 C4 Bb3"),
    # half-diminished
    ("Cm7b5", 74, (74, 70, 66, 63), "9 for the root: D5 Bb4 Gb4 Eb4"),
    ("Cm7b5", 66, (66, 63, 60, 58), "#11 is the b5 itself: Gb4 Eb4 C4 Bb3"),
    ("Cm7b5", 68, (68, 63, 60, 58), "b13 for the fifth: Ab4 Eb4 C4 Bb3"),
    ("Cm7b5", 69, (69, 63, 60, 58), "13 is no tension of Cm7b5 (a clash): A4 Eb4 C4 Bb3"),
]


def _drop(close: tuple[int, ...], vtype: str) -> tuple[int, ...]:
    return tuple(sorted((p - 12 if i in DROPS[vtype] else p for i, p in enumerate(close)), reverse=True))


def _guides(symbol: str) -> set[int]:
    from music21 import harmony

    cs = harmony.ChordSymbol(symbol.replace("b", "-").replace("m7-5", "m7b5").replace("-13", "b13"))
    third = cs.getChordStep(3) or cs.getChordStep(4)
    seventh = cs.getChordStep(7) or cs.getChordStep(6)
    return {third.pitchClass, seventh.pitchClass}


@pytest.mark.parametrize("vtype", list(DROPS))
@pytest.mark.parametrize("symbol, lead, close, why", HAND)
def test_hand_worked_tension_leads(symbol: str, lead: int, close: tuple[int, ...], why: str,
                                   vtype: str) -> None:
    found = [s for s, _c in structures(lead, parse_chord(symbol), vtype, recipes())]
    assert _drop(close, vtype) in found, why
    guides = _guides(symbol)
    for s in found:                       # every candidate holds both guide tones
        assert guides <= {p % 12 for p in s}, (symbol, s)
        assert s[0] == lead


@pytest.mark.parametrize("symbol, lead, close, why", HAND)
def test_spread_puts_the_root_under_the_open_structure(symbol: str, lead: int, close: tuple[int, ...],
                                                       why: str) -> None:
    # common practice: spread = an open (drop 2-4 or drop 2) structure over the root
    chord = parse_chord(symbol)
    found = [s for s, _c in shapes(lead, chord, "spread", 5, 28)]
    assert found
    opens = {_drop(close, "drop2-4"), _drop(close, "drop2")}
    assert any(s[:4] in opens and s[4] % 12 == chord.root for s in found), why
    guides = _guides(symbol)
    assert all(guides <= {p % 12 for p in s} for s in found)


@pytest.mark.parametrize("symbol", ["Cmaj7", "C6", "Cm7", "Cm6", "C7", "Cm7b5", "Cdim7", "C7sus4",
                                    "C9", "C13", "Cm9", "C7b9", "C7#9", "C7alt", "Cmaj9", "Cm11"])
@pytest.mark.parametrize("n", [4, 5, 6, 8, 10, 13])
def test_no_candidate_loses_a_guide_tone(symbol: str, n: int) -> None:
    # common practice: with four or more parts every voicing holds the 3rd and the 7th
    # (the 6th of a sixth chord, the 4th of a sus chord), whatever the lead
    from arrange.voicing.shapes import guide_tones

    chord = parse_chord(symbol)
    for vtype in ("close", "drop2", "drop3", "drop2-4", "spread"):
        for lead in range(67, 79):
            for s, _c in shapes(lead, chord, vtype, n, 28):
                pcs = {p % 12 for p in s}
                assert set(guide_tones(chord)) <= pcs, (symbol, vtype, lead, s)


def test_every_chord_of_the_vocabulary_has_candidates_under_every_lead() -> None:
    # every chord family the symbols accept (theory.chords.VOCABULARY, checked against music21
    # in test_chords.py) is voiced under any lead, also forms without root and fifth (C13)
    from arrange.theory.chords import VOCABULARY

    for symbol in VOCABULARY + ("C7alt",):
        chord = parse_chord(symbol)
        for lead in range(60, 72):
            for n in (3, 4, 5, 8):
                assert shapes(lead, chord, "close", n, 28), (symbol, lead, n)
