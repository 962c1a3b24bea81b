"""The arranger's rule checks, and bad voicing input through the CLI.

References: common practice of ensemble arranging (low-interval limits from memory,
the minor-ninth rule, no doubled tensions, no crossing, close voicings within an
octave); the CLI contract of DESIGN.md (exit 2, one line, nothing written).
"""
from __future__ import annotations

import json
from pathlib import Path

import pytest
from conftest import BASIC, run_cli, snapshot, write_project

from arrange.theory.chords import parse_chord
from arrange.voicing.rules import context, low_interval_limits, masks
from arrange.voicing.sections import get_section


def _marks(pitches: list[int], symbol: str, vtype: str = "close", section: str = "trombones-4"):
    return {k: [bool(m) for m in v] for k, v in masks(pitches, context(parse_chord(symbol), vtype),
                                                       get_section(section)).items()}


def test_low_interval_table_values() -> None:
    lim = low_interval_limits()
    assert lim[3] == 48 and lim[4] == 46     # minor third above C3, major third above Bb2 (common practice)


def test_low_interval_marks_lower_note() -> None:
    assert _marks([53, 50, 46, 43], "Bb6")["low-interval"] == [False, False, False, True]  # G2 under Bb2
    assert not any(_marks([65, 62, 58, 55], "Bb6")["low-interval"])                        # an octave up


def test_minor_ninth_only_over_dominant_root() -> None:
    assert _marks([61, 55, 52, 48], "C7")["minor-ninth"] == [False] * 4      # Db over C on C7: the b9
    assert any(_marks([64, 60, 55, 51], "Cmaj7")["minor-ninth"])             # E over Eb: a minor ninth


def test_crossing_doubling_and_gap() -> None:
    assert _marks([60, 64, 55, 48], "C6")["voice-crossing"] == [False, True, False, False]
    assert _marks([69, 64, 60, 52], "C6", "close")["doubling"] == [False, False, False, True]  # two Es
    assert _marks([72, 69, 55, 48], "C6", "drop2")["gap"] == [False, False, True, False]     # 14 semitones
    assert not any(_marks([72, 69, 55, 48], "C6", "spread")["gap"])     # open voicings may gap


def test_range_and_extreme_marks() -> None:
    m = _marks([70, 67, 64, 30], "C7", section="trumpets-4")
    assert m["range"] == [False, False, False, False] and m["extreme"] == [False, False, False, True]
    assert _marks([83, 67, 64, 60], "C7", section="trumpets-4")["range"][0]   # B5 above Bb5


def test_no_b9_or_avoid_note_as_the_lowest_voice() -> None:
    # common practice: the lowest voice is never the b9 over the root nor an avoid note
    # (a tone outside the chord a half step above one of its tones)
    assert _marks([71, 66, 63, 48], "B7")["bottom"] == [False, False, False, True]    # C under B7: b9
    assert _marks([71, 65, 62, 56], "G7")["bottom"] == [False, False, False, True]    # Ab under G7
    assert _marks([72, 64, 59, 53], "Cmaj7")["bottom"] == [False, False, False, True]  # F under Cmaj7
    assert not any(_marks([71, 65, 62, 55], "G7")["bottom"])                          # G: the root
    assert not any(_marks([74, 70, 64, 50], "C7")["bottom"])                          # D: the 9
    assert not any(_marks([71, 71, 71, 59], "B7", "unison")["bottom"])                # unison exempt


def _project(folder: Path, old: str, new: str, name: str = "p.toml") -> Path:
    assert old in BASIC
    return write_project(folder, BASIC.replace(old, new), name)


