"""End to end: project file -> MusicXML, MIDI and report, checked by outside readers.

References: the MusicXML 4.0 XSD (``musicxml`` package) via xmlschema; music21 and
partitura re-read the score; mido re-reads the Standard MIDI File.
"""
from __future__ import annotations

import json
from pathlib import Path

import pytest
from conftest import DEMOS, run_cli


@pytest.fixture(scope="module")
def built(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, dict]:
    out = tmp_path_factory.mktemp("build")
    r = run_cli("build", str(DEMOS / "harbour-lights.toml"), "-o", str(out))
    assert r.exit_code == 0, r.output
    report = json.loads((out / "harbour-lights.report.json").read_text())
    return out, report


def _sounding_by_part(report: dict) -> list[list[int]]:
    n_parts = len(report["section"]["parts"])
    return [[e["pitches"][k] for e in report["events"]] for k in range(n_parts)]


def test_musicxml_validates(built, musicxml_schema) -> None:
    out, _ = built
    musicxml_schema.validate(str(out / "harbour-lights.musicxml"))  # MusicXML 4.0 XSD


def test_music21_reads_same_sounding_pitches(built) -> None:
    from music21 import converter

    out, report = built
    score = converter.parse(str(out / "harbour-lights.musicxml"))
    expected = _sounding_by_part(report)
    for k, part in enumerate(score.parts):
        sounding = part.toSoundingPitch()
        notes = [n for n in sounding.flatten().getElementsByClass("Note") if not
                 (n.tie is not None and n.tie.type in ("stop", "continue"))]
        assert [n.pitch.midi for n in notes] == expected[k]  # music21 as reference


def test_partitura_reads_same_pitches(built) -> None:
    import partitura

    out, report = built
    score = partitura.load_musicxml(str(out / "harbour-lights.musicxml"))
    expected = _sounding_by_part(report)
    for k, part in enumerate(score.parts):
        na = part.note_array()
        order = sorted(range(len(na)), key=lambda i: na["onset_beat"][i])
        written = [int(na["pitch"][i]) for i in order]
        shift = report["section"]["parts"][k]["transposition"]
        # partitura reports written pitch; sounding = written - (written minus sounding)
        assert [p - shift for p in written] == expected[k]


def test_mido_reads_same_notes(built) -> None:
    import mido

    out, report = built
    mf = mido.MidiFile(str(out / "harbour-lights.mid"))   # Standard MIDI File via mido
    expected = _sounding_by_part(report)
    assert len(mf.tracks) == 1 + len(expected)
    for k, track in enumerate(mf.tracks[1:]):
        ons = [m.note for m in track if m.type == "note_on" and m.velocity > 0]
        assert ons == expected[k]


def test_report_fields(built) -> None:
    _, report = built
    for key in ("title", "key", "meter", "tempo", "chain", "section", "events", "warnings"):
        assert key in report
    ev = report["events"][0]
    for key in ("index", "statement", "onset", "duration", "lead", "chord", "role", "technique",
                "lead_function", "voicing", "pitches"):
        assert key in ev
    assert [e["lead"] for e in report["events"]] == report["chain"]["pitches"]
    for e in report["events"]:
        assert e["pitches"][0] == e["lead"]
        assert e["pitches"] == sorted(e["pitches"], reverse=True)


def test_demo_builds_every_project(tmp_path: Path) -> None:
    r = run_cli("demo", "-o", str(tmp_path))
    assert r.exit_code == 0, r.output
    for _proj in DEMOS.glob("*.toml"):
        assert any(p.suffix == ".musicxml" for p in tmp_path.iterdir())


def test_same_project_same_bytes(tmp_path: Path) -> None:
    a, b = tmp_path / "a", tmp_path / "b"
    for d in (a, b):
        assert run_cli("build", str(DEMOS / "harbour-lights.toml"), "-o", str(d)).exit_code == 0
    for f in a.iterdir():
        data_a, data_b = f.read_bytes(), (b / f.name).read_bytes()
        if f.suffix == ".musicxml":
            import re
            strip = re.compile(rb"<encoding-date>[^<]*</encoding-date>")
            data_a, data_b = strip.sub(b"", data_a), strip.sub(b"", data_b)
        assert data_a == data_b, f.name
