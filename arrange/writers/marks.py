"""Marks a score carries besides the notes: dynamics, analysis labels, part groups.

Kept apart from :mod:`.musicxml` so the note-writing loop stays small.  All
placements go through :func:`arrange.notation.pieces`, so they follow the
same bar arithmetic as the notes (pickups included).
"""
from __future__ import annotations

from fractions import Fraction
from typing import Any

from arrange.rhythm.notation import pieces
from arrange.theory.dynamics import DYNAMICS
from arrange.voicing.sections import Section
from arrange.voicing.voicer import Voiced

__all__ = ["DYNAMICS", "dynamic_of", "entrances", "page_credits", "style_word", "add_rehearsal", "rehearsal_letter", "add_dynamics", "add_analysis",
           "add_part_groups", "family", "concert_symbols"]



def dynamic_of(statement: int, dynamics: tuple[str, ...]) -> str:
    """The dynamic of a 1-based statement: one per statement, the last one holds."""
    return dynamics[min(statement, len(dynamics)) - 1]


def entrances(voiced: Voiced, dynamics: tuple[str, ...]) -> list[tuple[int, str]]:
    """(event index, dynamic) wherever a dynamic is printed: the first note, every
    note after a rest (an entrance), and every note where the dynamic changes."""
    out: list[tuple[int, str]] = []
    prev_end: Fraction | None = None
    current = None
    for i, ve in enumerate(voiced.events):
        n = ve.event.note
        dyn = dynamic_of(n.statement, dynamics)
        after_rest = prev_end is None or n.onset > prev_end
        if after_rest or dyn != current:
            out.append((i, dyn))
            current = dyn
        prev_end = n.onset + n.duration
    return out


def _at(voiced: Voiced, index: int) -> tuple[int, float | Fraction]:
    """(measure index, offset) where note ``index`` starts, as the note writer cuts it."""
    line = voiced.harmonized.line
    n = voiced.events[index].event.note
    first = pieces(n.onset, n.duration, line.meter, pickup=line.pickup)[0]
    off = first.offset
    return first.measure, (off if off.denominator % 3 == 0 else float(off))


def _text_style(obj: Any) -> Any:
    """music21's text style (a TextStyle at run time; typed loosely by music21)."""
    return obj.style


def page_credits(score: Any, title: str, concert: bool, part_name: str | None = None) -> None:
    """The title and 'Transposed score' (or 'Concert score'; in a part, the part's name)
    on the first page, as MusicXML credits (positions in tenths on an A4 page at
    music21's default scaling)."""
    from music21 import text

    heading = text.TextBox(title, 600, 1650)
    _text_style(heading).justify = "center"
    _text_style(heading).fontSize = 20
    heading.page = 1
    kind = text.TextBox(part_name or ("Concert score" if concert else "Transposed score"), 60, 1600)
    _text_style(kind).justify = "left"
    _text_style(kind).fontStyle = "italic"
    kind.page = 1
    score.insert(0, heading)
    score.insert(0, kind)


def style_word(style: str) -> Any:
    """The style word printed before the metronome mark, bold, above the staff."""
    from music21 import expressions

    te = expressions.TextExpression(style)
    te.placement = "above"
    _text_style(te).fontWeight = "bold"
    return te


def add_rehearsal(measures: list[Any], voiced: Voiced) -> dict[int, str]:
    """A rehearsal letter on the bar line of each bar where a statement starts (common
    practice puts letters on bar lines; a statement that starts mid-bar is named by the
    letter of its bar, and its exact note by the analysis label).  Returns bar -> letter."""
    from music21 import expressions

    line = voiced.harmonized.line
    letters: dict[int, str] = {}
    if line.passages:            # a form: one letter per passage, on its first bar line
        shift = 1 if line.pickup else 0
        for p in line.passages:
            m_i = p.first_bar - 1 + shift
            if 0 <= m_i < len(measures) and m_i not in letters:
                letters[m_i] = rehearsal_letter(len(letters) + 1)
                measures[m_i].insert(0, expressions.RehearsalMark(letters[m_i]))
        return letters
    starts = {st.start for st in line.segments}
    for i in sorted(starts):
        if i >= len(voiced.events):
            continue
        m_i, _ = _at(voiced, i)
        if m_i in letters:
            continue
        letters[m_i] = rehearsal_letter(len(letters) + 1)
        measures[m_i].insert(0, expressions.RehearsalMark(letters[m_i]))
    return letters


def rehearsal_letter(k: int) -> str:
    """A, B, ... Z, AA, BB ... (1-based; common practice skips nothing here)."""
    return chr(64 + (k - 1) % 26 + 1) * ((k - 1) // 26 + 1)


def add_dynamics(measures: list[Any], voiced: Voiced, dynamics: tuple[str, ...]) -> None:
    from music21 import dynamics as m21dyn

    for i, dyn in entrances(voiced, dynamics):
        m_i, off = _at(voiced, i)
        measures[m_i].insert(off, m21dyn.Dynamic(dyn))


def statement_label(st: Any) -> str:
    """'2. RI +9': statement number, form and transposition from statement 1 ('3. melody'
    for a melody)."""
    if st.form == "melody":
        return f"{st.index}. melody"
    return f"{st.index}. {st.form} {st.transposition:+d}"


def add_analysis(measures: list[Any], voiced: Voiced) -> None:
    """Statement labels above the lead; the approach technique under each approach chord
    (once per chord, not again under a held one)."""
    from music21 import expressions

    starts = {st.start: st for st in voiced.harmonized.line.segments}
    for i, ve in enumerate(voiced.events):
        m_i, off = _at(voiced, i)
        if i in starts:
            te = expressions.TextExpression(statement_label(starts[i]))
            te.placement = "above"
            _text_style(te).fontStyle = "italic"
            measures[m_i].insert(off, te)
        prev = voiced.events[i - 1].event if i else None
        if ve.event.role == "approach" and ve.event.technique and \
                not (prev is not None and prev.role == "approach" and prev.chord == ve.event.chord):
            te = expressions.TextExpression(ve.event.technique)
            te.placement = "below"
            _text_style(te).fontStyle = "italic"
            _text_style(te).fontSize = 8
            measures[m_i].insert(off, te)


def concert_symbols(measures: list[Any]) -> None:
    """Chord symbols above a transposing lead stay at concert pitch in the score
    (common practice: the score's symbols name what sounds).  music21 writes the part
    in written pitch by transposing everything on the staff, symbols included, so
    they are moved the other way first; an exact interval round trip keeps the spelling."""
    from music21 import harmony, instrument

    insts = list(measures[0].getElementsByClass(instrument.Instrument)) if measures else []
    ivl = insts[0].transposition if insts else None
    if ivl is None or ivl.semitones == 0:
        return
    for m in measures:
        for cs in m.getElementsByClass(harmony.ChordSymbol):
            cs.transpose(ivl, inPlace=True)


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


def add_part_groups(score: Any, section: Section) -> None:
    """A bracket with bar lines drawn through, per run of two or more like parts."""
    from music21 import layout

    parts = list(score.parts)
    runs: list[list[int]] = []
    for k, part in enumerate(section.parts):
        fam = family(part.instrument.sound)
        if runs and family(section.parts[runs[-1][-1]].instrument.sound) == fam:
            runs[-1].append(k)
        else:
            runs.append([k])
    for run in runs:
        if len(run) < 2:
            continue
        sg = layout.StaffGroup([parts[k] for k in run], symbol="bracket", barTogether=True)
        score.insert(0, sg)
