"""``Voiced`` to a MusicXML 4.0 score, through music21 objects.

Score -> part -> measure, as music21's own exporter layers them.  Notes go in
at sounding pitch; music21 writes each transposing part in written pitch
with a ``<transpose>`` element, so the file is a transposed score that still
knows concert pitch.
"""
from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction

from ..notation import pieces
from ..voicing import Voiced
from . import marks

__all__ = ["ScoreInfo", "musicxml_bytes", "part_bytes", "m21_figure"]

_INTERVALS = {"unison": "P1", "major second": "M2", "minor third": "m3", "perfect fourth": "P4",
              "perfect fifth": "P5", "major sixth": "M6", "octave": "P8", "major ninth": "M9",
              "major thirteenth": "M13", "two octaves": "P15", "minor second": "m2",
              "minor seventh": "m7", "major seventh": "M7", "perfect eleventh": "P11",
              "minor tenth": "m10", "perfect twelfth": "P12"}


@dataclass(frozen=True, slots=True)
class ScoreInfo:
    title: str
    tempo: float
    style: str          # the style word printed with the metronome mark
    dynamics: tuple[str, ...] = ("mf",)   # one per statement; the last holds for the rest
    analysis: bool = False                # statement labels and approach techniques
    concert: bool = False                 # concert score instead of a transposed one
    only_part: int | None = None          # build the single part k (for --parts)
    version: str = ""


def m21_figure(symbol: str) -> str:
    """Our chord symbol to a figure music21's ChordSymbol reads (flats as '-')."""
    if len(symbol) > 1 and symbol[1] == "b":
        symbol = symbol[0] + "-" + symbol[2:]
    return symbol.replace("dim7", "o7").replace("maj7", "maj7")


def part_abbreviation(part) -> str:  # noqa: ANN001
    """'Tpt. 2' for 'Trumpet 2': a numbered part name keeps its number in the
    abbreviation, as score margins show it (common practice)."""
    words = part.name.split()
    abbr = part.abbreviation
    if len(words) > 1 and words[-1].isdigit() and not abbr.rstrip().endswith(words[-1]):
        return f"{abbr} {words[-1]}"
    return abbr


def _instrument(part, index: int, concert: bool = False):  # noqa: ANN001
    from music21 import instrument, interval

    inst = instrument.Instrument()
    spec = part.instrument
    inst.partName = part.name
    inst.partAbbreviation = part_abbreviation(part)
    inst.instrumentName = spec.name
    inst.instrumentAbbreviation = spec.abbreviation
    inst.instrumentSound = spec.sound
    inst.midiProgram = spec.program - 1
    inst.midiChannel = index if index < 9 else index + 1
    inst.partId = f"P{index + 1}"
    inst.instrumentId = f"P{index + 1}-I1"
    if spec.transposition and not concert:
        name = _INTERVALS[spec.interval]
        # music21's transposition: written -> sounding, so the interval goes down
        ivl = interval.Interval(name)
        inst.transposition = ivl.reverse() if spec.transposition > 0 else ivl
    return inst


def _clef(name: str):  # noqa: ANN202
    from music21 import clef

    return {"treble": clef.TrebleClef, "bass": clef.BassClef, "alto": clef.AltoClef,
            "treble8vb": clef.Treble8vbClef, "tenor": clef.TenorClef}[name]()


