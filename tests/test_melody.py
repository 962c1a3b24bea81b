"""Melodies brought from outside (issue 17): files read through music21, our compact text,
and the motif-file reader that must not take chord symbols for notes.

Outside references: music21's bundled corpus (the Nottingham folk-tune collection in ABC,
``nottingham-dataset/reelsa-c.abc``, tunes with chord symbols and a pickup) and music21 as
the independent reader of the source and of what we write.  The compact text's expected
times are counted by hand from its definition (README).
"""
from __future__ import annotations

import json
import re
from fractions import Fraction
from pathlib import Path

import pytest
from conftest import run_cli, snapshot, write_project

TUNE = 80          # a reel in D major with a quarter-note pickup and chord symbols on the beats


def _corpus_tune(number: int) -> str:
    from music21 import corpus

    text = Path(corpus.getWork("nottingham-dataset/reelsa-c.abc")).read_text(encoding="utf-8")
    for chunk in re.split(r"\n(?=X:)", text):
        if re.match(rf"X:\s*{number}\b", chunk):
            return chunk
    raise AssertionError(f"tune {number} is no longer in music21's corpus")


def _lead(part) -> list[tuple[Fraction, Fraction, int]]:  # noqa: ANN001
    """(onset, duration, MIDI) of every sounding note of a music21 part, ties merged; the
    music21 reading of a lead line, independent of our reader."""
    from music21 import harmony

    out = []
    for n in part.stripTies().flatten().notes:
        if isinstance(n, harmony.Harmony) or n.duration.isGrace:
            continue
        out.append((Fraction(n.offset).limit_denominator(48), Fraction(n.quarterLength).limit_denominator(48),
                    max(p.midi for p in n.pitches)))
    return out


def _symbols(part) -> list[tuple[Fraction, frozenset[int]]]:  # noqa: ANN001
    from music21 import harmony

    return [(Fraction(c.offset).limit_denominator(48), frozenset(p.pitchClass for p in c.pitches))
            for c in part.flatten().getElementsByClass(harmony.ChordSymbol)
            if not isinstance(c, harmony.NoChord)]


def _sounding(symbols: list[tuple[Fraction, frozenset[int]]], t: Fraction) -> frozenset[int] | None:
    now = None
    for on, pcs in symbols:
        if on <= t:
            now = pcs
    return now


MELODY_PROJECT = '''title = "Reel Soli"
tempo = 132
melody = "file:tune.abc"

[harmony]
approach = []          # the file's own changes, no approach chords

[section]
name = "saxes-5"
voicing = "close"

[output]
formats = ["musicxml", "midi", "report"]
'''


@pytest.fixture(scope="module")
def reel(tmp_path_factory: pytest.TempPathFactory) -> Path:
    folder = tmp_path_factory.mktemp("reel")
    (folder / "tune.abc").write_text(_corpus_tune(TUNE), encoding="utf-8")
    p = write_project(folder, MELODY_PROJECT)
    r = run_cli("build", str(p), "-o", str(folder / "out"))
    assert r.exit_code == 0, r.output
    return folder / "out"


def test_corpus_melody_read_back_note_for_note(reel: Path) -> None:
    """music21's corpus tune and our score's lead part, both read by music21: equal pitch,
    onset and duration for every note (the pickup included)."""
    from music21 import converter, corpus

    source = corpus.parse("nottingham-dataset/reelsa-c.abc", number=TUNE)
    ours = converter.parse(str(reel / "reel-soli.musicxml"))
    want = _lead(source.parts[0])
    sounding = ours.parts[0].toSoundingPitch()
    got = _lead(sounding)
    assert len(want) > 100
    assert got == want
    # the key and the meter of the file came along (music21 reads them from our score)
    ks = sounding.flatten().getElementsByClass("KeySignature")[0]
    assert ks.sharps == 2
    assert ours.parts[0].flatten().getElementsByClass("TimeSignature")[0].ratioString == "4/4"


def test_corpus_melody_keeps_its_changes(reel: Path) -> None:
    """The chord sounding at every symbol of the source is the chord sounding in our score at
    that time, and the other way round (a symbol repeated at a section start is the same
    harmony, so the comparison is of what sounds)."""
    from music21 import converter, corpus

    source = _symbols(corpus.parse("nottingham-dataset/reelsa-c.abc", number=TUNE).parts[0])
    # the score's symbols are written for their staff: read at sounding pitch
    ours = _symbols(converter.parse(str(reel / "reel-soli.musicxml")).parts[0].toSoundingPitch())
    assert len(source) >= 15 and ours
    times = sorted({t for t, _ in source} | {t for t, _ in ours})
    assert [(t, _sounding(ours, t)) for t in times] == [(t, _sounding(source, t)) for t in times]


