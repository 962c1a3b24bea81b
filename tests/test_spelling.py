"""Spelling: key, chord and direction decide how a pitch is written.

References: music21 ``pitch`` names (ChordSymbol and Pitch) for stacked-third
spellings and octaves; the rules themselves (chord tones from the root, rising
chromatic notes sharp, falling ones flat, key signature respected) are common
practice of engraving jazz and commercial scores.
"""
from __future__ import annotations

import json
import re
from pathlib import Path

import pytest
from conftest import BASIC, run_cli, write_project

from arrange.theory.chords import VOCABULARY, parse_chord
from arrange.theory.keys import MODES, parse_key
from arrange.theory.spelling import direction_of, m21_name, spell_chord, spell_pc, spell_pitch

FLAT_TONICS = ("F", "Bb", "Eb", "Ab", "Db", "Gb", "C", "G", "D", "A", "E", "B")


def test_flat_keys_never_sharpen_a_diatonic_note() -> None:
    for mode in MODES:
        for tonic in FLAT_TONICS:
            key = parse_key(f"{tonic} {mode}")
            if key.fifths >= 0:
                continue
            chords = (None, *key.diatonic_sevenths(), parse_chord("E7"), parse_chord("F#7"),
                      parse_chord("B6"), parse_chord("C#dim7"))
            for pc, own in zip(key.scale, key.names, strict=True):
                for chord in chords:
                    name = spell_pc(pc, key, chord)
                    # harmonic and melodic minor raise their own 6th/7th: those keep the key's name
                    assert "#" not in name or "#" in own, (str(key), chord, name)
                    assert name == own


def test_quality_examples() -> None:
    # common practice (QUALITY.md): the third of Ab7 is C, the seventh of E7 is D
    e = parse_key("E major")
    assert spell_pc(0, e, parse_chord("Ab7")) == "C"          # C is foreign to E major
    assert spell_pc(2, e, parse_chord("E7")) == "D"           # D (not C##) over E7
    assert spell_pc(8, parse_key("F major"), parse_chord("E7")) == "G#"
    assert spell_pc(3, parse_key("C major"), parse_chord("Ab7")) == "Eb"
    # the b9 of C7 in F major is Db, its #11 F# (by degree); its #9 is D# on the way up,
    # Eb without direction (a flat key keeps to flats)
    f = parse_key("F major")
    assert [spell_pc(pc, f, parse_chord("C7")) for pc in (1, 6)] == ["Db", "F#"]
    assert spell_pc(3, f, parse_chord("C7"), 1) == "D#" and spell_pc(3, f, parse_chord("C7")) == "Eb"
    assert spell_pc(3, parse_key("G major"), parse_chord("C7")) == "D#"


def test_chromatic_notes_follow_their_direction() -> None:
    c = parse_key("C major")
    # rising sharp, falling flat (common practice)
    assert spell_pitch(61, c, None, direction_of(60, 61, 62)) == "C#4"
    assert spell_pitch(61, c, None, direction_of(62, 61, 60)) == "Db4"
    f = parse_key("F major")
    assert spell_pitch(66, f, None, 1) == "F#4" and spell_pitch(66, f, None, -1) == "Gb4"
    # B natural in F major, falling: B, not Cb
    assert spell_pitch(71, f, None, -1) == "B4"
    # without a direction, a note leans to the key signature's side
    assert spell_pc(6, parse_key("Bb major")) == "Gb" and spell_pc(3, parse_key("E major")) == "D#"


@pytest.mark.parametrize("symbol", [v for v in VOCABULARY if "/" not in v])
def test_chord_tones_are_stacked_thirds_like_music21(symbol: str) -> None:
    from music21 import harmony
    from test_chords import m21_figure

    chord = parse_chord(symbol)
    ours = set(spell_chord(chord))
    cs = harmony.ChordSymbol(m21_figure(symbol))                    # music21 pitch names
    theirs = {p.name.replace("-", "b") for p in cs.pitches}
    assert ours == theirs
    letters = "CDEFGAB"
    start = letters.index(chord.root_name[0])
    for name, degree in zip(spell_chord(chord), chord.degrees, strict=True):
        assert name[0] == letters[(start + degree - 1) % 7]       # letter = the degree


