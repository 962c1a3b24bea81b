"""``Voiced`` to a MusicXML 4.0 score, through music21 objects.

Score -> part -> measure, as music21's own exporter layers them.  Notes go in
at sounding pitch; music21 writes each transposing part in written pitch
with a ``<transpose>`` element, so the file is a transposed score that still
knows concert pitch.
"""
from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction

from ..chords import Chord, parse_chord
from ..notation import pieces
from ..spelling import direction_of, m21_name, spell_pitch
from ..voicing import Voiced

__all__ = ["ScoreInfo", "musicxml_bytes", "m21_figure", "chord_symbol"]

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


_M21_CORE = {(0, 4, 7): "", (0, 3, 7): "m", (0, 3, 6): "dim", (0, 4, 8): "+", (0, 2, 7): "sus2",
             (0, 5, 7): "sus4", (0, 4, 7, 9): "6", (0, 3, 7, 9): "m6", (0, 4, 7, 11): "maj7",
             (0, 3, 7, 10): "m7", (0, 3, 7, 11): "mM7", (0, 4, 7, 10): "7", (0, 3, 6, 10): "m7b5",
             (0, 3, 6, 9): "o7", (0, 5, 7, 10): "7sus4", (0, 4, 8, 10): "+7", (0, 4, 8, 11): "+M7"}


def m21_figure(chord: Chord | str) -> str:
    """Our chord to a figure music21's ChordSymbol reads to the same tones: the core
    (triad, sixth, seventh) as one of music21's kinds, every extension as ``add``
    with its alteration (music21 rejects spellings such as ``Ebm9`` or ``Cmaj9``,
    and reads ``C13`` with an 11), flats as ``-``."""
    from ..spelling import m21_name

    ch = parse_chord(chord) if isinstance(chord, str) else chord
    core = tuple(sorted(ch.core))
    five = ""
    if core not in _M21_CORE:   # an altered fifth on a core music21 has no kind for
        fifth = next(i for i, d in zip(ch.intervals, ch.degrees, strict=True) if d == 5)
        core = tuple(sorted(7 if i == fifth else i for i in core))
        five = {6: "b5", 8: "#5"}[fifth]
    out = m21_name(ch.root_name) + _M21_CORE[core] + five
    for iv, d in zip(ch.intervals, ch.degrees, strict=True):
        if d >= 9:
            diff = (iv - {9: 2, 11: 5, 13: 9}[d] + 6) % 12 - 6
            out += "add" + ("b" * -diff if diff < 0 else "#" * diff) + str(d)
    if ch.bass_name:
        out += "/" + m21_name(ch.bass_name)
    return out


def chord_symbol(chord: Chord):  # noqa: ANN201
    """A music21 ChordSymbol for ``chord`` that prints our canonical symbol."""
    from music21 import harmony

    cs = harmony.ChordSymbol(m21_figure(chord))
    cs.chordKindStr = chord.quality
    cs.writeAsChord = False
    return cs


