"""Harmony stage: a :class:`~arrange.rhythm.Line` in, a :class:`Harmonized` out.

The project's ``[harmony]`` table gives the framework (chords per bar, or a
named preset), the approach techniques in order of preference and any key
changes.  Each lead note is classified against its framework chord
(:mod:`arrange.approach`); a note that is neither chord tone nor available
tension gets an approach chord when it falls on a weak position or leads
into the next framework chord, a diatonic substitute when it sits on a
strong beat, or keeps its chord with a warning.
"""
from __future__ import annotations

import re
from dataclasses import dataclass, replace
from fractions import Fraction

from arrange.errors import ArrangeError, HarmonyError, ProjectError
from arrange.harmony.approach import TECHNIQUES, function_name
from arrange.harmony.events import Event, FrameworkChord, Harmonized
from arrange.harmony.split import key_lookup, split_held
from arrange.harmony.walk import walk
from arrange.rhythm.line import Line
from arrange.tables import Table
from arrange.theory.chords import Chord, parse_chord
from arrange.theory.keys import MAX_NAMED, MODES, Key, parse_key, parse_key_change, signature_key
from arrange.theory.spelling import root_spelling, spell_pc

__all__ = ["Key", "parse_key", "FrameworkChord", "Event", "Harmonized", "HarmonyOptions",
           "read_options", "harmonize", "parse_framework", "MODES", "PRESETS", "TECHNIQUES",
           "lead_function", "transpose_key", "transpose_chord", "MODULATE"]

# named frameworks of our own naming: per bar, (degree, suffix or None = the diatonic seventh)
PRESETS: dict[str, tuple[tuple[tuple[int, str | None], ...], ...]] = {
    "home-to-half": (((1, None),), ((6, None),), ((2, None),), ((5, "7"),)),   # tonic to half cadence
    "two-five-home": (((2, None),), ((5, "7"),), ((1, None),), ((1, None),)),  # ii-V-I
    "modal-vamp": (((1, None),), ((1, None),), ((0, None),), ((1, None),)),    # tonic and colour chord
}
# the colour chord of a modal vamp: the degree that marks the mode (common practice)
_VAMP = {"dorian": 4, "mixolydian": 7, "lydian": 2, "phrygian": 2, "locrian": 2, "aeolian": 6,
         "minor": 6, "harmonic minor": 4, "melodic minor": 4, "major": 4, "ionian": 4}
_TOKEN = re.compile(r"^(.+?)(?::([0-9]{1,3}))?$")
MODULATE = ("none", "by-statement")


@dataclass(frozen=True, slots=True, eq=False)
class HarmonyOptions:
    """The project's ``[harmony]`` table: framework, approach techniques, preset, keys."""
    framework: tuple[tuple[str, ...], ...] = ()        # tokens per bar as written: "Gm7:3"
    approach: tuple[str, ...] = TECHNIQUES
    preset: str | None = None
    keys: tuple[tuple[int, Key], ...] = ()             # key changes (first bar, key)
    modulate: str = "none"                             # "none" | "by-statement"


def parse_framework(value: object, *, where: str) -> tuple[tuple[str, ...], ...]:
    """``"F6 | Gm7:3 C7:1"`` or a list of bars; every chord symbol is checked here."""
    if isinstance(value, str):
        bars = [b.split() for b in value.split("|")]
    elif isinstance(value, list) and all(isinstance(b, str) for b in value):
        bars = [b.split() for b in value]
    else:
        raise HarmonyError(f"{value!r} is not a framework", where=where,
                           accepted="chords per bar split by |, e.g. 'F6 | Gm7 C7', or a list of bars")
    for k, bar in enumerate(bars, start=1):
        if not bar:
            raise HarmonyError(f"bar {k} of {value!r} is empty", where=where,
                               accepted="one or more chords per bar, split by |")
        for tok in bar:
            m = _TOKEN.match(tok)
            assert m is not None
            if m.group(2) is not None and int(m.group(2)) < 1:
                raise HarmonyError(f"{tok!r} in bar {k} takes no beats", where=where,
                                   accepted="a chord with a positive whole number of beats, e.g. Gm7:3")
            sym = m.group(1)
            if ":" in sym:
                raise HarmonyError(f"{tok!r} in bar {k} has a beat count that is not a whole number",
                                   where=where, accepted="CHORD:BEATS with whole beats, e.g. Gm7:3 C7:1")
            parse_chord(sym, where=f"{where}, bar {k}, chord {bar.index(tok) + 1}")
    return tuple(tuple(b) for b in bars)


