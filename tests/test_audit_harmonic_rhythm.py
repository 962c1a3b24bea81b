"""Harmonic rhythm, judged from the written files: every framework chord sounds at its beat.

Every demo and a set of projects across keys, meters (4/4, 3/4, 6/8, 12/8), grooves
(straight, swing, shuffle, latin with anticipations), sections and layers are built once
through the CLI; the MusicXML is read back with music21 and the MIDI with mido, never with
our stages.  The framework each project asks for is read from its own text (bars split by
``|``, chords sharing a bar evenly, earlier chords taking the spare beats, ``CHORD:BEATS``,
the bars cycled over the passage: the project format README.md documents); where the
project moves its framework (``modulate``, a form of passages, a melody's own symbols)
the framework report.json lists is used for the times and its symbols are parsed by music21.

References, beside each check:

* music21 ``harmony.ChordSymbol`` gives every chord's pitch classes, root and bass
  (lead-sheet flats are written music21's way, ``Bb`` as ``B-``, nothing else changed);
* the tensions a chord takes over its tones (common practice of jazz chord-scale
  writing, from memory): a dominant seventh any of b9 9 #9 #11 b13 13 (not the 11 nor the
  major seventh); a major chord 9 #11 13 and the major seventh (a sixth chord) or sixth
  (a maj7 chord); a minor chord 9 11 13 (the major seventh over a minor sixth); a
  half-diminished chord 9 11 b13; a diminished seventh the whole step over each tone;
* "the chord sounds at its beat" (common practice: the section re-voices under a
  sustained melody note): the lower voices of the lead section sounding at the chord's
  beat hold only its tones and tensions, and at least one of its guide tones (the third,
  or the fourth of a sus chord; the seventh or sixth where it has one);
* the chord symbol in force at the beat names that chord: same root and triad (music21
  pitch classes); a sixth chord printed as maj7 where its major seventh sounds counts as
  the same chord (DEVELOPERS: ``sounding_chord``);
* a pad's lowest note is the chord's root (its bass for a slash chord), unless the lead
  section sounds the root below it (common practice of background writing), and a pad
  moves with the lead section's anticipations (an eighth pushed ahead of the beat) rather
  than holding the old chord against it;
* mido reads the MIDI: the bass track sounds the chord's root at each framework beat
  (the tumbao's anticipated roots included), and each section track plays as many notes
  as the part has after music21 joins its ties (a tied note is never struck again).

A framework chord the harmonizer replaced by a named diatonic substitute at that beat (the
report's ``technique``) is a named reharmonization, listed but not a violation.
"""
from __future__ import annotations

import json
import re
import tomllib
from dataclasses import dataclass, field
from fractions import Fraction
from pathlib import Path
from typing import Any

import pytest
from conftest import DEMOS, in_report_order, run_cli

ALL = '["chromatic", "diatonic", "dominant", "diminished", "tritone"]'

# ---------------------------------------------------------------- reference chord tones


def m21_figure(symbol: str) -> str:
    """Lead-sheet spelling to music21's: a flat after a root or bass letter is ``-``."""
    s = re.sub(r"^([A-G])b", r"\1-", symbol)
    return re.sub(r"/([A-G])b", r"/\1-", s)


@dataclass(frozen=True)
class Ref:
    symbol: str
    root: int
    bass: int
    tones: frozenset[int]
    allowed: frozenset[int]
    guides: frozenset[int]
    triad: frozenset[int]


_REFS: dict[str, Ref] = {}


