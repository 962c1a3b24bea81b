"""Forms: ``[[passages]]`` joined in order into one line, one score, one MIDI, one report.

Each passage brings its own material (a melody, a chain, or a chain the designer finds
for it: :mod:`arrange.transition`), key, ``rhythm`` and ``harmony`` tables (over the
project's own), voicing type and dynamics.  The section, the layers and the meter are
the project's.  Every passage goes through the rhythm and harmony stages on its own;
then :func:`join` lays them end to end in whole bars (a later passage's pickup sounds
in the last bar of the one before), numbers the bars, statements and notes
continuously, and records each passage (:class:`~arrange.rhythm.PassageSpan`) for the
writers: a rehearsal letter and a key signature where each passage begins, a double
bar before it.  The voicing stage and the layers then see one line.
"""
from __future__ import annotations

import re
from collections.abc import Callable
from dataclasses import dataclass, replace
from fractions import Fraction
from pathlib import Path
from typing import Any

from arrange.chain.core import build_chain, chain_length
from arrange.errors import ArrangeError, ProjectError
from arrange.harmony.events import Harmonized
from arrange.harmony.harmonizer import HarmonyOptions, harmonize
from arrange.harmony.harmonizer import read_options as read_harmony
from arrange.inputs.melody_file import Melody
from arrange.material import (
    DesignedChain,
    check_lead_range,
    melody_harmony,
    read_designed,
    read_melody,
    transpose_melody,
)
from arrange.rhythm.line import Line, PassageSpan, RhythmOptions, Segment, StatementSpan, lay_rhythm
from arrange.rhythm.line import read_options as read_rhythm
from arrange.rhythm.melody import CHAIN_ONLY, lay_melody, phrase_starts
from arrange.rhythm.meter import Meter, parse_meter
from arrange.tables import Table
from arrange.theory.keys import Key, parse_key
from arrange.voicing.sections import Section
from arrange.voicing.shapes import VOICINGS
from arrange.voicing.voicer import VoicingOptions

__all__ = ["Passage", "read_passages", "run_form", "join", "form_dynamics", "lead_notes_estimate", "mute_layers",
           "MAX_PASSAGES"]

MAX_PASSAGES = 52
_FRAMEWORK_KEYS = ("framework", "preset", "keys", "modulate")


@dataclass(frozen=True, slots=True, eq=False)
class Passage:
    index: int                                   # 1-based
    name: str
    material: Any                                # Melody, ChainSpec or DesignedChain
    key: Key
    rhythm: RhythmOptions
    harmony: HarmonyOptions | None               # None: a designed chain's own framework
    voicing: str | None                          # a voicing type for its bars (None: the project's)
    dynamics: tuple[str, ...]
    where: str
    approach: tuple[str, ...] | None = None      # a designed chain's approach techniques
    layers: tuple[int, ...] | None = None        # the project's [[layers]] that play here (None: all)
    by_statement: tuple[tuple[int, str], ...] = ()    # its section table's plan, statements of the passage
    by_bar: tuple[tuple[int, int, str], ...] = ()     # ... and bars of the passage (1 = its first bar)
    phrases: int = 1                             # a melody's phrases (its statements)
    section: Section | None = None               # its own section (None: the project's)

    @property
    def statements(self) -> int:
        m = self.material
        if isinstance(m, Melody):
            return self.phrases
        return int(m.statements)

    @property
    def kind(self) -> str:
        if isinstance(self.material, Melody):
            return f"melody ({self.material.source})"
        return "designed chain" if isinstance(self.material, DesignedChain) else "chain"


def _merged(top: Table, name: str, own: object, drop: tuple[str, ...], where: str) -> Table:
    base = top.data.get(name, {})
    if not isinstance(base, dict):
        base = {}
    if own is None:
        own = {}
    if not isinstance(own, dict):
        raise ProjectError(f"{name!r} is not a table", where=where, accepted=f"a table, e.g. {name} = {{ ... }}")
    data = {k: v for k, v in base.items() if k not in drop}
    data.update(own)
    return Table(data, f"{where} {name}")


