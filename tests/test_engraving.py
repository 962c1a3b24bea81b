"""What a player reads equals what sounds: for every note of every demo score and
part, the pitch a reader gets from the key signature, the accidentals printed so
far in the measure and ties equals the note's written pitch (common practice of
engraving: an accidental holds to the bar line for its line or space; MusicXML 4.0
keeps the printed sign in <accidental> apart from the pitch's <alter>).  The files
are read with xml.etree, independently of the writers."""
from __future__ import annotations

import xml.etree.ElementTree as ET
from pathlib import Path

import pytest
from conftest import DEMOS, run_cli

ORDER = "FCGDAEB"
SIGNS = {"sharp": 1, "flat": -1, "natural": 0, "double-sharp": 2, "sharp-sharp": 2,
         "flat-flat": -2, "natural-sharp": 1, "natural-flat": -1}


def _signature(fifths: int) -> dict[str, int]:
    if fifths >= 0:
        return {s: 1 for s in ORDER[:fifths]}
    return {s: -1 for s in ORDER[::-1][:-fifths]}


def misread_notes(path: Path) -> list[str]:
    """Notes whose printed reading differs from their pitch, as 'part m. N: ...'."""
    bad = []
    root = ET.parse(path).getroot()
    for part in root.iter("part"):
        sig: dict[str, int] = {}
        for measure in part.iter("measure"):
            for fifths in measure.iter("fifths"):
                sig = _signature(int(fifths.text or 0))
            held: dict[tuple[str, str], int] = {}
            for n in measure.iter("note"):
                p = n.find("pitch")
                if p is None:
                    continue
                step, octave = p.findtext("step"), p.findtext("octave")
                alter = int(float(p.findtext("alter") or 0))
                acc = n.findtext("accidental")
                tied_over = any(t.get("type") == "stop" for t in n.iter("tie"))
                if acc is not None:
                    read = SIGNS[acc]
                elif tied_over:
                    read = alter
                else:
                    read = held.get((step, octave), sig.get(step, 0))
                held[(step, octave)] = alter if acc is None and tied_over else read
                if read != alter:
                    bad.append(f"{part.get('id')} m.{measure.get('number')}: {step}{octave} "
                               f"alter {alter} reads as {read}")
    return bad


@pytest.fixture(scope="module")
def demo_files(tmp_path_factory: pytest.TempPathFactory) -> list[Path]:
    out = tmp_path_factory.mktemp("engraving")
    r = run_cli("demo", "-o", str(out))
    assert r.exit_code == 0, r.output
    files = sorted(out.glob("*.musicxml"))
    assert len(files) >= len(list(DEMOS.glob("*.toml")))
    return files


def test_every_note_reads_as_it_is_written(demo_files: list[Path]) -> None:
    problems = {f.name: misread_notes(f) for f in demo_files}
    assert not any(problems.values()), {k: v[:5] for k, v in problems.items() if v}


def test_the_reader_catches_a_missing_natural(tmp_path: Path) -> None:
    # a B natural in F major written without its natural sign must be caught
    xml = ('<score-partwise><part id="P1"><measure number="1"><attributes><key><fifths>-1'
           '</fifths></key></attributes><note><pitch><step>B</step><octave>3</octave></pitch>'
           '</note></measure></part></score-partwise>')
    f = tmp_path / "x.musicxml"
    f.write_text(xml)
    assert misread_notes(f) == ["P1 m.1: B3 alter 0 reads as -1"]


def test_every_staff_has_its_own_margin_name(demo_files: list[Path]) -> None:
    """Systems after the first name each staff by its abbreviation, and two staves of one
    score never share one ('Tbn. 1', 'Tbn. 2', not 'Tbn.' twice: common practice of score
    layout).  music21 reads the names from the written score."""
    from music21 import converter
    clashes = {}
    for f in [f for f in demo_files if f.stem.count(".") == 0]:
        score = converter.parse(str(f), format="musicxml")
        names = [(p.partName, p.partAbbreviation) for p in score.parts]
        assert all(a for _, a in names), (f.name, names)
        abbrs = [a for _, a in names]
        dup = sorted({a for a in abbrs if abbrs.count(a) > 1})
        if dup:
            clashes[f.name] = dup
    assert not clashes, clashes
