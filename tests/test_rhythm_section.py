"""The written rhythm section ([rhythm_section]): bass, piano, guitar and drum parts,
read back from the files by outside readers.

References, named beside each check: music21 (MusicXML reader, ``instrument.Contrabass``
and ``instrument.ElectricBass`` for the bass's transposition and lowest note, chord
symbols' pitches), mido (the Standard MIDI File), verovio (renders the drum part), the
MusicXML 4.0 XSD (``musicxml`` package), the General MIDI 1 specification (percussion on
channel 10, the percussion key map 35-81), and the common practice of bass lines
(walking approach notes a step or half step from the next chord's root).
"""
from __future__ import annotations

import json
from fractions import Fraction
from pathlib import Path

import pytest
from conftest import run_cli, write_project

SWING = '''title = "Rhythm Walk"
tempo = 150
meter = "4/4"
key = "F major"

[chain]
motif = "A4 G4 C5 Bb4"
statements = 20
overlap = 2

[rhythm]
groove = "swing"

[harmony]
framework = "Fmaj7 | Bb7 | Am7 D7 | Gm7 C7 | F6 D7 | Gm7 C7 | Fmaj7"

[section]
name = "trumpets-4"
voicing = "close"

[output]
parts = true
formats = ["musicxml", "midi", "report"]

[rhythm_section]
parts = ["piano", "guitar", "bass", "drums"]
'''

LATIN = SWING.replace('groove = "swing"', 'groove = "latin"').replace('"Rhythm Walk"', '"Rhythm Latin"')


def _build(tmp: Path, text: str) -> Path:
    out = tmp / "out"
    res = run_cli("build", str(write_project(tmp, text)), "-o", str(out))
    assert res.exit_code == 0, res.output
    return out


@pytest.fixture(scope="module")
def swing(tmp_path_factory) -> Path:
    return _build(tmp_path_factory.mktemp("swing"), SWING)


@pytest.fixture(scope="module")
def latin(tmp_path_factory) -> Path:
    return _build(tmp_path_factory.mktemp("latin"), LATIN)


def _part_file(out: Path, word: str) -> Path:
    (path,) = [p for p in out.glob("*-parts/*.musicxml") if p.name.endswith(f"-{word}.musicxml")]
    return path


def _sounding_notes(path: Path):  # noqa: ANN202
    """(offset, quarter length, sounding MIDI) of every struck note, ties merged (music21)."""
    from music21 import converter

    part = converter.parse(str(path)).parts[0]
    sounding = part.toSoundingPitch()
    out = []
    for n in sounding.stripTies().flatten().notes:
        if n.isNote:
            out.append((Fraction(n.offset), Fraction(n.quarterLength), n.pitch.midi))
    return part, out


def _symbols(part) -> list[tuple[Fraction, object]]:  # noqa: ANN001
    from music21 import harmony

    return [(Fraction(cs.offset), cs) for cs in part.flatten().getElementsByClass(harmony.ChordSymbol)]


def _symbol_at(symbols, t: Fraction):  # noqa: ANN001, ANN202
    current = None
    for on, cs in symbols:
        if on <= t:
            current = cs
    return current


