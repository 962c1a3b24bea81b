"""The report: ``<slug>.report.json`` (the DESIGN contract) and ``<slug>.report.md``."""
from __future__ import annotations

import json
import re
from fractions import Fraction
from collections.abc import Sequence
from typing import TYPE_CHECKING, Any

from arrange.theory.pitch import pitch_name
from arrange.voicing.shapes import doublings
from arrange.voicing.voicer import Voiced
from arrange.writers.common import bar_of_event, json_number, spelled_parts
from arrange.writers.report_rhythm import rhythm_section_markdown

if TYPE_CHECKING:      # the layer stage (and its numpy) only for a project that has layers
    from arrange.voicing.layers import VoicedLayer

__all__ = ["json_number", "bar_of_event", "fold_index", "report_data", "report_json", "report_markdown", "md_text"]


def fold_index(voiced: Voiced) -> list[int]:
    """The report event of every voiced event: the pieces of a lead note held over a chord
    change (``Note.tied``, see ``harmony.split``) fold into the note's one event."""
    out: list[int] = []
    k = -1
    for ve in voiced.events:
        if not (ve.event.note.tied and out):
            k += 1
        out.append(k)
    return out


def _statement_table(voiced: Voiced, dynamics: tuple[str, ...], fold: list[int]) -> list[dict[str, Any]]:
    """Per statement: its first bar, rehearsal letter, dynamic, and the voicing of its notes."""
    from arrange.writers.marks import dynamic_of, rehearsal_plan

    line = voiced.harmonized.line
    letters = rehearsal_plan(voiced)
    phrases = phrase_numbers(line)
    out = []
    for st in line.segments:
        own = [i for i, ve in enumerate(voiced.events) if ve.event.note.statement == st.index]
        first_bar = None
        if st.start < len(voiced.events):
            n = voiced.events[st.start].event.note
            first_bar = line.bar_of(n.onset)
        voicings = list(dict.fromkeys(voiced.events[i].voicing for i in own))
        out.append({"statement": st.index, "form": st.form, "transposition": st.transposition,
                    "phrase": phrases.get(st.index), "passage": _passage_of(line, st.start),
                    "bar": first_bar, "rehearsal": letters.get(first_bar) if first_bar is not None else None,
                    "dynamic": dynamic_of(st.index, dynamics), "voicings": voicings,
                    "notes": list(dict.fromkeys(fold[i] for i in own))})
    return out


def _lead_names(voiced: Voiced) -> list[str]:
    """The lead as the harmonizer spelled it (key, sounding chord, direction), with its
    octave: the same name the why and the score use."""
    from arrange.theory.spelling import with_octave

    return [with_octave(ve.event.lead_name, ve.event.note.pitch) for ve in voiced.events]


