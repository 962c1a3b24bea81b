"""Forms (issue 17): [[passages]] joined into one score, MIDI and report, with a designed
transition between two keys a minor third apart.

Outside references: music21 reads the written score (bar numbers, key signatures, bar
lines, rehearsal marks, notes); mido reads the MIDI file.  Common practice of chart
layout: a rehearsal letter at each new section, a double bar before it, the new key
signature on that double bar.  Key distances are counted from music21's own keys.
"""
from __future__ import annotations

import json
from pathlib import Path

import pytest
from conftest import run_cli, snapshot, write_project

FORM = '''title = "Three Passages"
tempo = 120
key = "F major"

[section]
name = "trumpets-4"
voicing = "close"

[[layers]]
section = "trombones-4"
role = "pad"
rhythm = "1"
dynamics = "p"

[[passages]]
name = "Theme"
melody = "C5:4 | [F6] A4:4. G4:8 F4:4 C5:4 | [Gm7] Bb4:4 A4:8 G4:8 [C7] E4:4 G4:4 | [F6] F4:1 |"

[[passages]]
name = "Turn"
chain = { design = true, statements = 4 }
dynamics = ["mp", "mf"]
layers = []                  # the pad rests under the turn

[[passages]]
name = "Theme up"
key = "Ab major"
voicing = "spread"
melody = "Eb5:4 | [Ab6] C5:4. Bb4:8 Ab4:4 Eb5:4 | [Bbm7] Db5:4 C5:8 Bb4:8 [Eb7] G4:4 Bb4:4 | [Ab6] Ab4:1 |"

[output]
formats = ["musicxml", "midi", "report"]
dynamics = "f"
'''


@pytest.fixture(scope="module")
def form(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, dict]:
    folder = tmp_path_factory.mktemp("form")
    p = write_project(folder, FORM)
    r = run_cli("build", str(p), "-o", str(folder / "out"))
    assert r.exit_code == 0, r.output
    report = json.loads((folder / "out" / "three-passages.report.json").read_text())
    return folder / "out", report


def _measures(path: Path):  # noqa: ANN202
    from music21 import converter, stream

    score = converter.parse(str(path))
    return score, list(score.parts[0].getElementsByClass(stream.Measure))


def test_one_score_with_continuous_bars_letters_keys_and_double_bars(form: tuple[Path, dict]) -> None:
    from music21 import expressions, key

    out, report = form
    score, measures = _measures(out / "three-passages.musicxml")
    numbers = [m.number for m in measures]
    assert numbers == list(range(0, len(measures)))            # the pickup is bar 0, then 1, 2, ...
    starts = [p["first_bar"] for p in report["passages"]]
    assert len(starts) == 3 and starts[0] == 1
    by_number = {m.number: m for m in measures}
    # a rehearsal letter at each passage, and nowhere else
    letters = {m.number: [r.content for r in m.getElementsByClass(expressions.RehearsalMark)] for m in measures}
    assert {n: v for n, v in letters.items() if v} == {starts[0]: ["A"], starts[1]: ["B"], starts[2]: ["C"]}
    # a double bar before each later passage
    for b in starts[1:]:
        assert by_number[b - 1].rightBarline is not None and by_number[b - 1].rightBarline.type == "double"
    # key signatures: F major at the start; the change to Ab major on the double bar of passage 3;
    # no other change (the transition keeps the signature it starts in, as charts write it)
    sounding = score.parts[0].toSoundingPitch()
    from music21 import stream

    changes = [(m.number, ks.sharps) for m in sounding.getElementsByClass(stream.Measure)
               for ks in m.getElementsByClass(key.KeySignature)]
    assert changes == [(0, -1), (starts[2], -4)]
    # every part carries the same bar lines and letters' bars
    for part in score.parts:
        assert [m.number for m in part.getElementsByClass(stream.Measure)] == numbers


