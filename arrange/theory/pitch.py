"""Pitch names to MIDI note numbers and back (C4 = 60).

Accepted: scientific pitch names with a letter A-G, an accidental
(``b``, ``bb``, ``#``, ``##``, ``x``, ``♭``, ``♯``, ``-``, ``--``) and an octave
-1..9 (``Eb4``, ``E-4``, ``B♭3``, ``F#5``, ``Cx4``), or MIDI numbers 0..127.
As in music21, ``C-1`` is C-flat 1; octave -1 takes an accidental or a
natural sign (``C♮-1``, ``Cn-1``, ``C#-1``).
"""
from __future__ import annotations

import re
from collections.abc import Iterable, Sequence

from arrange.errors import PitchError

__all__ = ["parse_pitch", "parse_pitches", "pitch_name", "ACCEPTED"]

ACCEPTED = ("a pitch name such as C4, Eb4, E-4, B♭3, F#5, Cx4 (letter A-G, accidental "
            "b bb # ## x ♭ ♯ -, octave -1..9) or a MIDI number 0..127")

_LETTER = {"C": 0, "D": 2, "E": 4, "F": 5, "G": 7, "A": 9, "B": 11}
_ACC = {"": 0, "b": -1, "bb": -2, "-": -1, "--": -2, "♭": -1, "♭♭": -2,
        "#": 1, "##": 2, "x": 2, "♯": 1, "♯♯": 2, "𝄪": 2, "𝄫": -2, "♮": 0, "n": 0}
_NAME_RE = re.compile(r"^([A-Ga-g])(bb|b|--|-|##|#|x|♭♭|♭|♯♯|♯|𝄪|𝄫|♮|n)?(-1|[0-9])$")
_SHARP_NAMES = ("C", "C#", "D", "D#", "E", "F", "F#", "G", "G#", "A", "A#", "B")
_FLAT_NAMES = ("C", "Db", "D", "Eb", "E", "F", "Gb", "G", "Ab", "A", "Bb", "B")
# key-free default: the spellings most common in jazz lead sheets (common practice)
_PLAIN_NAMES = ("C", "C#", "D", "Eb", "E", "F", "F#", "G", "Ab", "A", "Bb", "B")


def parse_pitch(token: str | int, *, where: str = "pitch") -> int:
    """One token to a MIDI number; raises :class:`PitchError` naming the token."""
    if isinstance(token, bool):
        raise PitchError(f"{token!r} is not a pitch", where=where, accepted=ACCEPTED)
    if isinstance(token, int):
        if 0 <= token <= 127:
            return token
        raise PitchError(f"MIDI number {token} is outside 0..127", where=where, accepted=ACCEPTED)
    if not isinstance(token, str):
        raise PitchError(f"{token!r} is not a pitch", where=where, accepted=ACCEPTED)
    text = token.strip()
    if re.fullmatch(r"[+-]?[0-9]+", text):
        if len(text) > 4:
            raise PitchError(f"MIDI number {text[:20]!r} is outside 0..127", where=where, accepted=ACCEPTED)
        value = int(text)
        if 0 <= value <= 127:
            return value
        raise PitchError(f"MIDI number {text!r} is outside 0..127", where=where, accepted=ACCEPTED)
    m = _NAME_RE.match(text)
    if not m:
        raise PitchError(f"{token!r} is not a pitch name", where=where, accepted=ACCEPTED)
    letter, acc, octave = m.group(1).upper(), m.group(2) or "", int(m.group(3))
    value = (octave + 1) * 12 + _LETTER[letter] + _ACC[acc]
    if not 0 <= value <= 127:
        raise PitchError(f"{token!r} lies outside MIDI 0..127", where=where, accepted=ACCEPTED)
    return value


def parse_pitches(value: str | int | Sequence[str | int], *, where: str = "motif") -> tuple[int, ...]:
    """A space- or comma-separated string, or a list of names / numbers."""
    tokens: Iterable[str | int]
    if isinstance(value, str):
        tokens = [t for t in re.split(r"[\s,]+", value.strip()) if t]
    elif isinstance(value, int) and not isinstance(value, bool):
        tokens = [value]
    elif isinstance(value, (list, tuple)):
        tokens = value
    else:
        raise PitchError(f"{value!r} is not a list of pitches", where=where, accepted=ACCEPTED)
    out = []
    for i, tok in enumerate(tokens, start=1):
        out.append(parse_pitch(tok, where=f"{where}, token {i}"))
    return tuple(out)


def pitch_name(midi: int, *, flats: bool | None = None) -> str:
    """A key-free spelled name: ``Eb4``, ``F#4``; ``flats=True``/``False`` forces one side."""
    names = _PLAIN_NAMES if flats is None else (_FLAT_NAMES if flats else _SHARP_NAMES)
    octave = midi // 12 - 1
    name = names[midi % 12]
    if octave < 0 and len(name) == 1:
        name += "♮"   # "C-1" would read as C-flat 1, the music21 convention
    return f"{name}{octave}"
