"""End to end through the CLI: every output an arranger opens, hears and reads.

Outside references, named beside each check: the MusicXML 4.0 XSD (``musicxml``
package, via xmlschema); music21 and partitura as independent MusicXML readers and
music21's ``instrument`` classes for transpositions and General MIDI programs;
verovio for engraving; mido for the Standard MIDI File; the PNG signature (PNG
specification, ISO/IEC 15948).
"""
from __future__ import annotations

import json
import re
from fractions import Fraction
from pathlib import Path

import pytest
from conftest import BASIC, DEMOS, run_cli, snapshot, write_project

TRUMPETS = BASIC.replace('name = "trombones-4"', 'name = "trumpets-4"').replace(
    'motif = "A4 G4 C5 Bb4"', 'motif = "F4 Bb4 A4 D5"').replace(
    'key = "F major"', 'key = "Bb major"').replace(
    'framework = "F6 | F6 | Gm7 C7 | F6"', 'framework = "Bb6 | Ebmaj7 | Cm7 F7 | Bb6"') + '''
[output]
formats = ["musicxml", "midi", "report", "preview"]
dynamics = ["p", "mf", "f"]
rhythm_section = true
'''


@pytest.fixture(scope="module")
def built(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, dict]:
    src = tmp_path_factory.mktemp("src")
    out = tmp_path_factory.mktemp("out")
    proj = write_project(src, TRUMPETS)
    r = run_cli("build", str(proj), "-o", str(out), "--parts", "--analysis")
    assert r.exit_code == 0, r.output
    return out, json.loads((out / "test-cue.report.json").read_text())


def _scores(out: Path) -> list[Path]:
    return sorted(out.glob("*.musicxml")) + sorted(out.glob("*-parts/*.musicxml"))     # score and parts


def test_score_and_parts_written(built) -> None:
    out, report = built
    names = {p.name for p in out.iterdir()}
    assert "test-cue.musicxml" in names and "test-cue.svg" in names and "test-cue.png" in names
    rhythm = report.get("rhythm_section", {}).get("parts", [])    # written rhythm parts follow
    parts = [p.name for p in (out / "test-cue-parts").glob("part*.musicxml")]   # the parts' own folder
    assert len(parts) == len(report["section"]["parts"]) + len(rhythm)


def test_every_file_validates_against_musicxml_4_xsd(built, musicxml_schema) -> None:
    out, _ = built
    for path in _scores(out):
        musicxml_schema.validate(str(path))      # MusicXML 4.0 XSD


def test_music21_and_partitura_reread_every_file(built) -> None:
    import partitura
    from music21 import converter

    out, report = built
    n_notes = len(report["events"])
    lead = {p["name"] for p in report["section"]["parts"]}     # the rhythm parts have their own tests
    for path in _scores(out):
        score = converter.parse(str(path))                       # music21 as reader
        for part in score.parts:
            if part.partName not in lead:
                continue
            heads = [n for n in part.flatten().getElementsByClass("Note")
                     if not (n.tie is not None and n.tie.type in ("stop", "continue"))]
            assert len(heads) == n_notes
        ps = partitura.load_musicxml(str(path))                  # partitura as reader
        assert all(len(p.note_array()) >= n_notes for p in ps.parts if p.part_name in lead)


def _instrument_reference(name: str):  # noqa: ANN202
    from music21 import instrument

    return instrument.fromString(name)     # music21's instrument classes as reference