def test_designed_transition_leads_into_the_new_key(form: tuple[Path, dict]) -> None:
    from music21 import key as m21key

    out, report = form
    events = report["events"]
    passage_of = [e["passage"] for e in events]
    first = passage_of.index(2)
    # the transition's first note lies within an octave of the last note before it
    assert abs(events[first]["lead"] - events[first - 1]["lead"]) <= 12
    # its last P statement starts a key distance of F major -> Ab major above its first
    statements = [s for s in report["statements"] if s["notes"] and events[s["notes"][0]]["passage"] == 2]
    assert [s["form"] for s in statements] == ["P", "RI", "P", "RI"]
    last_p = [s for s in statements if s["form"] == "P"][-1]
    distance = (m21key.Key("A-").tonic.pitchClass - m21key.Key("F").tonic.pitchClass) % 12   # music21's keys
    assert (events[last_p["notes"][0]]["lead"] - events[first]["lead"]) % 12 == distance
    # the transition stays in the lead's practical range
    lo, hi = report["section"]["parts"][0]["range"]
    assert all(lo <= e["lead"] <= hi for e in events if e["passage"] == 2)
    # the report names the motif, its score and why, and the runners-up
    design = report["passages"][1]["design"]
    assert design["motif"] and design["why"] and len(design["runners_up"]) == 3
    assert design["score"] >= max(r["score"] for r in design["runners_up"])
    md = (out / "three-passages.report.md").read_text()
    assert "runner-up: motif" in md and "## Passages" in md


def test_form_notes_voicing_and_dynamics(form: tuple[Path, dict]) -> None:
    """The melodies come out note for note where they were put (passage 3 in its bars), the
    voicing plan of passage 3 is its own, the dynamics follow each passage."""
    import mido

    out, report = form
    events = report["events"]
    third = [e for e in events if e["passage"] == 3]
    assert [e["lead"] for e in third] == [75, 72, 70, 68, 75, 73, 72, 70, 67, 70, 68]
    # spread, except where four trumpets cannot spread under a low lead inside their extreme
    # range (music21 Trumpet lowestNote written F#3): the report names each such note
    shaped = {w["event"] for w in report["warnings"] if w["kind"] == "shape"}
    assert all(e["voicing"] == "spread" or e["index"] in shaped for e in third)
    assert sum(e["voicing"] == "spread" for e in third) > len(third) // 2
    assert [s["dynamic"] for s in report["statements"]] == ["f", "mp", "mf", "mf", "mf", "f"]
    mid = mido.MidiFile(str(out / "three-passages.mid"))
    names = [next((m.name for m in t if m.type == "track_name"), "") for t in mid.tracks]
    notes = sum(1 for t, name in zip(mid.tracks, names, strict=True) if "Trumpet" in name
                for m in t if m.type == "note_on" and m.velocity)
    assert notes == 4 * len(events)


def test_a_passage_leaves_out_a_layer(form: tuple[Path, dict]) -> None:
    """layers = [] in the turn: music21 reads rests only in the trombones' bars of the turn,
    and pad chords in every other bar of the passages."""
    from music21 import stream

    out, report = form
    score, _ = _measures(out / "three-passages.musicxml")
    turn = report["passages"][1]
    pads = score.parts[4:]
    assert len(pads) == 4
    for part in pads:
        sounding = {m.number for m in part.getElementsByClass(stream.Measure) if m.notes}
        assert not sounding & set(range(turn["first_bar"], turn["last_bar"] + 1))
    # the pad sounds in every other bar (one part or another: a thinned chord rests some)
    top = {m.number for part in pads for m in part.getElementsByClass(stream.Measure) if m.notes}
    assert top >= set(range(1, turn["first_bar"])) | set(range(turn["last_bar"] + 1, report["bars"] + 1))


BAD = [
    ("meter mid-bar", 'meter = "3/4"\n', "the form is in 4/4"),
    ("designed first", 'name = "X"\nchain = { design = true }\n', "no passage before it"),
    ("two materials", 'melody = "C5:4"\nchain = { motif = "C4 D4" }\n', "gives melody and chain"),
    ("unknown layer", 'melody = "[F6] C5:4"\nlayers = [2]\n', "layer numbers, 1 to 1"),
]


