"""Voicing stage: a :class:`~arrange.harmony.Harmonized` in, a :class:`Voiced` out.

1. The plan gives each note its voicing type: one type for the passage, or
   ``auto`` (opening toward the climax and the end, bar by bar), overridden by
   ``by_statement`` and then ``by_bar``.
2. For each note, :func:`arrange.shapes.shapes` builds the candidate voicings
   (the lead on top, exactly as placed); :mod:`arrange.rules` scores every
   candidate with the weighted rule penalties (plain Python: a build without
   layers or a designed chain never imports numpy).
3. :func:`solve` picks one candidate per note by dynamic programming over the
   whole line, minimising lower-voice motion plus penalties; each step prices
   only the predecessors that can still win, so the work is linear in the notes.
4. The chosen voicings' rule marks become the findings of the report.
"""
from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, replace
from fractions import Fraction
from operator import add, sub

from arrange.checked import whole
from arrange.errors import VoicingError
from arrange.harmony.events import Event, Harmonized
from arrange.tables import Table
from arrange.theory.chords import sounding_chord
from arrange.theory.pitch import pitch_name
from arrange.voicing import rules
from arrange.voicing.sections import Section
from arrange.voicing.shapes import GUIDE_OPTIONS, VOICINGS, guide_tones, recipes, shapes

__all__ = ["Finding", "VoicedEvent", "Voiced", "Staffing", "VoicingOptions", "read_options", "voice", "VOICINGS",
           "PLANS", "plan", "candidates", "solve", "path_cost"]

PLANS = VOICINGS + ("auto",)


@dataclass(frozen=True, slots=True, eq=False)
class Finding:
    """A rule finding of the voicing stage (a report warning or error)."""
    kind: str                 # one of rules.KINDS
    event: int | None         # 0-based event index
    part: str | None          # part name
    message: str
    severity: str = "warning"  # "warning" or "error"


@dataclass(frozen=True, slots=True, eq=False)
class VoicedEvent:
    """An event voiced: its voicing type and one sounding pitch per part."""
    event: Event
    voicing: str
    # sounding, top to bottom, one per part of ``Voiced.section``; in a form whose passages
    # have their own sections (``Voiced.staffing``) one per staff, None where a staff rests
    pitches: tuple[int, ...]


@dataclass(frozen=True, slots=True, eq=False)
class Staffing:
    """The staves of a form whose passages have their own sections: ``Voiced.section`` then
    holds one part per player (every section's parts, a player two sections share once, in
    score order), and this says who plays where.  ``sections``: each section played, in
    order of first use; ``staves``: per section, the staff of each of its parts (top to
    bottom, its lead first); ``of_passage``: the section of each passage; ``of_event``: the
    section of each event.  A staff whose section does not play an event rests (its pitch
    is None)."""
    sections: tuple[Section, ...]
    staves: tuple[tuple[int, ...], ...]
    of_passage: tuple[int, ...]
    of_event: tuple[int, ...]

    def own(self, i: int, pitches: tuple[int | None, ...]) -> tuple[int, ...]:
        """Event ``i``'s pitches in its own section's order (top to bottom, the lead first)."""
        return tuple(int(pitches[k]) for k in self.staves[self.of_event[i]])   # type: ignore[arg-type]

    def section_of(self, i: int) -> Section:
        return self.sections[self.of_event[i]]

    def lead_staff(self, i: int) -> int:
        """The staff that carries event ``i``'s lead."""
        return self.staves[self.of_event[i]][0]


@dataclass(frozen=True, slots=True, eq=False)
class Voiced:
    """The voicing stage's value: the voiced events and their findings."""
    harmonized: Harmonized
    section: Section
    events: tuple[VoicedEvent, ...]
    findings: tuple[Finding, ...]
    staffing: Staffing | None = None     # a form's passages with their own sections


