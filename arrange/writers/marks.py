"""Marks a score carries besides the notes: dynamics, rehearsal letters, analysis labels,
tempo, style word, chord symbols, credits and part groups, as MusicXML 4.0 elements.

Kept apart from :mod:`.xml_score` so the note-writing stays small.  Every placement goes
through :meth:`.xml_score.Staff.cut` (:func:`arrange.rhythm.notation.pieces`), so marks
follow the same bar arithmetic as the notes (pickups included).
"""
from __future__ import annotations

import xml.etree.ElementTree as ET
from fractions import Fraction
from typing import Any

from arrange.theory.dynamics import DYNAMICS
from arrange.voicing.sections import Section
from arrange.voicing.voicer import Voiced

__all__ = ["DYNAMICS", "dynamic_of", "entrances", "hairpins", "wedge", "rehearsal_letter", "rehearsal_plan", "REHEARSAL_GAP", "statement_label",
           "family", "part_groups", "words", "dynamic", "rehearsal", "metronome", "credits"]

def dynamic_of(statement: int, dynamics: tuple[str, ...]) -> str:
    """The dynamic of a 1-based statement: one per statement, the last one holds."""
    return dynamics[min(statement, len(dynamics)) - 1]


_ENTRANCES: dict[tuple[int, tuple[str, ...], int | None], tuple[Voiced, list[tuple[int, str]]]] = {}


def entrances(voiced: Voiced, dynamics: tuple[str, ...], part: int | None = None) -> list[tuple[int, str]]:
    """(event index, dynamic) wherever a dynamic is printed: the first note, the first
    note after a rest of a bar or more (an entrance a player counts in), and every note
    where the level changes (common practice: a dynamic holds until a new one; a short
    rest inside a phrase does not restate it).  ``part``: the notes that staff plays (a
    form's staff rests while another section plays).  Worked out once per score and part
    (the staff, its hairpins and the MIDI ask for it)."""
    key = (id(voiced), dynamics, part)
    hit = _ENTRANCES.get(key)
    if hit is not None and hit[0] is voiced:
        return list(hit[1])
    out = _entrances(voiced, dynamics, part)
    if len(_ENTRANCES) > 64:
        _ENTRANCES.clear()
    _ENTRANCES[key] = (voiced, out)
    return list(out)


def _entrances(voiced: Voiced, dynamics: tuple[str, ...], part: int | None) -> list[tuple[int, str]]:
    bar = voiced.harmonized.line.meter.bar
    out: list[tuple[int, str]] = []
    prev_end: Fraction | None = None
    current = None
    for i, ve in enumerate(voiced.events):
        if part is not None and ve.pitches[part] is None:
            continue
        n = ve.event.note
        dyn = dynamic_of(n.statement, dynamics)
        entrance = prev_end is None or n.onset - prev_end >= bar
        if entrance or dyn != current:
            out.append((i, dyn))
            current = dyn
        prev_end = n.onset + n.duration
    return out


def hairpins(voiced: Voiced, dynamics: tuple[str, ...], part: int | None = None) -> list[tuple[int, int, str]]:
    """(first event, event of the new mark, "crescendo" | "diminuendo") of every hairpin.

    The rule (common practice of ensemble parts): where the level changes inside a phrase
    (the new mark follows the last note by less than a bar), the change is not a jump but a
    hairpin leading into the new mark, over the last bar before it: it starts at the first
    note that begins no more than a bar before the new mark and after the mark in force,
    and stops where the new mark stands.  A new level after a rest of a bar or more is a
    new entrance: its mark alone (terraced), no hairpin."""
    bar = voiced.harmonized.line.meter.bar
    events = voiced.events
    marks = entrances(voiced, dynamics, part)
    out = []
    for (prev, old), (i, new) in zip(marks, marks[1:], strict=False):
        if new == old or i == 0:
            continue
        if part is not None and events[i - 1].pitches[part] is None:
            continue                      # the staff rested before it: an entrance, the mark alone
        before = events[i - 1].event.note
        onset = events[i].event.note.onset
        if onset - (before.onset + before.duration) >= bar:
            continue                      # an entrance after a bar's rest: the mark alone
        start = next((j for j in range(prev + 1, i) if events[j].event.note.onset >= onset - bar
                      and (part is None or events[j].pitches[part] is not None)), i - 1)
        if start <= prev:
            continue                      # no note between the two marks to carry a hairpin
        kind = "crescendo" if DYNAMICS.index(new) > DYNAMICS.index(old) else "diminuendo"
        out.append((start, i, kind))
    return out


REHEARSAL_GAP = 4      # bars at least between two rehearsal letters (common practice)


