"""One staff of a MusicXML 4.0 score, built from our own values (no music21).

A :class:`Staff` collects the notation pieces of one part (:func:`arrange.rhythm.notation.pieces`:
ties over bar lines and beats, readable values) and the marks standing over them, then
:meth:`Staff.measures` writes the ``<measure>`` elements with the standard library's
ElementTree: rests in every gap (the same notation rules), accidentals where the written
key signature and the measure so far do not give them, beams by the meter's beat groups,
triplet brackets, key changes by bar, the final bar line.

Transposing parts are put in written pitch here: a spelled name moves by the instrument's
interval (letters and semitones, so Eb concert is C for an alto saxophone), and the key
signature by that interval's fifths.
"""
from __future__ import annotations

import xml.etree.ElementTree as ET
from dataclasses import dataclass, field
from fractions import Fraction
from functools import lru_cache
from math import lcm

from arrange.rhythm.meter import Meter
from arrange.rhythm.notation import Piece, is_triplet, pieces
from arrange.writers.xml_notation import TYPES, accidentals, beams, signature_alters, split_name, tuplets

__all__ = ["ScoreInfo", "Staff", "Interval", "interval_of", "transpose_name", "split_name",
           "signature_alters", "part_abbreviation", "sub", "concert_clef", "_INTERVALS"]

Q = Fraction
_INTERVALS = {"unison": "P1", "major second": "M2", "minor third": "m3", "perfect fourth": "P4",
              "perfect fifth": "P5", "major sixth": "M6", "octave": "P8", "major ninth": "M9",
              "major thirteenth": "M13", "two octaves": "P15", "minor second": "m2",
              "minor seventh": "m7", "major seventh": "M7", "perfect eleventh": "P11",
              "minor tenth": "m10", "perfect twelfth": "P12"}
_STEPS = "CDEFGAB"
_NATURAL = {"C": 0, "D": 2, "E": 4, "F": 5, "G": 7, "A": 9, "B": 11}
_ACCIDENTALS = {-2: "flat-flat", -1: "flat", 0: "natural", 1: "sharp", 2: "double-sharp"}
_CLEFS = {"treble": ("G", 2, 0), "bass": ("F", 4, 0), "alto": ("C", 3, 0), "tenor": ("C", 4, 0),
          "treble8vb": ("G", 2, -1)}
_ARTICULATIONS = {"accent": "accent", "staccato": "staccato", "tenuto": "tenuto"}


@dataclass(frozen=True, slots=True, eq=False)
class ScoreInfo:
    """What the score writer prints beside the notes: title, tempo, style, marks."""
    title: str
    tempo: float
    style: str          # the style word printed with the metronome mark
    dynamics: tuple[str, ...] = ("mf",)   # one per statement; the last holds for the rest
    analysis: bool = False                # statement labels and approach techniques
    concert: bool = False                 # concert score instead of a transposed one
    only_part: int | None = None          # build the single part k (for --parts)
    version: str = ""
    # the key changes written as key signatures, (first bar, Key); None: every key change
    # of the harmony (a modulating transition may keep its signature: build.signature_plan)
    signatures: tuple | None = None


@dataclass(frozen=True, slots=True, eq=False)
class Interval:
    """Written minus sounding: letter steps and semitones (0, 0 at concert pitch)."""
    steps: int = 0
    semitones: int = 0

    @property
    def fifths(self) -> int:
        """How far the interval moves a key signature round the circle of fifths."""
        if not self.steps and not self.semitones:
            return 0
        return min((f for f in range(-14, 15) if (4 * f - self.steps) % 7 == 0
                    and (7 * f - self.semitones) % 12 == 0), key=abs)


def interval_of(instrument, concert: bool = False) -> Interval:  # noqa: ANN001
    """The instrument's written-minus-sounding interval (``instruments.toml``)."""
    if concert or not instrument.transposition:
        return Interval()
    number = int(_INTERVALS[instrument.interval][1:])
    sign = 1 if instrument.transposition > 0 else -1
    return Interval(sign * (number - 1), instrument.transposition)


