"""Instruments and sections from voicing_rules/, checked against music21 and the trade.

References: music21's ``instrument`` classes (transposition, MusicXML sound id, General
MIDI program, lowest written note) and ``interval`` (interval names); part names and
order of common big-band practice.
"""
from __future__ import annotations

import json

import pytest
from conftest import run_cli

from arrange.voicing.sections import instruments, sections

# our key -> the music21 instrument class for the same instrument
M21 = {"soprano-sax": "SopranoSaxophone", "alto-sax": "AltoSaxophone", "tenor-sax": "TenorSaxophone",
       "baritone-sax": "BaritoneSaxophone", "clarinet": "Clarinet", "flute": "Flute",
       "trumpet": "Trumpet", "horn": "Horn", "trombone": "Trombone", "bass-trombone": "BassTrombone",
       "tuba": "Tuba", "violin": "Violin", "viola": "Viola", "cello": "Violoncello",
       "double-bass": "Contrabass", "guitar": "ElectricGuitar"}
REQUIRED = set(M21) | {"flugelhorn"}


def _m21(key: str):
    from music21 import instrument

    return getattr(instrument, M21[key])()


def test_required_instruments_present() -> None:
    assert REQUIRED <= set(instruments())   # the instruments issue 5 lists


@pytest.mark.parametrize("key", sorted(M21))
def test_transposition_agrees_with_music21(key: str) -> None:
    inst = instruments()[key]
    ref = _m21(key).transposition      # music21: written -> sounding interval, or None
    ref_semitones = 0 if ref is None else -ref.semitones
    assert inst.transposition == ref_semitones


@pytest.mark.parametrize("key", sorted(M21))
def test_sound_and_program_agree_with_music21(key: str) -> None:
    inst = instruments()[key]
    ref = _m21(key)
    assert inst.sound == ref.instrumentSound        # MusicXML sound id as music21 carries it
    assert inst.program - 1 == ref.midiProgram      # General MIDI, music21 counts from 0


@pytest.mark.parametrize("key", ["soprano-sax", "alto-sax", "tenor-sax", "clarinet", "flute", "trumpet",
                                 "trombone", "bass-trombone", "violin", "viola", "cello", "double-bass",
                                 "guitar", "baritone-sax"])
def test_extreme_low_note_is_music21_lowest_written(key: str) -> None:
    # music21 lowestNote (documented as the lowest WRITTEN note) is the instrument's bottom:
    # the extreme range (a hard limit) starts there, the practical range at or above it
    from music21 import pitch

    inst = instruments()[key]
    assert inst.extreme[0] + inst.transposition == pitch.Pitch(_m21(key).lowestNote.nameWithOctave).midi
    assert inst.practical[0] >= inst.extreme[0]


def test_practical_ranges_are_narrower_than_extreme_ones() -> None:
    # the range section players are asked to play lies inside the extreme range and is
    # narrower than it (from memory of orchestration handbooks), piano and guitar aside
    for inst in instruments().values():
        (lo, hi), (xlo, xhi) = inst.practical, inst.extreme
        assert xlo <= lo < hi <= xhi, inst.key
        assert (hi - lo) < (xhi - xlo), inst.key


def test_interval_names_agree_with_semitones() -> None:
    from music21 import interval

    from arrange.writers.xml_score import _INTERVALS

    for inst in instruments().values():
        # music21 interval names as reference for the written-minus-sounding distance
        assert interval.Interval(_INTERVALS[inst.interval]).semitones == inst.transposition, inst.key
        lo, hi = inst.practical
        xlo, xhi = inst.extreme
        assert xlo <= lo < hi <= xhi


def test_sections_have_standard_part_names() -> None:
    s = sections()
    # standard part names and order, top to bottom (common practice, QUALITY.md)
    assert [p.name for p in s["saxes-5"].parts] == ["Alto Sax 1", "Alto Sax 2", "Tenor Sax 1",
                                                     "Tenor Sax 2", "Baritone Sax"]
    assert [p.name for p in s["trumpets-4"].parts] == [f"Trumpet {i}" for i in range(1, 5)]
    assert [p.name for p in s["trombones-4"].parts] == ["Trombone 1", "Trombone 2", "Trombone 3",
                                                        "Bass Trombone"]
    assert [p.instrument.key for p in s["brass-6"].parts] == ["trumpet"] * 3 + ["trombone"] * 3
    assert len(s["brass-8"].parts) == 8 and s["brass-8"].parts[-1].instrument.key == "bass-trombone"
    assert [p.instrument.key for p in s["horns-4"].parts] == ["trumpet", "alto-sax", "tenor-sax", "trombone"]
    assert [p.instrument.key for p in s["strings-5"].parts] == ["violin", "violin", "viola", "cello",
                                                                "double-bass"]


def test_cli_lists_sections_with_ranges() -> None:
    r = run_cli("sections", "--json")
    assert r.exit_code == 0
    data = json.loads(r.output)
    for name in ("saxes-5", "trumpets-4", "trombones-4", "brass-6", "brass-8", "horns-4", "strings-5"):
        assert name in data
    bari = data["saxes-5"]["parts"][-1]
    assert bari["transposition"] == 21 and bari["range"] == list(instruments()["baritone-sax"].practical)
    text = run_cli("sections").output
    assert "Baritone Sax" in text and "C#2-F4" in text


INLINE = '''title = "Inline"
key = "C major"
[chain]
motif = "E4 D4 G4 F4"
statements = 2
[harmony]
framework = "C6 | Dm7 G7"
[section]
name = "front-line"
parts = [ { name = "Flugelhorn", instrument = "flugelhorn" }, "tenor-sax", { name = "Bone", instrument = "trombone" } ]
voicing = "drop2"
'''


def test_inline_section_builds(tmp_path) -> None:
    from conftest import write_project

    path = write_project(tmp_path, INLINE)
    r = run_cli("build", str(path), "-o", str(tmp_path / "o"), "--formats", "report")
    assert r.exit_code == 0, r.output
    rep = json.loads((tmp_path / "o" / "inline.report.json").read_text())
    assert [p["instrument"] for p in rep["section"]["parts"]] == ["flugelhorn", "tenor-sax", "trombone"]
    assert all(len(e["pitches"]) == 3 for e in rep["events"])
