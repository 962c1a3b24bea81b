"""Tutti: the groups of a tutti section (trumpets, saxophones, trombones) voiced as one.

1. The lead group (the tutti's first) is voiced on the lead by :func:`voice`, with
   the project's voicing plan (close, drop 2 ...), its rules and its search.
2. Every other group follows its layout rule (``voicing_rules/tutti.toml``): part
   for part an octave below the lead group, or stacked on down the chord below the
   lead group (the middle); the lowest part of each on the chord's root (or slash
   bass), below the part above it and clear of the low-interval limits.
3. The rule checks run per group (range, extreme range, crossing inside a section)
   and across the whole ensemble (low-interval limits between neighbouring pitches,
   minor ninths between any two, the guide tones in enough parts).
"""
from __future__ import annotations

from collections.abc import Sequence

from arrange.harmony.events import Harmonized
from arrange.theory.chords import Chord
from arrange.theory.pitch import pitch_name
from arrange.voicing import rules
from arrange.voicing.sections import Instrument, Section
from arrange.voicing.shapes import guide_tones
from arrange.voicing.tutti_layouts import Layout, layouts, tutti_rules
from arrange.voicing.voicer import Finding, Voiced, VoicedEvent, VoicingOptions, voice

__all__ = ["voice_tutti", "place", "stack_below", "root_below", "ensemble_findings", "guide_tones"]


def _limit_ok(upper: int, lower: int) -> bool:
    """The low-interval rule (``rules.below_limit``) keeps ``lower`` under ``upper``."""
    return not rules.below_limit(upper, lower)


def _m9_free(p: int, placed: Sequence[int], chord: Chord) -> bool:
    """``p`` makes no minor ninth (``rules.minor_ninth``) with any of ``placed``."""
    ctx = rules.context(chord, "unison")
    return not any(rules.minor_ninth((max(p, q),), min(p, q), ctx) for q in placed)


def _fits(p: int, placed: Sequence[int], chord: Chord) -> bool:
    """``p`` keeps the low-interval limits with its neighbours among ``placed`` (above and
    below) and makes no minor ninth with any of them."""
    above = [q for q in placed if q > p]
    below = [q for q in placed if q < p]
    if above and not _limit_ok(min(above), p):
        return False
    if below and not _limit_ok(p, max(below)):
        return False
    return _m9_free(p, placed, chord)


def place(target: int, prev: int | None, rng: tuple[int, int], placed: Sequence[int],
          chord: Chord, wanted: Sequence[int]) -> int:
    """``target`` if it fits (inside the part's range, not above the part over it, clear
    of the limits and minor ninths); else the chord tone that fits nearest to it, a guide
    tone in ``wanted`` first; else a unison with the part above."""
    lo, hi = rng
    if lo <= target <= hi and (prev is None or target <= prev) and _fits(target, placed, chord):
        return target
    top = min(prev, hi) if prev is not None else hi
    pcs = set(chord.pitch_classes)
    cands = [p for p in range(top, lo - 1, -1) if p % 12 in pcs and _fits(p, placed, chord)]
    if cands:
        return min(cands, key=lambda p: (p % 12 not in wanted, abs(p - target), -p))
    return prev if prev is not None else max(lo, min(hi, target))


def stack_below(chord: Chord, top: int, count: int, placed: Sequence[int], low: int) -> list[int]:
    """``count`` pitches stacked down from below ``top``: each the highest chord tone
    under the one before that keeps the low-interval limit and makes no minor ninth."""
    pcs = set(chord.pitch_classes)
    out: list[int] = []
    prev = top
    for _ in range(count):
        cands = [p for p in range(prev - 1, low - 1, -1) if p % 12 in pcs and (not out or p % 12 != out[-1] % 12)]
        good = [p for p in cands if _fits(p, list(placed) + out, chord)]
        p = good[0] if good else (cands[0] if cands else prev)
        out.append(p)
        prev = p
    return out


def root_below(chord: Chord, above: int, inst: Instrument, reach: int) -> int:
    """The root (or slash bass) under ``above``: the highest one clear of the low-interval
    limit within ``reach``, inside the instrument's practical range where it can be."""
    pc = chord.bass if chord.bass is not None else chord.root
    lo = inst.practical[0]
    cands = [p for p in range(above - 1, lo - 1, -1) if p % 12 == pc]
    for p in cands:
        if above - p <= reach and _limit_ok(above, p) and above - p >= 3:
            return p
    for p in cands:
        if _limit_ok(above, p):
            return p
    return cands[0] if cands else lo + (pc - lo) % 12


