"""The project's ``[rhythm_section]`` table: which rhythm parts are written, and how.

```toml
[rhythm_section]
parts = ["piano", "guitar", "bass", "drums"]   # any subset
bass = "auto"            # auto | walking | two-beat | tumbao | shuffle | roots-fifths
bass_instrument = "auto" # auto | acoustic-bass | electric-bass
fills = true             # "Fill" marked in the drum part where a statement ends
```

``auto`` takes the groove's own feel (common practice): a walking line in swing, a
tumbao in latin, the shuffle pattern in shuffle, roots and fifths in straight; an
acoustic bass in swing and shuffle, an electric bass otherwise.
"""
from __future__ import annotations

from dataclasses import dataclass

from arrange.tables import Table

__all__ = ["RhythmSectionOptions", "read_options", "BASS_STYLES", "BASS_INSTRUMENTS", "style_for", "PARTS"]

# the rhythm parts a project may ask for, in score order (guitar, piano, bass,
# drums: the usual order of a big-band score's rhythm section, common practice)
PARTS = ("guitar", "piano", "bass", "drums")

BASS_STYLES = ("auto", "walking", "two-beat", "tumbao", "shuffle", "roots-fifths")
BASS_INSTRUMENTS = ("auto", "acoustic-bass", "electric-bass")
_BY_GROOVE = {"swing": "walking", "shuffle": "shuffle", "latin": "tumbao", "straight": "roots-fifths"}


@dataclass(frozen=True, slots=True, eq=False)
class RhythmSectionOptions:
    """The project's ``[rhythm_section]`` table: parts, bass style and instrument, fills."""
    parts: tuple[str, ...] = ()
    bass: str = "auto"
    bass_instrument: str = "auto"
    fills: bool = True


def style_for(options: RhythmSectionOptions, groove: str) -> tuple[str, str]:
    """The bass style and bass instrument for a groove."""
    style = options.bass if options.bass != "auto" else _BY_GROOVE.get(groove, "roots-fifths")
    inst = options.bass_instrument
    if inst == "auto":
        inst = "acoustic-bass" if groove in ("swing", "shuffle") else "electric-bass"
    return style, inst


def read_options(table: Table, legacy: bool = False) -> RhythmSectionOptions:
    """``[rhythm_section]``.  ``legacy`` is the old ``output.rhythm_section = true``
    (bass and drums), used when the table gives no ``parts``."""
    raw = table.raw("parts", ["bass", "drums"] if legacy else [])
    if not isinstance(raw, list) or any(not isinstance(p, str) for p in raw):
        raise table.error("parts", f"{raw!r}", "a list drawn from " + ", ".join(PARTS))
    for p in raw:
        if p not in PARTS:
            raise table.error("parts", f"part {p!r} is not known", "a list drawn from " + ", ".join(PARTS))
    if len(set(raw)) != len(raw):
        raise table.error("parts", f"{raw!r} names a part twice", "each of " + ", ".join(PARTS) + " once")
    opts = RhythmSectionOptions(
        parts=tuple(p for p in PARTS if p in raw),
        bass=table.string("bass", "auto", choices=BASS_STYLES),
        bass_instrument=table.string("bass_instrument", "auto", choices=BASS_INSTRUMENTS),
        fills=table.boolean("fills", True))
    table.finish()
    return opts
