"""An optional rhythm-section mock-up for the MIDI file: bass and drums.

Bass: the framework roots (and fifths) in the bass register, E1..Eb2, in a
pattern that fits the groove.  Drums: a time-keeping pattern on the General
MIDI percussion channel, with the GM 1 percussion key map (from the General
MIDI 1 specification: 36 bass drum, 38 snare, 42 closed hi-hat, 44 pedal
hi-hat, 51 ride cymbal, 75 claves).  Off-beat eighths are swung by the line's
swing ratio, like the section's notes.  Every value is (start, length,
MIDI key, accent) in performed quarter notes.
"""
from __future__ import annotations

from fractions import Fraction

from arrange.voicing.voicer import Voiced

__all__ = ["bass_notes", "drum_notes", "BASS_LOW"]

BASS_LOW = 28          # E1, the open low string of a four-string bass (from memory)
KICK, SNARE, CLOSED_HAT, PEDAL_HAT, RIDE, CLAVES = 36, 38, 42, 44, 51, 75

Hit = tuple[Fraction, Fraction, int, int]


def _perf(t: Fraction, swing: float, groove: str) -> Fraction:
    """Written time -> performed time: an off-beat eighth moves to the swing point."""
    if groove not in ("swing", "shuffle") or swing == 0.5:
        return t
    beat, pos = divmod(t, 1)
    if pos == Fraction(1, 2):
        return beat + Fraction(swing).limit_denominator(100)
    return t


def _bass_pitch(pc: int) -> int:
    return BASS_LOW + (pc - BASS_LOW) % 12


def bass_notes(voiced: Voiced) -> list[Hit]:
    line = voiced.harmonized.line
    groove = line.groove
    out: list[Hit] = []
    for fc in voiced.harmonized.framework:
        root = _bass_pitch(fc.chord.root)
        fifth = _bass_pitch(fc.chord.root + 7)
        start, length = fc.onset, fc.duration
        beats = int(length)
        if groove in ("swing", "shuffle"):
            # a walking feel on roots and fifths: one note a beat
            for b in range(max(beats, 1)):
                out.append((start + b, Fraction(1) if beats else length,
                            fifth if b % 4 == 2 else root, 8 if b == 0 else 0))
        elif groove == "latin":
            # anticipated bass: root on the and of 2, fifth on 4 (common practice)
            if length >= 4:
                out.append((start + Fraction(3, 2), Fraction(5, 2), root, 8))
                out.append((start + 3, Fraction(1), fifth, 0))
            else:
                out.append((start, length, root, 8))
        else:
            half = length / 2 if length >= 2 else length
            out.append((start, half, root, 8))
            if length >= 2:
                out.append((start + half, half, fifth, 0))
    return [(_perf(s, line.swing, groove), d, p, a) for s, d, p, a in out if s < line.total]


def drum_notes(voiced: Voiced) -> list[Hit]:
    line = voiced.harmonized.line
    groove = line.groove
    bar = line.meter.bar
    beats = int(bar)
    short = Fraction(1, 4)
    out: list[Hit] = []
    for m in range(line.bars):
        t0 = m * bar
        if groove in ("swing", "shuffle"):
            for b in range(beats):
                out.append((t0 + b, short, RIDE, 6 if b % 2 else 0))
                if b % 2 == 1:
                    out.append((t0 + b, short, PEDAL_HAT, 0))
                    out.append((t0 + b + Fraction(1, 2), short, RIDE, -10))
        elif groove == "latin":
            clave = (0, Fraction(3, 2), 3) if m % 2 == 0 else (1, 2)     # 3-2 son clave
            for c in clave:
                if c < bar:
                    out.append((t0 + c, short, CLAVES, 10))
            for e in range(beats * 2):
                out.append((t0 + Fraction(e, 2), short, CLOSED_HAT, 0 if e % 2 else 6))
            out.append((t0, short, KICK, 8))
        else:
            for e in range(beats * 2):
                out.append((t0 + Fraction(e, 2), short, CLOSED_HAT, 0 if e % 2 else 6))
            for b in range(beats):
                out.append((t0 + b, short, KICK if b % 2 == 0 else SNARE, 8))
    return sorted((_perf(s, line.swing, groove), d, p, a) for s, d, p, a in out if s < line.total)
