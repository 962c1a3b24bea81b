"""Background layers ([[layers]]): pads and hits under the lead section.

References: music21 (harmony.ChordSymbol for chord tones, interval.Interval for
interval names, the MusicXML reader for part order and pitches), the MusicXML 4.0
XSD (``musicxml`` package), mido for the Standard MIDI File, and common practice
of ensemble arranging where noted.
"""
from __future__ import annotations

import dataclasses
import json
import tomllib
from fractions import Fraction
from pathlib import Path

import pytest
from conftest import BASIC, DEMOS, run_cli, snapshot, write_project

DEMO = DEMOS / "copper-coast-transition.toml"

PAD = '''
[[layers]]
section = "trombones-4"
role = "pad"
rhythm = "2"
dynamics = "p"
'''
TRUMPET_LEAD = BASIC.replace('name = "trombones-4"', 'name = "trumpets-4"')


@pytest.fixture(scope="module")
def demo(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, dict]:
    out = tmp_path_factory.mktemp("layers")
    r = run_cli("build", str(DEMO), "-o", str(out))
    assert r.exit_code == 0, r.output
    return out, json.loads((out / "copper-coast-transition.report.json").read_text())


def _m21_figure(symbol: str) -> str:
    from arrange.writers.musicxml import m21_figure

    return m21_figure(symbol)


def _chord_tones(symbol: str) -> set[int]:
    from music21 import harmony

    return {p.pitchClass for p in harmony.ChordSymbol(_m21_figure(symbol)).pitches}  # music21


def test_report_layers_shape(demo) -> None:
    _, report = demo
    (layer,) = report["layers"]
    assert layer["section"] == "trombones-4" and layer["role"] == "pad"
    assert [p["name"] for p in layer["parts"]] == ["Trombone 1", "Trombone 2", "Trombone 3",
                                                   "Bass Trombone"]
    for p in layer["parts"]:
        assert set(p) >= {"name", "instrument", "transposition", "range"}
    for n in layer["notes"]:
        assert len(n["pitches"]) == 4
        assert n["pitches"] == sorted(n["pitches"], reverse=True)   # top to bottom


def test_pad_changes_only_at_chord_changes_or_rhythm(demo) -> None:
    _, report = demo
    # the framework from the report: chord changes (a repeated chord is no change)
    changes, spans = [], []
    prev = None
    for fc in report["framework"]:
        if fc["chord"] != prev:
            changes.append(Fraction(fc["onset"]))
            spans.append([Fraction(fc["onset"]), Fraction(fc["onset"] + fc["duration"])])
        else:
            spans[-1][1] = Fraction(fc["onset"] + fc["duration"])
        prev = fc["chord"]
    # rhythm "2": a half note from the start of each chord (common practice reading of a pad rhythm)
    allowed = {s + 2 * k for s, e in spans for k in range(int((e - s) / 2) + 1) if s + 2 * k < e}
    onsets = [Fraction(n["onset"]) for n in report["layers"][0]["notes"]]
    assert onsets and set(onsets) <= allowed
    assert set(changes) <= set(onsets)          # a chord change always starts a new chord
    # a pad voices the framework chord sounding at its onset, never an approach chord
    for n in report["layers"][0]["notes"]:
        fc = [f for f in report["framework"] if f["onset"] <= n["onset"] < f["onset"] + f["duration"]]
        assert [f["chord"] for f in fc] == [n["chord"]]
    for n in report["layers"][0]["notes"]:
        assert Fraction(n["duration"]) <= 2


def test_pad_tones_are_chord_tones_or_tensions(demo) -> None:
    _, report = demo
    both = 0
    for n in report["layers"][0]["notes"]:
        from music21 import harmony

        cs = harmony.ChordSymbol(_m21_figure(n["chord"]))          # music21 as reference
        tones = {p.pitchClass for p in cs.pitches}
        root = cs.root().pitchClass
        # tensions lie a whole step above a chord tone (9, 11, 13, #11); a dominant also
        # takes b9, #9, b13 (common practice of jazz harmony, from memory)
        tensions = {(t + 2) % 12 for t in tones}
        if cs.isDominantSeventh():
            tensions |= {(root + 1) % 12, (root + 3) % 12, (root + 8) % 12}
        for p in n["pitches"]:
            assert p % 12 in tones | tensions, (n["chord"], p)
        # guide tones first (common practice): the third or the seventh always sounds;
        # one gives way only to avoid a clash with the lead section
        guides = {cs.third.pitchClass, cs.seventh.pitchClass if cs.seventh else cs.third.pitchClass}
        assert guides & {p % 12 for p in n["pitches"]}
        both += guides <= {p % 12 for p in n["pitches"]}
    assert both >= len(report["layers"][0]["notes"]) / 2


def test_pad_sits_below_the_lead_or_says_so(demo) -> None:
    _, report = demo
    flagged = {w["layer_note"] for w in report["warnings"] if w["kind"] == "layer-above-lead"}
    for i, n in enumerate(report["layers"][0]["notes"]):
        start, end = n["onset"], n["onset"] + n["duration"]
        lows = [min(e["pitches"]) for e in report["events"]
                if e["onset"] < end and e["onset"] + e["duration"] > start]
        assert max(n["pitches"]) < min(lows) or i in flagged