def test_written_minus_sounding_is_the_instruments_transposition(built) -> None:
    import partitura

    out, report = built
    ps = partitura.load_musicxml(str(out / "test-cue.musicxml"))
    for k, part in enumerate(ps.parts[:len(report["section"]["parts"])]):
        spec = report["section"]["parts"][k]
        ref = _instrument_reference(spec["name"].rsplit(" ", 1)[0] if spec["instrument"] == "trumpet"
                                    else spec["name"])
        ref_shift = -(ref.transposition.semitones if ref.transposition else 0)
        na = part.note_array()
        order = sorted(range(len(na)), key=lambda i: (na["onset_beat"][i], -int(na["pitch"][i])))
        written = [int(na["pitch"][i]) for i in order]
        sounding = [e["pitches"][k] for e in report["events"]]
        heads = written[:len(sounding)] if len(written) == len(sounding) else None
        assert heads is not None
        # partitura gives written pitch; music21's Trumpet (in Bb) sounds a major 2nd lower
        assert {w - s for w, s in zip(heads, sounding, strict=True)} == {ref_shift}
        assert spec["transposition"] == ref_shift


def test_parts_in_written_pitch_with_their_own_key(built) -> None:
    from music21 import converter, key

    out, _ = built
    part = converter.parse(str(next((out / "test-cue-parts").glob("part01-*.musicxml"))))
    ks = part.parts[0].flatten().getElementsByClass(key.KeySignature)[0]
    # concert Bb major read by a Bb trumpet is C major (music21 transposes the key up a M2)
    assert ks.sharps == key.Key("B-").transpose("M2").sharps == 0
    assert part.parts[0].atSoundingPitch is False


def test_chord_symbols_written_for_the_staff_in_score_and_part(built) -> None:
    """Over a transposed staff the symbols are written for it, in the score as in the part
    (MusicXML 4.0: a part's notes and harmonies are in written pitch where it has a
    ``<transpose>``), so music21's ``toSoundingPitch`` gives the concert symbol back."""
    from music21 import converter, harmony

    out, report = built
    score = converter.parse(str(out / "test-cue.musicxml"))
    part = converter.parse(str(next((out / "test-cue-parts").glob("part01-*.musicxml"))))
    first = report["framework"][0]["chord"]           # "Bb6"
    cs_score = score.parts[0].flatten().getElementsByClass(harmony.ChordSymbol)[0]
    cs_part = part.parts[0].flatten().getElementsByClass(harmony.ChordSymbol)[0]
    assert first.startswith("Bb")
    assert cs_score.root().name == "C"       # with the Bb staff, a major 2nd up
    assert cs_part.root().name == "C"
    sounding = score.toSoundingPitch().parts[0].flatten().getElementsByClass(harmony.ChordSymbol)[0]
    assert sounding.root().name == "B-"      # concert, as it sounds


def test_score_marks(built) -> None:
    from music21 import converter, dynamics, expressions, layout, tempo

    out, report = built
    text = (out / "test-cue.musicxml").read_text()
    score = converter.parse(str(out / "test-cue.musicxml"))
    lead = score.parts[0].flatten()
    # MusicXML 4.0 elements: part groups, sound ids, measure numbering, final bar line
    assert '<group-symbol>bracket</group-symbol>' in text
    assert text.count("<instrument-sound>brass.trumpet</instrument-sound>") == 4
    assert "<measure-numbering>system</measure-numbering>" in text
    rhythm = report.get("rhythm_section", {}).get("parts", [])
    assert text.count("<bar-style>light-heavy</bar-style>") == 4 + len(rhythm)
    assert "Transposed score" in text and "<credit" in text
    assert "Music21" not in text
    groups = score.getElementsByClass(layout.StaffGroup)
    assert groups and len(groups[0].getSpannedElements()) == 4
    mm = lead.getElementsByClass(tempo.MetronomeMark)[0]
    assert mm.number == 120
    words = [t.content for t in lead.getElementsByClass(expressions.TextExpression)]
    assert "Brightly" in words          # straight groove at 120 (common practice, from memory)
    labels = [w for w in words if re.fullmatch(r"\d+\. (P|RI) [+-]\d+", w)]
    assert len(labels) == len(report["chain"]["statements"])         # the analysis option
    # rehearsal letters only where a rehearsal restarts, four bars apart or more (issue 16;
    # common practice): the score prints those the report names, none in this short passage
    letters = [r.content for r in lead.getElementsByClass(expressions.RehearsalMark)]
    assert letters == list(dict.fromkeys(s["rehearsal"] for s in report["statements"] if s["rehearsal"]))
    dyns = [d.value for d in lead.getElementsByClass(dynamics.Dynamic)]
    assert dyns[:3] == ["p", "mf", "f"]     # one at each statement where it changes


