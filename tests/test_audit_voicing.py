"""An independent audit of the voicings: every demo and a set of projects across keys,
meters, grooves, sections and voicing types are built through the CLI; music21 reads the
written MusicXML back (never our stages) and every chord the lead section sounds is judged.

References, beside each check:

* music21 ``harmony.ChordSymbol`` (reading the score's own ``<harmony>`` elements) gives the
  tones of the chord symbol over each voicing: its 3rd (the 4th of a sus chord) and its 7th
  (the 6th of a sixth chord) are the guide tones;
* common practice of big-band and studio arranging: with four or more parts a voicing sounds
  both guide tones (tensions stand for the root and the fifth, never for a guide tone);
* common practice: the lowest voice of a section is never a b9 (a minor ninth over the root)
  nor an avoid note (a tone outside the chord a half step above one of its tones);
* instrument ranges in WRITTEN pitch: music21 ``instrument`` classes' ``lowestNote`` (music21
  documents it as the lowest written note) where it has one; the highest notes (music21 has
  none for these) are handbook values from memory of orchestration handbooks (listed in
  ``HIGH_WRITTEN``).  Sounding pitches come from music21's ``toSoundingPitch`` and the part's
  ``<transpose>`` as music21 reads it.
"""
from __future__ import annotations

import json
import tomllib
from dataclasses import dataclass
from fractions import Fraction
from pathlib import Path

import pytest
from conftest import DEMOS, ROOT, run_cli, to_report_order

SECTIONS = tomllib.loads((ROOT / "voicing_rules" / "sections.toml").read_text(encoding="utf-8"))

# the highest WRITTEN note of each instrument music21 names, from memory of orchestration
# handbooks (the saxophones' keyed range; altissimo is a soloist's, not a section's)
HIGH_WRITTEN = {
    "Trumpet": "F6", "AltoSaxophone": "F#6", "TenorSaxophone": "F#6", "BaritoneSaxophone": "F#6",
    "SopranoSaxophone": "F#6", "Trombone": "F5", "BassTrombone": "C5", "Violin": "C7",
    "Viola": "E6", "Violoncello": "A5", "Contrabass": "G5", "Horn": "C6", "Tuba": "F4",
    "Clarinet": "C7", "Flute": "C7",
}
# the section parts are the score's first parts; rhythm-section staves are not audited here
RHYTHM_PARTS = ("Piano", "Guitar", "Bass", "Drums")


def _project(title: str, key: str, framework: str, section: str, voicing: str, motif: str, *,
             meter: str = "4/4", groove: str = "straight", statements: int = 4, overlap: int = 2,
             extra: str = "") -> str:
    return f'''title = "{title}"
tempo = 120
meter = "{meter}"
key = "{key}"

[chain]
motif = "{motif}"
statements = {statements}
overlap = {overlap}

[rhythm]
groove = "{groove}"

[harmony]
framework = "{framework}"
approach = ["chromatic", "diatonic", "dominant", "diminished", "tritone"]

[section]
name = "{section}"
voicing = "{voicing}"
{extra}
[output]
formats = ["musicxml"]
'''


