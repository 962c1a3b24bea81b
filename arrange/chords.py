"""Chord symbols: parse and format (foundation vocabulary).

A :class:`Chord` holds its root pitch class, a canonical quality suffix and
its tones as intervals above the root.
"""
from __future__ import annotations

import re
from dataclasses import dataclass

from .errors import HarmonyError

__all__ = ["Chord", "parse_chord", "QUALITIES", "ROOT_NAMES"]

# quality suffix -> intervals above the root (common jazz chord-symbol practice)
QUALITIES: dict[str, tuple[int, ...]] = {
    "": (0, 4, 7),
    "m": (0, 3, 7),
    "dim": (0, 3, 6),
    "aug": (0, 4, 8),
    "6": (0, 4, 7, 9),
    "m6": (0, 3, 7, 9),
    "7": (0, 4, 7, 10),
    "maj7": (0, 4, 7, 11),
    "m7": (0, 3, 7, 10),
    "m7b5": (0, 3, 6, 10),
    "dim7": (0, 3, 6, 9),
    "sus4": (0, 5, 7),
    "7sus4": (0, 5, 7, 10),
}
# available tensions per quality, intervals above the root (common jazz practice)
_TENSIONS: dict[str, tuple[int, ...]] = {
    "": (2, 9), "6": (2,), "maj7": (2, 6, 9), "m": (2, 5), "m6": (2, 5), "m7": (2, 5),
    "7": (1, 2, 3, 6, 8, 9), "7sus4": (2, 9), "sus4": (2, 9), "m7b5": (5, 8), "dim": (2, 5, 8, 11),
    "dim7": (2, 5, 8, 11), "aug": (2, 6),
}
_ALIASES = {"M7": "maj7", "Δ": "maj7", "Δ7": "maj7", "-": "m", "-7": "m7", "min": "m",
            "min7": "m7", "ø": "m7b5", "ø7": "m7b5", "°": "dim", "°7": "dim7", "o7": "dim7"}
ROOT_NAMES = {"C": 0, "D": 2, "E": 4, "F": 5, "G": 7, "A": 9, "B": 11}
_ROOT_RE = re.compile(r"^([A-G])(bb|b|♭|#|♯)?")


@dataclass(frozen=True, slots=True)
class Chord:
    root: int                 # pitch class
    root_name: str            # as written, e.g. "Bb"
    quality: str              # canonical suffix
    intervals: tuple[int, ...]

    @property
    def symbol(self) -> str:
        return f"{self.root_name}{self.quality}"

    @property
    def pitch_classes(self) -> tuple[int, ...]:
        return tuple((self.root + i) % 12 for i in self.intervals)

    @property
    def is_dominant(self) -> bool:
        return 4 in self.intervals and 10 in self.intervals

    @property
    def tensions(self) -> tuple[int, ...]:
        """Available tensions as intervals above the root (common jazz practice:
        the chord scale's non-chord tones a whole step above a chord tone, plus
        the altered tensions on dominants).  The harmony stage refines this."""
        return _TENSIONS.get(self.quality, (2,))

    def __str__(self) -> str:
        return self.symbol


def parse_chord(text: str, *, where: str = "chord") -> Chord:
    s = text.strip()
    m = _ROOT_RE.match(s)
    if not m:
        raise HarmonyError(f"chord symbol {text!r} has no root", where=where,
                           accepted="a root A-G with b or #, then a quality such as "
                           + ", ".join(repr(q) for q in QUALITIES))
    letter, acc = m.group(1), m.group(2) or ""
    acc = {"♭": "b", "♯": "#"}.get(acc, acc)
    root = (ROOT_NAMES[letter] + {"": 0, "b": -1, "bb": -2, "#": 1}[acc]) % 12
    suffix = s[m.end():]
    suffix = _ALIASES.get(suffix, suffix)
    if suffix not in QUALITIES:
        raise HarmonyError(f"chord symbol {text!r} is not known", where=where,
                           accepted="a root then one of " + ", ".join(repr(q) for q in QUALITIES))
    return Chord(root, letter + acc, suffix, QUALITIES[suffix])