def read_passages(top: Table, where: str, base: Path | None, meter: Meter, key: Key,
                  section: Section, dynamics: tuple[str, ...],
                  chain_reader: Callable[[Table, Path | None], Any], layer_count: int = 0) -> tuple[Passage, ...]:
    """Every ``[[passages]]`` entry, checked (material, key, meter, tables) before any work."""
    raw = top.raw("passages")
    if not isinstance(raw, list) or not raw or not all(isinstance(p, dict) for p in raw):
        raise top.error("passages", f"{raw!r}" if not isinstance(raw, list) else "the list is empty or not of tables",
                        "[[passages]] tables, one per passage, in order")
    if len(raw) > MAX_PASSAGES:
        raise top.error("passages", f"{len(raw)} passages", f"at most {MAX_PASSAGES} passages")
    top.raw("rhythm", None)
    top.raw("harmony", None)
    out: list[Passage] = []
    prev_key = key
    for i, entry in enumerate(raw, start=1):
        at = f"{where} [[passages]] {i}"
        t = Table(entry, at)
        name = t.string("name", f"Passage {i}")
        if t.has("meter"):
            theirs = parse_meter(t.string("meter"), where=t.at("meter"))
            if (theirs.numerator, theirs.denominator) != (meter.numerator, meter.denominator):
                raise t.error("meter", f"passage {i} ({name!r}) is in {theirs} but the form is in {meter}",
                              f"{meter} (one meter for the whole form, so no passage starts or ends mid-bar)")
        kinds = [k for k in ("melody", "chain") if t.has(k)]
        if len(kinds) != 1:
            raise ProjectError(f"passage {i} gives {' and '.join(kinds) if kinds else 'no material'}",
                               where=at, accepted="one of melody = \"file:...\" (or notes), chain = { motif = ... }, "
                                                  "or chain = { design = true, statements = 4 }")
        material: Any
        file_key = None
        if kinds == ["melody"]:
            material = read_melody(t, base, meter.bar)
            if material.meter is not None:
                theirs = parse_meter(material.meter, where=t.at("melody"))
                if (theirs.numerator, theirs.denominator) != (meter.numerator, meter.denominator):
                    raise t.error("melody", f"passage {i} ({name!r}): its melody file {material.source!r} is in "
                                  f"{material.meter} but the form is in {meter}",
                                  f"a melody in {meter} (one meter for the whole form, so no passage "
                                  "starts or ends mid-bar)")
            file_key = material.key
        else:
            chain_raw = t.raw("chain")
            if not isinstance(chain_raw, dict):
                raise t.error("chain", f"{chain_raw!r}", "a table: { motif = \"C4 D4 F4\", statements = 4 } "
                              "or { design = true, statements = 4 }")
            ct = Table(chain_raw, at, "chain")
            material = read_designed(ct) if ct.has("design") else chain_reader(ct, base)
        designed = isinstance(material, DesignedChain)
        try:
            pkey = parse_key(t.string("key", file_key or str(prev_key)), where=t.at("key"))
        except ArrangeError as err:
            raise ProjectError(err.what, where=err.where, accepted=err.accepted) from None
        if t.has("transpose"):
            if not isinstance(material, Melody):
                raise t.error("transpose", "'transpose' moves a melody, and this passage has none",
                              "transpose = SEMITONES with a melody")
            shift = t.integer("transpose", 0, low=-24, high=24)
            if not t.has("key") and material.key is not None:
                from arrange.harmony.harmonizer import transpose_key

                pkey = transpose_key(parse_key(material.key, where=t.at("melody")), shift)
            material = transpose_melody(material, shift, pkey)
        drop = CHAIN_ONLY if isinstance(material, Melody) else ()
        rhythm = read_rhythm(_merged(top, "rhythm", t.raw("rhythm", None), drop, at))
        own_h = t.raw("harmony", None)
        h_table = _merged(top, "harmony", own_h, _FRAMEWORK_KEYS, at)
        harmony: HarmonyOptions | None
        approach = None
        if isinstance(material, Melody):
            harmony = melody_harmony(h_table, material, meter, at)
        elif designed and not (h_table.has("framework") or h_table.has("preset")):
            harmony = None
            approach = read_harmony(Table({**h_table.data, "framework": "C"}, h_table.where)).approach
        else:
            harmony = read_harmony(h_table)
        voicing = t.string("voicing", None, choices=VOICINGS) if t.has("voicing") else None
        voicing, by_statement, by_bar, own = _section_plan(t, section, i, name, voicing)
        dyn = _dynamics(t, dynamics)
        layers = _layers(t, layer_count)
        t.finish()
        if isinstance(material, Melody):
            check_lead_range(material, own or section, t.at("melody"))
        phrases = len(phrase_starts(material, meter)) if isinstance(material, Melody) else 1
        out.append(Passage(i, name, material, pkey, rhythm, harmony, voicing, dyn, at, approach, layers,
                           by_statement, by_bar, phrases, own))
        prev_key = pkey
    for p in out:
        if isinstance(p.material, DesignedChain) and (p.index == 1 or p.index == len(out)):
            raise ProjectError(f"passage {p.index} is a designed chain with no passage "
                               f"{'before' if p.index == 1 else 'after'} it", where=p.where,
                               accepted="a designed chain between two passages: it carries the line from "
                                        "the one before into the key of the one after")
    return tuple(out)