def _instrument(part, index: int):  # noqa: ANN001
    from music21 import instrument, interval

    inst = instrument.Instrument()
    spec = part.instrument
    inst.partName = part.name
    inst.partAbbreviation = part.abbreviation
    inst.instrumentName = spec.name
    inst.instrumentAbbreviation = spec.abbreviation
    inst.instrumentSound = spec.sound
    inst.midiProgram = spec.program - 1
    inst.midiChannel = index if index < 9 else index + 1
    inst.partId = f"P{index + 1}"
    inst.instrumentId = f"P{index + 1}-I1"
    if spec.transposition:
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
        dynamics,
        expressions,
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
    statement_starts = {st.start: st for st in line.chain.statements}
    for k, part in enumerate(voiced.section.parts):
        p = stream.Part(id=f"P{k + 1}")
        p.atSoundingPitch = True
        p.partName = part.name
        p.partAbbreviation = part.abbreviation
        measures = []
        for m_i in range(n_measures):
            m = stream.Measure(number=m_i + 1)
            if m_i == 0:
                m.insert(0, _instrument(part, k))
                m.insert(0, _clef(part.instrument.clef))
                m.insert(0, key.Key(m21_name(hkey.tonic_name), hkey.signature_mode))
                m.insert(0, meter.TimeSignature(str(line.meter)))
                m.insert(0, dynamics.Dynamic("mf"))
                if k == 0:
                    m.insert(0, tempo.MetronomeMark(text=info.style, number=info.tempo,
                                                    referent=note.Note(type="quarter")))
                    m.insert(0, expressions.TextExpression("Transposed score"))
            elif voiced.harmonized.key_at(m_i + 1) != voiced.harmonized.key_at(m_i):
                kc = voiced.harmonized.key_at(m_i + 1)   # a key change by bar
                m.insert(0, key.Key(m21_name(kc.tonic_name), kc.signature_mode))
            measures.append(m)
        prev_chord = None
        part_pitches = [ve.pitches[k] for ve in voiced.events]
        shown: dict[tuple[int, str, int], int] = {}     # accidentals in force per measure
        for i, ve in enumerate(voiced.events):
            n = ve.event.note
            if k == 0:
                m_i = int(n.onset // bar_len)
                off = n.onset - m_i * bar_len
                if ve.event.chord.symbol != prev_chord:
                    measures[m_i].insert(float(off), chord_symbol(ve.event.chord))
                    prev_chord = ve.event.chord.symbol
                if i in statement_starts:
                    st = statement_starts[i]
                    measures[m_i].insert(float(off), expressions.RehearsalMark(chr(64 + st.index)
                                         if st.index <= 26 else str(st.index)))
            way = direction_of(part_pitches[i - 1] if i else None, ve.pitches[k],
                               part_pitches[i + 1] if i + 1 < len(part_pitches) else None)
            name = m21_name(spell_pitch(ve.pitches[k], voiced.harmonized.key_at(int(n.onset // bar_len) + 1),
                                        ve.event.chord, way))
            for pc in pieces(n.onset, n.duration, bar_len):
                nt = note.Note(name)
                nt.duration.quarterLength = pc.duration
                if pc.tie_start and pc.tie_stop:
                    nt.tie = _tie("continue")
                elif pc.tie_start:
                    nt.tie = _tie("start")
                elif pc.tie_stop:
                    nt.tie = _tie("stop")
                if not part.instrument.transposition:   # transposing parts: music21 respells
                    _accidental(nt, pc, shown, voiced.harmonized.key_at(pc.measure + 1))
                measures[pc.measure].insert(float(pc.offset), nt)
        for m in measures:
            _fill_rests(m, bar_len)
        measures[-1].rightBarline = bar.Barline("final")
        for m in measures:
            p.append(m)
        score.insert(0, p)
    return score


def _accidental(nt, pc, shown: dict[tuple[int, str, int], int], k) -> None:  # noqa: ANN001
    """Print an accidental only where the key signature and the measure so far do
    not already give it (common practice of engraving); a tied-over note never."""
    from music21 import pitch

    order = "FCGDAEB"
    sig = {x: 1 for x in order[:k.fifths]} if k.fifths >= 0 else {x: -1 for x in order[::-1][:-k.fifths]}
    step, octave = nt.pitch.step, nt.pitch.octave
    alter = int(nt.pitch.alter)
    slot = (pc.measure, step, octave)
    need = alter != shown.get(slot, sig.get(step, 0)) and not pc.tie_stop
    shown[slot] = alter
    if nt.pitch.accidental is None:
        if need:
            nt.pitch.accidental = pitch.Accidental("natural")
            nt.pitch.accidental.displayStatus = True
        return
    nt.pitch.accidental.displayStatus = need


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
    # the kind's text already prints the whole symbol (Cm9, not Cm7 add 9)
    return data.replace(b"<degree>", b'<degree print-object="no">')
