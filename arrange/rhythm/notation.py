"""Notation: cut a written note (or rest) into the tied pieces a player reads.

Plain Python; the writers turn the pieces into notes and rests.  Each rule is
the common practice of engraving (as taught in notation handbooks; no single
published source), applied through the meter's grouping (:mod:`arrange.meter`):

* R1 bar line: a note that crosses a bar line is split there and tied.
* R2 middle of the bar: in meters of two equal halves (4/4, 2/2, 12/8) a note
  that does not start the bar is split at the middle, so beat 3 stays visible
  (a syncopation across beat 3 is tied, not hidden).  In additive meters
  (5/4 as 3+2, 7/8 as 2+2+3) a note may not hide a group boundary either.
* R3 beats: a note starting off a beat is split at the next beat; the one
  exception is the plain syncopation of a value one division long starting
  half-way through the first of two divisions (8 4 8, 16 8 16).
* R4 a note starting on a division may cover two of three equal divisions
  (the half note on beat 2 of 3/4, the quarter after an eighth in 6/8, the
  triplet quarter after a triplet eighth).
* R5 readable values only: plain or single-dotted values from the whole note
  to the 32nd, and triplet values (1/12 to 4/3 of a quarter).
* Rests (R6) are stricter: a rest is one piece only when it fills the whole
  bar, a whole group or a whole beat division; otherwise it is split at the
  divisions, so every beat a player counts is shown.
"""
from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction
from functools import lru_cache

from arrange.rhythm.meter import Meter

__all__ = ["Piece", "pieces", "READABLE", "readable", "is_triplet"]

# plain and single-dotted values, whole note down to the 32nd, in quarter notes
_PLAIN = frozenset({Fraction(4, 2 ** k) for k in range(0, 6)}
                   | {Fraction(6, 2 ** k) for k in range(0, 5)})
_TRIPLET = frozenset({Fraction(8, 3 * 2 ** k) for k in range(1, 6)})   # 4/3 .. 1/12
READABLE: tuple[Fraction, ...] = tuple(sorted(_PLAIN | _TRIPLET, reverse=True))
_FLOOR = Fraction(1, 24)     # no division finer than this is ever made


def readable(d: Fraction) -> bool:
    return d in _PLAIN or d in _TRIPLET


def is_triplet(d: Fraction) -> bool:
    # every triplet value has a denominator divisible by 3: most values are told apart
    # without hashing a Fraction (a modular inverse each time)
    return d.denominator % 3 == 0 and d in _TRIPLET


@dataclass(frozen=True, slots=True, eq=False)
class Piece:
    """A written piece of a note or rest inside one measure, with its ties."""
    measure: int          # 0-based index of the written measure (the pickup, if any, is 0)
    offset: Fraction      # offset inside the measure, quarter notes
    duration: Fraction
    tie_start: bool       # tied to the next piece
    tie_stop: bool        # tied from the previous piece
    whole_bar: bool = False   # a rest filling the whole bar (a measure rest)


def _divisions(s: Fraction, e: Fraction, a: Fraction, b: Fraction) -> list[Fraction]:
    """Child lengths of a node below the beat: a dotted span has three
    divisions; a plain one two, or three where the note sits on a triplet grid."""
    length = e - s
    if length.numerator == 3:
        return [length / 3] * 3
    third, half = length / 3, length / 2
    on_thirds = ((a - s) / third).denominator == 1 and ((b - s) / third).denominator == 1
    on_halves = ((a - s) / half).denominator == 1 and ((b - s) / half).denominator == 1
    if on_thirds and not on_halves:
        return [third] * 3
    return [half, half]