_PLAN_KEYS = ("voicing", "by_statement", "by_bar")
_SECTION_KEYS = ("name", "parts", "tutti", "layout")


def _section_plan(t: Table, section: Section, i: int, name: str, voicing: str | None
                  ) -> tuple[str | None, tuple[tuple[int, str], ...], tuple[tuple[int, int, str], ...],
                             Section | None]:
    """A passage's ``section = "trumpets-4"`` or ``section = { name = ..., voicing = ...,
    by_statement = {...}, by_bar = {...} }``: its own section (a name from
    ``voicing_rules/sections.toml``, or ``parts`` / ``tutti`` inline as the project's
    ``[section]`` allows; None: the project's) and its voicing plan, statements and bars
    counted inside the passage."""
    from arrange.checked import whole
    from arrange.voicing.sections import section_from_table, sections

    if not t.has("section"):
        return voicing, (), (), None
    raw = t.raw("section")
    label = f"passage {i} ({name!r})"
    if isinstance(raw, str):
        raw = {"name": raw}
    if not isinstance(raw, dict):
        raise t.error("section", f"{label}: {raw!r} is not a section name nor a table",
                      "section = \"trumpets-4\", or section = { name = \"trumpets-4\", voicing = \"drop2\", "
                      "by_statement = { 2 = \"spread\" }, by_bar = { \"3-4\" = \"close\" } }")
    unknown = [k for k in raw if k not in _PLAN_KEYS + _SECTION_KEYS]
    if unknown:
        raise t.error("section", f"{label}: key {str(unknown[0])[:40]!r} is not a passage's section key",
                      "name, parts, tutti, layout (its own section), voicing, by_statement, by_bar; "
                      "allow_extreme is the project's [section]")
    own: Section | None = None
    if any(k in raw for k in _SECTION_KEYS):
        sub = Table({k: raw[k] for k in _SECTION_KEYS if k in raw}, t.where, "section")
        if "name" in raw and not ("parts" in raw or "tutti" in raw) and (
                not isinstance(raw["name"], str) or raw["name"] not in sections()):
            raise t.error("section", f"{label} names section {str(raw['name'])[:40]!r}, which is not known",
                          ", ".join(sorted(sections())) + ", or parts = [...] inline")
        try:
            own = section_from_table(sub)
            sub.finish()
        except ArrangeError as err:
            raise ProjectError(f"{label}: {err.what}", where=err.where, accepted=err.accepted) from None
        if own == section:
            own = None
    if "voicing" in raw:
        if voicing is not None:
            raise t.error("section", f"{label} gives both voicing and section.voicing", "one of them")
        v = raw["voicing"]
        if v not in VOICINGS:
            raise t.error("section", f"{label}: voicing {str(v)[:40]!r} is not known", ", ".join(VOICINGS))
        voicing = v
    plans = []
    for key in ("by_statement", "by_bar"):
        table = raw.get(key, {})
        if not isinstance(table, dict):
            raise t.error("section", f"{label}: {key} = {table!r}", f"{key} = {{ 2 = \"spread\" }}")
        entries = []
        for k, v in table.items():
            if v not in VOICINGS:
                raise t.error("section", f"{label}: {key} voicing {str(v)[:40]!r} is not known", ", ".join(VOICINGS))
            text = str(k)
            lo_t, _, hi_t = text.partition("-") if key == "by_bar" else (text, "", "")
            lo, hi = whole(lo_t.strip()), whole(hi_t.strip()) if hi_t else whole(lo_t.strip())
            if lo is None or hi is None or lo < 1 or hi < lo:
                raise t.error("section", f"{label}: {key} key {text[:40]!r}",
                              "statement numbers 1, 2, ... of the passage" if key == "by_statement"
                              else "bars of the passage: \"2\" or \"2-4\" (1 = its first bar)")
            entries.append((lo, hi, v))
        plans.append(sorted(entries))
    return voicing, tuple((lo, v) for lo, _hi, v in plans[0]), tuple(plans[1]), own