def ref(symbol: str) -> Ref:
    """Tones, tensions and guide tones of a chord symbol (music21 pitch classes; the
    tension table is common practice, from memory: see the module doc)."""
    hit = _REFS.get(symbol)
    if hit is not None:
        return hit
    from music21 import harmony

    cs = harmony.ChordSymbol(m21_figure(symbol))
    root = cs.root().pitchClass
    bass = cs.bass().pitchClass
    ivs = {(p.pitchClass - root) % 12 for p in cs.pitches}
    third = 4 if 4 in ivs else 3 if 3 in ivs else None
    seventh = 10 if 10 in ivs else 11 if 11 in ivs else None
    sixth = 9 in ivs and (seventh is None or 3 in ivs and 6 in ivs)     # a 6 chord or dim7
    if third == 4 and seventh == 10:
        tensions = {1, 2, 3, 6, 8, 9}                 # dominant
    elif third is None and 5 in ivs:
        tensions = {1, 2, 9} | ({10} if seventh == 10 else set())      # sus
    elif third == 4:
        tensions = {2, 6, 9, 11}                      # major: 9 #11 13, maj7 over a 6
    elif third == 3 and 6 in ivs and 9 in ivs:
        tensions = {2, 5, 8, 11}                      # diminished seventh
    elif third == 3 and 6 in ivs:
        tensions = {2, 5, 8}                          # half-diminished
    elif third == 3:
        tensions = {2, 5, 9} | ({11} if sixth or seventh == 11 else {10})   # minor
    else:
        tensions = {2}
    guides = {third} if third is not None else {5} if 5 in ivs else set()
    if seventh is not None:
        guides.add(seventh)
    if sixth:
        guides.add(9)
    held = {third} if third is not None else {5} if 5 in ivs else {2} if 2 in ivs else set()
    triad = {0} | held | {i for i in (6, 7, 8) if i in ivs}
    out = Ref(symbol, root, bass, frozenset((root + i) % 12 for i in ivs),
              frozenset((root + i) % 12 for i in ivs | tensions),
              frozenset((root + i) % 12 for i in guides), frozenset((root + i) % 12 for i in triad))
    _REFS[symbol] = out
    return out


def same_chord(a: Ref, b: Ref) -> bool:
    """Same root and triad; a sixth chord and its maj7 name are one chord; a dominant
    seventh and its 7sus4 (the third suspended, common practice) are one chord."""
    if a.root != b.root or a.bass != b.bass:
        return False
    if a.triad == b.triad:
        return True
    fourth, fifth, seventh = (a.root + 5) % 12, (a.root + 7) % 12, (a.root + 10) % 12
    sus = {a.root, fourth, fifth}
    return (a.triad == sus or b.triad == sus) and seventh in a.tones | b.tones and \
        (a.triad | b.triad) <= sus | {(a.root + 4) % 12}


# ---------------------------------------------------------------- the projects


def _project(title: str, *, key: str, meter: str, motif: str, framework: str, section: str,
             groove: str = "straight", cell: str = "", extra_rhythm: str = "", statements: int = 3,
             layers: tuple[tuple[str, str, str], ...] = (), bass: bool = True,
             voicing: str = "close") -> str:
    rhythm = f'groove = "{groove}"\n' + (f'cell = "{cell}"\n' if cell else "") + extra_rhythm
    lay = "".join(f'\n[[layers]]\nsection = "{s}"\nrole = "{r}"\nrhythm = "{rh}"\ndynamics = "p"\n'
                  for s, r, rh in layers)
    rs = '\n[rhythm_section]\nparts = ["bass", "drums"]\n' if bass else ""
    return f'''title = "{title}"
tempo = 126
meter = "{meter}"
key = "{key}"

[chain]
motif = "{motif}"
statements = {statements}
overlap = 2

[rhythm]
{rhythm}
[harmony]
framework = "{framework}"
approach = {ALL}

[section]
name = "{section}"
voicing = "{voicing}"
{lay}{rs}
[output]
formats = ["musicxml", "midi", "report"]
'''


