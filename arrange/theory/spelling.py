"""Spelling: a sounding pitch, its key and its chord in, a written name out.

The rules (common practice of jazz and commercial engraving):

1. a note of the key takes the key's spelling, so the key signature holds
   (in F major, Bb not A#, over any chord);
2. otherwise a chord tone is spelled from the chord root as a stacked third,
   fifth, seventh ... (the third of Ab7 is C in C major, the seventh of E7 is D
   in E major, the third of E7 is G# in F major);
3. otherwise a tension of the chord is spelled by its degree (b9 of C7 is Db,
   #11 F#); a #9 without direction that would put a sharp in a flat key is
   written as the minor tenth instead (Eb over C7 in F major);
4. otherwise a chromatic note follows its direction: rising notes sharp,
   falling notes flat, never a double accidental nor Cb/Fb/E#/B# unless the
   key has them; a note without direction (reached and left by leap) is named
   by its degree above the chord root (the major seventh of G7 is F#), or
   without a chord leans to the key signature's side.

Names are ours (``Eb4``, ``F#5``); :func:`m21_name` turns one into music21's
(``E-4``).  Plain Python: no music21 here.
"""
from __future__ import annotations

from arrange.theory.chords import ROOT_NAMES, Chord, interval_name, parse_chord, spell_name
from arrange.theory.keys import LETTERS, Key, signature_alters

__all__ = ["nonchord_degree", "spell_pc", "spell_pitch", "spell_chord", "with_octave", "m21_name", "root_spelling",
           "direction_of"]

# degree a tension takes, by interval above the root (b9 9 #9, 11 #11, b13 13, 6 7)
_TENSION_DEGREE = {1: 9, 2: 9, 3: 9, 5: 11, 6: 11, 8: 13, 9: 13, 10: 7, 11: 7}
_ODD = ("Cb", "Fb", "E#", "B#")


def _acc(name: str) -> int:
    return name.count("#") - name.count("b")


def _pc(name: str) -> int:
    return (ROOT_NAMES[name[0]] + _acc(name)) % 12


def spell_pc(pc: int, key: Key, chord: Chord | None = None, direction: int = 0) -> str:
    """A pitch-class name (``Bb``) by the rules above; ``direction`` > 0 rising, < 0 falling."""
    pc %= 12
    if chord is not None:
        iv = (pc - chord.root) % 12
        if chord.bass is not None and pc == chord.bass and chord.bass_name:
            return chord.bass_name
        deg = chord.degree_of(iv)
        if deg is not None:
            name = interval_name(chord.root_name, iv, deg)
            # by degree; a degree that would need a double accidental (the seventh of Cb7,
            # of a diminished seventh) follows the key and the line instead (A, not Bbb)
            if abs(_acc(name)) <= 1:
                return name
        elif iv in chord.tensions:
            tension = _tension_name(iv, chord, key, direction)
            if tension is not None:
                return tension
    if pc in key.scale:
        return key.names[key.scale.index(pc)]
    if chord is not None and direction == 0 and (pc - chord.root) % 12 not in chord.tensions:
        # a non-chord tone that is no chromatic step: by its degree above the root
        # (the major seventh of G7 is F#, not Gb)
        iv = (pc - chord.root) % 12
        name = interval_name(chord.root_name, iv, nonchord_degree(iv, chord))
        against = iv == 3 and _acc(name) * (-1 if key.fifths < 0 else 1) < 0   # #9 or b10
        if abs(_acc(name)) <= 1 and (name not in _ODD or name in key.names) and not against:
            return name
    return _chromatic(pc, key, direction)


def _tension_name(iv: int, chord: Chord, key: Key, direction: int) -> str | None:
    """A tension by its degree (b9 of C7 is Db, #11 F#); a #9 against the key's side or in
    a falling line reads as the minor tenth (Eb over C7 in F major), and so does a #9 that
    is a note of the key; None where the degree would need a double accidental."""
    deg = _TENSION_DEGREE[iv]
    if (iv == 6 and 7 not in chord.intervals) or (iv == 8 and not {6, 7} & set(chord.intervals)):
        deg = 5         # a fifth raised or lowered where the chord has none (a half-diminished
        #                 chord's b13 stays a thirteenth: Db over Fm7b5, not C#)
    name = interval_name(chord.root_name, iv, deg)
    against = _acc(name) * (-1 if key.fifths < 0 else 1) < 0
    in_key = (chord.root + iv) % 12 in key.scale and name not in key.names
    tenth = iv == 3 and ((against and direction == 0) or direction * _acc(name) < 0 or
                         (in_key and direction == 0))
    if abs(_acc(name)) <= 1 and not tenth:
        return name
    return None