# (file name, project text): keys, meters, grooves, sections (6 and 8 brass, 5 saxes, strings,
# the big-band tutti) and every voicing type
PROJECTS = {
    "saxes-close": _project("Saxes Close", "F major", "F6 | Dm7 G7 | Gm7 C7 | F6", "saxes-5",
                            "close", "A4 G4 C5 Bb4", groove="swing"),
    "saxes-drop2": _project("Saxes Drop", "Ab major", "Abmaj7 | Fm7 Bb7 | Bbm7 Eb7 | Abmaj7",
                            "saxes-5", "drop2", "C5 Db5 Bb4 Eb5 F4", groove="swing"),
    "brass6-close": _project("Brass Six", "Eb major", "Ebmaj7 | Cm7 F7 | Fm7 Bb7 | Ebmaj7",
                             "brass-6", "close", "G4 F4 Bb4 Ab4 C5"),
    "brass6-drop2": _project("Brass Six Drop", "G minor", "Gm6 | Am7b5 D7 | Gm6 | Cm7 D7",
                             "brass-6", "drop2", "D5 Bb4 C5 A4", meter="3/4", groove="latin"),
    "brass8-drop24": _project("Brass Eight", "D minor", "Dm6 | Em7b5 A7 | Dm6 | Gm7 A7",
                              "brass-8", "drop2-4", "F4 E4 A4 G4 C#5", meter="3/4"),
    "brass8-spread": _project("Brass Eight Spread", "C major", "Cmaj7 | A7 | Dm7 G7 | Cmaj7",
                              "brass-8", "spread", "E5 D5 G5 F#5", groove="swing"),
    "strings-spread": _project("Strings", "G major", "Gmaj7 | Em7 | Am7 D7 | Gmaj7", "strings-5",
                               "spread", "B4 A4 D5 C#5 E5", meter="6/8"),
    "strings-drop3": _project("Strings Drop", "E major", "E6 | C#m7 | F#m7 B7 | E6", "strings-5",
                              "drop3", "G#4 F#4 B4 A#4"),
    "trumpets-drop3": _project("Trumpets", "Bb major", "Bb6 | Cm7 F7 | Dm7b5 G7 | Cm7 F7",
                               "trumpets-4", "drop3", "D5 C5 F5 E5", groove="latin"),
    "trombones-close": _project("Trombones", "A major", "A7 | D7 | A7 | E7", "trombones-4",
                                "close", "C#4 B3 E4 D#4 G4", groove="shuffle"),
    "horns-spread": _project("Horns", "Db major", "Dbmaj7 | Bbm7 Eb7 | Ebm7 Ab7 | Db6", "horns-4",
                             "spread", "F4 Eb4 Ab4 G4"),
    "big-band-close": _project("Tutti", "C minor", "Cm6 | Dm7b5 G7 | Cm6 | Ab7 G7", "big-band",
                               "close", "Eb5 D5 G5 F#5", groove="swing"),
    "big-band-drop2": _project("Tutti Drop", "F major", "F6 | Gm7 C7 | Am7 D7 | Gm7 C7", "big-band",
                               "drop2", "A4 C5 Bb4 D5 E5"),
    "saxes-drop24": _project("Saxes Open", "B major", "Bmaj7 | G#m7 C#7 | F#7 | Bmaj7", "saxes-5",
                             "drop2-4", "D#5 C#5 F#5 E5"),
}


@dataclass(frozen=True)
class Moment:
    bar: int
    offset: Fraction
    chord: object               # music21 ChordSymbol
    pitches: tuple[int, ...]    # sounding MIDI, section parts top to bottom (parts that sound)


@dataclass
class Built:
    name: str
    score: object               # the music21 score at sounding pitch
    written: object             # the music21 score as written
    parts: int                  # how many of the first parts are the lead section


def _section_size(text: str) -> int:
    data = tomllib.loads(text)
    sec = data.get("section", {})
    if "parts" in sec:
        return len(sec["parts"])
    entry = SECTIONS[sec["name"]]
    if "tutti" in entry:
        return sum(len(SECTIONS[m]["parts"]) for m in entry["tutti"])
    return len(entry["parts"])


@pytest.fixture(scope="module")
def built(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Built]:
    from music21 import converter

    out: dict[str, Built] = {}
    folder = tmp_path_factory.mktemp("audit-voicing")
    jobs = [(p.stem, p) for p in sorted(DEMOS.glob("*.toml"))]
    for name, text in PROJECTS.items():
        path = folder / f"{name}.toml"
        path.write_text(text, encoding="utf-8")
        jobs.append((name, path))
    for name, path in jobs:
        dest = folder / f"out-{name}"
        res = run_cli("build", str(path), "-o", str(dest), "--formats", "musicxml,report")
        if res.exit_code != 0:        # an unbuildable project is a finding of its own test
            continue
        xml = next(dest.glob("*.musicxml"))
        report = json.loads(next(dest.glob("*.report.json")).read_text(encoding="utf-8"))
        # the lead section first, as the report lists it (the score stands in score order)
        written = to_report_order(converter.parse(str(xml)), report)
        out[name] = Built(name, written.toSoundingPitch(), written,
                          _section_size(path.read_text(encoding="utf-8")))
    return out


ALL = sorted([p.stem for p in DEMOS.glob("*.toml")] + list(PROJECTS))


def test_every_project_builds(built: dict[str, Built]) -> None:
    # every project above is buildable (a range error would stop it: exit 2)
    assert sorted(built) == ALL


