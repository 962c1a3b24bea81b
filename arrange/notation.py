"""Notation: cut a written note into the tied pieces a player reads.

Plain Python; the writers turn the pieces into notes.  Foundation rules:
a note that crosses a bar line is split there and tied; each piece is made
of plain or single-dotted values (common practice of engraving).
"""
from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction

__all__ = ["Piece", "pieces", "READABLE"]

# plain and single-dotted values, whole note down to the 32nd, in quarter notes
READABLE: tuple[Fraction, ...] = tuple(sorted(
    {Fraction(4, 2 ** k) for k in range(0, 6)} | {Fraction(6, 2 ** k) for k in range(0, 5)},
    reverse=True))


@dataclass(frozen=True, slots=True)
class Piece:
    measure: int          # 0-based measure index
    offset: Fraction      # offset inside the measure, quarter notes
    duration: Fraction
    tie_start: bool       # tied to the next piece
    tie_stop: bool        # tied from the previous piece


def _split_value(d: Fraction) -> list[Fraction]:
    out = []
    rest = d
    while rest > 0:
        v = next((r for r in READABLE if r <= rest), None)
        if v is None:   # finer than a 32nd: keep it whole (never produced by our cells)
            out.append(rest)
            break
        out.append(v)
        rest -= v
    return out


def pieces(onset: Fraction, duration: Fraction, bar: Fraction) -> list[Piece]:
    """Split ``[onset, onset+duration)`` at bar lines into readable tied pieces."""
    raw: list[tuple[int, Fraction, Fraction]] = []
    t, end = onset, onset + duration
    while t < end:
        m = int(t // bar)
        bar_end = (m + 1) * bar
        seg_end = min(end, bar_end)
        off = t - m * bar
        for v in _split_value(seg_end - t):
            raw.append((m, off, v))
            off += v
        t = seg_end
    out = []
    for i, (m, off, v) in enumerate(raw):
        out.append(Piece(m, off, v, i < len(raw) - 1, i > 0))
    return out
