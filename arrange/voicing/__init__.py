"""The voicing stage: harmonized events voiced for a section, and background layers.

Public entry points:

* :func:`get_section`, :func:`section_from_table` -> :class:`Section`
  (instruments and sections from ``voicing_rules/``)
* :func:`read_options` (the ``[section]`` table) and :func:`voice` (harmonized, section,
  options) -> :class:`Voiced`: one sounding pitch per part at every event, rule findings
* :func:`read_layers` (``[[layers]]``) and :func:`build_layers` (harmonized, voiced, layers)
  -> tuple of :class:`VoicedLayer` (pads and hits)

Inside: ``shapes`` lists candidate voicings from the recipes, ``rules`` marks rule breaks
(plain Python, for one voicing or a numpy column of many), ``pads`` the background chord
candidates (plain Python, imported only by a project with layers).  The search and layer modules
are imported only when one of their names is asked for, so reading sections stays light.
"""
from __future__ import annotations

from typing import Any

from arrange.voicing.sections import Instrument, Part, Section, get_section, section_from_table

__all__ = ["Section", "Part", "Instrument", "get_section", "section_from_table",
           "read_options", "voice", "Voiced", "VoicingOptions", "read_layers", "build_layers",
           "Layer", "VoicedLayer"]

_LAZY = {"read_options": "voicer", "voice": "voicer", "Voiced": "voicer", "VoicingOptions": "voicer",
         "read_layers": "layers", "build_layers": "layers", "Layer": "layers", "VoicedLayer": "layers"}


def __getattr__(name: str) -> Any:
    if name in _LAZY:
        import importlib

        return getattr(importlib.import_module(f"arrange.voicing.{_LAZY[name]}"), name)
    raise AttributeError(name)
