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
from conftest import BASIC, DEMOS, run_cli, snapshot, sounding_events, write_project

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


@pytest.fixture(scope="module")
def chromatic(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, dict]:
    """The demo with a chromatic motif: a line that rubs against the pad's chords, so the
    pad has to thin (the demo itself, its pushes followed, needs none)."""
    out = tmp_path_factory.mktemp("layers-chromatic")
    text = DEMO.read_text(encoding="utf-8").replace('motif = "C4 Eb4 D4 G4 F4"', 'motif = "C4 Db4 D4 Eb4 E4"')
    assert "C4 Db4" in text
    proj = write_project(out, text, "chromatic.toml")
    r = run_cli("build", str(proj), "-o", str(out))
    assert r.exit_code == 0, r.output
    return out, json.loads((out / "copper-coast-transition.report.json").read_text())


def _m21_figure(symbol: str) -> str:
    from arrange.writers.symbols import m21_figure

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
        assert len(n["pitches"]) == 4                       # one per part, null where it rests
        sounding = [p for p in n["pitches"] if p is not None]
        assert sounding == sorted(sounding, reverse=True)   # top to bottom
        assert sounding                                     # a chord left out is no note at all
        assert isinstance(n["why"], str) and (n["why"] or None not in n["pitches"])


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
    # rhythm "2": a half note from the start of each chord (common practice reading of a pad rhythm);
    # where the lead pushes a chord an eighth early (an anticipation), the pad's first value
    # starts at the push (common practice: a background moves with the band's pushes)
    pushes = {Fraction(e["onset"]) + Fraction(1, 2): Fraction(e["onset"])
              for e in report["events"] if e["anticipated"] and e["onset"] >= 0}
    allowed = {s + 2 * k for s, e in spans for k in range(int((e - s) / 2) + 1) if s + 2 * k < e}
    allowed = {pushes.get(t, t) for t in allowed} | allowed
    onsets = [Fraction(n["onset"]) for n in report["layers"][0]["notes"]]
    assert onsets and set(onsets) <= allowed
    assert {pushes.get(t, t) for t in changes} <= set(onsets)   # a chord change always starts a new chord
    # a pad voices the framework chord sounding at its onset (at a push: the chord it
    # pushes), never an approach chord
    pushed = {v: k for k, v in pushes.items()}
    for n in report["layers"][0]["notes"]:
        at = pushed.get(Fraction(n["onset"]), Fraction(n["onset"]))
        fc = [f for f in report["framework"] if f["onset"] <= at < f["onset"] + f["duration"]]
        assert [f["chord"] for f in fc] == [n["chord"]]
    for n in report["layers"][0]["notes"]:       # a push lengthens its chord's first value
        assert Fraction(n["duration"]) <= 2 + (Fraction(1, 2) if Fraction(n["onset"]) in pushed else 0)


def test_pad_tones_are_chord_tones_or_tensions(demo) -> None:
    _, report = demo
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
            assert p is None or p % 12 in tones | tensions, (n["chord"], p)
        # guide tones first (common practice): the third or the seventh always sounds;
        # one gives way only to avoid a clash with the lead section, or where there is no
        # room for it under the section
        guides = {cs.third.pitchClass, cs.seventh.pitchClass if cs.seventh else cs.third.pitchClass}
        played = {p % 12 for p in n["pitches"] if p is not None}
        lead = _lead_during(report, n)
        assert guides & played or not any(_room_for(g, n, report) for g in guides), n
        # a guide tone left out would rub (m2/m9, music21's interval) against a lead note
        # sounding during the chord, or finds no room under the section
        for g in guides - played:
            assert any(_rubs(g, q) for q in lead) or not _room_for(g, n, report), (n, g)


# lowest lower note of an interval between adjacent voices (semitones), a handbook table from
# memory (as tests/test_audit_pads.py); and the bass trombone's lowest practical note, Bb1 (from memory)
LOW_LIMITS = {1: 52, 2: 51, 3: 48, 4: 46, 5: 45, 6: 46, 7: 34, 8: 41, 9: 41, 10: 41, 11: 41,
              13: 40, 14: 39, 15: 36, 16: 34}
LOWEST = 34