def test_corpus_melody_voiced_and_reported(reel: Path) -> None:
    data = json.loads((reel / "reel-soli.report.json").read_text())
    assert data["chain"] is None
    assert data["key"] == "D major"
    assert {s["form"] for s in data["statements"]} == {"melody"}
    # five saxophones voice every lead note, the lead on top
    assert all(len(e["pitches"]) == 5 and e["pitches"][0] == e["lead"] for e in data["events"])
    import mido

    mid = mido.MidiFile(str(reel / "reel-soli.mid"))
    assert sum(1 for t in mid.tracks for m in t if m.type == "note_on" and m.velocity) >= 5 * 111


def _lead_sheet(path: Path, rest_only: bool = False) -> list[int]:
    """A lead sheet written by music21: a quarter pickup, then bars with chord symbols (and a
    grace note) above the melody; the melody's MIDI numbers in order."""
    from music21 import harmony, meter, note, stream

    part = stream.Part()
    pickup = stream.Measure(number=0)
    pickup.append(meter.TimeSignature("4/4"))
    pickup.append(note.Rest(quarterLength=1) if rest_only else note.Note("C5", quarterLength=1))
    pickup.paddingLeft = 3
    part.append(pickup)
    melody = ["F5", "E5", "D5", "C5", "A4", "Bb4", "C5", "F4"]
    for k in range(2):
        m = stream.Measure(number=k + 1)
        m.insert(0, harmony.ChordSymbol("F" if k == 0 else "Gm7"))
        m.insert(2, harmony.ChordSymbol("C7"))
        if rest_only:
            m.append(note.Rest(quarterLength=4))
        else:
            if k == 1:
                m.append(note.Note("G4", quarterLength=0).getGrace())
            for name in melody[4 * k:4 * k + 4]:
                m.append(note.Note(name, quarterLength=1))
        part.append(m)
    score = stream.Score([part])
    score.write("musicxml", fp=str(path))
    return [] if rest_only else [72] + [note.Note(n).pitch.midi for n in melody]


MOTIF_PROJECT = '''title = "Motif From Sheet"
key = "F major"

[chain]
motif = "file:sheet.musicxml"
motif_length = 5
statements = 2

[harmony]
framework = "F6 | Gm7 C7"

[section]
name = "trumpets-4"

[output]
formats = ["report"]
'''


def test_motif_file_skips_chord_symbols_and_grace_notes(tmp_path: Path) -> None:
    """A lead sheet with a pickup and chord symbols as a motif file gives the melody's first
    notes (the bug: music21 lists ChordSymbol among .notes, so the symbols were read as notes)."""
    melody = _lead_sheet(tmp_path / "sheet.musicxml")
    p = write_project(tmp_path, MOTIF_PROJECT)
    r = run_cli("build", str(p), "-o", str(tmp_path / "out"))
    assert r.exit_code == 0, r.output
    data = json.loads((tmp_path / "out" / "motif-from-sheet.report.json").read_text())
    assert data["chain"]["motif"] == melody[:5]


TEXT_PROJECT = '''title = "Typed Soli"
key = "F major"
meter = "3/4"
melody = "C5:4 | [F6] A4:4. G4:8 F4:4 | [Gm7] Bb4:8 A4:8 G4:4 r:8 E4:8 | [C7] G4:2~8 r:8 | [F6] F4:2. |"

[section]
name = "trumpets-4"

[output]
formats = ["musicxml", "report"]
'''


def test_compact_text_melody(tmp_path: Path) -> None:
    """Our compact text: pitches, values (dotted, tied), rests, bar lines, a pickup and inline
    chord symbols; music21 reads back exactly the notes counted by hand."""
    from music21 import converter

    p = write_project(tmp_path, TEXT_PROJECT)
    r = run_cli("build", str(p), "-o", str(tmp_path / "out"))
    assert r.exit_code == 0, r.output
    score = converter.parse(str(tmp_path / "out" / "typed-soli.musicxml"))
    lead = score.parts[0].toSoundingPitch()
    F = Fraction
    # by hand: pickup of a quarter (offset 0), bar 1 starts at 1, bars of 3 quarters
    want = [(F(0), F(1), 72), (F(1), F(3, 2), 69), (F(5, 2), F(1, 2), 67), (F(3), F(1), 65),
            (F(4), F(1, 2), 70), (F(9, 2), F(1, 2), 69), (F(5), F(1), 67), (F(13, 2), F(1, 2), 64),
            (F(7), F(5, 2), 67), (F(10), F(3), 65)]
    assert _lead(lead) == want
    syms = _symbols(lead)                                   # symbols at sounding pitch
    assert [t for t, _ in syms] == [F(1), F(4), F(7), F(10)]
    assert syms[1][1] == frozenset({7, 10, 2, 5})          # Gm7