def transpose_name(name: str, ivl: Interval) -> str:
    """A spelled name (with or without octave) moved by ``ivl``, keeping the letter
    distance: Bb3 up a major second is C4, F# up a major sixth is D#."""
    if not ivl.steps and not ivl.semitones:
        return name
    has_octave = name[-1].isdigit()
    step, alter, octave = split_name(name)
    midi = 12 * (octave + 1) + _NATURAL[step] + alter + ivl.semitones
    idx = _STEPS.index(step) + ivl.steps
    new_step, new_octave = _STEPS[idx % 7], octave + idx // 7
    diff = midi - (12 * (new_octave + 1) + _NATURAL[new_step])
    acc = "#" * diff if diff > 0 else "b" * -diff
    return new_step + acc + (str(new_octave) if has_octave else "")


def part_abbreviation(part) -> str:  # noqa: ANN001
    """'Tpt. 2' for 'Trumpet 2': a numbered part name keeps its number in the
    abbreviation, as score margins show it (common practice)."""
    words = part.name.split()
    abbr = part.abbreviation
    if len(words) > 1 and words[-1].isdigit() and not abbr.rstrip().endswith(words[-1]):
        return f"{abbr} {words[-1]}"
    return abbr


def sub(parent: ET.Element, tag: str, value: object = None, /, **attrib: str) -> ET.Element:
    """A child element with text ``value`` (if any) and attributes."""
    el = ET.SubElement(parent, tag, attrib)
    if value is not None:
        el.text = str(value)
    return el


def _ledger_steps(pitches: list[int], low: int, high: int) -> int:
    """How far (in semitones) the notes stand outside a staff running ``low``..``high``
    with one ledger line of grace either side: a proxy for the ledger lines a player reads."""
    return sum(max(0, low - 3 - p) + max(0, p - high - 3) for p in pitches)


def concert_clef(clef: str, pitches: list[int]) -> str:
    """The clef of a transposing part in a concert score: written in treble for its
    players, at concert pitch a low instrument (tenor and baritone saxophone, bass
    clarinet) would sit under the treble staff; it takes the bass clef when its notes
    need fewer ledger lines there (common practice of concert scores: each staff in
    the clef its sounding range reads best in; staves E4-F5 treble, G2-A3 bass)."""
    if clef != "treble" or not pitches:
        return clef
    treble = _ledger_steps(pitches, 64, 77)
    bass = _ledger_steps(pitches, 43, 57)
    return "bass" if bass < treble else clef


@lru_cache(maxsize=4096)
def _cut(onset: Fraction, duration: Fraction, meter: Meter, pickup: Fraction) -> tuple[Piece, ...]:
    """The notation pieces of one note, shared by every part that plays it (each part of a
    section and each layer part cut the same onsets)."""
    return tuple(pieces(onset, duration, meter, pickup=pickup))


@lru_cache(maxsize=4096)
def _rest_cut(onset: Fraction, duration: Fraction, meter: Meter, pickup: Fraction) -> tuple[Piece, ...]:
    """The notation pieces of one rest, shared by every staff that rests there (the parts
    of a section rest together)."""
    return tuple(pieces(onset, duration, meter, pickup=pickup, rest=True))


@dataclass(slots=True, eq=False)
class _Note:
    """A written note or rest of a staff, before it becomes XML."""
    offset: Fraction
    duration: Fraction
    name: str | None            # written spelled name with octave; None for a rest
    tie_start: bool = False
    tie_stop: bool = False
    articulation: str = ""
    whole_bar: bool = False


