"""Notation inside one measure: note values, accidentals, beams and triplet brackets.

Plain Python on the notes of a measure (onsets, values, spelled names), shared by the
staves of :mod:`.xml_score`.  Each rule is common practice of engraving, named beside it.
"""
from __future__ import annotations

from fractions import Fraction
from functools import lru_cache
from typing import Any

from arrange.rhythm.meter import Meter
from arrange.rhythm.notation import is_triplet
from arrange.theory.keys import signature_alters

__all__ = ["TYPES", "BEAMS", "split_name", "signature_alters", "accidentals", "tuplets", "beams", "beat_units"]

Q = Fraction
# note values (quarter notes) -> MusicXML <type> and dots (MusicXML 4.0 note-type-value)
TYPES = {Q(4): ("whole", 0), Q(2): ("half", 0), Q(1): ("quarter", 0), Q(1, 2): ("eighth", 0),
          Q(1, 4): ("16th", 0), Q(1, 8): ("32nd", 0), Q(6): ("whole", 1), Q(3): ("half", 1),
          Q(3, 2): ("quarter", 1), Q(3, 4): ("eighth", 1), Q(3, 8): ("16th", 1), Q(3, 16): ("32nd", 1)}
BEAMS = {"eighth": 1, "16th": 2, "32nd": 3}
_LAST_TICK = Q(1, 96)     # a note's last moment: its end less the finest grid step
_EIGHTH = Q(1, 2)

def split_name(name: str) -> tuple[str, int, int]:
    """``Eb4`` -> ("E", -1, 4); the octave goes with the letter (``Cb4`` is B3's key)."""
    i, alter = 1, 0
    while i < len(name) and name[i] in "b#":
        alter += 1 if name[i] == "#" else -1
        i += 1
    return name[0], alter, int(name[i:]) if i < len(name) else 4


def accidentals(notes: list[Any], fifths: int) -> dict[int, int]:
    """Index -> printed accidental: only where the key signature and the measure so far
    do not already give the note's alteration (common practice of engraving: an accidental
    holds to the bar line for its line or space); a tied-over note never shows one."""
    sig = signature_alters(fifths)
    shown: dict[tuple[str, int], int] = {}
    out = {}
    for i, n in enumerate(notes):
        if n.name is None:
            continue
        step, alter, octave = split_name(n.name)
        if alter != shown.get((step, octave), sig.get(step, 0)) and not n.tie_stop:
            out[i] = alter
        shown[(step, octave)] = alter
    return out


def tuplets(notes: list[Any]) -> dict[int, str]:
    """Bracket each run of triplet values that fills a beat division (3 in the time of 2)."""
    out: dict[int, str] = {}
    run: list[int] = []
    total = Q(0)
    for i, n in enumerate(notes):
        if not is_triplet(n.duration):
            run, total = [], Q(0)
            continue
        run.append(i)
        total += n.duration
        if total in (Q(1, 2), Q(1), Q(2)):
            out[run[0]] = "start"
            out[run[-1]] = "stop"
            run, total = [], Q(0)
    return out


def beat_units(meter: Meter) -> list[Fraction]:
    """Bar positions that end a beam: the meter's beats (common notation practice: beams
    show the beat; 6/8 and 12/8 in dotted quarters, 7/8 as 2+2+3 eighths)."""
    return [*meter.beats[1:], meter.bar]


def beams(notes: list[Any], meter: Meter, start: Fraction) -> dict[int, tuple[tuple[int, str], ...]]:
    """Index -> ((level, begin|continue|end|forward hook|backward hook), ...) for the
    notes of one measure.  Beamable notes (eighths and shorter) that follow each other
    inside one beat are beamed; in 4/4 a half bar of four plain eighths is one group
    (common practice), never across the middle of the bar.  The beams depend only on the
    measure's rhythm (each note's offset, value and whether it sounds), which the parts
    of a section share: worked out once per rhythm (the answer is not to be changed)."""
    return _beam_plan(tuple((n.offset, n.duration, n.name is not None) for n in notes), meter, start)


@lru_cache(maxsize=4096)
def _beam_plan(rhythm: tuple[tuple[Fraction, Fraction, bool], ...], meter: Meter,
               start: Fraction) -> dict[int, tuple[tuple[int, str], ...]]:
    units = beat_units(meter)
    where = [start + offset for offset, _d, _sounds in rhythm]   # each note's bar position, once
    if meter.numerator == 4 and meter.denominator == 4:
        halves = []
        for lo, hi in ((Q(0), Q(2)), (Q(2), Q(4))):
            inside = [(d, sounds) for (_o, d, sounds), pos in zip(rhythm, where) if lo <= pos < hi]
            if len(inside) == 4 and all(sounds and d == _EIGHTH for d, sounds in inside):
                halves.append(lo + 1)
        units = [u for u in units if u not in halves]

    def unit_of(pos: Fraction) -> int:
        return next(k for k, u in enumerate(units) if pos < u)

    groups: list[list[int]] = []
    prev_unit = None
    for i, (_offset, duration, sounds) in enumerate(rhythm):
        value = duration * 3 / 2 if is_triplet(duration) else duration
        kind = TYPES.get(value)
        if not sounds or kind is None or kind[0] not in BEAMS:
            prev_unit = None
            continue
        pos = where[i]
        u = unit_of(pos)
        end_u = unit_of(pos + duration - _LAST_TICK)
        if u != end_u:
            prev_unit = None
            continue
        if prev_unit == u and groups and groups[-1][-1] == i - 1:
            groups[-1].append(i)
        else:
            groups.append([i])
        prev_unit = u
    out: dict[int, tuple[tuple[int, str], ...]] = {}
    for g in groups:
        if len(g) < 2:
            continue
        counts = []
        for i in g:
            d = rhythm[i][1]
            counts.append(BEAMS[TYPES[d * 3 / 2 if is_triplet(d) else d][0]])
        for pos, i in enumerate(g):
            levels = []
            for level in range(1, counts[pos] + 1):
                before = pos > 0 and counts[pos - 1] >= level
                after = pos + 1 < len(g) and counts[pos + 1] >= level
                if before and after:
                    levels.append((level, "continue"))
                elif after:
                    levels.append((level, "begin"))
                elif before:
                    levels.append((level, "end"))
                else:
                    levels.append((level, "forward hook" if pos == 0 else "backward hook"))
            out[i] = tuple(levels)
    return out
