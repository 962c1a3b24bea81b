"""Input readers: material that comes from outside the project file.

Public entry points:

* :func:`read_motif_file` -- a motif from a MusicXML or MIDI file (``motif = "file:..."``)

Pitch text (``"A4 G4 C5"``) is read by :func:`arrange.theory.parse_pitches`, which every
stage shares.  Readers are the only modules besides the writers that may import music21.
"""
from arrange.inputs.motif_file import read_motif_file

__all__ = ["read_motif_file"]