def _room_for(pc: int, n: dict, report: dict) -> bool:
    """Whether pitch class ``pc`` could join pad chord ``n`` under the lead section: a part
    rests or two sound one pitch class, and some octave of ``pc`` below the lowest lead note
    sounding with the chord keeps every adjacent interval (the section's lowest note above
    the pad included) within the low-interval limits."""
    sounding = [p for p in n["pitches"] if p is not None]
    if len(sounding) == len(n["pitches"]) and len({p % 12 for p in sounding}) == len(sounding):
        return False                                   # every part plays its own tone
    start, end = n["onset"], n["onset"] + n["duration"]
    lows = {min(e["pitches"]) for e in sounding_events(report)
            if e["onset"] < end and e["onset"] + e["duration"] > start}
    for p in range(LOWEST + (pc - LOWEST) % 12, min(lows), 12):
        voices = sorted(set(sounding) | {p})
        ok = all(LOW_LIMITS.get(b - a, 0) <= a for a, b in zip(voices, voices[1:], strict=False))
        ok = ok and all(LOW_LIMITS.get(low - voices[-1], 0) <= voices[-1] for low in lows)
        if ok:
            return True
    return False


def _lead_during(report: dict, n: dict) -> set[int]:
    start, end = n["onset"], n["onset"] + n["duration"]
    return {q for e in sounding_events(report) if e["onset"] < end and e["onset"] + e["duration"] > start
            for q in e["pitches"]}


def _rubs(pc: int, lead: int) -> bool:
    """A pad pitch class ``pc`` voiced below the lead pitch ``lead`` forms a minor second
    or minor ninth (or compound): music21's interval as the reader."""
    from music21 import interval, pitch

    below = max(p for p in range(pc, lead, 12)) if pc < lead else None
    if below is None:
        return False
    return interval.Interval(pitch.Pitch(midi=below), pitch.Pitch(midi=lead)).chromatic.mod12 == 1


def test_pad_sits_below_the_lead_or_says_so(demo) -> None:
    _, report = demo
    flagged = {w["layer_note"] for w in report["warnings"] if w["kind"] == "layer-above-lead"}
    for i, n in enumerate(report["layers"][0]["notes"]):
        start, end = n["onset"], n["onset"] + n["duration"]
        lows = [min(e["pitches"]) for e in sounding_events(report)
                if e["onset"] < end and e["onset"] + e["duration"] > start]
        assert max(p for p in n["pitches"] if p is not None) < min(lows) or i in flagged


def test_pad_moves_smoothly(demo) -> None:
    _, report = demo
    notes = report["layers"][0]["notes"]
    # the lowest voice states each chord's root (common practice), so it moves with the
    # roots, by leap: the upper voices are judged
    moves = [abs(a - b) for x, y in zip(notes, notes[1:], strict=False) for a, b in
             zip(x["pitches"][:-1], y["pitches"][:-1], strict=True) if a is not None and b is not None]
    # inner voices mostly by step or common tone (common practice): most moves <= 2 semitones;
    # under the trumpets' low voices a pad's voices sometimes leap to stay under them within
    # the low-interval limits (tests/test_audit_pads.py), so two moves in three, none past a sixth
    assert moves and sum(m <= 2 for m in moves) / len(moves) >= 2 / 3 and max(moves) <= 9


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
            for e in sounding_events(report):
                if not (e["onset"] < end and e["onset"] + e["duration"] > start):
                    continue
                for j, a in enumerate(n["pitches"]):
                    if a is None:                       # the part rests
                        continue
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
    from arrange.voicing.voicer import VoicedEvent

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
    # nothing is clash free here: every part that sounds is reported (the pad thins to
    # a guide tone rather than add clashes, so some parts may rest)
    names = [p.name for p in layer.layer.section.parts]
    sounding = {names[j] for n in layer.notes for j, p in enumerate(n.pitches) if p is not None}
    assert {f.part for f in m9} == sounding and sounding
    for f in m9:
        assert f.other_part and f.other_part in f.message and f.part in f.message
    # the known pair: each pad pitch p against the cluster note a minor ninth (or compound) above
    from music21 import interval, pitch

    n = layer.notes[0]
    for p in n.sounding:
        above = next(c for c in cluster if (c - p) % 12 == 1)
        ivl = interval.Interval(pitch.Pitch(midi=p), pitch.Pitch(midi=above))   # music21
        assert ivl.chromatic.mod12 == 1 and ivl.semitones >= 13        # a minor ninth or compound
        assert any(f.note == 0 and pitch_name_of(p) in f.message for f in m9)


