"""Writers, piece by piece: marks, rhythm-section mock-up, audio normalising, atomic files.

References named beside each check: the definition of dBFS (full scale of 16-bit
PCM, 32767; AES17 uses the same full-scale reference), the General MIDI 1
percussion key map, music21 as a MusicXML reader, mido as a MIDI reader.
"""
from __future__ import annotations

import io
import math
import wave
from dataclasses import replace
from fractions import Fraction
from pathlib import Path

import pytest
from conftest import BASIC, write_project

from arrange.build import run_pipeline
from arrange.project import load_project
from arrange.rhythm_section import RhythmSectionOptions, build_rhythm_section
from arrange.writers import marks
from arrange.writers.audio import missing_message, normalise
from arrange.writers.files import write_batch


@pytest.fixture
def voiced(tmp_path: Path):  # noqa: ANN201
    return run_pipeline(load_project(write_project(tmp_path, BASIC)))


def _with_rest_before(voiced, index: int, gap: Fraction):  # noqa: ANN001, ANN202
    """The same passage with a rest of ``gap`` before note ``index`` (later notes move on)."""
    events = []
    for i, ve in enumerate(voiced.events):
        n = ve.event.note
        if i == index - 1:
            n = replace(n, duration=n.duration - gap, perf_duration=n.perf_duration - gap)
        ev = replace(ve.event, note=n)
        events.append(replace(ve, event=ev))
    return replace(voiced, events=tuple(events))


def _with_bar_rest_before(voiced, index: int):  # noqa: ANN001, ANN202
    """The same passage with a whole 4/4 bar of rest before note ``index`` (it and the
    later notes move a bar on)."""
    bar = Fraction(4)
    events = []
    for i, ve in enumerate(voiced.events):
        n = ve.event.note
        if i >= index:
            n = replace(n, onset=n.onset + bar, perf_onset=n.perf_onset + bar)
        events.append(replace(ve, event=replace(ve.event, note=n)))
    return replace(voiced, events=tuple(events))


def test_dynamic_at_first_note_and_at_changes(voiced) -> None:
    got = marks.entrances(voiced, ("mp", "mp", "f"))
    stmt3 = next(i for i, ve in enumerate(voiced.events) if ve.event.note.statement == 3)
    assert got == [(0, "mp"), (stmt3, "f")]


def test_dynamic_restated_after_a_rest_of_a_bar_only(voiced) -> None:
    # common practice: a dynamic at every entrance a player counts in (after a rest of a
    # bar or more), not restated after a short rest inside a phrase
    assert marks.entrances(_with_rest_before(voiced, 5, Fraction(1, 4)), ("mf",)) == [(0, "mf")]
    assert marks.entrances(_with_bar_rest_before(voiced, 5), ("mf",)) == [(0, "mf"), (5, "mf")]


def test_dynamics_in_the_musicxml_after_a_rest(voiced) -> None:
    from music21 import converter, dynamics

    from arrange.writers.musicxml import ScoreInfo, musicxml_bytes

    rested = _with_bar_rest_before(voiced, 5)       # a rest of a whole 4/4 bar
    data = musicxml_bytes(rested, ScoreInfo("T", 120, "Straight"))
    score = converter.parseData(data.decode(), format="musicxml")    # music21 as reader
    for part in score.parts:
        assert len(part.flatten().getElementsByClass(dynamics.Dynamic)) == 2


def test_approach_technique_printed_under_the_chord(voiced) -> None:
    from music21 import converter, expressions

    from arrange.writers.musicxml import ScoreInfo, musicxml_bytes

    ev = voiced.events[3]
    approach = replace(ev, event=replace(ev.event, role="approach", technique="chromatic"))
    v = replace(voiced, events=voiced.events[:3] + (approach,) + voiced.events[4:])
    data = musicxml_bytes(v, ScoreInfo("T", 120, "Straight", analysis=True))
    lead = converter.parseData(data.decode(), format="musicxml").parts[0].flatten()
    texts = [t for t in lead.getElementsByClass(expressions.TextExpression) if t.content == "chromatic"]
    # one label per approach chord: an approach held over the next note is labelled once
    # (the harmonizer makes approaches of its own too)
    evs = [e.event for e in v.events]
    want = sum(1 for k, e in enumerate(evs) if e.role == "approach" and e.technique == "chromatic"
               and not (k and evs[k - 1].role == "approach" and evs[k - 1].chord == e.chord))
    assert want >= 1 and len(texts) == want and all(t.placement == "below" for t in texts)
    assert b'placement="below"' in data


