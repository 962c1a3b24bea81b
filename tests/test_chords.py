"""Chord symbols: vocabulary, canonical round trip, tones against music21, tensions.

References: music21's ``harmony.ChordSymbol`` (a general-purpose library) for the
tones of every symbol; the alias and tension tables are common practice of jazz
lead sheets and chord-scale teaching (no single published source).
"""
from __future__ import annotations

import re

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from arrange.errors import ArrangeError, HarmonyError
from arrange.theory.chords import VOCABULARY, parse_chord

# music21 rejects these spellings or reads them differently; each row is an equivalent
# spelling music21 accepts (checked by hand against the chord's definition):
M21_EQUIVALENT = {
    "C6/9": "C6add9", "Cm6/9": "Cm6add9", "Gb6/9": "G-6add9",      # rejects "6/9"
    "Cm(maj7)": "CmM7", "Cm(maj9)": "CmM9",                         # rejects "m(maj7)"
    "Cmaj9": "CM9", "Cmaj9#11": "CM9add#11",                        # rejects "maj9"
    "Cmaj13": "CM7add9add13",                                       # rejects "maj13"
    "C9sus4": "C7sus4add9", "C13sus4": "C7sus4add9add13",           # rejects "9sus4"
    # music21 reads "13" with the 11; jazz practice leaves the 11 out of a dominant
    # or major 13th chord (common practice), so compare with the 11-less spelling
    "C13": "C7add9add13", "Bb13": "B-7add9add13", "C13#11": "C7add9add#11add13",
}


def m21_figure(symbol: str) -> str:
    if symbol in M21_EQUIVALENT:
        return M21_EQUIVALENT[symbol]
    # music21 writes flats as '-' (root and bass)
    return re.sub(r"/([A-G])b", r"/\1-", re.sub(r"^([A-G])b", r"\1-", symbol))


@pytest.mark.parametrize("symbol", VOCABULARY)
def test_music21_agrees_on_chord_tones(symbol: str) -> None:
    from music21 import harmony

    ours = parse_chord(symbol)
    cs = harmony.ChordSymbol(m21_figure(symbol))                     # music21 as reference
    m21 = {p.pitchClass for p in cs.pitches}
    expected = set(ours.pitch_classes) | ({ours.bass} if ours.bass is not None else set())
    assert m21 == expected
    assert cs.root().pitchClass == ours.root
    if ours.bass is not None:
        assert cs.bass().pitchClass == ours.bass


def test_music21_rejects_a_spelling_we_accept() -> None:
    from music21 import harmony

    with pytest.raises(Exception):  # noqa: B017 - music21's own error type is not public
        harmony.ChordSymbol("Ebm9")  # music21 reads "b" after the root as part of the kind
    assert parse_chord("Ebm9").pitch_classes == (3, 6, 10, 1, 5)


ROOTS = ("C", "Db", "D", "Eb", "E", "F", "F#", "G", "Ab", "A", "Bb", "B", "Cb", "C#", "Gb")


@pytest.mark.parametrize("symbol", VOCABULARY)
def test_round_trip_is_canonical(symbol: str) -> None:
    for root in ROOTS:
        text = root + re.sub(r"^[A-G][b#]?", "", symbol)
        chord = parse_chord(text)
        again = parse_chord(chord.symbol)
        assert again == chord
        assert again.symbol == chord.symbol          # the canonical spelling is a fixed point


# aliases of the trade (common practice of lead sheets) -> canonical symbol
ALIASES = [
    ("CΔ", "Cmaj7"), ("CΔ7", "Cmaj7"), ("CM7", "Cmaj7"), ("Cma7", "Cmaj7"), ("C-7", "Cm7"),
    ("Cmin7", "Cm7"), ("Cmi7", "Cm7"), ("Cø", "Cm7b5"), ("Cø7", "Cm7b5"), ("C°7", "Cdim7"),
    ("Co7", "Cdim7"), ("C°", "Cdim"), ("C+", "Caug"), ("C+7", "C7#5"), ("C7+5", "C7#5"),
    ("Caug7", "C7#5"), ("C69", "C6/9"), ("CmM7", "Cm(maj7)"), ("Cmmaj7", "Cm(maj7)"),
    ("C-(maj7)", "Cm(maj7)"), ("Csus", "Csus4"), ("C7sus", "C7sus4"), ("C7(b9,#11)", "C7b9#11"),
    ("C7(#11)(b9)", "C7b9#11"), ("B♭7", "Bb7"), ("F♯m7♭5", "F#m7b5"), ("C7#9b9", "C7b9#9"),
    ("Cmaj", "C"), ("C7-9", "C7b9"), ("Cdim7/E", "Cdim7/E"), ("C7/C", "C7"),
]


