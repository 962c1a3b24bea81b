"""Keys, modes and chord scales.

A :class:`Key` is a tonic and a mode: major, minor (natural), harmonic minor,
melodic minor (the ascending form, as jazz uses it) and the church modes
ionian, dorian, phrygian, lydian, mixolydian, aeolian, locrian.  A key knows
its spelled scale, its key signature, its diatonic seventh chords and the
chord scale of a chord in it.

The chord-scale table and the avoid-note rule below are common jazz practice
(no single published source): a scale tone that is not a chord tone is an
available tension unless it lies a half step above a chord tone; on a
dominant chord the b9 and b13 stay available.
"""
from __future__ import annotations

import re
from dataclasses import dataclass
from functools import lru_cache

from arrange.checked import whole
from arrange.errors import HarmonyError
from arrange.theory.chords import Chord, chord_scale_for, parse_chord
from arrange.theory.scales import CHORD_SCALES, MODES, tensions_in_scale

__all__ = ["Key", "parse_key", "parse_key_change", "MODES", "CHORD_SCALES", "chord_scale_for",
           "chord_scale_in_key", "tensions_in_scale", "LETTERS", "fifths_of", "name_at", "signature_alters", "interval_steps",
           "enharmonic", "signature_key", "written_key", "MAX_WRITTEN", "MAX_NAMED"]

LETTERS = "CDEFGAB"
_PC = {"C": 0, "D": 2, "E": 4, "F": 5, "G": 7, "A": 9, "B": 11}
_ALIASES = {"natural minor": "minor"}
# degree of the parent major scale on which each mode starts (for the key signature)
_PARENT = {"major": 0, "ionian": 0, "dorian": 1, "phrygian": 2, "lydian": 3, "mixolydian": 4,
           "aeolian": 5, "minor": 5, "harmonic minor": 5, "melodic minor": 5, "locrian": 6}
_CHURCH = ("ionian", "dorian", "phrygian", "lydian", "mixolydian", "aeolian", "locrian")


# a key's scale, spelled names and signature are asked for at every note a writer
# spells: worked out once per key (pure functions of the key's three fields)
@lru_cache(maxsize=None)
def _scale(tonic: int, mode: str) -> tuple[int, ...]:
    return tuple((tonic + i) % 12 for i in MODES[mode])


@lru_cache(maxsize=None)
def _names(tonic: int, tonic_name: str, mode: str) -> tuple[str, ...]:
    start = LETTERS.index(tonic_name[0])
    out = []
    for k, pc in enumerate(_scale(tonic, mode)):
        letter = LETTERS[(start + k) % 7]
        diff = (pc - _PC[letter] + 6) % 12 - 6
        out.append(letter + ("#" * diff if diff > 0 else "b" * -diff))
    return tuple(out)


@lru_cache(maxsize=None)
def _fifths(tonic: int, tonic_name: str, mode: str) -> int:
    names = _names(tonic, tonic_name, "minor" if "minor" in mode else mode)
    parent = names[(7 - _PARENT[mode]) % 7] if _PARENT[mode] else names[0]
    base = {"F": -1, "C": 0, "G": 1, "D": 2, "A": 3, "E": 4, "B": 5}[parent[0]]
    return base + 7 * (parent.count("#") - parent.count("b"))