PROJECTS: dict[str, str] = {
    # long lead notes over two chords a bar: the chords change under held notes
    "swing-f": _project("Held Swing", key="F major", meter="4/4", motif="A4 G4 C5 Bb4 D5",
                        framework="F6 Dm7 | Gm7 C7 | Am7 D7 | Gm7 C7 | F6", section="saxes-5",
                        groove="swing", cell="4. 8 2 1", layers=(("trombones-4", "pad", "1"),)),
    "latin-cm": _project("Pushed Latin", key="C minor", meter="4/4", motif="C5 Eb5 D5 G4 F4",
                         framework="Cm6 | Fm7 Bb7 | Ebmaj7 Abmaj7 | Dm7b5 G7", section="trumpets-4",
                         groove="latin", cell="2 4 4 1", extra_rhythm="anticipate = true\n",
                         layers=(("trombones-4", "pad", "2"),)),
    "waltz-g": _project("Held Waltz", key="G major", meter="3/4", motif="B4 A4 D5 C5 E5",
                        framework="Gmaj7 | Em7 | Am7 D7 | Bm7 E7 | Am7 D7 | G6", section="strings-5",
                        cell="2. 4 2"),
    "six-eight-dm": _project("Compound Minor", key="D minor", meter="6/8", motif="D5 F5 E5 A4 G4",
                             framework="Dm7 | Gm7 A7 | Dm7 Bbmaj7 | Em7b5 A7", section="brass-6",
                             cell="2. 4. 4 8", layers=(("saxes-5", "pad", "2."),)),
    "twelve-eight-bb": _project("Slow Twelve", key="Bb major", meter="12/8", motif="D5 C5 F5 Eb5 G4",
                                framework="Bb6 Gm7 | Cm7 F7 | Dm7 G7 | Cm7 F7 | Bb6", section="trombones-4",
                                cell="2. 4. 1.", layers=(("saxes-5", "hits", "4"),)),
    "shuffle-e": _project("Held Shuffle", key="E major", meter="4/4", motif="G#4 F#4 B4 A4 C#5",
                          framework="E6 C#m7 | F#m7 B7 | G#m7 C#7 | F#m7 B7 | E6", section="brass-8",
                          groove="shuffle", cell="2. 8 8 1"),
    "straight-eb": _project("Three Chords", key="Eb major", meter="4/4", motif="G4 F4 Bb4 Ab4 C5",
                            framework="Ebmaj7 Cm7 Fm7 | Bb7 | Gm7 C7 | Fm7:3 Bb7:1 | Ebmaj7",
                            section="saxes-5", cell="1 2. 4", voicing="drop2",
                            layers=(("trombones-4", "pad", "1"),)),
    "swing-ab-tutti": _project("Tutti Held", key="Ab major", meter="4/4", motif="C5 Bb4 Eb5 Db5 F5",
                               framework="Abmaj7 Fm7 | Bbm7 Eb7 | Cm7 F7 | Bbm7 Eb7 | Ab6",
                               section="brass-8", groove="swing", cell="2 2. 4 1", voicing="spread",
                               layers=(("saxes-5", "hits", "4"),)),
}
# the "done when": a project as a new user writes it (a chromatic motif, a four-bar
# framework with two chords in a bar, a held last note)
NEW_USER = '''title = "First Try"
tempo = 120
meter = "4/4"
key = "C major"

[chain]
motif = "E4 F4 F#4 G4"
statements = 3
overlap = 1

[rhythm]
cell = "4 4 2"

[harmony]
framework = "C6 | Am7 | Dm7 G7 | C6"

[section]
name = "saxes-5"
'''
PROJECTS["new-user"] = NEW_USER
for demo in sorted(DEMOS.glob("*.toml")):
    PROJECTS[f"demo-{demo.stem}"] = demo.read_text(encoding="utf-8")


# ---------------------------------------------------------------- reading the files


def _text_framework(data: dict[str, Any], bars: int) -> list[tuple[Fraction, str]] | None:
    """(onset, symbol) of every framework chord from the project's own text; None where
    the project moves its framework (modulate, passages, a melody's symbols)."""
    if "passages" in data or "melody" in data:
        return None
    harmony = data.get("harmony", {})
    if "framework" not in harmony or harmony.get("modulate", "none") != "none" or harmony.get("keys"):
        return None
    text = harmony["framework"]
    bars_text = [b.split() for b in (text.split("|") if isinstance(text, str) else text)]
    num, den = (int(x) for x in data.get("meter", "4/4").split("/"))
    compound = den == 8 and num % 3 == 0 and num > 3
    beat = Fraction(3, 2) if compound else Fraction(4, den)
    n_beats = num // 3 if compound else num
    out = []
    for b in range(bars):
        toks = bars_text[b % len(bars_text)]
        given = [int(t.split(":")[1]) if ":" in t else None for t in toks]
        free = sum(1 for g in given if g is None)
        left = n_beats - sum(g for g in given if g is not None)
        t = Fraction(b * n_beats) * beat
        k = 0
        for tok, g in zip(toks, given, strict=True):
            if g is None:
                g = left // free + (1 if k < left % free else 0)
                k += 1
            out.append((t, tok.split(":")[0]))
            t += g * beat
    return out