@pytest.mark.parametrize(("written", "canonical"), ALIASES)
def test_aliases(written: str, canonical: str) -> None:
    assert parse_chord(written).symbol == canonical


def test_extensions_and_alterations_replace_naturals() -> None:
    # common practice: an altered ninth replaces the natural ninth of a 13th chord
    c = parse_chord("C13b9")
    assert 1 in c.intervals and 2 not in c.intervals and 9 in c.intervals
    assert set(parse_chord("Cm13").intervals) == {0, 3, 7, 10, 2, 5, 9}    # minor keeps the 11
    assert 5 not in parse_chord("C13").intervals                          # dominant leaves it out


# available tensions (intervals above the root), common practice of chord-scale teaching
TENSIONS = [
    ("Cmaj7", {2, 9}),                 # ionian: 9, 13; the 11 is the avoid note
    ("Cmaj7#11", {2, 9}),              # lydian: 9, 13 (#11 is in the chord)
    ("C6", {2, 11}),                   # 9, and the major seventh a sixth chord takes
    ("Cm7", {2, 5, 9}),                # dorian: 9, 11, 13
    ("C7", {1, 2, 3, 6, 8, 9}),        # an unaltered dominant: every tension but the 11
    ("C7b9", {3, 6, 9}),               # half-whole diminished: #9, #11, 13
    ("C7#9", {1, 6, 8}),               # altered: b9, #11, b13
    ("Cm7b5", {2, 5, 8}),              # locrian natural 2: 9, 11, b13
    ("Cdim7", {2, 5, 8, 11}),          # whole-half: a whole step above each chord tone
    ("C7sus4", {2, 9}),                # 9, 13 (the third is the avoid note)
    ("Cm(maj7)", {2, 5, 9}),           # melodic minor: 9, 11, 13
]


@pytest.mark.parametrize(("symbol", "tensions"), TENSIONS)
def test_available_tensions(symbol: str, tensions: set[int]) -> None:
    chord = parse_chord(symbol)
    assert set(chord.tensions) == tensions
    assert not set(chord.tensions) & set(chord.intervals)


@pytest.mark.parametrize("text", ["H7", "Cxyz", "C9b9", "Cm(maj7", "", "Cmsus4", "C7b9b9",
                                  "Cdim7b9", "C6maj7", "C#11b5#5", "Q", "Cb13b13"])
def test_bad_symbols_raise_with_suggestions(text: str) -> None:
    with pytest.raises(HarmonyError) as err:
        parse_chord(text, where="p.toml [harmony], bar 2")
    msg = str(err.value)
    assert repr(text) in msg and "bar 2" in msg and "accepted" in msg


def test_suggestions_are_close_spellings() -> None:
    with pytest.raises(HarmonyError) as err:
        parse_chord("Fmaj8")
    assert "Fmaj7" in str(err.value)        # difflib's closest spellings, same root
    with pytest.raises(HarmonyError) as err:
        parse_chord("Bbm7b6")
    assert "Bbm7b5" in str(err.value)


@settings(max_examples=400, deadline=None)
@given(st.text(max_size=14))
def test_any_text_gives_a_chord_or_an_arrange_error(text: str) -> None:
    try:
        chord = parse_chord(text)
    except ArrangeError:
        return
    assert parse_chord(chord.symbol) == chord
    assert all(0 <= i < 12 for i in chord.intervals) and chord.intervals[0] == 0


@settings(max_examples=300, deadline=None)
@given(st.sampled_from(ROOTS), st.text(alphabet="majdinsuo()+-#b5679137/,ø°Δ", max_size=10))
def test_chordlike_text_gives_a_chord_or_an_arrange_error(root: str, suffix: str) -> None:
    try:
        chord = parse_chord(root + suffix)
    except ArrangeError:
        return
    assert parse_chord(chord.symbol) == chord
