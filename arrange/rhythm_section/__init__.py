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

from typing import Any

from arrange.rhythm_section.options import (
    BASS_INSTRUMENTS,
    BASS_STYLES,
    PARTS,
    RhythmSectionOptions,
    read_options,
    style_for,
)

__all__ = ["read_options", "RhythmSectionOptions", "build_rhythm_section", "RhythmSection", "BassNote",
           "Slash", "Cue", "DrumHit", "DrumPart", "PARTS", "BASS_STYLES", "BASS_INSTRUMENTS", "style_for"]

# the parts and their values are loaded when first asked for: reading a project that
# writes no rhythm section never imports them
_LAZY = {"build_rhythm_section": "section", "RhythmSection": "values", "BassNote": "values", "Slash": "values",
         "Cue": "values", "DrumHit": "values", "DrumPart": "values"}


def __getattr__(name: str) -> Any:
    if name in _LAZY:
        import importlib

        return getattr(importlib.import_module(f"arrange.rhythm_section.{_LAZY[name]}"), name)
    raise AttributeError(name)