@dataclass
class Sounding:
    onset: Fraction
    end: Fraction
    pitch: int


@dataclass
class Built:
    name: str
    data: dict[str, Any]
    report: dict[str, Any]
    pickup: Fraction
    framework: list[tuple[Fraction, str]]            # from bar 1's downbeat
    lead_parts: list[list[Sounding]]                 # the lead section's parts, top first
    symbols: list[tuple[Fraction, str]]              # (time, music21 figure) on the lead staff
    pads: list[list[list[Sounding]]] = field(default_factory=list)    # per pad layer, per part
    hits: list[list[list[Sounding]]] = field(default_factory=list)
    midi: Any = None
    folder: Path | None = None
    score_note_counts: list[int] = field(default_factory=list)


def _notes(part: Any, pickup: Fraction) -> list[Sounding]:
    out = []
    for n in part.stripTies().flatten().notes:
        if n.isChord:
            continue
        on = Fraction(n.offset).limit_denominator(96) - pickup
        out.append(Sounding(on, on + Fraction(n.quarterLength).limit_denominator(96), n.pitch.midi))
    return out


def _build(name: str, text: str, root: Path) -> Built:
    from music21 import converter, harmony

    folder = root / name
    folder.mkdir()
    src = DEMOS if name.startswith("demo-") else folder
    path = src / f"{name[5:]}.toml" if name.startswith("demo-") else folder / "p.toml"
    if not name.startswith("demo-"):
        path.write_text(text, encoding="utf-8")
    res = run_cli("build", str(path), "-o", str(folder / "out"), "--formats", "musicxml,midi,report")
    assert res.exit_code in (0, 1), res.output      # 1: a build whose report holds an error
    out = folder / "out"
    report = json.loads(next(out.glob("*.report.json")).read_text(encoding="utf-8"))
    data = tomllib.loads(text)
    pickup = Fraction(report["rhythm"]["pickup"]).limit_denominator(96)
    fw = _text_framework(data, report["bars"])
    if fw is None:
        fw = [(Fraction(f["onset"]).limit_denominator(96), f["chord"]) for f in report["framework"]]
    written = converter.parse(next(f for f in out.glob("*.musicxml") if ".part" not in f.name))
    n_lead = len(report["section"]["parts"])
    # lead section, then layers (the score itself stands in score order: saxophones on top)
    parts = in_report_order(written.toSoundingPitch(), report)
    symbols = []       # written for the staff they stand over; music21 gives them at concert pitch
    for cs in parts[0].flatten().getElementsByClass(harmony.ChordSymbol):
        symbols.append((Fraction(cs.offset).limit_denominator(96) - pickup, cs))
    lead = parts[:n_lead]
    b = Built(name, data, report, pickup, fw, [_notes(p, pickup) for p in lead], symbols, folder=folder)
    b.score_note_counts = [len(x) for x in b.lead_parts]
    k = n_lead
    for layer in report.get("layers", []):
        n = len(layer["parts"])
        notes = [_notes(p, pickup) for p in parts[k:k + n]]
        (b.pads if layer["role"] == "pad" else b.hits).append(notes)
        k += n
    import mido

    b.midi = mido.MidiFile(next(out.glob("*.mid")))
    return b


@pytest.fixture(scope="module")
def built(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Built]:
    root = tmp_path_factory.mktemp("harmonic-rhythm")
    return {name: _build(name, text, root) for name, text in PROJECTS.items()}


def _at(notes: list[Sounding], t: Fraction) -> Sounding | None:
    for n in notes:
        if n.onset <= t < n.end:
            return n
    return None


def _named(b: Built, t: Fraction) -> tuple[str | None, str | None]:
    """(technique, chord) report.json names for the lead note (or segment) sounding at ``t``."""
    for e in b.report["events"]:
        on = Fraction(e["onset"]).limit_denominator(96)
        end = on + Fraction(e["duration"]).limit_denominator(96)
        if on <= t < end:
            chords = [(on, e)] + [(Fraction(s["onset"]).limit_denominator(96), s) for s in e.get("segments", [])]
            here = [x for x in chords if x[0] <= t][-1][1]
            return here.get("technique"), here.get("chord")
    return None, None