@pytest.mark.parametrize(("what", "entry", "needle"), BAD, ids=[b[0] for b in BAD])
def test_bad_form_input(tmp_path: Path, what: str, entry: str, needle: str) -> None:
    text = FORM.replace('[[passages]]\nname = "Theme"\n',
                        f'[[passages]]\n{entry}\n[[passages]]\nname = "Theme"\n', 1)
    if what == "meter mid-bar":
        text = FORM.replace('name = "Turn"\n', 'name = "Turn"\nmeter = "3/4"\n')
    p = write_project(tmp_path, text)
    out = tmp_path / "out"
    r = run_cli("build", str(p), "-o", str(out))
    assert r.exit_code == 2, (what, r.output)
    assert needle in r.output, (what, r.output)
    assert len(r.output.strip().splitlines()) == 1 and "Traceback" not in r.output
    assert snapshot(out) == {}


def test_form_melody_file_in_another_meter_is_refused(tmp_path: Path) -> None:
    from music21 import meter, note, stream

    part = stream.Part()
    m = stream.Measure(number=1)
    m.append(meter.TimeSignature("3/4"))
    m.append(note.Note("C5", quarterLength=3))
    part.append(m)
    stream.Score([part]).write("musicxml", fp=str(tmp_path / "waltz.musicxml"))
    text = FORM.replace('name = "Theme up"\n', 'name = "Theme up"\nmelody = "file:waltz.musicxml"\n') \
        .replace('melody = "Eb5:4 |', 'ignored = "Eb5:4 |')
    text = text.replace('ignored = ', '# ')
    p = write_project(tmp_path, text)
    r = run_cli("build", str(p), "-o", str(tmp_path / "out"))
    assert r.exit_code == 2 and "is in 3/4 but the form is in 4/4" in r.output, r.output
    assert snapshot(tmp_path / "out") == {}


@pytest.fixture(scope="module")
def lantern(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, dict]:
    from conftest import DEMOS

    folder = tmp_path_factory.mktemp("lantern")
    (folder / "lantern-walk.musicxml").write_bytes((DEMOS / "lantern-walk.musicxml").read_bytes())
    text = (DEMOS / "lantern-walk-soli.toml").read_text(encoding="utf-8").replace('"preview"', '"report"')
    p = write_project(folder, text, "lantern-walk-soli.toml")
    r = run_cli("build", str(p), "-o", str(folder / "out"))
    assert r.exit_code == 0, r.output
    return folder / "out", json.loads((folder / "out" / "lantern-walk-soli.report.json").read_text())


def test_demo_aaba_tune_as_sax_soli_with_pad_and_turn(lantern: tuple[Path, dict]) -> None:
    """The demo: our 32-bar AABA lead sheet (music21 reads it as the reference) as a saxophone
    soli over a trombone pad, a designed four-statement turn, the last A a minor third up."""
    from conftest import DEMOS
    from music21 import converter, key, stream

    out, report = lantern
    source = converter.parse(str(DEMOS / "lantern-walk.musicxml")).parts[0]
    src_measures = list(source.getElementsByClass(stream.Measure))
    assert [m.number for m in src_measures] == list(range(0, 33))          # a pickup and 32 bars
    assert len(source.flatten().getElementsByClass("ChordSymbol")) >= 40    # with its changes
    assert [p["material"].split(" ")[0] for p in report["passages"]] == \
        ["melody", "melody", "melody", "designed", "melody"]
    assert report["section"]["name"] == "saxes-5"
    assert [(la["section"], la["role"]) for la in report["layers"]] == [("trombones-4", "pad")]
    events = report["events"]
    # the last A: the file's bars 25-32, three semitones up, same rhythm (offsets from its first bar)
    want = []
    for m in src_measures[25:]:
        for n in m.notes:
            if n.isNote:
                want.append((float(m.offset - src_measures[25].offset + n.offset), n.quarterLength,
                             n.pitch.midi + 3))
    last = [e for e in events if e["passage"] == 5]
    start = (report["passages"][4]["first_bar"] - 1) * 4
    assert [(e["onset"] - start, e["duration"], e["lead"]) for e in last] == want
    # the turn: P RI P RI, its last P a minor third above its start
    turn = [s for s in report["statements"] if s["notes"] and events[s["notes"][0]]["passage"] == 4]
    assert [s["form"] for s in turn] == ["P", "RI", "P", "RI"]
    first = events[turn[0]["notes"][0]]["lead"]
    assert (events[turn[2]["notes"][0]]["lead"] - first) % 12 == 3
    assert abs(first - events[turn[0]["notes"][0] - 1]["lead"]) <= 12
    # music21 reads the new key (Db major, five flats) on the double bar of the last A
    score = converter.parse(str(out / "lantern-walk-soli.musicxml"))
    lead = score.parts[0].toSoundingPitch()
    changes = [(m.number, ks.sharps) for m in lead.getElementsByClass(stream.Measure)
               for ks in m.getElementsByClass(key.KeySignature)]
    assert changes == [(0, -2), (report["passages"][4]["first_bar"], -5)]
    assert len(score.parts) == 9                                   # five saxophones, four trombones


