"""Pitch input.  Reference: music21's ``pitch.Pitch`` (general-purpose library)
gives the MIDI number of every spelling we accept."""
from __future__ import annotations

import pytest
from hypothesis import given
from hypothesis import strategies as st

from arrange.errors import ArrangeError, PitchError
from arrange.theory.pitch import parse_pitch, parse_pitches, pitch_name

SPELLINGS = ["C4", "Eb4", "E-4", "B♭3", "F#5", "G♯2", "Cx4", "Dbb4", "B#3", "Cb4", "A0", "C-1",
             "G9", "E--3", "F##2"]


@pytest.mark.parametrize("name", SPELLINGS)
def test_names_agree_with_music21(name: str) -> None:
    from music21 import pitch

    m21 = name.replace("♭", "-").replace("♯", "#").replace("x", "##").replace("Dbb", "D--")
    m21 = m21.replace("Eb", "E-").replace("Cb", "C-").replace("♮", "").replace("Bn", "B")
    # music21 as reference; like music21, "C-1" is C-flat 1, and octave -1 needs ♮ or n
    assert parse_pitch(name) == pitch.Pitch(m21).midi


def test_octave_minus_one_needs_a_sign() -> None:
    from music21 import pitch

    assert parse_pitch("C♮-1") == pitch.Pitch("C", octave=-1).midi == 0  # music21 as reference
    assert parse_pitch("Bn-1") == pitch.Pitch("B", octave=-1).midi
    assert parse_pitch("C#-1") == 1


def test_midi_numbers_and_lists() -> None:
    assert parse_pitches("60 64, 67") == (60, 64, 67)
    assert parse_pitches([60, "E4", "67"]) == (60, 64, 67)
    assert parse_pitch(0) == 0 and parse_pitch(127) == 127


@pytest.mark.parametrize("bad", ["H4", "C10", "Cb-2", "128", "-1", "Eb", "4C", "", "C#b4", "G9x"])
def test_bad_tokens_are_refused_with_position(bad: str) -> None:
    with pytest.raises(PitchError) as info:
        parse_pitches(f"C4 {bad} D4" if bad else "C4 ? D4")
    msg = str(info.value)
    assert "token 2" in msg and "accepted" in msg


def test_name_round_trip() -> None:
    for m in range(0, 128):
        assert parse_pitch(pitch_name(m)) == m


@given(st.text(max_size=12))
def test_any_text_gives_value_or_arrange_error(text: str) -> None:
    try:
        out = parse_pitches(text)
    except ArrangeError:
        return
    assert all(0 <= p <= 127 for p in out)
