"""The rhythm stage: a chain (or lead line) laid out in time, with its groove.

Public entry points:

* :func:`read_options` (the ``[rhythm]`` table) -> :class:`RhythmOptions`
* :func:`lay_rhythm` (chain, meter, options) -> :class:`Line` of :class:`Note` (``Fraction`` quarter notes)
* :func:`parse_meter` -> :class:`Meter`; :func:`metric_weight`
* :func:`parse_cell` -- note-value cells; :func:`warp` -- swing and shuffle performance times
* :func:`pieces` -- a note or rest cut into tied, readable pieces (the engraving rules)
"""
from arrange.rhythm.cells import parse_cell
from arrange.rhythm.groove import GROOVES, warp
from arrange.rhythm.line import Line, Note, RhythmOptions, StatementSpan, lay_rhythm, read_options
from arrange.rhythm.meter import Meter, metric_weight, parse_meter
from arrange.rhythm.notation import Piece, pieces

__all__ = ["read_options", "lay_rhythm", "Line", "Note", "RhythmOptions", "StatementSpan", "parse_meter",
           "Meter", "metric_weight", "parse_cell", "warp", "GROOVES", "pieces", "Piece"]
