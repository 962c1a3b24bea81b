"""Harmonic rhythm: held lead notes cut where a framework chord starts under them.

The framework sets the harmonic rhythm, not the lead's attacks (common practice of
ensemble writing: the section re-voices under a sustained melody note).  A lead note that
sounds through the start of a framework chord is cut there into pieces; each later piece
is marked ``tied`` (one lead note, written tied, played once), so every later stage sees
one event per piece: the walk gives it its chord, the voicer voices it, the writers tie
whatever part holds its pitch across the cut, and the report folds the pieces back into
one event with ``segments``.

A note is cut at a framework chord that differs from the chord it sounds over until then
(an anticipation belongs to the downbeat it pushes, so its own downbeat cuts nothing);
over a repeated chord it is cut only where it is no chord tone or tension of that chord,
so an approach chord on it never sounds over its target's arrival.
"""
from __future__ import annotations

from bisect import bisect_left, bisect_right
from dataclasses import replace
from fractions import Fraction

from arrange.harmony.approach import classify
from arrange.harmony.events import FrameworkChord
from arrange.rhythm.groove import swing_fraction, warp
from arrange.rhythm.line import Line, Note
from arrange.rhythm.meter import metric_weight
from arrange.theory.keys import Key

__all__ = ["split_held"]

_HALF = Fraction(1, 2)


def _perf(line: Line, t: Fraction) -> Fraction:
    """Performed time of written time ``t`` (as the rhythm stage performs the lead)."""
    if line.notate == "12/8" or line.swing == 0.5:
        return t
    return warp(t, swing_fraction(line.swing))


def _cuts(note: Note, fw: tuple[FrameworkChord, ...], key_of,  # noqa: ANN001
          onsets: list[Fraction]) -> list[Fraction]:
    """The cuts of one note: ``fw`` in time order, ``onsets`` their onsets (only the chords
    near the note are looked at)."""
    end = note.onset + note.duration
    at = note.onset + (_HALF if note.anticipated else 0)
    lo, hi = bisect_right(onsets, at), bisect_left(onsets, end)
    current = fw[lo - 1] if lo else None
    out = []
    for f in fw[lo:hi]:
        if not note.onset < f.onset < end or f.onset <= at:
            continue
        if current is None or f.chord != current.chord or \
                classify(note.pitch, f.chord, key_of(f.onset)) not in ("chord tone", "tension"):
            out.append(f.onset)
        current = f
    return out


def split_held(line: Line, fw: tuple[FrameworkChord, ...], key_of) -> Line:  # noqa: ANN001
    """``line`` with every held note cut at the framework chords that start under it
    (``key_of(t)``: the key in force at written time ``t``).  Segment and passage starts
    move with the notes they name; a line with nothing to cut is returned as it is."""
    pieces: list[Note] = []
    first_of: list[int] = []          # old index -> new index of its first piece
    fw = tuple(sorted(fw, key=lambda f: f.onset))    # in time order (stable: one onset keeps its order)
    onsets = [f.onset for f in fw]
    for note in line.notes:
        first_of.append(len(pieces))
        cuts = _cuts(note, fw, key_of, onsets)
        if not cuts:
            pieces.append(replace(note, index=len(pieces)))
            continue
        bounds = [note.onset, *cuts, note.onset + note.duration]
        p_end = note.perf_onset + note.perf_duration
        shift = note.perf_onset - _perf(line, note.onset)
        for j, (a, b) in enumerate(zip(bounds, bounds[1:], strict=False)):
            p_a = note.perf_onset if j == 0 else _perf(line, a) + shift
            p_b = p_end if j == len(bounds) - 2 else _perf(line, b) + shift
            if j == 0:
                pieces.append(replace(note, index=len(pieces), duration=b - a, perf_duration=p_b - p_a))
            else:
                pieces.append(replace(note, index=len(pieces), onset=a, duration=b - a,
                                      weight=metric_weight(a, line.meter), perf_onset=p_a,
                                      perf_duration=p_b - p_a, articulation="", anticipated=False,
                                      tied=True))
    if len(pieces) == len(line.notes):
        return line
    first_of.append(len(pieces))
    segments = tuple(replace(s, start=first_of[min(s.start, len(line.notes))]) for s in line.segments)
    passages = tuple(replace(p, first_note=first_of[min(p.first_note, len(line.notes))])
                     for p in line.passages)
    return replace(line, notes=tuple(pieces), segments=segments, passages=passages)


def key_lookup(key: Key, changes: tuple[tuple[int, Key], ...], bar_len: Fraction):  # noqa: ANN201
    """``key_of(t)`` for :func:`split_held`: the key of the bar holding written time ``t``
    (the last change at or before that bar, found by bisection; ``key`` before any)."""
    ordered = sorted(changes, key=lambda c: c[0])      # stable: a bar named twice keeps the later
    firsts = [first for first, _k in ordered]

    def key_of(t: Fraction) -> Key:
        i = bisect_right(firsts, int(t // bar_len) + 1)
        return ordered[i - 1][1] if i else key
    return key_of
