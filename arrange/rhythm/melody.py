"""Rhythm stage for a melody that brings its own rhythm: a :class:`Melody` in, a :class:`Line` out.

The notes keep their written times; the groove still applies (swing and shuffle
performance times, articulations, a latin anticipation), exactly as for a chain,
through the rhythm stage's own finishing step.  The keys of ``[rhythm]`` that shape
a chain's rhythm (``cell``, ``augment``, ``pickup`` ...) have nothing to shape here
and are refused by name.
"""
from __future__ import annotations

from fractions import Fraction

from arrange.errors import RhythmError
from arrange.inputs.melody_file import Melody
from arrange.rhythm.line import Line, RhythmOptions, Segment, _anticipate, _finish
from arrange.rhythm.meter import Meter

__all__ = ["lay_melody", "CHAIN_ONLY"]

_GRID = 24
# [rhythm] keys that only a chain's rhythm uses, with the value that means "not given"
CHAIN_ONLY = ("cell", "motif_cell", "retrograde", "rest_between", "hold_last", "augment", "grow",
              "pickup", "start")


def _given(options: RhythmOptions) -> list[str]:
    d = RhythmOptions()
    out = []
    if options.cell is not None or options.motif:
        out.append("cell")
    if options.motif_cell is not None:
        out.append("motif_cell")
    for name in ("retrograde", "rest_between", "hold_last", "augment", "grow", "pickup", "start"):
        if getattr(options, name) != getattr(d, name):
            out.append(name)
    return out


def lay_melody(melody: Melody, meter: Meter, options: RhythmOptions, *, where: str) -> Line:
    """The melody's notes as a :class:`Line` (one segment, form ``melody``)."""
    given = _given(options)
    if given:
        raise RhythmError(f"[rhythm] {given[0]!r} shapes a chain's rhythm; a melody brings its own",
                          where=f"{options.where}, key '{given[0]}'",
                          accepted="with a melody, [rhythm] takes groove, swing, articulation, "
                                   "anticipate and notate")
    if options.groove in ("swing", "shuffle") and not meter.quarter_pulse:
        raise RhythmError(f"groove {options.groove!r} needs a quarter-note pulse, not {meter}",
                          where=f"{options.where}, key 'groove'",
                          accepted="swing or shuffle in 2/4, 3/4, 4/4, 5/4 or 2/2")
    written = meter
    if options.notate == "12/8":
        if meter.denominator != 4 or meter.numerator not in (2, 3, 4):
            raise RhythmError(f"notate = \"12/8\" cannot rewrite {meter}",
                              where=f"{options.where}, key 'notate'",
                              accepted="2/4, 3/4 or 4/4 (written 6/8, 9/8, 12/8)")
        written = Meter(3 * meter.numerator, 8)
    if melody.pickup and not 0 < melody.pickup < meter.bar:
        raise RhythmError(f"the melody's pickup lasts {melody.pickup} quarter notes", where=where,
                          accepted=f"a pickup shorter than the {meter} bar")
    notes: list[list[object]] = []
    prev_end: Fraction | None = None
    for n in sorted(melody.notes, key=lambda x: x.onset):
        if ((n.onset * _GRID).denominator != 1 or (n.duration * _GRID).denominator != 1
                or n.duration <= 0):
            raise RhythmError(f"a note at {n.onset} lasting {n.duration} quarter notes lies off the "
                              "sixteenth and triplet grid", where=where,
                              accepted="notes on the 1/24-quarter grid (sixteenths, triplets)")
        dur = n.duration
        if prev_end is not None and n.onset < prev_end:      # overlapping notes: the earlier ends here
            last = notes[-1]
            last[2] = n.onset - last[1]                     # type: ignore[operator]
        notes.append([n.pitch, n.onset, dur, 1])
        prev_end = n.onset + dur
    first = -melody.pickup
    end = max(n[1] + n[2] for n in notes)                    # type: ignore[operator]
    total = max(meter.bar, melody.total, -((-end) // meter.bar) * meter.bar)   # type: ignore[operator]
    anticipated = _anticipate(notes, meter.bar, first) if options.anticipate else set()
    spans = [(1, first, total - first, Fraction(1))]
    line = _finish(None, meter, written, options, notes, anticipated, spans, total, first)
    return _with_segments(line, (Segment(1, "melody", 0, 0),))


def _with_segments(line: Line, segments: tuple[Segment, ...]) -> Line:
    from dataclasses import replace

    return replace(line, segments=segments)