# A passage whose framework does not fit its material: "Theme up" has a pickup and three
# bars; a framework of two or five bars would cut its changes mid-way or leave chords that
# never sound.  Exit 2, one line naming the passage by number and name, nothing written.
FRAMEWORK_BAD = [
    ("longer", "Ab6 | Bbm7 Eb7 | Ab6 | Db6 | Ab6", "5 bars"),
    ("cut", "Ab6 | Bbm7 Eb7", "2 bars"),
]


@pytest.mark.parametrize(("what", "framework", "needle"), FRAMEWORK_BAD, ids=[b[0] for b in FRAMEWORK_BAD])
def test_passage_framework_that_does_not_fit_is_refused(tmp_path: Path, what: str, framework: str,
                                                        needle: str) -> None:
    text = FORM.replace('voicing = "spread"\n',
                        f'voicing = "spread"\nharmony = {{ framework = "{framework}" }}\n')
    p = write_project(tmp_path, text)
    r = run_cli("build", str(p), "-o", str(tmp_path / "out"))
    assert r.exit_code == 2, (what, r.output)
    assert "Traceback" not in r.output
    errors = [x for x in r.output.splitlines() if x.startswith("arrange: error")]
    assert len(errors) == 1 and not errors[0].endswith("..."), r.output      # one whole line
    line = errors[0]
    assert "passage 3" in line and "Theme up" in line and needle in line and "3 bars" in line, line
    assert snapshot(tmp_path / "out") == {}


def test_passage_framework_that_fits_or_repeats_whole_builds(tmp_path: Path) -> None:
    """Three bars for three bars: accepted; music21 reads the passage's own Fm7 above its
    second bar (at sounding pitch: the score's symbols are written for their staff)."""
    from music21 import harmony

    text = FORM.replace('voicing = "spread"\n', 'voicing = "spread"\nharmony = { framework = "Ab6 | Fm7 | Ab6" }\n')
    p = write_project(tmp_path, text)
    r = run_cli("build", str(p), "-o", str(tmp_path / "out"))
    assert r.exit_code == 0, r.output
    report = json.loads((tmp_path / "out" / "three-passages.report.json").read_text())
    first = report["passages"][2]["first_bar"]
    from music21 import converter, stream

    sounding = converter.parse(str(tmp_path / "out" / "three-passages.musicxml")).toSoundingPitch()
    measures = list(sounding.parts[0].getElementsByClass(stream.Measure))
    second = next(m for m in measures if m.number == first + 1)
    assert "Fm7" in [h.figure for h in second.getElementsByClass(harmony.ChordSymbol)]