BAD = [
    # (what, project text change, files to write, needle in the message)
    ("no notes", 'melody = "file:empty.musicxml"', "empty", "has no notes"),
    ("part out of range", 'melody = "file:sheet.musicxml"\npart = 3', "sheet", "part = 3"),
    ("bars past the end", 'melody = "file:sheet.musicxml"\nbars = "1-12"', "sheet", "bars = \"1-12\""),
    ("beyond the lead", 'melody = "C7:2 D7:2 | C7:1 |"', "", "extreme range"),
    ("bad text", 'melody = "C5:4 D5:3"', "", "token 2"),
    ("bar line inside a bar", 'melody = "C5:4 | D5:2 | E5:2"', "", "inside a bar"),
    ("two materials", 'melody = "C5:4 D5:4"\n[chain]\nmotif = "C4 D4"', "", "'chain' and 'melody'"),
]


@pytest.mark.parametrize(("what", "change", "files", "needle"), BAD, ids=[b[0] for b in BAD])
def test_bad_melody_input(tmp_path: Path, what: str, change: str, files: str, needle: str) -> None:
    if files == "sheet":
        _lead_sheet(tmp_path / "sheet.musicxml")
    elif files == "empty":
        _lead_sheet(tmp_path / "empty.musicxml", rest_only=True)
    text = ('title = "Bad Melody"\nkey = "F major"\n' + change.split("\n[chain]")[0] + "\n"
            + ("[chain]" + change.split("[chain]")[1] + "\n" if "[chain]" in change else "")
            + '[harmony]\nframework = "F6"\n[section]\nname = "trumpets-4"\n[output]\nformats = ["musicxml"]\n')
    p = write_project(tmp_path, text)
    out = tmp_path / "out"
    r = run_cli("build", str(p), "-o", str(out))
    assert r.exit_code == 2, (what, r.output)
    assert needle in r.output, (what, r.output)
    assert "Traceback" not in r.output and len(r.output.strip().splitlines()) == 1
    assert snapshot(out) == {}


@pytest.mark.parametrize("fmt", ["mxl", "midi"])
def test_melody_from_mxl_and_midi(tmp_path: Path, fmt: str) -> None:
    """The same lead sheet written by music21 as compressed MusicXML and as a MIDI file:
    our score's lead, read by music21, has the notes music21 reads from the source."""
    from music21 import converter

    sheet = tmp_path / "sheet.musicxml"
    _lead_sheet(sheet)
    source = converter.parse(str(sheet))
    suffix = {"mxl": "mxl", "midi": "mid"}[fmt]
    if fmt == "midi":           # music21 would sound the chord symbols and grace note in the file
        from music21 import harmony

        for el in list(source.recurse()):
            if isinstance(el, harmony.Harmony) or (hasattr(el, "duration") and el.duration.isGrace):
                el.activeSite.remove(el)
    source.write(fmt, fp=str(tmp_path / f"tune.{suffix}"))
    text = MELODY_PROJECT.replace("tune.abc", f"tune.{suffix}").replace("saxes-5", "trumpets-4")
    if fmt == "midi":           # a MIDI file has no chord symbols: the project gives the framework
        text = text.replace("approach = []", 'approach = []\nframework = "F | Gm7:2 C7:2"')
    p = write_project(tmp_path, text)
    r = run_cli("build", str(p), "-o", str(tmp_path / "out"))
    assert r.exit_code == 0, r.output
    ours = converter.parse(str(tmp_path / "out" / "reel-soli.musicxml")).parts[0].toSoundingPitch()
    want = _lead(source.parts[0])
    got = _lead(ours)
    if fmt == "midi":           # MIDI has no pickup measure: the notes keep their order and values
        assert [(d, p) for _t, d, p in got] == [(d, p) for _t, d, p in want]
    else:
        assert got == want


