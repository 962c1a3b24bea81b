"""Helpers that more than one file format shares (no format imports another's writer)."""
from __future__ import annotations

from bisect import bisect_left, bisect_right
from fractions import Fraction
from typing import Any

__all__ = ["json_number", "bar_of_event", "channel_for", "spelled_parts", "written_parts", "tied_on", "bass_names",
           "shared_staves"]


def json_number(q: Fraction) -> float | int:
    """A time in quarter notes as a JSON number: whole values as integers."""
    return int(q) if q.denominator == 1 else float(q)


def bar_of_event(events: list[dict[str, Any]], ev: int | None) -> Any:
    """The bar of report event ``ev`` (None for a finding about the whole passage)."""
    return events[ev]["bar"] if ev is not None and 0 <= ev < len(events) else None


def channel_for(part_index: int) -> int:
    """0-based MIDI channel of a part, skipping the percussion channel (9)."""
    ch = part_index if part_index < 9 else part_index + 1
    return ch % 16


def shared_staves(voiced: Any, layers: tuple[Any, ...]) -> dict[tuple[int, int], int]:
    """(layer, part) -> the staff of a form's section that the same player reads (the same
    part name and instrument), in a form whose passages have their own sections
    (``voiced.staffing``): the player plays the layer where his section rests, on one staff
    (``staffing.check_players`` refuses a player the two would have play at once)."""
    if voiced.staffing is None or not layers:
        return {}
    staff = {(p.name, p.instrument.key): k for k, p in enumerate(voiced.section.parts)}
    return {(li, k): staff[(p.name, p.instrument.key)] for li, vl in enumerate(layers)
            for k, p in enumerate(vl.layer.section.parts) if (p.name, p.instrument.key) in staff}


def tied_on(voiced: Any, i: int, k: int) -> bool:
    """Part ``k`` holds its pitch, tied, into event ``i``: the lead note was cut there at a
    chord change (``harmony.split``) and the part keeps the pitch it had (common practice)."""
    return bool(voiced.events[i].event.note.tied) and i > 0 and voiced.events[i].pitches[k] is not None and \
        voiced.events[i - 1].pitches[k] == voiced.events[i].pitches[k]


_SPELLED: dict[tuple[int, int], tuple[Any, Any, Any]] = {}


