"""A form whose passages have their own sections: each run of passages voiced for its
section, then one set of staves for the chart.

The voicing stage runs once per run of consecutive passages that share a section (voice
leading crosses the passage boundaries inside a run; another section is other players).
The chart holds one staff per player (common practice: a player reads one part): every
section's parts, a part two sections share (the same name and instrument, such as
"Trumpet 1" of ``brass-6`` and of ``trumpets-4``) once, in score order
(``sections.score_rank``: woodwinds, horns, trumpets, trombones, tuba).  A staff whose
section does not play rests there (its pitch None, ``voicer.Staffing``).  A form played by
one section throughout takes the plain path (its files are the same as before forms had
sections).
"""
from __future__ import annotations

from collections.abc import Callable
from dataclasses import replace
from typing import Any

from arrange.errors import ArrangeError, ProjectError
from arrange.harmony.events import Harmonized
from arrange.voicing.sections import Part, Section, score_rank
from arrange.voicing.voicer import Staffing, Voiced, VoicedEvent, VoicingOptions

__all__ = ["passage_sections", "voice_form", "check_players", "check_layer_overlaps"]


def passage_sections(project: Any) -> tuple[Section, ...]:
    """The section of each passage (its own, or the project's)."""
    return tuple(p.section or project.section for p in project.passages)


def _label(p: Any) -> str:
    return f"passage {p.index} ({p.name!r})"


def check_players(project: Any) -> None:
    """Refuse what one staff per player cannot hold: a section naming one part twice, a part
    name two sections (or a section and a [[layers]] section) give to different
    instruments, and a player who would play two lines at once: in a section's passage and
    in a layer that plays there too.  A layer's player who plays only where his section
    rests reads one staff (``writers.common.shared_staves``).  Only a form with more than
    one section."""
    secs = passage_sections(project)
    if len(set(secs)) < 2:
        return
    seen: dict[str, tuple[str, Any]] = {}
    for p, sec in zip(project.passages, secs, strict=True):
        names = [pt.name for pt in sec.parts]
        twice = sorted({n for n in names if names.count(n) > 1})
        if twice:
            raise ProjectError(f"{_label(p)}: section {sec.name!r} names part {twice[0]!r} twice",
                               where=p.where, accepted="one name per part (a staff per player)")
        for pt in sec.parts:
            first = seen.setdefault(pt.name, (sec.name, pt.instrument.key))
            if first[1] != pt.instrument.key:
                raise ProjectError(f"{_label(p)}: part {pt.name!r} of section {sec.name!r} is a "
                                   f"{pt.instrument.key}, but section {first[0]!r} has {pt.name!r} as a "
                                   f"{first[1]}", where=p.where,
                                   accepted="one instrument per part name (a staff per player): rename one part")
    for la in project.layers:
        for pt in la.section.parts:
            if pt.name in seen and seen[pt.name][1] != pt.instrument.key:
                raise ProjectError(f"layer {la.index} ({la.section.name!r}): part {pt.name!r} is a "
                                   f"{pt.instrument.key}, but section {seen[pt.name][0]!r} has {pt.name!r} as a "
                                   f"{seen[pt.name][1]}", where=f"{project.path.name if project.path else 'project'} "
                                   f"[[layers]] {la.index}",
                                   accepted="one instrument per part name (a staff per player): rename one part")
    for p, sec in zip(project.passages, secs, strict=True):
        own = {pt.name for pt in sec.parts}
        for la in project.layers:
            if p.layers is not None and la.index not in p.layers:
                continue
            shared = [pt.name for pt in la.section.parts if pt.name in own]
            if shared:
                raise ProjectError(
                    f"{_label(p)}: its section {sec.name!r} and layer {la.index} ({la.role}, "
                    f"{la.section.name!r}) both play here and share {shared[0]!r}", where=p.where,
                    accepted="the layer left out of this passage (layers = [...] without it; the player "
                             "then reads one staff), a layer of other players, or another section")


def _staves(sections: list[Section]) -> tuple[tuple[Part, ...], tuple[tuple[int, ...], ...]]:
    """One part per player, in score order, and each section's staff per part."""
    union: dict[str, Part] = {}
    for sec in sections:
        for pt in sec.parts:
            union.setdefault(pt.name, pt)
    order = sorted(enumerate(union.values()), key=lambda x: (score_rank(x[1].instrument.sound), x[0]))
    parts = tuple(pt for _j, pt in order)
    where = {pt.name: k for k, pt in enumerate(parts)}
    return parts, tuple(tuple(where[pt.name] for pt in sec.parts) for sec in sections)


