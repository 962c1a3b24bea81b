"""The chain stage: a motif grown into a retrograde-inversion chain, and the designer.

Public entry points:

* :func:`build_chain` -> :class:`Chain` (statements, overlaps, octave placement), :func:`chain_length`
* :func:`make_spec`, :func:`parse_steps` -> :class:`DesignSpec` (what the designer looks for)
* :func:`search`, :func:`check_space` -> :class:`Design` of ranked :class:`Found` motifs

The designer (``design``, ``kernel``) uses numpy and is imported only when one of its
names is asked for, so ``arrange chain`` and ``--help`` stay light.
"""
from __future__ import annotations

from typing import Any

from arrange.chain.core import Chain, Statement, build_chain, chain_length

__all__ = ["Chain", "Statement", "build_chain", "chain_length", "DesignSpec", "make_spec", "parse_steps",
           "search", "check_space", "Design", "Found"]

_LAZY = {"search", "check_space", "Design", "Found"}
_SPEC = {"DesignSpec", "make_spec", "parse_steps"}     # the designer's spec: not needed to build a chain


def __getattr__(name: str) -> Any:
    if name in _LAZY:
        from arrange.chain import design

        return getattr(design, name)
    if name in _SPEC:
        from arrange.chain import spec

        return getattr(spec, name)
    raise AttributeError(name)