@dataclass(frozen=True, slots=True)
class Key:
    """A key: tonic pitch class, its spelled name and the mode."""
    tonic: int          # pitch class
    tonic_name: str     # "Bb", "F#"
    mode: str           # a key of MODES

    @property
    def scale(self) -> tuple[int, ...]:
        return _scale(self.tonic, self.mode)

    @property
    def names(self) -> tuple[str, ...]:
        """The spelled scale, one letter per degree: F major -> F G A Bb C D E."""
        return _names(self.tonic, self.tonic_name, self.mode)

    @property
    def fifths(self) -> int:
        """Key signature: sharps positive, flats negative (harmonic and melodic minor
        take the natural minor's signature, as printed music does)."""
        return _fifths(self.tonic, self.tonic_name, self.mode)

    @property
    def signature_mode(self) -> str:
        """The mode a key signature object takes (harmonic / melodic minor -> minor)."""
        return "minor" if "minor" in self.mode else self.mode

    def diatonic_sevenths(self) -> tuple[Chord, ...]:
        """The seventh chord on every degree, stacked in thirds from the scale."""
        sc, names = MODES[self.mode], self.names
        out = []
        for d in range(7):
            ivs = tuple((sc[(d + k) % 7] - sc[d]) % 12 for k in (2, 4, 6))
            out.append(parse_chord(names[d] + _SEVENTH_SUFFIX[ivs]))
        return tuple(out)

    def degree_chord(self, degree: int, suffix: str | None = None) -> Chord:
        """The diatonic seventh chord on ``degree`` (1..7), or its root with ``suffix``."""
        if suffix is None:
            return self.diatonic_sevenths()[degree - 1]
        return parse_chord(self.names[degree - 1] + suffix)

    def __str__(self) -> str:
        return f"{self.tonic_name} {self.mode}"


_SEVENTH_SUFFIX: dict[tuple[int, ...], str] = {(4, 7, 11): "maj7", (3, 7, 10): "m7", (4, 7, 10): "7", (3, 6, 10): "m7b5",
                   (3, 6, 9): "dim7", (3, 7, 11): "m(maj7)", (4, 8, 11): "maj7#5",
                   (4, 8, 10): "7#5", (4, 6, 10): "7b5", (3, 8, 10): "m7#5",
                   (4, 6, 11): "maj7b5", (3, 6, 11): "m(maj7)b5"}

_MODE_WORDS = sorted(list(MODES) + list(_ALIASES), key=len, reverse=True)
_KEY_RE = re.compile(r"\s*([A-Ga-g])(bb|b|##|#|♭|♯)?\s*(" + "|".join(_MODE_WORDS) + r")?\s*$",
                     re.IGNORECASE)
_FROM_RE = re.compile(r"^(.*?)\s+from\s+bar\s+(\S+)\s*$", re.IGNORECASE)


# The key-signature rule (circle of fifths, common notation practice): a signature never
# carries more than 7 accidentals; a transposed part whose key lands past 6 takes the
# enharmonic key with fewer (concert F# major: trumpet Ab major, alto Eb major); a concert
# key past 6 is written enharmonically too unless the project names it (C# major stays).
MAX_WRITTEN = 6
MAX_NAMED = 7
_FIFTHS_ORDER = "FCGDAEB"


def fifths_of(name: str) -> int:
    """A note name's place on the line of fifths (C 0, G 1, F -1, F# 6, Bb -2, C## 14)."""
    return _FIFTHS_ORDER.index(name[0]) - 1 + 7 * (name.count("#") - name.count("b"))