def _moments(b: Built) -> list[Moment]:
    """Every attack of the lead section: the pitches its parts sound there, and the chord
    symbol over it (the last music21 ChordSymbol at or before it on the top staff)."""
    from music21 import harmony

    parts = list(b.score.parts)[:b.parts]
    flat = [p.flatten() for p in parts]
    # symbols over the top staff are written for that staff (a transposing part's in its
    # key): music21's toSoundingPitch moves them to concert pitch with the notes
    top = flat[0]
    symbols = sorted(((Fraction(cs.offset).limit_denominator(96), cs)
                      for cs in top.getElementsByClass(harmony.ChordSymbol)), key=lambda x: x[0])
    spans: list[list[tuple[Fraction, Fraction, int, bool]]] = []
    for f in flat:
        rows = []
        for n in f.notes:
            if isinstance(n, harmony.ChordSymbol):
                continue
            t0 = Fraction(n.offset).limit_denominator(96)
            t1 = t0 + Fraction(n.quarterLength).limit_denominator(96)
            cont = n.tie is not None and n.tie.type in ("stop", "continue")
            rows.append((t0, t1, n.pitch.midi, cont))
        spans.append(rows)
    onsets = sorted({t0 for rows in spans for t0, _t1, _p, cont in rows if not cont})
    measures = [(Fraction(m.offset).limit_denominator(96), m.number) for m in parts[0].getElementsByClass("Measure")]
    out = []
    for t in onsets:
        chord = None
        for at, cs in symbols:
            if at <= t:
                chord = cs
        if chord is None:
            continue
        pitches = []
        for rows in spans:
            for t0, t1, p, _c in rows:
                if t0 <= t < t1:
                    pitches.append(p)
                    break
        bar = max((num for off, num in measures if off <= t), default=0)
        out.append(Moment(bar, t, chord, tuple(pitches)))
    return out


def _guide_tones(cs) -> dict[str, int]:  # noqa: ANN001 - a music21 ChordSymbol
    """The symbol's 3rd (the 4th of a sus chord) and 7th (the 6th of a sixth chord), as
    pitch classes, by music21's chord steps."""
    out = {}
    third = cs.getChordStep(3) or cs.getChordStep(4)
    seventh = cs.getChordStep(7) or cs.getChordStep(6)
    if third is not None:
        out["3rd"] = third.pitchClass
    if seventh is not None:
        out["7th"] = seventh.pitchClass
    for mod in cs.chordStepModifications:
        # MusicXML 4.0 <degree-alter>: an added degree is relative to a dominant chord (the
        # added 7 with alter 0 is the minor seventh); music21 reads it from the major scale
        if mod.modType == "add" and mod.degree == 7:
            out["7th"] = (cs.root().pitchClass + 10 + int(mod.interval.semitones)) % 12
    return out


def guide_tone_violations(b: Built) -> list[str]:
    """Voicings of four or more sounding parts (not a unison) lacking a guide tone."""
    bad = []
    for m in _moments(b):
        if len(m.pitches) < 4 or len({p % 12 for p in m.pitches}) == 1:
            continue
        pcs = {p % 12 for p in m.pitches}
        missing = [k for k, pc in _guide_tones(m.chord).items() if pc not in pcs]
        if missing:
            bad.append(f"{b.name} bar {m.bar} beat {float(m.offset):g}: {m.chord.figure} voiced "
                       f"{m.pitches} lacks its {' and '.join(missing)}")
    return bad


def bottom_violations(b: Built) -> list[str]:
    """The lowest sounding voice of the section is a b9 or an avoid note of the symbol."""
    bad = []
    for m in _moments(b):
        if len(m.pitches) < 3 or m.chord.bass().name != m.chord.root().name:
            continue                  # slash chords name their own bass
        low = min(m.pitches) % 12
        root = m.chord.root().pitchClass
        tones = {p.pitchClass for p in m.chord.pitches}
        b9 = (low - root) % 12 == 1
        avoid = low not in tones and any((low - t) % 12 == 1 for t in tones)
        if b9 or avoid:
            bad.append(f"{b.name} bar {m.bar} beat {float(m.offset):g}: {m.chord.figure} has "
                       f"{'the b9' if b9 else 'an avoid note'} (pc {low}) as its lowest voice {m.pitches}")
    return bad


