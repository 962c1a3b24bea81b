"""The rhythm stage end to end through the CLI, checked by outside readers.

References: mido reads the Standard MIDI File; music21 reads the MusicXML; the
MusicXML 4.0 XSD (``musicxml`` package) validates it; the swing ratio is the
long share of a swung eighth pair (MusicXML 4.0 ``<swing>`` first/second).
"""
from __future__ import annotations

import json
import xml.etree.ElementTree as ET
from fractions import Fraction as F
from pathlib import Path

import pytest
from conftest import BASIC, run_cli, snapshot, write_project
from hypothesis import given
from hypothesis import strategies as st

from arrange.chain.core import build_chain
from arrange.errors import ArrangeError
from arrange.rhythm.cells import parse_cell
from arrange.rhythm.line import RhythmOptions, lay_rhythm
from arrange.rhythm.meter import METERS, parse_meter

TICKS = 480


def _project(tmp_path: Path, rhythm: str, meter: str = "4/4", name: str = "p.toml") -> Path:
    text = BASIC.replace('meter = "4/4"', f'meter = "{meter}"') + "\n[rhythm]\n" + rhythm + "\n"
    return write_project(tmp_path, text, name)


def _build(tmp_path: Path, rhythm: str, meter: str = "4/4") -> tuple[Path, dict]:
    out = tmp_path / "out"
    r = run_cli("build", str(_project(tmp_path, rhythm, meter)), "-o", str(out))
    assert r.exit_code == 0, r.output
    return out, json.loads((out / "test-cue.report.json").read_text())


def _lead_onsets(out: Path) -> list[int]:
    import mido

    mf = mido.MidiFile(str(out / "test-cue.mid"))     # Standard MIDI File, read by mido
    assert mf.ticks_per_beat == TICKS
    t, ons = 0, []
    for msg in mf.tracks[1]:
        t += msg.time
        if msg.type == "note_on" and msg.velocity > 0:
            ons.append(t)
    return ons


@pytest.mark.parametrize("rhythm, ratio", [
    ('groove = "swing"\nswing = 0.62\ncell = "8"', F(62, 100)),
    ('groove = "swing"\nswing = 0.7\ncell = "8 8 4"', F(7, 10)),
    ('groove = "shuffle"\ncell = "8"', F(2, 3)),        # shuffle: triplet feel, 2/3
    ('groove = "straight"\ncell = "8"', F(1, 2)),
])
def test_midi_swing_ratio(tmp_path: Path, rhythm: str, ratio: F) -> None:
    out, report = _build(tmp_path, rhythm)
    ons = _lead_onsets(out)
    assert len(ons) == len(report["events"])
    for e, tick in zip(report["events"], ons, strict=True):
        q = F(e["onset"]).limit_denominator(48)
        beat, pos = divmod(q, 1)
        if pos == 0:
            assert tick == beat * TICKS                      # on-beats on the beat
        elif pos == F(1, 2):
            expected = (beat + ratio) * TICKS                # off-beat at the ratio of the beat
            assert abs(tick - expected) <= (1 if ratio != F(1, 2) else 0)


def _measures(path: Path):
    from music21 import converter

    score = converter.parse(str(path))                       # music21 as the reader
    return score, score.parts[0].getElementsByClass("Measure")


def _tied_durations(part) -> list[F]:
    out: list[F] = []
    for n in part.recurse().notes:
        if n.isChord:     # chord symbols
            continue
        d = F(n.duration.quarterLength).limit_denominator(96)
        if n.tie is not None and n.tie.type in ("stop", "continue"):
            out[-1] += d
        else:
            out.append(d)
    return out