def voice_form(harmonized: Harmonized, project: Any, options: VoicingOptions,
               voice: Callable[[Harmonized, Section, VoicingOptions], Voiced]) -> Voiced:
    """The joined form voiced: by one section throughout (``voice`` once, as before), or run
    by run of passages sharing a section, merged onto one staff per player."""
    secs = passage_sections(project)
    distinct: list[Section] = []
    for s in secs:
        if s not in distinct:
            distinct.append(s)
    if len(distinct) == 1:
        return voice(harmonized, distinct[0], options)
    check_players(project)
    parts, staves = _staves(distinct)
    of_passage = tuple(distinct.index(s) for s in secs)
    line = harmonized.line
    starts = [ps.first_note for ps in line.passages] + [len(harmonized.events)]
    runs: list[tuple[int, int, int, int]] = []           # (section, first event, end, first passage)
    for k in range(len(secs)):
        if runs and runs[-1][0] == of_passage[k]:
            s, a, _b, first = runs[-1]
            runs[-1] = (s, a, starts[k + 1], first)
        else:
            runs.append((of_passage[k], starts[k], starts[k + 1], k))
    run_statements = [{ev.note.statement for ev in harmonized.events[a:b]} for _s, a, b, _f in runs]
    everywhere = set().union(*run_statements)
    events: list[VoicedEvent] = []
    findings = []
    of_event: list[int] = []
    for r, (s, a, b, first) in enumerate(runs):
        if a == b:
            continue
        # the plan's statements of this run (a statement no run holds stays with the first,
        # so the voicer names it as before)
        by_statement = tuple((st, v) for st, v in options.by_statement
                             if st in run_statements[r] or (r == 0 and st not in everywhere))
        sub = replace(harmonized, events=harmonized.events[a:b])
        sec = distinct[s]
        try:
            voiced = voice(sub, sec, replace(options, by_statement=by_statement))
        except ArrangeError as err:
            p = project.passages[first]
            where = err.where if p.section is None else f"{p.where}, its section {sec.name!r}"
            raise type(err)(err.what, where=where, accepted=err.accepted) from None
        for ve in voiced.events:
            row: list[int | None] = [None] * len(parts)
            for j, pitch in zip(staves[s], ve.pitches, strict=True):
                row[j] = pitch
            events.append(replace(ve, pitches=tuple(row)))      # type: ignore[arg-type]
            of_event.append(s)
        findings += [replace(f, event=f.event + a) if f.event is not None else f for f in voiced.findings]
    name = " + ".join(sec.name for sec in distinct)
    section = Section(name, "the form's sections, one staff per player", parts)
    return Voiced(harmonized, section, tuple(events), tuple(findings),
                  Staffing(tuple(distinct), staves, of_passage, tuple(of_event)))


def check_layer_overlaps(voiced: Voiced, layers: tuple[Any, ...], project: Any) -> None:
    """A layer's player who reads his section's staff (the same part name and instrument)
    must not sound a layer chord while his section plays (a later passage's pickup under the
    pad's last chord, say): exit 2 naming the passage and the player."""
    st = voiced.staffing
    if st is None or not layers:
        return
    staff = {(p.name, p.instrument.key): k for k, p in enumerate(voiced.section.parts)}
    line = voiced.harmonized.line
    starts = [ps.first_note for ps in line.passages]
    for vl in layers:
        for k, part in enumerate(vl.layer.section.parts):
            j = staff.get((part.name, part.instrument.key))
            if j is None:
                continue
            spans = [(ve.event.note.onset, ve.event.note.onset + ve.event.note.duration, i)
                     for i, ve in enumerate(voiced.events) if ve.pitches[j] is not None]
            for n in vl.notes:
                if n.pitches[k] is None:
                    continue
                hit = next((i for a, b, i in spans if a < n.onset + n.duration and n.onset < b), None)
                if hit is not None:
                    p = project.passages[max(q for q, s in enumerate(starts) if s <= hit)]
                    raise ProjectError(
                        f"{_label(p)}: {part.name} plays the passage's line at {float(voiced.events[hit].event.note.onset):g} "
                        f"quarter notes while layer {vl.layer.index} ({vl.layer.role}) still sounds a chord "
                        "there", where=p.where,
                        accepted="the layer left out of the passage before (layers = [...]), or a layer of "
                                 "other players")
