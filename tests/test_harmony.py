"""The harmony stage: keys and modes, framework, classification, approach chords.

References: music21 (scales, key signatures, Roman numerals, and re-reading our
``<harmony>`` elements); the hand-worked approach cases and the technique
definitions are common practice of jazz ensemble arranging (no single source).
"""
from __future__ import annotations

import json
import random
from dataclasses import MISSING, fields
from fractions import Fraction
from pathlib import Path

import pytest
from conftest import BASIC, run_cli, snapshot, write_project

from arrange.errors import ArrangeError, HarmonyError
from arrange.harmony.approach import classify
from arrange.harmony.harmonizer import PRESETS, HarmonyOptions, harmonize, parse_framework
from arrange.rhythm.line import Line, Note, parse_meter
from arrange.theory.chords import parse_chord
from arrange.theory.keys import MODES, parse_key


def _weight(onset: Fraction, bar: Fraction, beat: Fraction) -> int:
    pos = onset % bar
    return 0 if pos == 0 else 1 if pos % beat == 0 else 2 if pos % (beat / 2) == 0 else 3


def make_line(pitches: list[int], onsets: list[Fraction] | None = None, meter: str = "4/4",
              bars: int | None = None) -> Line:
    """A Line with the given onsets (default: eighths), built field by field so
    the test keeps working when the rhythm stage adds fields with defaults."""
    m = parse_meter(meter)
    beat = Fraction(4, m.denominator)
    ons = onsets or [Fraction(k, 2) for k in range(len(pitches))]
    total = (bars or int(-(-(ons[-1] + Fraction(1, 2)) // m.bar))) * m.bar
    notes = []
    for i, (p, o) in enumerate(zip(pitches, ons, strict=True)):
        d = (ons[i + 1] if i + 1 < len(ons) else total) - o
        vals = {"index": i, "pitch": p, "onset": o, "duration": d, "statement": 1,
                "weight": _weight(o, m.bar, beat), "perf_onset": o, "perf_duration": d}
        notes.append(Note(**{f.name: vals[f.name] for f in fields(Note)
                             if f.name in vals or f.default is MISSING and f.default_factory is MISSING}))
    vals = {"chain": None, "meter": m, "notes": tuple(notes), "groove": "straight", "swing": 0.5,
            "pickup": Fraction(0), "total": total}
    return Line(**{f.name: vals.get(f.name) for f in fields(Line)
                   if f.name in vals or f.default is MISSING and f.default_factory is MISSING})


def opts(framework: str, approach: tuple[str, ...] = ("chromatic",), keys=()) -> HarmonyOptions:
    return HarmonyOptions(parse_framework(framework, where="test"), approach, None, keys)


# --- keys and modes ------------------------------------------------------------------

M21_SCALES = {"major": "MajorScale", "minor": "MinorScale", "harmonic minor": "HarmonicMinorScale",
              "melodic minor": "MelodicMinorScale", "ionian": "MajorScale", "dorian": "DorianScale",
              "phrygian": "PhrygianScale", "lydian": "LydianScale", "mixolydian": "MixolydianScale",
              "aeolian": "MinorScale", "locrian": "LocrianScale"}
TONICS = ("C", "F", "Bb", "Eb", "Ab", "Db", "G", "D", "A", "E", "B", "F#")


@pytest.mark.parametrize("mode", list(MODES))
def test_scales_match_music21(mode: str) -> None:
    from music21 import scale

    for tonic in TONICS:
        key = parse_key(f"{tonic} {mode}")
        sc = getattr(scale, M21_SCALES[mode])(tonic.replace("b", "-"))   # music21 as reference
        names = [p.name.replace("-", "b") for p in sc.getPitches()[:7]]
        assert list(key.names) == names


@pytest.mark.parametrize("mode", ["major", "minor", "dorian", "phrygian", "lydian", "mixolydian",
                                  "locrian", "harmonic minor", "melodic minor"])
def test_key_signatures_match_music21(mode: str) -> None:
    from music21 import key as m21key

    for tonic in TONICS:
        ours = parse_key(f"{tonic} {mode}")
        m21 = m21key.Key(tonic.replace("b", "-"), ours.signature_mode)   # music21 as reference
        assert ours.fifths == m21.sharps


@pytest.mark.parametrize("tonic", ["F", "Bb", "D", "Ab", "E"])
def test_diatonic_sevenths_match_music21_roman_numerals(tonic: str) -> None:
    from music21 import key as m21key
    from music21 import roman

    k = m21key.Key(tonic.replace("b", "-"))
    figures = ["I7", "ii7", "iii7", "IV7", "V7", "vi7", "viiø7"]
    for ours, fig in zip(parse_key(f"{tonic} major").diatonic_sevenths(), figures, strict=True):
        rn = roman.RomanNumeral(fig, k)                                    # music21 as reference
        assert set(ours.pitch_classes) == {p.pitchClass for p in rn.pitches}
        assert ours.root_name == rn.root().name.replace("-", "b")


def test_harmonic_minor_sevenths() -> None:
    # harmonic minor's seventh chords (common practice): i m(maj7), ii m7b5, III maj7#5,
    # iv m7, V 7, VI maj7, vii dim7
    got = [c.symbol for c in parse_key("A harmonic minor").diatonic_sevenths()]
    assert got == ["Am(maj7)", "Bm7b5", "Cmaj7#5", "Dm7", "E7", "Fmaj7", "G#dim7"]


def test_unknown_mode() -> None:
    with pytest.raises(HarmonyError) as err:
        parse_key("D bebop")
    assert "'bebop'" in str(err.value) and "dorian" in str(err.value)


# --- framework -----------------------------------------------------------------------

def test_framework_beats_and_even_shares() -> None:
    line = make_line([65] * 16, [Fraction(k) for k in range(16)])
    h = harmonize(line, parse_key("F major"), opts("F6 | Gm7:3 C7:1 | Am7 D7 | Gm7 C7:2"))
    got = [(fc.bar, fc.onset, fc.duration, fc.chord.symbol) for fc in h.framework]
    assert got == [(1, 0, 4, "F6"), (2, 4, 3, "Gm7"), (2, 7, 1, "C7"), (3, 8, 2, "Am7"),
                   (3, 10, 2, "D7"), (4, 12, 2, "Gm7"), (4, 14, 2, "C7")]


def test_uneven_shares_and_grouped_meters() -> None:
    # the earlier chords take the spare beat (common practice of lead sheets); chords
    # change on the meter's beats: 7/8 as 2+2+3 eighths, 6/8 in dotted quarters
    line = make_line([65] * 4, [Fraction(k) for k in range(4)], bars=1)
    h = harmonize(line, parse_key("F major"), opts("F6 Gm7 C7"))
    assert [fc.duration for fc in h.framework] == [2, 1, 1]
    for meter, durs in (("7/8", [2, Fraction(3, 2)]), ("6/8", [Fraction(3, 2), Fraction(3, 2)]),
                        ("3/4", [2, 1])):
        line = make_line([65, 67], [Fraction(0), Fraction(1)], meter=meter, bars=1)
        h = harmonize(line, parse_key("F major"), opts("Gm7 C7"))
        assert [fc.duration for fc in h.framework] == durs


@pytest.mark.parametrize(("framework", "meter"), [("F6 Gm7 C7 Am7 D7", "4/4"), ("Gm7:3 C7:2", "4/4"),
                                                    ("Gm7:2 C7:2", "3/4"), ("Gm7:4 C7", "4/4"),
                                                    ("Gm7 C7 F6", "6/8")])
def test_bar_that_does_not_divide(framework: str, meter: str) -> None:
    line = make_line([65] * 4, [Fraction(k) for k in range(4)], meter=meter, bars=1)
    with pytest.raises(HarmonyError) as err:
        harmonize(line, parse_key("F major"), opts(framework))
    assert "does not divide into the meter" in str(err.value) and "bar 1" in str(err.value)


def test_presets_follow_the_key() -> None:
    # ii-V-I in F major and in Bb major from bar 5 (common practice)
    line = make_line([65] * 8, [Fraction(2 * k) for k in range(8)], bars=8)
    key = parse_key("F major")
    o = HarmonyOptions((), (), "two-five-home", ((5, parse_key("Bb major")),))
    h = harmonize(line, key, o)
    assert [fc.chord.symbol for fc in h.framework] == \
        ["Gm7", "C7", "Fmaj7", "Fmaj7", "Cm7", "F7", "Bbmaj7", "Bbmaj7"]
    assert h.key_at(4) == key and str(h.key_at(5)) == "Bb major"
    for name in PRESETS:
        harmonize(line, parse_key("D dorian"), HarmonyOptions((), (), name))
    vamp = harmonize(line, parse_key("D dorian"), HarmonyOptions((), (), "modal-vamp"))
    assert [fc.chord.symbol for fc in vamp.framework[:4]] == ["Dm7", "Dm7", "G7", "Dm7"]
    half = harmonize(line, key, HarmonyOptions((), (), "home-to-half"))
    assert [fc.chord.symbol for fc in half.framework[:4]] == ["Fmaj7", "Dm7", "Gm7", "C7"]


# --- classification ------------------------------------------------------------------

def test_classification() -> None:
    f = parse_key("F major")
    assert classify(69, parse_chord("F6"), f) == "chord tone"          # A = 3
    assert classify(67, parse_chord("F6"), f) == "tension"             # G = 9
    assert classify(70, parse_chord("F6"), f) == "avoid"               # Bb = 11 over major
    assert classify(71, parse_chord("F6"), f) == "non-chord"           # B is outside F ionian
    assert classify(73, parse_chord("C7"), f) == "tension"             # Db = b9 on a dominant
    assert classify(65, parse_chord("C7"), f) == "avoid"               # F = 11 on a dominant
    assert classify(68, parse_chord("Am7"), f) == "non-chord"
    assert classify(70, parse_chord("Am7"), f) == "avoid"              # Bb = b9 in A phrygian


# --- hand-worked approach cases (common practice of jazz ensemble arranging) --------
# lead notes (MIDI) on eighths from beat 1, framework, key, techniques allowed ->
# expected chord under the note at `at`, and its technique.
CASES = [
    # the avoid 11 (Bb) over F6 on the off-beat, resolving to A (3)
    ([69, 70, 69, 67], "F6", "F major", ("chromatic",), 1, "Gb6", "chromatic"),
    ([69, 70, 69, 67], "F6", "F major", ("dominant",), 1, "C7", "dominant"),
    ([69, 70, 69, 67], "F6", "F major", ("diminished",), 1, "Edim7", "diminished"),
    ([69, 70, 69, 67], "F6", "F major", ("tritone",), 1, "Gb7", "tritone"),
    ([69, 70, 69, 67], "F6", "F major", ("diatonic",), 1, "Gm7", "diatonic"),
    # preference order: the first technique that holds the lead wins
    ([69, 70, 69, 67], "F6", "F major", ("diminished", "chromatic"), 1, "Edim7", "diminished"),
    # B natural over F6 is no scale tone; E6 a half step below holds it as 5
    ([69, 71, 69, 67], "F6", "F major", ("chromatic",), 1, "E6", "chromatic"),
    # leading into the next bar's Gm7: Eb on the last eighth is the b9 of D7, V of ii
    ([65, 67, 69, 72, 74, 72, 69, 75, 67], "F6 | Gm7", "F major", ("dominant",), 7, "D7b9",
     "dominant"),
    ([65, 67, 69, 72, 74, 72, 69, 68, 67], "F6 | Gm7", "F major", ("chromatic",), 7, "Abm7",
     "chromatic"),
    # Eb over Bbmaj7 in Bb major: a half step under the 3 is no tension; F7 holds it as b7
    ([74, 75, 74, 72], "Bbmaj7", "Bb major", ("chromatic", "dominant"), 1, "Bmaj7",
     "chromatic"),
    ([74, 75, 74, 72], "Bbmaj7", "Bb major", ("dominant",), 1, "F7", "dominant"),
]


@pytest.mark.parametrize(("lead", "framework", "key", "techniques", "at", "chord", "tech"), CASES)
def test_hand_worked_cases(lead, framework, key, techniques, at, chord, tech) -> None:
    h = harmonize(make_line(lead), parse_key(key), opts(framework, techniques))
    ev = h.events[at]
    assert (ev.chord.symbol, ev.technique, ev.role) == (chord, tech, "approach")
    # the notes around it keep the framework chord
    assert h.events[at - 1].role == "framework"


def test_repeated_lead_keeps_its_chord() -> None:
    h = harmonize(make_line([69, 70, 70, 69]), parse_key("F major"), opts("F6"))
    assert h.events[1].chord == h.events[2].chord and h.events[2].role == "approach"
    assert "repeated" in h.events[2].why


def test_strong_beat_avoid_note_gets_diatonic_substitute() -> None:
    # Bb on beat 1 over F6, resolving inside the bar: Bbmaj7 shares D F A (common practice)
    line = make_line([70, 69, 67, 65], [Fraction(0), Fraction(2), Fraction(3), Fraction(7, 2)])
    h = harmonize(line, parse_key("F major"), opts("F6"))
    ev = h.events[0]
    assert ev.technique == "diatonic substitute" and ev.chord.symbol == "Bbmaj7"
    assert classify(70, ev.chord, parse_key("F major")) in ("chord tone", "tension")


def test_warnings_where_no_technique_serves() -> None:
    h = harmonize(make_line([69, 70, 69, 67]), parse_key("F major"), opts("F6", ()))
    assert h.events[1].chord.symbol == "F6" and h.events[1].role == "framework"
    assert [(k, i) for k, i, _m in h.warnings] == [("unserved-lead", 1)]
    assert "bar 1" in h.warnings[0][2] and "Bb" in h.warnings[0][2]
    # a strong-beat non-chord tone no diatonic chord holds: kept, with a warning
    line = make_line([71, 69, 67, 65], [Fraction(0), Fraction(2), Fraction(3), Fraction(7, 2)])
    h = harmonize(line, parse_key("F major"), opts("F6"))
    assert h.events[0].chord.symbol == "F6" and h.warnings[0][0] == "avoid-note"


def test_key_change_moves_diatonic_approach() -> None:
    # bar 2 in Ab major: the diatonic chord a step above Abmaj7 is Bbm7 (holds Db as b3)
    lead = [65, 67, 69, 72, 74, 72, 69, 65, 72, 73, 72, 70]
    keys = ((2, parse_key("Ab major")),)
    h = harmonize(make_line(lead, bars=2), parse_key("F major"), opts("F6 | Abmaj7", ("diatonic",), keys))
    assert h.events[9].chord.symbol == "Bbm7" and h.events[9].technique == "diatonic"
    assert h.events[9].lead_name == "Db"


@pytest.mark.parametrize("seed", range(40))
def test_approach_properties(seed: int) -> None:
    rnd = random.Random(seed)
    key = parse_key(rnd.choice(["F major", "Bb major", "D minor", "G dorian", "Eb major",
                                "A harmonic minor", "E mixolydian"]))
    pitches = [rnd.randint(60, 79) for _ in range(24)]
    fw = " | ".join(rnd.choice(["F6", "Gm7 C7", "Bbmaj7", "Em7b5 A7", "Dm7:3 G7:1", "Ebmaj7",
                                "Abm7 Db7", "Cm(maj7)", "Bb7sus4", "F#dim7"]) for _ in range(3))
    techs = tuple(rnd.sample(["chromatic", "diatonic", "dominant", "diminished", "tritone"], 3))
    h = harmonize(make_line(pitches), key, opts(fw, techs))
    for ev in h.events:
        if ev.role != "approach":
            continue
        # every approach chord holds its lead as chord tone or available tension
        diatonic = ev.technique == "diatonic"
        assert classify(ev.note.pitch, ev.chord, key if diatonic else None) in ("chord tone", "tension")
        t = ev.target
        assert t is not None and ev.technique in techs
        if ev.technique == "chromatic":          # the target's quality a half step away
            assert ev.chord.quality == t.quality and (ev.chord.root - t.root) % 12 in (1, 11)
        if ev.technique == "dominant":           # root a fifth above the target root
            assert ev.chord.is_dominant or ev.chord.quality == "7sus4"
            assert (ev.chord.root - t.root) % 12 == 7
        if ev.technique == "tritone":            # the tritone substitute: bII7
            assert ev.chord.is_dominant and (ev.chord.root - t.root) % 12 == 1
        if ev.technique == "diminished":
            assert ev.chord.quality == "dim7"
        if diatonic:
            assert set(ev.chord.pitch_classes) <= set(key.scale)


# --- through the CLI -------------------------------------------------------------------

def _project(tmp_path: Path, harmony: str, key: str = "F major", meter: str = "4/4") -> Path:
    text = BASIC.replace('framework = "F6 | F6 | Gm7 C7 | F6"', harmony)
    text = text.replace('key = "F major"', f'key = "{key}"').replace('meter = "4/4"', f'meter = "{meter}"')
    return write_project(tmp_path, text.replace('"A4 G4 C5 Bb4"', '"A3 G3 C4 Bb3"'))


BAD = [
    ('framework = "F6 | Fmaj8 | Gm7 C7"', "F major", "4/4", ["'Fmaj8'", "bar 2", "Fmaj7"]),
    ('framework = "F6 | Gm7 C7 Am7 D7 G7"', "F major", "4/4", ["bar 2", "does not divide", "4/4"]),
    ('framework = "F6 | Gm7:3 C7:3"', "F major", "4/4", ["bar 2", "does not divide"]),
    ('framework = "F6"\napproach = ["chromatic", "sideslip"]', "F major", "4/4",
     ["'sideslip'", "approach", "tritone"]),
    ('framework = "F6"', "F bebop", "4/4", ["'bebop'", "key", "dorian"]),
    ('framework = "F6"\nkeys = ["Ab bebop from bar 3"]', "F major", "4/4", ["'bebop'", "keys"]),
    ('preset = "rhythm-changes"', "F major", "4/4", ["'rhythm-changes'", "two-five-home"]),
    ('framework = "F6 || Gm7"', "F major", "4/4", ["bar 2", "empty"]),
]


@pytest.mark.parametrize(("harmony", "key", "meter", "words"), BAD)
def test_bad_input_through_the_cli(tmp_path: Path, harmony: str, key: str, meter: str,
                                   words: list[str]) -> None:
    proj = _project(tmp_path, harmony, key, meter)
    out = tmp_path / "out"
    r = run_cli("build", str(proj), "-o", str(out))
    assert r.exit_code == 2
    msg = r.output.strip().splitlines()[-1]
    assert msg.startswith("arrange: error:") and "Traceback" not in r.output
    for w in words:
        assert w in msg, (w, msg)
    assert snapshot(out) == {}


RICH = ('framework = "Ebm9 | Ab13 | Dbmaj9#11 | C7b9/E | Fm7b5 Bb7#9 | Ebm(maj7) | Gb6/9 | Cdim7"\n'
        'approach = ["dominant", "tritone", "chromatic"]')


def test_music21_rereads_our_harmony_elements(tmp_path: Path, musicxml_schema) -> None:
    from music21 import converter, harmony

    proj = _project(tmp_path, RICH, key="Eb minor")
    out = tmp_path / "out"
    r = run_cli("build", str(proj), "-o", str(out), "--formats", "musicxml,report")
    assert r.exit_code == 0, r.output
    report = json.loads((out / "test-cue.report.json").read_text())
    musicxml_schema.validate(str(out / "test-cue.musicxml"))               # MusicXML 4.0 XSD
    score = converter.parse(str(out / "test-cue.musicxml"))               # music21 as reader
    symbols = list(score.parts[0].flatten().getElementsByClass(harmony.ChordSymbol))
    expected = []
    for e in report["events"]:
        if not expected or expected[-1] != e["chord"]:
            expected.append(e["chord"])
    assert len(symbols) == len(expected)
    for cs, sym in zip(symbols, expected, strict=True):
        ours = parse_chord(sym)
        want = set(ours.pitch_classes) | ({ours.bass} if ours.bass is not None else set())
        assert {p.pitchClass for p in cs.pitches} == want, sym
        assert cs.root().pitchClass == ours.root
        if ours.bass is not None:
            assert cs.bass().pitchClass == ours.bass
    # the printed text is our canonical symbol (the <kind text> attribute)
    import re
    xml = (out / "test-cue.musicxml").read_text()
    printed = [re.search(r'<root-step>([A-G])</root-step>(?:\s*<root-alter>(-?\d)</root-alter>)?', h)
               for h in re.findall(r"<harmony>.*?</harmony>", xml, re.S)]
    texts = re.findall(r'<kind text="([^"]*)"', xml)
    assert [parse_chord(sym).quality for sym in expected] == texts
    assert len(printed) == len(expected)
    kinds = {e["technique"] for e in report["events"]}
    assert kinds & {"dominant", "tritone", "chromatic"}
    assert all(e["why"] for e in report["events"])


def test_report_events_carry_harmony_fields(tmp_path: Path) -> None:
    proj = _project(tmp_path, 'framework = "F6 | Gm7:3 C7:1"\nkeys = ["Ab major from bar 3"]')
    out = tmp_path / "out"
    r = run_cli("build", str(proj), "-o", str(out), "--formats", "report")
    assert r.exit_code == 0, r.output
    report = json.loads((out / "test-cue.report.json").read_text())
    for e in report["events"]:
        assert e["role"] in ("framework", "approach")
        assert e["lead_class"] in ("chord tone", "tension", "avoid", "non-chord")
        parse_chord(e["chord"])
        if e["role"] == "approach":
            assert e["technique"] in ("chromatic", "diatonic", "dominant", "diminished", "tritone")


def test_harmony_errors_are_arrange_errors() -> None:
    with pytest.raises(ArrangeError):
        parse_framework(42, where="x")


def test_modulation_follows_the_chain(tmp_path: Path) -> None:
    """modulate = "by-statement": each P statement's transposition moves key and framework."""
    from music21 import converter, key

    text = BASIC.replace('overlap = 2', 'overlap = 1').replace(
        'framework = "F6 | F6 | Gm7 C7 | F6"', 'framework = "F6 | Gm7 C7"\nmodulate = "by-statement"')
    proj = write_project(tmp_path, text.replace('"A4 G4 C5 Bb4"', '"A3 G3 C4 Bb3"'))
    out = tmp_path / "out"
    assert run_cli("build", str(proj), "-o", str(out), "--formats", "musicxml,report").exit_code == 0
    report = json.loads((out / "test-cue.report.json").read_text())
    chain = report["chain"]
    t = chain["statements"][2]["transposition"]            # statement 3 (P form)
    assert t == chain["transposition"] and t % 12
    first = report["keys"][0]
    moved = parse_key("F major").tonic + t
    assert parse_key(first["key"]).tonic == moved % 12
    bar = first["bar"]
    later = [fc for fc in report["framework"] if fc["bar"] >= bar]
    written = ["F6", "Gm7", "C7"]
    for fc in later:
        root = parse_chord(fc["chord"]).root
        assert any((parse_chord(w).root + t) % 12 == root for w in written)
    score = converter.parse(str(out / "test-cue.musicxml"))            # music21 as reader
    sigs = list(score.parts[0].flatten().getElementsByClass(key.KeySignature))
    assert len(sigs) == 2 and sigs[1].sharps == parse_key(first["key"]).fifths
    assert sigs[1].measureNumber == bar
