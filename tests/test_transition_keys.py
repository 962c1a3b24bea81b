"""Transitions mean the keys they name: the P statements carry the keys.

Reference: the chain's own structure (statement j+2 is statement j transposed; P statements
are the odd ones) and music21 (``key.Key`` for the keys named, ``pitch`` for pitch classes,
the key signatures read back from the written score).  Through the CLI.
"""
from __future__ import annotations

import json
from pathlib import Path

import pytest
from conftest import run_cli, write_project

PROJECT = '''title = "Keys Walk"
tempo = 120
meter = "4/4"
key = "{key}"

[chain]
motif = "{motif}"
statements = {statements}
overlap = 2

[rhythm]
groove = "straight"
cell = "2"

[harmony]
framework = "{framework}"
modulate = "by-statement"

[section]
name = "saxes-5"

[output]
formats = ["musicxml", "report"]
'''


@pytest.mark.parametrize(("key", "motif", "framework", "statements"), [
    ("C major", "C4 E4 D4 G4", "C6 | G7", 5),
    ("D dorian", "D4 F4 E4 A4 G4", "Dm7 G7", 6),
])
def test_modulate_by_statement_puts_each_p_statement_in_its_key(tmp_path: Path, key: str, motif: str,
                                                                framework: str, statements: int) -> None:
    from music21 import converter
    from music21 import key as m21key

    path = write_project(tmp_path, PROJECT.format(key=key, motif=motif, framework=framework,
                                                  statements=statements))
    out = tmp_path / "out"
    res = run_cli("build", str(path), "-o", str(out))
    assert res.exit_code == 0, res.output
    report = json.loads(next(out.glob("*.report.json")).read_text())
    tonic, mode = key.split()
    k1 = m21key.Key(tonic.replace("b", "-"), mode)
    events = report["events"]
    keys = report["keys"]
    p_statements = [st for st in report["chain"]["statements"] if st["form"] == "P"]
    assert len(p_statements) == (statements + 1) // 2
    for st in p_statements[1:]:
        bar = events[st["start"]]["bar"] + (0 if events[st["start"]]["beat"] == 1 else 1)
        if bar > report["bars"]:
            continue
        named = [k["key"] for k in keys if k["bar"] <= bar][-1]
        tonic_name, _, mode_name = named.partition(" ")
        want = (k1.tonic.pitchClass + st["transposition"]) % 12   # statement 1 moved by its transposition
        assert m21key.Key(tonic_name.replace("b", "-"), mode_name).tonic.pitchClass == want, (st, named)
    # the written score declares the key it arrives in (music21 reads a key signature there;
    # the keys passed through on the way read with accidentals: output.signatures = "arrival")
    score = converter.parse(str(next(out.glob("*.musicxml"))))
    sigs = {m.number for m in score.parts[0].getElementsByClass("Measure")
            if m.keySignature is not None}
    assert {k["bar"] for k in report["signatures"]} <= sigs
    assert not keys or keys[-1]["bar"] in sigs