def test_form_warnings_name_bars_in_the_forms_numbering(lantern: tuple[Path, dict]) -> None:
    """Every warning whose message names a bar names the bar of the score (the form's one
    numbering, which the `bar` field holds), and a harmony warning's lead note is in that bar
    of the lead part as music21 reads it (sounding pitch)."""
    import re

    from music21 import converter, stream

    out, report = lantern
    lead = converter.parse(str(out / "lantern-walk-soli.musicxml")).parts[0].toSoundingPitch()
    by_number = {m.number: m for m in lead.getElementsByClass(stream.Measure)}
    named = 0
    for w in report["warnings"]:
        m = re.search(r"\bbar (\d+)\b", w["message"])
        if m is None:
            continue
        named += 1
        assert int(m.group(1)) == w["bar"], w
        lead_note = re.search(r": lead ([A-G][#b]?) ", w["message"])
        if lead_note:
            names = {n.pitch.name.replace("-", "b") for n in by_number[w["bar"]].notes if n.isNote}
            assert lead_note.group(1) in names, (w, names)
    later = [w for w in report["warnings"] if w["bar"] and w["bar"] >= report["passages"][1]["first_bar"]
             and re.search(r": lead ", w["message"])]
    assert named and later, "the demo no longer has a harmony warning in a later passage to check"


@pytest.fixture(scope="module")
def form_band(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, dict]:
    """The three-passage form with a written rhythm section and part files."""
    folder = tmp_path_factory.mktemp("form-band")
    text = FORM.replace('dynamics = "f"\n', 'dynamics = "f"\nparts = true\n') + \
        '\n[rhythm_section]\nparts = ["piano", "guitar", "bass", "drums"]\n'
    p = write_project(folder, text)
    r = run_cli("build", str(p), "-o", str(folder / "out"))
    assert r.exit_code == 0, r.output
    return folder / "out", json.loads((folder / "out" / "three-passages.report.json").read_text())


def test_form_double_bars_in_every_part_and_files_validate(form_band: tuple[Path, dict], musicxml_schema) -> None:
    """music21 reads a double bar line before each later passage in every part of the score,
    the rhythm section's included (common practice of chart layout: a new section follows a
    double bar), and a final bar line at the end; the score and every part file validate
    against the MusicXML 4.0 XSD (the schema in the `musicxml` package)."""
    from music21 import converter, stream

    out, report = form_band
    starts = [p["first_bar"] for p in report["passages"]][1:]
    score_path = out / "three-passages.musicxml"
    musicxml_schema.validate(str(score_path))                              # MusicXML 4.0 XSD
    part_files = sorted((out / "three-passages-parts").glob("part*.musicxml"))
    assert len(part_files) == 4 + 4 + 4                                    # trumpets, pad, rhythm
    for f in part_files:
        musicxml_schema.validate(str(f))                                   # MusicXML 4.0 XSD
    score = converter.parse(str(score_path))
    names = [p.partName for p in score.parts]
    assert names[-4:] == ["Piano", "Guitar", "Bass", "Drums"] or set(names[-4:]) == {"Piano", "Guitar", "Bass", "Drums"}
    for f in [score_path, *part_files]:
        for part in converter.parse(str(f)).parts:
            by_number = {m.number: m for m in part.getElementsByClass(stream.Measure)}
            for b in starts:
                bl = by_number[b - 1].rightBarline
                assert bl is not None and bl.type == "double", (f.name, part.partName, b)
            last = by_number[max(by_number)].rightBarline
            assert last is not None and last.type == "final", (f.name, part.partName)


def _voicing_spans(out: Path, report: dict, events: list[int], parts: int) -> list[int]:
    """Per lead attack in ``events``: the span in semitones from the top part to the lowest
    of the section's ``parts`` sounding with it, read by music21 at sounding pitch."""
    from music21 import converter, stream

    score = converter.parse(str(out / "three-passages.musicxml"))
    staves = [p.toSoundingPitch() for p in score.parts[:parts]]
    measures = [{m.number: m for m in s.getElementsByClass(stream.Measure)} for s in staves]
    spans = []
    for i in events:
        e = report["events"][i]
        at = (e["beat"] - 1)                     # quarter notes into the bar (4/4)
        pitches = []
        for ms in measures:
            m = ms[e["bar"]]
            start = at - (m.paddingLeft or 0)           # a pickup bar counts from its first note
            sounding = [n for n in m.notes if n.isNote and n.offset <= start < n.offset + n.quarterLength]
            pitches += [n.pitch.midi for n in sounding]
        spans.append(max(pitches) - min(pitches))
    return spans