@pytest.mark.parametrize("sound, family", [
    ("brass.trumpet", "brass.trumpet"),
    ("brass.trombone.bass", "brass.trombone"),        # bass trombone in the trombone bracket
    ("wind.reed.saxophone.alto", "wind.reed.saxophone"),
    ("wind.reed.saxophone.baritone", "wind.reed.saxophone"),
    ("strings.violin", "strings"),
    ("strings.contrabass", "strings"),
])
def test_bracket_families(sound: str, family: str) -> None:
    assert marks.family(sound) == family      # common practice of score layout


def test_rehearsal_letters() -> None:
    assert [marks.rehearsal_letter(k) for k in (1, 2, 26, 27)] == ["A", "B", "Z", "AA"]


def _rhythm(voiced):  # noqa: ANN001, ANN202
    opts = RhythmSectionOptions(parts=("bass", "drums"))
    return build_rhythm_section(voiced.harmonized, opts)


def test_bass_plays_framework_roots_in_bass_register(voiced) -> None:
    notes = _rhythm(voiced).bass
    # E1..D3: a 4-string bass's low register (from memory)
    assert notes and all(28 <= n.pitch <= 50 for n in notes)
    for fc in voiced.harmonized.framework:
        at = [n.pitch for n in notes if n.onset == fc.onset]
        assert at and at[0] % 12 == fc.chord.root % 12


def test_drums_use_general_midi_keys(voiced) -> None:
    hits = _rhythm(voiced).drums.hits
    keys = {h.key for h in hits}
    # GM 1 percussion map: 36 bass drum 1, 38 acoustic snare, 42 closed hi-hat, 45/48/50 toms,
    # 49 crash cymbal 1 (the fills where statements end)
    assert {36, 38, 42} <= keys <= {36, 38, 42, 45, 48, 49, 50}
    assert max(h.onset for h in hits) < voiced.harmonized.line.total


def _wav(samples: list[int]) -> bytes:
    import array

    buf = io.BytesIO()
    with wave.open(buf, "wb") as w:
        w.setnchannels(1)
        w.setsampwidth(2)
        w.setframerate(44100)
        w.writeframes(array.array("h", samples).tobytes())
    return buf.getvalue()


@pytest.mark.parametrize("peak", [1000, 32767])
def test_normalise_to_minus_one_dbfs(peak: int) -> None:
    import array

    out = normalise(_wav([0, peak, -peak // 2, 10]))
    with wave.open(io.BytesIO(out)) as r:
        got = array.array("h", r.readframes(r.getnframes()))
    top = max(abs(s) for s in got)
    # dBFS: 20 log10(peak / full scale), full scale 32767 for 16-bit PCM
    assert abs(20 * math.log10(top / 32767) - (-1.0)) < 0.01


def test_normalise_keeps_silence_silent() -> None:
    out = normalise(_wav([0, 0, 0]))
    with wave.open(io.BytesIO(out)) as r:
        assert set(r.readframes(r.getnframes())) == {0}


def test_missing_audio_tools_named(monkeypatch: pytest.MonkeyPatch, tmp_path: Path) -> None:
    monkeypatch.setenv("PATH", str(tmp_path))
    monkeypatch.setenv("ARRANGE_SOUNDFONT", str(tmp_path / "none.sf2"))
    msg = missing_message()
    assert msg is not None and "fluidsynth" in msg and "SoundFont" in msg and "\n" not in msg
    assert "none.sf2" in msg                    # the SoundFont the user named, not another


def test_batch_rolls_back_when_a_rename_fails(tmp_path: Path) -> None:
    write_batch(tmp_path, {"a.txt": b"old a", "b.txt": b"old b"})
    (tmp_path / "c.txt").mkdir()
    with pytest.raises(Exception, match="c.txt"):
        write_batch(tmp_path, {"a.txt": b"new a", "b.txt": b"new b", "c.txt": b"new c"})
    assert (tmp_path / "a.txt").read_bytes() == b"old a"
    assert (tmp_path / "b.txt").read_bytes() == b"old b"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["a.txt", "b.txt", "c.txt"]
