"""The rhythm-section stage: what piano, guitar, bass and drums read, as values.

Public entry points:

* :func:`read_options` (the ``[rhythm_section]`` table) -> :class:`RhythmSectionOptions`
* :func:`build_rhythm_section` (harmonized, options) -> :class:`RhythmSection` (or None):
  the bass line (:class:`BassNote`), the comping slashes piano and guitar share
  (:class:`Slash`), the drum part (:class:`DrumPart`: time, cues, fills, and the
  General MIDI hits of the mock-up)

Inside: ``bass`` (the line per groove), ``comping`` (slashes, figures, chords),
``drums`` (time, cues, fills, pattern), ``values`` (the frozen values), ``options``.
Plain Python; no music21, no files.  The writers turn these values into the
written parts and the MIDI tracks, so page and playback agree.
"""
from __future__ import annotations

from arrange.rhythm_section.options import (
    BASS_INSTRUMENTS,
    BASS_STYLES,
    RhythmSectionOptions,
    read_options,
    style_for,
)
from arrange.rhythm_section.section import build_rhythm_section
from arrange.rhythm_section.values import PARTS, BassNote, Cue, DrumHit, DrumPart, RhythmSection, Slash

__all__ = ["read_options", "RhythmSectionOptions", "build_rhythm_section", "RhythmSection", "BassNote",
           "Slash", "Cue", "DrumHit", "DrumPart", "PARTS", "BASS_STYLES", "BASS_INSTRUMENTS", "style_for"]