def test_part_number_and_chords_in_the_melody(tmp_path: Path) -> None:
    """part = 2 takes the second part; a chord in the melody gives its top note, the chord
    symbols above it are no notes (music21 writes and reads the reference file)."""
    from music21 import chord, converter, harmony, meter, note, stream

    bass, tune = stream.Part(), stream.Part()
    m1, m2 = stream.Measure(number=1), stream.Measure(number=1)
    m1.append(meter.TimeSignature("4/4"))
    m2.append(meter.TimeSignature("4/4"))
    m1.append(note.Note("F2", quarterLength=4))
    m2.insert(0, harmony.ChordSymbol("F"))
    for item in (note.Note("A4"), chord.Chord(["F4", "C5"]), note.Note("Bb4"), note.Note("A4")):
        m2.append(item)
    bass.append(m1)
    tune.append(m2)
    stream.Score([bass, tune]).write("musicxml", fp=str(tmp_path / "two.musicxml"))
    text = MELODY_PROJECT.replace('"file:tune.abc"', '"file:two.musicxml"\npart = 2').replace("saxes-5", "trumpets-4")
    p = write_project(tmp_path, text)
    r = run_cli("build", str(p), "-o", str(tmp_path / "out"))
    assert r.exit_code == 0, r.output
    ours = converter.parse(str(tmp_path / "out" / "reel-soli.musicxml")).parts[0].toSoundingPitch()
    assert [pitch for _t, _d, pitch in _lead(ours)] == [69, 72, 70, 69]


PHRASES = '''title = "Phrase Test"
tempo = 120
melody = "file:phrases.musicxml"

[section]
name = "trumpets-4"
voicing = "close"

[output]
formats = ["musicxml", "report"]
dynamics = ["p", "mf", "f"]
'''


def _phrase_file(path: Path) -> None:
    """Six bars of 4/4 in F major, written with music21: an eighth rest inside the first
    phrase (shorter than a beat: no boundary), a half rest before the second, a breath mark
    ending the second with no rest after it, and a fermata on the last note."""
    from music21 import articulations, expressions, harmony, key, meter, note, stream

    part = stream.Part()
    spec = [
        ["F4:1", "G4:1", "A4:0.5", "r:0.5", "C5:1"],       # bar 1: an eighth rest, same phrase
        ["Bb4:1", "A4:1", "r:2"],                          # bar 2: a half rest ends phrase 1
        ["C5:1", "D5:1", "C5:1", "A4:1"],                  # bar 3: phrase 2
        ["G4:2", "F4:1", "G4:1,"],                         # bar 4: a breath mark after G4
        ["A4:1", "Bb4:1", "C5:2"],                         # bar 5: phrase 3 starts without a rest
        ["F4:4!"],                                         # bar 6: a fermata
    ]
    for b, bar in enumerate(spec, start=1):
        m = stream.Measure(number=b)
        if b == 1:
            m.append(key.Key("F"))
            m.append(meter.TimeSignature("4/4"))
            m.insert(0, harmony.ChordSymbol("F6"))
        for tok in bar:
            name, value = tok.split(":")
            breath, fermata = value.endswith(","), value.endswith("!")
            ql = float(value.rstrip(",!"))
            n = note.Rest(quarterLength=ql) if name == "r" else note.Note(name, quarterLength=ql)
            if breath:
                n.articulations.append(articulations.BreathMark())
            if fermata:
                n.expressions.append(expressions.Fermata())
            m.append(n)
        part.append(m)
    stream.Score([part]).write("musicxml", fp=str(path))


def _phrases_by_music21(path: Path) -> list[int]:
    """The phrase of each note by the README's rule, counted from music21's reading of the
    file: a rest of a beat (a quarter in 4/4) or more, or a breath mark or fermata on the note
    before, starts a new phrase."""
    from music21 import articulations, converter, expressions

    flat = converter.parse(str(path)).parts[0].flatten()
    out: list[int] = []
    phrase, rest, marked = 1, 0.0, False
    for el in flat.notesAndRests:
        if el.isRest:
            rest += el.quarterLength
            continue
        if el.isNote:
            if out and (rest >= 1 or marked):
                phrase += 1
            out.append(phrase)
            rest = 0.0
            marked = any(isinstance(a, articulations.BreathMark) for a in el.articulations) or \
                any(isinstance(x, expressions.Fermata) for x in el.expressions)
    return out


