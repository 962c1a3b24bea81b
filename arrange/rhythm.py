"""Rhythm stage: a :class:`~arrange.chain.Chain` in, a :class:`Line` out.

Foundation version: straight eighth notes in the project's meter.  Onsets and
durations are exact ``Fraction`` quarter notes; ``perf_onset`` and
``perf_duration`` are where playback puts the note (equal to the written
values for a straight groove).
"""
from __future__ import annotations

import re
from dataclasses import dataclass
from fractions import Fraction

from .chain import Chain
from .errors import RhythmError
from .tables import Table

__all__ = ["Meter", "Note", "Line", "RhythmOptions", "parse_meter", "read_options", "lay_rhythm",
           "METERS"]

METERS = ("4/4", "3/4", "2/4", "2/2")


@dataclass(frozen=True, slots=True)
class Meter:
    numerator: int
    denominator: int

    @property
    def bar(self) -> Fraction:
        """Bar length in quarter notes."""
        return Fraction(4 * self.numerator, self.denominator)

    def __str__(self) -> str:
        return f"{self.numerator}/{self.denominator}"


def parse_meter(text: str, *, where: str = "meter") -> Meter:
    m = re.fullmatch(r"\s*(\d+)\s*/\s*(\d+)\s*", text) if isinstance(text, str) else None
    if not m or text.strip().replace(" ", "") not in METERS:
        raise RhythmError(f"meter {text!r} is not supported", where=where,
                          accepted=", ".join(METERS))
    return Meter(int(m.group(1)), int(m.group(2)))


@dataclass(frozen=True, slots=True)
class Note:
    index: int               # 0-based position in the line
    pitch: int               # sounding MIDI number of the lead
    onset: Fraction          # quarter notes from the start of bar 1 (after any pickup)
    duration: Fraction
    statement: int           # 1-based
    weight: int              # metric weight: 0 downbeat, 1 beat, 2 off-beat, 3 finer
    perf_onset: Fraction
    perf_duration: Fraction


@dataclass(frozen=True, slots=True)
class RhythmOptions:
    groove: str = "straight"


@dataclass(frozen=True, slots=True)
class Line:
    chain: Chain
    meter: Meter
    notes: tuple[Note, ...]
    groove: str
    swing: float             # long share of a swung pair; 0.5 = straight
    pickup: Fraction         # length of the anacrusis in quarter notes (0 = none)
    total: Fraction          # written length in quarter notes, whole bars

    @property
    def bars(self) -> int:
        return int(self.total / self.meter.bar)


def read_options(table: Table) -> RhythmOptions:
    groove = table.string("groove", "straight", choices=("straight",))
    table.finish()
    return RhythmOptions(groove=groove)


def metric_weight(onset: Fraction, meter: Meter) -> int:
    pos = onset % meter.bar
    beat = Fraction(4, meter.denominator)
    if pos == 0:
        return 0
    if pos % beat == 0:
        return 1
    if pos % (beat / 2) == 0:
        return 2
    return 3


def lay_rhythm(chain: Chain, meter: Meter, options: RhythmOptions) -> Line:
    step = Fraction(1, 2)
    notes = []
    t = Fraction(0)
    for i, p in enumerate(chain.pitches):
        notes.append(Note(i, p, t, step, chain.statement_of(i), metric_weight(t, meter), t, step))
        t += step
    bars = -(-t // meter.bar)
    total = bars * meter.bar
    # hold the last note to the end of its bar
    last = notes[-1]
    notes[-1] = Note(last.index, last.pitch, last.onset, total - last.onset, last.statement,
                     last.weight, last.onset, total - last.onset)
    return Line(chain, meter, tuple(notes), options.groove, 0.5, Fraction(0), Fraction(total))
