"""The rhythm section's written parts in MusicXML (ElementTree; no music21).

* :func:`rhythm_part_elements` -- the ``<score-part>`` and ``<part>`` elements of
  every asked rhythm part (guitar, piano, bass, drums), from the stage's values;
* :func:`rhythm_score_bytes` -- those parts appended to the score's tree
  (``musicxml.score_tree``), below the other parts, in one bracketed group, and the file;
* :func:`rhythm_part_files` -- one printable file per rhythm part.

Engraving (common practice of rhythm-section parts): piano and guitar read
stemless time slashes a beat, rhythmic slashes (accented) where the section
plays a figure, chord symbols above; the guitar's treble clef carries the 8
below (it sounds an octave lower than written); the bass reads its line an
octave above sounding (``<transpose>`` octave-change -1) in bass clef with the
chord symbols; the drums read a percussion clef with time slashes, the style
word, the section's figures as cue notes above the staff and "Fill" where a
statement ends.  Notes and rests are cut by :func:`arrange.rhythm.notation.pieces`.
"""
from __future__ import annotations

import xml.etree.ElementTree as ET
from collections.abc import Sequence
from fractions import Fraction

from arrange.harmony.events import Harmonized
from arrange.rhythm.notation import Piece, pieces
from arrange.rhythm_section.values import RhythmSection, Timed
from arrange.theory.chords import Chord
from arrange.theory.keys import signature_alters, written_key
from arrange.voicing.sections import instruments
from arrange.writers.xml_harmony import harmony_element

__all__ = ["rhythm_part_elements", "rhythm_score_bytes", "rhythm_part_files", "PART_IDS", "DIVISIONS"]

DIVISIONS = 48          # per quarter: the line's 1/24 grid, and 1/16 once 12/8 is written out
PART_IDS = {"guitar": "P-rs-guitar", "piano": "P-rs-piano", "bass": "P-rs-bass", "drums": "P-rs-drums"}
_TYPES = {Fraction(4): "whole", Fraction(2): "half", Fraction(1): "quarter", Fraction(1, 2): "eighth",
          Fraction(1, 4): "16th", Fraction(1, 8): "32nd", Fraction(1, 16): "64th"}
_ACC_TEXT = {-2: "flat-flat", -1: "flat", 0: "natural", 1: "sharp", 2: "double-sharp"}


def _sub(parent: ET.Element, tag: str, text: str | None = None, **attrib: str) -> ET.Element:
    el = ET.SubElement(parent, tag, attrib)
    if text is not None:
        el.text = text
    return el


def _kinds() -> dict[Fraction, tuple[str, int, bool]]:
    out: dict[Fraction, tuple[str, int, bool]] = {}
    for base, name in _TYPES.items():
        out.setdefault(base, (name, 0, False))
        out.setdefault(base * Fraction(3, 2), (name, 1, False))
        out.setdefault(base * Fraction(2, 3), (name, 0, True))
    return out


_KINDS = _kinds()     # every readable value, looked up once a note (equal Fractions hash alike)


def _type_of(d: Fraction) -> tuple[str, int, bool]:
    """(type, dots, triplet) of a readable value."""
    kind = _KINDS.get(d)
    if kind is None:
        raise ValueError(f"unreadable value {d}")
    return kind


def _value(note: ET.Element, d: Fraction) -> None:
    _sub(note, "duration", str(int(d * DIVISIONS)))


def _finish_value(note: ET.Element, d: Fraction, cue: bool = False, accidental: str | None = None) -> None:
    """type, dots, accidental, time-modification (the XSD's order)."""
    kind, dots, triplet = _type_of(d)
    if cue:
        _sub(note, "type", kind, size="cue")
    else:
        _sub(note, "type", kind)
    for _ in range(dots):
        _sub(note, "dot")
    if accidental is not None:
        _sub(note, "accidental", accidental)
    if triplet:
        tm = _sub(note, "time-modification")
        _sub(tm, "actual-notes", "3")
        _sub(tm, "normal-notes", "2")