def build_score(voiced: Voiced, info: ScoreInfo):  # noqa: ANN201
    from music21 import (
        bar,
        harmony,
        key,
        metadata,
        meter,  # noqa: F401
        note,
        stream,
        tempo,
    )

    line = voiced.harmonized.line
    bar_len = line.meter.bar
    n_measures = line.bars
    hkey = voiced.harmonized.key
    score = stream.Score(id="score")
    score.atSoundingPitch = True
    score.metadata = metadata.Metadata()
    score.metadata.title = info.title
    score.metadata.movementTitle = info.title
    for k, part in enumerate(voiced.section.parts):
        if info.only_part is not None and k != info.only_part:
            continue
        lead = k == (info.only_part or 0)     # this staff carries tempo, marks and symbols
        p = stream.Part(id=f"P{k + 1}")
        p.atSoundingPitch = True
        p.partName = part.name
        p.partAbbreviation = part_abbreviation(part)
        measures = []
        for m_i in range(n_measures):
            m = stream.Measure(number=m_i + 1)
            if m_i == 0:
                m.insert(0, _instrument(part, k, info.concert))
                m.insert(0, _clef(part.instrument.clef))
                mode = hkey.mode if hkey.mode in ("major", "minor") else hkey.mode
                m.insert(0, key.Key(hkey.tonic_name.replace("b", "-"), mode))
                m.insert(0, meter.TimeSignature(str(line.meter)))
                if lead:
                    m.insert(0, marks.style_word(info.style))
                    m.insert(0, tempo.MetronomeMark(number=info.tempo, referent=note.Note(type="quarter")))
            measures.append(m)
        prev_chord = None
        for ve in voiced.events:
            n = ve.event.note
            if lead:
                m_i = int(n.onset // bar_len)
                off = n.onset - m_i * bar_len
                if ve.event.chord.symbol != prev_chord:
                    cs = harmony.ChordSymbol(m21_figure(ve.event.chord.symbol))
                    cs.writeAsChord = False
                    measures[m_i].insert(float(off), cs)
                    prev_chord = ve.event.chord.symbol
            for pc in pieces(n.onset, n.duration, bar_len):
                nt = note.Note(ve.pitches[k])
                nt.duration.quarterLength = pc.duration
                if pc.tie_start and pc.tie_stop:
                    nt.tie = _tie("continue")
                elif pc.tie_start:
                    nt.tie = _tie("start")
                elif pc.tie_stop:
                    nt.tie = _tie("stop")
                measures[pc.measure].insert(float(pc.offset), nt)
        marks.add_dynamics(measures, voiced, info.dynamics, bar_len)
        if lead:
            marks.add_rehearsal(measures, voiced, bar_len)
        if lead and info.analysis:
            marks.add_analysis(measures, voiced, bar_len)
        if lead and info.only_part is None:
            marks.concert_symbols(measures)
        for m in measures:
            _fill_rests(m, bar_len)
        measures[-1].rightBarline = bar.Barline("final")
        for m in measures:
            p.append(m)
        score.insert(0, p)
    if info.only_part is None:
        marks.add_part_groups(score, voiced.section)
        marks.page_credits(score, info.title, info.concert)
    else:
        marks.page_credits(score, info.title, info.concert, voiced.section.parts[info.only_part].name)
    return score


def _tie(kind: str):  # noqa: ANN202
    from music21 import tie

    return tie.Tie(kind)


def _fill_rests(m, bar_len: Fraction) -> None:  # noqa: ANN001
    from music21 import note

    filled = sorted((Fraction(n.offset).limit_denominator(96), Fraction(n.quarterLength).limit_denominator(96))
                    for n in m.notesAndRests)
    t = Fraction(0)
    gaps = []
    for off, dur in filled:
        if off > t:
            gaps.append((t, off - t))
        t = max(t, off + dur)
    if t < bar_len:
        gaps.append((t, bar_len - t))
    for off, dur in gaps:
        for pc in pieces(off, dur, bar_len):
            r = note.Rest()
            r.duration.quarterLength = pc.duration
            m.insert(float(pc.offset), r)


def musicxml_bytes(voiced: Voiced, info: ScoreInfo) -> bytes:
    from music21.musicxml.m21ToXml import GeneralObjectExporter

    score = build_score(voiced, info)
    exporter = GeneralObjectExporter(score)
    exporter.makeNotation = False
    data: bytes = exporter.parse()
    return finish_xml(data, voiced, info)


def finish_xml(data: bytes, voiced: Voiced, info: ScoreInfo) -> bytes:
    """What music21 leaves out: sound ids, measure numbering, our credit line."""
    from .xmlfinish import finish

    return finish(data, voiced, info)


def part_bytes(voiced: Voiced, info: ScoreInfo) -> dict[int, bytes]:
    """One MusicXML file per part, in written pitch, each with its own marks."""
    from dataclasses import replace

    return {k: musicxml_bytes(voiced, replace(info, only_part=k, concert=False))
            for k in range(len(voiced.section.parts))}
