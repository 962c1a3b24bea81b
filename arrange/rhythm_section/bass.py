"""The bass part: a written line that fits the groove, on the framework chords.

Styles (common practice of jazz, latin and pop bass playing; the patterns are
from memory, no single method book):

* ``walking``: one note a beat; the root on the chord's first beat, chord tones
  moving toward the next chord, and on the last beat before a change an
  approach note a half step (or, to avoid a repeated note, a whole step) from
  the next chord's root;
* ``two-beat``: the same on the bar's large divisions (half notes in 4/4);
* ``tumbao`` (4/4): the "and" of 2 and beat 4, each anticipating the chord of
  the next strong beat and tied over it, so the root of every bar's chord sounds
  on its downbeat without being struck;
* ``shuffle``: root, third, fifth, sixth a beat, each beat as a long-short pair;
* ``roots-fifths``: the root on the chord's first large division, the fifth on
  the others.

The passage's last chord is held on its root.  Pitches are sounding, inside the
bass's practical range; the part is written an octave higher.
"""
from __future__ import annotations

from collections.abc import Sequence
from fractions import Fraction

from arrange.harmony.events import FrameworkChord
from arrange.rhythm.meter import Meter
from arrange.rhythm_section.values import BassNote
from arrange.theory.chords import Chord

__all__ = ["bass_line", "pieces", "ROOT_CENTRE"]

ROOT_CENTRE = 38          # D2: where the first root is placed (middle of a bass's low octave)
_ROOT_TOP = 45            # roots stay at or below A2 (the bass's low register, common practice)


