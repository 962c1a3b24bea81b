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

from arrange.errors import ProjectError, VoicingError
from arrange.tables import Table
from arrange.theory.pitch import parse_pitch, pitch_name

__all__ = ["Instrument", "Part", "Section", "data_dir", "instruments", "sections", "get_section",
           "section_from_table", "read_rules", "describe_range", "MAX_PARTS"]

MAX_PARTS = 16


@dataclass(frozen=True, slots=True)
class Instrument:
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
    name: str
    abbreviation: str
    instrument: Instrument


@dataclass(frozen=True, slots=True)
class Section:
    name: str
    description: str
    parts: tuple[Part, ...]

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
    out = {}
    for key, d in read_rules("sections.toml").items():
        where = f"voicing_rules/sections.toml [{key}]"
        out[key] = Section(key, d.get("description", ""), _parts(d["parts"], where))
    return out


def get_section(name: str, *, where: str = "section") -> Section:
    table = sections()
    if name not in table:
        raise VoicingError(f"section {name!r} is not known", where=where,
                           accepted=", ".join(sorted(table)) + ", or parts defined inline")
    return table[name]


def section_from_table(table: Table) -> Section:
    """``[section]``: ``name`` of a known section, or ``parts`` inline (with a ``name``)."""
    if table.has("parts"):
        name = table.string("name", "custom")
        parts = _parts(table.raw("parts"), table.at("parts"))
        return Section(name, "defined in the project", parts)
    name = table.string("name")
    try:
        return get_section(name, where=table.at("name"))
    except VoicingError as err:
        raise ProjectError(err.what, where=err.where, accepted=err.accepted) from None


def describe_range(inst: Instrument) -> str:
    lo, hi = inst.practical
    return f"{pitch_name(lo)}-{pitch_name(hi)}"