CASES = [
    ("4/4", 'groove = "swing"\ncell = "8 8 4 8 4 8"'),
    ("3/4", 'groove = "straight"\ncell = "4. 8 4"'),
    ("2/2", 'groove = "straight"\ncell = "2 4 4"\npickup = "4"'),
    ("2/4", 'groove = "swing"\ncell = "16 16 8 8. 16"'),
    ("5/4", 'groove = "swing"\ncell = "4 8 8 4 8 4 8"'),
    ("6/8", 'groove = "latin"\nanticipate = true'),
    ("9/8", 'groove = "straight"\ncell = "4 8 8 8 8"\npickup = "8"'),
    ("12/8", 'groove = "straight"\nstart = 2'),
    ("7/8", 'groove = "straight"\ncell = "4 4 4."'),
    ("4/4", 'groove = "shuffle"\nnotate = "12/8"'),
    ("4/4", 'groove = "latin"\nanticipate = true'),
    ("4/4", 'groove = "swing"\ncell = "8t 8t 8t 4 r8 8 4."\nrest_between = "r4"'),
    ("3/4", 'cell = "4~8 8 r4"\npickup = 1.5'),
]


@pytest.mark.parametrize("meter, rhythm", CASES)
def test_musicxml_measures_full_ties_add_up(tmp_path: Path, musicxml_schema, meter: str,
                                            rhythm: str) -> None:
    out, report = _build(tmp_path, rhythm, meter)
    path = out / "test-cue.musicxml"
    musicxml_schema.validate(str(path))                       # MusicXML 4.0 XSD
    score, measures = _measures(path)
    written = report["rhythm"]["written_meter"]
    ts = score.parts[0].recurse().getElementsByClass("TimeSignature").first()
    assert ts.ratioString == written
    bar = F(ts.barDuration.quarterLength)
    pickup = F(report["rhythm"]["pickup"]).limit_denominator(48)
    for m in measures:
        d = F(m.duration.quarterLength).limit_denominator(96)
        if m.number == 0:                                     # the declared pickup
            assert pickup and d == pickup
        else:
            assert d == bar, (m.number, d)
    root = ET.parse(path).getroot()
    first = root.find("part/measure")
    assert (first.get("number") == "0") == bool(pickup)
    assert (first.get("implicit") == "yes") == bool(pickup)
    # tied notes add up to the intended durations (report events)
    expected = [F(e["duration"]).limit_denominator(48) for e in report["events"]]
    assert _tied_durations(score.parts[0]) == expected


def test_swing_element_and_12_8(tmp_path: Path) -> None:
    out, _ = _build(tmp_path, 'groove = "swing"\nswing = 0.62')
    root = ET.parse(out / "test-cue.musicxml").getroot()
    sw = root.find("part/measure/direction/sound/swing")      # MusicXML 4.0 <swing>
    assert sw is not None
    first, second = int(sw.findtext("first")), int(sw.findtext("second"))
    assert F(first, first + second) == F(62, 100)
    (tmp_path / "b").mkdir()
    out2, rep = _build(tmp_path / "b", 'groove = "shuffle"\nnotate = "12/8"')
    root = ET.parse(out2 / "test-cue.musicxml").getroot()
    assert root.find(".//swing") is None                      # written out, played as written
    assert root.findtext(".//time/beats") == "12" and root.findtext(".//time/beat-type") == "8"
    import mido

    mf = mido.MidiFile(str(out2 / "test-cue.mid"))
    tempo = next(m.tempo for m in mf.tracks[0] if m.type == "set_tempo")
    # the dotted quarter of 12/8 keeps the marked 120 per minute: quarters at 180 (mido)
    assert mido.tempo2bpm(tempo) == pytest.approx(180, abs=0.01)   # integer microseconds (SMF)


def test_latin_anticipation_tied_over_bar(tmp_path: Path) -> None:
    out, report = _build(tmp_path, 'groove = "latin"\nanticipate = true')
    ant = [e for e in report["events"] if (F(e["onset"]) + F(1, 2)) % 4 == 0 and e["onset"] > 0]
    assert ant and all(e["articulation"] == "accent" for e in ant)
    _, measures = _measures(out / "test-cue.musicxml")
    ends_tied = [m for m in measures if any(n.tie is not None and n.tie.type == "start"
                                            and n.offset == 3.5 for n in m.notes if not n.isChord)]
    assert ends_tied      # the anticipated note starts on the last eighth and is tied over


