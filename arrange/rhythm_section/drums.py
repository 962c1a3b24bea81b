"""The drum part: time slashes with the style, the section's figures as cues above
the staff, and "Fill" at the passage's end (and where a long statement ends); plus what the mock-up plays.

The mock-up's pattern is the groove's (common practice of each style; from
memory), on the General MIDI percussion keys (GM 1 percussion key map): 35/36
bass drum, 38 snare, 42 closed hi-hat, 44 pedal hi-hat, 45/48/50 toms, 49 crash,
51 ride, 75 claves.  The drummer catches each figure (snare and bass drum on
the attack) and plays a fill on the last two beats of a fill bar, with a crash
on the downbeat after it.
"""
from __future__ import annotations

from collections.abc import Sequence
from fractions import Fraction

from arrange.rhythm.line import Line
from arrange.rhythm.meter import Meter
from arrange.rhythm_section.values import Cue, DrumHit, DrumPart

__all__ = ["drum_part", "STYLE_WORDS", "KICK", "SNARE", "CLOSED_HAT", "PEDAL_HAT", "RIDE",
           "CLAVES", "CRASH", "TOMS"]

KICK, SNARE, CLOSED_HAT, PEDAL_HAT, RIDE, CLAVES, CRASH = 36, 38, 42, 44, 51, 75, 49
TOMS = (50, 48, 45)      # high, high-mid, low tom
STYLE_WORDS = {"swing": "Swing", "shuffle": "Shuffle", "latin": "Latin", "straight": "Straight 8ths"}
_SHORT = Fraction(1, 4)


def _groove_bar(groove: str, t0: Fraction, meter: Meter, m: int) -> list[DrumHit]:
    """One bar of the groove's time: ride (swing, shuffle) or hi-hat (straight, latin)
    on every beat and its "and" (the last third of a compound beat), the pedal hi-hat
    or the snare on the even beats, the bass drum on the odd ones (straight), the
    3-2 son clave over two bars (latin)."""
    bar = meter.bar
    beats = meter.beats
    ends = list(beats[1:]) + [bar]
    out: list[DrumHit] = []
    for b, (on, end) in enumerate(zip(beats, ends, strict=True)):
        length = end - on
        off = on + (length * 2 / 3 if length.numerator == 3 else length / 2)
        if groove in ("swing", "shuffle"):
            out.append(DrumHit(t0 + on, _SHORT, RIDE, 6 if b % 2 else 0))
            if b % 2 == 1:
                out.append(DrumHit(t0 + on, _SHORT, PEDAL_HAT, 0))
                out.append(DrumHit(t0 + off, _SHORT, RIDE, -10))
        else:
            out.append(DrumHit(t0 + on, _SHORT, CLOSED_HAT, 6))
            out.append(DrumHit(t0 + off, _SHORT, CLOSED_HAT, 0))
            if groove != "latin":
                out.append(DrumHit(t0 + on, _SHORT, KICK if b % 2 == 0 else SNARE, 8))
    if groove == "latin":
        clave = (Fraction(0), Fraction(3, 2), Fraction(3)) if m % 2 == 0 else (Fraction(1), Fraction(2))
        out.extend(DrumHit(t0 + c, _SHORT, CLAVES, 10) for c in clave if c < bar)
        out.append(DrumHit(t0, _SHORT, KICK, 8))
    return out


def _fill(t0: Fraction, bar: Fraction) -> list[DrumHit]:
    """Eighths down the toms over the bar's last two beats (last beat of a short bar)."""
    start = t0 + (bar - 2 if bar >= 3 else bar - 1)
    out = []
    k = 0
    t = start
    while t < t0 + bar:
        key = SNARE if k < 2 else TOMS[min(k - 2, 2)]
        out.append(DrumHit(t, _SHORT, key, 4 + 2 * k))
        t += Fraction(1, 2)
        k += 1
    return out


def _fill_bars(line: Line) -> list[int]:
    """The passage's last bar, the last bar of every passage of a form, and the last bar
    of every statement four bars or longer (a phrase end; shorter statements run on
    without a fill)."""
    out = {line.bars} if line.bars >= 1 else set()
    out |= {p.last_bar for p in line.passages if 1 <= p.last_bar <= line.bars}
    for s in line.spans:
        if s.last_bar - s.first_bar + 1 >= 4 and s.last_bar >= 1:
            out.add(min(s.last_bar, line.bars))
    return sorted(out)


def drum_part(line: Line, figures: Sequence[Cue], fills: bool) -> DrumPart:
    bar = line.meter.bar
    time = tuple(m * bar + b for m in range(line.bars) for b in line.meter.beats)
    fill_bars = _fill_bars(line) if fills else []
    hits: list[DrumHit] = []
    for m in range(line.bars):
        t0 = m * bar
        pattern = _groove_bar(line.groove, t0, line.meter, m)
        if m + 1 in fill_bars:
            fill = _fill(t0, bar)
            pattern = [h for h in pattern if h.onset < fill[0].onset] + fill
        if m >= 1 and m in fill_bars:          # the downbeat after a fill
            pattern.append(DrumHit(t0, Fraction(1), CRASH, 10))
        hits.extend(pattern)
    for cue in figures:
        hits.append(DrumHit(cue.onset, _SHORT, SNARE, 16))
        hits.append(DrumHit(cue.onset, _SHORT, KICK, 12))
    # one attack per key and time: a figure on a pattern's snare or kick replaces it
    merged: dict[tuple[Fraction, int], DrumHit] = {}
    for h in hits:
        if h.onset < line.total:
            old = merged.get((h.onset, h.key))
            if old is None or h.accent > old.accent:
                merged[(h.onset, h.key)] = h
    ordered = tuple(sorted(merged.values(), key=lambda h: (h.onset, h.key)))
    return DrumPart(STYLE_WORDS.get(line.groove, line.groove.title()), time, tuple(figures),
                    tuple(fill_bars), ordered)
