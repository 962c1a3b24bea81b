"""A passage's own section (issue 17): a saxophone soli, a designed chain, then a trumpet
passage, one chart.  Each section's staves play in its own passages and rest in the others.

Outside references, beside each check:
* music21 reads the written score and part files (staves, rests, written and sounding pitch:
  ``toSoundingPitch``), and its ``instrument`` classes give each instrument's lowest written
  note (``lowestNote``) and General MIDI program (``midiProgram``); the highest written notes
  are handbook values from memory (``test_audit_voicing.HIGH_WRITTEN``);
* the MusicXML 4.0 XSD shipped in the ``musicxml`` package validates every file;
* mido reads the Standard MIDI File (a track per staff, its program, its notes);
* common practice of chart layout: one staff per player, in score order (saxophones above
  trumpets above trombones); a staff whose section does not play rests through the bars.
The melodies are written in the project text, so the sounding lead of each passage is known
without our stages.
"""
from __future__ import annotations

import json
from pathlib import Path

import pytest
from conftest import run_cli, snapshot, write_project

SOLI = "C5:4 | [F6] A4:4. G4:8 F4:4 C5:4 | [Gm7] Bb4:4 A4:8 G4:8 [C7] E4:4 G4:4 | [F6] F4:1 |"
BRASS = "Eb5:4 | [Ab6] C5:4. Bb4:8 Ab4:4 Eb5:4 | [Bbm7] Db5:4 C5:8 Bb4:8 [Eb7] G4:4 Bb4:4 | [Ab6] Ab4:1 |"
# the same lines as MIDI numbers (C4 = 60), read off the text by hand
SOLI_MIDI = [72, 69, 67, 65, 72, 70, 69, 67, 64, 67, 65]
BRASS_MIDI = [75, 72, 70, 68, 75, 73, 72, 70, 67, 70, 68]

FORM = f'''title = "Two Sections"
tempo = 132
key = "F major"

[section]
name = "saxes-5"
voicing = "close"

[[passages]]
name = "Soli"
melody = "{SOLI}"

[[passages]]
name = "Turn"
chain = {{ design = true, statements = 4 }}

[[passages]]
name = "Brass"
key = "Ab major"
section = "trumpets-4"
melody = "{BRASS}"

[output]
formats = ["musicxml", "midi", "report"]
parts = true
'''

SAXES = ["Alto Sax 1", "Alto Sax 2", "Tenor Sax 1", "Tenor Sax 2", "Baritone Sax"]
TRUMPETS = ["Trumpet 1", "Trumpet 2", "Trumpet 3", "Trumpet 4"]


@pytest.fixture(scope="module")
def form(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, dict]:
    folder = tmp_path_factory.mktemp("sections")
    p = write_project(folder, FORM)
    r = run_cli("build", str(p), "-o", str(folder / "out"))
    assert r.exit_code == 0, r.output
    report = json.loads((folder / "out" / "two-sections.report.json").read_text())
    return folder / "out", report


def _bars(report: dict, index: int) -> range:
    p = report["passages"][index - 1]
    return range(p["first_bar"], p["last_bar"] + 1)


def _sounding_by_measure(part) -> dict[int, list[int]]:  # noqa: ANN001
    out: dict[int, list[int]] = {}
    for n in part.toSoundingPitch().stripTies().recurse().notes:
        if n.isNote:            # chord symbols (music21 lists them among notes) aside
            out.setdefault(n.measureNumber, []).append(n.pitch.midi)
    return out


