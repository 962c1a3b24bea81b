"""Moving a whole project to another key: motif, lead range, key, key changes, framework.

A project is moved by a number of semitones (``transpose = -3``, ``--transpose -3``) or to a
key (``transpose = "Ab major"``, ``--vary key=Ab major``).  A key target moves the line by the
distance between the two tonics, in the octave nearest to no move whose line stays inside the
lead instrument's practical range (so Bb major to Ab major goes down a whole step, not up a
minor seventh).  A number of semitones is taken exactly; a line it would carry out of the
lead's practical range is refused, naming the moves that fit.

The lead range moves with the line, so the chain's octave placement (which depends only on
the intervals between the line and the range) gives the same line, every note moved by the
same interval; layers and the rhythm section follow the moved framework by themselves.
"""
from __future__ import annotations

from dataclasses import dataclass, replace

from arrange.chain.core import build_chain
from arrange.errors import ArrangeError, ProjectError
from arrange.harmony.harmonizer import _TOKEN, HarmonyOptions, transpose_chord, transpose_key
from arrange.theory.chords import parse_chord
from arrange.theory.keys import Key, parse_key
from arrange.theory.pitch import pitch_name

__all__ = ["Target", "parse_target", "Moved", "move", "MAX_SEMITONES"]

MAX_SEMITONES = 24
Target = int | Key


def parse_target(value: object, *, where: str) -> Target:
    """A signed number of semitones (``-3``, ``"+5"``) or a key (``"Ab major"``)."""
    if isinstance(value, bool):
        value = str(value)
    if isinstance(value, str) and value.strip().lstrip("+-").isdigit():
        value = int(value.strip())
    if isinstance(value, int):
        if not -MAX_SEMITONES <= value <= MAX_SEMITONES:
            raise ProjectError(f"{value} semitones is out of range", where=where,
                               accepted=f"a whole number of semitones from -{MAX_SEMITONES} to "
                                        f"{MAX_SEMITONES}, or a key such as \"Ab major\"")
        return value
    if not isinstance(value, str):
        raise ProjectError(f"{value!r} is neither a number of semitones nor a key", where=where,
                           accepted="a whole number of semitones (-3, +5) or a key such as \"Ab major\"")
    try:
        return parse_key(value, where=where)
    except ArrangeError as err:
        raise ProjectError(err.what, where=where,
                           accepted="a whole number of semitones (-3, +5) or " + (err.accepted or "a key")) from None


@dataclass(frozen=True, slots=True, eq=False)
class Moved:
    """What a project becomes: its key, motif, lead range and harmony, moved by ``shift``."""
    shift: int
    key: Key
    motif: tuple[int, ...]
    lead_range: tuple[int, int]
    harmony: HarmonyOptions


def _fits(line: tuple[int, ...], d: int, practical: tuple[int, int]) -> bool:
    return practical[0] <= min(line) + d and max(line) + d <= practical[1]


def move(key: Key, chain: tuple[tuple[int, ...], int, int | tuple[int, ...], tuple[int, int] | None],
         harmony: HarmonyOptions, lead: tuple[str, tuple[int, int]], target: Target, *,
         where: str) -> Moved:
    """Move a project: ``chain`` is (motif, statements, overlap, lead range or None), ``lead``
    the lead part's name and practical range; ``target`` semitones or a key."""
    motif, statements, overlap, lead_range = chain
    name, practical = lead
    rng = lead_range or practical
    line = build_chain(motif, statements, overlap, rng).pitches
    if isinstance(target, Key):
        dist = (target.tonic - key.tonic) % 12
        octaves = sorted((dist + 12 * k for k in (-2, -1, 0, 1)), key=lambda d: (abs(d), d))
        fitting = [d for d in octaves if _fits(line, d, practical)]
        shift = fitting[0] if fitting else octaves[0]
        new_key = target
    else:
        shift = target
        if not _fits(line, shift, practical):
            others = [shift + 12 * k for k in (-2, -1, 1, 2)
                      if abs(shift + 12 * k) <= MAX_SEMITONES and _fits(line, shift + 12 * k, practical)]
            lo, hi = min(line) + shift, max(line) + shift
            raise ProjectError(
                f"{shift:+d} semitones moves the lead line to {pitch_name(lo)}..{pitch_name(hi)}, "
                f"outside the practical range {pitch_name(practical[0])}..{pitch_name(practical[1])} "
                f"of {name}", where=where,
                accepted=("a move that keeps the line in range: " + ", ".join(f"{d:+d}" for d in others))
                if others else "a smaller move, or a key")
        new_key = transpose_key(key, shift)
    return Moved(shift, new_key, tuple(p + shift for p in motif), (rng[0] + shift, rng[1] + shift),
                 _move_harmony(harmony, shift, new_key))


def _move_harmony(options: HarmonyOptions, shift: int, key: Key) -> HarmonyOptions:
    """The framework's chord symbols and the key changes, moved and spelled for the new key."""
    bars = []
    for bar in options.framework:
        moved = []
        for tok in bar:
            m = _TOKEN.match(tok)
            assert m is not None                       # read_options checked every token
            chord = transpose_chord(parse_chord(m.group(1)), shift, key)
            moved.append(chord.symbol + (f":{m.group(2)}" if m.group(2) else ""))
        bars.append(tuple(moved))
    keys = tuple((bar, transpose_key(k, shift)) for bar, k in options.keys)
    return replace(options, framework=tuple(bars), keys=keys)
