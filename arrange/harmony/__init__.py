"""The harmony stage: a :class:`~arrange.rhythm.Line` in, a :class:`Harmonized` out.

Public entry points:

* :func:`read_options` (the ``[harmony]`` table) -> :class:`HarmonyOptions`
* :func:`harmonize` (line, key, options) -> :class:`Harmonized`: per lead note an :class:`Event`
  (its chord, role, technique, lead function), the :class:`FrameworkChord` list and key changes
* :func:`transpose_key`, :func:`transpose_chord`, :func:`lead_function`
* ``TECHNIQUES`` -- the approach techniques, ``PRESETS`` -- named frameworks

Inside: ``approach`` classifies lead notes and finds approach chords, ``walk`` walks the
line right to left choosing them, ``events`` holds the values the later stages read.
"""
from arrange.harmony.approach import TECHNIQUES
from arrange.harmony.events import Event, FrameworkChord, Harmonized
from arrange.harmony.harmonizer import (
    PRESETS,
    HarmonyOptions,
    harmonize,
    lead_function,
    read_options,
    transpose_chord,
    transpose_key,
)

__all__ = ["read_options", "harmonize", "HarmonyOptions", "Harmonized", "Event", "FrameworkChord",
           "transpose_key", "transpose_chord", "lead_function", "TECHNIQUES", "PRESETS"]
