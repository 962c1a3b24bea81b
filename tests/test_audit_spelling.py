"""Spelling and key signatures as a player reads them, judged from the written files.

Every project below is built once through the CLI (module fixture); music21 reads the
scores and parts back, independently of our writers.  References, beside each check:

* circle of fifths / common notation practice: a key signature carries at most 7
  accidentals, and a transposed part whose key lands past 6 takes the enharmonic key with
  fewer (concert F# major: trumpet in Ab major, alto in Eb major); music21 ``key.Key``
  and ``interval.Interval`` give the signature a key moved by an interval has;
* music21 reads every part back (``toSoundingPitch``) to the pitches report.json lists;
* common practice of engraving: no double sharp or double flat except the seventh of a
  diminished seventh chord (and a minor key's raised seventh, G# minor's F##); one spelling of a pitch class at one moment across the score;
  a tie never changes a note's spelling;
* music21 ``harmony.ChordSymbol`` spells the chord tones of each printed symbol: a
  lead-section note on one of them takes that spelling (the degree over the root);
* common practice of lead sheets: a sixth chord never sounds its major seventh (that
  sound is a maj7 chord);
* SMuFL 1.4 glyph code points (E262 sharp, E260 flat, E263/E269 double sharp, E264 double
  flat) in verovio's SVG preview.
"""
from __future__ import annotations

import json
import re
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import pytest
from conftest import DEMOS, ROOT, part_notes, run_cli

ALL = '["chromatic", "diatonic", "dominant", "diminished", "tritone"]'
INSTRUMENTS = tomllib.loads((ROOT / "voicing_rules" / "instruments.toml").read_text(encoding="utf-8"))
SECTIONS = tomllib.loads((ROOT / "voicing_rules" / "sections.toml").read_text(encoding="utf-8"))
# standard interval names (common practice) to music21's interval names
M21_INTERVAL = {"unison": "P1", "minor second": "m2", "major second": "M2", "minor third": "m3",
                "major third": "M3", "perfect fourth": "P4", "perfect fifth": "P5",
                "minor sixth": "m6", "major sixth": "M6", "minor seventh": "m7",
                "major seventh": "M7", "octave": "P8", "major ninth": "M9", "minor tenth": "m10",
                "perfect eleventh": "P11", "perfect twelfth": "P12", "major thirteenth": "M13",
                "two octaves": "P15"}
TRANSPOSING = sorted(k for k, v in INSTRUMENTS.items() if v["transposition"])

MAJORS = ("C", "G", "D", "A", "E", "B", "F#", "C#", "F", "Bb", "Eb", "Ab", "Db", "Gb", "Cb")
MINORS = ("A", "E", "B", "F#", "C#", "G#", "D#", "A#", "D", "G", "C", "F", "Bb", "Eb", "Ab")
MODE_KEYS = ("D dorian", "F# dorian", "E phrygian", "G# phrygian", "F lydian", "Eb lydian",
             "G mixolydian", "Db mixolydian", "A aeolian", "C# aeolian", "B locrian", "F locrian",
             "C ionian", "Bb harmonic minor", "F# melodic minor", "D# dorian", "C# lydian",
             "G# major", "D# lydian")


def _midi(name: str) -> int:
    from music21 import pitch

    return int(pitch.Pitch(name.replace("b", "-") if len(name) > 2 else name).midi)