def report_data(voiced: Voiced, *, title: str, tempo: float, version: str,
                dynamics: tuple[str, ...] = ("mf",)) -> dict[str, Any]:

    h = voiced.harmonized
    line = h.line
    parts = [{"name": p.name, "instrument": p.instrument.key,
              "transposition": p.instrument.transposition,
              "range": list(p.instrument.practical),
              "extreme": list(p.instrument.extreme)} for p in voiced.section.parts]
    events: list[dict[str, Any]] = []
    phrases = phrase_numbers(line)
    spelled = _lead_names(voiced)
    names = spelled_parts(voiced)[0]      # as the score spells them, at concert pitch
    fold = fold_index(voiced)
    lengths: list[tuple[Fraction, Fraction]] = []
    staffing = voiced.staffing
    every = range(len(voiced.section.parts))

    def staves(i: int) -> Sequence[int]:
        """The staves of event ``i``'s section, top to bottom (every part but in a form of sections)."""
        return every if staffing is None else staffing.staves[staffing.of_event[i]]

    def own(i: int) -> tuple[int, ...]:
        ps = voiced.events[i].pitches
        return ps if staffing is None else staffing.own(i, ps)

    for i, ve in enumerate(voiced.events):
        ev = ve.event
        n = ev.note
        if n.tied and events:
            # a lead note held over a framework chord change: one event, one segment per
            # later chord (DESIGN: report.json keeps one event per lead note)
            dur, perf = lengths[-1]
            lengths[-1] = (dur + n.duration, perf + n.perf_duration)
            events[-1]["duration"] = json_number(lengths[-1][0])
            events[-1]["performed_duration"] = json_number(lengths[-1][1])
            events[-1]["segments"].append({
                "onset": json_number(n.onset), "duration": json_number(n.duration),
                "chord": ev.chord.symbol, "role": ev.role, "technique": ev.technique,
                "pitches": list(own(i)), "lead_function": ev.lead_function, "why": ev.why,
                "voicing": ve.voicing, "names": [names[k][i] for k in staves(i)]})
            continue
        lengths.append((n.duration, n.perf_duration))
        events.append({
            "index": fold[i], "statement": n.statement, "passage": _passage_of(line, i),
            "phrase": phrases.get(n.statement),
            "bar": int(n.onset // line.meter.bar) + 1,
            "onset": json_number(n.onset), "duration": json_number(n.duration),
            "beat": json_number(n.onset % line.meter.bar * Fraction(line.meter.denominator, 4) + 1),
            "performed_onset": json_number(n.perf_onset), "performed_duration": json_number(n.perf_duration),
            "weight": n.weight, "articulation": n.articulation, "lead": n.pitch,
            "lead_name": spelled[i],
            "chord": ev.chord.symbol, "role": ev.role, "technique": ev.technique,
            "lead_function": ev.lead_function, "why": ev.why,
            "lead_class": ev.lead_class,
            "target": ev.target.symbol if ev.target is not None else None,
            "anticipated": n.anticipated,
            "voicing": ve.voicing, "pitches": list(own(i)),
            "doublings": list(doublings(own(i), ev.chord)),
            "names": [names[k][i] for k in staves(i)],
            "segments": [],
        })
        if staffing is not None:       # a form's passages with their own sections
            events[-1]["section"] = staffing.section_of(i).name
            events[-1]["parts"] = [voiced.section.parts[k].name for k in staves(i)]

    def at(ev: int | None) -> int | None:
        return fold[ev] if ev is not None and 0 <= ev < len(fold) else ev

    def bar(ev: int | None) -> Any:      # the bar of the piece itself (a segment's own bar)
        if ev is None or not 0 <= ev < len(voiced.events):
            return bar_of_event(events, at(ev))
        return int(voiced.events[ev].event.note.onset // line.meter.bar) + 1

    warnings = [{"kind": f.kind, "event": at(f.event), "bar": bar(f.event),
                 "part": f.part, "message": f.message, "severity": f.severity} for f in voiced.findings]
    warnings += [{"kind": kind, "event": at(ev), "bar": bar(ev), "part": None,
                  "message": msg, "severity": "warning"} for kind, ev, msg in h.warnings]
    data = {
        "title": title, "key": str(h.key), "meter": str(line.meter), "tempo": tempo,
        "groove": line.groove, "generator": f"arrange {version}",
        "swing": line.swing, "bars": line.bars, "dynamics": list(dynamics),
        "chain": line.chain.to_json() if line.chain is not None else None,
        "statements": _statement_table(voiced, dynamics, fold),
        "passages": _passages(line, fold, staffing),
        "rhythm": _rhythm(line),
        "section": {"name": voiced.section.name, "parts": parts},
        "framework": [{"bar": fc.bar, "onset": json_number(fc.onset), "duration": json_number(fc.duration),
                       "chord": fc.chord.symbol} for fc in h.framework],
        "keys": [{"bar": b, "key": str(k)} for b, k in getattr(h, "keys", ())],
        "events": events,
        "warnings": warnings,
    }
    if staffing is not None:        # which section voiced which passages, and its staves
        data["sections"] = [{"name": sec.name, "parts": [voiced.section.parts[k].name for k in staffing.staves[s]],
                             "passages": [j + 1 for j, x in enumerate(staffing.of_passage) if x == s]}
                            for s, sec in enumerate(staffing.sections)]
    return data


def phrase_numbers(line: Any) -> dict[int, int]:
    """Statement -> its phrase number inside its passage, for a melody's phrases (the
    statements of a line with no chain); chain statements have none."""
    out: dict[int, int] = {}
    count: dict[int, int] = {}
    for seg in line.segments:
        if seg.form != "melody":
            continue
        passage = _passage_of(line, seg.start)
        count[passage] = count.get(passage, 0) + 1
        out[seg.index] = count[passage]
    return out


def _passage_of(line: Any, index: int) -> int:
    """1-based passage of note ``index`` (1 when the line is one passage)."""
    found = 1
    for p in line.passages:
        if p.first_note <= index:
            found = p.index
    return found


def _passages(line: Any, fold: list[int], staffing: Any = None) -> list[dict[str, Any]]:
    """A form's passages: name, bars, key, material and, for a designed chain, the motif
    chosen, its score and why, and the runners-up; with sections of their own, the section
    that voiced each."""
    out = []
    for j, p in enumerate(line.passages):
        entry: dict[str, Any] = {"index": p.index, "name": p.name, "first_bar": p.first_bar,
                                 "last_bar": p.last_bar,
                                 "first_note": fold[p.first_note] if p.first_note < len(fold) else p.first_note,
                                 "key": p.key,
                                 "material": p.material, "about": p.about}
        if staffing is not None:
            entry["section"] = staffing.sections[staffing.of_passage[j]].name
        if p.design:
            (motif, score, why), *others = p.design
            entry["design"] = {"motif": motif, "score": score, "why": why,
                               "runners_up": [{"motif": m, "score": sc, "why": w} for m, sc, w in others]}
        out.append(entry)
    return out


def _rhythm(line: Any) -> dict[str, Any]:
    """Per statement its onset, duration and bar span (bar 0 is a pickup)."""
    return {"groove": line.groove, "swing": line.swing, "written_meter": str(line.meter),
            "notate": line.notate, "pickup": json_number(line.pickup), "bars": line.bars,
            "statements": [{"index": s.index, "onset": json_number(s.onset), "duration": json_number(s.duration),
                            "augment": json_number(s.factor), "first_bar": s.first_bar,
                            "last_bar": s.last_bar} for s in line.spans]}


def report_json(data: dict[str, Any]) -> bytes:
    return (json.dumps(data, indent=2, ensure_ascii=False) + "\n").encode("utf-8")


def _cell(text: object) -> str:
    return str(text if text is not None else "").replace("|", "\\|").replace("\n", " ")


_MD_SPECIAL = set("\\`*_[]<>#!|~&")


def md_text(text: object) -> str:
    """User text shown as text in CommonMark: every punctuation character that could
    start markup is backslash-escaped (CommonMark 0.31, "Backslash escapes")."""
    return "".join("\\" + c if c in _MD_SPECIAL else c for c in str(text))


def report_markdown(data: dict[str, Any]) -> bytes:
    ch = data["chain"]
    parts = data["section"]["parts"]
    out = [f"# {md_text(data['title'])}", "",
           f"Key {data['key']}, meter {data['meter']}, tempo {data['tempo']:g}, "
           f"groove {data['groove']}, {data['bars']} bars, section {md_text(data['section']['name'])} "
           f"({', '.join(md_text(p['name']) for p in parts)}).", ""]
    out += _passages_markdown(data)
    if ch is not None:
        out += ["## Chain", "",
                f"Motif {' '.join(ch['names'][:len(ch['motif'])])}; {len(ch['statements'])} statements, "
                f"overlaps {ch['overlaps']}; {ch['length']} notes; compass after two statements "
                f"{ch['compass_after_two']:+d}; statement 3 lies {ch['transposition']:+d} semitones "
                f"from statement 1; {ch['pitch_classes']} pitch classes.", ""]
    else:
        from arrange.rhythm.melody import PHRASE_RULE

        out += ["## Statements and melodies", "", PHRASE_RULE[0].upper() + PHRASE_RULE[1:] + ".", ""]
    out += ["| statement | form | transposition | starts at note | bar | rehearsal | dynamic |",
            "| --- | --- | --- | --- | --- | --- | --- |"]
    many = len({st.get("passage") for st in data["statements"]}) > 1
    for st in data["statements"]:
        first = st["notes"][0] + 1 if st["notes"] else ""
        form = st["form"] if st.get("phrase") is None else \
            f"melody, phrase {st['phrase']}" + (f" of passage {st['passage']}" if many else "")
        out.append(f"| {st['statement']} | {form} | {st['transposition']:+d} | {first} | "
                   f"{st['bar'] or ''} | {st['rehearsal'] or ''} | {st['dynamic']} |")
    out += ["", "## Harmonization", "",
            "| note | bar | beat | lead | chord | role | technique | why |",
            "| --- | --- | --- | --- | --- | --- | --- | --- |"]
    for e in data["events"]:
        out.append(f"| {e['index'] + 1} | {e['bar']} | {e['beat']:g} | {e['lead_name']} "
                   f"({_cell(e['lead_function'])}) | {_cell(e['chord'])} | {e['role']} | "
                   f"{_cell(e['technique'])} | {_cell(e['why'])} |")
        for sg in e.get("segments", []):      # a chord change under the held note
            out.append(f"| {e['index'] + 1} (held) | | at {sg['onset']:g} | {e['lead_name']} "
                       f"({_cell(sg['lead_function'])}) | {_cell(sg['chord'])} | {sg['role']} | "
                       f"{_cell(sg['technique'])} | {_cell(sg['why'])} |")
    out += ["", "## Voicing per statement", "",
            "| statement | bar | voicing | notes | pitches, top to bottom, at the first note | doubled there |",
            "| --- | --- | --- | --- | --- | --- |"]
    events = data["events"]
    for st in data["statements"]:
        notes = st["notes"]
        first = _names(events[notes[0]]) if notes else []
        doubled = ", ".join(events[notes[0]].get("doublings", [])) if notes else ""
        span = f"{notes[0] + 1}-{notes[-1] + 1}" if notes else "(overlap only)"
        out.append(f"| {st['statement']} | {st['bar'] or ''} | {', '.join(st['voicings']) or '-'} | "
                   f"{span} | {' '.join(first)} | {doubled or '-'} |")
    out += layers_markdown(data)
    out += rhythm_section_markdown(data, _cell)
    out += ["", "## Warnings", ""]
    if not data["warnings"]:
        out.append("None.")
    for w in data["warnings"]:
        where = (f"bar {w['bar']}, note {w['event'] + 1}" if w["event"] is not None
                 else "whole passage")
        who = f", {w['part']}" if w["part"] else ", all parts"
        out.append(f"- {w['severity']}: {w['kind']} ({where}{who}): {w['message']}")
    return ("\n".join(out) + "\n").encode("utf-8")


def _passages_markdown(data: dict[str, Any]) -> list[str]:
    """The report's ``## Passages`` section (a form only)."""
    if not data.get("passages"):
        return []
    own = any("section" in p for p in data["passages"])     # passages with sections of their own
    out = ["## Passages", "", "| passage | name | bars | key | material |" + (" section |" if own else ""),
           "| --- | --- | --- | --- | --- |" + (" --- |" if own else "")]
    for p in data["passages"]:
        out.append(f"| {p['index']} | {_cell(p['name'])} | {p['first_bar']}-{p['last_bar']} | {p['key']} | "
                   f"{_cell(p['material'])} |" + (f" {_cell(p.get('section'))} |" if own else ""))
    for p in data["passages"]:
        d = p.get("design")
        if not d:
            continue
        out += ["", f"Passage {p['index']} ({p['name']}): {p['about']}", "",
                f"- chosen: motif {d['motif']}, score {d['score']:.3f}: {d['why']}"]
        out += [f"- runner-up: motif {r['motif']}, score {r['score']:.3f}: {r['why']}" for r in d["runners_up"]]
    return out + [""]


def _names(note: dict[str, Any]) -> list[str]:
    """A report entry's spelled names (as the score writes them), ``rest`` where a part rests."""
    if "names" in note:
        return [n or "rest" for n in note["names"]]
    return ["rest" if p is None else pitch_name(p) for p in note["pitches"]]


def layers_data(layers: tuple[VoicedLayer, ...], voiced: Voiced | None = None) -> list[dict[str, Any]]:
    """``report.json`` ``layers``: section, role, parts (as the lead section's), notes; with
    ``voiced``, each note's ``names`` as the score spells them (``None`` where a part rests)."""
    out = []
    spelled = spelled_parts(voiced, layers)[1] if voiced is not None else None
    for li, vl in enumerate(layers):
        la = vl.layer
        whys = [_why_names(n, voiced) if voiced is not None else n.why for n in vl.notes]
        out.append({
            "index": la.index, "section": la.section.name, "role": la.role,
            "rhythm": la.rhythm_text, "dynamics": la.dynamics, "velocity": la.velocity,
            "placement": la.placement,
            "parts": [{"name": p.name, "instrument": p.instrument.key,
                       "transposition": p.instrument.transposition,
                       "range": list(p.instrument.practical),
                       "extreme": list(p.instrument.extreme)} for p in la.section.parts],
            "notes": [{"onset": json_number(n.onset), "duration": json_number(n.duration), "chord": n.chord.symbol,
                       "pitches": list(n.pitches), "why": whys[i],
                       **({"names": [spelled[li][k][i] for k in range(len(n.pitches))]} if spelled else {})}
                      for i, n in enumerate(vl.notes)],
        })
    return out


_CLASH = re.compile(r"\b([A-G][#b]*) clashes with the lead's ([A-G][#b]*) \(([^)]+)\)")
_PC = {"C": 0, "D": 2, "E": 4, "F": 5, "G": 7, "A": 9, "B": 11}


def _pc(name: str) -> int:
    return (_PC[name[0]] + name.count("#") - name.count("b")) % 12


def _why_names(note: Any, voiced: Voiced) -> str:
    """A thinned chord's why with the score's names: the tone left out spelled by its degree
    over the chord (``spell_pc``), the lead's note as the score spells it then
    (``spelled_parts``)."""
    from arrange.theory.spelling import spell_pc
    from arrange.theory.written import split_name

    if not note.why or "clashes" not in note.why:
        return str(note.why)
    h = voiced.harmonized
    key = h.key_at(max(1, int(note.onset // h.line.meter.bar) + 1))
    lead = spelled_parts(voiced)[0]
    names = [p.name for p in voiced.section.parts]
    t0, t1 = note.onset, note.onset + note.duration

    def lead_name(pc: int, part: str, fallback: str) -> str:
        if part not in names:
            return fallback
        k = names.index(part)
        for i, ve in enumerate(voiced.events):
            n = ve.event.note
            p = ve.pitches[k]
            if n.onset < t1 and t0 < n.onset + n.duration and p is not None and p % 12 == pc:
                return split_name(lead[k][i])[0]
        return fallback

    def fix(m: re.Match[str]) -> str:
        left, tone, part = m.group(1), m.group(2), m.group(3)
        return (f"{spell_pc(_pc(left), key, note.chord)} clashes with the lead's "
                f"{lead_name(_pc(tone), part, tone)} ({part})")

    return _CLASH.sub(fix, note.why)


def layer_warnings(layers: tuple[VoicedLayer, ...], events: list[dict[str, Any]],
                   fold: list[int] | None = None) -> list[dict[str, Any]]:
    """The layers' findings as report warnings (``events``: the report's, for the bar;
    ``fold``: :func:`fold_index`, the report event of each voiced event);
    ``other_part`` is the lead-section part of a clash."""
    def at(ev: int | None) -> int | None:
        return fold[ev] if fold is not None and ev is not None and 0 <= ev < len(fold) else ev

    return [{"kind": f.kind, "event": at(f.event), "bar": bar_of_event(events, at(f.event)), "part": f.part,
             "message": f.message, "severity": f.severity, "layer": vl.layer.index,
             "layer_note": f.note, "other_part": f.other_part} for vl in layers for f in vl.findings]


def layers_markdown(data: dict[str, Any]) -> list[str]:
    """The report's ``## Layers`` section (empty when there are none)."""
    layers = data.get("layers") or []
    if not layers:
        return []
    out = ["", "## Layers", ""]
    for la in layers:
        names = ", ".join(p["name"] for p in la["parts"])
        out += [f"### Layer {la['index']}: {la['role']}, {la['section']}", "",
                f"Parts {names}; rhythm `{la['rhythm']}`; dynamic {la['dynamics']}.", "",
                "| chord | onset | duration | pitches (top to bottom) | why |",
                "| --- | --- | --- | --- | --- |"]
        for n in la["notes"]:
            out.append(f"| {n['chord']} | {n['onset']:g} | {n['duration']:g} | "
                       f"{' '.join(_names(n))} | "
                       f"{n.get('why', '')} |")
        out.append("")
    return out[:-1]