def spelled_parts(voiced: Any, layers: tuple[Any, ...] = ()) -> tuple[tuple[tuple[str, ...], ...],
                                                                      tuple[tuple[tuple[str | None, ...], ...], ...]]:
    """Concert names of every note the score writes: per lead-section part one per event,
    per layer part one per layer note (None where it rests).  Each is spelled by its key,
    chord and direction (``theory.spelling.spell_pitch``), then all are made to agree, one
    spelling per pitch class at one moment (``theory.written.agree``; the lead section
    first, so its names never depend on the layers).  Every writer (score, parts, report)
    reads its names here; a part's written name is ``theory.written.written_name`` of these."""
    from arrange.theory.spelling import direction_of, spell_pitch
    from arrange.theory.written import agree

    hit = _SPELLED.get((id(voiced), id(layers)))
    if hit is not None and hit[0] is voiced and hit[1] is layers:
        return hit[2]  # type: ignore[no-any-return]
    h = voiced.harmonized
    bar_len = h.line.meter.bar
    notes: list[tuple[Fraction, Fraction, int, str]] = []
    joins: list[int] = []         # entry of each lead-section note; a tied note shares its first's
    for k in range(len(voiced.section.parts)):
        voice = [ve.pitches[k] for ve in voiced.events]
        for i, ve in enumerate(voiced.events):
            n = ve.event.note
            end = n.onset + n.duration
            if voice[i] is None:                # a form's staff resting while another section plays
                joins.append(-1)
                continue
            if i and tied_on(voiced, i, k):     # a tie is one note: one name, one entry for agree
                o, _e, m, nm = notes[joins[-1]]
                notes[joins[-1]] = (o, end, m, nm)
                joins.append(joins[-1])
                continue
            way = direction_of(voice[i - 1] if i else None, voice[i], voice[i + 1] if i + 1 < len(voice) else None)
            name = spell_pitch(voice[i], h.key_at(int(n.onset // bar_len) + 1), ve.event.chord, way)
            joins.append(len(notes))
            notes.append((n.onset, end, voice[i], name))
    n_lead = len(notes)
    slots: list[tuple[int, int, int]] = []
    for li, vl in enumerate(layers):
        for k in range(len(vl.layer.section.parts)):
            lvoice = [n.pitches[k] for n in vl.notes]
            for i, n in enumerate(vl.notes):
                here = lvoice[i]
                if here is None:
                    continue
                way = direction_of(lvoice[i - 1] if i else None, here,
                                   lvoice[i + 1] if i + 1 < len(lvoice) else None)
                name = spell_pitch(here, h.key_at(int(n.onset // bar_len) + 1), n.chord, way)
                notes.append((n.onset, n.onset + n.duration, here, name))
                slots.append((li, k, i))
    agreed = agree(notes)
    names = [agreed[j] if j >= 0 else None for j in joins]
    n_ev = len(voiced.events)
    lead = tuple(tuple(names[k * n_ev:(k + 1) * n_ev]) for k in range(len(voiced.section.parts)))
    rest = agreed[n_lead:]
    grid: list[list[list[str | None]]] = [[[None] * len(vl.notes) for _ in vl.layer.section.parts]
                                          for vl in layers]
    for (li, k, i), name in zip(slots, rest, strict=True):
        grid[li][k][i] = name
    out = (lead, tuple(tuple(tuple(p) for p in g) for g in grid))
    if len(_SPELLED) > 8:
        _SPELLED.clear()
    _SPELLED[(id(voiced), id(layers))] = (voiced, layers, out)
    return out


def bass_names(voiced: Any, layers: tuple[Any, ...], bass: Any) -> tuple[str, ...]:
    """Concert names of the written bass line (``RhythmSection.bass``) by the one rule:
    each note spelled by key, chord and direction (``spell_pitch``), then made to agree
    with every note the score already spells (``spelled_parts``: lead section and layers,
    which keep their names), so one pitch class reads one way at one moment."""
    from arrange.theory.spelling import direction_of, spell_pitch, with_octave
    from arrange.theory.written import split_name

    if not bass:
        return ()
    h = voiced.harmonized
    bar_len = h.line.meter.bar
    lead, lay = spelled_parts(voiced, layers)
    notes: list[tuple[Fraction, Fraction, int, str]] = []
    for k, names in enumerate(lead):
        for i, ve in enumerate(voiced.events):
            n = ve.event.note
            if ve.pitches[k] is not None:
                notes.append((n.onset, n.onset + n.duration, ve.pitches[k], names[i]))
    for vl, grid in zip(layers, lay, strict=True):
        for k, layer_names in enumerate(grid):
            for i, ln in enumerate(vl.notes):
                nm, p = layer_names[i], ln.pitches[k]
                if nm is not None and p is not None:
                    notes.append((ln.onset, ln.onset + ln.duration, p, nm))
    by_pc: dict[int, list[tuple[Fraction, Fraction, str]]] = {}
    for on, end, midi, name in notes:
        by_pc.setdefault(midi % 12, []).append((on, end, name))
    for v in by_pc.values():
        v.sort()
    # each pitch class's onsets (sorted) and its longest note: a bass note looks only at the
    # notes that can overlap it (one starting a longest note or more before it cannot)
    onsets = {pc: [on for on, _end, _name in v] for pc, v in by_pc.items()}
    longest = {pc: max(end - on for on, end, _name in v) for pc, v in by_pc.items()}
    pitches = [bn.pitch for bn in bass]
    out = []
    for i, bn in enumerate(bass):
        way = direction_of(pitches[i - 1] if i else None, pitches[i], pitches[i + 1] if i + 1 < len(pitches) else None)
        own = spell_pitch(bn.pitch, h.key_at(max(1, int(bn.onset // bar_len) + 1)), bn.chord, way)
        t0, t1 = bn.onset, bn.onset + bn.duration
        pc = bn.pitch % 12
        near: list[tuple[Fraction, Fraction, str]] = []
        if pc in by_pc:
            starts = onsets[pc]
            near = by_pc[pc][bisect_right(starts, t0 - longest[pc]):bisect_left(starts, t1)]
        here = [(on, split_name(name)[0]) for on, end, name in near if on < t1 and t0 < end]
        # one name while it sounds: the score's, where the score has one; where the horns
        # spell the pitch class two ways while the bass holds (a tie keeps one name), the
        # bass's own by its chord if the horns use it (an anticipated root keeps the name of
        # the chord it anticipates), else the name sounding at its attack
        spelled = {name for _on, name in here}
        own_pc = split_name(own)[0]
        if not spelled or own_pc in spelled:
            out.append(own)
            continue
        at_attack = [name for on, name in here if on <= t0]
        pick = at_attack[-1] if len(spelled) > 1 and at_attack else next(iter(spelled)) if len(spelled) == 1 \
            else here[0][1]
        out.append(with_octave(pick, bn.pitch))
    return tuple(out)


_WRITTEN: dict[tuple[int, int, bool], tuple[Any, Any, Any]] = {}


def written_parts(voiced: Any, layers: tuple[Any, ...] = (), concert: bool = False) -> tuple[
        tuple[tuple[str, ...], ...], tuple[tuple[tuple[str | None, ...], ...], ...]]:
    """The written name of every note, shaped as :func:`spelled_parts`: each concert name
    through ``theory.written.written_name`` for its part's transposition (0 throughout a
    concert score), then ``agree`` among the parts that read one written key (one
    transposition, modulo octaves), the lead section first."""
    from arrange.theory.written import agree, midi_of, written_name

    hit = _WRITTEN.get((id(voiced), id(layers), concert))
    if hit is not None and hit[0] is voiced and hit[1] is layers:
        return hit[2]  # type: ignore[no-any-return]
    lead_names, layer_names = spelled_parts(voiced, layers)
    h = voiced.harmonized
    bar_len = h.line.meter.bar
    groups: dict[int, list[tuple[Fraction, Fraction, int, str]]] = {}
    where: dict[int, list[tuple[int, int, int]]] = {}      # group -> (layer or -1, part, note)
    pos: dict[tuple[int, int, int], int] = {}              # slot -> its place in its group

    def put(moved: int, onset: Fraction, end: Fraction, name: str, chord: Any, slot: tuple[int, int, int]) -> None:
        w = written_name(name, moved, h.key_at(int(onset // bar_len) + 1), chord)
        pos[slot] = len(groups.setdefault(moved % 12, []))
        groups[moved % 12].append((onset, end, midi_of(w), w))
        where.setdefault(moved % 12, []).append(slot)

    tied_to: dict[tuple[int, int], int] = {}      # (part, note) -> the first note of its tie
    for k, part in enumerate(voiced.section.parts):
        moved = 0 if concert else part.instrument.transposition
        for i, ve in enumerate(voiced.events):
            n = ve.event.note
            if ve.pitches[k] is None:             # a form's staff resting while another section plays
                continue
            if i and tied_on(voiced, i, k):       # one entry per tie: it keeps its written name
                first = tied_to.get((k, i - 1), i - 1)
                tied_to[(k, i)] = first
                g = groups[moved % 12]
                at = pos[(-1, k, first)]
                o, _e, m, w = g[at]
                g[at] = (o, n.onset + n.duration, m, w)
                continue
            put(moved, n.onset, n.onset + n.duration, lead_names[k][i], ve.event.chord, (-1, k, i))
    for li, vl in enumerate(layers):
        for k, part in enumerate(vl.layer.section.parts):
            moved = 0 if concert else part.instrument.transposition
            for i, n in enumerate(vl.notes):
                name = layer_names[li][k][i]
                if name is not None:
                    put(moved, n.onset, n.onset + n.duration, name, n.chord, (li, k, i))
    lead: list[list[str]] = [[""] * len(voiced.events) for _ in voiced.section.parts]
    grid: list[list[list[str | None]]] = [[[None] * len(vl.notes) for _ in vl.layer.section.parts]
                                          for vl in layers]
    for g, notes in groups.items():
        for (li, k, i), name in zip(where[g], agree(notes), strict=True):
            if li < 0:
                lead[k][i] = name
            else:
                grid[li][k][i] = name
    for (k, i), first in sorted(tied_to.items()):
        lead[k][i] = lead[k][first]
    out = (tuple(tuple(p) for p in lead), tuple(tuple(tuple(p) for p in g) for g in grid))
    if len(_WRITTEN) > 8:
        _WRITTEN.clear()
    _WRITTEN[(id(voiced), id(layers), concert)] = (voiced, layers, out)
    return out
