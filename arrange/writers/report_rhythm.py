"""The report's rhythm section: what each rhythm player reads, per passage.

``rhythm_section_data`` gives the JSON entry (the parts, the bass style and instrument,
and per passage of a form, or for the whole chart, one line per player); the Markdown
section lists the same lines.  Names are the score's: the bass notes as the bass part
spells them (``bass_names``), at sounding pitch.
"""
from __future__ import annotations

from fractions import Fraction
from typing import Any

__all__ = ["rhythm_section_data", "rhythm_section_markdown"]

_NAMES = {"guitar": "Guitar", "piano": "Piano", "bass": "Bass", "drums": "Drums"}
_STYLE_WORDS = {"walking": "a walking line (chord tones and approach notes, a note a beat)",
                "two-beat": "a two-beat line (roots and fifths on beats 1 and 3)",
                "tumbao": "a tumbao (the anticipated fifth and root)",
                "shuffle": "the shuffle pattern",
                "roots-fifths": "roots and fifths"}


def _bars(line: Any) -> list[tuple[int | None, str, int, int]]:
    """(passage, name, first bar, last bar) of each passage, or the whole chart."""
    if line.passages:
        return [(p.index, p.name, p.first_bar, p.last_bar) for p in line.passages]
    return [(None, "", 1, line.bars)]


def _bar(t: Fraction, bar: Fraction) -> int:
    return int(t // bar) + 1


def _in(t: Fraction, bar: Fraction, lo: int, hi: int, first: bool) -> bool:
    b = _bar(t, bar)
    return lo <= b <= hi or (first and b < lo)       # a pickup belongs to the first passage


def _list(bars: list[int]) -> str:
    return ", ".join(str(b) for b in bars)


def rhythm_section_data(rhythm: Any, line: Any, bass_names: tuple[str, ...] = ()) -> dict[str, Any]:
    bar = rhythm.bar
    out: dict[str, Any] = {
        "parts": [{"name": _NAMES[p], "role": p} for p in rhythm.parts],
        "bass_style": rhythm.bass_style, "bass_instrument": rhythm.bass_instrument,
        "bass_notes": len(rhythm.bass), "slashes": sum(1 for s in rhythm.comping if not s.rest),
        "fills": list(rhythm.drums.fills) if rhythm.drums is not None else [],
        "passages": []}
    for k, (index, name, lo, hi) in enumerate(_bars(line)):
        first = k == 0
        rows = []
        for part in rhythm.parts:
            row: dict[str, Any] = {"name": _NAMES[part], "role": part}
            if part in ("piano", "guitar"):
                slashes = [s for s in rhythm.comping if not s.rest and _in(s.onset, bar, lo, hi, first)]
                hit_bars = sorted({_bar(s.onset, bar) for s in slashes if s.kind == "hit"})
                time_bars = sorted({_bar(s.onset, bar) for s in slashes if s.kind == "time"})
                chords = list(dict.fromkeys(s.chord.symbol for s in slashes))
                row.update(time_slashes=sum(1 for s in slashes if s.kind == "time"), hit_bars=hit_bars,
                           chords=chords)
                text = f"time slashes (one a beat) in {len(time_bars)} bars under the chord symbols"
                if hit_bars:
                    text += f"; the section's figures as accented rhythmic slashes in bar{'s' if len(hit_bars) > 1 else ''} {_list(hit_bars)}"
                if part == "guitar":
                    text += "; written an octave above sounding"
            elif part == "bass":
                idx = [i for i, bn in enumerate(rhythm.bass) if _in(bn.onset, bar, lo, hi, first)]
                notes = [rhythm.bass[i] for i in idx]
                names = [bass_names[i] if i < len(bass_names) else "" for i in idx]
                downbeats = [bn for bn in notes if bn.onset >= 0 and bn.onset % bar == 0]
                roots = sum(1 for bn in downbeats if bn.pitch % 12 == bn.chord.root)
                approach = sum(1 for bn in notes if bn.role == "approach")
                low = min(range(len(notes)), key=lambda j: notes[j].pitch) if notes else None
                high = max(range(len(notes)), key=lambda j: notes[j].pitch) if notes else None
                row.update(notes=len(notes), roots_on_downbeats=roots, downbeats=len(downbeats),
                           approach_notes=approach,
                           low=names[low] if low is not None else None,
                           high=names[high] if high is not None else None)
                text = (f"{_STYLE_WORDS.get(rhythm.bass_style, rhythm.bass_style)}: {len(notes)} notes, "
                        f"the root on {roots} of {len(downbeats)} downbeats, {approach} approach notes")
                if notes:
                    text += f", {row['low']} to {row['high']} sounding (written an octave higher)"
            else:
                drums = rhythm.drums
                cues = [c for c in drums.cues if _in(c.onset, bar, lo, hi, first)] if drums else []
                cue_bars = sorted({_bar(c.onset, bar) for c in cues})
                fills = [b for b in (drums.fills if drums else ()) if lo <= b <= hi]
                row.update(style=drums.style if drums else "", cue_bars=cue_bars, fill_bars=fills)
                text = f"{drums.style if drums else ''} time (slashes)"
                if cue_bars:
                    text += f"; the section's figures cued above the staff in bar{'s' if len(cue_bars) > 1 else ''} {_list(cue_bars)}"
                if fills:
                    text += f"; a fill in bar{'s' if len(fills) > 1 else ''} {_list(fills)}"
            row["plays"] = text
            rows.append(row)
        out["passages"].append({"passage": index, "name": name, "first_bar": lo, "last_bar": hi, "parts": rows})
    return out


def rhythm_section_markdown(data: dict[str, Any], cell: Any) -> list[str]:
    rs = data.get("rhythm_section")
    if not rs or not rs.get("passages"):
        return []
    out = ["", "## Rhythm section", "",
           f"Parts: {', '.join(p['name'] for p in rs['parts'])}; bass style {rs['bass_style']} "
           f"({rs['bass_instrument']}). What each player reads:", "",
           "| passage | bars | part | plays |", "| --- | --- | --- | --- |"]
    for p in rs["passages"]:
        label = f"{p['passage']} ({cell(p['name'])})" if p["passage"] is not None else "all"
        for row in p["parts"]:
            out.append(f"| {label} | {p['first_bar']}-{p['last_bar']} | {row['name']} | {cell(row['plays'])} |")
    return out