def range_violations(b: Built) -> list[str]:
    """Written notes beyond the instrument's extreme range (every part but the rhythm section)."""
    from music21 import pitch

    bad = []
    for part in b.written.parts:
        if part.partName in RHYTHM_PARTS:
            continue
        inst = part.getInstrument()
        kind = type(inst).__name__
        low = inst.lowestNote
        high = pitch.Pitch(HIGH_WRITTEN[kind]) if kind in HIGH_WRITTEN else None
        assert low is not None and high is not None, f"{b.name}: no audit range for {part.partName} ({kind})"
        for n in part.flatten().notes:
            if not hasattr(n, "pitch"):
                continue
            w = n.pitch
            if b.written.atSoundingPitch is True and inst.transposition is not None:
                w = inst.transposition.reverse().transposePitch(w)
            if w.midi < low.midi or w.midi > high.midi:
                bad.append(f"{b.name}: {part.partName} written {w.nameWithOctave} lies outside "
                           f"{low.nameWithOctave}-{high.nameWithOctave} (measure {n.measureNumber})")
    return bad


@pytest.mark.parametrize("name", ALL)
def test_guide_tones(built: dict[str, Built], name: str) -> None:
    # common practice: 3rd and 7th (6th, sus 4th) sound in every voicing of 4+ parts
    assert name in built
    assert guide_tone_violations(built[name]) == []


@pytest.mark.parametrize("name", ALL)
def test_no_b9_or_avoid_note_at_the_bottom(built: dict[str, Built], name: str) -> None:
    # common practice: the section's lowest voice is never a b9 or an avoid note
    assert name in built
    assert bottom_violations(built[name]) == []


@pytest.mark.parametrize("name", ALL)
def test_written_notes_inside_extreme_ranges(built: dict[str, Built], name: str) -> None:
    # music21 instrument lowestNote (written); highest from memory (HIGH_WRITTEN)
    assert name in built
    assert range_violations(built[name]) == []


def test_audit_counts(built: dict[str, Built], capsys: pytest.CaptureFixture[str]) -> None:
    """Prints the violation counts (the audit's summary); fails if any is left."""
    counts = {k: sum(len(f(b)) for b in built.values())
              for k, f in (("guide tones", guide_tone_violations), ("bottom", bottom_violations),
                           ("range", range_violations))}
    moments = sum(len(_moments(b)) for b in built.values())
    with capsys.disabled():
        print(f"\naudit: {len(built)} scores, {moments} voicings; violations {counts}")
    assert counts == {"guide tones": 0, "bottom": 0, "range": 0}


def test_audit_catches_a_missing_third() -> None:
    # the audit itself: music21 names the guide tones of the symbols it reads
    from music21 import harmony

    assert _guide_tones(harmony.ChordSymbol("Dm7")) == {"3rd": 5, "7th": 0}
    assert _guide_tones(harmony.ChordSymbol("C6")) == {"3rd": 4, "7th": 9}
    assert _guide_tones(harmony.ChordSymbol("G7sus4")) == {"3rd": 0, "7th": 5}
    sus = harmony.ChordSymbol(root="A", kind="suspended-fourth")
    sus.addChordStepModification(harmony.ChordStepModification("add", 7, 0))
    assert _guide_tones(sus) == {"3rd": 2, "7th": 7}       # MusicXML 4.0: A sus4 add 7 = A7sus4
    assert Path(__file__).is_file()


def test_a_section_that_cannot_voice_the_line_stops_the_build(tmp_path: Path) -> None:
    # bad input: four trumpets under a lead held at the bottom of the trumpet's range (music21:
    # Trumpet lowestNote written F#3, sounding E3): no voicing fits; exit 2, one line naming
    # the bar, the part and the note, and nothing written
    text = _project("Too Low", "C major", "C6 | Dm7 G7 | C6", "trumpets-4", "close", "G3 A3 F3 G3",
                    statements=2).replace("statements = 2", 'statements = 2\nlead_range = ["E3", "E4"]')
    path = tmp_path / "low.toml"
    path.write_text(text, encoding="utf-8")
    out = tmp_path / "out"
    res = run_cli("build", str(path), "-o", str(out))
    assert res.exit_code == 2, res.output
    line = res.output.strip().splitlines()[-1]
    assert "Traceback" not in res.output
    assert "bar 1" in line and "Trumpet" in line and "cannot play" in line and "extreme range" in line
    assert not out.exists() or not any(out.iterdir())
    # allow_extreme = true writes them on purpose, each one a warning in the report
    path.write_text(text.replace('voicing = "close"', 'voicing = "close"\nallow_extreme = true'),
                    encoding="utf-8")
    res = run_cli("build", str(path), "-o", str(out), "--formats", "musicxml,report")
    assert res.exit_code == 0, res.output
    import json

    report = json.loads(next(out.glob("*.report.json")).read_text())
    extreme = [w for w in report["warnings"] if w["kind"] == "extreme"]
    assert extreme and all(w["severity"] == "warning" and w["part"] for w in extreme)