@dataclass(frozen=True, slots=True, eq=False)
class VoicingOptions:
    """The voicing keys of ``[section]``: voicing plan and options."""
    voicing: str = "close"                                   # a type or "auto"
    by_statement: tuple[tuple[int, str], ...] = ()
    by_bar: tuple[tuple[int, int, str], ...] = ()            # (first bar, last bar, type)
    allow_extreme: bool = False
    eleven_for_third: bool = False     # opt-in: the 11 in place of a minor chord's third

    @property
    def guide_options(self) -> frozenset[str]:
        """The voicing options (``shapes.GUIDE_OPTIONS``) this project asks for."""
        return frozenset(k for k in GUIDE_OPTIONS if getattr(self, k))


def _plan_table(table: Table, key: str) -> dict[str, str]:
    raw = table.raw(key, {})
    if not isinstance(raw, dict):
        raise table.error(key, f"{raw!r}", "a table such as { 4 = \"spread\" }")
    for k, v in raw.items():
        if v not in VOICINGS:
            raise table.error(key, f"voicing {v!r} for {k!r} is not known", ", ".join(VOICINGS))
    return raw


def read_options(table: Table) -> VoicingOptions:
    """The voicing keys of ``[section]``: voicing, by_statement, by_bar, allow_extreme."""
    voicing = table.string("voicing", "close", choices=PLANS)
    by_statement = []
    for k, v in _plan_table(table, "by_statement").items():
        n = whole(k)
        if n is None or n < 1:
            raise table.error("by_statement", f"statement {k[:40]!r}", "statement numbers 1, 2, ...")
        by_statement.append((n, v))
    by_bar = []
    for k, v in _plan_table(table, "by_bar").items():
        lo_text, _, hi_text = k.partition("-")
        lo, hi = whole(lo_text), (whole(hi_text) if hi_text else whole(lo_text))
        if lo is None or hi is None or lo < 1 or hi < lo:
            raise table.error("by_bar", f"bar range {k[:40]!r}", "a bar \"9\" or a range \"9-12\"")
        by_bar.append((lo, hi, v))
    allow = table.boolean("allow_extreme", False)
    eleven = table.boolean("eleven_for_third", False)
    return VoicingOptions(voicing, tuple(sorted(by_statement)), tuple(sorted(by_bar)), allow, eleven)


