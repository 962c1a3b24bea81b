"""Meters: bar length, beat grouping and metric weight.

Plain Python, shared by the rhythm stage and the notation rules.  The grouping
of each meter is the usual one of common practice (of engraving and of the
trade): 4/4 and 2/2 and 12/8 show the middle of the bar; 6/8, 9/8 and 12/8
beat in dotted quarters; 5/4 groups 3+2 and 7/8 groups 2+2+3 eighths.
"""
from __future__ import annotations

import re
from dataclasses import dataclass
from fractions import Fraction
from functools import lru_cache

from arrange.errors import RhythmError

__all__ = ["Meter", "parse_meter", "METERS", "metric_weight", "WEIGHTS"]

Q = Fraction
_H = Fraction(3, 2)          # dotted quarter, the compound beat

# beat lengths in quarter notes, grouped into the bar's large divisions
_GROUPS: dict[str, tuple[tuple[Fraction, ...], ...]] = {
    "4/4": ((Q(1), Q(1)), (Q(1), Q(1))),
    "3/4": ((Q(1), Q(1), Q(1)),),
    "2/4": ((Q(1), Q(1)),),
    "2/2": ((Q(2),), (Q(2),)),
    "5/4": ((Q(1), Q(1), Q(1)), (Q(1), Q(1))),
    "6/8": ((_H, _H),),
    "9/8": ((_H, _H, _H),),
    "12/8": ((_H, _H), (_H, _H)),
    "7/8": ((Q(1), Q(1), _H),),
    "3/8": ((_H,),),
}
METERS = ("4/4", "3/4", "2/4", "2/2", "5/4", "6/8", "9/8", "12/8", "7/8", "3/8")

# metric weight of an onset: lower is stronger
WEIGHTS = {0: "downbeat", 1: "beat", 2: "off-beat", 3: "finer"}


@dataclass(frozen=True, slots=True)
class Meter:
    """A time signature (numerator over denominator)."""
    numerator: int
    denominator: int

    @property
    def bar(self) -> Fraction:
        """Bar length in quarter notes."""
        return _bar(self.numerator, self.denominator)

    @property
    def groups(self) -> tuple[tuple[Fraction, ...], ...]:
        """Beat lengths (quarter notes) in the bar's large divisions."""
        return _GROUPS[str(self)]

    @property
    def beats(self) -> tuple[Fraction, ...]:
        """Onsets of the beats inside a bar (quarter notes)."""
        return _beats(str(self))

    @property
    def compound(self) -> bool:
        return all(b == _H for g in self.groups for b in g)

    @property
    def quarter_pulse(self) -> bool:
        """True where the beat is divided into two eighths (x/4 and 2/2)."""
        return self.denominator in (2, 4)

    def beat_length_at(self, pos: Fraction) -> Fraction:
        t = Fraction(0)
        for g in self.groups:
            for b in g:
                if t <= pos < t + b:
                    return b
                t += b
        return self.groups[-1][-1]

    def beat_start(self, pos: Fraction) -> Fraction:
        """The onset of the beat holding ``pos`` (``pos`` inside one bar)."""
        start = Fraction(0)
        for b in self.beats:
            if b <= pos:
                start = b
        return start

    def __str__(self) -> str:
        return f"{self.numerator}/{self.denominator}"


# asked for at every note the writers cut and beam: worked out once per meter
@lru_cache(maxsize=None)
def _bar(numerator: int, denominator: int) -> Fraction:
    return Fraction(4 * numerator, denominator)


@lru_cache(maxsize=None)
def _beats(meter: str) -> tuple[Fraction, ...]:
    out, t = [], Fraction(0)
    for g in _GROUPS[meter]:
        for b in g:
            out.append(t)
            t += b
    return tuple(out)


def parse_meter(text: str, *, where: str = "meter") -> Meter:
    m = re.fullmatch(r"\s*([0-9]{1,3})\s*/\s*([0-9]{1,3})\s*", text) if isinstance(text, str) else None
    if not m or f"{int(m.group(1))}/{int(m.group(2))}" not in METERS:
        raise RhythmError(f"meter {text!r} is not supported", where=where,
                          accepted=", ".join(METERS))
    return Meter(int(m.group(1)), int(m.group(2)))


def metric_weight(onset: Fraction, meter: Meter) -> int:
    """0 downbeat, 1 beat, 2 off-beat (half of a simple beat, any eighth of a
    compound one), 3 finer.  ``onset`` is measured from a bar line."""
    pos = onset % meter.bar
    if pos == 0:
        return 0
    beat = meter.beat_start(pos)
    if pos == beat:
        return 1
    length = meter.beat_length_at(pos)
    sub = length / 3 if length.numerator == 3 else length / 2
    if (pos - beat) % sub == 0:
        return 2
    return 3
