"""The report: ``<slug>.report.json`` (the DESIGN contract) and ``<slug>.report.md``."""
from __future__ import annotations

import json
from fractions import Fraction
from typing import Any

from ..voicing import Voiced

__all__ = ["report_data", "report_json", "report_markdown"]


def _num(q: Fraction) -> float | int:
    return int(q) if q.denominator == 1 else float(q)


def report_data(voiced: Voiced, *, title: str, tempo: float, version: str) -> dict[str, Any]:
    h = voiced.harmonized
    line = h.line
    parts = [{"name": p.name, "instrument": p.instrument.key,
              "transposition": p.instrument.transposition,
              "range": list(p.instrument.practical),
              "extreme": list(p.instrument.extreme)} for p in voiced.section.parts]
    events = []
    for i, ve in enumerate(voiced.events):
        ev = ve.event
        n = ev.note
        events.append({
            "index": i, "statement": n.statement, "bar": int(n.onset // line.meter.bar) + 1,
            "onset": _num(n.onset), "duration": _num(n.duration),
            "performed_onset": _num(n.perf_onset), "performed_duration": _num(n.perf_duration),
            "weight": n.weight, "articulation": n.articulation, "lead": n.pitch,
            "chord": ev.chord.symbol, "role": ev.role, "technique": ev.technique,
            "lead_function": ev.lead_function, "why": ev.why,
            "voicing": ve.voicing, "pitches": list(ve.pitches),
        })
    warnings = [{"kind": f.kind, "event": f.event, "part": f.part, "message": f.message,
                 "severity": f.severity} for f in voiced.findings]
    warnings += [{"kind": kind, "event": ev, "part": None, "message": msg, "severity": "warning"}
                 for kind, ev, msg in h.warnings]
    return {
        "title": title, "key": str(h.key), "meter": str(line.meter), "tempo": tempo,
        "groove": line.groove, "generator": f"arrange {version}",
        "chain": line.chain.to_json(),
        "rhythm": _rhythm(line),
        "section": {"name": voiced.section.name, "parts": parts},
        "framework": [{"bar": fc.bar, "onset": _num(fc.onset), "duration": _num(fc.duration),
                       "chord": fc.chord.symbol} for fc in h.framework],
        "events": events,
        "warnings": warnings,
    }


def _rhythm(line: Any) -> dict[str, Any]:
    """Per statement its onset, duration and bar span (bar 0 is a pickup)."""
    return {"groove": line.groove, "swing": line.swing, "written_meter": str(line.meter),
            "notate": line.notate, "pickup": _num(line.pickup), "bars": line.bars,
            "statements": [{"index": s.index, "onset": _num(s.onset), "duration": _num(s.duration),
                            "augment": _num(s.factor), "first_bar": s.first_bar,
                            "last_bar": s.last_bar} for s in line.spans]}


def report_json(data: dict[str, Any]) -> bytes:
    return (json.dumps(data, indent=2, ensure_ascii=False) + "\n").encode("utf-8")


def report_markdown(data: dict[str, Any]) -> bytes:
    ch = data["chain"]
    out = [f"# {data['title']}", "",
           f"Key {data['key']}, meter {data['meter']}, tempo {data['tempo']:g}, "
           f"groove {data['groove']}, section {data['section']['name']}.", "",
           "## Chain", "",
           f"Motif {' '.join(ch['names'][:len(ch['motif'])])}; {len(ch['statements'])} statements, "
           f"overlaps {ch['overlaps']}; {ch['length']} notes; compass after two statements "
           f"{ch['compass_after_two']:+d}; statement 3 lies {ch['transposition']:+d} semitones "
           f"from statement 1; {ch['pitch_classes']} pitch classes.", "",
           "| statement | form | transposition | starts at note |", "| --- | --- | --- | --- |"]
    for s in ch["statements"]:
        out.append(f"| {s['index']} | {s['form']} | {s['transposition']:+d} | {s['start'] + 1} |")
    out += ["", "## Harmonization", "", "| note | bar | lead | chord | role | technique | why |",
            "| --- | --- | --- | --- | --- | --- | --- |"]
    for e in data["events"]:
        out.append(f"| {e['index'] + 1} | {e['bar']} | {e['lead']} ({e['lead_function']}) | "
                   f"{e['chord']} | {e['role']} | {e['technique'] or ''} | {e['why']} |")
    from .layers import layers_markdown

    out += layers_markdown(data)
    out += ["", "## Warnings", ""]
    if not data["warnings"]:
        out.append("None.")
    for w in data["warnings"]:
        where = f"note {w['event'] + 1}" if w["event"] is not None else "whole passage"
        out.append(f"- {w['kind']} ({where}{', ' + w['part'] if w['part'] else ''}): {w['message']}")
    return ("\n".join(out) + "\n").encode("utf-8")