def _substituted(b: Built, t: Fraction) -> bool:
    """The report names a diatonic substitute for the lead note sounding at ``t``."""
    return _named(b, t)[0] == "diatonic substitute"


def _sounding_ref(b: Built, t: Fraction, r: Ref) -> Ref:
    """The framework chord, or its 7sus4 where the report names the suspension (the same
    chord with its third suspended: ``same_chord``)."""
    tech, chord = _named(b, t)
    return ref(chord) if tech == "sus4" and chord else r


def _changes(b: Built) -> list[tuple[Fraction, Ref]]:
    """The framework chords where the chord changes (a repeated chord is held)."""
    out: list[tuple[Fraction, Ref]] = []
    for t, sym in b.framework:
        r = ref(sym)
        if not out or out[-1][1].tones != r.tones or out[-1][1].bass != r.bass:
            out.append((t, r))
    return out


# ---------------------------------------------------------------- the checks


def _clash_named(b: Built, t: Fraction) -> bool:
    """report.json names the lead sounding at ``t`` as a clash with its kept chord (an
    ``avoid-note`` or ``unserved-lead`` warning on its event): a named violation, whose
    voicing the voicing audit judges."""
    events = b.report["events"]
    for w in b.report["warnings"]:
        if w["kind"] in ("avoid-note", "unserved-lead") and w["event"] is not None:
            e = events[w["event"]]
            on = Fraction(e["onset"]).limit_denominator(96)
            if on <= t < on + Fraction(e["duration"]).limit_denominator(96):
                return True
    return False


NAMED: list[str] = []        # violations the report names (listed in the failure text)


def section_violations(b: Built) -> list[str]:
    """Each framework chord sounds at its beat in the lead section's lower voices."""
    out = []
    for t, r in _changes(b):
        below = [n for part in b.lead_parts[1:] if (n := _at(part, t)) is not None]
        if not below or _substituted(b, t):
            continue
        if _clash_named(b, t):
            NAMED.append(f"{b.name}: {r.symbol} at {t}: lead clash named in the report")
            continue
        pcs = {n.pitch % 12 for n in below}
        r = _sounding_ref(b, t, r)
        if not pcs <= r.allowed or not pcs & r.guides:
            out.append(f"{b.name}: {r.symbol} at {t}: lower voices sound {sorted(pcs)}")
    return out


def symbol_violations(b: Built) -> list[str]:
    """The chord symbol in force at each framework beat names that chord (music21 reads both)."""
    from music21 import harmony

    out = []
    for t, r in _changes(b):
        if _substituted(b, t):
            continue
        here = [cs for on, cs in b.symbols if on <= t]
        if not here:
            out.append(f"{b.name}: no chord symbol by {t} ({r.symbol})")
            continue
        cs = here[-1]
        got = Ref(cs.figure, cs.root().pitchClass, cs.bass().pitchClass,
                  frozenset(p.pitchClass for p in cs.pitches), frozenset(), frozenset(),
                  frozenset(ref_triad(cs)))
        if not same_chord(r, got):
            out.append(f"{b.name}: symbol {cs.figure} in force at {t}, framework {r.symbol}")
    assert harmony is not None
    return out


def ref_triad(cs: Any) -> set[int]:
    root = cs.root().pitchClass
    ivs = {(p.pitchClass - root) % 12 for p in cs.pitches}
    third = {i for i in (3, 4) if i in ivs} or ({5} if 5 in ivs else {2} if 2 in ivs else set())
    return {root} | {(root + i) % 12 for i in third | {i for i in (6, 7, 8) if i in ivs}}


def _root_rub_named(b: Built, li: int, t: Fraction, r: Ref) -> bool:
    """report.json's pad chord sounding at ``t`` says why its root is not at the bottom: the
    root (music21 reads the name) would rub against a lead note (a pad thins rather than
    rubs, common practice)."""
    from music21 import pitch

    pads = [la for la in b.report.get("layers", []) if la["role"] == "pad"]
    for n in pads[li]["notes"]:
        on = Fraction(n["onset"]).limit_denominator(96)
        if on <= t < on + Fraction(n["duration"]).limit_denominator(96):
            for m in re.finditer(r"(?:root )?([A-G][#b]?) (?:off the bottom: it )?clashes with", n.get("why", "")):
                if pitch.Pitch(m.group(1).replace("b", "-")).pitchClass == r.bass:
                    return True
    return False


