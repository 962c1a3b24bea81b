"""The rhythm section's values: what each rhythm player reads, as plain data.

Times are written ``Fraction`` quarter notes from the downbeat of bar 1 (as in
:class:`~arrange.rhythm.line.Line`); pitches are sounding MIDI numbers.  The
writers turn these into the written parts and into the MIDI mock-up, so the
page and the playback read the same values.
"""
from __future__ import annotations

from bisect import bisect_left
from collections.abc import Sequence
from dataclasses import dataclass
from fractions import Fraction

from arrange.rhythm_section.options import PARTS
from arrange.theory.chords import Chord

__all__ = ["BassNote", "Slash", "DrumHit", "Cue", "DrumPart", "RhythmSection", "PARTS", "Timed"]


@dataclass(frozen=True, slots=True, eq=False)
class BassNote:
    """One note of the written bass line."""
    onset: Fraction
    duration: Fraction
    pitch: int            # sounding
    role: str             # "root", "chord tone", "approach", "pattern"
    chord: Chord          # the framework chord the note sounds under (its symbol)


@dataclass(frozen=True, slots=True, eq=False)
class Slash:
    """One comping slash: ``kind`` "time" (a stemless beat slash) or "hit" (a
    rhythmic slash with its value, accented); ``rest`` marks a silent value inside
    a bar of hits.  ``pitches`` is the chord the mock-up plays (sounding)."""
    onset: Fraction
    duration: Fraction
    kind: str
    chord: Chord
    pitches: tuple[int, ...] = ()
    rest: bool = False


@dataclass(frozen=True, slots=True, eq=False)
class DrumHit:
    """One General MIDI drum hit of the mock-up."""
    onset: Fraction
    duration: Fraction
    key: int              # General MIDI percussion key (GM 1 percussion key map)
    accent: int           # velocity added to the part's dynamic


@dataclass(frozen=True, slots=True, eq=False)
class Cue:
    """A section figure shown above the drum staff: its onset and written value."""
    onset: Fraction
    duration: Fraction
    anticipated: bool = False


@dataclass(frozen=True, slots=True, eq=False)
class DrumPart:
    """What the drummer reads (style, time, cues, fills) and the mock-up's hits."""
    style: str                         # the word over the first bar: "Swing", "Latin" ...
    time: tuple[Fraction, ...]         # onsets of the time slashes (one per beat)
    cues: tuple[Cue, ...]              # the section's hits and anticipations
    fills: tuple[int, ...]             # bars marked "Fill" (1-based)
    hits: tuple[DrumHit, ...]          # what the mock-up plays


@dataclass(frozen=True, slots=True, eq=False)
class RhythmSection:
    """The rhythm-section stage's value: the asked parts and what each reads."""
    parts: tuple[str, ...]             # asked parts, in score order (PARTS)
    bass_style: str                    # walking, two-beat, tumbao, shuffle, roots-fifths
    bass_instrument: str               # an instrument key of voicing_rules/instruments.toml
    bass: tuple[BassNote, ...] = ()
    comping: tuple[Slash, ...] = ()    # piano and guitar read the same slashes
    drums: DrumPart | None = None
    bar: Fraction = Fraction(4)        # written bar length in quarter notes
    total: Fraction = Fraction(0)      # written length from bar 1
    pickup: Fraction = Fraction(0)


class Timed:
    """Items with a time each, asked for those whose time lies in ``[lo, hi)``, in their own
    order (a bar's comping figures, a rhythm part's chord changes, drum cues and time): by
    bisection where the times stand in order (the stages give them so), by a scan otherwise,
    the same answer either way; a long part no longer scans every item for each of its
    notes or bars."""

    def __init__(self, items: Sequence, times: list[Fraction]) -> None:  # type: ignore[type-arg]
        self.items = list(items)
        self.times = times
        self.ordered = all(a <= b for a, b in zip(times, times[1:]))

    def between(self, lo: Fraction, hi: Fraction) -> list:  # type: ignore[type-arg]
        if self.ordered:
            return self.items[bisect_left(self.times, lo):bisect_left(self.times, hi)]
        return [x for x, t in zip(self.items, self.times, strict=True) if lo <= t < hi]
