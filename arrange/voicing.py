"""Voicing stage: a :class:`~arrange.harmony.Harmonized` in, a :class:`Voiced` out.

Foundation version: 4-way close under the lead (the lead on top, the other
three chord tones in the octave below it; a lead note outside the chord
replaces the chord tone just under it), for four-part sections.
"""
from __future__ import annotations

from dataclasses import dataclass

from .chords import Chord
from .errors import VoicingError
from .harmony import Event, Harmonized
from .pitch import pitch_name
from .sections import Section
from .tables import Table

__all__ = ["Finding", "VoicedEvent", "Voiced", "VoicingOptions", "read_options", "voice", "VOICINGS"]

VOICINGS = ("close",)


@dataclass(frozen=True, slots=True)
class Finding:
    kind: str                 # e.g. "range", "low-interval", "harmony"
    event: int | None         # 0-based event index
    part: str | None          # part name
    message: str
    severity: str = "warning"  # "warning" or "error"


@dataclass(frozen=True, slots=True)
class VoicedEvent:
    event: Event
    voicing: str
    pitches: tuple[int, ...]   # sounding, top to bottom, one per part


@dataclass(frozen=True, slots=True)
class Voiced:
    harmonized: Harmonized
    section: Section
    events: tuple[VoicedEvent, ...]
    findings: tuple[Finding, ...]


@dataclass(frozen=True, slots=True)
class VoicingOptions:
    voicing: str = "close"


def read_options(table: Table) -> VoicingOptions:
    voicing = table.string("voicing", "close", choices=VOICINGS)
    return VoicingOptions(voicing)


def _four_note(chord: Chord) -> list[int]:
    pcs = list(dict.fromkeys(chord.pitch_classes))
    if len(pcs) == 3:
        # a triad: add the sixth (major) or seventh (others), as 4-way practice does
        pcs.append((chord.root + (9 if chord.quality == "" else 10)) % 12)
    return pcs[:4]


def close_voicing(lead: int, chord: Chord) -> tuple[int, ...]:
    pcs = _four_note(chord)
    lead_pc = lead % 12
    if lead_pc not in pcs:
        below = min(pcs, key=lambda pc: (lead_pc - pc) % 12)
        pcs = [lead_pc if pc == below else pc for pc in pcs]
    others = sorted((pc for pc in pcs if pc != lead_pc), key=lambda pc: (lead_pc - pc) % 12)
    return (lead,) + tuple(lead - ((lead_pc - pc) % 12 or 12) for pc in others)


def voice(harmonized: Harmonized, section: Section, options: VoicingOptions) -> Voiced:
    n = len(section.parts)
    if n != 4:
        raise VoicingError(f"section {section.name!r} has {n} parts", where="[section]",
                           accepted="a four-part section for now (trumpets-4, trombones-4)")
    events = []
    findings = []
    for i, ev in enumerate(harmonized.events):
        pitches = close_voicing(ev.note.pitch, ev.chord)
        events.append(VoicedEvent(ev, options.voicing, pitches))
        for part, p in zip(section.parts, pitches, strict=False):
            lo, hi = part.instrument.practical
            if not lo <= p <= hi:
                findings.append(Finding("range", i, part.name,
                                        f"{pitch_name(p)} lies outside the practical range "
                                        f"{pitch_name(lo)}-{pitch_name(hi)} of {part.name}"))
    return Voiced(harmonized, section, tuple(events), tuple(findings))
