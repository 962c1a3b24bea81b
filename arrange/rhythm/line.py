"""Rhythm stage: a :class:`~arrange.chain.Chain` in, a :class:`Line` out.

The project's ``[rhythm]`` table picks a groove (straight, swing, shuffle,
latin), a cell of note values cycled over the line (or ``"motif"``: one cell
per statement, in retrograde under the RI statements on request), an
augmentation per statement (``augment``) or a growth (``grow``), rests between
statements, a pickup or a later first beat, and whether the last note is held.

Time is exact ``Fraction`` quarter notes from the downbeat of bar 1; pickup
notes have negative onsets (bar 0).  ``onset``/``duration`` are the written
values; ``perf_onset``/``perf_duration`` where playback puts the note (swing).
"""
from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction

from arrange.chain.core import Chain
from arrange.errors import LimitError, RhythmError
from arrange.rhythm.cells import Token, parse_cell, parse_length
from arrange.rhythm.groove import (
    ARTICULATIONS,
    DEFAULT_CELL,
    DEFAULT_COMPOUND_CELL,
    DEFAULT_SWING,
    GROOVES,
    SHUFFLE,
    groove_articulation,
    warp,
)
from arrange.rhythm.meter import METERS, Meter, metric_weight, parse_meter
from arrange.tables import Table

__all__ = ["Meter", "Note", "Line", "StatementSpan", "Segment", "PassageSpan", "RhythmOptions", "parse_meter",
           "read_options", "lay_rhythm", "metric_weight", "METERS", "GROOVES"]

MAX_QUARTERS = 40_000        # a longer line is refused before the writers start
_GRID = 24                   # every written time is a multiple of 1/24 quarter
HALF = Fraction(1, 2)


@dataclass(frozen=True, slots=True, eq=False)
class Note:
    """One lead note: pitch, written and performed time, statement, weight, articulation."""
    index: int               # 0-based position in the line
    pitch: int               # sounding MIDI number of the lead
    onset: Fraction          # quarter notes from the downbeat of bar 1 (pickup < 0)
    duration: Fraction
    statement: int           # 1-based
    weight: int              # metric weight: 0 downbeat, 1 beat, 2 off-beat, 3 finer
    perf_onset: Fraction
    perf_duration: Fraction
    articulation: str = ""   # "", "accent", "staccato", "tenuto"
    anticipated: bool = False  # moved an eighth ahead of a downbeat (latin), tied over
    tied: bool = False       # continues the note before it: one lead note split where a framework
                             # chord starts under it (harmony stage), written tied, played once


@dataclass(frozen=True, slots=True, eq=False)
class StatementSpan:
    """Where a statement lies in the line: onset, duration, augmentation, bars."""
    index: int               # 1-based statement
    onset: Fraction          # first value of the statement (a rest or a note)
    duration: Fraction       # the statement's values, augmented (rests between excluded)
    factor: Fraction         # augmentation factor
    first_bar: int           # 0 = the pickup
    last_bar: int


@dataclass(frozen=True, slots=True, eq=False)
class Segment:
    """A stretch of the line the score names: a chain statement, or a melody (phrase or
    passage) where there is no chain.  ``Note.statement`` is its ``index``."""
    index: int               # 1-based
    form: str                # "P", "RI" or "melody"
    transposition: int       # semitones from statement 1 (0 for a melody)
    start: int               # 0-based index of its first note in the line


@dataclass(frozen=True, slots=True, eq=False)
class PassageSpan:
    """One passage of a form (``[[passages]]``), as the writers and the report need it."""
    index: int               # 1-based
    name: str
    first_bar: int           # bar where it starts (its pickup, if any, lies in the bar before)
    last_bar: int
    first_note: int          # 0-based index of its first note in the line
    key: str                 # its key, as the score signs it
    material: str            # "melody (file tune.musicxml)", "chain", "designed chain"
    about: str = ""          # one line for the report (a designed chain: its motif and why)
    design: tuple[tuple[str, float, str], ...] = ()   # designed chains: (motif, score, why), best first


