"""Tutti voicing: a big band's saxes, trumpets and trombones voiced as one on the lead.

Read back from the written score with music21 (sounding pitches, chord symbols); the
checks are the common practice of ensemble writing: the lead on top, no crossing inside
a section, the guide tones (third, seventh or sixth) in the ensemble, the bass-most voice
on the root, the low-interval limits across all parts (the table below, from memory), no
minor ninth but the b9 over a dominant's root.
"""
from __future__ import annotations

import json
from fractions import Fraction
from pathlib import Path

import pytest
from conftest import run_cli, write_project

# lowest lower note of an interval between neighbouring voices, by semitones (from memory;
# the usual arranging table: a minor third muddy below C3, a major third below Bb2 ...)
LOW_LIMITS = {1: 52, 2: 51, 3: 48, 4: 46, 5: 45, 6: 46, 7: 34, 8: 41, 9: 41, 10: 41, 11: 41,
              13: 40, 14: 39, 15: 36, 16: 34}

BIG_BAND = '''title = "Tutti Check"
tempo = 176
meter = "4/4"
key = "F major"

[chain]
motif = "C5 B4 Bb4 A4"
statements = 6
overlap = 1
lead_range = ["A4", "Bb5"]

[rhythm]
groove = "swing"

[harmony]
framework = "F6 | Gm7 C7 | Am7 D7 | Gm7 C7 | F6 | F6"

[section]
name = "big-band"
voicing = "{voicing}"

[output]
formats = ["musicxml", "report"]
'''


@pytest.fixture(scope="module", params=["close", "drop2"])
def band(request, tmp_path_factory) -> tuple[Path, dict]:
    tmp = tmp_path_factory.mktemp(f"band-{request.param}")
    out = tmp / "out"
    res = run_cli("build", str(write_project(tmp, BIG_BAND.format(voicing=request.param))), "-o", str(out))
    assert res.exit_code == 0, res.output
    return out, json.loads((out / "tutti-check.report.json").read_text())


def _chords_and_columns(out: Path):  # noqa: ANN202
    """Per lead attack: the chord symbol over the lead (music21) and every part's sounding pitch."""
    from music21 import converter, harmony

    written = converter.parse(str(out / "tutti-check.musicxml"))
    # the lead trumpet (the score puts the saxophones above it: score order)
    k = [p.partName for p in written.parts].index("Trumpet 1")
    score = written.toSoundingPitch()
    # the score's chord symbols are written for the staff they stand over: read at sounding pitch
    symbols = [(Fraction(cs.offset), cs)
               for cs in score.parts[k].flatten().getElementsByClass(harmony.ChordSymbol)]
    parts = [(p.partName, p.flatten()) for p in score.parts]
    lead = parts[k][1]
    columns = []
    for n in lead.notes:
        if not n.isNote or (n.tie is not None and n.tie.type in ("stop", "continue")):
            continue
        t = Fraction(n.offset)
        cs = [c for on, c in symbols if on <= t][-1]
        col = {}
        for name, flat in parts:
            here = [x for x in flat.notes if x.isNote and Fraction(x.offset) <= t < Fraction(x.offset) + Fraction(x.quarterLength)]
            col[name] = here[-1].pitch.midi if here else None
        columns.append((t, cs, col))
    return columns


def test_the_section_lists_its_groups(band) -> None:
    _, report = band
    names = [p["name"] for p in report["section"]["parts"]]
    assert len(names) == 13 and names[0] == "Trumpet 1"
    assert {"Alto Sax 1", "Baritone Sax", "Bass Trombone", "Trumpet 4"} <= set(names)