def _layers(t: Table, count: int) -> tuple[int, ...] | None:
    """``layers = [1, 2]``: which of the project's [[layers]] play in this passage."""
    if not t.has("layers"):
        return None
    raw = t.raw("layers")
    if not isinstance(raw, list) or any(isinstance(k, bool) or not isinstance(k, int) or not 1 <= k <= count
                                        for k in raw):
        raise t.error("layers", f"{raw!r}", f"a list of the project's layer numbers, 1 to {count} "
                      "(in [[layers]] order), or [] for none" if count else
                      "no layers key: the project has no [[layers]]")
    return tuple(sorted(set(raw)))


def mute_layers(layers: tuple[Any, ...], h: Harmonized, passages: tuple[Passage, ...]) -> tuple[Any, ...]:
    """Each layer rests through the passages that leave it out (``layers = [...]``): its
    chords there are dropped, and their findings with them."""
    bar = h.line.meter.bar
    out = []
    for vl in layers:
        off = [(Fraction(ps.first_bar - 1) * bar, Fraction(ps.last_bar) * bar)
               for ps, p in zip(h.line.passages, passages, strict=True)
               if p.layers is not None and vl.layer.index not in p.layers]
        if not off:
            out.append(vl)
            continue
        keep = [k for k, n in enumerate(vl.notes) if not any(lo <= n.onset < hi for lo, hi in off)]
        new_index = {k: j for j, k in enumerate(keep)}
        findings = tuple(replace(f, note=new_index[f.note]) if f.note is not None else f
                         for f in vl.findings if f.note is None or f.note in new_index)
        out.append(replace(vl, notes=tuple(vl.notes[k] for k in keep), findings=findings))
    return tuple(out)


def _dynamics(t: Table, default: tuple[str, ...]) -> tuple[str, ...]:
    from arrange.theory.dynamics import DYNAMICS

    raw = t.raw("dynamics", None)
    if raw is None:
        return default
    items = [raw] if isinstance(raw, str) else raw
    if not isinstance(items, list) or not items or any(not isinstance(d, str) or d not in DYNAMICS for d in items):
        raise t.error("dynamics", f"{raw!r}", "a dynamic or a list of them, one per statement of the passage "
                      "(the last holds for the rest), from " + ", ".join(DYNAMICS))
    return tuple(items)


def form_dynamics(passages: tuple[Passage, ...]) -> tuple[str, ...]:
    """One dynamic per statement of the joined line (statements numbered through the form)."""
    out: list[str] = []
    for p in passages:
        out += [p.dynamics[min(j, len(p.dynamics)) - 1] for j in range(1, p.statements + 1)]
    return tuple(out)


def lead_notes_estimate(passages: tuple[Passage, ...]) -> int:
    total = 0
    for p in passages:
        m = p.material
        if isinstance(m, Melody):
            total += len(m.notes)
        elif isinstance(m, DesignedChain):
            total += chain_length(m.length, m.statements, m.overlap)
        else:
            total += chain_length(len(m.motif), m.statements, m.overlap)
    return total


# ---------------------------------------------------------------- building

def _passage_line(p: Passage, meter: Meter, section: Section, before: Harmonized | None,
                  after: Passage | None) -> tuple[Line, HarmonyOptions, tuple[tuple[str, float, str], ...], str]:
    m = p.material
    if isinstance(m, Melody):
        assert p.harmony is not None
        return lay_melody(m, meter, p.rhythm, where=f"{p.where}, key 'melody'"), p.harmony, (), ""
    if isinstance(m, DesignedChain):
        from arrange.transition import design_transition, transition_framework

        assert before is not None and after is not None
        chain, design, about = design_transition(m, before.events[-1].note.pitch, p.key, after.key,
                                                 section, where=p.where)
        line = lay_rhythm(chain, meter, p.rhythm)
        options = p.harmony or transition_framework(p.key, line, p.approach)
        return line, options, design, about
    lead_range = m.lead_range or section.lead.instrument.practical
    try:
        chain = build_chain(m.motif, m.statements, m.overlap, lead_range)
    except ArrangeError as err:
        raise type(err)(err.what, where=f"{p.where}, key 'chain'", accepted=err.accepted) from None
    assert p.harmony is not None
    return lay_rhythm(chain, meter, p.rhythm), p.harmony, (), ""


