"""Approach chords resolve into the chord that follows them; one spelling per event.

References: music21's ``TimeSignature.getAccentWeight`` for the metric strength of a
position (a general-purpose library, outside the project); music21 as the reader of
the MusicXML we write.  That an approach chord moves into the chord it is named for,
falls no stronger than it, and that the symbols do not flip between framework and
approach chord on neighbouring notes is common practice of jazz ensemble writing.
"""
from __future__ import annotations

import json
from fractions import Fraction
from pathlib import Path

import pytest
from conftest import in_report_order, run_cli, write_project
from test_harmony import make_line, opts

from arrange.harmony.approach import TECHNIQUES
from arrange.harmony.harmonizer import harmonize
from arrange.theory.keys import parse_key
from arrange.theory.spelling import direction_of, m21_name, spell_pc

DEMOS = sorted((Path(__file__).resolve().parents[1] / "demo_projects").glob("*.toml"))


def _accent(onset: Fraction, anticipated: bool, meter: str) -> float:
    """music21's accent weight of a position (an anticipation counts as the downbeat
    it pushes, common practice of Latin writing)."""
    from music21 import meter as m21meter

    ts = m21meter.TimeSignature(meter)
    bar = Fraction(ts.barDuration.quarterLength)
    pos = (onset + (Fraction(1, 2) if anticipated else 0)) % bar
    return ts.getAccentWeight(float(pos), permitMeterModulus=True)


def _check_resolutions(events: list[dict], meter: str) -> None:
    """Every approach chord is followed by the chord it names as its target, and the
    framework chord its chain reaches sits no weaker (music21's accent weight)."""
    for k, e in enumerate(events):
        if e["role"] != "approach":
            continue
        nxt = next((f for f in events[k + 1:] if f["chord"] != e["chord"]), None)
        assert nxt is not None, f"approach {e['chord']} at event {k} never resolves"
        assert nxt["chord"] == e["target"], (k, e["chord"], e["target"], nxt["chord"])
        first = k
        while first > 0 and events[first - 1]["role"] == "approach":
            first -= 1
        end = next(f for f in events[k + 1:] if f["role"] == "framework")
        assert _accent(end["onset"], end["anticipated"], meter) >= \
            _accent(events[first]["onset"], events[first]["anticipated"], meter), (k, e)


def _no_flip_flop(events: list[dict]) -> None:
    """No approach X, framework Y, approach X on three neighbouring notes (common practice:
    a run of approach tones before one target gets one coherent approach sequence)."""
    for a, b, c in zip(events, events[1:], events[2:], strict=False):
        assert not (a["role"] == "approach" and b["role"] == "framework" and
                    c["role"] == "approach" and a["chord"] == c["chord"] != b["chord"]), (a, b, c)


def _as_dicts(h) -> list[dict]:  # noqa: ANN001
    return [{"chord": e.chord.symbol, "role": e.role, "target": e.target.symbol if e.target else None,
             "onset": e.note.onset, "anticipated": e.note.anticipated, "why": e.why,
             "lead_name": e.lead_name, "pitch": e.note.pitch} for e in h.events]


# a run of chromatic lead notes before Em7 in D dorian, with a strong-beat one inside
# (hand-worked: the case where the symbols used to flip Dm7 / D#m7 every eighth)
RUN = ([62, 65, 64, 68, 71, 70, 75, 73, 66, 65, 68, 67],
       [Fraction(x) for x in ("0", "1/2", "1", "4", "9/2", "5", "6", "13/2", "15/2", "8", "17/2", "9")])


def test_hand_worked_run_resolves_into_what_follows() -> None:
    h = harmonize(make_line(*RUN), parse_key("D dorian"), opts("Dm7 | Dm7 | Em7 A7", TECHNIQUES))
    ev = _as_dicts(h)
    _check_resolutions(ev, "4/4")
    _no_flip_flop(ev)
    approaches = [e for e in ev if e["role"] == "approach"]
    assert len(approaches) >= 4
    # a chromatic line of dominants down to the bar line (common practice): A7 is held
    # over the notes it holds, Ab7 moves into G7 on the downbeat
    assert [e["chord"] for e in ev[4:9]] == ["A7", "A7", "A7", "A7", "Ab7"]
    assert ev[8]["target"] == ev[9]["chord"] == "G7"


