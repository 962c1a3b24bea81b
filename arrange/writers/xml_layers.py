"""Background layers in the MusicXML files: score parts and printable part files.

* :func:`add_layer_parts` -- one music21 part per layer part, after the lead
  section's parts, each section grouped and bracketed (MusicXML ``<part-group>``);
* :func:`layer_part_bytes` -- one printable file per layer part.

(The layers' MIDI tracks are written by :mod:`.midi`, their report entries by :mod:`.report`.)
"""
from __future__ import annotations

from arrange.rhythm.notation import pieces
from arrange.voicing.layers import VoicedLayer
from arrange.voicing.voicer import Voiced

__all__ = ["add_layer_parts", "layer_sounds", "layer_part_bytes"]


def _bracket(score, parts) -> None:  # noqa: ANN001
    """One section's parts in a bracketed group (no group name: printed beside the
    part names it would crowd them)."""
    from music21 import layout

    group = layout.StaffGroup(parts, symbol="bracket", barTogether=True)
    score.insert(0, group)


def add_layer_parts(score, voiced: Voiced, layers: tuple[VoicedLayer, ...], info=None) -> None:  # noqa: ANN001
    """Append the layers' parts to ``score`` (built by ``build_score``), below the
    lead section, and bracket each section.  Notes are spelled, key signatures
    changed and accidentals printed as in the lead section's parts."""
    from music21 import dynamics, instrument, layout

    from arrange.theory.spelling import direction_of, m21_name, spell_pitch
    from arrange.writers.common import channel_for
    from arrange.writers.xml_score import (
        _accidental,
        _articulation,
        _offset,
        finish_part,
        part_skeleton,
        piece_note,
    )

    if not layers:
        return
    concert = bool(getattr(info, "concert", False))
    h = voiced.harmonized
    line = h.line
    bar_len = line.meter.bar
    shift = 1 if line.pickup else 0
    lead_parts = list(score.parts)
    grouped = {id(p) for g in score.getElementsByClass(layout.StaffGroup) for p in g.getSpannedElements()}
    if lead_parts and not any(id(p) in grouped for p in lead_parts):
        _bracket(score, lead_parts)
    index = len(lead_parts)
    for vl in layers:
        new_parts = []
        for k, part in enumerate(vl.layer.section.parts):
            p, measures = part_skeleton(part, index, part.abbreviation, h, concert)
            for inst in measures[0].getElementsByClass(instrument.Instrument):
                inst.midiChannel = channel_for(index)
            shown: dict[tuple[int, str, int], int] = {}
            respell = bool(part.instrument.transposition) and not concert
            voice = [n.pitches[k] for n in vl.notes]
            entered = False
            for i, n in enumerate(vl.notes):
                here = voice[i]
                if here is None:             # the part rests through a thinned chord
                    entered = False
                    continue
                if i and vl.notes[i - 1].onset + vl.notes[i - 1].duration < n.onset:
                    entered = False          # a rest of the rhythm: the dynamic again at the re-entrance
                way = direction_of(voice[i - 1] if i else None, here,
                                   voice[i + 1] if i + 1 < len(voice) else None)
                name = m21_name(spell_pitch(here, h.key_at(int(n.onset // bar_len) + 1), n.chord, way))
                for j, pc in enumerate(pieces(n.onset, n.duration, line.meter, pickup=line.pickup)):
                    nt = piece_note(name, pc)
                    if j == 0 and vl.layer.role == "hits":   # a hit is played accented
                        nt.articulations.append(_articulation("accent"))
                    if j == 0 and not entered:      # a dynamic at the entrance
                        measures[pc.measure].insert(_offset(pc.offset), dynamics.Dynamic(vl.layer.dynamics))
                        entered = True
                    if not respell:
                        _accidental(nt, pc, shown, h.key_at(pc.measure + 1 - shift))
                    measures[pc.measure].insert(_offset(pc.offset), nt)
            finish_part(p, measures, line, shift, respell)
            score.insert(0, p)
            new_parts.append(p)
            index += 1
        _bracket(score, new_parts)


def layer_sounds(data: bytes, voiced: Voiced, layers: tuple[VoicedLayer, ...]) -> bytes:
    """``<instrument-sound>`` (MusicXML 4.0 sound ids) for the layers' parts, which
    music21 leaves out, as ``xmlfinish`` does for the lead section's."""
    from arrange.writers.xmlfinish import add_sounds

    extra = [p for vl in layers for p in vl.layer.section.parts]
    return add_sounds(data, extra, first=len(voiced.section.parts))


def layer_part_bytes(voiced: Voiced, info, layers: tuple[VoicedLayer, ...]) -> list[tuple[str, bytes]]:  # noqa: ANN001
    """One printable MusicXML file per layer part, in written pitch, as ``--parts``
    writes the lead section's: the part alone, with the tempo, style word and
    rehearsal letters a player needs, and its own name on the first page."""
    import copy
    from dataclasses import replace

    from music21 import expressions, stream, tempo
    from music21.musicxml.m21ToXml import GeneralObjectExporter

    from arrange.writers import marks
    from arrange.writers.xml_score import build_score, finish_xml

    names = [p.name for vl in layers for p in vl.layer.section.parts]
    one = replace(info, only_part=None, concert=False)
    full = build_score(voiced, one)        # built once; each layer part is lifted out of it
    add_layer_parts(full, voiced, layers, one)
    parts = list(full.parts)
    lead_first = parts[0].getElementsByClass(stream.Measure)[0]
    heading = [el for el in lead_first.getElementsByClass((tempo.MetronomeMark, expressions.TextExpression))
               if isinstance(el, tempo.MetronomeMark) or el.content == info.style]
    out = []
    for j, name in enumerate(names):
        keep = parts[len(voiced.section.parts) + j]
        first = keep.getElementsByClass(stream.Measure)[0]
        for el in heading:
            first.insert(el.offset, copy.deepcopy(el))
        marks.add_rehearsal(list(keep.getElementsByClass(stream.Measure)), voiced)
        score = stream.Score(id="score")
        score.atSoundingPitch = full.atSoundingPitch
        score.metadata = full.metadata
        score.insert(0, keep)
        marks.page_credits(score, info.title, False, name)
        exporter = GeneralObjectExporter(score)
        exporter.makeNotation = False
        data: bytes = exporter.parse()
        data = finish_xml(data, voiced, one)
        data = layer_sounds(data, voiced, layers)
        out.append((name, data))
    return out
