"""Input reader: a motif taken from an existing score (``motif = "file:theme.musicxml"``).

The first N notes of the top part, at sounding (concert) pitch.  MusicXML
(``.musicxml``, ``.xml``) and Standard MIDI Files (``.mid``, ``.midi``) are read.

Read safely: only a regular file (after links are followed: no device, FIFO,
socket or folder), at most :data:`MAX_BYTES` bytes, checked before reading.  A
MIDI file is read by our bounded reader (:mod:`arrange.inputs.smf`), which stops
once the notes asked for are known and refuses any length or delta time that runs
past the file.  A MusicXML file that declares entities is refused before parsing
(no external entity is fetched, no expansion can blow up; expat never fetches
external DTDs either); the top part is cut after the measures that hold the notes
asked for (a streaming pass), and only that is read with music21 (imported lazily).
A note outside MIDI 0..127 is an error, never moved into range.
"""
from __future__ import annotations

import re
from pathlib import Path

from arrange.checked import read_regular
from arrange.errors import ProjectError

__all__ = ["read_motif_file", "SUFFIXES", "MAX_BYTES"]

SUFFIXES = (".musicxml", ".xml", ".mid", ".midi")
MAX_BYTES = 5_000_000
_ENTITY = re.compile(rb"<!ENTITY", re.I)


def read_motif_file(path: Path, count: int, *, where: str) -> tuple[int, ...]:
    """The first ``count`` notes (MIDI numbers, sounding) of the top part of ``path``."""
    accepted = "a readable MusicXML (.musicxml, .xml) or MIDI (.mid, .midi) file, " \
               "given relative to the project file, e.g. \"file:theme.musicxml\""
    if path.suffix.lower() not in SUFFIXES:
        raise ProjectError(f"motif file {str(path)!r} has the suffix {path.suffix or '(none)'!r}",
                           where=where, accepted=accepted)
    data = read_regular(path, MAX_BYTES, where=where, what="motif file", accepted=accepted)
    is_midi = path.suffix.lower() in (".mid", ".midi")
    if not is_midi and _ENTITY.search(data):
        raise ProjectError(f"motif file {str(path)!r} declares XML entities", where=where,
                           accepted="MusicXML without <!ENTITY> declarations")
    if is_midi:
        from arrange.inputs.smf import SmfError, first_notes

        try:
            pitches = first_notes(data, count)
        except SmfError as err:
            raise ProjectError(f"motif file {str(path)[:80]!r} cannot be read as MIDI: {err}",
                               where=where, accepted=accepted) from None
    else:
        pitches = _top_part_pitches(_first_measures(data, count), path, where, accepted)
    if len(pitches) < count:
        raise ProjectError(f"motif file {str(path)!r} has {len(pitches)} note"
                           f"{'s' if len(pitches) != 1 else ''} in its top part, {count} asked for",
                           where=where, accepted=f"a top part with at least {count} notes, "
                           "or a smaller motif_length")
    return tuple(pitches[:count])


def _first_measures(data: bytes, count: int) -> bytes:
    """The score cut down to its first part with notes, up to one measure past the
    measure where ``count`` notes are complete (a tie into it included); the
    streaming pass stops there.  A file that is not partwise MusicXML is passed on
    whole (music21 then says what is wrong)."""
    import io
    import xml.etree.ElementTree as ET

    root = part_list = part = None
    total = extra = 0
    try:
        for ev, el in ET.iterparse(io.BytesIO(data), events=("start", "end")):
            tag = _local(el.tag)
            if root is None:
                if tag != "score-partwise":
                    return data
                root = el
            elif ev == "start" and tag == "part" and part is None:
                part, total, extra = el, 0, 0
            elif ev == "end" and tag == "part-list":
                part_list = el
            elif ev == "end" and tag == "measure" and part is not None:
                if total > count:
                    extra += 1
                total += sum(1 for n in el.iter() if _local(n.tag) == "note" and not _is_rest_or_chord(n))
                if extra:
                    break
            elif ev == "end" and tag == "part" and part is not None:
                if total:
                    break
                el.clear()                                  # a part without notes: the next one
                part = None
    except ET.ParseError:
        return data
    if root is None or part is None or not total:
        return data
    out = ET.Element(root.tag, root.attrib)
    if part_list is not None:
        out.append(part_list)
    cut = ET.SubElement(out, part.tag, part.attrib)
    cut.extend(m for m in part if _local(m.tag) == "measure")
    return ET.tostring(out, encoding="utf-8", xml_declaration=True)


def _local(tag: str) -> str:
    return tag.rsplit("}", 1)[-1]


def _is_rest_or_chord(note) -> bool:  # noqa: ANN001 - an ElementTree element
    kids = {_local(k.tag) for k in note}
    return "rest" in kids or "chord" in kids or "grace" in kids


def _top_part_pitches(data: bytes, path: Path, where: str, accepted: str) -> list[int]:
    import warnings

    from music21 import converter, stream

    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            score = converter.parseData(data.decode("utf-8", errors="strict"), format="musicxml")
    except Exception as err:  # noqa: BLE001 - any parser fault is bad input here
        raise ProjectError(f"motif file {str(path)[:80]!r} cannot be read as MusicXML: "
                           f"{type(err).__name__}", where=where, accepted=accepted) from None
    from arrange.inputs.melody_file import lead_notes

    # chord symbols, grace notes and rests are no motif notes; a chord gives its top note
    # (one definition of a lead note, shared with the melody reader)
    parts = list(score.parts) if isinstance(score, stream.Score) else [score]
    top = next((p for p in parts if lead_notes(p)), None)
    if top is None:
        return []
    top = top.toSoundingPitch()
    for n in top.flatten().notes:                  # music21's .midi would move them into range
        bad = next((p for p in getattr(n, "pitches", ()) if not 0 <= round(p.ps) <= 127), None)
        if bad is not None:
            raise ProjectError(f"motif file {str(path)[:80]!r}: the note {bad.nameWithOctave} "
                               f"(MIDI {round(bad.ps)}) is outside MIDI 0..127", where=where,
                               accepted="notes from C-1 (0) to G9 (127)")
    return [pitch for _on, _dur, pitch in lead_notes(top)]