def test_eleven_for_third_only_when_asked(tmp_path: Path) -> None:
    # the house option through the CLI: with eleven_for_third = true some minor chord sounds
    # its 11 without its third (music21 ChordSymbol steps); the same project without the
    # option keeps every third (common practice)
    from music21 import converter

    base = _project("Eleven", "D dorian", "Dm7 | Gm7 | Dm7 | Am7", "trumpets-4", "close",
                    "G5 F5 A5 G5 C5", statements=4)
    counts = {}
    for opt in (False, True):
        text = base.replace('voicing = "close"', f'voicing = "close"\neleven_for_third = {str(opt).lower()}')
        path = tmp_path / f"e{opt}.toml"
        path.write_text(text, encoding="utf-8")
        out = tmp_path / f"out{opt}"
        res = run_cli("build", str(path), "-o", str(out), "--formats", "musicxml")
        assert res.exit_code == 0, res.output
        written = converter.parse(str(next(out.glob("*.musicxml"))))
        b = Built("eleven", written.toSoundingPitch(), written, 4)
        counts[opt] = sum(1 for m in _moments(b)
                          if _guide_tones(m.chord).get("3rd") not in {p % 12 for p in m.pitches})
    assert counts[False] == 0
    assert counts[True] > 0


def test_report_names_the_doublings_of_brass_6(tmp_path: Path) -> None:
    # six brass on a four-note structure: two notes double, and the report says which
    # (counted independently from the pitches the report lists)
    import json

    path = tmp_path / "b6.toml"
    path.write_text(PROJECTS["brass6-close"].replace('formats = ["musicxml"]', 'formats = ["report"]'),
                    encoding="utf-8")
    res = run_cli("build", str(path), "-o", str(tmp_path / "o"))
    assert res.exit_code == 0, res.output
    report = json.loads(next((tmp_path / "o").glob("*.report.json")).read_text())
    for e in report["events"]:
        extra = len(e["pitches"]) - len({p % 12 for p in e["pitches"]})
        assert len(e["doublings"]) == extra, e
        assert all("(part " in d for d in e["doublings"])
    md = next((tmp_path / "o").glob("*.report.md")).read_text()
    assert "doubled there" in md


def test_a_kept_chord_under_a_clashing_lead_is_that_chord(tmp_path: Path) -> None:
    # a B held over F6 (no tension of F6, no diatonic chord of F major holds it): the chord
    # is kept, its own tones sound under the lead (music21 ChordSymbol pitch classes, the root
    # among them, not the lead's pitch class swapped in) and the report names the clash
    import json

    from music21 import converter

    path = tmp_path / "clash.toml"
    path.write_text('title = "Clash"\ntempo = 100\nmeter = "4/4"\nkey = "F major"\n'
                    'melody = "[F6] B4:1 | [F6] A4:1 |"\n\n[section]\nname = "trumpets-4"\n'
                    'voicing = "close"\n\n[output]\nformats = ["musicxml", "report"]\n', encoding="utf-8")
    out = tmp_path / "out"
    res = run_cli("build", str(path), "-o", str(out))
    assert res.exit_code == 0, res.output
    written = converter.parse(str(next(out.glob("*.musicxml"))))
    b = Built("clash", written.toSoundingPitch(), written, 4)
    first = _moments(b)[0]
    tones = {p.pitchClass for p in first.chord.pitches}
    assert first.pitches[0] % 12 == 11 and 11 not in tones           # B over F6
    assert {p % 12 for p in first.pitches[1:]} <= tones               # the chord's own tones
    assert first.chord.root().pitchClass in {p % 12 for p in first.pitches[1:]}
    assert set(_guide_tones(first.chord).values()) <= {p % 12 for p in first.pitches}
    report = json.loads(next(out.glob("*.report.json")).read_text())
    assert any(w["kind"] == "clash" and w["bar"] == 1 for w in report["warnings"])