def _bar(ev: Event, bar_len: Fraction) -> int:
    return int(ev.note.onset // bar_len) + 1


def plan(harmonized: Harmonized, options: VoicingOptions) -> tuple[str, ...]:
    """The voicing type of every note."""
    events = harmonized.events
    bar_len = harmonized.line.meter.bar
    bars = [_bar(ev, bar_len) for ev in events]
    if options.voicing == "auto" and events:
        rec = recipes()
        last = max(bars)
        leads = [ev.note.pitch for ev in events]
        climax = bars[leads.index(max(leads))]
        reach = max(1.0, rec.auto_reach * last)
        types = {}
        for b in set(bars):
            openness = max(1 - abs(b - climax) / reach, 1 - (last - b) / reach, 0.0)
            types[b] = [v for o, v in rec.auto_steps if openness >= o][-1]
        chosen = [types[b] for b in bars]
    else:
        chosen = [options.voicing] * len(events)
    statements = dict(options.by_statement)
    for i, ev in enumerate(events):
        chosen[i] = statements.get(ev.note.statement, chosen[i])
        for lo, hi, v in options.by_bar:
            if lo <= bars[i] <= hi:
                chosen[i] = v
    return tuple(chosen)


# where the planned type has no voicing inside the extreme ranges, the others in this order
FALLBACK = {"close": ("drop2", "drop3", "drop2-4", "spread"), "drop2": ("drop3", "drop2-4", "spread", "close"),
            "drop3": ("drop2", "drop2-4", "spread", "close"), "drop2-4": ("spread", "drop2", "drop3", "close"),
            "spread": ("drop2-4", "drop2", "drop3", "close"), "unison": ()}


Rows = tuple[tuple[int, ...], ...]     # candidate voicings, one tuple of pitches each
Costs = tuple[float, ...]


def candidates(ev: Event, vtype: str, section: Section, weights: dict[str, float],
               cache: dict[tuple[object, ...], tuple[Rows, Costs]],
               options: VoicingOptions = VoicingOptions()) -> tuple[Rows, Costs]:
    """Candidate voicings (``k`` rows of ``n`` pitches) of one note (its lead as placed) and
    their costs, best kept (a stable sort: equal costs keep the shapes' order).  Unless
    ``allow_extreme``, the extreme ranges are a wall: a voicing with a note beyond one is no
    candidate (``k`` may be 0)."""
    pitch = ev.note.pitch
    key = (pitch, ev.chord, vtype, options.guide_options, options.allow_extreme)
    hit = cache.get(key)
    if hit is not None:
        return hit
    n = len(section.parts)
    floor = min(p.instrument.extreme[0] for p in section.parts)
    ctx = rules.context(ev.chord, vtype)
    rows: list[tuple[int, ...]] = []
    cost: list[float] = []
    for shape, base in shapes(pitch, ev.chord, vtype, n, floor, options.guide_options):
        row = tuple(shape)
        marks = rules.masks(row, ctx, section)
        if not options.allow_extreme and any(marks["extreme"]):
            continue
        rows.append(row)
        cost.append(float(base) + rules.penalties(marks, weights))
    keep = sorted(range(len(rows)), key=cost.__getitem__)[:recipes().max_candidates]
    cache[key] = (tuple(rows[k] for k in keep), tuple(cost[k] for k in keep))
    return cache[key]


def _unplaceable(ev: Event, vtype: str, section: Section, bar: int) -> VoicingError:
    """The error for a note no voicing fits: the best voicing's first note beyond a wall."""
    n = len(section.parts)
    floor = min(p.instrument.extreme[0] for p in section.parts)
    found = [tuple(s) for s, _c in shapes(ev.note.pitch, ev.chord, vtype, n, floor)]
    ctx = rules.context(ev.chord, vtype)
    ext = [rules.masks(row, ctx, section)["extreme"] for row in found]
    best = min(range(len(found)), key=lambda k: sum(ext[k]))      # the first of the fewest
    j = ext[best].index(True)
    part, p = section.parts[j], found[best][j]
    lo, hi = part.instrument.extreme
    side = "below" if p < lo else "above"
    return VoicingError(
        f"bar {bar}: {part.name} cannot play {pitch_name(p)} (sounding), {side} its extreme range "
        f"{pitch_name(lo)}-{pitch_name(hi)}: no voicing of the lead {pitch_name(ev.note.pitch)} over "
        f"{ev.chord.symbol} (of any type) keeps every part inside its range",
        where="[section]",
        accepted="a lead range that lets the section voice the line, a section whose parts reach, "
                 "or allow_extreme = true")


def solve(cands: Sequence[Sequence[Sequence[int]]], costs: Sequence[Sequence[float]],
          motion: float) -> tuple[list[int], float]:
    """Dynamic programme: one candidate per note minimising costs plus motion of
    the lower voices (every voice but the lead), summed in semitones.

    A candidate's best predecessor has the least running total plus ``motion`` times the
    semitones its lower voices move; ties go to the lowest index, as numpy's ``argmin``
    over the predecessors would (the same path and the same float sums as pricing every
    pair with numpy, ``tests/test_voicing.py``).  A step between two candidate lists met
    for the first time prices only the pairs that can still win (:func:`_pruned_step`);
    one met again (the same notes over the same chords: long lines repeat) keeps every
    pair's motion cost and takes each minimum in one pass over the predecessors."""
    if motion < 0:
        raise ValueError(f"a motion weight below zero ({motion}) rewards motion")
    total = [float(c) for c in costs[0]]
    back: list[list[int]] = []
    seen: set[tuple[int, int]] = set()
    kept: dict[tuple[int, int], list[list[float]]] = {}
    for i in range(1, len(cands)):
        prev, cur = cands[i - 1], cands[i]
        key = (id(prev), id(cur))
        step = kept.get(key)
        if step is None and key in seen and len(kept) < _KEPT_STEPS:
            step = kept[key] = [[motion * sum(map(abs, map(sub, a[1:], b[1:]))) for a in prev] for b in cur]
        seen.add(key)
        if step is None:
            arg, best_of = _pruned_step(prev, cur, total, motion)
        else:
            arg, best_of = [], []
            for moves in step:
                whole = list(map(add, total, moves))
                least = min(whole)
                arg.append(whole.index(least))      # the first of the least, as argmin
                best_of.append(least)
        total = [t + float(c) for t, c in zip(best_of, costs[i], strict=True)]
        back.append(arg)
    j = min(range(len(total)), key=total.__getitem__)
    best = total[j]
    path = [j]
    for arg in reversed(back):
        j = arg[j]
        path.append(j)
    return path[::-1], best


# steps whose every pair's motion cost :func:`solve` keeps (at most 48 x 48 each)
_KEPT_STEPS = 512


def _pruned_step(prev: Sequence[Sequence[int]], cur: Sequence[Sequence[int]], total: list[float],
                 motion: float) -> tuple[list[int], list[float]]:
    """Each candidate of ``cur``: its best predecessor in ``prev`` and that price (running
    total plus motion), pricing only the pairs that can still win.  Motion never costs less
    than nothing (``motion >= 0``), so the predecessors are tried in order of their totals
    and the scan stops at the first whose total alone exceeds the best price found; one
    whose total plus the motion its voices' sum must make (no less than the difference of
    the sums) exceeds it is passed over unpriced."""
    order = sorted(range(len(total)), key=total.__getitem__)     # stable: ties by index
    ranked = [total[a] for a in order]
    lows = [prev[a][1:] for a in order]
    sums = [sum(low) for low in lows]
    arg: list[int] = []
    best_of: list[float] = []
    for row in cur:
        low = row[1:]
        own_sum = sum(low)
        best, at = math.inf, -1
        q = -1
        for t, other, other_sum in zip(ranked, lows, sums):   # noqa: B905 (equal lengths)
            q += 1
            if t > best:
                break
            if t + motion * abs(other_sum - own_sum) > best:
                continue
            v = t + motion * sum(map(abs, map(sub, other, low)))
            if v < best:
                best, at = v, order[q]
            elif v == best and (at < 0 or order[q] < at):
                at = order[q]
        arg.append(max(at, 0))
        best_of.append(best)
    return arg, best_of


def path_cost(cands: Sequence[Sequence[Sequence[int]]], costs: Sequence[Sequence[float]], path: list[int],
              motion: float) -> float:
    """The cost :func:`solve` minimises, for one given choice (plain Python)."""
    total = float(costs[0][path[0]])
    for i in range(1, len(path)):
        prev, cur = cands[i - 1][path[i - 1]], cands[i][path[i]]
        total += float(costs[i][path[i]])
        total += motion * sum(abs(int(x) - int(y)) for x, y in zip(prev[1:], cur[1:], strict=True))
    return total


def _check_lead(harmonized: Harmonized, section: Section, options: VoicingOptions) -> None:
    lead = section.lead
    lo, hi = lead.instrument.extreme
    bar_len = harmonized.line.meter.bar
    for i, ev in enumerate(harmonized.events):
        p = ev.note.pitch
        if not lo <= p <= hi and not options.allow_extreme:
            plo, phi = lead.instrument.practical
            raise VoicingError(
                f"the lead {lead.name} ({lead.instrument.name}) cannot play {pitch_name(p)}, note "
                f"{i + 1} of the chain (bar {_bar(ev, bar_len)}), even after octave placement: its "
                f"extreme range is {pitch_name(lo)}-{pitch_name(hi)}", where="[section]",
                accepted=f"a [chain] lead_range inside {pitch_name(plo)}-{pitch_name(phi)} (or none: "
                "the lead's practical range is the default), a section whose lead plays the line, "
                "or allow_extreme = true")


def _choose(ev: Event, vtype: str, section: Section, weights: dict[str, float],
            cache: dict[tuple[object, ...], tuple[Rows, Costs]], options: VoicingOptions,
            bar: int) -> tuple[str, Rows, Costs, list[Finding]]:
    """The candidates of one note: of its planned type; where none fits inside the extreme
    ranges, of the other types.  Raises when nothing fits (the lead stays as written; a
    chain placed by the build tries its other octaves, ``build.run_pipeline``)."""
    notes: list[Finding] = []
    P, c = candidates(ev, vtype, section, weights, cache, options)
    if len(P):
        return vtype, P, c, notes
    for other in FALLBACK.get(vtype, ()):
        P, c = candidates(ev, other, section, weights, cache, options)
        if len(P):
            notes.append(Finding("shape", None, None, (
                f"bar {bar}: {other} instead of {vtype}: no {vtype} voicing of the lead "
                f"{pitch_name(ev.note.pitch)} over {ev.chord.symbol} fits inside the extreme ranges")))
            return other, P, c, notes
    raise _unplaceable(ev, vtype, section, bar)


def _clash_and_guides(events: tuple[Event, ...], chosen: Sequence[tuple[int, ...]], types: tuple[str, ...] | list[str],
                      section: Section, bars: list[int], options: VoicingOptions) -> list[Finding]:
    """A kept chord under a lead outside it and its tensions (a clash, named), and, with
    four or more parts, a voicing missing a guide tone the options do not excuse."""
    out = []
    n = len(section.parts)
    for i, (ev, vtype) in enumerate(zip(events, types, strict=True)):
        ch = ev.chord
        lead_pc = chosen[i][0] % 12
        iv = (lead_pc - ch.root) % 12
        if lead_pc not in ch.pitch_classes and iv not in {t % 12 for t in ch.tensions}:
            out.append(Finding("clash", i, section.lead.name, (
                f"bar {bars[i]}: the lead {pitch_name(chosen[i][0])} is neither a tone nor a "
                f"tension of {ch.symbol}; the chord is kept and voiced with its own tones under it")))
        if n >= 4 and vtype != "unison" and not options.guide_options:
            pcs = {p % 12 for p in chosen[i]}
            named = sounding_chord(ch, pcs)       # the symbol the score prints over it
            missing = [g for g in guide_tones(named) if g not in pcs]
            if missing:
                out.append(Finding("guide-tones", i, None, (
                    f"bar {bars[i]}: the voicing of {named.symbol} lacks "
                    + " and ".join(pitch_name(60 + g)[:-1] for g in missing) + ", a guide tone")))
    return out


def voice(harmonized: Harmonized, section: Section, options: VoicingOptions) -> Voiced:
    events = harmonized.events
    if not events:
        return Voiced(harmonized, section, (), ())
    _check_lead(harmonized, section, options)
    statements = {ev.note.statement for ev in events}
    for s, _v in options.by_statement:
        if s not in statements:
            raise VoicingError(f"by_statement names statement {s}", where="[section] by_statement",
                               accepted=f"statements 1..{max(statements)} of this chain")
    types = list(plan(harmonized, options))
    weights = {k: recipes().weight(k) for k in ("motion",) + rules.KINDS}
    cache: dict[tuple[object, ...], tuple[Rows, Costs]] = {}
    bar_len = harmonized.line.meter.bar
    bars = [_bar(ev, bar_len) for ev in events]
    cands, costs = [], []
    notes: list[Finding] = []
    for i, ev in enumerate(events):
        vtype, P, c, found_here = _choose(ev, types[i], section, weights, cache, options, bars[i])
        types[i] = vtype
        notes.extend(replace(f, event=i) for f in found_here)
        cands.append(P)
        costs.append(c)
    path, _ = solve(cands, costs, weights["motion"])
    chosen = [cands[i][j] for i, j in enumerate(path)]
    found = rules.findings(chosen, [rules.context(ev.chord, t) for ev, t in zip(events, types, strict=True)],
                           section, bars=bars, allow_extreme=options.allow_extreme,
                           vtypes=types)
    extra = _clash_and_guides(events, chosen, types, section, bars, options)
    voiced = tuple(VoicedEvent(ev, vtype, tuple(int(p) for p in row))
                   for ev, vtype, row in zip(events, types, chosen, strict=True))
    return Voiced(harmonized, section, voiced, tuple(Finding(*f) for f in found) + tuple(notes) + tuple(extra))