def test_melody_splits_into_phrases(tmp_path: Path) -> None:
    """With no chain, a melody's statements are its phrases: the report gives each note its
    phrase (as music21's reading of the file and the README's rule give it), and the
    per-statement dynamics land on each phrase's first note (music21 reads them back)."""
    from music21 import converter, dynamics, stream

    _phrase_file(tmp_path / "phrases.musicxml")
    want = _phrases_by_music21(tmp_path / "phrases.musicxml")
    assert want == [1] * 6 + [2] * 7 + [3] * 4
    p = write_project(tmp_path, PHRASES)
    r = run_cli("build", str(p), "-o", str(tmp_path / "out"))
    assert r.exit_code == 0, r.output
    report = json.loads((tmp_path / "out" / "phrase-test.report.json").read_text())
    assert [e["phrase"] for e in report["events"]] == want
    assert [e["statement"] for e in report["events"]] == want
    assert [(s["form"], s["phrase"]) for s in report["statements"]] == [("melody", 1), ("melody", 2), ("melody", 3)]
    md = (tmp_path / "out" / "phrase-test.report.md").read_text()
    assert "phrase 2" in md and "a rest of a beat or more" in md
    lead = converter.parse(str(tmp_path / "out" / "phrase-test.musicxml")).parts[0]
    marks = [(m.number, d.offset, d.value) for m in lead.getElementsByClass(stream.Measure)
             for d in m.getElementsByClass(dynamics.Dynamic)]
    assert marks == [(1, 0.0, "p"), (3, 0.0, "mf"), (5, 0.0, "f")]


def test_compact_text_breath_mark_starts_a_phrase(tmp_path: Path) -> None:
    text = PHRASES.replace('melody = "file:phrases.musicxml"',
                           'melody = "[F6] F4:4 G4:4 A4:4 C5:4 , | Bb4:4 A4:4 r:2 | C5:1 |"')
    p = write_project(tmp_path, text)
    r = run_cli("build", str(p), "-o", str(tmp_path / "out"))
    assert r.exit_code == 0, r.output
    report = json.loads((tmp_path / "out" / "phrase-test.report.json").read_text())
    assert [e["phrase"] for e in report["events"]] == [1, 1, 1, 1, 2, 2, 3]


def _build_in_child(project: Path, out: Path, env: dict[str, str]) -> tuple[int, bool]:
    """(exit code, music21 imported) of a build in a fresh interpreter."""
    import os
    import subprocess
    import sys

    from conftest import ROOT

    code = ("import sys, contextlib\nfrom arrange.cli import main\n"
            f"sys.argv = ['arrange', 'build', {str(project)!r}, '-o', {str(out)!r}]\n"
            "with contextlib.suppress(SystemExit):\n    main()\n"
            "print('music21' in sys.modules, file=sys.stderr)\n")
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=300,
                       env={**os.environ, **env, "PYTHONPATH": str(ROOT)})
    return r.returncode, r.stderr.strip().splitlines()[-1] == "True"


def test_melody_cache_gives_the_same_files_without_music21(tmp_path: Path) -> None:
    """A melody file read before is taken from the user's cache folder (``writers.cache``):
    the second build writes the same files byte for byte without importing music21
    (``sys.modules``, the interpreter's record of imports), and music21 reads the second
    build's lead part back to the corpus tune note for note; ``ARRANGE_NO_CACHE=1`` neither
    reads nor writes the cache and gives the same files."""
    from music21 import converter, corpus

    (tmp_path / "tune.abc").write_text(_corpus_tune(TUNE), encoding="utf-8")
    p = write_project(tmp_path, MELODY_PROJECT)
    cache = tmp_path / "cache"
    env = {"ARRANGE_CACHE_DIR": str(cache), "ARRANGE_NO_CACHE": ""}
    code, m21 = _build_in_child(p, tmp_path / "cold", env)
    assert code == 0 and m21
    entries = sorted(cache.glob("*.json"))
    assert len(entries) == 1
    code, m21 = _build_in_child(p, tmp_path / "warm", env)
    assert code == 0 and not m21
    code, m21 = _build_in_child(p, tmp_path / "off", {**env, "ARRANGE_CACHE_DIR": str(tmp_path / "c2"),
                                                      "ARRANGE_NO_CACHE": "1"})
    assert code == 0 and m21 and not (tmp_path / "c2").exists()
    cold = snapshot(tmp_path / "cold")
    assert cold and snapshot(tmp_path / "warm") == cold and snapshot(tmp_path / "off") == cold
    source = corpus.parse("nottingham-dataset/reelsa-c.abc", number=TUNE)
    ours = converter.parse(str(tmp_path / "warm" / "reel-soli.musicxml"))
    assert _lead(ours.parts[0].toSoundingPitch()) == _lead(source.parts[0])


