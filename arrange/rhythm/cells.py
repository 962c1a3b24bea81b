"""Rhythmic cells: note-value strings such as ``"4. 8 r8 8t 8t 8t 4~8"``.

A token is a note value (``1`` whole, ``2`` half, ``4`` quarter, ``8``,
``16``, ``32``), optionally dotted (``4.``) or triplet (``8t``), joined by
``~`` into one tied note (``4~8``); a leading ``r`` makes a rest (``r8``,
``r4.``).  Durations are exact ``Fraction`` quarter notes.
"""
from __future__ import annotations

import re
from dataclasses import dataclass
from fractions import Fraction

from arrange.errors import RhythmError

__all__ = ["Token", "parse_cell", "parse_value", "parse_length", "VALUES_HELP"]

_BASES = {"1": Fraction(4), "2": Fraction(2), "4": Fraction(1), "8": Fraction(1, 2),
          "16": Fraction(1, 4), "32": Fraction(1, 8)}
_VALUE = re.compile(r"(1|2|4|8|16|32)(\.|t)?")
VALUES_HELP = ("note values 1 2 4 8 16 32, dotted '4.', triplet '8t', tied '4~8', "
               "rests 'r8', separated by spaces")
MAX_TOKENS = 256


@dataclass(frozen=True, slots=True, eq=False)
class Token:
    """One token of a rhythm cell: a duration, or a rest of that duration."""
    duration: Fraction
    rest: bool
    text: str


def parse_value(text: str, where: str = "cell") -> Fraction:
    """One value or a tie of values (``4~8``), no rest."""
    total = Fraction(0)
    for part in text.split("~"):
        m = _VALUE.fullmatch(part)
        if not m:
            raise RhythmError(f"unknown note value {part!r}", where=where, accepted=VALUES_HELP)
        d = _BASES[m.group(1)]
        if m.group(2) == ".":
            d = d * 3 / 2
        elif m.group(2) == "t":
            d = d * 2 / 3
        total += d
    return total


def parse_cell(text: object, where: str = "cell") -> tuple[Token, ...]:
    """Every token of a cell; at least one must be a note."""
    if not isinstance(text, str):
        raise RhythmError(f"{text!r} is not a string", where=where, accepted=VALUES_HELP)
    words = text.split()
    if not words:
        raise RhythmError("the cell is empty", where=where, accepted=VALUES_HELP)
    if len(words) > MAX_TOKENS:
        raise RhythmError(f"the cell has {len(words)} values", where=where,
                          accepted=f"at most {MAX_TOKENS} values")
    out = []
    for i, w in enumerate(words, start=1):
        at = f"{where}, value {i}"
        rest = w.startswith("r")
        body = w[1:] if rest else w
        if rest and "~" in body:
            raise RhythmError(f"the rest {w!r} at value {i} is tied", where=at,
                              accepted="rests are not tied; write two rests, e.g. 'r4 r8'")
        try:
            d = parse_value(body, at)
        except RhythmError:
            raise RhythmError(f"unknown note value {w!r} at value {i} of {text!r}", where=at,
                              accepted=VALUES_HELP) from None
        out.append(Token(d, rest, w))
    if all(t.rest for t in out):
        raise RhythmError(f"the cell {text!r} holds rests only", where=where,
                          accepted="a cell with at least one note, e.g. '4 r4 8 8'")
    return tuple(out)


def parse_length(value: object, where: str, *, allow_zero: bool = True) -> Fraction:
    """A length given as note values (``"4 8"`` sums them) or quarter notes (``1.5``)."""
    if isinstance(value, bool):
        raise RhythmError(f"{value!r} is not a length", where=where,
                          accepted="quarter notes (e.g. 1.5) or note values (e.g. '4 8')")
    if isinstance(value, (int, float)):
        if value != value or value < 0 or value > 64:
            raise RhythmError(f"{value!r} is out of range", where=where,
                              accepted="0 to 64 quarter notes")
        q = Fraction(str(value))
    elif isinstance(value, str):
        words = value.split()
        if not words:
            q = Fraction(0)
        else:
            q = Fraction(0)
            for i, w in enumerate(words, start=1):
                if w.startswith("r"):
                    w = w[1:]
                try:
                    q += parse_value(w, where)
                except RhythmError:
                    raise RhythmError(f"unknown note value {w!r} at value {i} of {value!r}",
                                      where=where, accepted=VALUES_HELP) from None
    else:
        raise RhythmError(f"{value!r} is not a length", where=where,
                          accepted="quarter notes (e.g. 1.5) or note values (e.g. '4 8')")
    if q == 0 and not allow_zero:
        raise RhythmError("the length is zero", where=where, accepted="a length above zero")
    return q