def pad_violations(b: Built) -> list[str]:
    """A pad's lowest note at each framework beat is the root (slash: the bass), unless the
    lead section already sounds the root below it."""
    out = []
    for li, pad in enumerate(b.pads):
        for t, r in _changes(b):
            tech, named = _named(b, t)
            if tech in ("diatonic substitute", "sus4") and named:
                r = ref(named)              # the pad states the chord the report names there
            sounding = [n for part in pad if (n := _at(part, t)) is not None]
            if not sounding:
                continue
            low = min(n.pitch for n in sounding)
            if low % 12 == r.bass:
                continue
            if _clash_named(b, t):       # the pad keeps clear of a lead clash the report names
                NAMED.append(f"{b.name}: pad {li + 1} at {t}: lead clash named in the report")
                continue
            if _root_rub_named(b, li, t, r):
                NAMED.append(f"{b.name}: pad {li + 1} at {t}: its root would rub, named in the report")
                continue
            lead_low = [n.pitch for part in b.lead_parts if (n := _at(part, t)) is not None]
            if lead_low and min(lead_low) < low and min(lead_low) % 12 == r.bass:
                continue
            out.append(f"{b.name}: pad {li + 1} lowest note {low} at {t} under {r.symbol} (bass pc {r.bass})")
    return out


def push_violations(b: Built) -> list[str]:
    """Where the lead section pushes a chord an eighth ahead of its beat (the lead attacked
    then and sounding through the beat, the chord's symbol printed at the push), a pad
    sounding then plays the new chord, not the old one."""
    out = []
    eighth = Fraction(1, 2)
    for li, pad in enumerate(b.pads):
        for t, r in _changes(b):
            lead = _at(b.lead_parts[0], t)
            if lead is None or lead.onset != t - eighth:
                continue
            printed = [cs for on, cs in b.symbols if on == t - eighth]
            if not printed or printed[0].root().pitchClass != r.root:
                continue
            mid = t - eighth / 2
            pcs = {n.pitch % 12 for part in pad if (n := _at(part, mid)) is not None}
            if pcs and not pcs <= r.allowed:
                out.append(f"{b.name}: pad {li + 1} sounds {sorted(pcs)} under the push to {r.symbol} at {t}")
    return out


def hit_violations(b: Built) -> list[str]:
    """A hit's lowest note is the root (or slash bass) of the chord printed over it,
    unless the lead section sounds that root below it."""
    out = []
    for li, hit in enumerate(b.hits):
        onsets = sorted({n.onset for part in hit for n in part})
        for t in onsets:
            here = [cs for on, cs in b.symbols if on <= t]
            if not here:
                continue
            cs = here[-1]
            bass = cs.bass().pitchClass
            sounding = [n for part in hit if (n := _at(part, t)) is not None]
            low = min(n.pitch for n in sounding)
            if low % 12 == bass:
                continue
            lead_low = [n.pitch for part in b.lead_parts if (n := _at(part, t)) is not None]
            if lead_low and min(lead_low) < low and min(lead_low) % 12 == bass:
                continue
            out.append(f"{b.name}: hits {li + 1} lowest note {low} at {t} under {cs.figure}")
    return out


def _midi_notes(track: Any) -> list[tuple[int, int, int]]:
    """(on tick, off tick, key) of a mido track."""
    t = 0
    open_: dict[int, int] = {}
    out = []
    for msg in track:
        t += msg.time
        if msg.type == "note_on" and msg.velocity > 0:
            open_[msg.note] = t
        elif msg.type in ("note_off", "note_on") and msg.note in open_:
            out.append((open_.pop(msg.note), t, msg.note))
    return sorted(out)