def rehearsal_plan(voiced: Voiced) -> dict[int, str]:
    """Bar (1-based) -> letter.  A letter stands on the bar line of a bar where a
    statement (a phrase of the chain) starts, never on the pickup nor on bar 1 under
    the tempo mark, and at least ``REHEARSAL_GAP`` bars after the start or the last
    letter (common practice: letters mark the places a rehearsal restarts from, not
    every phrase).  A form's passages are its sections: each takes a letter.  Statement
    numbers belong to ``--analysis``."""
    line = voiced.harmonized.line
    if line.passages:      # a form: a letter at each passage, on its first bar line (a section)
        return {p.first_bar: rehearsal_letter(k) for k, p in enumerate(line.passages, start=1)}
    starts = sorted({line.bar_of(voiced.events[st.start].event.note.onset)
                     for st in line.segments if st.start < len(voiced.events)})
    letters: dict[int, str] = {}
    last = 1
    for bar in starts:
        if bar > 1 and bar - last >= REHEARSAL_GAP:
            letters[bar] = rehearsal_letter(len(letters) + 1)
            last = bar
    return letters


def rehearsal_letter(k: int) -> str:
    """A, B, ... Z, AA, BB ... (1-based; common practice skips nothing here)."""
    return chr(64 + (k - 1) % 26 + 1) * ((k - 1) // 26 + 1)


def statement_label(st: Any) -> str:
    """'2. RI +9': statement number, form and transposition from statement 1 ('3. melody'
    for a melody)."""
    if st.form == "melody":
        return f"{st.index}. melody"
    return f"{st.index}. {st.form} {st.transposition:+d}"


def _direction(placement: str | None = None) -> tuple[ET.Element, ET.Element]:
    d = ET.Element("direction")
    if placement:
        d.set("placement", placement)
    return d, ET.SubElement(d, "direction-type")


def words(text: str, placement: str = "above", **style: str) -> ET.Element:
    """Words above or below the staff (style word, analysis label)."""
    d, dt = _direction(placement)
    w = ET.SubElement(dt, "words", style)
    w.text = text
    return d


def dynamic(mark: str) -> ET.Element:
    d, dt = _direction("below")
    ET.SubElement(ET.SubElement(dt, "dynamics"), mark)
    return d


def wedge(kind: str) -> ET.Element:
    """A hairpin's start (``crescendo``, ``diminuendo``) or its ``stop``, below the staff."""
    d, dt = _direction("below")
    ET.SubElement(dt, "wedge", {"type": kind, "number": "1"})
    return d


def rehearsal(letter: str) -> ET.Element:
    d, dt = _direction("above")
    ET.SubElement(dt, "rehearsal").text = letter
    return d


def metronome(tempo: float, dotted: bool, swing: tuple[int, int] | None) -> ET.Element:
    """The metronome mark (a dotted quarter for a shuffle written in 12/8) and its
    playback: ``<sound tempo>`` in quarter notes a minute, and MusicXML 4.0 ``<swing>``."""
    d, dt = _direction("above")
    mm = ET.SubElement(dt, "metronome", parentheses="no")
    ET.SubElement(mm, "beat-unit").text = "quarter"
    if dotted:
        ET.SubElement(mm, "beat-unit-dot")
    ET.SubElement(mm, "per-minute").text = f"{tempo:g}"
    snd = ET.SubElement(d, "sound", tempo=f"{tempo * (1.5 if dotted else 1):g}")
    if swing is not None:
        sw = ET.SubElement(snd, "swing")
        ET.SubElement(sw, "first").text = str(swing[0])
        ET.SubElement(sw, "second").text = str(swing[1])
        ET.SubElement(sw, "swing-type").text = "eighth"
    return d


def credits(title: str, kind: str) -> list[ET.Element]:
    """The title and the kind of score (or, in a part, the part's name) on the first
    page, as MusicXML credits (positions in tenths on an A4 page)."""
    out = []
    for text, x, y, extra in ((title, "600", "1650", {"font-size": "20", "justify": "center"}),
                              (kind, "60", "1600", {"font-style": "italic", "justify": "left"})):
        c = ET.Element("credit", page="1")
        cw = ET.SubElement(c, "credit-words", {"default-x": x, "default-y": y, **extra,
                                                "halign": extra["justify"], "valign": "top"})
        cw.text = text
        out.append(c)
    return out


def family(sound: str) -> str:
    """The bracket a part sits in, from its MusicXML sound id (common practice of score
    layout: one bracket per section of like instruments): all strings together, a brass
    kind together (trombone with bass trombone), a wind kind together (the saxophones)."""
    bits = sound.split(".")
    if bits[0] == "strings":
        return "strings"
    if bits[0] == "wind":
        return ".".join(bits[:3])
    return ".".join(bits[:2])


def part_groups(sections: list[tuple[Section, int]], bracket_all: bool) -> list[tuple[int, int]]:
    """(first, last) score-part indices of each bracket: within a section, a run of two
    or more like parts; with ``bracket_all`` every section whole (layers below the lead)."""
    out = []
    for section, first in sections:
        parts = section.parts
        if bracket_all:
            out.append((first, first + len(parts) - 1))
            continue
        runs: list[list[int]] = []
        for k, part in enumerate(parts):
            fam = family(part.instrument.sound)
            if runs and family(parts[runs[-1][-1]].instrument.sound) == fam:
                runs[-1].append(k)
            else:
                runs.append([k])
        out.extend((first + r[0], first + r[-1]) for r in runs if len(r) >= 2)
    return out