def _split(a: Fraction, b: Fraction, s: Fraction, children: list[Fraction], *, rest: bool,
           bar_level: str, sub: list[list[Fraction]] | None) -> list[tuple[Fraction, Fraction]]:
    """Pieces of ``[a, b)`` inside the node starting at ``s`` with ``children``.
    ``bar_level`` is "" below the bar, "halves", "additive" or "single" at it;
    ``sub`` gives the beats of each child where the children are groups."""
    bounds = [s]
    for c in children:
        bounds.append(bounds[-1] + c)
    e = bounds[-1]
    length = b - a
    if rest:
        if a == s and b == e and (readable(length) or bar_level):          # R6
            return [(a, length)]
    else:
        if a == s and readable(length) and (bar_level != "additive" or b in bounds):  # R2
            return [(a, length)]
        if bar_level in ("", "single") and len(set(children)) == 1:
            c = children[0]
            if len(children) == 2 and c.numerator != 3 \
                    and a == s + c / 2 and b == s + c + c / 2:              # R3
                return [(a, length)]
            if len(children) == 3 and a in bounds and b in bounds \
                    and length == 2 * c and readable(length):              # R4
                return [(a, length)]
    if e - s <= _FLOOR:
        return [(a, length)]
    out: list[tuple[Fraction, Fraction]] = []
    for i in range(len(children)):
        cs, ce = bounds[i], bounds[i + 1]
        lo, hi = max(a, cs), min(b, ce)
        if lo >= hi:
            continue
        grand = sub[i] if sub is not None and len(sub[i]) > 1 else _divisions(cs, ce, lo, hi)
        out += _split(lo, hi, cs, list(grand), rest=rest, bar_level="", sub=None)
    return out


@lru_cache(maxsize=4096)
def _in_bar(a: Fraction, b: Fraction, meter: Meter, rest: bool) -> tuple[tuple[Fraction, Fraction], ...]:
    """Pieces of ``[a, b)``, both measured from the bar line, ``b <= bar`` (the same
    spans recur bar after bar: worked out once each)."""
    return tuple(_bar_pieces(a, b, meter, rest))


def _bar_pieces(a: Fraction, b: Fraction, meter: Meter, rest: bool) -> list[tuple[Fraction, Fraction]]:
    groups = meter.groups
    if len(groups) == 1:
        beats = list(groups[0])
        level = "single"
        return _split(a, b, Fraction(0), beats, rest=rest, bar_level=level, sub=None)
    lengths = [sum(g, Fraction(0)) for g in groups]
    level = "halves" if len(set(lengths)) == 1 else "additive"
    return _split(a, b, Fraction(0), lengths, rest=rest, bar_level=level,
                  sub=[list(g) for g in groups])


def _simple(a: Fraction, b: Fraction) -> list[tuple[Fraction, Fraction]]:
    out, t = [], a
    while t < b:
        v = next((r for r in READABLE if r <= b - t and r in _PLAIN), b - t)
        out.append((t, v))
        t += v
    return out


def pieces(onset: Fraction, duration: Fraction, meter: Meter | Fraction, *,
           pickup: Fraction = Fraction(0), rest: bool = False) -> list[Piece]:
    """Split ``[onset, onset + duration)`` into readable, tied pieces.

    ``onset`` is measured from the downbeat of bar 1; a pickup of ``pickup``
    quarter notes is written measure 0 and holds negative onsets.  Given a bare
    bar length instead of a :class:`Meter`, only R1 and plain values apply.
    """
    bar = meter.bar if isinstance(meter, Meter) else Fraction(meter)
    shift = 1 if pickup > 0 else 0
    raw: list[tuple[int, Fraction, Fraction, bool]] = []
    t, end = onset, onset + duration
    while t < end:
        k = int(t // bar)                    # -1 in the pickup
        bar_end = (k + 1) * bar
        seg_end = min(end, bar_end)
        a, b = t - k * bar, seg_end - k * bar
        measure_start = (bar - pickup) if k == -1 else Fraction(0)
        whole = rest and a == measure_start and b == bar and k >= 0
        if isinstance(meter, Meter):
            segs = [(a, b - a)] if whole else _in_bar(a, b, meter, rest)
        else:
            segs = _simple(a, b)
        for off, v in segs:
            raw.append((k + shift, off - measure_start, v, whole))
        t = seg_end
    out = []
    for i, (m, off, v, whole) in enumerate(raw):
        tied = not rest
        out.append(Piece(m, off, v, tied and i < len(raw) - 1, tied and i > 0, whole))
    return out
