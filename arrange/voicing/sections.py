"""Instruments and sections, read from the TOML files in ``voicing_rules/``.

The folder is found next to the package in a checkout, or inside the
installed package (``arrange/voicing_rules``) from a wheel.
"""
from __future__ import annotations

import tomllib
from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path
from typing import Any

from arrange.checked import whole
from arrange.errors import ProjectError, VoicingError
from arrange.tables import Table
from arrange.theory.pitch import parse_pitch, pitch_name

__all__ = ["Instrument", "Part", "Section", "data_dir", "instruments", "sections", "get_section", "tutti_section",
           "section_from_table", "read_rules", "describe_range", "MAX_PARTS", "low_interval_table", "INTERVAL_NAMES",
           "score_rank"]

MAX_PARTS = 16
INTERVAL_NAMES = ("unison", "minor second", "major second", "minor third", "major third",
                  "perfect fourth", "tritone", "perfect fifth", "minor sixth", "major sixth",
                  "minor seventh", "major seventh", "octave", "minor ninth", "major ninth",
                  "minor tenth", "major tenth")


@dataclass(frozen=True, slots=True)
class Instrument:
    """An instrument of ``voicing_rules/instruments.toml``: ranges, transposition, sound."""
    key: str
    name: str
    abbreviation: str
    practical: tuple[int, int]     # sounding MIDI
    extreme: tuple[int, int]
    transposition: int             # written minus sounding, semitones
    interval: str
    program: int                   # General MIDI, 1-based
    sound: str                     # MusicXML instrument sound id
    clef: str                      # treble | bass | alto | tenor | treble8vb


@dataclass(frozen=True, slots=True)
class Part:
    """A part of a section: its name and instrument."""
    name: str
    abbreviation: str
    instrument: Instrument


@dataclass(frozen=True, slots=True)
class Section:
    """A section: its parts top to bottom (and, in a tutti, its groups)."""
    name: str
    description: str
    parts: tuple[Part, ...]
    # a tutti: its groups as (name, first part, end), the lead group first; and the layout
    # of voicing_rules/tutti.toml the other groups follow
    groups: tuple[tuple[str, int, int], ...] = ()
    layout: str = ""

    @property
    def lead(self) -> Part:
        return self.parts[0]


def _find(folder: str) -> Path:
    here = Path(__file__).resolve().parent
    for cand in (here.parent.parent / folder, here.parent / folder):
        if cand.is_dir():
            return cand
    raise FileNotFoundError(f"{folder}/ not found beside or inside {here}")


def data_dir() -> Path:
    return _find("voicing_rules")


def read_rules(name: str) -> dict[str, Any]:
    """One TOML file of ``voicing_rules/`` as a dict (no caching)."""
    path = data_dir() / name
    with path.open("rb") as fh:
        return tomllib.load(fh)


@lru_cache(maxsize=1)
def instruments() -> dict[str, Instrument]:
    out = {}
    for key, d in read_rules("instruments.toml").items():
        where = f"voicing_rules/instruments.toml [{key}]"
        out[key] = Instrument(
            key=key, name=d["name"], abbreviation=d["abbreviation"],
            practical=(parse_pitch(d["practical"][0], where=where), parse_pitch(d["practical"][1], where=where)),
            extreme=(parse_pitch(d["extreme"][0], where=where), parse_pitch(d["extreme"][1], where=where)),
            transposition=int(d["transposition"]), interval=d["interval"],
            program=int(d["program"]), sound=d["sound"], clef=d["clef"])
        _check_instrument(out[key], where)
    return out


CLEFS = ("treble", "bass", "alto", "tenor", "treble8vb")


def _check_instrument(inst: Instrument, where: str) -> None:
    (plo, phi), (xlo, xhi) = inst.practical, inst.extreme
    if not (xlo <= plo < phi <= xhi):
        raise VoicingError(f"practical {inst.practical} and extreme {inst.extreme} ranges", where=where,
                           accepted="LOW below HIGH, the practical range inside the extreme one")
    if inst.clef not in CLEFS:
        raise VoicingError(f"clef {inst.clef!r} is not known", where=where, accepted=", ".join(CLEFS))
    if not 1 <= inst.program <= 128:
        raise VoicingError(f"program {inst.program}", where=where,
                           accepted="a General MIDI program 1..128")


def _instrument(name: object, where: str) -> Instrument:
    table = instruments()
    if not isinstance(name, str) or name not in table:
        raise VoicingError(f"instrument {name!r} is not known", where=where,
                           accepted=", ".join(sorted(table)))
    return table[name]


def _parts(raw: object, where: str) -> tuple[Part, ...]:
    if not isinstance(raw, list) or not raw:
        raise VoicingError(f"parts = {raw!r}", where=where,
                           accepted="a list of { name = ..., instrument = ... } tables, top part first")
    if len(raw) > MAX_PARTS:
        raise VoicingError(f"{len(raw)} parts", where=where, accepted=f"at most {MAX_PARTS} parts")
    parts = []
    for i, item in enumerate(raw, start=1):
        here = f"{where}, part {i}"
        if isinstance(item, str):
            inst = _instrument(item, here)
            parts.append(Part(f"{inst.name} {i}", inst.abbreviation, inst))
            continue
        if not isinstance(item, dict):
            raise VoicingError(f"{item!r}", where=here, accepted="an instrument name or a table "
                               "{ name = ..., instrument = ... }")
        t = Table(item, here)
        inst = _instrument(t.raw("instrument"), here)
        name = t.string("name", inst.name)
        abbr = t.string("abbreviation", inst.abbreviation)
        t.finish()
        parts.append(Part(name, abbr, inst))
    return tuple(parts)