def nonchord_degree(iv: int, chord: Chord) -> int:
    """The degree a non-chord tone takes above the root, as its function is named."""
    deg = {1: 9, 2: 9, 3: 9, 4: 3, 5: 11, 6: 11, 7: 5, 8: 13, 9: 13, 10: 7, 11: 7}[iv]
    if iv == 3 and 4 not in chord.intervals:
        deg = 3
    if iv == 9 and not {10, 11} & set(chord.intervals):
        deg = 6
    if (iv == 6 and 7 not in chord.intervals) or (iv == 8 and not {6, 7} & set(chord.intervals)):
        deg = 5
    if iv == 4 and 5 in chord.intervals:
        deg = 3
    return deg


def _chromatic(pc: int, key: Key, direction: int) -> str:
    below = key.names[key.scale.index((pc - 1) % 12)] if (pc - 1) % 12 in key.scale else None
    above = key.names[key.scale.index((pc + 1) % 12)] if (pc + 1) % 12 in key.scale else None
    options = []
    if below:
        options.append((below[0], "up"))
    if above:
        options.append((above[0], "down"))
    for letter in LETTERS:   # any letter within a whole step, for keys with gaps
        options.append((letter, "any"))
    lean = direction if direction else (-1 if key.fifths < 0 else 1)

    def rank(opt: tuple[str, str]) -> tuple[int, int, int, int]:
        name = spell_name(opt[0], pc)
        weird = name in _ODD and name not in key.names
        side = 0 if (lean > 0 and _acc(name) > 0) or (lean < 0 and _acc(name) < 0) else 1
        return (abs(_acc(name)) > 1, weird, side, opt[1] == "any")

    return spell_name(min(options, key=rank)[0], pc)


def with_octave(name: str, midi: int) -> str:
    """``Cb`` + MIDI 59 -> ``Cb4`` (the octave goes with the letter, as in music21)."""
    octave = (midi - (ROOT_NAMES[name[0]] + _acc(name))) // 12 - 1
    return f"{name}{octave}"


def spell_pitch(midi: int, key: Key, chord: Chord | None = None, direction: int = 0) -> str:
    return with_octave(spell_pc(midi % 12, key, chord, direction), midi)


def direction_of(previous: int | None, pitch: int, following: int | None) -> int:
    """+1 rising, -1 falling, 0 neither: a note between two others takes the way
    the line moves through it; otherwise a chromatic step (a half step) out of it gives
    the way it resolves.  A note left by a leap or a repeat has none (it is then named
    by its degree over the chord)."""
    if previous is not None and following is not None:
        if previous < pitch < following:
            return 1
        if previous > pitch > following:
            return -1
    if following is not None and abs(following - pitch) == 1:
        return 1 if following > pitch else -1
    return 0


def spell_chord(chord: Chord) -> tuple[str, ...]:
    """The chord's tones as stacked thirds from its root, in stacking order."""
    return tuple(interval_name(chord.root_name, iv, d)
                 for iv, d in zip(chord.intervals, chord.degrees, strict=True))


def root_spelling(pc: int, suffix: str, key: Key, letter_hint: str | None = None) -> Chord:
    """A chord on ``pc`` with ``suffix``, its root spelled so that none of its tones lies two
    half steps from the form the key signature gives its letter (Cb7, not B7, in Db major: B7
    would have D# against the signature's Db; written for an alto in Bb major it reads Ab7,
    not G#7 with B# and E#), then so that its own tones need no double accidental (Bb7, not
    A#7, in E major: A#7 would have C##; F#m7, not Gbm7, whose third is Bbb), no root Cb, Fb,
    E# or B# the key lacks, then most of its tones read as the key writes them, with few
    accidentals against the key's side (``letter_hint`` breaks ties: the letter the
    voice-leading suggests)."""
    signature = signature_alters(key.fifths)
    best = None
    for letter in LETTERS:
        name = spell_name(letter, pc)
        if abs(_acc(name)) > 1:
            continue
        chord = parse_chord(name + suffix)
        tones = spell_chord(chord)
        doubles = sum(1 for t, d in zip(tones, chord.degrees, strict=True)
                      if abs(_acc(t)) > 1 and not (chord.quality == "dim7" and d == 7))
        clash = sum(1 for t in tones if _pc(t) in key.scale and t not in key.names)
        side = -1 if key.fifths < 0 else 1
        against = sum(1 for t in tones if _acc(t) * side < 0 and t not in key.names)
        foreign = sum(1 for t in tones if t not in key.names)
        far = sum(1 for t in tones if abs(_acc(t) - signature[t[0]]) > 1)
        score = (far, doubles, name in _ODD and name not in key.names, clash, against, foreign,
                 letter != letter_hint)
        if best is None or score < best[0]:
            best = (score, chord)
    assert best is not None
    return best[1]


def m21_name(name: str) -> str:
    """Our spelled name to music21's: ``Eb4`` -> ``E-4``, ``F#5`` stays."""
    letter, rest = name[0], name[1:]
    acc = ""
    while rest and rest[0] in "b#":
        acc += "-" if rest[0] == "b" else "#"
        rest = rest[1:]
    return letter + acc + rest
