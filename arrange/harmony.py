"""Harmony stage: a :class:`~arrange.rhythm.Line` in, a :class:`Harmonized` out.

Foundation version: every lead note takes the framework chord of its bar.
"""
from __future__ import annotations

import re
from dataclasses import dataclass
from fractions import Fraction

from .chords import Chord, parse_chord
from .errors import HarmonyError
from .rhythm import Line, Note
from .tables import Table

__all__ = ["Key", "parse_key", "FrameworkChord", "Event", "Harmonized", "HarmonyOptions",
           "read_options", "harmonize", "MODES"]

MODES: dict[str, tuple[int, ...]] = {
    "major": (0, 2, 4, 5, 7, 9, 11),
    "minor": (0, 2, 3, 5, 7, 8, 10),
    "dorian": (0, 2, 3, 5, 7, 9, 10),
    "phrygian": (0, 1, 3, 5, 7, 8, 10),
    "lydian": (0, 2, 4, 6, 7, 9, 11),
    "mixolydian": (0, 2, 4, 5, 7, 9, 10),
    "aeolian": (0, 2, 3, 5, 7, 8, 10),
    "locrian": (0, 1, 3, 5, 6, 8, 10),
}
_TONICS = {"C": 0, "D": 2, "E": 4, "F": 5, "G": 7, "A": 9, "B": 11}


@dataclass(frozen=True, slots=True)
class Key:
    tonic: int          # pitch class
    tonic_name: str     # e.g. "Bb"
    mode: str

    @property
    def scale(self) -> tuple[int, ...]:
        return tuple((self.tonic + i) % 12 for i in MODES[self.mode])

    def __str__(self) -> str:
        return f"{self.tonic_name} {self.mode}"


def parse_key(text: str, *, where: str = "key") -> Key:
    m = re.fullmatch(r"\s*([A-Ga-g])(b|#|♭|♯)?\s+([A-Za-z]+)\s*", text) if isinstance(text, str) else None
    if not m or m.group(3).lower() not in MODES:
        raise HarmonyError(f"key {text!r} is not known", where=where,
                           accepted="a tonic and a mode, e.g. 'F major', 'D dorian'; modes: "
                           + ", ".join(MODES))
    acc = {"♭": "b", "♯": "#"}.get(m.group(2) or "", m.group(2) or "")
    letter = m.group(1).upper()
    tonic = (_TONICS[letter] + {"": 0, "b": -1, "#": 1}[acc]) % 12
    return Key(tonic, letter + acc, m.group(3).lower())


@dataclass(frozen=True, slots=True)
class FrameworkChord:
    bar: int             # 1-based
    onset: Fraction      # quarter notes
    duration: Fraction
    chord: Chord


@dataclass(frozen=True, slots=True)
class Event:
    note: Note
    chord: Chord
    role: str            # "framework" or "approach"
    technique: str | None
    lead_function: str   # "1", "3", "b9" ...
    why: str


@dataclass(frozen=True, slots=True)
class Harmonized:
    line: Line
    key: Key
    framework: tuple[FrameworkChord, ...]
    events: tuple[Event, ...]
    warnings: tuple[tuple[str, int | None, str], ...]   # (kind, event index, message)


@dataclass(frozen=True, slots=True)
class HarmonyOptions:
    framework: tuple[tuple[str, ...], ...]   # chords per bar, as written


def read_options(table: Table) -> HarmonyOptions:
    text = table.string("framework")
    bars = tuple(tuple(c for c in bar.split()) for bar in text.split("|"))
    if any(not bar for bar in bars):
        raise table.error("framework", f"{text!r} has an empty bar",
                          "chords per bar split by |, e.g. 'F6 | Gm7 C7'")
    table.finish()
    return HarmonyOptions(bars)


_FUNCTION = {0: "1", 1: "b9", 2: "9", 3: "b3", 4: "3", 5: "11", 6: "#11", 7: "5", 8: "b13",
             9: "13", 10: "b7", 11: "7"}


def lead_function(pitch: int, chord: Chord) -> str:
    iv = (pitch - chord.root) % 12
    if iv == 3 and 3 not in chord.intervals and 4 in chord.intervals:
        return "#9"
    if iv == 9 and 9 in chord.intervals and 10 not in chord.intervals:
        return "6" if 3 not in chord.intervals or 10 not in chord.intervals else "13"
    if iv == 9 and chord.quality == "dim7":
        return "bb7"
    if iv == 6 and 6 in chord.intervals:
        return "b5"
    return _FUNCTION[iv]


def harmonize(line: Line, key: Key, options: HarmonyOptions, *, where: str = "[harmony]") -> Harmonized:
    bar_len = line.meter.bar
    chords: list[FrameworkChord] = []
    for b in range(line.bars):
        written = options.framework[b % len(options.framework)]
        share = bar_len / len(written)
        for j, sym in enumerate(written):
            chord = parse_chord(sym, where=f"{where} framework, bar {b % len(options.framework) + 1}")
            chords.append(FrameworkChord(b + 1, b * bar_len + j * share, share, chord))
    events = []
    for note in line.notes:
        fc = next((c for c in reversed(chords) if c.onset <= note.onset), chords[0])  # pickup: first chord
        func = lead_function(note.pitch, fc.chord)
        events.append(Event(note, fc.chord, "framework", None, func,
                            f"framework chord of bar {fc.bar}"))
    return Harmonized(line, key, tuple(chords), tuple(events), ())