class _Measures:
    """The measures of one part, filled in time order."""

    def __init__(self, part: ET.Element, rs: RhythmSection, harmonized: Harmonized) -> None:
        self.part = part
        self.bar = rs.bar
        self.pickup = rs.pickup
        self.count = int(rs.total / rs.bar) + (1 if rs.pickup else 0)
        self.measures: list[ET.Element] = []
        for k in range(self.count):
            number = k if rs.pickup else k + 1
            attrib = {"number": str(number)}
            if rs.pickup and k == 0:
                attrib["implicit"] = "yes"
            self.measures.append(_sub(part, "measure", **attrib))
        self.harmonized = harmonized
        self.state: dict[tuple[str, int], int] = {}
        self.state_measure = -1
        self.signature: dict[str, int] = {}

    def index(self, t: Fraction) -> int:
        return int(t // self.bar) + (1 if self.pickup else 0)

    def start(self, measure: int) -> Fraction:
        return (measure - (1 if self.pickup else 0)) * self.bar

    def finish(self, sections: set[int] | frozenset[int] = frozenset()) -> None:
        """Bar lines: a double bar before each measure in ``sections`` (a new passage or key,
        as the lead's staves write it; common practice), a final bar line at the end."""
        for k in sorted(sections):
            if 0 < k < len(self.measures):
                _sub(_sub(self.measures[k - 1], "barline", location="right"), "bar-style", "light-light")
        last = self.measures[-1]
        bl = _sub(last, "barline", location="right")
        _sub(bl, "bar-style", "light-heavy")

    def accidental(self, measure: int, step: str, octave: int, alter: int) -> int | None:
        """The accidental to print for this note in ``measure`` (None: none needed)."""
        if measure != self.state_measure:
            self.state, self.state_measure = {}, measure
        current = self.state.get((step, octave), self.signature.get(step, 0))
        self.state[(step, octave)] = alter
        return None if current == alter else alter


def _attributes(m: ET.Element, clef: tuple[str, int, int], fifths: int | None, meter: str | None,
                transpose_octave: int = 0, first: bool = True) -> None:
    at = _sub(m, "attributes")
    if first:
        _sub(at, "divisions", str(DIVISIONS))
    if fifths is not None:
        key = _sub(at, "key")
        _sub(key, "fifths", str(fifths))
    if meter is not None:
        num, den = meter.split("/")
        time = _sub(at, "time")
        _sub(time, "beats", num)
        _sub(time, "beat-type", den)
    if first:
        sign, line, octave = clef
        c = _sub(at, "clef")
        _sub(c, "sign", sign)
        if line:
            _sub(c, "line", str(line))
        if octave:
            _sub(c, "clef-octave-change", str(octave))
        if transpose_octave:
            tr = _sub(at, "transpose")
            _sub(tr, "diatonic", "0")
            _sub(tr, "chromatic", "0")
            _sub(tr, "octave-change", str(transpose_octave))


def _words(m: ET.Element, text: str, *, offset: Fraction = Fraction(0), bold: bool = False) -> None:
    d = _sub(m, "direction", placement="above")
    dt = _sub(d, "direction-type")
    w = _sub(dt, "words", text)
    if bold:
        w.set("font-weight", "bold")
    if offset:
        _sub(d, "offset", str(int(offset * DIVISIONS)))


def _rest(m: ET.Element, d: Fraction, whole_bar: bool, voice: str = "1", hidden: bool = False) -> None:
    n = _sub(m, "note")
    if hidden:
        n.set("print-object", "no")
    r = _sub(n, "rest")
    if whole_bar:
        r.set("measure", "yes")
    _value(n, d)
    _sub(n, "voice", voice)
    if not whole_bar:
        _finish_value(n, d)


def _rests(ms: _Measures, start: Fraction, end: Fraction, meter, voice: str = "1",  # noqa: ANN001
           hidden: bool = False) -> None:
    if end <= start:
        return
    for pc in pieces(start, end - start, meter, pickup=ms.pickup, rest=True):
        _rest(ms.measures[pc.measure], pc.duration, pc.whole_bar, voice, hidden)


def _slash_note(m: ET.Element, pc: Piece, *, stem: str, accent: bool, voice: str = "1",
                display: tuple[str, int] = ("B", 4), unpitched: bool = False, cue: bool = False,
                head: str = "slash", alter: int = 0) -> ET.Element:
    n = _sub(m, "note")
    if cue:
        _sub(n, "cue")
    p = _sub(n, "unpitched" if unpitched else "pitch")
    if unpitched:
        _sub(p, "display-step", display[0])
        _sub(p, "display-octave", str(display[1]))
    else:        # a slash stands on the middle line, as the key signature spells that line
        _sub(p, "step", display[0])
        if alter:
            _sub(p, "alter", str(alter))
        _sub(p, "octave", str(display[1]))
    _value(n, pc.duration)
    if not cue:            # a cue note takes no <tie> (XSD); its tied notation still shows
        _ties(n, pc)
    _sub(n, "voice", voice)
    _finish_value(n, pc.duration, cue)
    _sub(n, "stem", stem)
    if head:
        _sub(n, "notehead", head)
    _notations(n, pc, accent and not pc.tie_stop)
    return n


def _ties(n: ET.Element, pc: Piece) -> None:
    if pc.tie_stop:
        _sub(n, "tie", type="stop")
    if pc.tie_start:
        _sub(n, "tie", type="start")


def _notations(n: ET.Element, pc: Piece, accent: bool) -> None:
    if not (pc.tie_start or pc.tie_stop or accent):
        return
    no = _sub(n, "notations")
    if pc.tie_stop:
        _sub(no, "tied", type="stop")
    if pc.tie_start:
        _sub(no, "tied", type="start")
    if accent:
        _sub(_sub(no, "articulations"), "accent")


def _changes(changes: list[tuple[Fraction, Chord]]) -> Timed:
    return Timed(changes, [t for t, _chord in changes])


def _symbols_before(ms: _Measures, m: ET.Element, start: Fraction, end: Fraction,
                    changes: Timed, done: set[Fraction]) -> None:
    for t, chord in changes.between(start, end):
        if t not in done:
            done.add(t)
            m.append(harmony_element(chord, offset=int((t - start) * DIVISIONS)))


def _comp_part(ms: _Measures, rs: RhythmSection, meter, rs_part: str) -> None:  # noqa: ANN001
    changes: list[tuple[Fraction, Chord]] = []
    for s in rs.comping:
        if not s.rest and (not changes or changes[-1][1] != s.chord):
            changes.append((s.onset, s.chord))
    timed = _changes(changes)
    done: set[Fraction] = set()
    _rests(ms, -rs.pickup, Fraction(0), meter)
    for s in rs.comping:
        if s.rest:
            _rests(ms, s.onset, s.onset + s.duration, meter)
            continue
        for j, pc in enumerate(pieces(s.onset, s.duration, meter, pickup=rs.pickup)):
            m = ms.measures[pc.measure]
            t = ms.start(pc.measure) + pc.offset
            _symbols_before(ms, m, t, t + pc.duration, timed, done)
            # the guitar's 8vb clef: the file holds sounding pitch (as the guitar's other parts)
            at = ("B", 3) if rs_part == "guitar" else ("B", 4)
            alter = signature_alters(ms.harmonized.key_at(int(t // rs.bar) + 1).fifths).get("B", 0)
            if s.kind == "time":
                _slash_note(m, pc, stem="none", accent=False, display=at, alter=alter)
            else:
                _slash_note(m, pc, stem="up", accent=j == 0, display=at, alter=alter)


def _bass_part(ms: _Measures, rs: RhythmSection, meter, names: tuple[str, ...]) -> None:  # noqa: ANN001
    """The written bass line; ``names`` are its concert names by the one spelling rule
    (``writers.common.bass_names``: key, chord and direction, agreeing with the score)."""
    if len(names) != len(rs.bass):
        raise ValueError("the bass part needs one concert name per bass note")
    changes: list[tuple[Fraction, Chord]] = []
    for bn in rs.bass:
        if not changes or changes[-1][1] != bn.chord:
            changes.append((bn.onset, bn.chord))
    timed = _changes(changes)
    done: set[Fraction] = set()
    _rests(ms, -rs.pickup, Fraction(0), meter)
    notes = rs.bass
    t_end = Fraction(0)
    for i, bn in enumerate(notes):
        _rests(ms, t_end, bn.onset, meter)
        key = ms.harmonized.key_at(int(bn.onset // rs.bar) + 1)
        name = names[i]
        step, rest = name[0], name[1:]
        alter = rest.count("#") - rest.count("b")
        octave = int(rest.lstrip("#b")) + 1             # written an octave above sounding
        for pc in pieces(bn.onset, bn.duration, meter, pickup=rs.pickup):
            m = ms.measures[pc.measure]
            t = ms.start(pc.measure) + pc.offset
            _symbols_before(ms, m, t, t + pc.duration, timed, done)
            ms.signature = signature_alters(written_key(key).fifths)
            acc = ms.accidental(pc.measure, step, octave, alter)
            n = _sub(m, "note")
            p = _sub(n, "pitch")
            _sub(p, "step", step)
            if alter:
                _sub(p, "alter", str(alter))
            _sub(p, "octave", str(octave))
            _value(n, pc.duration)
            _ties(n, pc)
            _sub(n, "voice", "1")
            _finish_value(n, pc.duration, accidental=None if acc is None else _ACC_TEXT[acc])
            _notations(n, pc, False)
        t_end = bn.onset + bn.duration
    _rests(ms, t_end, rs.total, meter)


def _drum_part(ms: _Measures, rs: RhythmSection, meter) -> None:  # noqa: ANN001
    drums = rs.drums
    if drums is None:
        return
    _rests(ms, -rs.pickup, Fraction(0), meter)
    bar = rs.bar
    all_cues = Timed(drums.cues, [c.onset for c in drums.cues])
    all_times = Timed(drums.time, list(drums.time))
    for k in range(int(rs.total / bar)):
        t0 = k * bar
        m = ms.measures[ms.index(t0)]
        if k == 0:
            _words(m, drums.style, bold=True)
        if k + 1 in drums.fills:
            _words(m, "Fill", offset=bar - 2 if bar >= 3 else bar - 1)
        cues = all_cues.between(t0, t0 + bar)
        if cues:   # voice 1: the figure above the staff, cue size; hidden rests between
            t = t0
            for i, c in enumerate(cues):
                _rests(ms, t, c.onset, meter, "1", hidden=True)
                stop = min(c.onset + c.duration, t0 + bar, cues[i + 1].onset if i + 1 < len(cues) else t0 + bar)
                for j, pc in enumerate(pieces(c.onset, stop - c.onset, meter, pickup=rs.pickup)):
                    _slash_note(m, pc, stem="up", accent=j == 0, display=("A", 5), unpitched=True,
                                cue=True, head="")
                t = stop
            _rests(ms, t, t0 + bar, meter, "1", hidden=True)
            bk = _sub(m, "backup")
            _sub(bk, "duration", str(int(bar * DIVISIONS)))
        voice = "2" if cues else "1"
        times = all_times.between(t0, t0 + bar)
        ends = times[1:] + [t0 + bar]
        for on, end in zip(times, ends, strict=True):
            for pc in pieces(on, end - on, meter, pickup=rs.pickup):
                _slash_note(m, pc, stem="none", accent=False, voice=voice, unpitched=True)


_CLEFS = {"guitar": ("G", 2, -1), "piano": ("G", 2, 0), "bass": ("F", 4, 0), "drums": ("percussion", 0, 0)}


def _names(rs: RhythmSection, part: str) -> tuple[str, str, str, int, int | None]:
    """(name, abbreviation, sound id, General MIDI program or 0, MIDI channel or None)."""
    if part == "drums":
        return "Drums", "Dr.", "drum.group.set", 0, 10     # GM percussion channel 10
    inst = instruments()[rs.bass_instrument if part == "bass" else part]
    name = "Bass" if part == "bass" else inst.name
    return name, inst.abbreviation, inst.sound, inst.program, None


def rhythm_part_elements(rs: RhythmSection, harmonized: Harmonized,
                         first_channel: int = 0, bass_names: tuple[str, ...] = ()
                         ) -> list[tuple[ET.Element, ET.Element]]:
    """``(<score-part>, <part>)`` per asked rhythm part, score order."""
    line = harmonized.line
    meter = line.meter
    out = []
    pitched = 0
    for part in rs.parts:
        pid = PART_IDS[part]
        name, abbr, sound, program, channel = _names(rs, part)
        sp = ET.Element("score-part", id=pid)
        _sub(sp, "part-name", name)
        _sub(sp, "part-abbreviation", abbr)
        si = _sub(sp, "score-instrument", id=f"{pid}-I1")
        _sub(si, "instrument-name", name)
        _sub(si, "instrument-sound", sound)
        mi = _sub(sp, "midi-instrument", id=f"{pid}-I1")
        if channel is None:
            from arrange.writers.common import channel_for

            channel = channel_for(first_channel + pitched) + 1
            pitched += 1
        _sub(mi, "midi-channel", str(channel))
        if program:
            _sub(mi, "midi-program", str(program))
        el = ET.Element("part", id=pid)
        ms = _Measures(el, rs, harmonized)
        fifths = None if part == "drums" else written_key(harmonized.key).fifths   # the one signature rule
        _attributes(ms.measures[0], _CLEFS[part], fifths, str(meter),
                    transpose_octave=-1 if part == "bass" else 0)
        sections = {ms.index((p.first_bar - 1) * rs.bar) for p in line.passages[1:]}
        for bar, key in harmonized.keys:
            if bar > 1:
                sections.add(ms.index((bar - 1) * rs.bar))
                if part != "drums":
                    m = ms.measures[ms.index((bar - 1) * rs.bar)]
                    _attributes_first(m, written_key(key).fifths)      # the one signature rule
        if part in ("piano", "guitar"):
            _comp_part(ms, rs, meter, part)
        elif part == "bass":
            _bass_part(ms, rs, meter, bass_names)
        else:
            _drum_part(ms, rs, meter)
        ms.finish(sections)
        out.append((sp, el))
    return out


def _attributes_first(m: ET.Element, fifths: int) -> None:
    at = ET.Element("attributes")
    key = _sub(at, "key")
    _sub(key, "fifths", str(fifths))
    m.insert(0, at)


def rhythm_score_bytes(root: ET.Element, rs: RhythmSection, harmonized: Harmonized, first_channel: int,
                       *, bass_names: tuple[str, ...] = ()) -> bytes:
    """The score file of ``root`` (``musicxml.score_tree``, the score not yet written) with
    the rhythm parts appended below the others, in one bracketed group; indented by two
    spaces (the score alone is indented by one)."""
    from arrange.writers.xml_document import HEAD, xml_text

    _append(root, rs, harmonized, first_channel, bass_names)
    return HEAD + xml_text(root, "  ").encode("utf-8")


def _append(root: ET.Element, rs: RhythmSection, harmonized: Harmonized, first_channel: int,
            bass_names: tuple[str, ...]) -> None:
    part_list = root.find("part-list")
    if part_list is None:
        raise ValueError("a score without <part-list>")
    numbers = [int(g.get("number", "1")) for g in part_list.iter("part-group")]
    number = str(max(numbers, default=0) + 1)
    start = _sub(part_list, "part-group", type="start", number=number)
    _sub(start, "group-symbol", "bracket")
    _sub(start, "group-barline", "yes")
    for sp, part in rhythm_part_elements(rs, harmonized, first_channel, bass_names):
        part_list.append(sp)
        root.append(part)
    _sub(part_list, "part-group", type="stop", number=number)


_HEAD = (b'<?xml version="1.0" encoding="UTF-8"?>\n'
         b'<!DOCTYPE score-partwise PUBLIC "-//Recordare//DTD MusicXML 4.0 Partwise//EN" '
         b'"http://www.musicxml.org/dtds/partwise.dtd">\n')


def rhythm_part_files(rs: RhythmSection | None, harmonized: Harmonized, title: str, tempo: float,
                      style: str, version: str = "", *, bass_names: tuple[str, ...] = ()) -> list[tuple[str, bytes]]:
    """One printable MusicXML file per rhythm part: ``(part name, bytes)``."""
    from arrange.writers.xml_document import xml_text

    if rs is None:
        return []
    out = []
    for sp, part in rhythm_part_elements(rs, harmonized, bass_names=bass_names):
        root = ET.Element("score-partwise", version="4.0")
        work = _sub(root, "work")
        _sub(work, "work-title", title)
        ident = _sub(root, "identification")
        enc = _sub(ident, "encoding")
        _sub(enc, "software", f"arrange {version}".strip())
        pl = _sub(root, "part-list")
        pl.append(sp)
        first = part.find("measure")
        if first is not None:   # the tempo with its style word, over the first bar
            d = ET.Element("direction", placement="above")
            dt = _sub(d, "direction-type")
            mt = _sub(dt, "metronome")
            _sub(mt, "beat-unit", "quarter")
            _sub(mt, "per-minute", f"{tempo:g}")
            _sub(d, "sound", tempo=f"{tempo:g}")
            attrs = first.find("attributes")
            at = list(first).index(attrs) + 1 if attrs is not None else 0
            first.insert(at, d)
            w = ET.Element("direction", placement="above")
            _sub(_sub(w, "direction-type"), "words", style).set("font-weight", "bold")
            first.insert(at, w)
        root.append(part)
        name = sp.findtext("part-name") or "Part"
        out.append((name, _HEAD + xml_text(root, "  ").encode("utf-8")))
    return out