def test_pad_moves_smoothly(demo) -> None:
    _, report = demo
    notes = report["layers"][0]["notes"]
    moves = [abs(a - b) for x, y in zip(notes, notes[1:], strict=False) for a, b in
             zip(x["pitches"], y["pitches"], strict=True)]
    # inner voices mostly by step or common tone (common practice): most moves <= 2 semitones
    assert moves and sum(m <= 2 for m in moves) / len(moves) >= 0.75


def _clashes(report: dict) -> set[tuple[str, str, int, int]]:
    """Every background/lead pair sounding together a minor second or minor ninth
    apart (music21's interval names as reference); the b9 over a dominant's root kept."""
    from music21 import interval, pitch

    found = set()
    lead_parts = [p["name"] for p in report["section"]["parts"]]
    for layer in report["layers"]:
        names = [p["name"] for p in layer["parts"]]
        for n in layer["notes"]:
            start, end = n["onset"], n["onset"] + n["duration"]
            for e in report["events"]:
                if not (e["onset"] < end and e["onset"] + e["duration"] > start):
                    continue
                for j, a in enumerate(n["pitches"]):
                    for q, b in enumerate(e["pitches"]):
                        low, high = sorted((a, b))
                        ivl = interval.Interval(pitch.Pitch(midi=low), pitch.Pitch(midi=high))
                        if ivl.semitones % 12 != 1 or ivl.semitones == 0:   # m2, m9 and compounds
                            continue
                        cs_root = _chord_root(n["chord"])
                        if (_is_dominant(n["chord"]) and low % 12 == cs_root and ivl.semitones >= 13):
                            continue
                        found.add((names[j], lead_parts[q], a, b))
    return found


def _chord_root(symbol: str) -> int:
    from music21 import harmony

    return harmony.ChordSymbol(_m21_figure(symbol)).root().pitchClass


def _is_dominant(symbol: str) -> bool:
    from music21 import harmony

    return harmony.ChordSymbol(_m21_figure(symbol)).isDominantSeventh()


def test_demo_reports_every_clash_by_name(demo) -> None:
    _, report = demo
    reported = {(w["part"], w["other_part"]) for w in report["warnings"]
                if w["kind"] in ("clash-minor-second", "clash-minor-ninth")}
    expected = {(a, b) for a, b, _x, _y in _clashes(report)}
    assert reported == expected
    for w in report["warnings"]:
        if w["kind"].startswith("clash-"):
            assert w["part"] in w["message"] and w["other_part"] in w["message"]


def test_constructed_minor_ninth_is_reported(tmp_path: Path) -> None:
    """A lead section holding every pitch class in one octave (C5..B5) over a
    trombone pad: every pad note lies a minor ninth or compound below one of them."""
    from arrange.build import run_layers, run_pipeline
    from arrange.project import project_from_data
    from arrange.voicing import VoicedEvent

    section = 'name = "violins"\nparts = [' + ", ".join(['"violin"'] * 12) + ']\nvoicing = "unison"'
    data = tomllib.loads(BASIC.replace('name = "trombones-4"\nvoicing = "close"', section)
                         .replace('"A4 G4 C5 Bb4"', '"A5 G5 C6 Bb5"') + PAD)
    project = project_from_data(data, "constructed.toml")
    voiced = run_pipeline(project)
    cluster = tuple(range(83, 71, -1))          # B5 down to C5, top to bottom
    events = tuple(dataclasses.replace(ve, pitches=cluster) if isinstance(ve, VoicedEvent) else ve
                   for ve in voiced.events)
    voiced = dataclasses.replace(voiced, events=events)
    (layer,) = run_layers(project, voiced)
    m9 = [f for f in layer.findings if f.kind == "clash-minor-ninth"]
    assert {f.part for f in m9} == {"Trombone 1", "Trombone 2", "Trombone 3", "Bass Trombone"}
    for f in m9:
        assert f.other_part and f.other_part in f.message and f.part in f.message
    # the known pair: each pad pitch p against the cluster note a minor ninth (or compound) above
    from music21 import interval, pitch

    n = layer.notes[0]
    for p in n.pitches:
        above = next(c for c in cluster if (c - p) % 12 == 1)
        ivl = interval.Interval(pitch.Pitch(midi=p), pitch.Pitch(midi=above))   # music21
        assert ivl.chromatic.mod12 == 1 and ivl.semitones >= 13        # a minor ninth or compound
        assert any(f.note == 0 and pitch_name_of(p) in f.message for f in m9)


def pitch_name_of(p: int) -> str:
    from arrange.pitch import pitch_name

    return pitch_name(p)