def _layout_row(lead: Sequence[int], chord: Chord, section: Section, layout: Layout,
                reach: int) -> list[int]:
    row = list(lead)
    guides = guide_tones(chord)
    # guide tones the lead group's voicing leaves out: each following group sounds them
    missing = [g for g in guides if all(q % 12 != g for q in lead)]
    for k, (_name, start, stop) in enumerate(section.groups[1:]):
        parts = section.parts[start:stop]
        rule = layout.rule_for(k)
        with_root = layout.bottom == "root" and len(parts) >= 2
        upper = len(parts) - (1 if with_root else 0)
        pitches: list[int] = []
        supplied: set[int] = set()
        for j in range(upper):
            prev = pitches[-1] if pitches else None
            if rule == "octave-below" and j < len(lead):
                target = lead[j] - 12
            else:                       # the middle: the next chord tone down
                start_at = prev if prev is not None else min(lead)
                target = next((p for p in range(start_at - 1, start_at - 13, -1)
                               if p % 12 in chord.pitch_classes), start_at - 1)
            wanted = [g for g in missing if g not in supplied]
            if j and wanted and target % 12 not in guides:
                # the missing guide tone takes the place of this doubling (the lead's own
                # doubling, part 1, stays): the nearest one to the target
                target = min((p for p in range(target - 6, target + 6) if p % 12 in wanted),
                             key=lambda p: (abs(p - target), p))
            got = place(target, prev, parts[j].instrument.practical, row + pitches, chord, wanted)
            supplied.add(got % 12)
            pitches.append(got)
        if with_root:
            root = root_below(chord, min(row + pitches), parts[-1].instrument, reach)
            # no room for the root: the group's voices over it move, lowest first, to the
            # chord tone that fits over the root (the fifth, say), or join the voice above
            for idx in range(len(pitches) - 1, -1, -1):
                if _fits(root, row + pitches, chord):
                    break
                for m in range(idx, len(pitches)):      # this voice and every one under it again
                    above = pitches[m - 1] if m else None
                    rest = row + pitches[:m] + [root]
                    got = place(pitches[m], above, parts[m].instrument.practical, rest, chord, [])
                    pitches[m] = got if _fits(got, rest, chord) or above is None else above
            pitches.append(root)
        row.extend(pitches)
    return row


def ensemble_findings(rows: Sequence[Sequence[int]], chords: Sequence[Chord], section: Section,
                      bars: Sequence[int], guide_parts: int) -> list[Finding]:
    """Low-interval limits between neighbouring pitches of the whole ensemble, minor
    ninths between any two, and guide tones sounding in at least ``guide_parts`` parts."""
    names = [p.name for p in section.parts]
    limits = rules.low_interval_limits()
    out: list[Finding] = []
    for i, row in enumerate(rows):
        chord = chords[i]
        order = sorted(range(len(row)), key=lambda j: -row[j])
        distinct: list[int] = []
        for j in order:
            if not distinct or row[j] != row[distinct[-1]]:
                distinct.append(j)
        at = f"bar {bars[i]}: "
        for a, b in zip(distinct, distinct[1:], strict=False):
            if not _limit_ok(row[a], row[b]):
                gap = row[a] - row[b]
                out.append(Finding("low-interval", i, names[b], at + (
                    f"{rules.INTERVAL_NAMES[gap]} {pitch_name(row[a])} ({names[a]}) over "
                    f"{pitch_name(row[b])} ({names[b]}) across the ensemble lies below its "
                    f"low-interval limit {pitch_name(limits[gap])}")))
        for a_pos, a in enumerate(distinct):
            for b in distinct[a_pos + 1:]:
                if not _m9_free(row[b], [row[a]], chord):
                    out.append(Finding("minor-ninth", i, names[b], at + (
                        f"{pitch_name(row[b])} ({names[b]}) lies a minor ninth (or compound) below "
                        f"{pitch_name(row[a])} ({names[a]}) across the ensemble")))
        for pc in guide_tones(chord):
            count = sum(1 for p in row if p % 12 == pc)
            if count < guide_parts:
                out.append(Finding("guide-tones", i, None, at + (
                    f"the guide tone {pitch_name(60 + pc)[:-1]} of {chord.symbol} sounds in {count} "
                    f"part{'s' if count != 1 else ''} of the ensemble; at least {guide_parts}")))
    return out


def voice_tutti(harmonized: Harmonized, section: Section, options: VoicingOptions) -> Voiced:
    """Every group of the tutti ``section`` voiced on the lead; findings per group and
    across the ensemble."""
    layout = layouts()[section.layout]
    name, start, stop = section.groups[0]
    lead_section = Section(name, section.description, section.parts[start:stop])
    lead = voice(harmonized, lead_section, options)
    if not lead.events:
        return Voiced(harmonized, section, (), lead.findings)
    reach = tutti_rules().root_reach
    rows = [_layout_row(ve.pitches, ve.event.chord, section, layout, reach) for ve in lead.events]
    chords = [ve.event.chord for ve in lead.events]
    bar_len = harmonized.line.meter.bar
    bars = [int(ve.event.note.onset // bar_len) + 1 for ve in lead.events]
    found: list[Finding] = list(lead.findings)
    for gname, g0, g1 in section.groups[1:]:
        group = Section(gname, "", section.parts[g0:g1])
        ctx = [rules.context(c, "unison") for c in chords]    # doublings are the layout's own
        for kind, i, part, msg, severity in rules.findings([r[g0:g1] for r in rows], ctx, group, bars=bars,
                                                           allow_extreme=options.allow_extreme,
                                                           vtypes=["unison"] * len(chords)):
            if kind in ("range", "extreme", "voice-crossing"):
                found.append(Finding(kind, i, part, msg, severity))
    found.extend(ensemble_findings(rows, chords, section, bars, tutti_rules().guide_tone_parts))
    events = tuple(VoicedEvent(ve.event, ve.voicing, tuple(int(p) for p in row))
                   for ve, row in zip(lead.events, rows, strict=True))
    return Voiced(harmonized, section, events, tuple(found))
