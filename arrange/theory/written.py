"""Written spelling: concert names to the names a part reads, and one name per moment.

Pure functions every writer calls (common practice of engraving transposed parts):

* :func:`transpose_name` -- a spelled pitch moved by the usual interval of a transposition
  (letter arithmetic: ``F#4`` up a major second is ``G#4``);
* :func:`written_name` -- the name a part transposing by ``semitones`` reads for a concert
  name: the concert spelling moved by the interval, then moved 12 fifths where the part's
  key signature is the enharmonic one (:func:`arrange.theory.keys.written_key`), with the
  chord's own tones kept together so no tone needs a double accidental a single one could
  spell (an alto's A#7 becomes Bb7: C## would be its third);
* :func:`agree` -- one spelling per pitch class while notes sound together, across every
  part of a score (layers included), earlier notes in the list deciding;
* :func:`sounding_side` -- a written name moved back by the interval (the name a writer
  that transposes by itself, music21's ``toWrittenPitch``, must be given).

Names are ours (``Eb4``, ``F##5``), octaves go with the letter (``Cb4`` is B3's pitch).
"""
from __future__ import annotations

from bisect import bisect_left, bisect_right
from collections.abc import Sequence
from fractions import Fraction
from functools import lru_cache
from math import lcm

from arrange.theory.chords import ROOT_NAMES, Chord, interval_name, spell_name
from arrange.theory.keys import LETTERS, Key, fifths_of, interval_steps, name_at, written_key

__all__ = ["transpose_name", "written_name", "sounding_side", "agree", "split_name", "midi_of"]

# single accidentals or none: Fb (-8) .. B# (12) on the line of fifths
_LOW, _HIGH = -8, 12
_ODD = ("Cb", "Fb", "E#", "B#")


def split_name(name: str) -> tuple[str, int]:
    """``Eb4`` -> (``Eb``, 4); ``C#-1`` -> (``C#``, -1)."""
    i = 1
    while i < len(name) and name[i] in "#b":
        i += 1
    return name[:i], int(name[i:])


def midi_of(name: str) -> int:
    pc_name, octave = split_name(name)
    return (octave + 1) * 12 + ROOT_NAMES[pc_name[0]] + pc_name.count("#") - pc_name.count("b")


def _with_octave(pc_name: str, midi: int) -> str:
    octave = (midi - (ROOT_NAMES[pc_name[0]] + pc_name.count("#") - pc_name.count("b"))) // 12 - 1
    return f"{pc_name}{octave}"


def transpose_name(name: str, semitones: int) -> str:
    """``name`` (with octave) moved by the usual interval of ``semitones`` (letter steps
    from :func:`arrange.theory.keys.interval_steps`): ``Gb4`` + 9 -> ``Eb5``."""
    pc_name, _octave = split_name(name)
    midi = midi_of(name) + semitones
    letter = LETTERS[(LETTERS.index(pc_name[0]) + interval_steps(semitones)) % 7]
    return _with_octave(spell_name(letter, midi % 12), midi)


def sounding_side(written: str, semitones: int) -> str:
    """The concert-pitch name whose move by the part's interval gives ``written``."""
    return transpose_name(written, -semitones)


def _interval_fifths(semitones: int) -> int:
    """Fifths a name travels with the usual interval (major second 2, major sixth 3)."""
    return fifths_of(split_name(transpose_name("C4", semitones))[0])


@lru_cache(maxsize=4096)
def _chord_shift(chord: Chord, move: int, flipped: bool, wkey: Key) -> int:
    """Extra 12 fifths (0, -12 or +12) the chord's root takes in the written part: none of
    its tones needing a double accidental the concert chord does not have (the seventh of a
    diminished seventh aside), no root Cb, Fb, E# or B# the written key lacks, then (in a
    part whose key is the enharmonic one) its tones closest to the written key (the middle
    of its signature's seven names on the line of fifths)."""
    root = fifths_of(chord.root_name)
    centre = wkey.fifths + 2

    def doubles(at: int) -> int:
        out = 0
        for iv, deg in zip(chord.intervals, chord.degrees, strict=True):
            place = fifths_of(interval_name(name_at(at), iv, deg))
            if not (chord.quality == "dim7" and deg == 7) and not _LOW <= place <= _HIGH:
                out += 1
        return out

    if not _LOW <= root <= _HIGH:
        return 0                        # a root the user spelled with a double accidental
    concert = doubles(root)
    if not flipped and doubles(root + move) <= concert:
        return 0

    def cost(extra: int) -> tuple[int, bool, int]:
        at = root + move + extra
        if not _LOW - 7 <= at <= _HIGH + 7:
            return 99, True, 0
        spread = sum(abs(fifths_of(interval_name(name_at(at), iv, deg)) - centre)
                     for iv, deg in zip(chord.intervals, chord.degrees, strict=True))
        odd = name_at(at) in _ODD and name_at(at) not in wkey.names
        return max(0, doubles(at) - concert), odd, spread

    return min((0, -12, 12), key=cost)