@lru_cache(maxsize=1)
def sections() -> dict[str, Section]:
    out: dict[str, Section] = {}
    data = read_rules("sections.toml")
    for key, d in data.items():
        if "tutti" not in d:
            out[key] = Section(key, d.get("description", ""), _parts(d["parts"], f"voicing_rules/sections.toml [{key}]"))
    for key, d in data.items():
        if "tutti" in d:
            out[key] = tutti_section(key, d.get("description", ""), d["tutti"], d.get("layout", "octaves"),
                                     out, f"voicing_rules/sections.toml [{key}]")
    return out


def tutti_section(name: str, description: str, members: object, layout: object,
                  known: dict[str, Section], where: str) -> Section:
    """Several sections voiced as one: ``members`` names sections (or holds inline
    ``{ name = ..., parts = [...] }`` tables), the one that carries the lead first."""
    known_layouts = read_rules("tutti.toml").get("layouts", {})     # checked in full by tutti_layouts
    if not isinstance(members, list) or len(members) < 2:
        raise VoicingError(f"tutti = {members!r}", where=where,
                           accepted="a list of two or more sections, the lead's first, e.g. "
                                    "[\"trumpets-4\", \"saxes-5\", \"trombones-4\"]")
    if layout not in known_layouts:
        raise VoicingError(f"layout {layout!r} is not known", where=where,
                           accepted=", ".join(sorted(known_layouts)) + " (voicing_rules/tutti.toml)")
    parts: list[Part] = []
    groups: list[tuple[str, int, int]] = []
    for i, m in enumerate(members, start=1):
        here = f"{where}, tutti entry {i}"
        if isinstance(m, str):
            if m not in known:
                raise VoicingError(f"section {m!r} is not known", where=here,
                                   accepted=", ".join(sorted(k for k, s in known.items() if not s.groups)))
            sec = known[m]
        elif isinstance(m, dict):
            t = Table(m, here)
            sec = Section(t.string("name"), "", _parts(t.raw("parts"), here))
            t.finish()
        else:
            raise VoicingError(f"{m!r}", where=here, accepted="a section name or { name = ..., parts = [...] }")
        if sec.groups:
            raise VoicingError(f"{sec.name!r} is itself a tutti", where=here, accepted="plain sections")
        groups.append((sec.name, len(parts), len(parts) + len(sec.parts)))
        parts.extend(sec.parts)
    if len(parts) > MAX_PARTS:
        raise VoicingError(f"{len(parts)} parts", where=where, accepted=f"at most {MAX_PARTS} parts in all")
    names = [p.name for p in parts]
    twice = sorted({n for n in names if names.count(n) > 1})
    if twice:
        raise VoicingError(f"part names {', '.join(twice)} appear twice", where=where,
                           accepted="sections whose parts have different names")
    return Section(name, description, tuple(parts), tuple(groups), str(layout))


def get_section(name: str, *, where: str = "section") -> Section:
    table = sections()
    if name not in table:
        raise VoicingError(f"section {name!r} is not known", where=where,
                           accepted=", ".join(sorted(table)) + ", or parts defined inline")
    return table[name]


def section_from_table(table: Table) -> Section:
    """``[section]``: ``name`` of a known section, or ``parts`` inline (with a ``name``),
    or ``tutti`` (sections voiced as one) with a ``layout``."""
    if table.has("tutti"):
        name = table.string("name", "tutti")
        try:
            return tutti_section(name, "defined in the project", table.raw("tutti"),
                                 table.string("layout", "octaves"), sections(), table.at("tutti"))
        except VoicingError as err:
            raise ProjectError(err.what, where=err.where, accepted=err.accepted) from None
    if table.has("parts"):
        name = table.string("name", "custom")
        parts = _parts(table.raw("parts"), table.at("parts"))
        return Section(name, "defined in the project", parts)
    name = table.string("name")
    try:
        return get_section(name, where=table.at("name"))
    except VoicingError as err:
        raise ProjectError(err.what, where=err.where, accepted=err.accepted) from None


# score order, top to bottom, by the family of a part's MusicXML sound id (common practice of
# score layout; in a big band: saxophones, trumpets, trombones, then the rhythm section, which
# the rhythm writer appends below everything)
_SCORE_ORDER = (("wind.", 0), ("brass.french-horn", 1), ("brass.trumpet", 2), ("brass.flugelhorn", 2),
                ("brass.cornet", 2), ("brass.trombone", 3), ("brass.tuba", 4), ("brass.", 4))


def score_rank(sound: str) -> int:
    """A part's place in score order by its MusicXML sound id (0 woodwinds, 1 horns, 2
    trumpets, 3 trombones, 4 tuba and other brass, 5 the rest)."""
    return next((r for prefix, r in _SCORE_ORDER if sound.startswith(prefix)), 5)


def describe_range(inst: Instrument) -> str:
    lo, hi = inst.practical
    return f"{pitch_name(lo)}-{pitch_name(hi)}"


@lru_cache(maxsize=1)
def low_interval_table() -> tuple[int, ...]:
    """Lowest allowed lower note by interval (index = semitones, 0..24); -1 = no limit
    (``voicing_rules/limits.toml`` [low_interval]; plain Python, so ``arrange sections``
    prints it without the rule checks' numpy)."""
    where = "voicing_rules/limits.toml [low_interval]"
    table = read_rules("limits.toml").get("low_interval", {})
    out = [-1] * 25
    for key, value in table.items():
        if whole(str(key)) is None or not 1 <= int(key) <= 24:
            raise VoicingError(f"interval {key!r}", where=where, accepted="semitones 1..24")
        out[int(key)] = parse_pitch(value, where=f"{where}, key {key!r}")
    return tuple(out)
