"""The rhythm section's MIDI tracks, from the stage's values (the parts' own notes).

Each written value becomes one MIDI note: a bass note at its sounding pitch, a
comping slash as the chord it names (every slash one chord, rests silent), the
drum part's General MIDI hits on the percussion channel (channel 10, GM 1).
Swing and shuffle written as straight eighths are performed with the line's
swing ratio, exactly as the section's notes are.  Every value is
``(start, length, MIDI key, accent)`` in performed quarter notes.
"""
from __future__ import annotations

from fractions import Fraction

from arrange.rhythm.groove import swing_fraction, warp
from arrange.rhythm.line import Line
from arrange.rhythm_section.values import RhythmSection
from arrange.voicing.sections import instruments

__all__ = ["rhythm_tracks", "perform", "DRUM_CHANNEL", "TRACK_NAMES"]

Hit = tuple[Fraction, Fraction, int, int]
DRUM_CHANNEL = 9          # 0-based: General MIDI percussion channel 10
TRACK_NAMES = {"guitar": "Guitar", "piano": "Piano", "bass": "Bass", "drums": "Drums"}


def perform(line: Line, t: Fraction) -> Fraction:
    """Written time -> performed time, as the rhythm stage performs the lead."""
    if line.notate == "12/8" or line.swing == 0.5:
        return t
    return warp(t, swing_fraction(line.swing))


def _span(line: Line, onset: Fraction, duration: Fraction) -> tuple[Fraction, Fraction]:
    on = perform(line, onset) + line.pickup
    return on, perform(line, onset + duration) + line.pickup - on


def rhythm_tracks(rs: RhythmSection, line: Line) -> list[tuple[str, int | None, list[Hit]]]:
    """(track name, GM program or None for drums, hits) per asked part, score order;
    times from the file's start (a pickup shifts them, as the lead's)."""
    out: list[tuple[str, int | None, list[Hit]]] = []
    for part in rs.parts:
        hits: list[Hit] = []
        if part in ("piano", "guitar"):
            program = instruments()[part].program
            for s in rs.comping:
                if s.rest:
                    continue
                on, length = _span(line, s.onset, s.duration)
                hits.extend((on, length, p, 6 if s.kind == "hit" else 0) for p in s.pitches)
        elif part == "bass":
            program = instruments()[rs.bass_instrument].program
            for n in rs.bass:
                on, length = _span(line, n.onset, n.duration)
                hits.append((on, length, n.pitch, 8 if n.role == "root" else 0))
        else:
            program = None
            for h in rs.drums.hits if rs.drums is not None else ():
                on, length = _span(line, h.onset, h.duration)
                hits.append((on, length, h.key, h.accent))
        out.append((TRACK_NAMES[part], program, sorted(hits)))
    return out
