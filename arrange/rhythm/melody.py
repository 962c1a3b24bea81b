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

__all__ = ["lay_melody", "phrase_starts", "CHAIN_ONLY", "PHRASE_RULE"]

PHRASE_RULE = ("a melody's statements are its phrases: a new phrase starts after a rest of a beat or more "
               "(a quarter in 4/4, a dotted quarter in 6/8) and after a note the file marks with a breath "
               "mark or a fermata (',' in the project's melody text)")

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


def _beat(meter: Meter) -> Fraction:
    """The meter's shortest beat (a quarter in 4/4, a dotted quarter in 6/8, a quarter in 7/8's 2+2+3)."""
    edges = list(meter.beats) + [meter.bar]
    return min((b - a for a, b in zip(edges, edges[1:], strict=False)), default=meter.bar)


def phrase_starts(melody: Melody, meter: Meter) -> tuple[int, ...]:
    """0-based indices (in onset order) of the notes that begin a phrase (:data:`PHRASE_RULE`)."""
    notes = sorted(melody.notes, key=lambda x: x.onset)
    beat = _beat(meter)
    marks = set(melody.breaks)
    out = [0] if notes else []
    for k in range(1, len(notes)):
        before = notes[k - 1]
        if notes[k].onset - (before.onset + before.duration) >= beat or before.onset in marks:
            out.append(k)
    return tuple(out)


def lay_melody(melody: Melody, meter: Meter, options: RhythmOptions, *, where: str) -> Line:
    """The melody's notes as a :class:`Line`: one segment of form ``melody`` per phrase
    (:func:`phrase_starts`)."""
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
    starts = phrase_starts(melody, meter)
    phrase = 0
    for k, n in enumerate(sorted(melody.notes, key=lambda x: x.onset)):
        if phrase < len(starts) and starts[phrase] == k:
            phrase += 1
        if ((n.onset * _GRID).denominator != 1 or (n.duration * _GRID).denominator != 1
                or n.duration <= 0):
            raise RhythmError(f"a note at {n.onset} lasting {n.duration} quarter notes lies off the "
                              "sixteenth and triplet grid", where=where,
                              accepted="notes on the 1/24-quarter grid (sixteenths, triplets)")
        dur = n.duration
        if prev_end is not None and n.onset < prev_end:      # overlapping notes: the earlier ends here
            last = notes[-1]
            last[2] = n.onset - last[1]                     # type: ignore[operator]
        notes.append([n.pitch, n.onset, dur, phrase])
        prev_end = n.onset + dur
    first = -melody.pickup
    end = max(n[1] + n[2] for n in notes)                    # type: ignore[operator]
    total = max(meter.bar, melody.total, -((-end) // meter.bar) * meter.bar)   # type: ignore[operator]
    anticipated = _anticipate(notes, meter.bar, first) if options.anticipate else set()
    onsets: list[Fraction] = [notes[k][1] for k in starts]          # type: ignore[misc]
    onsets[0] = first
    ends = onsets[1:] + [total]
    spans = [(j, on, end - on, Fraction(1)) for j, (on, end) in enumerate(zip(onsets, ends, strict=True), start=1)]
    line = _finish(None, meter, written, options, notes, anticipated, spans, total, first)   # type: ignore[arg-type]
    return _with_segments(line, tuple(Segment(j, "melody", 0, k) for j, k in enumerate(starts, start=1)))


def _with_segments(line: Line, segments: tuple[Segment, ...]) -> Line:
    from dataclasses import replace

    return replace(line, segments=segments)