def _walk(title: str, keys: tuple[str, ...], parts: bool = False) -> tuple[str, list[str]]:
    """A project that changes key every bar (half notes, two per bar), voiced by every
    transposing instrument of instruments.toml: saxophones lead, the rest in pads."""
    n_notes = 2 * len(keys)
    statements = 1 + -(-(n_notes - 6) // 4)
    # the saxophones top to bottom by register (a part is voiced under the one above it)
    lead = sorted((k for k in TRANSPOSING if k.endswith("sax")),
                  key=lambda k: -_midi(INSTRUMENTS[k]["extreme"][1]))
    rest = [k for k in TRANSPOSING if k not in lead]
    half = (len(rest) + 1) // 2
    layers = "".join(
        f'\n[[layers]]\nsection = {{ name = "pad{j}", parts = {json.dumps(grp)} }}\n'
        'role = "pad"\nrhythm = "1"\ndynamics = "p"\n'
        for j, grp in enumerate((rest[:half], rest[half:]), start=1) if grp)
    changes = ", ".join(f'"{k} from bar {b}"' for b, k in enumerate(keys[1:], start=2))
    text = f'''title = "{title}"
tempo = 120
meter = "4/4"
key = "{keys[0]}"

[chain]
motif = "C4 E4 D4 G4 F4 A4"
statements = {statements}
overlap = 2

[rhythm]
groove = "straight"
cell = "2"

[harmony]
preset = "two-five-home"
keys = [{changes}]
approach = {ALL}

[section]
name = "reeds"
parts = {json.dumps(lead)}
voicing = "close"
{layers}
[output]
formats = ["musicxml", "report"]
parts = {str(parts).lower()}
'''
    return text, list(keys)


def _project(title: str, key: str, motif: str, framework: str, section: str, *, layers: str = "",
             groove: str = "straight", output: str = "", bass: bool = False) -> tuple[str, list[str]]:
    text = f'''title = "{title}"
tempo = 132
meter = "4/4"
key = "{key}"

[chain]
motif = "{motif}"
statements = 4
overlap = 2

[rhythm]
groove = "{groove}"

[harmony]
framework = "{framework}"
approach = {ALL}

[section]
name = "{section}"
voicing = "close"
{layers}
[output]
{output or 'formats = ["musicxml", "report"]'}
'''
    if bass:        # a walking bass line: chromatic approach notes under the voiced chords
        text += '\n[rhythm_section]\nparts = ["bass"]\nbass = "walking"\n'
    return text, [key]


def _pad(section: str, role: str = "pad", rhythm: str = "2") -> str:
    return f'\n[[layers]]\nsection = "{section}"\nrole = "{role}"\nrhythm = "{rhythm}"\ndynamics = "p"\n'


FULL = 'formats = ["musicxml", "report", "preview"]\nparts = true'
CONCERT = 'formats = ["musicxml", "report"]\nconcert_score = true'

FS = ("F# major", "C#5 B4 D5 A#4 G4 G#4", "F#maj7 | D#m7 | G#m7 C#7 | F#6", "saxes-5")
B = ("B major", "F#4 A4 G#4 D#5 E5 C5", "Bmaj7 | G#m7 | C#m7 F#7 | B6", "brass-8")
PROJECTS: dict[str, tuple[str, list[str]]] = {
    # the "done when": F# and B major, saxes-5 and brass-8, every technique
    "fs": _project("Sharp Six", *FS, layers=_pad("brass-8"), groove="swing", output=FULL, bass=True),
    "fs-concert": _project("Sharp Six Concert", *FS, layers=_pad("brass-8"), groove="swing",
                           output=CONCERT, bass=True),
    "b": _project("Five Sharps", *B, layers=_pad("saxes-5", rhythm="1"), output=FULL),
    "b-concert": _project("Five Sharps Concert", *B, layers=_pad("saxes-5", rhythm="1"),
                          output=CONCERT),
    "db": _project("Five Flats", "Db major", "Ab4 F4 Bb4 Eb5 D5 Gb4", "Dbmaj7 | Bbm7 | Ebm7 Ab7 | Db6",
                   "saxes-5"),
    "gb": _project("Six Flats", "Gb major", "Db5 Bb4 Cb5 F4 G4 Eb5", "Gbmaj7 | Ebm7 | Abm7 Db7 | Gbmaj7",
                   "brass-8", output=CONCERT),
    "cs": _project("Seven Sharps", "C# major", "G#4 E#4 A#4 D#5 D5 F#4", "C#maj7 | A#m7 | D#m7 G#7 | C#maj7",
                   "saxes-5"),
    "e": _project("Strings In E", "E major", "B4 D5 C#5 G#4 A4 F4", "Emaj7 | C#m7 | F#m7 B7 | E6",
                  "strings-5", output=CONCERT),
    "dm": _project("Minor Brass", "D minor", "A4 C5 Bb4 E5 F5 C#5", "Dm7 | Gm7 C7 | Fmaj7 | Em7b5 A7",
                   "brass-8", bass=True),
    "f#dorian": _project("Dorian Horns", "F# dorian", "F#4 A4 G#4 D#5 C#5 E4", "F#m7 | B7 | F#m7 | Emaj7",
                         "horns-4"),
    "eblydian": _project("Lydian Brass", "Eb lydian", "Bb4 A4 G4 D5 F5 C5", "Ebmaj7 | F7 | Ebmaj7 | Dm7",
                         "brass-6", groove="swing", bass=True),
    "gb-bass": _project("Six Flats Walking", "Gb major", "Db5 Bb4 Cb5 F4 G4 Eb5", "Gbmaj7 | Ebm7 | Abm7 Db7 | Gbmaj7",
                        "saxes-5", groove="swing", layers=_pad("trombones-4", rhythm="1"), bass=True),
    "walk-major": _walk("Walk Major", tuple(f"{t} major" for t in MAJORS), parts=True),
    "walk-minor": _walk("Walk Minor", tuple(f"{t} minor" for t in MINORS)),
    "walk-modes": _walk("Walk Modes", MODE_KEYS),
}
for demo in sorted(DEMOS.glob("*.toml")):
    data = tomllib.loads(demo.read_text(encoding="utf-8"))
    keys = [data["key"], *[re.sub(r"\s+from bar.*", "", k) for k in data.get("harmony", {}).get("keys", [])]]
    PROJECTS[f"demo-{demo.stem}"] = (demo.read_text(encoding="utf-8"), keys)


@dataclass
class Part:
    name: str
    instrument: str
    lead: bool                      # a part of the lead section (the printed symbols are its chords)
    report_pitches: list[int]       # sounding pitches report.json gives this part, in order


@dataclass
class Built:
    name: str
    folder: Path
    concert: bool
    report: dict[str, Any]
    md: str
    score: Any                      # music21 Score as written
    sounding: Any                   # the same, at sounding pitch
    parts: list[Part]
    part_files: list[Path]
    keys: list[str]                 # the keys the project names
    chords: list[tuple[float, Any]] = field(default_factory=list)   # (offset, ChordSymbol), concert
    files: list[tuple[str, int, Any, Any]] = field(default_factory=list)  # part files: name, part, written, sounding
    bass: Any = None                # the rhythm section's bass part as written (None: no bass)

    def group(self, k: int) -> int:
        """Parts that read one written key: in a concert score all; in a transposed score
        those of one transposition (modulo octaves).  Only parts of one group are compared
        note for note (a part in the enharmonic key sounds, say, Gb where the rest read F#)."""
        return 0 if self.concert else int(INSTRUMENTS[self.parts[k].instrument]["transposition"]) % 12


def _score_parts(report: dict[str, Any]) -> list[Part]:
    out = []
    for k, p in enumerate(report["section"]["parts"]):
        out.append(Part(p["name"], p["instrument"], True, [n[2] for n in part_notes(report, k)]))
    for layer in report.get("layers", []):
        for k, p in enumerate(layer["parts"]):
            out.append(Part(p["name"], p["instrument"], False,
                            [n["pitches"][k] for n in layer["notes"] if n["pitches"][k] is not None]))
    return out


def _in_report_order(score: Any, parts: list[Part]) -> Any:
    """The score's parts in report order (lead section, then layers), matched by name: the
    score itself stands in score order (saxophones above brass).  The rhythm section's parts
    are left out: they are checked with the bass below (``_bass``)."""
    staves = list(score.parts)
    used: set[int] = set()
    ordered = []
    for part in parts:
        j = next(j for j, s in enumerate(staves) if j not in used and s.partName == part.name)
        used.add(j)
        ordered.append(staves[j])
    for s in staves:
        score.remove(s)
    for s in ordered:
        score.insert(0, s)
    assert [s.partName for s in score.parts] == [p.name for p in parts]
    return next((s for j, s in enumerate(staves) if j not in used and s.partName == "Bass"), None)


@pytest.fixture(scope="module")
def built(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Built]:
    from music21 import converter, harmony

    out: dict[str, Built] = {}
    for name, (text, keys) in PROJECTS.items():
        folder = tmp_path_factory.mktemp(re.sub(r"\W", "_", name))
        proj = folder / "p.toml"
        proj.write_text(text, encoding="utf-8")
        if name.startswith("demo-"):
            proj = DEMOS / f"{name[5:]}.toml"       # in place: a demo may read files beside it
        r = run_cli("build", str(proj), "-o", str(folder / "out"), *(
            ["--formats", "musicxml,report"] if name.startswith("demo-") else []))
        assert r.exit_code == 0, (name, r.output)
        o = folder / "out"
        report_path = next(o.glob("*.report.json"))
        stem = report_path.name[: -len(".report.json")]
        report = json.loads(report_path.read_text(encoding="utf-8"))
        score = converter.parse(str(o / f"{stem}.musicxml"))
        parts = _score_parts(report)
        bass = _in_report_order(score, parts)
        sounding = score.toSoundingPitch(inPlace=False)
        # the symbols at concert pitch: over a transposed staff they are written for it
        # (a reader's toSoundingPitch gives the concert symbol back)
        chords = [(float(cs.offset), cs) for cs in
                  sounding.parts[0].flatten().getElementsByClass(harmony.ChordSymbol)]
        b = Built(name, o, "concert_score = true" in text, report,
                  (o / f"{stem}.report.md").read_text(encoding="utf-8"), score,
                  sounding, parts,
                  sorted((o / f"{stem}-parts").glob("part*.musicxml"))[:len(parts)], keys, chords, bass=bass)
        b.chords = [(off, _concert_spelling(b, off, cs)) for off, cs in chords]
        for k, f in enumerate(b.part_files):
            w = converter.parse(str(f))
            b.files.append((f.name, k, w, w.toSoundingPitch(inPlace=False)))
        out[name] = b
    return out


# ---------------------------------------------------------------- helpers


def _concert_spelling(b: Built, offset: float, cs):  # noqa: ANN001, ANN202
    """A symbol read back at sounding pitch from a staff whose key is the enharmonic one
    (concert B major, trumpet in Db major: its Dbmaj7 sounds back as Cbmaj7) spelled as the
    concert key spells it: of the symbol and its enharmonic neighbours (music21 ``transpose``
    by a diminished second), the one with the fewest tones two half steps from the concert
    key's signature."""
    keys = _concert_key_by_bar(b)
    sig = _m21_key(keys[max(x for x in keys if x <= max(_bar_of(b, offset), 1))])

    def far(c) -> int:  # noqa: ANN001
        return sum(1 for p in c.pitches
                   if abs((p.accidental.alter if p.accidental else 0) -
                          (a.alter if (a := sig.accidentalByStep(p.step)) else 0)) > 1)

    return min([cs, cs.transpose("-d2"), cs.transpose("d2")], key=far)


def _m21_key(text: str):  # noqa: ANN202
    from music21 import key

    tonic, mode = text.split(None, 1)
    mode = "minor" if "minor" in mode else mode
    return key.Key(tonic.replace("b", "-") if len(tonic) > 1 else tonic, mode)


def _interval(instrument: str):  # noqa: ANN202
    from music21 import interval

    return interval.Interval(M21_INTERVAL[INSTRUMENTS[instrument]["interval"]])


def expected_sharps(concert: str, instrument: str, concert_score: bool) -> int:
    """The written signature (circle of fifths, common notation practice): the concert key
    moved by the instrument's interval; past 6 the enharmonic key with fewer accidentals;
    a key the project names itself may keep 7 where the part sounds as written (or by octaves)."""
    k = _m21_key(concert)
    moved = concert_score or INSTRUMENTS[instrument]["transposition"] % 12 == 0
    sharps = int(k.sharps) if moved else int(k.transpose(_interval(instrument)).sharps)
    limit = 7 if moved else 6
    while abs(sharps) > limit:
        sharps -= 12 if sharps > 0 else -12
    return sharps


def _signatures(part) -> dict[int, int]:  # noqa: ANN001
    from music21 import key, stream

    return {int(m.number): int(ks.sharps) for m in part.getElementsByClass(stream.Measure)
            for ks in m.getElementsByClass(key.KeySignature)}


def _concert_key_by_bar(b: Built) -> dict[int, str]:
    """The key the project names for every bar (bar 1 = the project key), from the project
    text itself, not from our report."""
    text, _keys = PROJECTS[b.name]
    data = tomllib.loads(text)
    out = {1: data["key"]}
    if data.get("harmony", {}).get("modulate") == "by-statement" or data.get("passages"):
        # keys the chain's transposition or a form's passages reach (the report names them)
        out.update({k["bar"]: k["key"] for k in b.report["keys"]})
    for k in data.get("harmony", {}).get("keys", []):
        m = re.match(r"(.*?)\s+from\s+bar\s+(\d+)", k)
        assert m
        out[int(m.group(2))] = m.group(1)
    return out


_NOTES: dict[int, tuple[Any, list[Any]]] = {}


def _notes(part) -> list[Any]:  # noqa: ANN001
    """The part's notes (chord symbols left out), cached per part object."""
    from music21 import note

    hit = _NOTES.get(id(part))
    if hit is None or hit[0] is not part:
        hit = _NOTES[id(part)] = (part, [n for n in part.flatten().notes if isinstance(n, note.Note)])
    return hit[1]


def _bar_of(b: Built, offset: float) -> int:
    pickup = float(b.report.get("rhythm", {}).get("pickup", 0) or 0)
    bar = float(b.report["meter"].split("/")[0]) * 4 / float(b.report["meter"].split("/")[1])
    return int((offset - pickup) // bar) + 1


_MOMENTS: dict[str, dict[float, list[tuple[int, Any]]]] = {}


def _moments(b: Built) -> dict[float, list[tuple[int, Any]]]:
    """Sounding notes per onset: (part index, Note) for every note sounding at each onset."""
    if b.name in _MOMENTS:
        return _MOMENTS[b.name]
    spans = []
    for k, p in enumerate(b.sounding.parts):
        for n in _notes(p):
            spans.append((float(n.offset), float(n.offset + n.quarterLength), k, n))
    onsets = sorted({s[0] for s in spans})
    _MOMENTS[b.name] = {t: [(k, n) for s, e, k, n in spans if s <= t < e] for t in onsets}
    return _MOMENTS[b.name]


def _chord_at(b: Built, t: float):  # noqa: ANN202
    found = None
    for off, cs in b.chords:
        if off <= t + 1e-9:
            found = cs
    return found


def _is_dim7_seventh(cs, pitch) -> bool:  # noqa: ANN001
    return cs is not None and cs.chordKind == "diminished-seventh" and \
        (pitch.pitchClass - cs.root().pitchClass) % 12 == 9


def _leading_tone(b: Built, t: float, pitch) -> bool:  # noqa: ANN001
    """The raised seventh of a minor key (G# minor's F##, common practice of harmonic
    minor): a key's own degree, spelled as the key spells it."""
    keys = _concert_key_by_bar(b)
    concert = keys[max(x for x in keys if x <= max(_bar_of(b, t), 1))]
    k = _m21_key(concert)
    return k.mode == "minor" and (pitch.pitchClass - k.tonic.pitchClass) % 12 == 11


def _doubles(b: Built, written, label: str, sounding=None) -> list[str]:  # noqa: ANN001
    """Notes with a double accidental that is not the seventh of a diminished seventh."""
    bad = []
    sounding = sounding or written
    for k, (wp, sp) in enumerate(zip(written.parts, sounding.parts, strict=True)):
        for wn, sn in zip(_notes(wp), _notes(sp), strict=True):
            if wn.pitch.accidental is not None and abs(wn.pitch.accidental.alter) >= 2:
                t = float(wn.offset)
                if not _is_dim7_seventh(_chord_at(b, t), sn.pitch) and \
                        not _leading_tone(b, t, sn.pitch):
                    bad.append(f"{b.name} {label} {wp.partName or k} bar {_bar_of(b, float(wn.offset))}: "
                               f"{wn.pitch.nameWithOctave}")
    return bad


# ---------------------------------------------------------------- key signatures


def test_the_matrix_covers_every_key_and_transposing_instrument() -> None:
    # the check below is only as good as its coverage: every major and minor signature
    # (15 each, circle of fifths), every mode, every transposing instrument of instruments.toml
    named = {k for _t, keys in PROJECTS.values() for k in keys}
    assert {f"{t} major" for t in MAJORS} <= named and {f"{t} minor" for t in MINORS} <= named
    modes = {k.split(None, 1)[1] for k in named}
    assert {"ionian", "dorian", "phrygian", "lydian", "mixolydian", "aeolian", "locrian",
            "harmonic minor", "melodic minor"} <= modes
    assert len(TRANSPOSING) >= 8


def test_key_signatures_at_most_seven_and_the_enharmonic_with_fewer(built: dict[str, Built]) -> None:
    bad = []
    checked = set()
    for b in built.values():
        keys = _concert_key_by_bar(b)
        files = [(b.score.parts[k], k, "score") for k in range(len(b.parts))]
        files += [(w.parts[0], k, fname) for fname, k, w, _s in b.files]
        for part, k, where in files:
            inst = b.parts[k].instrument
            sigs = _signatures(part)
            assert sigs, (b.name, where, "no key signature")
            for m, sharps in sigs.items():
                concert = keys[max(x for x in keys if x <= max(m, 1))]
                want = expected_sharps(concert, inst, b.concert and where == "score")
                checked.add((concert, inst))
                if abs(sharps) > 7 or sharps != want:
                    bad.append(f"{b.name} {where} {b.parts[k].name} m.{m} ({concert}): "
                               f"{sharps} sharps, want {want}")
    for inst in TRANSPOSING:
        for t in MAJORS:
            assert (f"{t} major", inst) in checked, (t, inst)
        for t in MINORS:
            assert (f"{t} minor", inst) in checked, (t, inst)
    assert not bad, f"{len(bad)} bad key signatures: " + "; ".join(bad[:12])


def test_parts_read_back_to_the_sounding_pitches(built: dict[str, Built]) -> None:
    bad = []
    for b in built.values():
        sources = [(list(b.sounding.parts), range(len(b.parts)), "score")] + [
            (list(snd.parts), [k], fname) for fname, k, _w, snd in b.files]
        for parts, index, where in sources:
            for p, k in zip(parts, index, strict=True):
                # a tie joins one sounding note (MusicXML 4.0 <tie>): pieces merged by the tie
                # marks alone (music21's stripTies also wants equal accidentals, and a
                # written natural on the first piece only is the same pitch)
                heard = []
                for n in _notes(p):
                    if n.tie is None or n.tie.type == "start":
                        heard.append(n.pitch.midi)
                if heard != b.parts[k].report_pitches:
                    bad.append(f"{b.name} {where} part {k + 1}")
    assert not bad, bad[:10]


# ---------------------------------------------------------------- accidentals and spelling


def test_no_double_accidental_but_a_diminished_sevenths(built: dict[str, Built]) -> None:
    bad = []
    for b in built.values():
        bad += _doubles(b, b.score, "score", b.sounding)
        for fname, _k, w, snd in b.files:
            bad += _doubles(b, w, fname, snd)
    assert not bad, f"{len(bad)} double accidentals: " + "; ".join(bad[:15])


def _far_from_signature(b: Built, written, label: str, sounding=None) -> list[str]:  # noqa: ANN001
    """Notes whose accidental moves their letter two half steps or more from the form the key
    signature in force gives it (B# or E# under a flat signature, Cbb, D# in Db major)."""
    import bisect

    from music21 import key, stream

    bad = []
    sounding = sounding or written
    for k, (wp, sp) in enumerate(zip(written.parts, sounding.parts, strict=True)):
        starts, sigs, numbers = [], [], []
        sig = None
        for wm in wp.getElementsByClass(stream.Measure):
            sig = next(iter(wm.getElementsByClass(key.KeySignature)), sig)
            starts.append(float(wm.offset))
            sigs.append(sig)
            numbers.append(wm.number)
        for wn, sn in zip(_notes(wp), _notes(sp), strict=True):
            t = float(wn.offset)
            i = bisect.bisect_right(starts, t + 1e-9) - 1
            alter = wn.pitch.accidental.alter if wn.pitch.accidental is not None else 0
            held = sigs[i].accidentalByStep(wn.pitch.step) if sigs[i] is not None else None
            if abs(alter - (held.alter if held is not None else 0)) < 2:
                continue
            if not _is_dim7_seventh(_chord_at(b, t), sn.pitch) and not _leading_tone(b, t, sn.pitch):
                bad.append(f"{b.name} {label} {wp.partName or k} bar {numbers[i]}: "
                           f"{wn.pitch.nameWithOctave} under {sigs[i].sharps if sigs[i] else 0} sharps")
    return bad


def test_no_note_lies_two_half_steps_from_its_key_signature(built: dict[str, Built]) -> None:
    # common practice of engraving: an accidental moves a note of the key a half step; a
    # pitch two half steps from its letter's form in the signature is spelled with the
    # neighbouring letter (Ab7 in Bb major, not G#7 with B# and E#), but the seventh of a
    # diminished seventh chord and a minor key's raised seventh (as the double accidentals)
    # The walks (a new key every bar, every transposing instrument) are left out: there a
    # chromatic chord of one bar's key, written in a part's enharmonic key, may keep a root
    # (E7 in Db major) whose other spelling would be an odd one (Fb7 with Ebb).
    bad = []
    for b in built.values():
        if b.name.startswith("walk-"):
            continue
        bad += _far_from_signature(b, b.score, "score", b.sounding)
        for fname, _k, w, snd in b.files:
            bad += _far_from_signature(b, w, fname, snd)
    per = {n: sum(1 for x in bad if x.split()[0] == n) for n in dict.fromkeys(x.split()[0] for x in bad)}
    assert not bad, f"{len(bad)} notes two half steps from the signature {per}: " + "; ".join(bad[:60])


def test_one_spelling_per_pitch_class_at_one_moment(built: dict[str, Built]) -> None:
    """Across every part of the score, layers included, at sounding pitch; in a transposed
    score among the parts that read one written key (``Built.group``)."""
    bad = []
    for b in built.values():
        for t, notes in _moments(b).items():
            bar = _bar_of(b, t)
            seen: dict[tuple[int, int], tuple[str, int]] = {}
            for k, n in notes:
                slot = (b.group(k), n.pitch.pitchClass)
                if slot in seen and seen[slot][0] != n.pitch.name:
                    other = seen[slot]
                    bad.append(f"{b.name} bar {bar}: {n.pitch.name} in {b.parts[k].name} against "
                               f"{other[0]} in {b.parts[other[1]].name}")
                seen.setdefault(slot, (n.pitch.name, k))
    assert not bad, f"{len(bad)} clashing spellings: " + "; ".join(bad[:12])


def test_the_bass_reads_each_pitch_class_as_the_score_does(built: dict[str, Built]) -> None:
    """The written bass line (an octave above sounding, read by music21) takes part in the
    one-spelling rule: while a bass note sounds, every note of its pitch class in the parts
    that read the same written key (a concert score: all; a transposed score: the parts in
    C or octaves) is spelled as the bass spells it (common practice of engraving)."""
    checked = 0
    held = 0
    bad = []
    for b in built.values():
        if b.bass is None:
            continue
        moments = _moments(b)
        onsets = sorted(moments)
        for n in _notes(b.bass.stripTies()):
            t0, t1 = float(n.offset), float(n.offset + n.quarterLength)
            others = {}
            for t in onsets:
                if t0 - 8 <= t < t1:
                    for k, other in moments[t]:
                        if b.group(k) == 0 and other.pitch.pitchClass == n.pitch.pitchClass and \
                                float(other.offset) < t1 and t0 < float(other.offset + other.quarterLength):
                            others[id(other)] = (k, other)
            names = {o.pitch.name for _k, o in others.values()}
            checked += len(others)
            if len(names) > 1:
                # the horns respell the pitch class while the bass holds one note (an
                # approach chord's degree): a tie keeps its name, so the bass takes one of them
                held += 1
                if n.pitch.name not in names:
                    bad.append(f"{b.name} bar {_bar_of(b, t0)}: bass {n.pitch.name} against {sorted(names)}")
                continue
            for k, other in others.values():
                if other.pitch.name != n.pitch.name:
                    bad.append(f"{b.name} bar {_bar_of(b, t0)}: bass {n.pitch.name} against "
                               f"{other.pitch.name} in {b.parts[k].name}")
    assert checked > 50, checked
    assert held <= 3, held
    assert not bad, f"{len(bad)} clashing spellings: " + "; ".join(sorted(set(bad))[:12])


def test_chord_tones_are_spelled_by_degree_over_the_root(built: dict[str, Built]) -> None:
    """music21's ChordSymbol spells each printed chord's tones (root, 3rd, 5th, 7th and the
    tensions it names); a lead-section note on one of them takes that name."""
    bad = []
    total = 0
    for b in built.values():
        for k, p in enumerate(b.sounding.parts):
            if not b.parts[k].lead:
                continue
            for n in _notes(p):
                t = float(n.offset)
                cs = _chord_at(b, t)
                if cs is None or b.group(k) != 0:
                    continue
                names = {x.pitchClass: x.name for x in cs.pitches}
                # a degree needing a double accidental (Cb7's Bbb) is written as its
                # enharmonic (the double-accidental check above)
                if n.pitch.pitchClass not in names or _is_dim7_seventh(cs, n.pitch) or \
                        abs(next(x for x in cs.pitches if x.pitchClass == n.pitch.pitchClass).alter) >= 2:
                    continue
                total += 1
                if names[n.pitch.pitchClass] != n.pitch.name:
                    bad.append(f"{b.name} bar {_bar_of(b, t)} {b.parts[k].name}: {n.pitch.name} under "
                               f"{cs.figure} (its {names[n.pitch.pitchClass]})")
    assert total > 500
    assert not bad, f"{len(bad)} of {total} chord tones off their degree: " + "; ".join(bad[:12])


def test_written_chord_tones_are_spelled_by_degree_over_the_written_symbol(built: dict[str, Built]) -> None:
    """The same over a transposed staff: music21 spells the tones of each chord symbol as the
    top staff prints it (written for that staff); a lead-section note of every part that
    reads the top staff's transposition takes that name (Gb, the seventh of an alto's Ab7,
    not F#), but a degree needing a double accidental and a dim7's seventh."""
    from music21 import harmony

    bad = []
    total = 0
    for b in built.values():
        if b.concert:
            continue
        top = INSTRUMENTS[b.parts[0].instrument]["transposition"] % 12
        if top == 0:
            continue
        symbols = [(float(cs.offset), cs) for cs in
                   b.score.parts[0].flatten().getElementsByClass(harmony.ChordSymbol)]
        for k, p in enumerate(b.score.parts):
            if not b.parts[k].lead or INSTRUMENTS[b.parts[k].instrument]["transposition"] % 12 != top:
                continue
            for n in _notes(p):
                t = float(n.offset)
                cs = next((c for off, c in reversed(symbols) if off <= t + 1e-9), None)
                if cs is None:
                    continue
                names = {x.pitchClass: x for x in cs.pitches}
                x = names.get(n.pitch.pitchClass)
                if x is None or abs(x.alter) >= 2 or (cs.chordKind == "diminished-seventh" and
                                                       (x.pitchClass - cs.root().pitchClass) % 12 == 9):
                    continue
                total += 1
                if x.name != n.pitch.name:
                    bad.append(f"{b.name} bar {_bar_of(b, t)} {b.parts[k].name}: {n.pitch.name} under "
                               f"{cs.figure} (its {x.name})")
    assert total > 500
    per = {x.split()[0]: sum(1 for y in bad if y.split()[0] == x.split()[0]) for x in bad}
    assert not bad, f"{len(bad)} of {total} written chord tones off their degree {per}: " + "; ".join(bad[:12])


def test_a_tie_keeps_its_spelling(built: dict[str, Built]) -> None:
    bad = []
    for b in built.values():
        scores = [(b.score, "score")] + [(w, fname) for fname, _k, w, _s in b.files]
        for s, where in scores:
            for p in s.parts:
                ns = _notes(p)
                for a, c in zip(ns, ns[1:], strict=False):
                    if a.tie is not None and a.tie.type in ("start", "continue") and \
                            a.pitch.nameWithOctave != c.pitch.nameWithOctave:
                        bad.append(f"{b.name} {where} {p.partName}: {a.pitch.nameWithOctave} tied to "
                                   f"{c.pitch.nameWithOctave}")
    assert not bad, bad[:10]


def test_a_sixth_chord_never_sounds_its_major_seventh(built: dict[str, Built]) -> None:
    bad = []
    for b in built.values():
        for t, notes in _moments(b).items():
            cs = _chord_at(b, t)
            if cs is None or cs.chordKind not in ("major-sixth", "minor-sixth"):
                continue
            for k, n in notes:
                if b.parts[k].lead and (n.pitch.pitchClass - cs.root().pitchClass) % 12 == 11:
                    bad.append(f"{b.name} bar {_bar_of(b, t)}: {n.pitch.name} in {b.parts[k].name} "
                               f"under {cs.figure}")
    assert not bad, f"{len(bad)} sixth chords holding a major seventh: " + "; ".join(bad[:10])


# ---------------------------------------------------------------- the report


def _concert_names(b: Built, k: int) -> list[str]:
    """Sounding names of part ``k`` with ties merged, in the report's order."""
    # one name per sounding note: tied pieces joined by their tie marks (MusicXML 4.0 <tie>)
    return [n.pitch.nameWithOctave.replace("-", "b") for n in _notes(b.sounding.parts[k])
            if n.tie is None or n.tie.type == "start"]


def test_the_report_spells_as_the_score_does(built: dict[str, Built]) -> None:
    """report.json's lead_name and per-event / per-layer-note ``names`` (sounding, top to
    bottom) equal the score's spelling at concert pitch; report.md's voicing and layer
    tables print the same names."""
    bad = []
    compared = 0
    for b in built.values():
        n_lead = len(b.report["section"]["parts"])
        per_part = {}
        for k in range(len(b.parts)):
            if b.group(k) == 0:
                per_part[k] = _concert_names(b, k)
        events = b.report["events"]
        for i, e in enumerate(events):
            if 0 in per_part and per_part[0][i] != e["lead_name"]:
                bad.append(f"{b.name} event {i + 1}: lead_name {e['lead_name']}, score {per_part[0][i]}")
        for k in range(n_lead):
            if k not in per_part:
                continue
            # the part's notes: each event, and each segment where the part moves (held, it is tied)
            said: list[tuple[int, str | None]] = []
            for e in events:
                said.append((e["index"], (e.get("names") or [None] * n_lead)[k]))
                last = e["pitches"][k]
                for sg in e.get("segments", []):
                    if sg["pitches"][k] != last:
                        said.append((e["index"], (sg.get("names") or [None] * n_lead)[k]))
                    last = sg["pitches"][k]
            for (i, got), want in zip(said, per_part[k], strict=True):
                compared += 1
                if got != want:
                    bad.append(f"{b.name} event {i + 1} part {k + 1}: report {got}, score {want}")
        k0 = n_lead
        for layer in b.report.get("layers", []):
            for j in range(len(layer["parts"])):
                k = k0 + j
                sung = iter(per_part.get(k, []))
                for n in layer["notes"]:
                    if n["pitches"][j] is None or k not in per_part:
                        continue
                    compared += 1
                    got = (n.get("names") or [None] * len(layer["parts"]))[j]
                    want = next(sung)
                    if got != want:
                        bad.append(f"{b.name} layer {layer['index']} part {j + 1} at {n['onset']}: "
                                   f"report {got}, score {want}")
            k0 += len(layer["parts"])
        # report.md: the voicing table's first-note pitches and the layer tables' pitches
        rows = re.findall(r"^\| (\d+) \| \d+ \| \S+ \| (\d+)-\d+ \| ([^|]+) \|$", b.md, re.M)
        for _st, first, text in rows:
            e = events[int(first) - 1]
            if e.get("names") and text.split() != e["names"]:
                bad.append(f"{b.name} report.md statement {_st}: {text.strip()} vs {' '.join(e['names'])}")
        for layer in b.report.get("layers", []):
            for n in layer["notes"]:
                want = " ".join(x or "rest" for x in (n.get("names") or []))
                if want and f"| {want} |" not in b.md:
                    bad.append(f"{b.name} report.md layer {layer['index']} at {n['onset']}: no row {want}")
    assert compared > 200
    assert not bad, f"{len(bad)} report names off the score: " + "; ".join(bad[:12])


_CLASH = re.compile(r"([A-G][#b]*) clashes with the lead's ([A-G][#b]*) \(([^)]+)\)")


def test_layer_whys_name_tones_as_the_score_does(built: dict[str, Built]) -> None:
    """A thinned pad chord's why ("X clashes with the lead's Y (part)") names the lead's
    note as the score spells it there (music21 reads the part at concert pitch), and the
    tone left out as music21's chord symbol printed over that moment spells it (the degree
    over the root)."""
    from music21 import pitch as m21pitch

    checked = 0
    bad = []
    for b in built.values():
        lead_names = [p["name"] for p in b.report["section"]["parts"]]
        pickup = float(b.report.get("rhythm", {}).get("pickup", 0) or 0)
        for layer in b.report.get("layers", []):
            for n in layer["notes"]:
                for left, lead_tone, part in _CLASH.findall(n["why"] or ""):
                    k = lead_names.index(part)
                    if b.group(k) != 0:
                        continue
                    t0 = float(n["onset"]) + pickup
                    t1 = t0 + float(n["duration"])
                    pc = m21pitch.Pitch(lead_tone.replace("b", "-") if len(lead_tone) > 1 else lead_tone).pitchClass
                    sounding = {x.pitch.name.replace("-", "b") for x in _notes(b.sounding.parts[k])
                                if x.pitch.pitchClass == pc and float(x.offset) < t1
                                and t0 < float(x.offset + x.quarterLength)}
                    checked += 1
                    if sounding and lead_tone not in sounding:
                        bad.append(f"{b.name} at {n['onset']}: why names the lead's {lead_tone}, score {sounding}")
                    cs = _chord_at(b, t0)
                    lpc = m21pitch.Pitch(left.replace("b", "-") if len(left) > 1 else left).pitchClass
                    tones = {x.name.replace("-", "b") for x in cs.pitches if x.pitchClass == lpc} if cs else set()
                    if tones and left not in tones:
                        bad.append(f"{b.name} at {n['onset']}: why leaves out {left}, {cs.figure} spells {tones}")
    assert checked > 10, checked
    assert not bad, f"{len(bad)} whys off the score: " + "; ".join(bad[:12])


# ---------------------------------------------------------------- the preview


def test_the_preview_shows_readable_signatures(built: dict[str, Built]) -> None:
    """verovio's SVG (SMuFL glyphs): no key signature past 7 accidentals or holding a
    double accidental, and no double accidental on a note of the F# and B major projects."""
    for name in ("fs", "b"):
        svg = next(built[name].folder.glob("*.svg")).read_text(encoding="utf-8")
        blocks = svg.split('class="keySig"')[1:]
        assert blocks, name
        for block in blocks:
            body = block.split('class="meterSig"')[0].split('class="layer"')[0]
            accs = re.findall(r'class="keyAccid">\s*<use xlink:href="#(E2[0-9A-F]{2})', body)
            assert len(accs) <= 7, (name, accs)
            assert not set(accs) & {"E263", "E264", "E269"}, (name, accs)
        doubles = re.findall(r'class="accid[^"]*">\s*<use xlink:href="#(E263|E264|E269)', svg)
        assert not doubles, (name, len(doubles))


# ---------------------------------------------------------------- altered dominants


def test_seven_alt_is_accepted_and_voiced_from_the_altered_scale(tmp_path: Path) -> None:
    """``7alt`` and ``7(#9,b13)`` (common practice of lead sheets) build; the score prints
    the symbol as written and music21 reads it to root, 3, b7, #9 and b13 (7alt without its
    fifth); every note the
    section sounds under it lies in the altered scale (1 b9 #9 3 #11 b13 b7)."""
    from music21 import converter, harmony

    text, _keys = _project("Altered", "F major", "A4 G4 C5 Bb4 Db5 Eb5", "Fmaj7 | D7alt | Gm7 C7(#9,b13) | Fmaj7",
                           "saxes-5")
    proj = tmp_path / "p.toml"
    proj.write_text(text, encoding="utf-8")
    r = run_cli("build", str(proj), "-o", str(tmp_path / "out"))
    assert r.exit_code == 0, r.output
    xml = (tmp_path / "out" / "altered.musicxml").read_text(encoding="utf-8")
    assert 'text="7alt"' in xml
    score = converter.parse(str(tmp_path / "out" / "altered.musicxml"))
    sounding = score.toSoundingPitch(inPlace=False)
    symbols = list(sounding.parts[0].flatten().getElementsByClass(harmony.ChordSymbol))
    alts = [cs for cs in symbols if cs.root().name in ("D", "C") and cs.chordKind == "dominant-seventh"]
    assert alts
    for cs in alts:
        ivs = {(p.pitchClass - cs.root().pitchClass) % 12 for p in cs.pitches}
        # 7alt: 1 3 b7 #9 b13 (no fifth); 7(#9,b13) names its fifth as well
        assert ivs - {7} == {0, 4, 10, 3, 8}, (cs.figure, ivs)
        assert (7 in ivs) == (cs.root().name == "C"), (cs.figure, ivs)
        start = float(cs.offset)
        nxt = min((float(c.offset) for c in symbols if float(c.offset) > start), default=1e9)
        for p in sounding.parts:
            for n in _notes(p):
                if start <= float(n.offset) < nxt:
                    assert (n.pitch.pitchClass - cs.root().pitchClass) % 12 in {0, 1, 3, 4, 6, 8, 10}, \
                        (cs.figure, n.pitch.nameWithOctave)


# ---------------------------------------------------------------- the rule itself


def test_written_key_is_music21s_moved_key_with_the_fewer_accidentals() -> None:
    """``theory.keys.written_key`` against music21's ``Key.transpose`` by each instrument's
    interval, folded to the enharmonic key with fewer accidentals past 6 (circle of fifths)."""
    from arrange.theory.keys import parse_key, written_key

    for text in [f"{t} major" for t in MAJORS] + [f"{t} minor" for t in MINORS] + list(MODE_KEYS[:-2]):
        for inst in [*TRANSPOSING, "trombone"]:
            want = expected_sharps(text, inst, False)
            got = written_key(parse_key(text), int(INSTRUMENTS[inst]["transposition"]))
            assert got.fifths == want, (text, inst, str(got))


def test_agree_gives_one_spelling_while_notes_sound_together() -> None:
    from fractions import Fraction as F

    from arrange.theory.written import agree

    # the earlier note decides while both sound; a later one alone keeps its own name
    got = agree([(F(0), F(2), 61, "C#4"), (F(1), F(3), 73, "Db5"), (F(3), F(4), 61, "Db4")])
    assert got == ("C#4", "C#5", "Db4")
