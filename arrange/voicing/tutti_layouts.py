"""Tutti layouts and spacing rules, read from ``voicing_rules/tutti.toml`` (plain Python).

A layout says how the groups of a tutti section follow the group that carries the
lead: ``octave-below`` (part for part an octave lower) or ``stack`` (the middle: the
chord stacked on down), with the lowest part of every following group on the root.
Every entry carries its ``source`` ("common practice" or "from memory").
"""
from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

from arrange.errors import VoicingError
from arrange.voicing.sections import read_rules

__all__ = ["Layout", "TuttiRules", "layouts", "tutti_rules", "RULES"]

RULES = ("octave-below", "stack")
_WHERE = "voicing_rules/tutti.toml"


@dataclass(frozen=True, slots=True, eq=False)
class Layout:
    name: str
    description: str
    source: str                  # "common practice" or "from memory"
    others: tuple[str, ...]      # the rule of each group after the lead group (the last repeats)
    bottom: str                  # "root" or "" (the lowest part of each following group)

    def rule_for(self, k: int) -> str:
        """The rule of the ``k``-th group after the lead group (0-based)."""
        return self.others[min(k, len(self.others) - 1)]


@dataclass(frozen=True, slots=True, eq=False)
class TuttiRules:
    root_reach: int              # semitones the root may lie below the part above it
    guide_tone_parts: int        # parts that must sound each guide tone


def _source(value: object, where: str) -> str:
    if value not in ("common practice", "from memory"):
        raise VoicingError(f"source {value!r}", where=where, accepted="\"common practice\" or \"from memory\"")
    return str(value)


@lru_cache(maxsize=1)
def layouts() -> dict[str, Layout]:
    out = {}
    for name, d in read_rules("tutti.toml").get("layouts", {}).items():
        where = f"{_WHERE} [layouts.{name}]"
        others = d.get("others")
        if not isinstance(others, list) or not others or any(r not in RULES for r in others):
            raise VoicingError(f"others = {others!r}", where=where,
                               accepted="a list of rules drawn from " + ", ".join(RULES))
        bottom = d.get("bottom", "")
        if bottom not in ("root", ""):
            raise VoicingError(f"bottom = {bottom!r}", where=where, accepted="\"root\" or \"\"")
        out[name] = Layout(name, str(d.get("description", "")), _source(d.get("source"), where),
                           tuple(others), bottom)
    return out


@lru_cache(maxsize=1)
def tutti_rules() -> TuttiRules:
    d = read_rules("tutti.toml").get("rules", {})
    where = f"{_WHERE} [rules]"
    for key in ("root_reach", "guide_tone_parts"):
        _source(d.get(f"source_{key}"), f"{where}, key 'source_{key}'")
    return TuttiRules(int(d["root_reach"]), int(d["guide_tone_parts"]))