def run_form(project: Any) -> tuple[Harmonized, VoicingOptions]:
    """Every passage through rhythm and harmony, joined; the voicing plan with each passage's type."""
    built: list[tuple[Passage, Harmonized, tuple[tuple[str, float, str], ...], str]] = []
    passages: tuple[Passage, ...] = project.passages
    for k, p in enumerate(passages):
        after = passages[k + 1] if k + 1 < len(passages) else None
        before = built[-1][1] if built else None
        line, options, design, about = _passage_line(p, project.meter, p.section or project.section, before, after)
        _check_framework(p, line, options)
        h = harmonize(line, p.key, options, where=f"{p.where} harmony")
        built.append((p, h, design, about))
    joined = join(built, project.meter)
    # a passage's voicing type and plan go to its statements (its pickup included) and bars,
    # counted through the form
    passage_of = {n.statement: k for k, n in _passage_notes(joined)}
    by_statement: list[tuple[int, str]] = [(s, v) for s, k in sorted(passage_of.items())
                                           if (v := built[k][0].voicing) is not None]
    by_bar: list[tuple[int, int, str]] = []
    for k, (p, _h, _d, _a) in enumerate(built):
        own = [s for s, j in sorted(passage_of.items()) if j == k]
        span = joined.line.passages[k]
        bars = span.last_bar - span.first_bar + 1
        for s, v in p.by_statement:
            if s > len(own):
                raise ProjectError(f"{_label(p)}: section.by_statement names statement {s}", where=p.where,
                                   accepted=f"statements 1 to {len(own)} of this passage")
            by_statement.append((own[s - 1], v))
        for lo, hi, v in p.by_bar:
            if hi > bars:
                raise ProjectError(f"{_label(p)}: section.by_bar names bar {hi}", where=p.where,
                                   accepted=f"bars 1 to {bars} of this passage (1 = its first bar)")
            by_bar.append((lo + span.first_bar - 1, hi + span.first_bar - 1, v))
    base: VoicingOptions = project.voicing
    return joined, replace(base, by_statement=tuple(by_statement) + base.by_statement,
                           by_bar=tuple(by_bar) + base.by_bar)


def _label(p: Passage) -> str:
    return f"passage {p.index} ({p.name!r})"


def _check_framework(p: Passage, line: Line, options: HarmonyOptions) -> None:
    """A passage's own framework must fit its material: as many bars as the passage fills,
    or a number of bars that repeats whole over them.  Longer, chords would never sound;
    cut mid-way, the changes would restart mid-tune.  (A single project still repeats its
    framework over any chain, as before.)"""
    n = len(options.framework)
    if not n or n == line.bars or (n < line.bars and line.bars % n == 0):
        return
    plural = "s" if line.bars != 1 else ""
    raise ProjectError(f"{_label(p)}: its framework has {n} bars but its material fills {line.bars} bar{plural}",
                       where=f"{p.where}, key 'harmony.framework'",
                       accepted=f"{line.bars} bar{plural} of chords (or a number that divides {line.bars}), "
                                "or none with a melody file (its own changes)")


def _passage_notes(h: Harmonized) -> list[tuple[int, Any]]:
    """(0-based passage, note) for every note of a joined line."""
    starts = [p.first_note for p in h.line.passages]
    out = []
    for n in h.line.notes:
        k = max(j for j, s in enumerate(starts) if s <= n.index)
        out.append((k, n))
    return out