@pytest.mark.parametrize("damage", [b"", b'{"format": 1, "lead": [', b"\xff\xfe not json",
                                    b'{"format": 1, "meter": "4/4", "key": null, "bar": [4, 1], '
                                    b'"pickup": [0, 1], "lead": [[0, 1, 1, 1, 300]], "marks": [], "chords": []}',
                                    b'[1, 2, 3]'])
def test_melody_cache_damaged_entry_is_parsed_again(tmp_path: Path, monkeypatch: pytest.MonkeyPatch,
                                                    damage: bytes) -> None:
    """A damaged or foreign cache entry (empty, cut short, not UTF-8, a pitch outside MIDI,
    another shape) is ignored: the file is parsed again, the files are the same as a build
    without the cache, and the entry is written whole again."""
    (tmp_path / "tune.abc").write_text(_corpus_tune(TUNE), encoding="utf-8")
    p = write_project(tmp_path, MELODY_PROJECT)
    monkeypatch.setenv("ARRANGE_CACHE_DIR", str(tmp_path / "cache"))
    from arrange.inputs import melody_file

    melody_file._PARSED.clear()                 # each build as a new process: nothing kept in memory
    assert run_cli("build", str(p), "-o", str(tmp_path / "a")).exit_code == 0
    (entry,) = (tmp_path / "cache").glob("*.json")
    good = entry.read_bytes()
    entry.write_bytes(damage)
    melody_file._PARSED.clear()
    r = run_cli("build", str(p), "-o", str(tmp_path / "b"))
    assert r.exit_code == 0, r.output
    assert snapshot(tmp_path / "b") == snapshot(tmp_path / "a")
    assert entry.read_bytes() == good
    assert not [q for q in (tmp_path / "cache").iterdir() if q.name.endswith(".tmp")]


def test_melody_cache_entry_follows_the_file(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    """A changed melody file is a new entry: the build reads the file as it is now (music21
    reads our score's lead back to the changed tune)."""
    from music21 import converter

    tune = _corpus_tune(TUNE)
    (tmp_path / "tune.abc").write_text(tune, encoding="utf-8")
    p = write_project(tmp_path, MELODY_PROJECT)
    monkeypatch.setenv("ARRANGE_CACHE_DIR", str(tmp_path / "cache"))
    from arrange.inputs import melody_file

    melody_file._PARSED.clear()                 # as a new process: nothing kept in memory
    assert run_cli("build", str(p), "-o", str(tmp_path / "a")).exit_code == 0
    changed = tune.replace("K:D", "K:D\nI:changed", 1)
    header, _, body = changed.partition("\nK:D")
    changed = header + "\nK:D" + body.replace("A", "B", 1)
    assert changed != tune
    (tmp_path / "tune.abc").write_text(changed, encoding="utf-8")
    assert run_cli("build", str(p), "-o", str(tmp_path / "b")).exit_code == 0
    assert len(list((tmp_path / "cache").glob("*.json"))) == 2
    from music21 import converter as c2

    want = _lead(c2.parseData(changed, format="abc").parts[0])
    got = _lead(converter.parse(str(tmp_path / "b" / "reel-soli.musicxml")).parts[0].toSoundingPitch())
    assert got == want


def test_melody_cache_entry_that_is_no_file_is_not_read(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    """An entry's name taken by a FIFO (someone else's doing) is not waited on: the build
    parses the file and writes the same score as without the cache (music21 reads it back)."""
    import os

    from music21 import converter

    (tmp_path / "tune.abc").write_text(_corpus_tune(TUNE), encoding="utf-8")
    p = write_project(tmp_path, MELODY_PROJECT)
    monkeypatch.setenv("ARRANGE_CACHE_DIR", str(tmp_path / "cache"))
    from arrange.inputs import melody_file

    melody_file._PARSED.clear()
    assert run_cli("build", str(p), "-o", str(tmp_path / "a")).exit_code == 0
    (entry,) = (tmp_path / "cache").glob("*.json")
    entry.unlink()
    os.mkfifo(entry)
    melody_file._PARSED.clear()
    r = run_cli("build", str(p), "-o", str(tmp_path / "b"))
    assert r.exit_code == 0, r.output
    assert snapshot(tmp_path / "b") == snapshot(tmp_path / "a")
    ours = converter.parse(str(tmp_path / "b" / "reel-soli.musicxml"))
    assert len(_lead(ours.parts[0].toSoundingPitch())) > 100