def signature_alters(fifths: int) -> dict[str, int]:
    """The alteration a key signature of ``fifths`` gives each letter (sharps F C G ...,
    flats B E A ...; past seven a letter takes a second one, as G# major's F##)."""
    n = abs(fifths)
    order = _FIFTHS_ORDER if fifths >= 0 else _FIFTHS_ORDER[::-1]
    sign = 1 if fifths >= 0 else -1
    return {x: sign * (n // 7 + (1 if i < n % 7 else 0)) for i, x in enumerate(order)}


def name_at(fifths: int) -> str:
    """The note name at a place on the line of fifths (the inverse of :func:`fifths_of`)."""
    acc = (fifths + 1) // 7
    return _FIFTHS_ORDER[(fifths + 1) % 7] + ("#" * acc if acc > 0 else "b" * -acc)


def interval_steps(semitones: int) -> int:
    """Letter steps of the usual interval of ``semitones`` (major, minor or perfect; the
    tritone an augmented fourth): 2 -> 1 (major second), 9 -> 5 (major sixth), 14 -> 8."""
    sign = -1 if semitones < 0 else 1
    octaves, rest = divmod(abs(semitones), 12)
    return sign * (7 * octaves + (0, 1, 1, 2, 2, 3, 3, 4, 5, 5, 6, 6)[rest])


def enharmonic(key: Key) -> Key:
    """The same key on the other spelling of its tonic, 12 fifths toward fewer
    accidentals (F# major -> Gb major, G# major -> Ab major, Cb major -> B major)."""
    step = -12 if key.fifths > 0 else 12
    return Key(key.tonic, name_at(fifths_of(key.tonic_name) + step), key.mode)


def signature_key(key: Key, limit: int = MAX_WRITTEN) -> Key:
    """``key``, or its enharmonic while its signature has more than ``limit`` accidentals."""
    while abs(key.fifths) > limit:
        key = enharmonic(key)
    return key


def written_key(concert: Key, semitones: int = 0, *, named: bool = True) -> Key:
    """The key signature a part reads, from the concert key and the part's transposition
    (``semitones`` written minus sounding: 2 for a B-flat trumpet, 9 for an alto saxophone).

    The one key-signature rule: the concert key moved by the usual interval of the
    transposition; past 6 accidentals the enharmonic key with fewer (never past 7).  A
    part that sounds as written (or by octaves) keeps a concert key of 7 the project names
    (``named``), and takes the enharmonic one past that."""
    if semitones % 12 == 0:
        return signature_key(concert, MAX_NAMED if named else MAX_WRITTEN)
    steps = interval_steps(semitones)
    letter = LETTERS[(LETTERS.index(concert.tonic_name[0]) + steps) % 7]
    pc = (concert.tonic + semitones) % 12
    diff = (pc - _PC[letter] + 6) % 12 - 6
    moved = Key(pc, letter + ("#" * diff if diff > 0 else "b" * -diff), concert.mode)
    return signature_key(moved, MAX_WRITTEN)


def _accepted() -> str:
    return ("a tonic and a mode, e.g. 'F major', 'D dorian', 'A harmonic minor'; modes: "
            + ", ".join(list(MODES) + list(_ALIASES)))


def parse_key(text: str, *, where: str = "key") -> Key:
    m = _KEY_RE.fullmatch(text) if isinstance(text, str) else None
    if not m or not m.group(3):
        mode = text.split(None, 1)[1] if isinstance(text, str) and " " in text.strip() else None
        what = f"key {text!r} is not known" + (f" (mode {mode.strip()!r} is not known)" if mode else "")
        raise HarmonyError(what, where=where, accepted=_accepted())
    acc = (m.group(2) or "").replace("♭", "b").replace("♯", "#")
    letter = m.group(1).upper()
    mode = " ".join(m.group(3).lower().split())
    mode = _ALIASES.get(mode, mode)
    tonic = (_PC[letter] + acc.count("#") - acc.count("b")) % 12
    return Key(tonic, letter + acc, mode)


def parse_key_change(text: object, *, where: str) -> tuple[int, Key]:
    """``"Ab major from bar 9"`` -> (9, Key); a key without ``from bar`` starts at bar 1."""
    if not isinstance(text, str):
        raise HarmonyError(f"{text!r} is not a key change", where=where,
                           accepted="a string such as 'Ab major from bar 9'")
    m = _FROM_RE.match(text.strip())
    if not m:
        return 1, parse_key(text, where=where)
    if whole(m.group(2)) is None or int(m.group(2)) < 1:
        raise HarmonyError(f"bar {m.group(2)[:20]!r} in {text[:60]!r} is not a bar number", where=where,
                           accepted="a bar number from 1, e.g. 'Ab major from bar 9'")
    return int(m.group(2)), parse_key(m.group(1), where=where)


def chord_scale_in_key(chord: Chord, key: Key) -> tuple[str, tuple[int, ...]]:
    """A chord whose tones all lie in the key takes the key's scale from its root
    (ii in F major: G dorian); any other chord takes its usual chord scale."""
    pcs = set(chord.pitch_classes)
    if chord.root in key.scale and pcs <= set(key.scale):
        k = key.scale.index(chord.root)
        base = MODES[key.mode]
        rot = tuple(sorted((x - base[k]) % 12 for x in base))
        if key.mode in ("major", "minor") or key.mode in _CHURCH:
            start = _CHURCH.index({"major": "ionian", "minor": "aeolian"}.get(key.mode, key.mode))
            name = _CHURCH[(start + k) % 7]
        else:
            name = f"mode {k + 1} of {key.mode}"
        return name, rot
    return chord_scale_for(chord)