@lru_cache(maxsize=65536)
def written_name(name: str, semitones: int, key: Key, chord: Chord | None = None) -> str:
    """The name a part transposing by ``semitones`` (written minus sounding) reads for the
    concert name ``name`` in concert ``key`` under ``chord``.

    The concert spelling moves by the usual interval; where the part's key signature is the
    enharmonic key (:func:`written_key`), every name moves 12 fifths with it (concert F# major,
    alto in Eb major: E#4 -> D5, not C##5).  A chord tone moves with its chord, whose written
    root is the spelling that needs no double accidental for any tone; what still carries a
    double accidental takes its plain enharmonic.  ``semitones`` 0 keeps the concert name,
    unless the key is written enharmonically (a key past 7 accidentals: G# major as Ab major)."""
    pc_name, _octave = split_name(name)
    wkey = written_key(key, semitones)
    move = wkey.fifths - key.fifths     # the fifths every name travels, interval included
    if move == 0 and semitones == 0:
        return name                     # a concert part in the key the project names
    flipped = move != _interval_fifths(semitones)
    place = fifths_of(pc_name) + move
    with_chord = False
    if chord is not None:
        iv = (ROOT_NAMES[pc_name[0]] + pc_name.count("#") - pc_name.count("b") - chord.root) % 12
        deg = chord.degree_of(iv)
        by_degree = interval_name(chord.root_name, iv, deg) if deg is not None else None
        with_chord = by_degree == pc_name
        if by_degree is not None and not with_chord and abs(by_degree.count("#") - by_degree.count("b")) > 1 \
                and not (chord.quality == "dim7" and deg == 7):
            # a degree concert pitch writes by its plain enharmonic (Cb7's seventh as A): the
            # part moves the degree with its chord (an alto's Ab7 has Gb, not F#)
            place = fifths_of(by_degree) + move
            with_chord = True
        if with_chord:
            place += _chord_shift(chord, move, flipped, wkey)
    if flipped and not with_chord and name_at(place) in _ODD and name_at(place) not in wkey.names:
        place += -12 if place > 0 else 12       # Fb -> E, E# -> F (the key has no Fb, E#)
    if abs(pc_name.count("#") - pc_name.count("b")) <= 1:
        # a double accidental the move brought in (not one the concert name has): its enharmonic
        while place > _HIGH:
            place -= 12
        while place < _LOW:
            place += 12
    return _with_octave(name_at(place), midi_of(name) + semitones)


def agree(notes: Sequence[tuple[Fraction, Fraction, int, str]]) -> tuple[str, ...]:
    """One spelling per pitch class at one moment: ``notes`` are ``(onset, end, midi,
    name)`` in order of precedence (the lead section's parts first, then the layers); a
    note that sounds together with an earlier one of its pitch class spelled otherwise takes
    that spelling.  A tied note is one entry, so a tie never changes its spelling.  Each
    pitch class keeps its notes sorted by onset, so a note looks only at those that can
    overlap it (n log n for a whole score)."""
    # times as whole ticks of their common denominator: the same order, compared as ints
    den = 1
    for onset, end, _midi, _name in notes:
        den = lcm(den, onset.denominator, end.denominator)
    onsets: dict[int, list[int]] = {}
    placed: dict[int, list[tuple[int, int, str]]] = {}
    longest: dict[int, int] = {}
    out = []
    for onset_q, end_q, midi, name in notes:
        onset = onset_q.numerator * (den // onset_q.denominator)
        end = end_q.numerator * (den // end_q.denominator)
        pc = midi % 12
        pc_name = split_name(name)[0]
        starts = onsets.setdefault(pc, [])
        here = placed.setdefault(pc, [])
        lo = bisect_right(starts, onset - longest.get(pc, 0))
        hi = bisect_left(starts, end)
        for o, e, other in here[lo:hi]:
            if o < end and onset < e and other != pc_name:
                pc_name = other
                break
        at = bisect_right(starts, onset)
        starts.insert(at, onset)
        here.insert(at, (onset, end, pc_name))
        longest[pc] = max(longest.get(pc, 0), end - onset)
        out.append(_with_octave(pc_name, midi))
    return tuple(out)
