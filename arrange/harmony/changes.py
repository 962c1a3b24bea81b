"""A melody's own chord symbols as a framework (the ``[harmony] framework`` they replace).

Each symbol sounds from its onset until the next one; a bar without a symbol keeps
the chord sounding into it (common practice of lead sheets).  The framework counts
whole beats, so a symbol written between beats starts on the beat it falls in.  A
symbol in the pickup sounds into bar 1 unless bar 1 has its own.
"""
from __future__ import annotations

from fractions import Fraction

from arrange.errors import HarmonyError
from arrange.rhythm.meter import Meter
from arrange.theory.chords import parse_chord

__all__ = ["framework_from_changes"]


def _beats(meter: Meter) -> tuple[Fraction, ...]:
    return tuple(meter.beats) if meter.beats else (Fraction(0),)


def framework_from_changes(changes: tuple[tuple[Fraction, str], ...], meter: Meter, bars: int,
                           *, where: str) -> tuple[tuple[str, ...], ...]:
    """Framework bars (``"Gm7:3"`` tokens) for ``bars`` bars from (onset, symbol) pairs."""
    beats = _beats(meter)
    edges = list(beats) + [meter.bar]
    placed: dict[tuple[int, int], str] = {}      # (bar index, beat index) -> symbol
    carried: str | None = None
    for onset, text in sorted(changes, key=lambda c: c[0]):
        symbol = parse_chord(text, where=f"{where}, chord symbol {text!r} at {float(onset):g}").symbol
        if onset < 0:
            carried = symbol
            continue
        b = int(onset // meter.bar)
        if b >= bars:
            continue
        pos = onset - b * meter.bar
        k = max(i for i, e in enumerate(beats) if e <= pos)
        placed[(b, k)] = symbol
    if not placed and carried is None:
        raise HarmonyError("the melody has no chord symbols", where=where,
                           accepted="a melody with chord symbols, or a [harmony] framework "
                                    "(or preset) for it")
    out: list[tuple[str, ...]] = []
    current = carried
    for b in range(bars):
        starts = sorted(k for (bb, k) in placed if bb == b)
        if not starts or starts[0] != 0:
            if current is None:         # the tune starts before its first symbol: take it early
                current = placed[min(placed)]
            starts = [0] + starts
            chords = [current] + [placed[(b, k)] for k in starts[1:]]
        else:
            chords = [placed[(b, k)] for k in starts]
        tokens = []
        for j, (k, sym) in enumerate(zip(starts, chords, strict=True)):
            end = starts[j + 1] if j + 1 < len(starts) else len(beats)
            n = end - k
            tokens.append(sym if len(starts) == 1 else f"{sym}:{n}")
        current = chords[-1]
        out.append(tuple(tokens))
    del edges
    return tuple(out)