def test_verovio_renders_every_score(built) -> None:
    import verovio

    out, _ = built
    for path in _scores(out):
        tk = verovio.toolkit()                  # verovio as the engraving reference
        assert tk.loadData(path.read_text())
        assert tk.getPageCount() >= 1
        assert "<svg" in tk.renderToSVG(1)
    svg = (out / "test-cue.svg").read_text()
    assert svg.startswith("<?xml") and svg.count("<svg") >= 2 and "Trumpet 1" in svg
    assert (out / "test-cue.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"   # PNG signature


def test_midi_tracks_programs_dynamics_and_rhythm_section(built) -> None:
    import mido

    out, report = built
    mf = mido.MidiFile(str(out / "test-cue.mid"))       # Standard MIDI File via mido
    parts = report["section"]["parts"]
    assert mf.type == 1 and len(mf.tracks) == 1 + len(parts) + 2
    tempo_msgs = [m for m in mf.tracks[0] if m.type == "set_tempo"]
    assert round(mido.tempo2bpm(tempo_msgs[0].tempo)) == 120
    meter = [m for m in mf.tracks[0] if m.type == "time_signature"][0]
    assert (meter.numerator, meter.denominator) == (4, 4)
    for k, track in enumerate(mf.tracks[1:1 + len(parts)]):
        program = [m.program for m in track if m.type == "program_change"][0]
        assert program == _instrument_reference("Trumpet").midiProgram   # music21: GM 57, 0-based 56
        t = 0
        ons = []
        for m in track:
            t += m.time
            if m.type == "note_on" and m.velocity > 0:
                ons.append((t, m.velocity))
        # a straight groove: played exactly as written (480 ticks a quarter)
        assert [o for o, _ in ons] == [round(e["performed_onset"] * 480) for e in report["events"]]
        stmt = [e["statement"] for e in report["events"]]
        # velocities follow the dynamics per statement: p 49, mf 80, f 96 (common practice)
        want = {1: 49, 2: 80}
        assert [v for v, s in zip([v for _, v in ons], stmt, strict=True) if s in want] == \
            [want[s] for s in stmt if s in want]
        assert ons[-1][1] == 96
        del k
    drums = mf.tracks[-1]
    assert {m.channel for m in drums if m.type == "note_on"} == {9}   # GM percussion channel 10
    bass = mf.tracks[-2]
    roots = {_pc(fc["chord"]) for fc in report["framework"]}
    bass_pcs = {m.note % 12 for m in bass if m.type == "note_on" and m.velocity}
    assert roots <= bass_pcs


def _pc(symbol: str) -> int:
    from music21 import harmony

    return harmony.ChordSymbol(symbol.replace("b", "-", 1) if len(symbol) > 1 and symbol[1] == "b"
                               else symbol).root().pitchClass    # music21 reads the root


def test_report_markdown_sections(built) -> None:
    out, report = built
    md = (out / "test-cue.report.md").read_text()
    for heading in ("## Chain", "## Harmonization", "## Voicing per statement", "## Warnings"):
        assert heading in md
    # one harmonization row per event, framework or approach
    assert md.count("| framework |") + md.count("| approach |") == len(report["events"])
    assert [s["dynamic"] for s in report["statements"]] == ["p", "mf", "f", "f"]


def _strip_date(data: bytes) -> bytes:
    return re.sub(rb"<encoding-date>[^<]*</encoding-date>", b"", data)


def test_same_project_twice_identical_apart_from_date(tmp_path: Path) -> None:
    proj = write_project(tmp_path, TRUMPETS.replace("rhythm_section = true",
                                                    "rhythm_section = true\nhumanize = 12\nseed = 7"))
    a, b = tmp_path / "a", tmp_path / "b"
    for d in (a, b):
        assert run_cli("build", str(proj), "-o", str(d), "--parts", "--analysis").exit_code == 0
    sa, sb = snapshot(a), snapshot(b)
    assert sa.keys() == sb.keys() and len(sa) >= 9
    for name in sa:
        assert _strip_date(sa[name]) == _strip_date(sb[name]), name


def test_humanize_is_seeded(tmp_path: Path) -> None:
    import mido

    def notes(seed: int) -> list[int]:
        d = tmp_path / f"s{seed}"
        proj = write_project(tmp_path, TRUMPETS + f"humanize = 20\nseed = {seed}\n", f"s{seed}.toml")
        assert run_cli("build", str(proj), "-o", str(d), "--formats", "midi").exit_code == 0
        track = mido.MidiFile(str(d / "test-cue.mid")).tracks[1]
        return [m.time for m in track if m.type in ("note_on", "note_off")]

    assert notes(3) != notes(4)     # the seed matters, so the spread is real
    assert notes(3) == notes(3)


def test_failed_build_leaves_good_score_and_no_temporaries(tmp_path: Path) -> None:
    proj = write_project(tmp_path, TRUMPETS)
    out = tmp_path / "out"
    assert run_cli("build", str(proj), "-o", str(out)).exit_code == 0
    before = snapshot(out)
    (out / "test-cue.report.md").unlink()
    (out / "test-cue.report.md").mkdir()          # a folder where a file must go: the rename fails
    slower = write_project(tmp_path, TRUMPETS.replace("tempo = 120", "tempo = 90"), "q.toml")
    r = run_cli("build", str(slower), "-o", str(out))
    assert r.exit_code == 2 and "Traceback" not in r.output
    after = snapshot(out)
    for name, data in after.items():
        assert data == before[name], name                      # the good score untouched
    assert not [p for p in out.iterdir() if p.name.endswith(".tmp")]


THEME_NOTES = ["D4", "F4", "E4", "A4", "G4"]


def _theme(folder: Path, notes: list[str], name: str = "theme.musicxml") -> Path:
    from music21 import instrument, note, stream

    part = stream.Part()
    part.insert(0, instrument.Clarinet())          # a B-flat clarinet: written a major 2nd up
    for n in notes:
        part.append(note.Note(n, quarterLength=1))
    part.atSoundingPitch = True                     # the notes above are concert pitch
    score = stream.Score([part])
    score.atSoundingPitch = True
    path = folder / name
    score.write("musicxml", fp=str(path))
    return path


def test_motif_from_musicxml_file(tmp_path: Path) -> None:
    from music21 import pitch

    _theme(tmp_path, THEME_NOTES)
    proj = write_project(tmp_path, BASIC.replace('motif = "A4 G4 C5 Bb4"',
                                                 'motif = "file:theme.musicxml"\nmotif_length = 4'))
    out = tmp_path / "out"
    r = run_cli("build", str(proj), "-o", str(out), "--formats", "report")
    assert r.exit_code == 0, r.output
    motif = json.loads((out / "test-cue.report.json").read_text())["chain"]["motif"]
    # music21 wrote the notes as sounding pitches of the clarinet part; read back at concert pitch
    assert motif == [pitch.Pitch(n).midi for n in THEME_NOTES[:4]]


def test_motif_from_midi_file(tmp_path: Path) -> None:
    import mido

    mf = mido.MidiFile(ticks_per_beat=480)
    tr = mido.MidiTrack()
    mf.tracks.append(tr)
    for p in (62, 65, 64, 69):                 # D4 F4 E4 A4 (MIDI numbers, C4 = 60)
        tr.append(mido.Message("note_on", note=p, velocity=80, time=0))
        tr.append(mido.Message("note_off", note=p, velocity=0, time=480))
    mf.save(str(tmp_path / "theme.mid"))
    proj = write_project(tmp_path, BASIC.replace('motif = "A4 G4 C5 Bb4"', 'motif = "file:theme.mid"'))
    out = tmp_path / "out"
    assert run_cli("build", str(proj), "-o", str(out), "--formats", "report").exit_code == 0
    assert json.loads((out / "test-cue.report.json").read_text())["chain"]["motif"] == [62, 65, 64, 69]


def _bad_theme_files(folder: Path) -> None:
    _theme(folder, ["D4", "F4"], "short.musicxml")
    (folder / "garbage.mid").write_bytes(b"not a midi file at all")
    (folder / "entity.musicxml").write_text(
        '<?xml version="1.0"?><!DOCTYPE x [<!ENTITY e SYSTEM "file:///etc/passwd">]>'
        "<score-partwise>&e;</score-partwise>")


@pytest.mark.parametrize("motif, extra_args, needle", [
    ('"file:missing.musicxml"', (), "missing.musicxml"),
    ('"file:garbage.mid"', (), "cannot be read as MIDI"),
    ('"file:short.musicxml"', (), "has 2 notes"),
    ('"file:entity.musicxml"', (), "entities"),
    ('"file:theme.txt"', (), "suffix"),
    ('"A4 G4 C5 Bb4"', ("--formats", "musicxml,tiff"), "'tiff'"),
])
def test_bad_input_exit_2_and_nothing_written(tmp_path: Path, motif: str, extra_args: tuple[str, ...],
                                              needle: str) -> None:
    _bad_theme_files(tmp_path)
    (tmp_path / "theme.txt").write_text("D4 F4 E4 A4")
    proj = write_project(tmp_path, BASIC.replace('"A4 G4 C5 Bb4"', motif))
    out = tmp_path / "out"
    r = run_cli("build", str(proj), "-o", str(out), *extra_args)
    assert r.exit_code == 2, r.output
    assert needle in r.output and "accepted" in r.output and "Traceback" not in r.output
    assert len(r.output.strip().splitlines()) == 1
    assert snapshot(out) == {}


def test_unknown_format_in_project_exit_2(tmp_path: Path) -> None:
    proj = write_project(tmp_path, BASIC + '\n[output]\nformats = ["musicxml", "mp3"]\n')
    r = run_cli("build", str(proj), "-o", str(tmp_path / "out"))
    assert r.exit_code == 2 and "'mp3'" in r.output and snapshot(tmp_path / "out") == {}


def test_audio_without_fluidsynth_says_how(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("PATH", str(tmp_path))          # no fluidsynth on this PATH
    monkeypatch.setenv("ARRANGE_SOUNDFONT", str(tmp_path / "none.sf2"))
    proj = write_project(tmp_path, BASIC)
    r = run_cli("build", str(proj), "-o", str(tmp_path / "out"), "--audio", "--formats", "midi")
    assert r.exit_code == 0
    lines = [ln for ln in r.output.splitlines() if "audio skipped" in ln]
    assert len(lines) == 1 and "fluidsynth" in lines[0]
    assert not list((tmp_path / "out").glob("*.wav"))


def test_demo_builds_all_with_progress(tmp_path: Path) -> None:
    r = run_cli("demo", "-o", str(tmp_path))
    assert r.exit_code == 0, r.output
    demos = sorted(DEMOS.glob("*.toml"))
    for i, d in enumerate(demos, start=1):
        assert f"[{i}/{len(demos)}] {d.stem}" in r.output
    assert len(list(tmp_path.glob("*.report.json"))) == len(demos)


def test_midi_swing_offsets_as_the_groove_says(tmp_path: Path) -> None:
    import mido

    proj = write_project(tmp_path, BASIC.replace("[harmony]", '[rhythm]\ngroove = "swing"\nswing = 0.62\n\n[harmony]'))
    out = tmp_path / "out"
    assert run_cli("build", str(proj), "-o", str(out), "--formats", "midi,report").exit_code == 0
    report = json.loads((out / "test-cue.report.json").read_text())
    track = mido.MidiFile(str(out / "test-cue.mid")).tracks[1]      # Standard MIDI File via mido
    t, ons = 0, []
    for m in track:
        t += m.time
        if m.type == "note_on" and m.velocity > 0:
            ons.append(t)
    offbeats = [(e, on) for e, on in zip(report["events"], ons, strict=True)
                if (Fraction(e["onset"]).limit_denominator(96) % 1) == Fraction(1, 2)]
    assert offbeats
    for e, on in offbeats:
        beat = int(Fraction(e["onset"]).limit_denominator(96))
        # swing 0.62: the off-beat eighth sounds 0.62 of the beat after the beat (480 ticks a quarter)
        assert on == round((beat + 0.62) * 480)


@pytest.mark.parametrize("groove, tempo, extra, word", [
    ("swing", 144, "", "Medium Swing"),
    ("swing", 72, "", "Swing Ballad"),
    ("latin", 112, "", "Latin"),
    ("straight", 66, "", "Slowly"),
    ("straight", 120, 'style = "Fanfare"\n', "Fanfare"),
])
def test_style_word_over_the_metronome_mark(tmp_path: Path, groove: str, tempo: int, extra: str,
                                            word: str) -> None:
    """The style word a chart prints with its metronome mark follows the groove and the
    tempo (common practice of lead sheets and big-band charts; bands from memory), or the
    project's own `style`; music21 reads it back."""
    from music21 import converter, expressions

    text = (BASIC.replace("tempo = 120", f"tempo = {tempo}\n{extra}")
            .replace('[harmony]', f'[rhythm]\ngroove = "{groove}"\n\n[harmony]'))
    r = run_cli("build", str(write_project(tmp_path, text)), "-o", str(tmp_path / "o"),
                "--formats", "musicxml")
    assert r.exit_code == 0, r.output
    score = converter.parse(str(next((tmp_path / "o").glob("*.musicxml"))))
    words = [t.content for t in score.parts[0].flatten().getElementsByClass(expressions.TextExpression)]
    assert word in words


def test_audio_render_is_peak_normalised(tmp_path: Path) -> None:
    """--audio through the fluidsynth program and a General MIDI SoundFont (.ci/run
    installs Debian's fluidsynth and fluid-soundfont-gm): the WAV is read with Python's
    wave module (RIFF/WAVE, the standard library as reader); its peak sits at -1 dBFS
    (dBFS = 20 log10(peak / full scale), by definition) and it lasts as long as the MIDI
    (mido's length)."""
    import math
    import shutil
    import wave
    from array import array

    import mido

    if not shutil.which("fluidsynth"):   # CI installs it (.ci/run); a fresh laptop may not have it
        pytest.skip("fluidsynth is not installed (Debian: apt-get install fluidsynth fluid-soundfont-gm)")
    proj = write_project(tmp_path, TRUMPETS)
    out = tmp_path / "out"
    r = run_cli("build", str(proj), "-o", str(out), "--audio", "--formats", "midi")
    assert r.exit_code == 0, r.output
    wav = next(out.glob("*.wav"))
    with wave.open(str(wav)) as w:
        assert w.getsampwidth() == 2
        frames = w.readframes(w.getnframes())
        seconds = w.getnframes() / w.getframerate()
    samples = array("h", frames)
    peak = max(abs(s) for s in samples)
    assert abs(20 * math.log10(peak / 32767) - (-1.0)) < 0.05
    length = mido.MidiFile(str(next(out.glob("*.mid")))).length
    assert length <= seconds <= length + 5          # the render keeps the release tail