def pitch_name_of(p: int) -> str:
    from arrange.theory.pitch import pitch_name

    return pitch_name(p)


def test_score_with_layers_validates_and_rereads(demo, musicxml_schema) -> None:
    from music21 import converter, layout

    out, report = demo
    path = out / "copper-coast-transition.musicxml"
    musicxml_schema.validate(str(path))                        # MusicXML 4.0 XSD
    score = converter.parse(str(path))                          # music21 re-reads it
    lead = [p["name"] for p in report["section"]["parts"]]
    background = [p["name"] for la in report["layers"] for p in la["parts"]]
    rhythm = [p["name"] for p in report.get("rhythm_section", {}).get("parts", [])]
    assert [p.partName for p in score.parts] == lead + background + rhythm   # rhythm parts last
    groups = [[p.partName for p in g.getSpannedElements()]
              for g in score.getElementsByClass(layout.StaffGroup)]
    assert lead in groups and background in groups and (not rhythm or rhythm in groups)
    for g in score.getElementsByClass(layout.StaffGroup):
        assert g.symbol == "bracket"
    layer = report["layers"][0]
    for k in range(len(layer["parts"])):
        part = score.parts[len(lead) + k].toSoundingPitch()
        notes = [n for n in part.flatten().notes
                 if not (n.tie is not None and n.tie.type in ("stop", "continue"))]
        played = [x for x in layer["notes"] if x["pitches"][k] is not None]
        assert [n.pitch.midi for n in notes] == [x["pitches"][k] for x in played]
        pickup = float(report["rhythm"]["pickup"])
        assert [float(n.getOffsetInHierarchy(part)) for n in notes] == \
            [float(x["onset"]) + pickup for x in played]


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
        assert [m.note for m in ons] == [x["pitches"][k] for x in layer["notes"] if x["pitches"][k] is not None]
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


def _recount(report: dict) -> list[tuple[int, str, str, int, int]]:
    """Every minor second / minor ninth (or compound) between a sounding pad note and a
    lead-section note sounding with it, counted once per pad chord and pair of notes;
    music21's ``interval.Interval`` as the reader, the b9 over a dominant's root kept."""
    from music21 import interval, pitch

    lead_parts = [p["name"] for p in report["section"]["parts"]]
    found = set()
    for layer in report["layers"]:
        names = [p["name"] for p in layer["parts"]]
        for i, n in enumerate(layer["notes"]):
            start, end = n["onset"], n["onset"] + n["duration"]
            for e in sounding_events(report):
                if not (e["onset"] < end and e["onset"] + e["duration"] > start):
                    continue
                for j, a in enumerate(n["pitches"]):
                    for q, b in enumerate(e["pitches"]):
                        if a is None:
                            continue
                        low, high = sorted((a, b))
                        ivl = interval.Interval(pitch.Pitch(midi=low), pitch.Pitch(midi=high))
                        if ivl.chromatic.mod12 != 1:
                            continue
                        if _is_dominant(n["chord"]) and low == a and a % 12 == _chord_root(n["chord"]) \
                                and ivl.semitones >= 13:
                            continue
                        found.add((i, names[j], lead_parts[q], a, b))
    return sorted(found)


def test_demo_thins_rather_than_clashes(demo) -> None:
    """The demo's chromatic trumpet line over a trombone pad: the pad is thinned where its
    tones would rub, so few clashes remain (27 before thinning), each naming both parts,
    and the report's clashes are exactly an independent recount (music21)."""
    _, report = demo
    clashes = [w for w in report["warnings"] if w["kind"] in ("clash-minor-second", "clash-minor-ninth")]
    assert len(clashes) <= 10
    for w in clashes:
        assert w["part"] and w["other_part"] and w["part"] in w["message"] and w["other_part"] in w["message"]
    assert len(clashes) == len(_recount(report))
    assert {(w["layer_note"], w["part"], w["other_part"]) for w in clashes} == \
        {(i, a, b) for i, a, b, _x, _y in _recount(report)}
    # each remaining clash is one the pad could not avoid while keeping a guide tone and its
    # root at the bottom (common practice: a background states the chord from its root):
    # the clashing part holds the root at the bottom, or both guide tones (music21's third
    # and seventh) rub against the lead during that chord
    notes = report["layers"][0]["notes"]
    parts = [p["name"] for p in report["layers"][0]["parts"]]
    from music21 import harmony

    for w in clashes:
        n = notes[w["layer_note"]]
        cs = harmony.ChordSymbol(_m21_figure(n["chord"]))
        pitch = n["pitches"][parts.index(w["part"])]
        if pitch == min(p for p in n["pitches"] if p is not None) and pitch % 12 == cs.bass().pitchClass:
            continue
        lead = _lead_during(report, n)
        for g in (cs.third.pitchClass, cs.seventh.pitchClass):
            assert any(_rubs(g, q) for q in lead), (n, g)


