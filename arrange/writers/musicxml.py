"""The MusicXML score and part files: the writer's face.

:func:`musicxml_bytes` builds the whole score (the lead section's parts from
:mod:`.xml_score`, the layers' parts from :mod:`.xml_layers`) and exports it;
:func:`part_bytes` one file per part in written pitch.
"""
from __future__ import annotations

from arrange.voicing.voicer import Voiced
from arrange.writers.xml_layers import add_layer_parts, layer_sounds
from arrange.writers.xml_score import ScoreInfo, _add_swing, build_score, finish_xml, swing_ratio

__all__ = ["ScoreInfo", "musicxml_bytes", "part_bytes"]


def musicxml_bytes(voiced: Voiced, info: ScoreInfo, layers: tuple = ()) -> bytes:
    from music21.musicxml.m21ToXml import GeneralObjectExporter

    score = build_score(voiced, info)
    if layers:
        add_layer_parts(score, voiced, layers, info)
    exporter = GeneralObjectExporter(score)
    exporter.makeNotation = False
    data: bytes = exporter.parse()
    ratio = swing_ratio(voiced.harmonized.line)
    if ratio is not None:
        data = _add_swing(data, ratio)
    # the kind's text already prints the whole symbol (Cm9, not Cm7 add 9)
    data = data.replace(b"<degree>", b'<degree print-object="no">')
    data = finish_xml(data, voiced, info)
    if layers:
        data = layer_sounds(data, voiced, layers)
    return data


def part_bytes(voiced: Voiced, info: ScoreInfo) -> dict[int, bytes]:
    """One MusicXML file per part, in written pitch, each with its own marks."""
    from dataclasses import replace

    return {k: musicxml_bytes(voiced, replace(info, only_part=k, concert=False))
            for k in range(len(voiced.section.parts))}