@dataclass(frozen=True, slots=True, eq=False)
class RhythmOptions:
    """The project's ``[rhythm]`` table: groove, swing, cell, augmentation and the rest."""
    groove: str = "straight"
    swing: Fraction = HALF               # long share; 1/2 straight, 2/3 shuffle
    cell: tuple[Token, ...] | None = None    # None: the groove's default (or "motif")
    motif: bool = False                  # one cell per statement
    motif_cell: tuple[Token, ...] | None = None
    retrograde: bool = False             # motif cell backwards under RI statements
    articulation: str = "groove"
    anticipate: bool = False
    notate: str = "eighths"              # "eighths" or "12/8" (shuffle written out)
    rest_between: Fraction = Fraction(0)
    hold_last: bool = True
    augment: tuple[Fraction, ...] | None = None
    grow: Fraction | None = None
    pickup: Fraction = Fraction(0)
    start: Fraction = Fraction(1)        # 1-based beat of bar 1 where the line starts
    where: str = "[rhythm]"


@dataclass(frozen=True, slots=True, eq=False)
class Line:
    """The rhythm stage's value: the lead notes in time, with meter, groove and spans."""
    chain: Chain | None      # None: a melody (or a form) brought its own notes
    meter: Meter             # the written meter (12/8 for a shuffle written out)
    notes: tuple[Note, ...]
    groove: str
    swing: float             # long share of a swung pair; 0.5 = straight
    pickup: Fraction         # length of the anacrusis in quarter notes (0 = none)
    total: Fraction          # written length from bar 1, whole bars (pickup excluded)
    spans: tuple[StatementSpan, ...] = ()
    notate: str = "eighths"  # "12/8": the swing is written out, no playback swing
    start: Fraction = Fraction(0)   # onset of the first value
    tempo_scale: Fraction = Fraction(1)  # line quarter notes per project-tempo beat (12/8: 3/2)
    segments: tuple[Segment, ...] = ()   # statements, or melodies where there is no chain
    passages: tuple[PassageSpan, ...] = ()   # a form's passages (none for one passage)

    @property
    def bars(self) -> int:
        """Whole bars from bar 1 (the pickup, bar 0, is not counted)."""
        return int(self.total / self.meter.bar)

    @property
    def measures(self) -> int:
        """Written measures, the pickup included."""
        return self.bars + (1 if self.pickup else 0)

    def bar_of(self, onset: Fraction) -> int:
        """Bar number of a time (0 = the pickup)."""
        return int(onset // self.meter.bar) + 1


def _factor(value: object, where: str) -> Fraction:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise RhythmError(f"{value!r} is not a number", where=where,
                          accepted="factors from 0.25 to 8, e.g. 1, 1.5, 2")
    if not 0.25 <= value <= 8:
        raise RhythmError(f"augmentation factor {value} is out of range", where=where,
                          accepted="factors from 0.25 to 8")
    return Fraction(str(value))


def read_options(table: Table) -> RhythmOptions:
    groove = table.string("groove", "straight", choices=GROOVES)
    swing = HALF
    if groove == "swing":
        swing = Fraction(str(table.number("swing", float(DEFAULT_SWING), low=0.5, high=0.75)))
    elif table.has("swing"):
        raise table.error("swing", f"'swing' does not apply to the groove {groove!r}",
                          "'swing' with groove = \"swing\" (a shuffle is always 2/3)")
    elif groove == "shuffle":
        swing = SHUFFLE
    raw_cell = table.raw("cell", None)
    motif = raw_cell == "motif"
    cell = None
    if raw_cell is not None and not motif:
        cell = parse_cell(raw_cell, table.at("cell"))
    motif_cell = None
    if table.has("motif_cell"):
        if not motif:
            raise table.error("motif_cell", "'motif_cell' needs cell = \"motif\"",
                              "cell = \"motif\" with motif_cell = one value per motif note")
        motif_cell = parse_cell(table.raw("motif_cell"), table.at("motif_cell"))
    retrograde = table.boolean("retrograde", False)
    articulation = table.string("articulation", "groove", choices=ARTICULATIONS)
    anticipate = table.boolean("anticipate", False)
    if anticipate and groove != "latin":
        raise table.error("anticipate", f"anticipation is a latin option, not {groove!r}",
                          "anticipate = true with groove = \"latin\"")
    notate = table.string("notate", "eighths", choices=("eighths", "12/8"))
    if notate == "12/8" and groove != "shuffle":
        raise table.error("notate", f"notate = \"12/8\" needs the shuffle, not {groove!r}",
                          "notate = \"12/8\" with groove = \"shuffle\"")
    rest_between = parse_length(table.raw("rest_between", 0), table.at("rest_between"))
    if (rest_between * 24).denominator != 1:     # whole 32nd notes or triplet sixteenths
        raise table.error("rest_between", f"{float(rest_between):g} quarter notes is off the note grid",
                          "a length in 32nd notes or triplet 16ths, e.g. 0.5, 1, 1.5 or \"8\"")
    hold_last = table.boolean("hold_last", True)
    augment = None
    if table.has("augment"):
        raw = table.raw("augment")
        if not isinstance(raw, list) or not raw:
            raise table.error("augment", f"{raw!r} is not a list",
                              "a list of factors, one per statement, e.g. [1, 1, 1.5, 2]")
        augment = tuple(_factor(v, f"{table.at('augment')}, item {i}")
                        for i, v in enumerate(raw, start=1))
    grow = None
    if table.has("grow"):
        if augment is not None:
            raise table.error("grow", "'grow' and 'augment' are both given", "one of them")
        grow = Fraction(str(table.number("grow", low=0.5, high=2)))
    pickup = parse_length(table.raw("pickup", 0), table.at("pickup"))
    start = Fraction(str(table.number("start", 1, low=1, high=16)))
    if pickup and start != 1:
        raise table.error("start", "'start' and 'pickup' are both given",
                          "a pickup, or a later first beat, not both")
    table.finish()
    return RhythmOptions(groove, swing, cell, motif, motif_cell, retrograde, articulation,
                         anticipate, notate, rest_between, hold_last, augment, grow, pickup,
                         start, table.where)


def _factors(options: RhythmOptions, statements: int) -> tuple[Fraction, ...]:
    if options.augment is not None:
        if len(options.augment) != statements:
            raise RhythmError(f"augment has {len(options.augment)} factors for {statements} "
                              "statements", where=f"{options.where}, key 'augment'",
                              accepted=f"a list of {statements} factors, one per statement")
        return options.augment
    if options.grow is not None:
        # each factor rounded to the nearest quarter so every value stays writable
        return tuple(max(Fraction(1, 4), Fraction(round(options.grow ** k * 4), 4))
                     for k in range(statements))
    return (Fraction(1),) * statements


def _start(options: RhythmOptions, meter: Meter) -> Fraction:
    where = options.where
    if options.pickup:
        p = options.pickup
        if not 0 < p < meter.bar or (p * _GRID).denominator != 1:
            raise RhythmError(f"a pickup of {p} quarter notes", where=f"{where}, key 'pickup'",
                              accepted=f"a length above 0 and below the {meter} bar "
                              f"({meter.bar} quarter notes), e.g. '4' or '8'")
        return -p
    beats = meter.beats
    whole = int(options.start)
    if whole > len(beats):
        raise RhythmError(f"start = {options.start} but {meter} has {len(beats)} beats",
                          where=f"{where}, key 'start'", accepted=f"1 to {len(beats)}")
    b0 = beats[whole - 1]
    offset = b0 + (options.start - whole) * meter.beat_length_at(b0)
    if (offset * _GRID).denominator != 1:
        raise RhythmError(f"start = {float(options.start)} falls between sixteenths",
                          where=f"{where}, key 'start'", accepted="a beat, e.g. 2 or 2.5")
    return offset


def _plan(chain: Chain, options: RhythmOptions, meter: Meter) -> list[list[Token]]:
    """The tokens each statement plays, before augmentation."""
    owned = [0] * len(chain.statements)
    for i in range(chain.length):
        owned[chain.statement_of(i) - 1] += 1
    n = len(chain.motif)
    out: list[list[Token]] = []
    if options.motif:
        default = options.cell or parse_cell(DEFAULT_CELL["straight"])
        cell = options.motif_cell
        if cell is None:
            notes = [t for t in default if not t.rest]
            cell = tuple(notes[i % len(notes)] for i in range(n))
        count = sum(1 for t in cell if not t.rest)
        if count != n:
            raise RhythmError(f"motif_cell has {count} notes for a motif of {n}",
                              where=f"{options.where}, key 'motif_cell'",
                              accepted=f"{n} note values (rests may be added)")
        for st, m in zip(chain.statements, owned, strict=True):
            toks = list(reversed(cell)) if options.retrograde and st.form == "RI" else list(cell)
            played, notes_seen = [], 0
            for t in toks:
                if not t.rest and notes_seen == m:
                    break
                if t.rest and notes_seen == m and m != n:
                    break
                played.append(t)
                notes_seen += 0 if t.rest else 1
            out.append(played)
        return out
    cell = options.cell or parse_cell(DEFAULT_COMPOUND_CELL if meter.compound
                                      else DEFAULT_CELL[options.groove])
    k = 0
    for m in owned:
        played = []
        got = 0
        while got < m:
            t = cell[k % len(cell)]
            k += 1
            played.append(t)
            got += 0 if t.rest else 1
        out.append(played)
    return out


def lay_rhythm(chain: Chain, meter: Meter, options: RhythmOptions) -> Line:
    """Lay the groove on the chain: written and performed times for every note."""
    where = options.where
    if options.groove in ("swing", "shuffle") and not meter.quarter_pulse:
        raise RhythmError(f"groove {options.groove!r} needs a quarter-note pulse, not {meter}",
                          where=f"{where}, key 'groove'",
                          accepted="swing or shuffle in 2/4, 3/4, 4/4, 5/4 or 2/2; straight "
                          "or latin in compound meters")
    written = meter
    if options.notate == "12/8":
        if meter.denominator != 4 or meter.numerator not in (2, 3, 4):
            raise RhythmError(f"notate = \"12/8\" cannot rewrite {meter}",
                              where=f"{where}, key 'notate'",
                              accepted="2/4, 3/4 or 4/4 (written 6/8, 9/8, 12/8)")
        written = Meter(3 * meter.numerator, 8)
    factors = _factors(options, len(chain.statements))
    plan = _plan(chain, options, meter)
    t = _start(options, meter)
    first = t
    notes: list[list[object]] = []     # [pitch, onset, duration, statement]
    spans: list[tuple[int, Fraction, Fraction, Fraction]] = []
    i = 0
    for s_i, (tokens, f) in enumerate(zip(plan, factors, strict=True)):
        if s_i and options.rest_between:
            t += options.rest_between
        s_on = t
        for tok in tokens:
            d = tok.duration * f
            if (d * _GRID).denominator != 1:
                raise RhythmError(f"{tok.text!r} times {float(f):g} is {d} of a quarter note, "
                                  f"which cannot be written (statement {s_i + 1})",
                                  where=f"{where}, key {'augment' if options.augment else 'grow'}",
                                  accepted="factors that keep values on the sixteenth or "
                                  "triplet grid, e.g. 0.5, 1, 1.5, 2, 3")
            if not tok.rest:
                notes.append([chain.pitches[i], t, d, s_i + 1])
                i += 1
            t += d
            if t - first > MAX_QUARTERS:
                raise LimitError(f"the line would last over {MAX_QUARTERS} quarter notes",
                                 where=where, accepted="fewer statements or smaller factors")
        spans.append((s_i + 1, s_on, t - s_on, f))
    bar = meter.bar
    end = t
    if options.hold_last:
        last = notes[-1]
        bar_end = -((-(last[1] + last[2])) // bar) * bar     # type: ignore[operator]
        last[2] = bar_end - last[1]                          # type: ignore[operator]
        end = max(end, bar_end)
    total = max(bar, -((-end) // bar) * bar)
    anticipated = _anticipate(notes, bar, first) if options.anticipate else set()
    return _finish(chain, meter, written, options, notes, anticipated, spans, total, first)


def _anticipate(notes: list[list[object]], bar: Fraction, first: Fraction) -> set[int]:
    """Move downbeat notes an eighth earlier, taking it from the note or rest before."""
    moved: set[int] = set()
    for k in range(1, len(notes)):
        on: Fraction = notes[k][1]   # type: ignore[assignment]
        if on % bar or on - HALF < first:
            continue
        prev_on: Fraction = notes[k - 1][1]  # type: ignore[assignment]
        prev_end = prev_on + notes[k - 1][2]  # type: ignore[operator]
        if prev_end == on and on - prev_on > HALF:
            notes[k - 1][2] = notes[k - 1][2] - HALF   # type: ignore[operator]
        elif not on - prev_end >= HALF:
            continue
        notes[k][1] = on - HALF
        notes[k][2] = notes[k][2] + HALF             # type: ignore[operator]
        moved.add(k)
    return moved


def _finish(chain: Chain | None, meter: Meter, written: Meter, options: RhythmOptions,
            notes: list[list[object]], anticipated: set[int],
            spans: list[tuple[int, Fraction, Fraction, Fraction]], total: Fraction,
            first: Fraction) -> Line:
    ratio = options.swing
    out_meter = written
    out_notes = []
    write_out = options.notate == "12/8"

    scale = Fraction(3, 2) if write_out else Fraction(1)   # a quarter beat -> a dotted quarter

    def w(x: Fraction) -> Fraction:
        return warp(x, ratio) * scale if write_out else x

    for k, (pitch, on, dur, st) in enumerate(notes):
        on_w, end_w = w(on), w(on + dur)                  # type: ignore[arg-type, operator]
        weight = metric_weight(on_w, out_meter)
        gap = None
        if k + 1 < len(notes):
            gap = w(notes[k + 1][1]) - end_w              # type: ignore[arg-type]
        pos = on_w % out_meter.bar
        nb = on_w - pos + next((b for b in out_meter.beats if b > pos), out_meter.bar)
        art = options.articulation
        if art == "groove":
            art = groove_articulation(options.groove, on_w, end_w - on_w, weight, nb, gap,
                                      k in anticipated)
        elif art == "none":
            art = ""
        if write_out or ratio == HALF:
            p_on, p_end = on_w, end_w
        else:
            p_on, p_end = warp(on, ratio), warp(on + dur, ratio)  # type: ignore[arg-type, operator]
        p_dur = p_end - p_on
        if art == "staccato":
            p_dur = p_dur / 2
        out_notes.append(Note(k, pitch, on_w, end_w - on_w, st, weight, p_on, p_dur,  # type: ignore[arg-type]
                              art, k in anticipated))
    bar = out_meter.bar
    out_spans = tuple(StatementSpan(s, w(on), w(on + d) - w(on), f, int(w(on) // bar) + 1,
                                    max(0, int(-((-w(on + d)) // bar))))
                      for s, on, d, f in spans)
    pickup = -w(first) if first < 0 else Fraction(0)
    segments = tuple(Segment(st.index, st.form, st.transposition, st.start)
                     for st in chain.statements) if chain is not None else ()
    return Line(chain, out_meter, tuple(out_notes), options.groove,
                float(ratio), pickup, w(total), out_spans, options.notate, w(first), scale, segments)
