"""Writers: the only code that touches the disk.

* :mod:`.musicxml` -- ``Voiced`` to MusicXML bytes (via music21)
* :mod:`.midi`     -- ``Voiced`` to Standard MIDI File bytes (via music21.midi)
* :mod:`.report`   -- ``Voiced`` to the JSON (and Markdown) report
* :mod:`.files`    -- atomic writing of a batch of outputs
"""
__all__ = ["files", "musicxml", "midi", "report"]