def read_options(table: Table) -> HarmonyOptions:
    try:
        preset = table.raw("preset", None)
        if preset is not None and (not isinstance(preset, str) or preset not in PRESETS):
            raise table.error("preset", f"preset {str(preset)[:40]!r} is not known", ", ".join(PRESETS))
        if preset is not None and table.has("framework"):
            raise table.error("preset", "both 'preset' and 'framework' are given", "one of them")
        framework = () if preset is not None else \
            parse_framework(table.raw("framework"), where=table.at("framework"))
        raw = table.raw("approach", list(TECHNIQUES))
        if not isinstance(raw, list) or not all(isinstance(t, str) for t in raw):
            raise table.error("approach", f"{raw!r} is not a list of techniques",
                              "a list drawn from " + ", ".join(TECHNIQUES))
        for k, tech in enumerate(raw, start=1):
            if tech not in TECHNIQUES:
                raise table.error("approach", f"technique {tech!r} (item {k}) is not known",
                                  ", ".join(TECHNIQUES) + " (an empty list keeps every framework chord)")
        raw_keys = table.raw("keys", [])
        if isinstance(raw_keys, str):
            raw_keys = [raw_keys]
        if not isinstance(raw_keys, list):
            raise table.error("keys", f"{raw_keys!r} is not a list of key changes",
                              "a list such as ['Ab major from bar 9']")
        keys = sorted((parse_key_change(k, where=table.at("keys")) for k in raw_keys), key=lambda bk: bk[0])
        modulate = table.string("modulate", "none", choices=MODULATE)
        if modulate != "none" and keys:
            raise table.error("modulate", f"modulate = {modulate!r} and 'keys' are both given",
                              "one of them: the chain's transposition or key changes by bar")
        for (b1, _), (b2, _) in zip(keys, keys[1:], strict=False):
            if b1 == b2:
                raise table.error("keys", f"two keys start at bar {b1}", "one key change per bar")
    except ArrangeError as err:
        if isinstance(err, ProjectError):
            raise
        raise ProjectError(err.what, where=err.where, accepted=err.accepted) from None
    table.finish()
    return HarmonyOptions(framework, tuple(dict.fromkeys(raw)), preset,
                          tuple((b, k) for b, k in keys), modulate)


def lead_function(pitch: int, chord: Chord) -> str:
    return function_name(pitch, chord)


def transpose_key(key: Key, semitones: int) -> Key:
    """``key`` moved by ``semitones``, its tonic spelled for the simplest signature."""
    pc = (key.tonic + semitones) % 12
    best = None
    for letter in "CDEFGAB":
        diff = (pc - "C D EF G A B".index(letter) + 6) % 12 - 6
        if abs(diff) > 1:
            continue
        k = Key(pc, letter + ("#" if diff > 0 else "b" if diff < 0 else ""), key.mode)
        score = (abs(k.fifths), k.fifths > 0)
        if best is None or score < best[0]:
            best = (score, k)
    assert best is not None
    return best[1]


def transpose_chord(chord: Chord, semitones: int, key: Key) -> Chord:
    """``chord`` moved by ``semitones``, spelled for ``key``."""
    if semitones % 12 == 0:
        return chord
    moved = root_spelling(chord.root + semitones, chord.quality, key)
    if chord.bass is None:
        return moved
    return parse_chord(f"{moved.symbol}/{spell_pc(chord.bass + semitones, key)}")


