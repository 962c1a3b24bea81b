"""``Voiced`` to a MusicXML 4.0 score, through music21 objects.

Score -> part -> measure, as music21's own exporter layers them.  Notes go in
at sounding pitch; music21 writes each transposing part in written pitch
with a ``<transpose>`` element, so the file is a transposed score that still
knows concert pitch.
"""
from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction

from arrange.rhythm.notation import pieces
from arrange.theory.spelling import direction_of, m21_name, spell_pitch
from arrange.voicing.voicer import Voiced
from arrange.writers import marks
from arrange.writers.symbols import chord_symbol, m21_figure  # noqa: F401 - m21_figure is used by callers

__all__ = ["ScoreInfo", "build_score", "finish_xml", "m21_figure", "chord_symbol", "swing_ratio"]

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
        metadata,
        meter,  # noqa: F401
        note,
        stream,
        tempo,
    )

    line = voiced.harmonized.line
    bar_len = line.meter.bar
    shift = 1 if line.pickup else 0
    score = stream.Score(id="score")
    score.atSoundingPitch = True
    score.metadata = metadata.Metadata()
    score.metadata.title = info.title
    score.metadata.movementTitle = info.title
    for k, part in enumerate(voiced.section.parts):
        if info.only_part is not None and k != info.only_part:
            continue
        lead = k == (info.only_part or 0)     # this staff carries tempo, marks and symbols
        p, measures = part_skeleton(part, k, part_abbreviation(part), voiced.harmonized, info.concert)
        if lead:
            beat = note.Note(type="quarter")
            if line.tempo_scale != 1:      # a shuffle written in 12/8: the dotted quarter
                beat.duration.dots = 1
            measures[0].insert(0, marks.style_word(info.style))
            measures[0].insert(0, tempo.MetronomeMark(number=info.tempo, referent=beat))
        prev_chord = None
        part_pitches = [ve.pitches[k] for ve in voiced.events]
        shown: dict[tuple[int, str, int], int] = {}     # accidentals in force per measure
        respell = bool(part.instrument.transposition) and not info.concert
        for i, ve in enumerate(voiced.events):
            n = ve.event.note
            cut = pieces(n.onset, n.duration, line.meter, pickup=line.pickup)
            if lead:
                m_i, off = cut[0].measure, cut[0].offset
                # a pickup on the chord of bar 1 takes no symbol of its own: the symbol
                # stands over bar 1, as lead sheets write it (common practice)
                pickup_on_first = n.onset < 0 and ve.event.role == "framework" and \
                    bool(voiced.harmonized.framework) and ve.event.chord == voiced.harmonized.framework[0].chord
                if ve.event.chord.symbol != prev_chord and not pickup_on_first:
                    measures[m_i].insert(_offset(off), chord_symbol(ve.event.chord))
                    prev_chord = ve.event.chord.symbol
            way = direction_of(part_pitches[i - 1] if i else None, ve.pitches[k],
                               part_pitches[i + 1] if i + 1 < len(part_pitches) else None)
            bar_key = voiced.harmonized.key_at(int(n.onset // bar_len) + 1)
            name = m21_name(spell_pitch(ve.pitches[k], bar_key, ve.event.chord, way))
            for j, pc in enumerate(cut):
                nt = piece_note(name, pc)
                if j == 0 and n.articulation:
                    nt.articulations.append(_articulation(n.articulation))
                if not respell:     # transposing parts in written pitch: music21 respells them
                    _accidental(nt, pc, shown, voiced.harmonized.key_at(pc.measure + 1 - shift))
                measures[pc.measure].insert(_offset(pc.offset), nt)
        marks.add_dynamics(measures, voiced, info.dynamics)
        if lead:
            marks.add_rehearsal(measures, voiced)
        if lead and info.analysis:
            marks.add_analysis(measures, voiced)
        if lead and info.only_part is None:
            marks.concert_symbols(measures)
        finish_part(p, measures, line, shift, respell)
        score.insert(0, p)
    if info.only_part is None:
        marks.add_part_groups(score, voiced.section)
        marks.page_credits(score, info.title, info.concert)
    else:
        marks.page_credits(score, info.title, info.concert, voiced.section.parts[info.only_part].name)
    return score


def part_skeleton(part, index: int, abbreviation: str, harmonized, concert: bool):  # noqa: ANN001, ANN201
    """An empty part ``P{index+1}`` and its measures: the pickup as an implicit measure 0
    (MusicXML 4.0), instrument, clef, key and time in the first, a key signature
    wherever the key changes by bar."""
    from music21 import key, meter, stream

    line = harmonized.line
    shift = 1 if line.pickup else 0
    p = stream.Part(id=f"P{index + 1}")
    p.atSoundingPitch = True
    p.partName = part.name
    p.partAbbreviation = abbreviation
    measures = []
    for m_i in range(line.measures):
        m = stream.Measure(number=m_i + 1 - shift)
        if shift and m_i == 0:          # the pickup: measure 0, implicit (MusicXML 4.0)
            m.showNumber = stream.enums.ShowNumber.NEVER
            m.paddingLeft = float(line.meter.bar - line.pickup)
        if m_i == 0:
            m.insert(0, _instrument(part, index, concert))
            m.insert(0, _clef(part.instrument.clef))
            m.insert(0, key.Key(m21_name(harmonized.key.tonic_name), harmonized.key.signature_mode))
            m.insert(0, meter.TimeSignature(str(line.meter)))
        elif harmonized.key_at(m_i + 1 - shift) != harmonized.key_at(m_i - shift):
            kc = harmonized.key_at(m_i + 1 - shift)   # a key change by bar
            m.insert(0, key.Key(m21_name(kc.tonic_name), kc.signature_mode))
        measures.append(m)
    return p, measures


def finish_part(p, measures: list, line, shift: int, written: bool) -> None:  # noqa: ANN001
    """Rests into every gap, tuplet brackets, the final bar line, the measures into
    the part; a transposing part is then put in written pitch with its accidentals."""
    from music21 import bar

    bar_len = line.meter.bar
    for m_i, m in enumerate(measures):
        m_start = -line.pickup if shift and m_i == 0 else (m_i - shift) * bar_len
        m_len = line.pickup if shift and m_i == 0 else bar_len
        _fill_rests(m, m_len, line.meter, m_start, line.pickup)
        _tuplet_brackets(m)
    for ps in line.passages[1:]:     # a form: a double bar where each passage begins
        m_i = ps.first_bar - 1 + shift
        if 0 < m_i < len(measures):
            measures[m_i - 1].rightBarline = bar.Barline("double")
    measures[-1].rightBarline = bar.Barline("final")
    for m in measures:
        p.append(m)
    if written:
        written_accidentals(p)


def written_accidentals(p) -> None:  # noqa: ANN001
    """Put a transposing part in written pitch now (music21 transposes notes, keys and
    symbols by the instrument's interval, keeping the letter spelling) and print each
    accidental where the written key signature and the measure so far do not already
    give it (common practice of engraving).  The exporter then leaves the part as is."""
    from music21 import key, note, stream

    p.toWrittenPitch(inPlace=True)
    sharps = 0
    for m in p.getElementsByClass(stream.Measure):
        for ks in m.getElementsByClass(key.KeySignature):
            sharps = ks.sharps
        sig = signature_alters(sharps)
        shown: dict[tuple[str, int], int] = {}
        for nt in sorted(m.getElementsByClass(note.Note), key=lambda n: n.offset):
            step, octave = nt.pitch.step, nt.pitch.octave
            alter = int(nt.pitch.alter)
            tied_over = nt.tie is not None and nt.tie.type in ("stop", "continue")
            need = alter != shown.get((step, octave), sig.get(step, 0)) and not tied_over
            shown[(step, octave)] = alter
            _show_accidental(nt, need)


def _show_accidental(nt, need: bool) -> None:  # noqa: ANN001
    from music21 import pitch

    if nt.pitch.accidental is None:
        if need:
            nt.pitch.accidental = pitch.Accidental("natural")
            nt.pitch.accidental.displayStatus = True
        return
    nt.pitch.accidental.displayStatus = need


def _accidental(nt, pc, shown: dict[tuple[int, str, int], int], k) -> None:  # noqa: ANN001
    """Print an accidental only where the key signature and the measure so far do
    not already give it (common practice of engraving); a tied-over note never."""
    sig = signature_alters(k.fifths)
    step, octave = nt.pitch.step, nt.pitch.octave
    alter = int(nt.pitch.alter)
    slot = (pc.measure, step, octave)
    need = alter != shown.get(slot, sig.get(step, 0)) and not pc.tie_stop
    shown[slot] = alter
    _show_accidental(nt, need)


def signature_alters(fifths: int) -> dict[str, int]:
    """The alteration a key signature of ``fifths`` gives each letter (sharps F C G ...)."""
    order = "FCGDAEB"
    return {x: 1 for x in order[:fifths]} if fifths >= 0 else {x: -1 for x in order[::-1][:-fifths]}


def piece_note(name: str, pc):  # noqa: ANN001, ANN201
    """A music21 Note for one notation piece: its value and its tie to the next piece."""
    from music21 import note

    nt = note.Note(name)
    nt.duration = _duration(pc.duration)
    if pc.tie_start and pc.tie_stop:
        nt.tie = _tie("continue")
    elif pc.tie_start:
        nt.tie = _tie("start")
    elif pc.tie_stop:
        nt.tie = _tie("stop")
    return nt


def _tie(kind: str):  # noqa: ANN202
    from music21 import tie

    return tie.Tie(kind)


def _offset(q: Fraction) -> float | Fraction:
    """music21 keeps triplet offsets exact only as Fractions."""
    return q if q.denominator % 3 == 0 else float(q)


def _duration(q: Fraction):  # noqa: ANN202
    from music21 import duration

    return duration.Duration(q)


def _articulation(name: str):  # noqa: ANN202
    from music21 import articulations

    return {"accent": articulations.Accent, "staccato": articulations.Staccato,
            "tenuto": articulations.Tenuto}[name]()


def _tuplet_brackets(m) -> None:  # noqa: ANN001
    """Bracket each run of triplets that fills a beat division (tuplet start/stop)."""
    run: list = []
    total = Fraction(0)
    for n in m.notesAndRests:
        tup = n.duration.tuplets
        if not tup:
            run, total = [], Fraction(0)
            continue
        run.append(n)
        total += Fraction(n.quarterLength).limit_denominator(96) * 3 / 2
        if total.denominator == 1 and total in (1, 2):    # a full triplet group: 3 in the time of 2
            if len(run) == 1:
                run[0].duration.tuplets[0].type = "startStop"
            else:
                run[0].duration.tuplets[0].type = "start"
                run[-1].duration.tuplets[0].type = "stop"
            run, total = [], Fraction(0)


def _fill_rests(m, bar_len: Fraction, meter=None, start: Fraction = Fraction(0),  # noqa: ANN001
                pickup: Fraction = Fraction(0)) -> None:
    """Rests in every gap of measure ``m`` (``bar_len`` long, starting at time
    ``start``), cut by the notation rules for rests of the meter."""
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
        for pc in pieces(start + off, dur, meter or bar_len, pickup=pickup, rest=True):
            r = note.Rest()
            r.duration = _duration(pc.duration)
            if pc.whole_bar:
                r.fullMeasure = True
            m.insert(_offset(pc.offset), r)


def swing_ratio(line) -> tuple[int, int] | None:  # noqa: ANN001
    """``(first, second)`` of the MusicXML 4.0 ``<swing>`` element for a swung
    line written in straight eighths; None where playback is straight."""
    if line.groove not in ("swing", "shuffle") or line.notate == "12/8":
        return None
    r = Fraction(line.swing).limit_denominator(100)
    return r.numerator, r.denominator - r.numerator


def _add_swing(data: bytes, ratio: tuple[int, int]) -> bytes:
    """Put ``<swing>`` (MusicXML 4.0 playback; music21 cannot write it) into the
    ``<sound>`` of the first part's opening tempo direction."""
    import xml.etree.ElementTree as ET

    at = data.index(b"<score-partwise")
    head, body = data[:at], data[at:]
    root = ET.fromstring(body)
    part = root.find("part")
    assert part is not None
    measure = part.find("measure")
    assert measure is not None
    sound = next((s for s in measure.iter("sound") if "tempo" in s.attrib), None)
    if sound is None:
        direction = ET.Element("direction")
        ET.SubElement(ET.SubElement(direction, "direction-type"), "words").text = "Swing"
        sound = ET.SubElement(direction, "sound")
        first_note = next((i for i, el in enumerate(measure) if el.tag == "note"), len(measure))
        measure.insert(first_note, direction)
    swing = ET.Element("swing")
    ET.SubElement(swing, "first").text = str(ratio[0])
    ET.SubElement(swing, "second").text = str(ratio[1])
    ET.SubElement(swing, "swing-type").text = "eighth"
    offset = sound.find("offset")      # <swing> comes before <offset> (XSD sequence)
    if offset is not None:
        sound.insert(list(sound).index(offset), swing)
    else:
        sound.append(swing)
    ET.indent(root, space="  ")
    return head + ET.tostring(root, encoding="utf-8", xml_declaration=False) + b"\n"


def finish_xml(data: bytes, voiced: Voiced, info: ScoreInfo) -> bytes:
    """What music21 leaves out: sound ids, measure numbering, our credit line."""
    from arrange.writers.xmlfinish import finish

    return finish(data, voiced, info)
