"""The vocabulary every stage shares: pitches, chord symbols, keys and scales, spelling.

Public entry points (the rest of the package is private):

* :func:`parse_pitch`, :func:`parse_pitches`, :func:`pitch_name` -- pitch text <-> MIDI ints (C4 = 60)
* :class:`Chord`, :func:`parse_chord`, :func:`chord_scale_for` -- chord symbols and their usual scales
* :class:`Key`, :func:`parse_key`, :func:`parse_key_change`, :func:`chord_scale_in_key`, ``MODES``
* :func:`tensions_in_scale`, ``CHORD_SCALES`` -- available tensions (common jazz practice)
* :func:`spell_pitch`, :func:`spell_pc`, :func:`root_spelling`, :func:`direction_of` -- spelled names
* ``DYNAMICS`` -- the dynamic marks, softest first

A leaf package: it imports nothing of the project but :mod:`arrange.errors`.
"""
from arrange.theory.chords import Chord, chord_scale_for, parse_chord
from arrange.theory.dynamics import DYNAMICS
from arrange.theory.keys import Key, chord_scale_in_key, parse_key, parse_key_change
from arrange.theory.pitch import parse_pitch, parse_pitches, pitch_name
from arrange.theory.scales import CHORD_SCALES, MODES, tensions_in_scale
from arrange.theory.spelling import direction_of, root_spelling, spell_pc, spell_pitch

__all__ = ["parse_pitch", "parse_pitches", "pitch_name", "Chord", "parse_chord", "chord_scale_for",
           "Key", "parse_key", "parse_key_change", "chord_scale_in_key", "MODES", "CHORD_SCALES",
           "tensions_in_scale", "spell_pitch", "spell_pc", "root_spelling", "direction_of", "DYNAMICS"]
