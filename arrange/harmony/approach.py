"""Classification of lead notes and the approach-chord techniques.

A lead note is a *chord tone*, an *available tension* (from the chord scale:
see :mod:`arrange.keys`), an *avoid* note (in the chord scale but not
available) or a *non-chord* tone.  The approach techniques are the trade's:

* ``chromatic`` - the target's quality a half step above or below its root;
* ``diatonic`` - a diatonic seventh chord of the key, a step from the target;
* ``dominant`` - the dominant seventh a fifth above the target root;
* ``diminished`` - a diminished seventh a half step below the target root;
* ``tritone`` - the tritone substitute of that dominant, a half step above.

An approach chord must hold the lead as a chord tone or available tension
(common practice of jazz ensemble writing).
"""
from __future__ import annotations

from arrange.theory.chords import Chord
from arrange.theory.keys import Key, chord_scale_for, chord_scale_in_key, tensions_in_scale
from arrange.theory.spelling import nonchord_degree, root_spelling, spell_pc

__all__ = ["TECHNIQUES", "classify", "function_name", "find_approach", "find_substitute"]

TECHNIQUES = ("chromatic", "diatonic", "dominant", "diminished", "tritone")
_ALTERED = {1: "b9", 3: "#9", 6: "#11", 8: "b13"}


def function_name(pitch: int, chord: Chord) -> str:
    """The lead's function in the chord: "1", "b3", "5", "b9", "#11", "13" ..."""
    iv = (pitch - chord.root) % 12
    deg = chord.degree_of(iv)
    if deg is None:
        deg = nonchord_degree(iv, chord)
    natural = {1: 0, 2: 2, 3: 4, 4: 5, 5: 7, 6: 9, 7: 11, 9: 2, 11: 5, 13: 9}[deg]
    diff = (iv - natural + 6) % 12 - 6
    return ("#" * diff if diff > 0 else "b" * -diff) + str(deg)


def classify(pitch: int, chord: Chord, key: Key | None = None) -> str:
    """"chord tone", "tension", "avoid" or "non-chord" (chord scale in the key when given)."""
    iv = (pitch - chord.root) % 12
    if iv in chord.intervals or (chord.bass is not None and pitch % 12 == chord.bass):
        return "chord tone"
    _name, scale = chord_scale_in_key(chord, key) if key else chord_scale_for(chord)
    tensions = tensions_in_scale(chord.intervals, scale, chord.is_dominant)
    if iv in tensions:
        return "tension"
    return "avoid" if iv in scale else "non-chord"


def _holds(chord: Chord, pitch: int, key: Key, diatonic: bool) -> int | None:
    kind = classify(pitch, chord, key if diatonic else None)
    return {"chord tone": 0, "tension": 1}.get(kind)


def _letter(root_name: str, steps: int) -> str:
    letters = "CDEFGAB"
    return letters[(letters.index(root_name[0]) + steps) % 7]


def _candidates(technique: str, target: Chord, key: Key, pitch: int) -> list[tuple[Chord, str]]:
    r = target.root
    t = target.symbol
    if technique == "chromatic":
        return [(root_spelling(r + 1, target.quality, key, _letter(target.root_name, 1)),
                 f"a half step above {t}"),
                (root_spelling(r - 1, target.quality, key, _letter(target.root_name, -1)),
                 f"a half step below {t}")]
    if technique in ("dominant", "tritone"):
        root = r + 7 if technique == "dominant" else r + 1
        steps = 4 if technique == "dominant" else 1
        what = f"the dominant of {t}" if technique == "dominant" else \
            f"the tritone substitute for the dominant of {t}"
        iv = (pitch - root) % 12
        suffixes = ["7"] + ([f"7{_ALTERED[iv]}"] if iv in _ALTERED else []) + \
            (["7sus4"] if iv == 5 and technique == "dominant" else [])
        if iv in _ALTERED:
            suffixes.reverse()      # name the altered tension the lead sounds
        return [(root_spelling(root, s, key, _letter(target.root_name, steps)), what)
                for s in suffixes]
    if technique == "diminished":
        return [(root_spelling(r - 1, "dim7", key, _letter(target.root_name, -1)),
                 f"a diminished seventh a half step below {t}"),
                (root_spelling(r + 1, "dim7", key, _letter(target.root_name, 1)),
                 f"a diminished seventh a half step above {t}")]
    if technique == "diatonic":
        chords = key.diatonic_sevenths()
        order = {2: 0, 10: 1, 9: 1, 1: 0, 11: 1, 7: 2, 5: 3}
        ranked = sorted((c for c in chords if c.root != r),
                        key=lambda c: order.get((c.root - r) % 12, 4))
        return [(c, f"the diatonic {c.symbol} of {key} moving to {t}") for c in ranked]
    raise ValueError(technique)


def find_approach(pitch: int, target: Chord, current: Chord, key: Key,
                  techniques: tuple[str, ...], exclude: tuple[Chord, ...] = ()) -> tuple[Chord, str, str] | None:
    """The first technique (in the project's order) whose chord holds the lead
    (none of ``exclude``)."""
    for tech in techniques:
        found = []
        for chord, what in _candidates(tech, target, key, pitch):
            if chord.pitch_classes == current.pitch_classes and chord.root == current.root:
                continue
            if any(chord.pitch_classes == x.pitch_classes and chord.root == x.root for x in exclude):
                continue
            rank = _holds(chord, pitch, key, tech == "diatonic")
            if rank is not None:
                found.append((rank, chord, what))
        if found:
            _rank, chord, what = min(found, key=lambda f: f[0])
            return chord, tech, what
    return None


def find_substitute(pitch: int, chord: Chord, key: Key) -> Chord | None:
    """A diatonic chord sharing tones with ``chord`` (roots a third apart first)
    that holds the lead, a note of the key, as a chord tone or available tension."""
    if pitch % 12 not in key.scale:
        return None
    best = None
    for c in key.diatonic_sevenths():
        if c.root == chord.root:
            continue
        shared = len(set(c.pitch_classes) & set(chord.pitch_classes))
        if shared < 2:
            continue
        rank = _holds(c, pitch, key, True)
        if rank is None:
            continue
        third = (c.root - chord.root) % 12 in (3, 4, 8, 9)
        score = (rank, not third, -shared)
        if best is None or score < best[0]:
            best = (score, c)
    return best[1] if best else None


def lead_name(pitch: int, chord: Chord, key: Key) -> str:
    return spell_pc(pitch, key, chord)
