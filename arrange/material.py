"""What a passage plays: a melody (a file or our compact text), a chain, or a chain the
designer finds for it.  Read from the project's top level or from one ``[[passages]]`` entry.

* ``melody = "file:tune.musicxml"`` (with ``bars = "1-16"``, ``part = N``) or
  ``melody = "F4:4 G4:8 ..."`` (:mod:`arrange.inputs.melody_text`);
* ``[chain]`` / ``chain = { motif = ..., statements = ... }`` (:func:`arrange.project`'s chain reader);
* ``chain = { design = true, statements = 4 }`` (in a passage only): :class:`DesignedChain`.
"""
from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction
from pathlib import Path
from typing import Any

from arrange.errors import ArrangeError, ProjectError
from arrange.harmony.harmonizer import HarmonyOptions
from arrange.harmony.harmonizer import read_options as read_harmony
from arrange.inputs.melody_file import Melody, parse_bars, read_melody_file
from arrange.inputs.melody_text import read_melody_text
from arrange.rhythm.meter import Meter
from arrange.tables import Table

__all__ = ["DesignedChain", "read_melody", "transpose_melody", "read_designed", "check_lead_range", "melody_harmony", "MELODY_KEYS"]

MELODY_KEYS = ("melody", "bars", "part")


@dataclass(frozen=True, slots=True, eq=False)
class DesignedChain:
    """A chain the designer finds: it carries the line from the passage before into the
    key of the passage after."""
    statements: int = 4
    length: int = 4          # motif notes
    overlap: int = 2
    max_step: int = 5        # largest step of the motif, semitones
    candidates: int = 3      # runners-up named in the report


def read_melody(t: Table, base: Path | None, bar: Fraction) -> Melody:
    """The melody of table ``t`` (its ``melody``, ``bars`` and ``part`` keys)."""
    raw = t.raw("melody")
    if not isinstance(raw, str) or not raw.strip():
        raise t.error("melody", f"{raw!r} is no melody",
                      "\"file:NAME.musicxml\" (.mxl, .mid, .abc) or notes such as \"F4:4 G4:8 A4:8\"")
    text = raw.strip()
    if text.startswith("file:"):
        name = text[5:].strip()
        if not name:
            raise t.error("melody", f"{raw!r} names no file",
                          "\"file:NAME.musicxml\" (.mxl, .mid, .abc), relative to the project file")
        path = Path(name) if Path(name).is_absolute() else (base or Path.cwd()) / name
        bars = parse_bars(t.raw("bars"), where=t.at("bars")) if t.has("bars") else None
        part = t.integer("part", 1, low=1, high=64) if t.has("part") else None
        from arrange.writers.cache import user_store

        return read_melody_file(path, where=t.at("melody"), part=part, bars=bars, store=user_store())
    for key in ("bars", "part"):
        if t.has(key):
            raise t.error(key, f"{key!r} is given but the melody is not a file",
                          f"{key!r} only with melody = \"file:...\"")
    try:
        return read_melody_text(text, bar, where=t.at("melody"))
    except ArrangeError as err:
        raise ProjectError(err.what, where=err.where, accepted=err.accepted) from None


def read_designed(t: Table) -> DesignedChain:
    """``chain = { design = true, statements = 4, length = 4, overlap = 2, max_step = 5 }``."""
    if t.raw("design") is not True:
        raise t.error("design", f"{t.raw('design')!r}", "design = true (or a motif for a chain of your own)")
    d = DesignedChain(statements=t.integer("statements", 4, low=3, high=16),
                      length=t.integer("length", 4, low=3, high=6),
                      overlap=t.integer("overlap", 2, low=1, high=2),
                      max_step=t.integer("max_step", 5, low=1, high=7),
                      candidates=t.integer("candidates", 3, low=0, high=10))
    t.finish()
    return d


def check_lead_range(melody: Melody, section: Any, where: str) -> None:
    """A melody note beyond the lead instrument's extreme range cannot be played: refused
    before any work starts (an error in the music is not a warning), naming the note."""
    from arrange.errors import VoicingError
    from arrange.theory.pitch import pitch_name

    inst = section.lead.instrument
    lo, hi = inst.extreme
    for k, n in enumerate(melody.notes, start=1):
        if not lo <= n.pitch <= hi:
            raise VoicingError(f"melody note {k} ({pitch_name(n.pitch)}, {float(n.onset):g} quarter notes "
                               f"from bar 1) lies beyond the {inst.name}'s extreme range "
                               f"{pitch_name(lo)}-{pitch_name(hi)}", where=where,
                               accepted=f"a melody the lead ({section.lead.name}) can play, within "
                                        f"{pitch_name(lo)}-{pitch_name(hi)} sounding: transpose it, choose "
                                        "another section, or allow_extreme = true")


def melody_harmony(t: Table, melody: Melody, meter: Meter, where: str) -> HarmonyOptions:
    if t.has("framework") or t.has("preset"):
        return read_harmony(t)
    from arrange.harmony.changes import framework_from_changes

    bars = int(melody.total // meter.bar)
    try:
        framework = framework_from_changes(melody.chords, meter, max(bars, 1),
                                           where=f"{where} ({melody.source})")
    except ArrangeError as err:
        raise ProjectError(err.what, where=err.where, accepted=err.accepted) from None
    data = dict(t.data)
    data["framework"] = [" ".join(bar) for bar in framework]
    table = Table(data, t.where, t.prefix)
    out = read_harmony(table)
    for k in t.data:
        t.raw(k, None)
    return out


def transpose_melody(melody: Melody, semitones: int, key: Any) -> Melody:
    """The melody and its chord symbols moved by ``semitones``, the symbols spelled for ``key``."""
    from dataclasses import replace

    from arrange.harmony.harmonizer import transpose_chord
    from arrange.inputs.melody_file import MelodyNote
    from arrange.theory.chords import parse_chord

    if not semitones:
        return melody
    notes = tuple(MelodyNote(n.pitch + semitones, n.onset, n.duration) for n in melody.notes)
    chords = tuple((on, transpose_chord(parse_chord(sym), semitones, key).symbol) for on, sym in melody.chords)
    return replace(melody, notes=notes, chords=chords, key=None)