def test_score_with_layers_validates_and_rereads(demo, musicxml_schema) -> None:
    from music21 import converter, layout

    out, report = demo
    path = out / "copper-coast-transition.musicxml"
    musicxml_schema.validate(str(path))                        # MusicXML 4.0 XSD
    score = converter.parse(str(path))                          # music21 re-reads it
    lead = [p["name"] for p in report["section"]["parts"]]
    background = [p["name"] for la in report["layers"] for p in la["parts"]]
    assert [p.partName for p in score.parts] == lead + background
    groups = [[p.partName for p in g.getSpannedElements()]
              for g in score.getElementsByClass(layout.StaffGroup)]
    assert lead in groups and background in groups
    for g in score.getElementsByClass(layout.StaffGroup):
        assert g.symbol == "bracket"
    layer = report["layers"][0]
    for k in range(len(layer["parts"])):
        part = score.parts[len(lead) + k].toSoundingPitch()
        notes = [n for n in part.flatten().notes
                 if not (n.tie is not None and n.tie.type in ("stop", "continue"))]
        assert [n.pitch.midi for n in notes] == [x["pitches"][k] for x in layer["notes"]]
        pickup = float(report["rhythm"]["pickup"])
        assert [float(n.getOffsetInHierarchy(part)) for n in notes] == \
            [float(x["onset"]) + pickup for x in layer["notes"]]


def test_midi_has_layer_tracks_at_the_layer_dynamic(demo) -> None:
    import mido

    out, report = demo
    mf = mido.MidiFile(str(out / "copper-coast-transition.mid"))            # Standard MIDI File via mido
    n_lead = len(report["section"]["parts"])
    layer = report["layers"][0]
    rhythm_section = 2 if any(t.name in ("Bass", "Drums") for t in mf.tracks) else 0
    assert len(mf.tracks) == 1 + n_lead + rhythm_section + len(layer["parts"])
    lead_vel = {m.velocity for m in mf.tracks[1] if m.type == "note_on" and m.velocity}
    for k, track in enumerate(mf.tracks[-len(layer["parts"]):]):
        assert track.name == layer["parts"][k]["name"]
        ons = [m for m in track if m.type == "note_on" and m.velocity > 0]
        assert [m.note for m in ons] == [x["pitches"][k] for x in layer["notes"]]
        # a p pad sits under the mf lead section (music21's dynamics volume scale as reference)
        from music21 import dynamics

        assert dynamics.Dynamic("p").volumeScalar < dynamics.Dynamic("mf").volumeScalar
        assert all(m.velocity < min(lead_vel) for m in ons)


def test_hits_fall_on_accents(tmp_path: Path) -> None:
    text = TRUMPET_LEAD.replace('[harmony]', '[rhythm]\ngroove = "swing"\n\n[harmony]') + '''
[[layers]]
section = "trombones-4"
role = "hits"
'''
    out = tmp_path / "out"
    r = run_cli("build", str(write_project(tmp_path, text)), "-o", str(out))
    assert r.exit_code == 0, r.output
    report = json.loads((out / "test-cue.report.json").read_text())
    hits = report["layers"][0]["notes"]
    accented = {e["onset"] for e in report["events"] if e.get("articulation") == "accent"}
    assert hits and {h["onset"] for h in hits} <= accented
    from music21 import converter

    score = converter.parse(str(out / "test-cue.musicxml"))
    hit_part = score.parts[4]
    for n in hit_part.flatten().notes:                          # music21 reads the accents back
        assert any(a.name == "accent" for a in n.articulations)


@pytest.mark.parametrize(("layer", "needle"), [
    ('section = "trombones-4"\ncolour = "red"', "colour"),
    ('section = "trombones-4"\nrole = "drone"', "drone"),
    ('section = "trombones-4"\nrhythm = "3"', "'3'"),
    ('section = "kazoos-9"', "kazoos-9"),
    ('section = "trombones-4"\ndynamics = "loud"', "loud"),
    ('section = { name = "low", parts = ["sousaphone"] }', "sousaphone"),
])
def test_bad_layers_exit_2_naming_it(tmp_path: Path, layer: str, needle: str) -> None:
    text = TRUMPET_LEAD + "\n[[layers]]\n" + layer + "\n"
    out = tmp_path / "out"
    r = run_cli("build", str(write_project(tmp_path, text)), "-o", str(out))
    assert r.exit_code == 2
    assert needle in r.output and "layers[1]" in r.output
    assert "Traceback" not in r.output
    assert snapshot(out) == {}


def test_inline_layer_section(tmp_path: Path) -> None:
    text = TRUMPET_LEAD + '''
[[layers]]
section = { name = "low-horns", parts = [{ name = "Horn 1", instrument = "horn" }, "horn", "trombone"] }
'''
    out = tmp_path / "out"
    r = run_cli("build", str(write_project(tmp_path, text)), "-o", str(out))
    assert r.exit_code == 0, r.output
    report = json.loads((out / "test-cue.report.json").read_text())
    assert report["layers"][0]["section"] == "low-horns"
    assert [p["instrument"] for p in report["layers"][0]["parts"]] == ["horn", "horn", "trombone"]
    assert "## Layers" in (out / "test-cue.report.md").read_text()