def test_octave_goes_with_the_letter() -> None:
    from music21 import pitch

    key = parse_key("Eb minor")
    name = spell_pitch(59, key, parse_chord("Abm7"))     # the third of Abm7 is Cb
    assert name == "Cb4"
    assert pitch.Pitch(m21_name(name)).midi == 59          # music21 as reference
    name = spell_pitch(60, parse_key("C# major"))
    assert name == "B#3" and pitch.Pitch(m21_name(name)).midi == 60


def test_every_spelling_keeps_the_pitch() -> None:
    from music21 import pitch

    for mode in ("major", "minor", "dorian", "harmonic minor"):
        for tonic in ("F", "Bb", "Eb", "Ab", "Db", "Gb", "G", "D", "A", "E", "B", "F#"):
            key = parse_key(f"{tonic} {mode}")
            chords = (None, *key.diatonic_sevenths(), parse_chord(f"{key.names[4]}7b9"))
            for chord in chords:
                for midi in range(55, 80):
                    for way in (-1, 0, 1):
                        name = spell_pitch(midi, key, chord, way)
                        assert re.fullmatch(r"[A-G](bb|b|##|#)?-?\d", name), name
                        assert pitch.Pitch(m21_name(name)).midi == midi    # music21 as reference


def test_written_score_spells_by_key(tmp_path: Path) -> None:
    """End to end: in a flat-key project, music21 reads no sharp on a diatonic lead note."""
    from music21 import converter

    text = BASIC.replace('key = "F major"', 'key = "Ab major"').replace(
        'framework = "F6 | F6 | Gm7 C7 | F6"', 'framework = "Abmaj7 | Fm7 | Bbm7 Eb7 | Ab6"')
    proj = write_project(tmp_path, text.replace('"A4 G4 C5 Bb4"', '"C4 Bb3 Eb4 Db4"'))
    out = tmp_path / "out"
    r = run_cli("build", str(proj), "-o", str(out), "--formats", "musicxml,report")
    assert r.exit_code == 0, r.output
    report = json.loads((out / "test-cue.report.json").read_text())
    score = converter.parse(str(out / "test-cue.musicxml"))
    lead = [n for n in score.parts[0].flatten().getElementsByClass("Note")
            if not (n.tie is not None and n.tie.type in ("stop", "continue"))]
    ab = set(parse_key("Ab major").scale)
    assert len(lead) == len(report["events"])
    for n, e in zip(lead, report["events"], strict=True):
        assert n.pitch.midi == e["lead"]
        if e["lead"] % 12 in ab:
            assert "#" not in n.pitch.name, (n.pitch.name, e)
        assert n.pitch.nameWithOctave.replace("-", "b") == e["lead_name"]
    sig = score.parts[0].flatten().getElementsByClass("KeySignature")[0]
    assert sig.sharps == -4                                               # Ab major: four flats
    # an accidental prints only where signature and measure do not give it (common practice
    # of engraving): trombones do not transpose, so the written notes are the sounding ones
    in_sig = {"B": -1, "E": -1, "A": -1, "D": -1}
    for m in score.parts[1].getElementsByClass("Measure"):
        state: dict[tuple[str, int], int] = {}
        for n in m.getElementsByClass("Note"):
            slot = (n.pitch.step, n.pitch.octave)
            alter = int(n.pitch.alter)
            printed = n.pitch.accidental is not None and bool(n.pitch.accidental.displayStatus)
            tied_over = n.tie is not None and n.tie.type in ("stop", "continue")
            assert printed == (alter != state.get(slot, in_sig.get(n.pitch.step, 0)) and not tied_over)
            state[slot] = alter