def join(built: list[tuple[Passage, Harmonized, tuple[tuple[str, float, str], ...], str]],
         meter: Meter) -> Harmonized:
    """The passages end to end in whole bars (see the module doc)."""
    bar = meter.bar
    notes: list[Any] = []
    events: list[Any] = []
    framework: list[Any] = []
    warnings: list[tuple[str, int | None, str]] = []
    keys: list[tuple[int, Key]] = []
    segments: list[Segment] = []
    spans: list[StatementSpan] = []
    marks: list[PassageSpan] = []
    bars_before = 0
    seg_base = 0
    first_line = built[0][1].line
    current_key = built[0][1].key
    for p, h, design, about in built:
        line = h.line
        if events and line.pickup and notes[-1].onset >= bars_before * bar - line.pickup:
            # the pickup would sound over the last note before it: the passage before gets
            # one more bar, its last note held into it, its last chord too
            held = notes[-1].onset + notes[-1].duration == bars_before * bar
            bars_before += 1
            marks[-1] = replace(marks[-1], last_bar=marks[-1].last_bar + 1)
            framework[-1] = replace(framework[-1], duration=framework[-1].duration + bar)
            if held:
                _hold(events, notes, bars_before * bar - line.pickup)
        off = bars_before * bar
        if events and line.pickup:
            _make_room(events, notes, off - line.pickup, p)
        base = len(events)
        for ev in h.events:
            n = ev.note
            note = replace(n, index=len(notes), onset=n.onset + off, perf_onset=n.perf_onset + off,
                           statement=n.statement + seg_base)
            notes.append(note)
            events.append(replace(ev, note=note))
        framework += [replace(fc, bar=fc.bar + bars_before, onset=fc.onset + off) for fc in h.framework]
        warnings += [(kind, None if e is None else e + base, _renumber(msg, bars_before)) for kind, e, msg in h.warnings]
        if p.key != current_key:
            keys.append((bars_before + 1, p.key))
            current_key = p.key
        if not isinstance(p.material, DesignedChain):     # a transition keeps the signature it starts in
            for b, k in h.keys:
                if b > 1:
                    keys.append((b + bars_before, k))
                    current_key = k
        segments += [Segment(s.index + seg_base, s.form, s.transposition, s.start + base) for s in line.segments]
        spans += [replace(s, index=s.index + seg_base, onset=s.onset + off, first_bar=s.first_bar + bars_before,
                          last_bar=s.last_bar + bars_before) for s in line.spans]
        marks.append(PassageSpan(p.index, p.name, bars_before + 1, bars_before + line.bars, base, str(p.key),
                                 p.kind, about, design))
        bars_before += line.bars
        seg_base += len(line.segments)
    joined = Line(None, first_line.meter, tuple(notes), first_line.groove, first_line.swing,
                  first_line.pickup, Fraction(bars_before) * bar, tuple(spans), first_line.notate,
                  first_line.start, first_line.tempo_scale, tuple(segments), tuple(marks))
    events = [replace(ev, note=joined.notes[i]) for i, ev in enumerate(events)]
    return Harmonized(joined, built[0][1].key, tuple(framework), tuple(events), tuple(warnings),
                      tuple(sorted(keys, key=lambda x: x[0])))


_BAR = re.compile(r"\bbar (\d+)\b")


def _renumber(message: str, bars_before: int) -> str:
    """A passage's warning names its bars in the passage's own count; the form's one
    numbering is that plus the bars of the passages before it."""
    return _BAR.sub(lambda m: f"bar {int(m.group(1)) + bars_before}", message) if bars_before else message


def _hold(events: list[Any], notes: list[Any], end: Fraction) -> None:
    last = notes[-1]
    d = end - last.onset
    note = replace(last, duration=d, perf_duration=d if last.perf_duration == last.duration else last.perf_duration)
    notes[-1] = note
    events[-1] = replace(events[-1], note=note)


def _make_room(events: list[Any], notes: list[Any], start: Fraction, p: Passage) -> None:
    """A later passage's pickup sounds from ``start``: the note held there (a held last
    note of the passage before) is shortened to end at ``start``; a note that begins there
    or later is a collision, refused."""
    last = notes[-1]
    if last.onset >= start:
        raise ProjectError(f"passage {p.index}'s pickup starts at {float(start):g} quarter notes, where the "
                           "passage before it still plays", where=p.where,
                           accepted="a pickup that fits after the last note of the passage before")
    if last.onset + last.duration > start:
        d = start - last.onset
        note = replace(last, duration=d, perf_duration=min(last.perf_duration, d))
        notes[-1] = note
        events[-1] = replace(events[-1], note=note)