@pytest.mark.parametrize("old, new, needles", [
    ('name = "trombones-4"', 'name = "tubas-9"', ["'tubas-9'", "saxes-5", "strings-5"]),
    ('name = "trombones-4"', 'name = "x"\nparts = ["trumpet", "kazoo"]', ["'kazoo'", "alto-sax", "part 2"]),
    ('voicing = "close"', 'voicing = "drop5"', ["'drop5'", "drop2-4", "spread"]),
    ('voicing = "close"', 'by_statement = { 2 = "wide" }', ["'wide'", "unison"]),
    ('voicing = "close"', 'by_statement = { 9 = "spread" }', ["statement 9", "1..4"]),
    ('voicing = "close"', 'by_bar = { "5-2" = "spread" }', ["'5-2'", "9-12"]),
    ('statements = 4', 'statements = 4\nlead_range = ["C6", "C7"]', ["cannot play", "lead_range", "Trombone 1"]),
    # a lead the trombones can play, but no voicing under it keeps Trombone 3 above its
    # extreme low E2 (instruments.toml; from memory: the tenor trombone's low E)
    ('statements = 4', 'statements = 4\nlead_range = ["E2", "E3"]',
     ["Trombone 3 cannot play D2", "below its extreme range", "of any type", "allow_extreme"]),
])
def test_bad_voicing_input_exits_2(tmp_path: Path, old: str, new: str, needles: list[str]) -> None:
    out = tmp_path / "out"
    out.mkdir()
    (out / "test-cue.report.json").write_bytes(b"{}")
    before = snapshot(out)
    r = run_cli("build", str(_project(tmp_path, old, new)), "-o", str(out))
    assert r.exit_code == 2, r.output
    assert "Traceback" not in r.output
    assert len([ln for ln in r.output.splitlines() if ln.startswith("arrange: error")]) == 1
    for needle in needles:
        assert needle in r.output, r.output
    assert snapshot(out) == before              # nothing written or replaced


def test_allow_extreme_keeps_it_as_warning(tmp_path: Path) -> None:
    path = _project(tmp_path, 'voicing = "close"', 'voicing = "close"\nallow_extreme = true')
    text = path.read_text().replace("statements = 4", 'statements = 4\nlead_range = ["C5", "C6"]')
    path.write_text(text)
    r = run_cli("build", str(path), "-o", str(tmp_path / "o"), "--formats", "report")
    assert r.exit_code == 0, r.output
    rep = json.loads((tmp_path / "o" / "test-cue.report.json").read_text())
    extreme = [w for w in rep["warnings"] if w["kind"] == "extreme"]
    assert extreme and all(w["severity"] == "warning" and w["part"] == "Trombone 1" for w in extreme
                           if w["part"] == "Trombone 1")
    # the same without allow_extreme: the lead cannot play it, exit 2
    path.write_text(text.replace("allow_extreme = true", ""))
    assert run_cli("build", str(path), "-o", str(tmp_path / "o2")).exit_code == 2


def test_one_voicing_and_a_column_of_many_get_the_same_marks() -> None:
    """The rules run on one voicing (Python ints: the voicer, tutti, the report) and on a
    column of many (numpy arrays: the pad search) mark exactly the same voices; random
    voicings of 3-6 parts over dominant, minor and altered chords, every voicing type."""
    import numpy as np

    from arrange.voicing.rules import KINDS, penalties
    from arrange.voicing.shapes import recipes

    rng = np.random.default_rng(5)
    weights = {k: recipes().weight(k) for k in KINDS}
    for name in ("trombones-4", "saxes-5", "trumpets-4", "strings-5", "brass-6"):
        section = get_section(name)
        n = len(section.parts)
        for symbol in ("C7", "Bb7b9", "Dm7", "Ebmaj7#11", "G7alt", "F6", "Am7b5"):
            for vtype in ("close", "drop2", "spread", "unison"):
                ctx = context(parse_chord(symbol), vtype)
                P = np.sort(rng.integers(20, 100, (300, n)), axis=1)[:, ::-1]
                P[::7] = rng.integers(20, 100, (len(P[::7]), n))      # some crossings too
                cols = masks(list(np.ascontiguousarray(P.T)), ctx, section)
                col_pen = penalties(cols, weights)
                for i, row in enumerate(P.tolist()):
                    one = masks(row, ctx, section)
                    for k in KINDS:
                        assert [bool(m) for m in one[k]] == [bool(m if isinstance(m, bool) else m[i])
                                                             for m in cols[k]], (name, symbol, vtype, row, k)
                    assert penalties(one, weights) == col_pen[i]
