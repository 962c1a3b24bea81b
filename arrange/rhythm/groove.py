"""Grooves: what each groove does to a laid line (defaults, swing, articulation).

Plain Python, used by :mod:`arrange.rhythm`.  Swing and shuffle are written as
straight eighths and performed with each beat's first half stretched to the
swing ratio (the long share of the pair); a shuffle is the triplet ratio 2/3
and may instead be written out in compound time (4/4 -> 12/8).  Latin is
straight, with strong-beat notes optionally anticipated by an eighth.
"""
from __future__ import annotations

from fractions import Fraction
from functools import lru_cache

__all__ = ["GROOVES", "GROOVE_ONLY", "DEFAULT_CELL", "DEFAULT_SWING", "ARTICULATIONS", "warp",
           "groove_articulation", "SHUFFLE"]

GROOVES = ("straight", "swing", "shuffle", "latin")
SHUFFLE = Fraction(2, 3)            # triplet feel: long share two thirds (common practice)
# a medium-tempo swing: long share about 0.6 (from memory: commonly quoted 3:2 feel)
DEFAULT_SWING = Fraction(31, 50)
# default cells: one full 4/4 bar each, chosen for the groove (our own choice)
DEFAULT_CELL = {
    "straight": "4 8 8 4 4",
    "swing": "8 8 4 8 4 8",
    "shuffle": "8 8 8 8 4 4",
    "latin": "4. 4. 4",         # the 3+3+2 figure
}
DEFAULT_COMPOUND_CELL = "4 8"
ARTICULATIONS = ("groove", "none", "accent", "staccato", "tenuto")
# [rhythm] keys that belong to one groove only (read_options refuses them under another)
GROOVE_ONLY = {"swing": "swing", "anticipate": "latin", "notate": "shuffle"}


_HALF = Fraction(1, 2)


def warp(t: Fraction, ratio: Fraction) -> Fraction:
    """Performed time of written time ``t``: inside each quarter-note beat the
    first written half lasts ``ratio`` of the beat, the second the rest."""
    if ratio == _HALF:
        return t
    beat = t // 1
    x = t - beat
    if x <= _HALF:
        return beat + x * 2 * ratio
    return beat + ratio + (x - _HALF) * 2 * (1 - ratio)


@lru_cache(maxsize=64)
def swing_fraction(swing: float) -> Fraction:
    """A project's swing (the long share of a pair, a float) as the exact ratio
    :func:`warp` takes (nearest fraction with a denominator up to 1000)."""
    return Fraction(swing).limit_denominator(1000)


def groove_articulation(groove: str, onset: Fraction, duration: Fraction, weight: int,
                        next_beat: Fraction, gap_after: Fraction | None,
                        anticipated: bool) -> str:
    """The groove's default articulation of one note (common practice of
    big-band and Latin phrasing: short notes before rests, accents on
    anticipations and on syncopations that cross the beat in swing and Latin)."""
    if anticipated:
        return "accent"
    if groove in ("swing", "shuffle", "latin") and weight >= 2 and onset + duration > next_beat:
        return "accent"
    if gap_after is not None and gap_after >= Fraction(1, 2) and duration <= Fraction(1, 2):
        return "staccato"
    return ""