def test_thinned_chords_keep_a_guide_tone_and_say_why(chromatic) -> None:
    """A thinned pad chord (a part resting or fewer tones than parts) still holds the third
    or seventh of its framework chord (music21 ChordSymbol) unless each of them would rub
    against a lead note sounding with it or finds no room under the section (then the root
    states the chord), and its ``why`` names a left-out tone and the lead note it would rub
    against (common practice: thin a pad rather than let it rub)."""
    from music21 import harmony

    _, report = chromatic
    thinned = [n for n in report["layers"][0]["notes"] if n["why"]]
    assert thinned                                    # the chromatic line asks for some
    for n in thinned:
        cs = harmony.ChordSymbol(_m21_figure(n["chord"]))
        played = {p % 12 for p in n["pitches"] if p is not None}
        # the guide tones: third, and seventh (a sixth chord: its sixth, music21's chord step 6)
        guide = cs.seventh or cs.getChordStep(6) or cs.third
        guides = {cs.third.pitchClass, guide.pitchClass}
        lead = _lead_during(report, n)
        kept_out = all(any(_rubs(g, q) for q in lead) or not _room_for(g, n, report) for g in guides)
        assert played & guides or (kept_out and cs.bass().pitchClass in played), n
        assert n["why"].startswith("thinned: ") and "clashes with the lead's" in n["why"]
        for k, p in enumerate(n["pitches"]):
            if p is None:
                assert report["layers"][0]["parts"][k]["name"] in n["why"]


def test_resting_pad_part_reenters_with_a_dynamic(chromatic) -> None:
    """A pad part that rests through a thinned chord shows a written rest, and a dynamic
    again where it comes back in after a bar or more of rest, none after a shorter one
    (common practice of part writing: a dynamic holds until a new one), read with music21."""
    from music21 import converter, dynamics, note

    out, report = chromatic
    score = converter.parse(str(out / "copper-coast-transition.musicxml"))
    n_lead = len(report["section"]["parts"])
    layer = report["layers"][0]
    checked = 0
    for k in range(len(layer["parts"])):
        if all(x["pitches"][k] is not None for x in layer["notes"]):
            continue
        flat = score.parts[n_lead + k].flatten()
        marks = {float(d.offset) for d in flat.getElementsByClass(dynamics.Dynamic)}
        items = list(flat.notesAndRests)
        assert any(isinstance(r, note.Rest) for r in items)
        rest = 0.0
        first = next(x for x in items if isinstance(x, note.Note))
        assert float(first.offset) in marks          # the part's first note is its entrance
        for prev, cur in zip(items, items[1:], strict=False):
            rest = rest + float(prev.quarterLength) if isinstance(prev, note.Rest) else 0.0
            if isinstance(prev, note.Rest) and isinstance(cur, note.Note) and cur is not first:
                bar = 4.0                                          # the demo is in 4/4
                assert (float(cur.offset) in marks) == (rest >= bar), (layer["parts"][k]["name"], cur.offset)
                checked += 1
    assert checked