def pieces(framework: Sequence[FrameworkChord], bar: Fraction,
           total: Fraction) -> list[tuple[Fraction, Fraction, Chord]]:
    """The framework chords cut at every bar line, repeated chords kept apart per bar."""
    out: list[tuple[Fraction, Fraction, Chord]] = []
    for fc in framework:
        start, end = fc.onset, min(fc.onset + fc.duration, total)
        while start < end:
            stop = min(end, (start // bar + 1) * bar)
            out.append((start, stop, fc.chord))
            start = stop
    return out


def _bass_pc(chord: Chord) -> int:
    return chord.bass if chord.bass is not None else chord.root


def _nearest(pc: int, near: int, lo: int, hi: int) -> int:
    cands = [p for p in range(lo, hi + 1) if p % 12 == pc % 12]
    return min(cands, key=lambda p: (abs(p - near), abs(p - ROOT_CENTRE)))


def _roots(chords: Sequence[Chord], lo: int) -> list[int]:
    out: list[int] = []
    prev = ROOT_CENTRE
    for ch in chords:
        prev = _nearest(_bass_pc(ch), prev, lo, _ROOT_TOP)
        out.append(prev)
    return out


def _onsets(start: Fraction, end: Fraction, bar: Fraction, grid: Sequence[Fraction]) -> list[Fraction]:
    t0 = start // bar * bar
    out = [start] + [t0 + g for g in grid if start < t0 + g < end]
    return out


def _chord_tones(chord: Chord, lo: int, hi: int) -> list[int]:
    pcs = {(chord.root + i) % 12 for i in chord.core}
    return [p for p in range(lo, hi + 1) if p % 12 in pcs]


def _approach(target: int, before: int, lo: int, hi: int) -> int:
    """A half step from the next root, on the side the line comes from; a whole
    step when the half step would repeat the note before it."""
    side = -1 if target > before else 1
    for step in (side, -side, 2 * side, -2 * side):
        p = target + step
        if lo <= p <= hi and p != before:
            return p
    return target - 1


def _walk(onsets: list[Fraction], end: Fraction, chord: Chord, root: int, nxt: int | None,
          lo: int, hi: int, middle_fifth: bool) -> list[BassNote]:
    """Root, then chord tones one after another toward the next root (an arc up and
    back when the next root is the same), then the approach note."""
    n = len(onsets)
    pitches: list[tuple[int, str]] = [(root, "root")]
    middle = n - 1 - (1 if nxt is not None else 0)
    tones = _chord_tones(chord, lo, hi)
    cur = root
    if middle_fifth:
        for _ in range(middle):
            cur = root + 7 if root + 7 <= hi else root - 5
            pitches.append((cur, "chord tone"))
    else:
        way = 1 if nxt is None or nxt >= root else -1
        if way == 1 and not any(p > root for p in tones):
            way = -1
        for _ in range(middle):
            ahead = [p for p in tones if (p - cur) * way > 0]
            if not ahead:
                way = -way
                ahead = [p for p in tones if (p - cur) * way > 0] or [cur]
            cur = min(ahead, key=lambda p: abs(p - cur))
            pitches.append((cur, "chord tone"))
    if nxt is not None and n >= 2:
        pitches.append((_approach(nxt, cur, lo, hi), "approach"))
    ends = onsets[1:] + [end]
    return [BassNote(o, e - o, p, role, chord) for o, e, (p, role) in zip(onsets, ends, pitches, strict=True)]


def _shuffle(onsets: list[Fraction], end: Fraction, chord: Chord, root: int, hi: int,
             meter: Meter) -> list[BassNote]:
    third = next((i for i in chord.intervals if i in (3, 4)), 5)
    fifth = next((i for i in chord.intervals if i in (6, 7, 8)), 7)
    degrees = (0, third, fifth, 9)
    base = root if root + 9 <= hi else root - 12
    out: list[BassNote] = []
    ends = onsets[1:] + [end]
    for k, (o, e) in enumerate(zip(onsets, ends, strict=True)):
        p = base + degrees[k % 4]
        length = e - o
        long = Fraction(1) if meter.compound else Fraction(1, 2)
        role = "root" if k % 4 == 0 else ("chord tone" if k % 4 < 3 else "pattern")
        if length > long:
            out.append(BassNote(o, long, p, role, chord))
            out.append(BassNote(o + long, length - long, p, "pattern" if role != "chord tone" else role, chord))
        else:
            out.append(BassNote(o, length, p, role, chord))
    return out


def _tumbao(framework: Sequence[FrameworkChord], meter: Meter, total: Fraction,
            lo: int) -> list[BassNote]:
    """4/4: the "and" of 2 and beat 4, each anticipating the next strong beat's chord."""
    bar = meter.bar

    def chord_at(t: Fraction) -> Chord:
        current = framework[0].chord
        for fc in framework:
            if fc.onset <= t:
                current = fc.chord
        return current

    out: list[BassNote] = []
    prev = ROOT_CENTRE
    bars = int(total / bar)

    def place(pc: int) -> int:
        nonlocal prev
        prev = _nearest(pc, prev, lo, _ROOT_TOP)
        return prev

    for b in range(bars):
        t0 = b * bar
        last = b == bars - 1
        here = chord_at(t0)
        if b == 0:
            out.append(BassNote(t0, Fraction(3, 2) if not last else bar, place(_bass_pc(here)), "root", here))
        if last:
            break
        mid = chord_at(t0 + 2)
        if mid != here:
            p, role, ch = place(_bass_pc(mid)), "root", mid
        else:
            root = prev
            p = root + 7 if root + 7 <= _ROOT_TOP + 5 else root - 5
            role, ch = "chord tone", here
        out.append(BassNote(t0 + Fraction(3, 2), Fraction(3, 2), p, role, ch))
        nxt = chord_at(t0 + bar)
        hold = Fraction(5, 2) if b + 2 < bars else Fraction(1) + bar
        out.append(BassNote(t0 + 3, hold, place(_bass_pc(nxt)), "root", nxt))
    return out


def bass_line(framework: Sequence[FrameworkChord], meter: Meter, total: Fraction, style: str,
              bass_range: tuple[int, int]) -> tuple[BassNote, ...]:
    """The bass line of ``style`` over the framework chords, sounding pitches in
    ``bass_range`` (the instrument's practical range)."""
    lo, hi = bass_range
    hi = min(hi, 50)          # walking lines stay below D3 (common practice of the register)
    if style == "tumbao" and str(meter) == "4/4" and total >= meter.bar:
        return tuple(_tumbao(framework, meter, total, lo))
    bar = meter.bar
    cut = pieces(framework, bar, total)
    roots = _roots([c for _s, _e, c in cut], lo)
    beats = meter.beats
    large: list[Fraction] = []
    t = Fraction(0)
    for group in meter.groups:          # the onsets of the bar's large divisions
        large.append(t)
        t += sum(group, Fraction(0))
    out: list[BassNote] = []
    for i, (start, end, chord) in enumerate(cut):
        last = i == len(cut) - 1
        nxt = roots[i + 1] if not last else None
        if last:
            out.append(BassNote(start, end - start, roots[i], "root", chord))
        elif style == "walking":
            out.extend(_walk(_onsets(start, end, bar, beats), end, chord, roots[i], nxt, lo, hi, False))
        elif style == "two-beat":     # the approach only into a new root; the fifth otherwise
            into = nxt if nxt is not None and nxt % 12 != roots[i] % 12 else None
            out.extend(_walk(_onsets(start, end, bar, large), end, chord, roots[i], into, lo, hi, True))
        elif style == "shuffle":
            out.extend(_shuffle(_onsets(start, end, bar, beats), end, chord, roots[i], hi, meter))
        else:   # roots-fifths (and tumbao outside 4/4)
            out.extend(_walk(_onsets(start, end, bar, large), end, chord, roots[i], None, lo, hi, True))
    return tuple(out)