@pytest.mark.parametrize("fixture", ["swing", "latin"])
def test_bass_downbeats_are_chord_tones_and_in_range(fixture: str, request) -> None:
    from music21 import instrument

    out = request.getfixturevalue(fixture)
    part, notes = _sounding_notes(_part_file(out, "bass"))
    # music21: the part reads an octave above sounding, as its Contrabass does (P-8)
    inst = part.getInstrument()
    assert inst.transposition is not None
    assert inst.transposition.semitones == instrument.Contrabass().transposition.semitones == -12
    low = instrument.ElectricBass().lowestNote.midi            # music21: E1, the open low string
    assert notes and all(low <= p <= 55 for _, _, p in notes)  # up to G3 (from memory)
    symbols = _symbols(part)
    assert symbols
    bar = Fraction(4)
    downbeats = 0
    for k in range(int(max(o for o, _, _ in notes) // bar) + 1):
        t = k * bar
        sounding = [p for o, d, p in notes if o <= t < o + d]   # struck or tied over (tumbao)
        if not sounding:
            continue
        cs = _symbol_at(symbols, t)
        # music21 builds the chord from the <harmony> element; the downbeat note is one of its tones
        assert sounding[0] % 12 in {p.pitchClass for p in cs.pitches}, (fixture, t, cs.figure)
        downbeats += 1
    assert downbeats >= 6


def test_walking_approach_notes_lead_by_step_into_the_next_root(swing: Path) -> None:
    part, notes = _sounding_notes(_part_file(swing, "bass"))
    symbols = _symbols(part)
    starts = {on: cs for on, cs in symbols}
    checked = 0
    for i in range(1, len(notes) - 1):
        on, _, p = notes[i]
        nxt_on, _, nxt_p = notes[i + 1]
        new = starts.get(nxt_on)
        if new is None:
            continue
        prev_on = max(o for o in starts if o < nxt_on)
        if nxt_on - prev_on < 2:     # a chord of one beat has no room for an approach
            continue
        root = new.root().pitchClass          # music21's root of the next symbol
        assert nxt_p % 12 == root
        # common practice: the last note before the change lies a half or whole step from the root
        assert min(abs(p - nxt_p), 12 - abs(p - nxt_p) % 12) in (1, 2), (on, p, nxt_p)
        checked += 1
    assert checked >= 8
    # one note a beat (a walking line): every beat of a bar that is not the last holds an attack
    onsets = {o for o, _, _ in notes}
    assert all(Fraction(b) in onsets for b in range(0, 20))


def _midi_track(out: Path, name: str):  # noqa: ANN202
    import mido

    mf = mido.MidiFile(str(next(out.glob("*.mid"))))
    for track in mf.tracks:
        if track.name == name:
            t, notes, open_ = 0, [], {}
            for msg in track:
                t += msg.time
                if msg.type == "note_on" and msg.velocity > 0:
                    open_[msg.note] = t
                elif msg.type in ("note_off", "note_on"):
                    start = open_.pop(msg.note)
                    notes.append((start, t, msg.note, msg.channel))
            return mf.ticks_per_beat, sorted(notes)
    raise AssertionError(f"no MIDI track {name}")


def _perform(t: Fraction, ratio: Fraction) -> Fraction:
    """Swing as the report states it: each beat's first written half lasts ``ratio``."""
    beat, x = divmod(t, 1)
    half = Fraction(1, 2)
    return beat + (x * 2 * ratio if x <= half else ratio + (x - half) * 2 * (1 - ratio))


@pytest.mark.parametrize("fixture", ["swing", "latin"])
def test_midi_bass_plays_the_written_bass_note_for_note(fixture: str, request) -> None:
    out = request.getfixturevalue(fixture)
    ratio = Fraction(json.loads(next(out.glob("*.report.json")).read_text())["swing"]).limit_denominator(100)
    _, written = _sounding_notes(_part_file(out, "bass"))       # music21
    tpq, played = _midi_track(out, "Bass")                       # mido
    assert len(played) == len(written)
    for (on, dur, pitch), (start, stop, key, _ch) in zip(written, played, strict=True):
        assert key == pitch
        assert start == round(_perform(on, ratio) * tpq)
        assert abs(stop - _perform(on + dur, ratio) * tpq) <= 2   # released a tick early


@pytest.mark.parametrize("word,track", [("piano", "Piano"), ("guitar", "Guitar")])
def test_midi_comping_plays_every_written_slash(swing: Path, word: str, track: str) -> None:
    from music21 import converter

    ratio = Fraction(json.loads(next(swing.glob("*.report.json")).read_text())["swing"]).limit_denominator(100)
    part = converter.parse(str(_part_file(swing, word))).parts[0]
    slashes = [(Fraction(n.offset), Fraction(n.quarterLength)) for n in part.stripTies().flatten().notes
               if n.isNote and n.notehead == "slash"]                   # music21
    tpq, played = _midi_track(swing, track)                              # mido
    chords: dict[int, set[int]] = {}
    for start, stop, _key, _ch in played:
        chords.setdefault(start, set()).add(stop)
    assert len(chords) == len(slashes) > 0
    for (on, dur), start in zip(slashes, sorted(chords), strict=True):
        assert start == round(_perform(on, ratio) * tpq)
        (stop,) = chords[start]
        assert abs(stop - _perform(on + dur, ratio) * tpq) <= 2


def test_comping_parts_read_slashes_chord_symbols_and_hits(swing: Path) -> None:
    from music21 import clef, converter

    for word in ("piano", "guitar"):
        part = converter.parse(str(_part_file(swing, word))).parts[0]
        notes = [n for n in part.flatten().notes if n.isNote]
        assert notes and all(n.notehead == "slash" for n in notes)          # music21
        stemless = [n for n in notes if n.stemDirection == "noStem"]
        rhythmic = [n for n in notes if n.stemDirection == "up"]
        assert stemless and rhythmic                   # time slashes, and the figures' slashes
        assert all(any(a.name == "accent" for a in n.articulations) for n in rhythmic
                   if not (n.tie and n.tie.type in ("stop", "continue")))
        assert len(_symbols(part)) >= 6
        first_clef = part.flatten().getElementsByClass(clef.Clef)[0]
        # the guitar reads treble, sounding an octave lower (music21's Treble8vbClef)
        assert isinstance(first_clef, clef.Treble8vbClef if word == "guitar" else clef.TrebleClef)


def test_drum_part_is_a_percussion_staff_with_style_cues_and_fill(swing: Path) -> None:
    import verovio
    from music21 import clef, converter, expressions, note

    path = _part_file(swing, "drums")
    part = converter.parse(str(path)).parts[0]
    assert isinstance(part.flatten().getElementsByClass(clef.Clef)[0], clef.PercussionClef)   # music21
    unpitched = list(part.flatten().getElementsByClass(note.Unpitched))
    time = [n for n in unpitched if n.notehead == "slash"]
    cues = [n for n in unpitched if n.notehead != "slash"]
    bars = len(part.getElementsByClass("Measure"))
    assert len(time) == 4 * bars               # one time slash a beat in 4/4
    assert cues                                 # the section's figures above the staff
    words = [w.content for w in part.flatten().getElementsByClass(expressions.TextExpression)]
    assert "Swing" in words and "Fill" in words
    tk = verovio.toolkit()
    assert tk.loadData(path.read_text(encoding="utf-8"))                    # verovio reads it
    svg = tk.renderToSVG(1)
    assert "<svg" in svg and "Fill" in svg


def test_midi_drums_on_general_midi_channel_10(swing: Path) -> None:
    _, played = _midi_track(swing, "Drums")                              # mido
    # General MIDI 1: percussion on channel 10 (mido counts channels from 0), keys 35-81
    assert played and {ch for *_, ch in played} == {9}
    assert all(35 <= key <= 81 for _, _, key, _ in played)
    for name in ("Bass", "Piano", "Guitar"):
        _, notes = _midi_track(swing, name)
        assert 9 not in {ch for *_, ch in notes}


def test_score_holds_the_rhythm_parts_valid(swing: Path, musicxml_schema) -> None:
    from music21 import converter

    score = next(swing.glob("*.musicxml"))                   # the score (parts: their own folder)
    musicxml_schema.validate(str(score))                  # MusicXML 4.0 XSD
    for word in ("guitar", "piano", "bass", "drums"):
        musicxml_schema.validate(str(_part_file(swing, word)))
    names = [p.partName for p in converter.parse(str(score)).parts]     # music21
    assert names[-4:] == ["Guitar", "Piano", "Bass", "Drums"]


def test_old_switch_still_writes_bass_and_drums(tmp_path: Path) -> None:
    text = SWING.replace('[rhythm_section]\nparts = ["piano", "guitar", "bass", "drums"]\n', "") \
        .replace("parts = true\n", "parts = true\nrhythm_section = true\n").replace("statements = 20", "statements = 4")
    out = _build(tmp_path, text)
    assert _part_file(out, "bass") and _part_file(out, "drums")
    assert not list(out.glob("*-piano.musicxml"))


def test_old_switch_and_new_table_together_refused(tmp_path: Path) -> None:
    text = SWING.replace("parts = true\n", "parts = true\nrhythm_section = true\n")
    res = run_cli("build", str(write_project(tmp_path, text)), "-o", str(tmp_path / "out"))
    assert res.exit_code == 2
    assert "rhythm_section" in res.output and "Traceback" not in res.output
    assert not (tmp_path / "out").exists()


@pytest.mark.parametrize("bad,word", [('parts = ["banjo"]', "banjo"), ('parts = ["bass", "bass"]', "twice"),
                                      ('parts = ["bass"]\nbass = "polka"', "polka")])
def test_bad_rhythm_section_values_exit_2(tmp_path: Path, bad: str, word: str) -> None:
    text = SWING.replace('parts = ["piano", "guitar", "bass", "drums"]', bad)
    res = run_cli("build", str(write_project(tmp_path, text)), "-o", str(tmp_path / "out"))
    assert res.exit_code == 2 and word in res.output and "Traceback" not in res.output


@pytest.mark.parametrize("style", ["walking", "two-beat", "tumbao", "shuffle", "roots-fifths"])
@pytest.mark.parametrize("meter", ["4/4", "3/4", "6/8"])
def test_every_bass_style_keeps_the_chord_on_the_downbeat(tmp_path: Path, style: str, meter: str) -> None:
    """The stage's values in every style and meter (common practice: the bar's first beat
    sounds a tone of its chord; a bass line never overlaps itself; E1..G3 from memory)."""
    from arrange.build import run_pipeline, run_rhythm_section
    from arrange.project import load_project

    groove = "straight" if meter == "6/8" else "swing"
    text = SWING.replace('groove = "swing"', f'groove = "{groove}"').replace(
        'meter = "4/4"', f'meter = "{meter}"').replace(
        'parts = ["piano", "guitar", "bass", "drums"]', f'parts = ["bass", "drums"]\nbass = "{style}"')
    project = load_project(write_project(tmp_path, text))
    voiced = run_pipeline(project)
    rs = run_rhythm_section(project, voiced)
    notes = rs.bass
    assert notes and all(28 <= n.pitch <= 55 for n in notes)
    for a, b in zip(notes, notes[1:], strict=False):
        assert a.onset + a.duration <= b.onset
    bar = voiced.harmonized.line.meter.bar
    from arrange.harmony.events import stated_framework

    # the chord the section states at each beat (a substitute there is the bass's chord too)
    for fc in stated_framework(voiced.harmonized):
        if fc.onset % bar:
            continue
        sounding = [n for n in notes if n.onset <= fc.onset < n.onset + n.duration]
        if sounding:
            assert sounding[0].pitch % 12 in fc.chord.pitch_classes, (style, meter, fc)
    if style == "two-beat" and meter == "4/4":
        assert {n.onset % bar for n in notes} <= {0, 2}


FORM = '''title = "Two Passages"
tempo = 132
key = "F major"

[section]
name = "trumpets-4"

[[passages]]
name = "A"
melody = "C5:4 | [F6] A4:4. G4:8 F4:4 C5:4 | [Gm7] Bb4:4 A4:8 G4:8 [C7] E4:4 G4:4 | [F6] F4:1 |"

[[passages]]
name = "B"
melody = "[Bb6] D5:2 C5:2 | [C7] Bb4:2 G4:2 | [F6] F4:1 |"

[rhythm_section]
parts = ["bass", "drums"]
'''


def test_fills_where_each_passage_of_a_form_ends(tmp_path: Path) -> None:
    """Common practice: the drummer fills into each new section of a form."""
    from arrange.build import run_pipeline, run_rhythm_section
    from arrange.project import load_project

    project = load_project(write_project(tmp_path, FORM))
    voiced = run_pipeline(project)
    rs = run_rhythm_section(project, voiced)
    ends = {p.last_bar for p in voiced.harmonized.line.passages}
    assert len(ends) == 2 and ends <= set(rs.drums.fills)


def test_tutti_rules_carry_their_sources() -> None:
    """Every layout and spacing rule of voicing_rules/tutti.toml says where it comes from."""
    import tomllib

    from arrange.voicing.sections import data_dir
    from arrange.voicing.tutti_layouts import layouts, tutti_rules

    data = tomllib.loads((data_dir() / "tutti.toml").read_text(encoding="utf-8"))
    assert set(layouts()) == set(data["layouts"]) >= {"octaves", "middle"}
    assert all(la.source in ("common practice", "from memory") for la in layouts().values())
    assert tutti_rules().guide_tone_parts >= 1
    for key in ("root_reach", "guide_tone_parts"):
        assert data["rules"][f"source_{key}"] in ("common practice", "from memory")