def test_clash_free_voicing_is_found(tmp_path: Path) -> None:
    """A constructed lead: over each pad chord a cluster that rubs (a minor ninth above)
    against every chord tone and tension but the third.  A clash-free pad exists (the
    third, doubled or alone), so none is reported; every pad chord holds its third
    (music21 ChordSymbol)."""
    from music21 import harmony

    from arrange.build import run_layers, run_pipeline
    from arrange.project import project_from_data
    from arrange.voicing.voicer import VoicedEvent

    section = 'name = "violins"\nparts = [' + ", ".join(['"violin"'] * 12) + ']\nvoicing = "unison"'
    data = tomllib.loads(BASIC.replace('name = "trombones-4"\nvoicing = "close"', section)
                         .replace('"A4 G4 C5 Bb4"', '"A5 G5 C6 Bb5"') + PAD)
    project = project_from_data(data, "constructed.toml")
    voiced = run_pipeline(project)
    thirds = {harmony.ChordSymbol(_m21_figure(fc.chord.symbol)).third.pitchClass
              for fc in voiced.harmonized.framework}
    rub = [pc for pc in range(12) if (pc - 1) % 12 not in thirds]      # never a half step above a third
    cluster = tuple(sorted((84 + pc for pc in rub), reverse=True))
    cluster = cluster + (cluster[-1],) * (12 - len(cluster))
    events = tuple(dataclasses.replace(ve, pitches=cluster) if isinstance(ve, VoicedEvent) else ve
                   for ve in voiced.events)
    voiced = dataclasses.replace(voiced, events=events)
    (layer,) = run_layers(project, voiced)
    assert not [f for f in layer.findings if f.kind.startswith("clash-")]
    for n in layer.notes:
        cs = harmony.ChordSymbol(_m21_figure(n.chord.symbol))
        assert cs.third.pitchClass in {p % 12 for p in n.sounding}
        assert n.why.startswith("thinned: ")


def test_parts_include_the_layer_parts(demo, musicxml_schema) -> None:
    """--parts (the demo asks for parts) writes one printable file per layer part as well:
    each validates against the MusicXML 4.0 XSD, holds one part, and music21 reads back
    its sounding pitches as report.json's layer notes, with rehearsal letters and the
    tempo a player needs (common practice of part preparation)."""
    from music21 import converter, expressions, tempo

    out, report = demo
    lead_n = len(report["section"]["parts"])
    layer_parts = [p for la in report["layers"] for p in la["parts"]]
    files = sorted((out / "copper-coast-transition-parts").glob("part*.musicxml"))
    rhythm = report.get("rhythm_section", {}).get("parts", [])      # written rhythm parts come last
    assert len(files) == lead_n + len(layer_parts) + len(rhythm)
    notes = report["layers"][0]["notes"]
    for j, part in enumerate(layer_parts):
        f = files[lead_n + j]
        musicxml_schema.validate(str(f))                                # MusicXML 4.0 XSD
        score = converter.parse(str(f))                                 # music21 as reader
        assert len(score.parts) == 1 and score.parts[0].partName == part["name"]
        flat = score.parts[0].toSoundingPitch().flatten()
        heard = [n.pitch.midi for n in flat.notes
                 if not (n.tie is not None and n.tie.type in ("stop", "continue"))]
        expected = [n["pitches"][j] for n in notes if n["pitches"][j] is not None]
        assert heard == expected
        assert flat.getElementsByClass(expressions.RehearsalMark)
        assert flat.getElementsByClass(tempo.MetronomeMark)


def test_sounding_scan_by_bisection_equals_the_plain_scan() -> None:
    """The layer stage finds the lead notes under a layer chord by bisection; a plain scan
    of every lead note (the definition of overlap) is the reference, for spans that start
    before, inside, between and after the notes of a demo."""
    from arrange.build import run_pipeline
    from arrange.project import load_project
    from arrange.voicing.layers import _sounding, _sounding_index

    voiced = run_pipeline(load_project(DEMOS / "copper-coast-transition.toml"))
    index = _sounding_index(voiced)
    last = max(ve.event.note.onset + ve.event.note.duration for ve in voiced.events)
    spans = [(Fraction(a, 4), Fraction(d, 4)) for a in range(-4, int(last * 4) + 8, 3) for d in (1, 2, 5, 16)]
    for onset, dur in spans:
        plain = []
        for i, ve in enumerate(voiced.events):
            n = ve.event.note
            lo, hi = max(onset, n.onset), min(onset + dur, n.onset + n.duration)
            if hi > lo:
                plain.append((i, float((hi - lo) / dur), ve.pitches))
        assert _sounding(voiced, onset, dur, index) == plain, (onset, dur)
