"""The harmony stage's values: framework chords, one event per lead note, the result.

Shared by the harmonizer, the walk that chooses approach chords, and every later
stage that reads a :class:`Harmonized`.
"""
from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction

from arrange.rhythm.line import Line, Note
from arrange.theory.chords import Chord
from arrange.theory.keys import Key

__all__ = ["FrameworkChord", "Event", "Harmonized", "stated_framework"]


@dataclass(frozen=True, slots=True, eq=False)
class FrameworkChord:
    """A chord of the framework: the bar, onset and duration it holds."""
    bar: int             # 1-based
    onset: Fraction      # quarter notes
    duration: Fraction
    chord: Chord


@dataclass(frozen=True, slots=True, eq=False)
class Event:
    """A lead note with the chord that sounds from its onset, its role, technique and why."""
    note: Note
    chord: Chord
    role: str            # "framework" or "approach"
    technique: str | None   # an approach technique, "diatonic substitute", or None
    lead_function: str   # "1", "3", "b9" ...
    why: str
    lead_class: str = "chord tone"   # the lead against its framework chord
    lead_name: str = ""              # the lead's spelled pitch class, e.g. "Bb"
    target: Chord | None = None      # for an approach: the chord it resolves to


@dataclass(frozen=True, slots=True, eq=False)
class Harmonized:
    """The harmony stage's value: the line, key, framework, events, warnings and key changes."""
    line: Line
    key: Key
    framework: tuple[FrameworkChord, ...]
    events: tuple[Event, ...]
    warnings: tuple[tuple[str, int | None, str], ...]   # (kind, event index, message)
    keys: tuple[tuple[int, Key], ...] = ()              # (first bar, key), bar 1 first

    def key_at(self, bar: int) -> Key:
        """The key in force in ``bar`` (1-based)."""
        current = self.key
        for first, k in self.keys:
            if first <= bar:
                current = k
        return current


def stated_framework(harmonized: Harmonized) -> tuple[FrameworkChord, ...]:
    """The framework chords as the lead section states them at their beats: where the
    harmonizer put a named framework-role chord (a diatonic substitute, a 7sus4) on the
    lead note sounding at a chord's start, or pushing it an eighth early, that chord
    (never an approach chord), so pads and the bass play what the section plays."""
    from dataclasses import replace

    events = harmonized.events
    out = []
    k = 0
    half = Fraction(1, 2)
    for fc in harmonized.framework:
        t = fc.onset
        while k < len(events) and events[k].note.onset + events[k].note.duration <= t and \
                not (events[k].note.anticipated and events[k].note.onset + half == t):
            k += 1
        chord = fc.chord
        if k < len(events):
            ev = events[k]
            n = ev.note
            if (n.onset <= t < n.onset + n.duration or (n.anticipated and n.onset + half == t)) and \
                    ev.role == "framework" and ev.technique:
                chord = ev.chord
        out.append(fc if chord == fc.chord else replace(fc, chord=chord))
    return tuple(out)