def test_each_passage_has_its_own_voicing_plan(tmp_path: Path) -> None:
    """A passage's `section` table gives its voicing plan, with statements and bars counted
    inside the passage.  Read back with music21: close position stays within an octave under
    the lead; drop 2 and spread open wider than an octave (common practice of section
    voicing, as QUALITY.md states it)."""
    text = FORM.replace('name = "Theme"\n', 'name = "Theme"\nsection = { name = "trumpets-4", by_bar = { "2" = "drop2" } }\n') \
        .replace('name = "Turn"\n', 'name = "Turn"\nsection = { voicing = "close", by_statement = { 2 = "spread" } }\n')
    p = write_project(tmp_path, text)
    r = run_cli("build", str(p), "-o", str(tmp_path / "out"))
    assert r.exit_code == 0, r.output
    report = json.loads((tmp_path / "out" / "three-passages.report.json").read_text())
    events = report["events"]
    theme_second_bar = [i for i, e in enumerate(events) if e["passage"] == 1 and e["bar"] == 2]
    theme_other = [i for i, e in enumerate(events) if e["passage"] == 1 and e["bar"] != 2]
    turn = [s for s in report["statements"] if s["notes"] and events[s["notes"][0]]["passage"] == 2]
    spread = turn[1]["notes"]
    close = turn[0]["notes"] + turn[2]["notes"] + turn[3]["notes"]
    out = tmp_path / "out"
    # a note four trumpets cannot open inside their extreme range (music21 Trumpet lowestNote
    # written F#3) takes another type, named in the report ("shape"); the rest open wide
    shaped = {w["event"] for w in report["warnings"] if w["kind"] == "shape"}
    theme_second_bar = [i for i in theme_second_bar if i not in shaped]
    spread = [i for i in spread if i not in shaped]
    assert theme_second_bar and spread
    assert all(s > 12 for s in _voicing_spans(out, report, theme_second_bar, 4))
    assert all(s <= 12 for s in _voicing_spans(out, report, theme_other, 4))
    assert all(s > 12 for s in _voicing_spans(out, report, spread, 4))
    assert all(s <= 12 for s in _voicing_spans(out, report, close, 4))


@pytest.mark.parametrize(("entry", "needle"), [
    ('section = { name = "saxes-9" }', "not known"),
    ('section = { by_statement = { 5 = "spread" } }', "statements 1 to 4"),
    ('section = { by_bar = { "9" = "drop2" } }', "bars 1 to"),
    ('section = { allow_extreme = true }', "allow_extreme"),
], ids=["unknown section", "statement past", "bar past", "project key"])
def test_bad_passage_section(tmp_path: Path, entry: str, needle: str) -> None:
    text = FORM.replace('name = "Turn"\n', f'name = "Turn"\n{entry}\n')
    p = write_project(tmp_path, text)
    r = run_cli("build", str(p), "-o", str(tmp_path / "out"))
    assert r.exit_code == 2, r.output
    errors = [x for x in r.output.splitlines() if x.startswith("arrange: error")]
    assert len(errors) == 1 and "Traceback" not in r.output, r.output
    assert "passage 2" in errors[0] and needle in errors[0], errors[0]
    assert snapshot(tmp_path / "out") == {}