def test_each_section_plays_its_passages_and_rests_in_the_others(form: tuple[Path, dict]) -> None:
    """music21 reads the score: nine staves, saxophones above trumpets (score order, common
    practice); the trumpets hold only rests in the soli and the turn, the saxophones only
    rests in the brass passage; each passage's lead line is its section's top staff."""
    from music21 import converter

    out, report = form
    score = converter.parse(str(out / "two-sections.musicxml"))
    names = [p.partName for p in score.parts]
    assert names == SAXES + TRUMPETS
    # a passage's pickup sounds in the bar before its first (the first passage's in bar 0)
    sax_bars = {0} | set(_bars(report, 1)) | set(_bars(report, 2))
    brass_bars = {report["passages"][2]["first_bar"] - 1} | set(_bars(report, 3))
    for part in score.parts:
        played = _sounding_by_measure(part)
        assert played, part.partName
        own = sax_bars if part.partName in SAXES else brass_bars
        assert set(played) <= own, (part.partName, sorted(set(played) - own))
        # every measure it does not play is a whole-measure rest (music21 reads the rests)
        for m in part.getElementsByClass("Measure"):
            if m.number not in own and m.number:
                assert not [n for n in m.recurse().notes if n.isNote] and m.getElementsByClass("Rest"), \
                    (part.partName, m.number)
    alto = _sounding_by_measure(score.parts[names.index("Alto Sax 1")])
    trumpet = _sounding_by_measure(score.parts[names.index("Trumpet 1")])
    assert [p for b in sorted(alto) if b == 0 or b in _bars(report, 1) for p in alto[b]] == SOLI_MIDI
    assert [p for b in sorted(trumpet) for p in trumpet[b]] == BRASS_MIDI


def test_written_notes_inside_each_instruments_range(form: tuple[Path, dict]) -> None:
    """Every written note of every part file lies inside the instrument's range: music21's
    ``lowestNote`` (written) and the handbook's highest written note (from memory)."""
    from music21 import converter, pitch
    from test_audit_voicing import HIGH_WRITTEN

    out, _report = form
    files = sorted((out / "two-sections-parts").glob("*.musicxml"))
    assert len(files) == 9
    for f in files:
        part = converter.parse(str(f)).parts[0]
        inst = part.getInstrument()
        kind = type(inst).__name__
        low, high = inst.lowestNote, pitch.Pitch(HIGH_WRITTEN[kind])
        notes = [n for n in part.recurse().notes if n.isNote]
        assert notes, f.name
        for n in notes:
            assert low.midi <= n.pitch.midi <= high.midi, (f.name, n.pitch.nameWithOctave, n.measureNumber)


def test_parts_read_back_to_the_sounding_pitches(form: tuple[Path, dict]) -> None:
    """Each transposed part file, put at sounding pitch by music21 (``toSoundingPitch``), holds
    the pitches report.json gives its part, event by event (the report names the parts of
    each event's section); the trumpet part's key reads Bb major for concert Ab major."""
    from music21 import converter

    out, report = form
    by_part: dict[str, list[int]] = {}
    for e in report["events"]:
        for k, name in enumerate(e["parts"]):
            notes = by_part.setdefault(name, [])
            notes.append(e["pitches"][k])
            for sg in e["segments"]:          # a chord change under a held lead: tied if it holds
                if sg["pitches"][k] != notes[-1]:
                    notes.append(sg["pitches"][k])
    for name in SAXES + TRUMPETS:
        f = next((out / "two-sections-parts").glob(f"*-{name.lower().replace(' ', '-')}.musicxml"))
        part = converter.parse(str(f)).parts[0]
        sounding = [n.pitch.midi for n in part.toSoundingPitch().stripTies().recurse().notes if n.isNote]
        assert sounding == by_part[name], name
    trumpet = converter.parse(str(next((out / "two-sections-parts").glob("*-trumpet-1.musicxml")))).parts[0]
    keys = [k.asKey().name for k in trumpet.flatten().getElementsByClass("KeySignature")]
    assert keys[-1] == "B- major"          # concert Ab major, a major second up for Bb trumpet


def test_report_names_the_section_of_each_passage(form: tuple[Path, dict]) -> None:
    _out, report = form
    assert [p["section"] for p in report["passages"]] == ["saxes-5", "saxes-5", "trumpets-4"]
    for e in report["events"]:
        own = TRUMPETS if e["passage"] == 3 else SAXES
        assert e["section"] == ("trumpets-4" if e["passage"] == 3 else "saxes-5")
        assert e["parts"] == own and len(e["pitches"]) == len(own)
        assert e["pitches"][0] == e["lead"]           # the lead on top of its own section
    assert [p["name"] for p in report["section"]["parts"]] == SAXES + TRUMPETS
    md = (_out / "two-sections.report.md").read_text()
    assert "trumpets-4" in md


