"""Input reader: a motif taken from an existing score (``motif = "file:theme.musicxml"``).

The first N notes of the top part, at sounding (concert) pitch, read with
music21 (imported lazily, only when a project asks for a file).  MusicXML
(``.musicxml``, ``.xml``) and Standard MIDI Files (``.mid``, ``.midi``) are
read.  A MusicXML file that declares entities is refused before parsing, so no
external entity is ever fetched and no entity expansion can blow up; the
parser music21 uses (expat) never fetches external DTDs either.
"""
from __future__ import annotations

import re
from pathlib import Path

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
    try:
        size = path.stat().st_size
        if size > MAX_BYTES:
            raise ProjectError(f"motif file {str(path)!r} is {size} bytes", where=where,
                               accepted=f"a file under {MAX_BYTES} bytes")
        data = path.read_bytes()
    except OSError as err:
        raise ProjectError(f"motif file {str(path)!r} cannot be read: {err.strerror}", where=where,
                           accepted=accepted) from None
    is_midi = path.suffix.lower() in (".mid", ".midi")
    if not is_midi and _ENTITY.search(data):
        raise ProjectError(f"motif file {str(path)!r} declares XML entities", where=where,
                           accepted="MusicXML without <!ENTITY> declarations")
    pitches = _top_part_pitches(data, is_midi, path, where, accepted)
    if len(pitches) < count:
        raise ProjectError(f"motif file {str(path)!r} has {len(pitches)} note"
                           f"{'s' if len(pitches) != 1 else ''} in its top part, {count} asked for",
                           where=where, accepted=f"a top part with at least {count} notes, "
                           "or a smaller motif_length")
    return tuple(pitches[:count])


def _top_part_pitches(data: bytes, is_midi: bool, path: Path, where: str, accepted: str) -> list[int]:
    import warnings

    from music21 import converter, stream

    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            if is_midi:
                score = converter.parseData(data, format="midi")
            else:
                score = converter.parseData(data.decode("utf-8", errors="strict"), format="musicxml")
    except Exception as err:  # noqa: BLE001 - any parser fault is bad input here
        raise ProjectError(f"motif file {str(path)!r} cannot be read as "
                           f"{'MIDI' if is_midi else 'MusicXML'}: {type(err).__name__}",
                           where=where, accepted=accepted) from None
    from arrange.inputs.melody_file import lead_notes

    # chord symbols, grace notes and rests are no motif notes; a chord gives its top note
    # (one definition of a lead note, shared with the melody reader)
    parts = list(score.parts) if isinstance(score, stream.Score) else [score]
    top = next((p for p in parts if lead_notes(p)), None)
    if top is None:
        return []
    if not is_midi:
        top = top.toSoundingPitch()
    return [pitch for _on, _dur, pitch in lead_notes(top)]