def test_demo_chart_layout_read_by_music21(lantern: tuple[Path, dict]) -> None:
    """The demo as a player reads it (music21 over the score): one continuous bar numbering
    from the pickup, a rehearsal letter at each passage and nowhere else, a double bar before
    each passage in every part, the key change (Bb to Db major) on the double bar of the last
    A, and the turn's last P statement a minor third (the key distance, from music21's keys)
    above its first statement, so it lands in the new key (common practice of chart layout)."""
    from music21 import converter, expressions, stream
    from music21 import key as m21key

    out, report = lantern
    score = converter.parse(str(out / "lantern-walk-soli.musicxml"))
    starts = [p["first_bar"] for p in report["passages"]]
    assert starts[0] == 1 and len(starts) == 5
    for part in score.parts:
        measures = list(part.getElementsByClass(stream.Measure))
        assert [m.number for m in measures] == list(range(0, len(measures)))
        by_number = {m.number: m for m in measures}
        for b in starts[1:]:
            bl = by_number[b - 1].rightBarline
            assert bl is not None and bl.type == "double", (part.partName, b)
    lead = list(score.parts[0].getElementsByClass(stream.Measure))
    letters = {m.number: [r.content for r in m.getElementsByClass(expressions.RehearsalMark)] for m in lead}
    assert {n: v for n, v in letters.items() if v} == {b: [chr(65 + k)] for k, b in enumerate(starts)}
    sounding = score.parts[0].toSoundingPitch()
    keys = [(m.number, ks.sharps) for m in sounding.getElementsByClass(stream.Measure)
            for ks in m.getElementsByClass(m21key.KeySignature)]
    assert keys == [(0, m21key.Key("B-").sharps), (starts[4], m21key.Key("D-").sharps)]
    events = report["events"]
    turn = [s for s in report["statements"] if s["notes"] and events[s["notes"][0]]["passage"] == 4]
    last_p = [s for s in turn if s["form"] == "P"][-1]
    distance = (m21key.Key("D-").tonic.pitchClass - m21key.Key("B-").tonic.pitchClass) % 12
    assert (events[last_p["notes"][0]]["lead"] - events[turn[0]["notes"][0]]["lead"]) % 12 == distance
    # the report says which passage and phrase each note belongs to
    assert all(e["passage"] in range(1, 6) for e in events)
    assert all((e["phrase"] is None) == (e["passage"] == 4) for e in events)


def test_report_says_what_each_rhythm_player_plays_per_passage(form_band: tuple[Path, dict]) -> None:
    """The report's rhythm section, per passage and player, against music21's reading of
    the written parts: the bass's note count (ties merged), lowest and highest note
    (sounding), the comping's bars of accented rhythmic slashes, and the drum part's bars
    marked "Fill"."""
    from music21 import articulations, converter, expressions

    out, report = form_band
    rs = report["rhythm_section"]
    assert [p["passage"] for p in rs["passages"]] == [1, 2, 3]
    score = converter.parse(str(out / "three-passages.musicxml"))
    parts = {p.partName: p for p in score.parts}
    pickup = report["rhythm"]["pickup"]

    def bar_of(offset: float) -> int:
        return int((offset - pickup) // 4) + 1

    bass = parts["Bass"].toSoundingPitch().flatten().stripTies()
    bass_notes = [(bar_of(n.offset), n) for n in bass.notes if n.isNote]
    piano = parts["Piano"].flatten()
    hit_bars = {bar_of(n.offset) for n in piano.notes
                if any(isinstance(a, articulations.Accent) for a in n.articulations)}
    drums = parts["Drums"]
    fill_bars = {m.number for m in drums.getElementsByClass("Measure")
                 for t in m.recurse().getElementsByClass(expressions.TextExpression) if t.content == "Fill"}
    md = (out / "three-passages.report.md").read_text()
    assert "## Rhythm section" in md
    for k, p in enumerate(rs["passages"]):
        lo, hi = p["first_bar"], p["last_bar"]
        rows = {r["role"]: r for r in p["parts"]}
        assert set(rows) == {"piano", "guitar", "bass", "drums"}
        mine = [n for b, n in bass_notes if lo <= b <= hi or (k == 0 and b < lo)]
        assert rows["bass"]["notes"] == len(mine), (p, len(mine))
        low = min(mine, key=lambda n: n.pitch.midi).pitch
        high = max(mine, key=lambda n: n.pitch.midi).pitch
        assert rows["bass"]["low"] == low.nameWithOctave.replace("-", "b")
        assert rows["bass"]["high"] == high.nameWithOctave.replace("-", "b")
        assert rows["piano"]["hit_bars"] == sorted(b for b in hit_bars if lo <= b <= hi)
        assert rows["drums"]["fill_bars"] == sorted(b for b in fill_bars if lo <= b <= hi)
        for row in p["parts"]:
            assert f"| {p['passage']} ({p['name']}) | {lo}-{hi} | {row['name']} | {row['plays']} |" in md
        # a straight groove: roots and fifths (README's bass styles)
        assert rs["bass_style"] == "roots-fifths" and "roots and fifths" in rows["bass"]["plays"]
