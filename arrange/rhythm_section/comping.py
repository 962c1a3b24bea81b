"""Piano and guitar comping: slashes with chord symbols, rhythmic slashes at the hits.

Every bar is written in time slashes (one stemless slash a beat, common practice
of rhythm-section parts), except a bar where the section plays a figure: there
the figure's attacks are rhythmic slashes with their values (accented), the free whole beats
before and after it keep their time slashes and the rest is silent, so the
player comps and catches the figure with the horns.

The section's figures (``hits``) are the lead notes the groove accents (the
rhythm stage marks anticipations and syncopations across a beat ``accent``)
and anticipated notes; a groove that marks none (straight) gives the off-beat
notes held over the next beat.  Each slash carries the chord the horns sound
then, and a close rootless chord (third and seventh or sixth, then a tension
or the fifth) that the mock-up plays.
"""
from __future__ import annotations

from bisect import bisect_left, bisect_right
from collections.abc import Sequence
from fractions import Fraction

from arrange.harmony.events import Harmonized
from arrange.rhythm_section.values import Cue, Slash, Timed
from arrange.theory.chords import Chord

__all__ = ["hits", "comping", "chord_at", "comp_pitches", "COMP_FLOOR"]

COMP_FLOOR = 53    # F3: the lowest comping note, above the low-interval limits of thirds (from memory)


def hits(harmonized: Harmonized) -> tuple[Cue, ...]:
    """The section's figures: accented or anticipated lead notes (written times)."""
    notes = harmonized.line.notes
    marked = [n for n in notes if n.articulation == "accent" or n.anticipated]
    if not marked:
        beat = Fraction(4, harmonized.line.meter.denominator)
        marked = [n for n in notes
                  if n.weight >= 2 and n.onset + n.duration > (n.onset // beat + 1) * beat]
    return tuple(Cue(n.onset, n.duration, n.anticipated) for n in marked if n.onset >= 0)


def chord_at(harmonized: Harmonized, t: Fraction) -> Chord:
    """The chord the horns sound at ``t``: the last lead note's chord, unless a
    framework chord started after that note (a change under a held note or a rest).
    Looked up by bisection in the onsets (where they stand in order, as the stages make
    them; otherwise by the scan it stands for), so a long line's slashes do not each scan
    every note and chord."""
    ev_on, ev_sorted, fw_on, fw_sorted = _onsets(harmonized)
    events, framework = harmonized.events, harmonized.framework
    chord: Chord | None = None
    since = Fraction(-10**9)
    if ev_sorted:
        k = bisect_right(ev_on, t)
        if k:
            chord, since = events[k - 1].chord, ev_on[k - 1]
    else:
        for ev in events:
            if ev.note.onset <= t:
                chord, since = ev.chord, ev.note.onset
            else:
                break
    if fw_sorted:
        # the scan keeps the first chord of the latest onset after ``since`` up to ``t``
        k = bisect_right(fw_on, t)
        if k and since < fw_on[k - 1]:
            first = bisect_left(fw_on, fw_on[k - 1])
            chord = framework[first].chord
    else:
        for fc in framework:
            if since < fc.onset <= t:
                chord, since = fc.chord, fc.onset
    return chord if chord is not None else framework[0].chord


_ONSETS: dict[int, tuple[Harmonized, list[Fraction], bool, list[Fraction], bool]] = {}


def _onsets(h: Harmonized) -> tuple[list[Fraction], bool, list[Fraction], bool]:
    """The onsets of ``h``'s events and framework chords, and whether each stands in
    order; worked out once per harmony (every slash and bass note asks)."""
    hit = _ONSETS.get(id(h))
    if hit is None or hit[0] is not h:
        ev_on = [ev.note.onset for ev in h.events]
        fw_on = [fc.onset for fc in h.framework]
        hit = (h, ev_on, all(a <= b for a, b in zip(ev_on, ev_on[1:])),
               fw_on, all(a <= b for a, b in zip(fw_on, fw_on[1:])))
        if len(_ONSETS) > 8:
            _ONSETS.clear()
        _ONSETS[id(h)] = hit
    return hit[1], hit[2], hit[3], hit[4]


def comp_pitches(chord: Chord, floor: int = COMP_FLOOR) -> tuple[int, ...]:
    """A close rootless chord from ``floor`` up: guide tones first, then a tension or the fifth."""
    by_degree = dict(zip(chord.degrees, chord.intervals, strict=True))
    order = [by_degree.get(3, by_degree.get(4, by_degree.get(2))),
             by_degree.get(7, by_degree.get(6)),
             next((by_degree[d] for d in (9, 13, 11) if d in by_degree), by_degree.get(5))]
    pcs = [(chord.root + i) % 12 for i in order if i is not None]
    if len(pcs) < 3:
        pcs.append(chord.root % 12)
    out: list[int] = []
    low = floor
    for pc in pcs:
        p = low + (pc - low) % 12
        out.append(p)
        low = p + 1
    return tuple(sorted(out))


def _bar_slashes(harmonized: Harmonized, t0: Fraction, bar: Fraction, beats: Sequence[Fraction],
                 figure: Sequence[Cue]) -> list[Slash]:
    out: list[Slash] = []
    if not figure:
        ends = list(beats[1:]) + [bar]
        for b, e in zip(beats, ends, strict=True):
            ch = chord_at(harmonized, t0 + b)
            out.append(Slash(t0 + b, e - b, "time", ch, comp_pitches(ch)))
        return out
    t = t0
    for k, cue in enumerate(figure):
        out.extend(_gap(harmonized, t, cue.onset, t0, beats))
        stop = min(cue.onset + cue.duration, t0 + bar,
                   figure[k + 1].onset if k + 1 < len(figure) else t0 + bar)
        ch = chord_at(harmonized, cue.onset)
        out.append(Slash(cue.onset, stop - cue.onset, "hit", ch, comp_pitches(ch)))
        t = stop
    out.extend(_gap(harmonized, t, t0 + bar, t0, list(beats) + [bar]))
    return out


def _gap(harmonized: Harmonized, start: Fraction, end: Fraction, t0: Fraction,
         beats: Sequence[Fraction]) -> list[Slash]:
    """Between figures: a time slash on every whole beat that is free, rests elsewhere."""
    out: list[Slash] = []
    edges = [t0 + b for b in beats]
    t = start
    while t < end:
        nxt = next((e for e in edges if e > t), end)
        if t in edges and nxt <= end:
            ch = chord_at(harmonized, t)
            out.append(Slash(t, nxt - t, "time", ch, comp_pitches(ch)))
            t = nxt
            continue
        stop = min(nxt, end)
        out.append(Slash(t, stop - t, "time", chord_at(harmonized, t), (), rest=True))
        t = stop
    return out


def comping(harmonized: Harmonized, figures: Sequence[Cue]) -> tuple[Slash, ...]:
    """One bar after another from bar 1: time slashes, and the bar's figure where it has one."""
    line = harmonized.line
    bar = line.meter.bar
    out: list[Slash] = []
    by_onset = Timed(figures, [c.onset for c in figures])
    for m in range(line.bars):
        t0 = m * bar
        figure = by_onset.between(t0, t0 + bar)
        out.extend(_bar_slashes(harmonized, t0, bar, line.meter.beats, figure))
    return tuple(out)
