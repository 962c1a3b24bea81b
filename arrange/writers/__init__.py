"""Writers: the only code that touches the disk; each format is its own module.

* :mod:`.musicxml`  -- ``musicxml_bytes``, ``part_bytes``: score and part files (built by
  :mod:`.xml_score` and :mod:`.xml_layers`, finished by :mod:`.xmlfinish`, chord symbols
  from :mod:`.symbols`, marks from :mod:`.marks`)
* :mod:`.midi`      -- ``midi_bytes``: Standard MIDI File (with :mod:`.rhythm_section`)
* :mod:`.report`    -- ``report_data``, ``report_json``, ``report_markdown``
* :mod:`.preview`   -- ``svg_bytes``, ``png_bytes``; :mod:`.audio` -- ``wav_bytes``
* :mod:`.files`     -- ``write_batch``: atomic writing of a batch of outputs
* :mod:`.cache`     -- ``user_store``: the user's cache folder (what a melody file says, as JSON)
* :mod:`.common`    -- helpers more than one format shares (no format imports another's writer)
"""
__all__ = ["files", "musicxml", "midi", "report", "preview", "audio", "common"]