def test_midi_has_a_track_per_staff_with_its_program(form: tuple[Path, dict]) -> None:
    """mido reads one track per staff after the tempo track, named for it, with the General
    MIDI program music21 gives the instrument (``midiProgram``, 0-based); the brass passage
    sounds on the trumpet tracks only, its lead on Trumpet 1."""
    import mido
    from music21 import instrument

    out, report = form
    mf = mido.MidiFile(str(out / "two-sections.mid"))
    tracks = mf.tracks[1:]
    names = [next(m.name for m in t if m.type == "track_name") for t in tracks]
    assert names == SAXES + TRUMPETS
    ref = {"Alto": instrument.AltoSaxophone(), "Tenor": instrument.TenorSaxophone(),
           "Baritone": instrument.BaritoneSaxophone(), "Trumpet": instrument.Trumpet()}
    beat = mf.ticks_per_beat
    start = (report["passages"][2]["first_bar"] - 1) * 4 * beat
    for name, t in zip(names, tracks, strict=True):
        programs = [m.program for m in t if m.type == "program_change"]
        assert programs == [ref[name.split()[0]].midiProgram], name
        tick, ons = 0, []
        for m in t:
            tick += m.time
            if m.type == "note_on" and m.velocity:
                ons.append((tick, m.note))
        late = [n for tk, n in ons if tk >= start - beat // 2]      # the brass passage (its pickup too)
        early = [n for tk, n in ons if tk < start - beat]
        if name in TRUMPETS:
            assert not early and late, name
        else:
            assert early and not late, name
        if name == "Trumpet 1":
            assert late == BRASS_MIDI


def test_files_validate_against_the_musicxml_schema(form: tuple[Path, dict], musicxml_schema) -> None:
    out, _report = form
    musicxml_schema.validate(str(out / "two-sections.musicxml"))     # MusicXML 4.0 XSD
    for f in sorted((out / "two-sections-parts").glob("*.musicxml")):
        musicxml_schema.validate(str(f))


def test_unknown_section_in_a_passage(tmp_path: Path) -> None:
    """Bad input: exit 2, one line naming the passage and the sections accepted, nothing written."""
    p = write_project(tmp_path, FORM.replace('section = "trumpets-4"', 'section = "trumpets-9"'))
    r = run_cli("build", str(p), "-o", str(tmp_path / "out"))
    assert r.exit_code == 2, r.output
    errors = [x for x in r.output.splitlines() if x.startswith("arrange: error")]
    assert len(errors) == 1 and "Traceback" not in r.output, r.output
    assert "passage 3" in errors[0] and "trumpets-9" in errors[0], errors[0]
    assert "trumpets-4" in errors[0] and "saxes-5" in errors[0], errors[0]
    assert snapshot(tmp_path / "out") == {}


SHARED = f'''title = "Shared Players"
tempo = 120
key = "F major"

[section]
name = "brass-6"
voicing = "close"

[[passages]]
name = "Brass"
melody = "{SOLI}"

[[passages]]
name = "Trumpets"
section = {{ name = "trumpets-4", voicing = "close" }}
melody = "{SOLI}"

[output]
formats = ["musicxml", "midi", "report"]
'''


def test_a_player_two_sections_share_reads_one_staff(tmp_path: Path) -> None:
    """brass-6 then trumpets-4: Trumpets 1-3 play in both (one staff per player, common
    practice of chart layout), Trumpet 4 only in the second, the trombones only in the first.
    music21 reads the score; mido reads one track per staff."""
    import mido
    from music21 import converter

    p = write_project(tmp_path, SHARED)
    r = run_cli("build", str(p), "-o", str(tmp_path / "out"))
    assert r.exit_code == 0, r.output
    report = json.loads((tmp_path / "out" / "shared-players.report.json").read_text())
    score = converter.parse(str(tmp_path / "out" / "shared-players.musicxml"))
    names = [pt.partName for pt in score.parts]
    assert names == TRUMPETS + ["Trombone 1", "Trombone 2", "Trombone 3"]
    first, second = _bars(report, 1), _bars(report, 2)
    for part in score.parts:
        bars = set(_sounding_by_measure(part)) - {0, first[-1]}      # pickups aside
        if part.partName in ("Trumpet 1", "Trumpet 2", "Trumpet 3"):
            assert bars & set(first) and bars & set(second), part.partName
        elif part.partName == "Trumpet 4":
            assert bars and bars <= set(second), part.partName
        else:
            assert bars and bars <= set(first), part.partName
    lead = _sounding_by_measure(score.parts[0])
    assert [p for b in sorted(lead) for p in lead[b]] == SOLI_MIDI + SOLI_MIDI
    mf = mido.MidiFile(str(tmp_path / "out" / "shared-players.mid"))
    assert [next(m.name for m in t if m.type == "track_name") for t in mf.tracks[1:]] == names


LOW_BRASS = "Eb4:4 | [Ab6] C4:4. Bb3:8 Ab3:4 Eb4:4 | [Bbm7] Db4:4 C4:8 Bb3:8 [Eb7] G3:4 Bb3:4 | [Ab6] Ab3:1 |"
LOW_BRASS_MIDI = [m - 12 for m in BRASS_MIDI]
TROMBONES = ["Trombone 1", "Trombone 2", "Trombone 3", "Bass Trombone"]


def _pad_then_lead(layers: str) -> str:
    """The soli over a trombone pad, the turn, then the trombones take the lead."""
    return FORM.replace('section = "trumpets-4"', f'section = "trombones-4"\nlayers = {layers}').replace(
        'name = "Turn"\n', 'name = "Turn"\nlayers = []\n').replace(BRASS, LOW_BRASS) \
        + '\n[[layers]]\nsection = "trombones-4"\nrole = "pad"\nrhythm = "1"\ndynamics = "p"\n'


def test_a_player_of_a_layer_and_a_passage_reads_one_staff(tmp_path: Path, musicxml_schema) -> None:
    """The trombones pad under the soli, rest through the turn, then play the lead passage:
    one staff per player (common practice of chart layout), read by music21: the trombone
    staves hold the pad in the soli's bars and the lead line (its sounding pitches known from
    the project text) in the last passage; mido reads one track per staff, the pad and the
    lead on the same trombone tracks; the part files are one per player and validate."""
    import mido
    from music21 import converter

    p = write_project(tmp_path, _pad_then_lead("[]"))
    r = run_cli("build", str(p), "-o", str(tmp_path / "out"), "--parts")
    assert r.exit_code == 0, r.output
    out = tmp_path / "out"
    report = json.loads((out / "two-sections.report.json").read_text())
    score = converter.parse(str(out / "two-sections.musicxml"))
    names = [pt.partName for pt in score.parts]
    assert names == SAXES + TROMBONES
    soli, brass = {0} | set(_bars(report, 1)), set(_bars(report, 3))
    pad = report["layers"][0]["notes"]
    for k, part in enumerate(score.parts[len(SAXES):]):
        played = _sounding_by_measure(part)
        bars = set(played)
        assert bars & brass, part.partName
        assert not bars & set(_bars(report, 2)) - {report["passages"][2]["first_bar"] - 1}, part.partName
        # in the soli the staff holds the pad part's notes (music21's reading against the report's
        # layer notes, a rest where the thinned pad leaves the part out)
        assert [p for b in sorted(bars & soli) for p in played[b]] == \
            [n["pitches"][k] for n in pad if n["pitches"][k] is not None], part.partName
    assert any(n["pitches"][k] is not None for n in pad for k in range(4))
    lead = _sounding_by_measure(score.parts[names.index("Trombone 1")])
    assert [p for b in sorted(lead) if b >= report["passages"][2]["first_bar"] - 1 for p in lead[b]] \
        == LOW_BRASS_MIDI
    mf = mido.MidiFile(str(out / "two-sections.mid"))
    tracks = {next(m.name for m in t if m.type == "track_name"): t for t in mf.tracks[1:]}
    assert list(tracks) == names
    beat = mf.ticks_per_beat
    start = (report["passages"][2]["first_bar"] - 1) * 4 * beat
    tick, ons = 0, []
    for m in tracks["Trombone 1"]:
        tick += m.time
        if m.type == "note_on" and m.velocity:
            ons.append((tick, m.note))
    assert [n for t, n in ons if t >= start - beat] == LOW_BRASS_MIDI
    tick, ons = 0, []
    for m in tracks["Trombone 3"]:
        tick += m.time
        if m.type == "note_on" and m.velocity:
            ons.append((tick, m.note))
    assert [n for t, n in ons if t < start - beat] == [n["pitches"][2] for n in pad if n["pitches"][2] is not None]
    files = sorted((out / "two-sections-parts").glob("*.musicxml"))
    assert len(files) == len(SAXES) + len(TROMBONES)
    for f in [out / "two-sections.musicxml", *files]:
        musicxml_schema.validate(str(f))                 # MusicXML 4.0 XSD


def test_a_player_a_layer_also_uses_is_refused(tmp_path: Path) -> None:
    """The pad playing on under the trombones' own passage would give Trombone 1 two lines
    at once: exit 2, one line naming the passage and the player, nothing written."""
    p = write_project(tmp_path, _pad_then_lead("[1]"))
    r = run_cli("build", str(p), "-o", str(tmp_path / "out"))
    assert r.exit_code == 2, r.output
    errors = [x for x in r.output.splitlines() if x.startswith("arrange: error")]
    assert len(errors) == 1 and "Traceback" not in r.output, r.output
    assert "passage 3" in errors[0] and "Trombone 1" in errors[0], errors[0]
    assert snapshot(tmp_path / "out") == {}


def test_inline_section_in_a_passage(tmp_path: Path) -> None:
    """A passage's section defined inline (as the project's [section] may be): its parts are
    the staves, with their instruments' General MIDI programs (music21 ``midiProgram``)."""
    import mido
    from music21 import instrument

    text = FORM.replace('section = "trumpets-4"', 'section = { name = "horns", parts = [ '
                        '{ name = "Flugelhorn", instrument = "flugelhorn" }, '
                        '{ name = "Horn 1", instrument = "horn" }, { name = "Horn 2", instrument = "horn" } ] }')
    p = write_project(tmp_path, text)
    r = run_cli("build", str(p), "-o", str(tmp_path / "out"))
    assert r.exit_code == 0, r.output
    mf = mido.MidiFile(str(tmp_path / "out" / "two-sections.mid"))
    programs = {next(m.name for m in t if m.type == "track_name"):
                [m.program for m in t if m.type == "program_change"] for t in mf.tracks[1:]}
    assert programs["Horn 1"] == [instrument.Horn().midiProgram]
    assert programs["Alto Sax 1"] == [instrument.AltoSaxophone().midiProgram]
    report = json.loads((tmp_path / "out" / "two-sections.report.json").read_text())
    assert report["passages"][2]["section"] == "horns"


def test_a_pad_still_sounding_under_its_players_pickup_is_refused(tmp_path: Path) -> None:
    """Without the turn, the trombones' pickup starts in the soli's last bar, where their pad
    still holds its chord: one player, two notes at once; exit 2 naming the passage and the
    player, nothing written."""
    text = _pad_then_lead("[]").replace('[[passages]]\nname = "Turn"\nlayers = []\n'
                                        'chain = { design = true, statements = 4 }\n\n', '')
    assert "Turn" not in text
    p = write_project(tmp_path, text)
    r = run_cli("build", str(p), "-o", str(tmp_path / "out"))
    assert r.exit_code == 2, r.output
    errors = [x for x in r.output.splitlines() if x.startswith("arrange: error")]
    assert len(errors) == 1 and "Traceback" not in r.output, r.output
    assert "passage 2" in errors[0] and "Trombone" in errors[0] and "layer 1" in errors[0], errors[0]
    assert snapshot(tmp_path / "out") == {}
