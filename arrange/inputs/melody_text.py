"""Input reader: a short lead line written in the project (``melody = "F4:4 G4:8 A4:8 ..."``).

Our own compact text, made for soli lines typed by hand:

* ``PITCH:VALUE`` is a note: a pitch as everywhere in a project (``F4``, ``Bb3``,
  ``C#5``) and a value in the cell vocabulary (``1 2 4 8 16 32``, dotted ``4.``,
  triplet ``8t``, tied ``2~8``);
* ``r:VALUE`` is a rest;
* ``|`` is a bar line, checked: it must fall where a bar ends.  Notes before the
  first ``|`` that fill less than a bar are a pickup;
* ``,`` is a breath mark: the phrase ends with the note before it (a rest of a beat or
  more ends one too);
* ``[CHORD]`` is a chord symbol (``[Gm7]``), sounding from the next note or rest on
  (a project ``framework`` overrides the symbols).

Example (4/4, a quarter-note pickup): ``"C5:4 | [F6] A4:4. G4:8 F4:4 D4:4 | [Gm7] C4:2 r:2 |"``.
"""
from __future__ import annotations

from fractions import Fraction

from arrange.errors import ArrangeError, ProjectError
from arrange.inputs.melody_file import Melody, MelodyNote
from arrange.rhythm.cells import parse_value
from arrange.theory.chords import parse_chord
from arrange.theory.pitch import parse_pitch

__all__ = ["read_melody_text", "TEXT_HELP", "MAX_TOKENS"]

TEXT_HELP = ("notes PITCH:VALUE (e.g. F4:4, Bb4:8., C5:2~8), rests r:VALUE, bar lines |, chord "
             "symbols [Gm7], a breath mark , (a phrase ends), separated by spaces, e.g. \"C5:4 | [F6] A4:4. G4:8 F4:2 |\"")
MAX_TOKENS = 4096


def read_melody_text(text: str, bar: Fraction, *, where: str) -> Melody:
    """The melody a compact text spells, in bars of ``bar`` quarter notes."""
    words = text.split()
    if not words:
        raise ProjectError("the melody is empty", where=where, accepted=TEXT_HELP)
    if len(words) > MAX_TOKENS:
        raise ProjectError(f"the melody has {len(words)} tokens", where=where,
                           accepted=f"at most {MAX_TOKENS} tokens (a longer tune belongs in a file)")
    t = Fraction(0)
    notes: list[MelodyNote] = []
    chords: list[tuple[Fraction, str]] = []
    breaks: list[Fraction] = []
    first_bar_line: Fraction | None = None
    for i, w in enumerate(words, start=1):
        at = f"{where}, token {i} {w!r}"
        try:
            if w == "|":
                if first_bar_line is None:
                    first_bar_line = t
                    if t > bar:
                        raise ProjectError(f"the first bar line comes after {t} quarter notes",
                                           where=at, accepted=f"bars of {bar} quarter notes")
                elif (t - first_bar_line) % bar:
                    raise ProjectError(f"a bar line {t - first_bar_line} quarter notes after the first "
                                       "falls inside a bar", where=at,
                                       accepted=f"bar lines every {bar} quarter notes")
                continue
            if w == ",":
                if not notes:
                    raise ProjectError("a breath mark before the first note", where=at,
                                       accepted="',' after a note: the phrase ends with that note")
                breaks.append(notes[-1].onset)
                continue
            if w.startswith("[") and w.endswith("]"):
                chords.append((t, parse_chord(w[1:-1], where=at).symbol))
                continue
            pitch_text, sep, value = w.partition(":")
            if not sep:
                raise ProjectError(f"{w!r} has no value", where=at, accepted=TEXT_HELP)
            d = parse_value(value, at)
            if pitch_text.lower() != "r":
                notes.append(MelodyNote(parse_pitch(pitch_text, where=at), t, d))
            t += d
        except ProjectError:
            raise
        except ArrangeError as err:
            raise ProjectError(err.what, where=at, accepted=TEXT_HELP) from None
    if not notes:
        raise ProjectError("the melody holds no notes", where=where, accepted=TEXT_HELP)
    pickup = first_bar_line if first_bar_line is not None and 0 < first_bar_line < bar else Fraction(0)
    shift = pickup
    notes = [MelodyNote(n.pitch, n.onset - shift, n.duration) for n in notes]
    end = t - shift
    total = max(bar, -(-end // bar) * bar)
    return Melody(tuple(notes), None, None, pickup, total,
                  tuple((on - shift, sym) for on, sym in chords), "project text",
                  tuple(sorted({b - shift for b in breaks})))
