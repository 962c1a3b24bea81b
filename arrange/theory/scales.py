"""Scales: the modes a key takes and the chord scales of jazz practice.

The chord-scale table and the avoid-note rule below are common jazz practice
(no single published source): a scale tone that is not a chord tone is an
available tension unless it lies a half step above a chord tone; on a
dominant chord the b9 and b13 stay available.  This module is a leaf: it works
on intervals and quality text, so :mod:`arrange.theory.chords` and
:mod:`arrange.theory.keys` can both build on it.
"""
from __future__ import annotations

__all__ = ["MODES", "CHORD_SCALES", "chord_scale_name", "tensions_in_scale"]

_MAJOR = (0, 2, 4, 5, 7, 9, 11)

MODES: dict[str, tuple[int, ...]] = {
    "major": _MAJOR,
    "minor": (0, 2, 3, 5, 7, 8, 10),
    "harmonic minor": (0, 2, 3, 5, 7, 8, 11),
    "melodic minor": (0, 2, 3, 5, 7, 9, 11),
    "ionian": _MAJOR,
    "dorian": (0, 2, 3, 5, 7, 9, 10),
    "phrygian": (0, 1, 3, 5, 7, 8, 10),
    "lydian": (0, 2, 4, 6, 7, 9, 11),
    "mixolydian": (0, 2, 4, 5, 7, 9, 10),
    "aeolian": (0, 2, 3, 5, 7, 8, 10),
    "locrian": (0, 1, 3, 5, 6, 8, 10),
}
# chord scales, intervals above the chord root (common jazz practice)
CHORD_SCALES: dict[str, tuple[int, ...]] = {
    "ionian": _MAJOR, "dorian": MODES["dorian"], "phrygian": MODES["phrygian"],
    "lydian": MODES["lydian"], "mixolydian": MODES["mixolydian"], "aeolian": MODES["aeolian"],
    "locrian": MODES["locrian"],
    "locrian #2": (0, 2, 3, 5, 6, 8, 10),
    "melodic minor": MODES["melodic minor"],
    "lydian dominant": (0, 2, 4, 6, 7, 9, 10),
    "mixolydian b13": (0, 2, 4, 5, 7, 8, 10),
    "phrygian dominant": (0, 1, 4, 5, 7, 8, 10),
    "altered": (0, 1, 3, 4, 6, 8, 10),
    "half-whole diminished": (0, 1, 3, 4, 6, 7, 9, 10),
    "whole-half diminished": (0, 2, 3, 5, 6, 8, 9, 11),
    "whole tone": (0, 2, 4, 6, 8, 10),
    "lydian augmented": (0, 2, 4, 6, 8, 9, 11),
}


def chord_scale_name(intervals: tuple[int, ...], quality: str) -> str:
    """The usual chord scale of a chord out of key context (common jazz practice)."""
    iv = set(intervals)
    minor3, major3 = 3 in iv and 4 not in iv, 4 in iv
    b7, maj7 = 10 in iv, 11 in iv
    if quality == "aug":
        name = "whole tone"
    elif quality.startswith("dim"):
        name = "whole-half diminished"
    elif minor3 and 6 in iv and b7:
        name = "locrian #2"
    elif minor3 and maj7:
        name = "melodic minor"
    elif minor3:
        name = "aeolian" if 8 in iv else "dorian"
    elif not major3:            # sus chords
        name = "ionian" if 2 in iv and 5 not in iv else "mixolydian"
    elif maj7 or not b7:
        name = "lydian augmented" if 8 in iv and 7 not in iv else \
            ("lydian" if 6 in iv else "ionian")
    else:                       # dominant
        alts = {a for a in ("b5", "#5", "b9", "#9", "#11", "b13") if a in quality}
        if "#9" in alts or ("b9" in alts and "#5" in alts):
            name = "altered"
        elif "b9" in alts and "b13" in alts:
            name = "phrygian dominant"
        elif "b9" in alts:
            name = "half-whole diminished"
        elif "#5" in alts:
            name = "whole tone"
        elif "b13" in alts:
            name = "mixolydian b13"
        elif alts & {"#11", "b5"}:
            name = "lydian dominant"
        else:
            name = "mixolydian"
    return name


def tensions_in_scale(intervals: tuple[int, ...], scale: tuple[int, ...], dominant: bool) -> tuple[int, ...]:
    """Available tensions of a chord in a chord scale, as intervals above the root.

    9 11 13 and their alterations are available unless a half step above a chord
    tone (the avoid notes), except b9 and b13 on a dominant; an unaltered dominant
    takes every tension but the 11; a major sixth chord takes the major seventh.  A chord without
    sixth or seventh also takes the scale's sixth and seventh (C -> C6, Cmaj7)."""
    chord = set(intervals)
    if dominant and not chord & {1, 3, 6, 8} and 7 in chord:
        # an unaltered dominant takes any tension but the 11 (common jazz practice)
        return tuple(sorted({1, 2, 3, 6, 8, 9} - chord))
    has_67 = bool(chord & {9, 10, 11})
    candidates = {1, 2, 3, 5, 6, 8, 9} | (set() if has_67 else {10, 11})
    if 9 in chord and 4 in chord and not chord & {10, 11}:
        candidates.add(11)      # a major sixth chord takes the major seventh (C6 -> Cmaj7)
    if chord == {0, 3, 6, 9}:
        candidates.add(11)      # dim7: a whole step above each chord tone
    out = []
    for t in sorted(scale):
        if t in chord or t not in candidates:
            continue
        if (t - 1) % 12 in chord and not (dominant and t in (1, 8)):
            continue
        out.append(t)
    return tuple(out)