def statement_keys(line: Line, key: Key) -> tuple[tuple[int, int], ...]:
    """For ``modulate = "by-statement"``: (first bar, semitones) where each P-form
    statement after the first begins (from the next bar line if it starts mid-bar)."""
    out = []
    bar_len = line.meter.bar
    for st in line.segments:
        if st.form != "P" or st.index == 1 or st.start >= len(line.notes):
            continue
        onset = line.notes[st.start].onset
        bar = int(onset // bar_len) + 1 + (1 if onset % bar_len else 0)
        if bar <= line.bars:
            out.append((bar, st.transposition))
    return tuple(out)


def _key_at(key: Key, changes: tuple[tuple[int, Key], ...], bar: int) -> Key:
    for first, k in changes:
        if first <= bar:
            key = k
    return key


def _bar_chords(options: HarmonyOptions, b: int, key: Key, where: str) -> list[tuple[Chord, int | None]]:
    out: list[tuple[Chord, int | None]] = []
    if options.preset is not None:
        bars = PRESETS[options.preset]
        for degree, suffix in bars[b % len(bars)]:
            d = degree or _VAMP.get(key.mode, 4)
            out.append((key.degree_chord(d, suffix), None))
        return out
    written = options.framework[b % len(options.framework)]
    for j, tok in enumerate(written, start=1):
        m = _TOKEN.match(tok)
        assert m is not None
        out.append((parse_chord(m.group(1), where=f"{where} framework, bar {b % len(options.framework) + 1}, "
                                f"chord {j}"), int(m.group(2)) if m.group(2) else None))
    return out


def _beats(meter) -> tuple[Fraction, ...]:  # noqa: ANN001
    """Beat onsets inside a bar (the meter's own grouping where it has one)."""
    beats = getattr(meter, "beats", None)
    if beats:
        return tuple(beats)
    step = Fraction(4, meter.denominator)
    return tuple(step * k for k in range(meter.numerator))


def split_bar(counts: list[int | None], n_beats: int) -> list[int] | None:
    """Beats per chord: given counts stay, the others share the rest evenly, the
    earlier chords taking the spare beats (3 chords in 4/4: 2 1 1, common practice
    of lead sheets).  None where the chords cannot fill the bar in whole beats."""
    given = sum(c for c in counts if c is not None)
    free = sum(1 for c in counts if c is None)
    left = n_beats - given
    if left < 0 or (free and left < free) or (not free and left):
        return None
    out, k = [], 0
    for c in counts:
        if c is None:
            out.append(left // free + (1 if k < left % free else 0))
            k += 1
        else:
            out.append(c)
    return out


def build_framework(line: Line, key: Key, options: HarmonyOptions, where: str,
                    shifts: tuple[tuple[int, int], ...] = ()) -> tuple[FrameworkChord, ...]:
    meter = line.meter
    beats = _beats(meter)
    out: list[FrameworkChord] = []
    for b in range(line.bars):
        bar_key = _key_at(key, options.keys, b + 1)
        chords = _bar_chords(options, b, bar_key, where)
        shift = next((t for first, t in reversed(shifts) if first <= b + 1), 0)
        if shift and options.preset is None:
            chords = [(transpose_chord(c, shift, bar_key), n) for c, n in chords]
        counts = split_bar([n for _c, n in chords], len(beats))
        src = b % len(options.framework) + 1 if options.framework else b + 1
        if counts is None:
            written = " ".join(c.symbol + (f":{n}" if n else "") for c, n in chords)
            given = sum(n for _c, n in chords if n is not None)
            raise HarmonyError(
                f"{written!r} does not divide into the meter {meter}: {len(chords)} chord"
                f"{'s' if len(chords) != 1 else ''} with {given} beats given for a bar of "
                f"{len(beats)} beats", where=f"{where} framework, bar {src}",
                accepted=f"at most {len(beats)} chords whose beats fill the bar, e.g. "
                         f"'Gm7:{len(beats) - 1} C7:1' or chords sharing it evenly"
                         if len(beats) > 1 else "one chord per bar in this meter")
        edges = list(beats) + [meter.bar]
        s0 = 0
        for (c, _n), cnt in zip(chords, counts, strict=True):
            onset = b * meter.bar + edges[s0]
            out.append(FrameworkChord(b + 1, onset, edges[s0 + cnt] - edges[s0], c))
            s0 += cnt
    return tuple(out)


def harmonize(line: Line, key: Key, options: HarmonyOptions, *, where: str = "[harmony]") -> Harmonized:
    # a key past 7 accidentals (G# major, D# lydian) is spelled and written as its
    # enharmonic key (theory.keys.written_key's rule for a concert part)
    key = signature_key(key, MAX_NAMED)
    options = replace(options, keys=tuple((b, signature_key(k, MAX_NAMED)) for b, k in options.keys))
    shifts: tuple[tuple[int, int], ...] = ()
    if options.modulate == "by-statement" and line.chain is not None:
        shifts = statement_keys(line, key)
        options = replace(options, keys=tuple((b, transpose_key(key, t)) for b, t in shifts))
    fw = build_framework(line, key, options, where, shifts)
    bar_len = line.meter.bar
    # the framework's harmonic rhythm: a lead note held over a chord change is cut there
    line = split_held(line, fw, key_lookup(key, options.keys, bar_len))
    idx = []
    k = 0
    for note in line.notes:
        # an anticipation (an eighth ahead of the downbeat, tied over) takes the chord
        # of the downbeat it pushes, as the band plays it (common practice)
        at = note.onset + (Fraction(1, 2) if note.anticipated else 0)
        while k + 1 < len(fw) and fw[k + 1].onset <= at:
            k += 1
        idx.append(k)
    keys = [_key_at(key, options.keys, int(n.onset // bar_len) + 1) for n in line.notes]
    events, warnings = walk(line, fw, idx, keys, options.approach)
    changes = tuple((b, k) for b, k in options.keys)
    return Harmonized(line, key, fw, tuple(events), tuple(warnings), changes)