def test_tutti_over_a_chromatic_line(band) -> None:
    from music21 import pitch

    out, report = band
    columns = _chords_and_columns(out)
    assert len(columns) >= 15
    sections = {"trumpets": [f"Trumpet {i}" for i in range(1, 5)],
                "saxes": ["Alto Sax 1", "Alto Sax 2", "Tenor Sax 1", "Tenor Sax 2", "Baritone Sax"],
                "trombones": ["Trombone 1", "Trombone 2", "Trombone 3", "Bass Trombone"]}
    for t, cs, col in columns:
        assert None not in col.values(), (t, col)              # every part plays the tutti
        lead = col["Trumpet 1"]
        assert all(p <= lead for p in col.values()), (t, col)  # the lead on top
        for names in sections.values():                        # no crossing inside a section
            ps = [col[n] for n in names]
            assert ps == sorted(ps, reverse=True), (t, names, ps)
        pcs = {p % 12 for p in col.values()}
        # music21's chord symbol: its third and its seventh (or sixth) sound in the ensemble,
        # unless the lead sits a half step from it (the guide tone under it would be a minor
        # ninth against the lead: common practice leaves it out, and the report says so)
        for step in (cs.third, cs.seventh or cs.getChordStep(6)):
            assert step is not None
            if (lead - step.pitchClass) % 12 in (1, 11) and step.pitchClass not in pcs:
                assert any(w["kind"] == "guide-tones" and w["bar"] == int(t // 4) + 1
                           for w in report["warnings"]), (t, cs.figure)
                continue
            assert step.pitchClass in pcs, (t, cs.figure, step.name)
        # the bass-most voice on the root (music21's root of the symbol)
        assert min(col.values()) % 12 == cs.root().pitchClass, (t, cs.figure, col)
        ordered = sorted(set(col.values()), reverse=True)
        for hi, lo in zip(ordered, ordered[1:], strict=False):
            gap = hi - lo
            if gap in LOW_LIMITS:
                assert lo >= LOW_LIMITS[gap], (t, pitch.Pitch(midi=hi).nameWithOctave,
                                               pitch.Pitch(midi=lo).nameWithOctave)
        dominant = cs.isDominantSeventh() or (cs.third is not None and cs.seventh is not None
                                              and (cs.seventh.pitchClass - cs.root().pitchClass) % 12 == 10
                                              and (cs.third.pitchClass - cs.root().pitchClass) % 12 == 4)
        for hi in ordered:
            for lo in ordered:
                if hi - lo >= 13 and (hi - lo) % 12 == 1:   # a minor ninth: only the b9 over a dominant's root
                    # ... or a lead outside its chord (a clash the report names): the chord
                    # keeps its own tones under it (common practice: the guide tones stay)
                    clash = hi % 12 == lead % 12 and any(
                        w["kind"] == "clash" and w["bar"] == int(t // 4) + 1 for w in report["warnings"])
                    assert clash or (dominant and lo % 12 == cs.root().pitchClass), (t, cs.figure, hi, lo)
    assert not [w for w in report["warnings"] if w.get("severity") == "error"]


def test_inline_tutti_and_bad_layout(tmp_path: Path) -> None:
    text = BIG_BAND.format(voicing="close").replace('name = "big-band"', (
        'name = "brass-tutti"\ntutti = ["trumpets-4", "trombones-4"]\nlayout = "middle"'))
    res = run_cli("build", str(write_project(tmp_path, text)), "-o", str(tmp_path / "o"))
    assert res.exit_code == 0, res.output
    report = json.loads((tmp_path / "o" / "tutti-check.report.json").read_text())
    assert len(report["section"]["parts"]) == 8
    bad = text.replace('layout = "middle"', 'layout = "sideways"')
    res = run_cli("build", str(write_project(tmp_path, bad, "bad.toml")), "-o", str(tmp_path / "b"))
    assert res.exit_code == 2 and "sideways" in res.output and "octaves" in res.output
    assert not (tmp_path / "b").exists()


def test_the_big_band_demo_has_saxes_brass_and_a_written_rhythm_section(tmp_path: Path) -> None:
    """Done when: the demo renders a big band (saxes, trumpets, trombones) with a part for
    each rhythm player (music21 reads the score; the drum staff in a percussion clef)."""
    from conftest import DEMOS
    from music21 import clef, converter

    res = run_cli("build", str(DEMOS / "foundry-shift-shout.toml"), "-o", str(tmp_path), "--formats", "musicxml")
    assert res.exit_code == 0, res.output
    score = converter.parse(str(tmp_path / "foundry-shift-shout.musicxml"))
    names = [p.partName for p in score.parts]
    assert {"Alto Sax 1", "Baritone Sax", "Trumpet 1", "Trombone 1", "Bass Trombone"} <= set(names)
    assert names[-4:] == ["Guitar", "Piano", "Bass", "Drums"]
    drums = score.parts[-1].flatten()
    assert isinstance(drums.getElementsByClass(clef.Clef)[0], clef.PercussionClef)
    for part in score.parts[-4:-1]:
        assert part.flatten().notes, part.partName      # every rhythm player has a part to play


BIG_BAND_ORDER = (["Alto Sax 1", "Alto Sax 2", "Tenor Sax 1", "Tenor Sax 2", "Baritone Sax"]
                  + [f"Trumpet {i}" for i in range(1, 5)]
                  + ["Trombone 1", "Trombone 2", "Trombone 3", "Bass Trombone"]
                  + ["Guitar", "Piano", "Bass", "Drums"])


def test_big_band_score_in_score_order(tmp_path: Path) -> None:
    """Common practice of big-band score layout, top to bottom: saxophones, trumpets,
    trombones, rhythm section, each family in its own bracket, whatever section carries the
    lead.  music21 reads the part order and the brackets (StaffGroup); the tempo mark and
    the rehearsal letters stand over the top staff, the chord symbols over the lead trumpet."""
    from music21 import converter, expressions, harmony, layout, tempo

    text = BIG_BAND.format(voicing="close").replace("statements = 6", "statements = 16") + \
        '\n[rhythm_section]\nparts = ["guitar", "piano", "bass", "drums"]\n'
    res = run_cli("build", str(write_project(tmp_path, text)), "-o", str(tmp_path / "out"))
    assert res.exit_code == 0, res.output
    score = converter.parse(str(tmp_path / "out" / "tutti-check.musicxml"))
    names = [p.partName for p in score.parts]
    assert names == BIG_BAND_ORDER
    groups = [[p.partName for p in g.getSpannedElements()] for g in score.getElementsByClass(layout.StaffGroup)]
    for family in (BIG_BAND_ORDER[:5], BIG_BAND_ORDER[5:9], BIG_BAND_ORDER[9:13], BIG_BAND_ORDER[13:]):
        assert family in groups, (family, groups)
    top = score.parts[0].flatten()
    assert top.getElementsByClass(tempo.MetronomeMark)
    assert top.getElementsByClass(expressions.RehearsalMark)
    assert not score.parts[names.index("Trumpet 1")].flatten().getElementsByClass(expressions.RehearsalMark)
    lead = score.parts[names.index("Trumpet 1")].flatten()
    assert lead.getElementsByClass(harmony.ChordSymbol)


def test_big_band_demo_in_score_order(tmp_path: Path) -> None:
    from conftest import DEMOS
    from music21 import converter

    res = run_cli("build", str(DEMOS / "foundry-shift-shout.toml"), "-o", str(tmp_path), "--formats", "musicxml")
    assert res.exit_code == 0, res.output
    names = [p.partName for p in converter.parse(str(tmp_path / "foundry-shift-shout.musicxml")).parts]
    assert names[:13] == BIG_BAND_ORDER[:13] and set(names[13:]) == set(BIG_BAND_ORDER[13:])