def test_augmentation_per_statement(tmp_path: Path) -> None:
    cell = "4 8 8 2"
    _, report = _build(tmp_path, f'cell = "motif"\nmotif_cell = "{cell}"\naugment = [1, 1, 1.5, 2]')
    tokens = [t.duration for t in parse_cell(cell)]
    chain = report["chain"]
    owned = [0] * len(chain["statements"])
    for e in report["events"]:
        owned[e["statement"] - 1] += 1
    for s, m, f in zip(report["rhythm"]["statements"], owned, (1, 1, F(3, 2), 2), strict=True):
        # statement k lasts the cell's values it plays times its factor
        assert F(s["duration"]) == sum(tokens[:m], F(0)) * f
    assert owned[-1] == 4 and F(report["rhythm"]["statements"][-1]["duration"]) == sum(tokens, F(0)) * 2


def test_grow_and_retrograde() -> None:
    chain = build_chain((69, 67, 72, 70), 4, 2)
    cell = parse_cell("4 8 8 2")
    line = lay_rhythm(chain, parse_meter("4/4"),
                      RhythmOptions(motif=True, motif_cell=cell, retrograde=True, grow=F(3, 2),
                                    hold_last=False))
    assert [s.factor for s in line.spans] == [1, F(3, 2), F(9, 4), F(7, 2)]   # 3.375 -> 3.5
    ri = [n.duration for n in line.notes if n.statement == 4]     # statement 4 is RI
    assert ri == [d * F(7, 2) for d in (F(2), F(1, 2), F(1, 2), F(1))]


@pytest.mark.parametrize("rhythm, meter, needle", [
    ('cell = "4 8 9 4"', "4/4", "'9' at value 3"),
    ('cell = "r4 r8"', "4/4", "rests only"),
    ('groove = "swing"\nswing = 0.8', "4/4", "0.8 is out of range"),
    ('augment = [1, 2]', "4/4", "augment has 2 factors for 4 statements"),
    ('groove = "straight"', "11/8", "meter '11/8' is not supported"),
    ('groove = "swing"', "6/8", "quarter-note pulse"),
    ('pickup = "1"', "4/4", "pickup"),
])
def test_bad_input_exit_2_nothing_written(tmp_path: Path, rhythm: str, meter: str,
                                          needle: str) -> None:
    out = tmp_path / "out"
    out.mkdir()
    (out / "test-cue.musicxml").write_bytes(b"keep")
    before = snapshot(out)
    r = run_cli("build", str(_project(tmp_path, rhythm, meter)), "-o", str(out))
    assert r.exit_code == 2
    assert needle in r.output and "accepted" in r.output
    assert "Traceback" not in r.output and len(r.output.strip().splitlines()) <= 2
    assert snapshot(out) == before


@given(st.text(max_size=40))
def test_cell_parser_any_text(text: str) -> None:
    try:
        tokens = parse_cell(text)
    except ArrangeError:
        return
    assert tokens and any(not t.rest for t in tokens)
    assert all(t.duration > 0 for t in tokens)


@given(st.lists(st.sampled_from(["4", "8", "16", "2", "1", "4.", "8t", "r8", "4~8", "r4."]),
                min_size=1, max_size=12))
def test_cell_parser_values(words: list[str]) -> None:
    # note values from the trade: whole = 4 quarters, dotted = 3/2, triplet = 2/3 (common practice)
    value = {"4": 1, "8": F(1, 2), "16": F(1, 4), "2": 2, "1": 4, "4.": F(3, 2), "8t": F(1, 3),
             "r8": F(1, 2), "4~8": F(3, 2), "r4.": F(3, 2)}
    try:
        tokens = parse_cell(" ".join(words))
    except ArrangeError:
        assert all(w.startswith("r") for w in words)
        return
    assert [t.duration for t in tokens] == [value[w] for w in words]


def test_every_meter_parses() -> None:
    for m in ("4/4", "3/4", "2/2", "2/4", "5/4", "6/8", "9/8", "12/8", "7/8"):
        assert m in METERS and str(parse_meter(m)) == m