@dataclass(slots=True, eq=False)
class Staff:
    """One part's measures under construction (``line``: the rhythm stage's Line)."""
    line: object
    keys: tuple[tuple[int, str], ...]  # written key signature (fifths, mode) of each written measure
    clef: str
    transpose: Interval = Interval()
    double_before: frozenset[int] = frozenset()   # measures a double bar line precedes (new sections)
    notes: list[list[_Note]] = field(default_factory=list)
    marks: list[list[tuple[Fraction, int, ET.Element]]] = field(default_factory=list)
    _last: _Note | None = None          # the note added last (a tied note joins it)

    def __post_init__(self) -> None:
        n = self.line.measures      # type: ignore[attr-defined]
        self.notes = [[] for _ in range(n)]
        self.marks = [[] for _ in range(n)]

    def cut(self, onset: Fraction, duration: Fraction) -> tuple[Piece, ...]:
        line = self.line
        return _cut(onset, duration, line.meter, line.pickup)   # type: ignore[attr-defined]

    def add_note(self, name: str, onset: Fraction, duration: Fraction, articulation: str = "",
                 written: bool = False, tied: bool = False) -> Piece:
        """A sounding spelled note (``written``: already the part's written name, from
        ``writers.common.written_parts``); returns its first piece (where marks attach).
        ``tied``: the note continues the one added just before (the same pitch held over a
        chord change), so a tie joins them."""
        written_name = name if written else transpose_name(name, self.transpose)
        cut = self.cut(onset, duration)
        while cut[-1].measure >= len(self.notes):     # a note past the line's last bar
            self.notes.append([])
            self.marks.append([])
            self.keys = (*self.keys, self.keys[-1])
        last = self._last
        if tied and last is not None:
            last.tie_start = True
        for j, pc in enumerate(cut):
            n = _Note(pc.offset, pc.duration, written_name, pc.tie_start,
                      pc.tie_stop or (j == 0 and tied and last is not None), articulation if j == 0 else "")
            self.notes[pc.measure].append(n)
            self._last = n
        return cut[0]

    def add_mark(self, measure: int, offset: Fraction, order: int, el: ET.Element) -> None:
        self.marks[measure].append((offset, order, el))

    # -- writing ---------------------------------------------------------------------------

    def divisions(self) -> int:
        d = 1
        for ms in self.notes:
            for n in ms:
                d = lcm(d, n.offset.denominator, n.duration.denominator)
        return d

    def measures(self, first_attrs: list[ET.Element], numbering: bool = True) -> list[ET.Element]:
        """The ``<measure>`` elements; ``first_attrs`` go after the first measure's
        divisions/key/time/clef (the ``<transpose>``)."""
        line = self.line
        meter: Meter = line.meter                   # type: ignore[attr-defined]
        pickup: Fraction = line.pickup              # type: ignore[attr-defined]
        shift = 1 if pickup else 0
        self._fill_rests(meter, pickup, shift)
        div = self.divisions()
        out = []
        for m_i, notes in enumerate(self.notes):
            m = ET.Element("measure", number=str(m_i + 1 - shift))
            if shift and m_i == 0:
                m.set("implicit", "yes")         # the pickup: measure 0 (MusicXML 4.0)
            if m_i == 0 and numbering:
                sub(sub(m, "print"), "measure-numbering", "system")
            if m_i == 0:
                at = sub(m, "attributes")
                sub(at, "divisions", div)
                self._key(at, self.keys[0])
                tm = sub(at, "time")
                sub(tm, "beats", meter.numerator)
                sub(tm, "beat-type", meter.denominator)
                sign, ln, octave = _CLEFS[self.clef]
                cl = sub(at, "clef")
                sub(cl, "sign", sign)
                sub(cl, "line", ln)
                if octave:
                    sub(cl, "clef-octave-change", octave)
                at.extend(first_attrs)
            elif self.keys[m_i] != self.keys[m_i - 1]:
                self._key(sub(m, "attributes"), self.keys[m_i])
            notes.sort(key=lambda n: n.offset)
            start = meter.bar - pickup if shift and m_i == 0 else Q(0)   # bar position of offset 0
            beamed = beams(notes, meter, start)
            shown = accidentals(notes, self.keys[m_i][0])
            brackets = tuplets(notes)
            pending = sorted(self.marks[m_i], key=lambda x: (x[0], x[1]))
            for i, n in enumerate(notes):
                while pending and pending[0][0] < n.offset + n.duration:
                    off, _, el = pending.pop(0)
                    if off > n.offset:
                        _offset(el, (off - n.offset) * div)
                    m.append(el)
                self._note(m, n, div, beamed.get(i, ()), shown.get(i), brackets.get(i))
            m.extend(el for _, _, el in pending)
            if m_i + 1 < len(self.notes) and (self.keys[m_i + 1] != self.keys[m_i] or m_i + 1 in self.double_before):
                # a new key signature or a new section follows a double bar line (common practice)
                sub(sub(m, "barline", location="right"), "bar-style", "light-light")
            out.append(m)
        bl = sub(out[-1], "barline", location="right")
        sub(bl, "bar-style", "light-heavy")
        return out

    @staticmethod
    def _key(at: ET.Element, key: tuple[int, str]) -> None:
        k = sub(at, "key")
        sub(k, "fifths", key[0])
        sub(k, "mode", key[1])

    def _fill_rests(self, meter: Meter, pickup: Fraction, shift: int) -> None:
        bar = meter.bar
        for m_i, notes in enumerate(self.notes):
            m_start = -pickup if shift and m_i == 0 else (m_i - shift) * bar
            m_len = pickup if shift and m_i == 0 else bar
            t = Q(0)
            gaps = []
            for n in sorted(notes, key=lambda n: n.offset):
                if n.offset > t:
                    gaps.append((t, n.offset - t))
                t = max(t, n.offset + n.duration)
            if t < m_len:
                gaps.append((t, m_len - t))
            for off, dur in gaps:
                for pc in _rest_cut(m_start + off, dur, meter, pickup):
                    notes.append(_Note(pc.offset, pc.duration, None, whole_bar=pc.whole_bar))

    @staticmethod
    def _note(m: ET.Element, n: _Note, div: int, beams: tuple[tuple[int, str], ...],
              accidental: int | None, tuplet: str | None) -> None:
        el = sub(m, "note")
        if n.name is None:
            rest = sub(el, "rest")
            if n.whole_bar:
                rest.set("measure", "yes")
        else:
            step, alter, octave = split_name(n.name)
            p = sub(el, "pitch")
            sub(p, "step", step)
            if alter or accidental == 0:
                sub(p, "alter", alter)
            sub(p, "octave", octave)
        sub(el, "duration", int(n.duration * div))
        if n.tie_stop:
            sub(el, "tie", type="stop")
        if n.tie_start:
            sub(el, "tie", type="start")
        triplet = is_triplet(n.duration)
        value = n.duration * 3 / 2 if triplet else n.duration
        kind = TYPES.get(value)
        if kind is not None and not n.whole_bar:
            sub(el, "type", kind[0])
            for _ in range(kind[1]):
                sub(el, "dot")
        if accidental is not None:
            sub(el, "accidental", _ACCIDENTALS.get(accidental, "natural"))
        if triplet:
            tm = sub(el, "time-modification")
            sub(tm, "actual-notes", 3)
            sub(tm, "normal-notes", 2)
        for level, kind_ in beams:
            sub(el, "beam", kind_, number=str(level))
        if n.tie_start or n.tie_stop or n.articulation or tuplet:
            nt = sub(el, "notations")
            if n.tie_stop:
                sub(nt, "tied", type="stop")
            if n.tie_start:
                sub(nt, "tied", type="start")
            if tuplet:
                sub(nt, "tuplet", type=tuplet, bracket="yes")
            if n.articulation:
                sub(sub(nt, "articulations"), _ARTICULATIONS[n.articulation])


def _offset(el: ET.Element, divisions: Fraction) -> None:
    """A mark that stands inside a note: MusicXML's <offset> from the note's start."""
    off = ET.Element("offset")
    off.text = str(int(divisions))
    children = list(el)
    at = len(children)
    for i, c in enumerate(children):
        if c.tag in ("staff", "sound", "frame"):
            at = i
            break
    el.insert(at, off)