def midi_violations(b: Built) -> list[str]:
    """mido: the bass track sounds each framework chord's root at its beat, and every
    section track strikes as many notes as music21 finds in its part once ties are joined."""
    out = []
    tpq = b.midi.ticks_per_beat
    tracks = {tr.name: tr for tr in b.midi.tracks}
    for k, p in enumerate(b.report["section"]["parts"]):
        tr = tracks.get(p["name"])
        if tr is None:
            out.append(f"{b.name}: no MIDI track {p['name']}")
            continue
        n = len(_midi_notes(tr))
        if n != b.score_note_counts[k]:
            out.append(f"{b.name}: MIDI {p['name']} strikes {n} notes, the score holds {b.score_note_counts[k]}")
    bass = tracks.get("Bass")
    if bass is not None:
        notes = _midi_notes(bass)
        for t, r in _changes(b):
            tech, named = _named(b, t)
            if tech in ("diatonic substitute", "sus4") and named:
                r = ref(named)              # the bass plays the chord the report names there
            tick = int((t + b.pickup) * tpq)
            here = [key for on, off, key in notes if on <= tick < off]
            if not here or here[0] % 12 != r.bass:
                out.append(f"{b.name}: MIDI bass sounds {here} at {t}, {r.symbol} wants pc {r.bass}")
    return out


CHECKS = {"section": section_violations, "symbol": symbol_violations, "pad": pad_violations,
          "push": push_violations, "hits": hit_violations, "midi": midi_violations}


@pytest.mark.parametrize("kind", list(CHECKS))
def test_every_framework_chord_sounds_at_its_beat(built: dict[str, Built], kind: str) -> None:
    found = [v for b in built.values() for v in CHECKS[kind](b)]
    assert not found, f"{len(found)} {kind} violations:\n" + "\n".join(found[:12])


def test_the_audit_sees_held_notes_over_chord_changes(built: dict[str, Built]) -> None:
    """The projects do put framework changes under held lead notes (else the audit proves
    nothing): count them from the score (music21)."""
    held = 0
    for b in built.values():
        for t, _r in _changes(b):
            n = _at(b.lead_parts[0], t)
            held += n is not None and n.onset < t
    assert held >= 20, held


def test_report_keeps_one_event_per_lead_note_with_segments(built: dict[str, Built]) -> None:
    """DESIGN contract: one report event per lead note (music21 counts the lead's notes with
    ties joined); a chord that changes under it is a segment, with the section's pitches."""
    seen = 0
    for b in built.values():
        events = b.report["events"]
        assert len(events) == b.score_note_counts[0], b.name
        for e, n in zip(events, b.lead_parts[0], strict=True):
            assert e["lead"] == n.pitch and Fraction(e["onset"]).limit_denominator(96) == n.onset, b.name
            for s in e.get("segments", []):
                seen += 1
                on = Fraction(s["onset"]).limit_denominator(96)
                assert n.onset < on < n.end, (b.name, e["index"], s)
                assert set(s) >= {"onset", "duration", "chord", "role", "technique", "pitches"}
                assert len(s["pitches"]) == len(b.lead_parts) and s["pitches"][0] == e["lead"]
                sounding = [_at(part, on) for part in b.lead_parts]
                assert [x.pitch if x else None for x in sounding] == s["pitches"], (b.name, s)
    assert seen >= 20, seen


def test_new_user_project_shows_every_framework_chord(built: dict[str, Built]) -> None:
    """The issue's scenario through the CLI: every framework chord is printed (music21 reads
    the symbol at its beat) and sounds in the section there."""
    b = built["new-user"]
    for t, r in _changes(b):
        at = [cs for on, cs in b.symbols if on == t]
        assert at and same_chord(r, Ref(at[0].figure, at[0].root().pitchClass, at[0].bass().pitchClass,
                                        frozenset(), frozenset(), frozenset(), frozenset(ref_triad(at[0])))), \
            (t, r.symbol, [cs.figure for cs in at])
    assert not section_violations(b)
    last = b.lead_parts[0][-1]
    assert last.end - last.onset >= 2            # the held last note is there


def test_new_user_preview_draws_every_symbol(built: dict[str, Built]) -> None:
    """The preview (verovio's SVG, class "harm" per chord symbol it draws) shows every symbol
    music21 reads over the lead staff, so each framework chord the score places at its beat
    is in the picture too."""
    b = built["new-user"]
    assert b.folder is not None
    res = run_cli("build", str(b.folder / "p.toml"), "-o", str(b.folder / "preview"), "--formats", "preview")
    assert res.exit_code == 0, res.output
    svg = next((b.folder / "preview").glob("*.svg")).read_text(encoding="utf-8")
    assert svg.count('class="harm"') == len(b.symbols) >= len(_changes(b))