def test_repeated_lead_keeps_its_chord_inside_a_run() -> None:
    pitches = [62, 63, 63, 64]     # D, then Eb twice before E over C7: both Eb take one chord
    h = harmonize(make_line(pitches), parse_key("C major"), opts("C7", TECHNIQUES))
    assert h.events[1].chord == h.events[2].chord
    assert "repeated" in h.events[2].why


@pytest.mark.parametrize("motif", ["D4 F4 E4 A4 G4", "C4 Eb4 D4 G4 F4", "A4 G4 C5 Bb4"])
def test_chain_runs_resolve_end_to_end(tmp_path: Path, motif: str) -> None:
    # static frameworks under chromatic chains (the old night-ferry setting among them)
    text = f'''title = "Run"
tempo = 144
meter = "4/4"
key = "D dorian"

[chain]
motif = "{motif}"
statements = 8
overlap = 2
lead_range = ["C4", "F5"]

[rhythm]
groove = "swing"

[harmony]
framework = "Dm7 | G7 | Dm7 | Em7 A7 | Dm7 | G7 | Dm7 | Dm7"

[section]
name = "saxes-5"

[output]
formats = ["report"]
'''
    res = run_cli("build", str(write_project(tmp_path, text)), "-o", str(tmp_path / "out"))
    assert res.exit_code == 0, res.output
    data = json.loads((tmp_path / "out" / "run.report.json").read_text())
    events = [dict(e, onset=Fraction(e["onset"]).limit_denominator(96)) for e in data["events"]]
    assert any(e["role"] == "approach" for e in events)
    _check_resolutions(events, "4/4")
    _no_flip_flop(events)


def _concert(demo: Path, folder: Path) -> Path:
    text = demo.read_text(encoding="utf-8").replace("[output]\n", "[output]\nconcert_score = true\n", 1)
    text = text.replace('"preview"', '"report"').replace('"midi", ', "")
    for data in demo.parent.glob("*.musicxml"):      # a melody file the demo reads
        (folder / data.name).write_bytes(data.read_bytes())
    return write_project(folder, text, demo.name)


@pytest.mark.parametrize("demo", DEMOS, ids=[d.stem for d in DEMOS])
def test_demo_spelling_agrees_in_report_why_and_score(tmp_path: Path, demo: Path) -> None:
    from music21 import converter, note

    res = run_cli("build", str(_concert(demo, tmp_path)), "-o", str(tmp_path / "out"))
    assert res.exit_code == 0, res.output
    slug = next((tmp_path / "out").glob("*.report.json")).name[:-len(".report.json")]
    data = json.loads((tmp_path / "out" / f"{slug}.report.json").read_text())
    score = converter.parse(str(tmp_path / "out" / f"{slug}.musicxml"))     # music21 as the reader
    lead = [n for n in in_report_order(score, data)[0].recurse().getElementsByClass(note.Note)
            if n.tie is None or n.tie.type == "start"]
    assert len(lead) == len(data["events"])
    for e, n in zip(data["events"], lead, strict=True):
        name = e["lead_name"]
        pc_name = name.rstrip("-0123456789")
        assert n.pitch.nameWithOctave == m21_name(name), (e["index"], name, n.pitch.nameWithOctave)
        words = e["why"].split()
        said = words[2] if words[0] == "repeated" else words[0]
        assert said == pc_name, (e["index"], name, e["why"])
    # and each demo's approach chords resolve into what follows them
    events = [dict(ev, onset=Fraction(ev["onset"]).limit_denominator(96)) for ev in data["events"]]
    _check_resolutions(events, data["meter"])
    _no_flip_flop(events)


@pytest.mark.parametrize(("prev", "pitch", "nxt", "chord", "key", "want"), [
    (59, 66, 64, "G7", "D dorian", "F#"),     # leapt to and from: the major seventh of G is F#
    (61, 63, 60, "C7", "F major", "Eb"),      # a falling line through the #9: the flat side
    (60, 63, 64, "C7", "F major", "D#"),      # a rising line through it: the sharp side
    (62, 61, 60, None, "C major", "Db"),      # falling chromatic passing note
    (60, 61, 62, None, "C major", "C#"),      # rising chromatic passing note
])
def test_spelling_follows_the_line(prev, pitch, nxt, chord, key, want) -> None:
    # common practice of engraving: chromatic passing notes by direction, others by degree
    from arrange.theory.chords import parse_chord

    way = direction_of(prev, pitch, nxt)
    assert spell_pc(pitch, parse_key(key), parse_chord(chord) if chord else None, way) == want
