"""Layers stage: background sections under the lead (``[[layers]]``).

``build_layers(harmonized, voiced, layers)`` gives one :class:`VoicedLayer` per
``[[layers]]`` entry:

* a **pad** voices the framework chords (never the approach chords) in the
  layer's ``rhythm`` (note values cycled within each chord; a chord change always
  starts a new chord, a repeated chord is held on);
* **hits** are short chords (``rhythm`` gives their length) on the groove's
  accents (:func:`accents`), on the chord the lead section plays there.

Each chord is voiced by :mod:`arrange.voicing.pads` (guide tones first, then allowed
tensions; the voicing stage's rule checks) and the whole layer is chosen by
:mod:`arrange.voicing.layer_search` (the rules before any cost, the cheapest, a dynamic
programme that keeps common tones and moves by step).  With ``placement =
"under"`` (the default) every chord sits below the lead section's lowest sounding
note within the low-interval limits (:func:`arrange.voicing.pads.fits_under`),
thinned where the section leaves no room for every part, and left out (the layer
rests, a ``layer-rest`` finding) where not one note fits; ``"among"`` lets it reach
into the section.  Each chord is voiced against every lead-section pitch sounding
during its whole duration; where no full voicing is clash free it is thinned
(clash-free tones only, doubled in octaves or with parts resting: a ``None``
pitch) and ``LayerNote.why`` says why.  Findings: the rule checks of the chosen
chords (resting parts left out), ``layer-rest``, and every minor second or minor
ninth between a background note and a lead-section note sounding with it
(``clash-minor-second``, ``clash-minor-ninth``: the message names both parts).
"""
from __future__ import annotations

import re
from bisect import bisect_right
from dataclasses import dataclass
from fractions import Fraction

from arrange.errors import ProjectError
from arrange.harmony.events import FrameworkChord, Harmonized, stated_framework
from arrange.tables import Table
from arrange.theory.chords import Chord
from arrange.theory.pitch import pitch_name
from arrange.voicing import rules
from arrange.voicing.layer_search import cheapest, rooted_test, rules_first, solve
from arrange.voicing.pads import candidates, clash_table, clashes, layer_rules, rubs, tone_order, velocity
from arrange.voicing.sections import Section, section_from_table
from arrange.voicing.voicer import Voiced

__all__ = ["Layer", "LayerNote", "LayerFinding", "VoicedLayer", "ROLES", "PLACEMENTS", "DYNAMICS",
           "read_layers",
           "parse_values", "build_layers", "accents", "layer_times"]

ROLES = ("pad", "hits")
# under: below the lead section's lowest sounding note, low intervals open, thinned or resting
# where there is no room (common practice); among: as low as it can, reaching into the section
# where it must (a layer the arranger means to sound inside or over the section)
PLACEMENTS = ("under", "among")
DYNAMICS = ("ppp", "pp", "p", "mp", "mf", "f", "ff")
_HALF = Fraction(1, 2)
_VALUE_RE = re.compile(r"^(r?)(1|2|4|8|16)(\.?)(t?)$")


@dataclass(frozen=True, slots=True, eq=False)
class Layer:
    index: int                                   # 1-based, in file order
    section: Section
    role: str                                    # "pad" | "hits"
    rhythm: tuple[tuple[Fraction, bool], ...]    # (note value in quarters, is a rest)
    rhythm_text: str
    dynamics: str
    placement: str = "under"                     # "under" | "among" (PLACEMENTS)

    @property
    def velocity(self) -> int:
        return velocity(self.dynamics)


@dataclass(frozen=True, slots=True, eq=False)
class LayerNote:
    onset: Fraction
    duration: Fraction
    chord: Chord
    pitches: tuple[int | None, ...]     # sounding, top to bottom, one per part; None: the part rests
    why: str = ""                       # why the chord was thinned ("" when it is not)

    @property
    def sounding(self) -> tuple[int, ...]:
        return tuple(p for p in self.pitches if p is not None)


@dataclass(frozen=True, slots=True, eq=False)
class LayerFinding:
    kind: str
    event: int | None            # the lead event sounding at the background chord's onset
    part: str | None             # the layer's part
    message: str
    severity: str = "warning"
    other_part: str | None = None   # the lead-section part of a clash
    note: int | None = None         # 0-based index of the background chord


@dataclass(frozen=True, slots=True, eq=False)
class VoicedLayer:
    layer: Layer
    notes: tuple[LayerNote, ...]
    findings: tuple[LayerFinding, ...]


def parse_values(text: str, *, where: str) -> tuple[tuple[Fraction, bool], ...]:
    """Note values: ``1`` whole, ``2`` half, ``4``, ``8``, ``16``; ``.`` dotted, ``t``
    triplet, ``r`` a rest (``"2 r4 4"``)."""
    out = []
    for i, tok in enumerate(text.split(), start=1):
        m = _VALUE_RE.match(tok)
        if not m:
            raise ProjectError(f"note value {tok!r} (token {i}) is not known", where=where,
                               accepted="1 2 4 8 16, dotted '2.', triplet '8t', rest 'r4'")
        v = Fraction(4, int(m.group(2)))
        if m.group(3):
            v *= Fraction(3, 2)
        if m.group(4):
            v *= Fraction(2, 3)
        out.append((v, bool(m.group(1))))
    if not out or all(rest for _v, rest in out):
        raise ProjectError(f"rhythm {text!r} has no note", where=where,
                           accepted="note values such as \"1\", \"2 2\", \"2. 4\"")
    return tuple(out)


def _layer(t: Table, index: int) -> Layer:
    lr = layer_rules()
    raw = t.raw("section")
    if isinstance(raw, str):
        section = section_from_table(Table({"name": raw}, t.where, t.key("section")))
    elif isinstance(raw, dict):
        st = Table(raw, t.where, t.key("section"))
        section = section_from_table(st)
        st.finish()
    else:
        raise t.error("section", f"{raw!r}", "a section name (arrange sections) or an inline "
                      "table { name = ..., parts = [...] }")
    role = t.string("role", "pad", choices=ROLES)
    rhythm_text = t.string("rhythm", lr.default(f"{role}_rhythm"))
    rhythm = parse_values(rhythm_text, where=t.at("rhythm"))
    dyn = t.string("dynamics", lr.default(f"{role}_dynamics"), choices=DYNAMICS)
    placement = t.string("placement", "under", choices=PLACEMENTS)
    t.finish()
    return Layer(index, section, role, rhythm, rhythm_text, dyn, placement)


def read_layers(raw: object, where: str) -> tuple[Layer, ...]:
    """``[[layers]]``: an array of tables (section, role, rhythm, dynamics)."""
    if raw is None:
        return ()
    if not isinstance(raw, list) or not all(isinstance(x, dict) for x in raw):
        raise ProjectError(f"layers = {raw!r}", where=f"{where}, key 'layers'",
                           accepted="an array of tables: [[layers]] with section, role, rhythm, dynamics")
    return tuple(_layer(Table(item, where, f"layers[{i}]"), i) for i, item in enumerate(raw, start=1))


def _spans(framework: tuple[FrameworkChord, ...], total: Fraction) -> list[tuple[Fraction, Fraction, Chord]]:
    """Framework chords with repeats merged: (onset, end, chord)."""
    out: list[tuple[Fraction, Fraction, Chord]] = []
    for fc in framework:
        if fc.onset >= total:
            break
        end = min(fc.onset + fc.duration, total)
        if out and out[-1][2] == fc.chord and out[-1][1] == fc.onset:
            out[-1] = (out[-1][0], end, fc.chord)
        else:
            out.append((fc.onset, end, fc.chord))
    return out


def accents(harmonized: Harmonized) -> tuple[int, ...]:
    """Indices of the lead notes that carry the groove's accents: the notes the
    rhythm stage marks ``accent`` (or anticipated).  A passage the groove marks
    none in (a straight groove without anticipations) falls back to metric
    weight: downbeats, off-beat notes held over the next beat, and the line's
    peaks on the beat."""
    notes = harmonized.line.notes
    marked = [i for i, n in enumerate(notes) if getattr(n, "articulation", "") in ("accent", "marcato")
              or getattr(n, "anticipated", False)]
    if marked:
        return tuple(marked)
    beat = Fraction(4, harmonized.line.meter.denominator)
    out = []
    for i, n in enumerate(notes):
        if n.tied:          # a held note's later piece (harmony.split) is no attack to punch
            continue
        next_beat = (n.onset // beat + 1) * beat
        anticipation = n.weight >= 2 and n.onset + n.duration > next_beat
        prev_p = notes[i - 1].pitch if i else -1
        next_p = notes[i + 1].pitch if i + 1 < len(notes) else -1
        peak = n.weight <= 1 and n.pitch > prev_p and n.pitch > next_p
        if n.weight == 0 or anticipation or peak:
            out.append(i)
    return tuple(out)


def layer_times(harmonized: Harmonized, layer: Layer) -> list[tuple[Fraction, Fraction, Chord]]:
    """(onset, duration, framework chord) of every background chord of ``layer``."""
    total = harmonized.line.total
    spans = _spans(stated_framework(harmonized), total)   # substitutes and 7sus4 as the section states them
    out: list[tuple[Fraction, Fraction, Chord]] = []
    if layer.role == "pad":
        # where the lead section pushes a chord an eighth ahead of its beat (an anticipation),
        # the pad moves with it rather than rubbing the old chord against it (common
        # practice): the new chord's first value starts at the push, the old chord's ends there
        pushes = {n.onset + _HALF: n.onset for n in harmonized.line.notes
                  if n.anticipated and n.onset >= 0}
        begins = [pushes.get(s, s) if k else s for k, (s, _e, _c) in enumerate(spans)]
        for k, (start, end, chord) in enumerate(spans):
            stop = begins[k + 1] if k + 1 < len(spans) else end
            t, j = start, 0
            while t < stop:
                value, rest = layer.rhythm[j % len(layer.rhythm)]
                on = begins[k] if j == 0 else t
                dur = min(t + value, stop) - on
                if not rest and dur > 0:
                    out.append((on, dur, chord))
                t += value
                j += 1
        return out
    for k, i in enumerate(accents(harmonized)):
        onset = harmonized.line.notes[i].onset
        value, rest = layer.rhythm[k % len(layer.rhythm)]
        span = next((s for s in spans if s[0] <= onset < s[1]), None)
        if rest or span is None or (out and out[-1][0] + out[-1][1] > onset):
            continue
        # a hit punches the chord the lead section plays on that accent (approach chords included)
        out.append((onset, min(value, span[1] - onset), harmonized.events[i].chord))
    return out


def _sounding(voiced: Voiced, onset: Fraction, dur: Fraction,
              index: tuple[list[Fraction], list[Fraction]] | None = None) -> list[tuple[int, float, tuple[int, ...]]]:
    """Lead-section events overlapping [onset, onset + dur): (event index, share, pitches).

    Events run in onset order, so the first that can overlap is found by bisection on the
    running latest end (``index``, from :func:`_sounding_index`) and the scan stops at the
    first event starting at or after the span's end: each call costs the log of the line's
    length plus the events it returns, not the whole line."""
    onsets, reach = index if index is not None else _sounding_index(voiced)
    end = onset + dur
    out = []
    events = voiced.events
    for i in range(bisect_right(reach, onset), len(events)):
        if onsets[i] >= end:
            break
        n = events[i].event.note
        lo, hi = max(onset, n.onset), min(end, n.onset + n.duration)
        if hi > lo:
            pitches = events[i].pitches
            if voiced.staffing is not None:        # a form's staves: the ones playing here
                pitches = tuple(p for p in pitches if p is not None)
            out.append((i, float((hi - lo) / dur), pitches))
    return out


def _lead_names(voiced: Voiced, e: int) -> list[str]:
    """The lead-section part names of event ``e``'s pitches as :func:`_sounding` gives them."""
    parts = voiced.section.parts
    if voiced.staffing is None:
        return [p.name for p in parts]
    return [parts[k].name for k, p in enumerate(voiced.events[e].pitches) if p is not None]


def _sounding_index(voiced: Voiced) -> tuple[list[Fraction], list[Fraction]]:
    """Onsets and the running latest end of the lead events (both non-decreasing)."""
    onsets, reach = [], []
    latest = None
    for ve in voiced.events:
        n = ve.event.note
        onsets.append(n.onset)
        e = n.onset + n.duration
        latest = e if latest is None or e > latest else latest
        reach.append(latest)
    return onsets, reach


def _voice_layer(harmonized: Harmonized, voiced: Voiced, layer: Layer) -> VoicedLayer:
    times = layer_times(harmonized, layer)
    if not times:
        return VoicedLayer(layer, (), ())
    cands: list[list[tuple[int, ...]]] = []
    rests: list[list[tuple[bool, ...]]] = []
    costs: list[list[float]] = []
    sounding, played, silent = [], [], []
    cramped: list[int | None] = []
    index = _sounding_index(voiced)
    section = layer.section
    n = len(section.parts)
    root_weight = layer_rules().weight("root_bottom")
    priced: dict[Chord, dict[tuple[tuple[int, ...], tuple[bool, ...]], float]] = {}
    for onset, dur, chord in times:
        snd = _sounding(voiced, onset, dur, index)
        lead = tuple(sorted({q for _i, _w, p in snd for q in p}))
        # first of all a background sits under the section, its low intervals open (common
        # practice): only the candidates that do are listed (thinner ones make room under a
        # low section); where none does, the findings name what is left.  among: anywhere;
        # the costs keep it as low as they can (cross_cost)
        lows = tuple(min(p) for _i, _w, p in snd) if layer.placement == "under" else None
        pool = candidates(chord, section, lead, lows)
        # a pad thins rather than rubs, then states the chord from its root (or slash bass):
        # where a least-clashing candidate has the root at the bottom, only those stay, so
        # voice motion never outweighs the root (common practice of background writing);
        # where none has, the thinned chord's why names the root among the tones left out
        rooted = rooted_test(chord, snd, root_weight)
        roomy = any(len(g.sounding) == n for g, _rows in pool)      # a voicing of every part fits under
        if not roomy and not any(rooted(row) for _g, rows in pool for row in rows):
            # no room under the section for even its root at the bottom: the background
            # rests there (an arranger leaves it out rather than muddy or cover the section,
            # or put another tone in the bass)
            silent.append((onset, dur, chord, snd))
            continue
        tables = [clash_table(p, chord) for _i, _w, p in snd]
        chosen = rules_first(chord, lead, pool, tables, rooted)
        # the cheapest by their own costs (the voicing stage's rules, the lead section's
        # notes), equal costs in the candidates' order
        kept = cheapest(chord, section, chosen, [(w, p) for _i, w, p in snd], tables, priced.setdefault(chord, {}))
        # no room for every part: the chord's why says so (the section's lowest note named)
        cramped.append(None if roomy else min((q for _i, _w, p in snd for q in p), default=None))
        cands.append([g.pitches(row) for _w, g, row in kept])
        rests.append([g.rests for _w, g, _row in kept])
        costs.append([w for w, _g, _row in kept])
        sounding.append(snd)
        played.append((onset, dur, chord))
    path = solve(cands, costs, rests) if cands else []
    notes = []
    for (o, d, ch), i, j, snd in zip(played, range(len(played)), path, sounding, strict=True):
        row = tuple(None if r else p for p, r in zip(cands[i][j], rests[i][j], strict=True))
        notes.append(LayerNote(o, d, ch, row, _why(ch, row, snd, voiced, layer, cramped[i])))
    findings = _findings(harmonized, voiced, layer, tuple(notes), sounding)
    findings += _rest_findings(harmonized, layer, silent)
    return VoicedLayer(layer, tuple(notes), tuple(findings))


def _rest_findings(harmonized: Harmonized, layer: Layer,
                   silent: list[tuple[Fraction, Fraction, Chord, list[tuple[int, float, tuple[int, ...]]]]]
                   ) -> list[LayerFinding]:
    """``layer-rest``: one finding per background chord left out for want of room under the
    lead section (the section's lowest note while it sounds named)."""
    bar_len = harmonized.line.meter.bar
    name = f"layer {layer.index} ({layer.role}, {layer.section.name})"
    out = []
    for onset, _dur, chord, snd in silent:
        low = min((q for _e, _w, p in snd for q in p), default=None)
        below = f"the lead section's lowest note {pitch_name(low)}" if low is not None else "the lead section"
        out.append(LayerFinding(
            "layer-rest", snd[0][0] if snd else None, None,
            f"{name}, bar {int(onset // bar_len) + 1}: rests through {chord.symbol}: no voicing of it "
            f"with its root at the bottom fits under {below} within the low-interval limits", "warning"))
    return out


def _why(chord: Chord, row: tuple[int | None, ...], snd: list[tuple[int, float, tuple[int, ...]]],
         voiced: Voiced, layer: Layer, cramped: int | None = None) -> str:
    """A short note when a pad chord is thinned: the tones left out, the lead
    notes they would rub against, and the parts resting or doubling; ``cramped``: the lead
    section's lowest note where it leaves no room for every part under it."""
    n = len(row)
    order = tone_order(chord)
    played = {p % 12 for p in row if p is not None}
    full = min(n, len(order))
    rests = [layer.section.parts[k].name for k, p in enumerate(row) if p is None]
    bass = chord.bass if chord.bass is not None else chord.root
    low = min(p for p in row if p is not None)
    rooted = ""
    if low % 12 != bass % 12:
        against = sorted({(q % 12, _lead_names(voiced, e)[k]) for e, _w, ps in snd
                          for k, q in enumerate(ps) if (q - bass) % 12 == 1})   # a half step above
        if against:
            rooted = (f"root {_pc_name(bass)} off the bottom: it clashes with the lead's "
                      f"{_pc_name(against[0][0])} ({against[0][1]})")
    if len(played) >= full and not rests:
        return rooted
    left = []
    for pc in order:
        if pc in played:
            continue
        against = sorted({(q % 12, _lead_names(voiced, e)[k]) for e, _w, ps in snd for k, q in enumerate(ps)
                          if rubs(pc, q % 12, chord)})
        if against:
            q, part = against[0]
            left.append(f"{_pc_name(pc)} clashes with the lead's {_pc_name(q)} ({part})")
    if not left and not rests:
        return rooted
    if cramped is not None and rests:
        left.insert(0, f"no room for {n} parts under the lead section's lowest note {pitch_name(cramped)} "
                       "within the low-interval limits")
    out = "thinned: " + ("; ".join(left) if left else "fewer tones")
    if rests:
        out += "; " + ", ".join(rests) + (" rests" if len(rests) == 1 else " rest")
    elif len(played) < n:
        out += "; clash-free tones doubled in octaves"
    return out + (f"; {rooted}" if rooted and bass % 12 in played else "")


def _findings(harmonized: Harmonized, voiced: Voiced, layer: Layer, notes: tuple[LayerNote, ...],
              sounding: list[list[tuple[int, float, tuple[int, ...]]]]) -> list[LayerFinding]:
    if not notes:
        return []
    bar_len = harmonized.line.meter.bar
    bars = [int(n.onset // bar_len) + 1 for n in notes]
    P = [_filled(n.pitches) for n in notes]
    ctx = [rules.context(n.chord, "spread") for n in notes]
    sec = layer.section
    names = [p.name for p in sec.parts]
    name = f"layer {layer.index} ({layer.role}, {sec.name})"
    out = []
    first_event = [snd[0][0] if snd else None for snd in sounding]
    for kind, i, part, msg, severity in rules.findings(P, ctx, sec, bars=bars, allow_extreme=True,
                                                       vtypes=["spread"] * len(notes)):
        if notes[i].pitches[names.index(part)] is None:
            continue        # a resting part carries its neighbour's pitch only for the checks
        out.append(LayerFinding(kind, first_event[i], part, f"{name}, {msg}", severity, None, i))
    for i, (n, snd) in enumerate(zip(notes, sounding, strict=True)):
        lows = [min(p) for _e, _w, p in snd]
        top = next(k for k, p in enumerate(n.pitches) if p is not None)
        if lows and max(n.sounding) >= min(lows):
            out.append(LayerFinding(
                "layer-above-lead", first_event[i], sec.parts[top].name,
                f"{name}, bar {bars[i]}: {sec.parts[top].name} {pitch_name(max(n.sounding))} sits at or "
                f"above the lead section's lowest note {pitch_name(min(lows))}", "warning", None, i))
        seen: set[tuple[int, int, int, int]] = set()
        for e, _w, pitches in snd:
            for j, a in enumerate(P[i]):
                if n.pitches[j] is None:
                    continue
                for q, b in enumerate(pitches):
                    if not clashes(a, b, n.chord) or (j, q, a, b) in seen:
                        continue        # one finding per pair while the chord holds
                    seen.add((j, q, a, b))
                    kind = "clash-minor-second" if abs(a - b) == 1 else "clash-minor-ninth"
                    what = "a minor second" if abs(a - b) == 1 else (
                        "a minor ninth" if abs(a - b) == 13 else "a compound minor ninth")
                    bar = int(voiced.events[e].event.note.onset // bar_len) + 1
                    out.append(LayerFinding(
                        kind, e, sec.parts[j].name,
                        f"{name}, bar {bar}: {sec.parts[j].name} {pitch_name(a)} against "
                        f"{_lead_names(voiced, e)[q]} {pitch_name(b)} of the lead section, {what} "
                        f"sounding together (over {n.chord.symbol})", "warning",
                        _lead_names(voiced, e)[q], i))
    return out


def _pc_name(pc: int) -> str:
    return pitch_name(60 + pc % 12)[:-1]


def _filled(pitches: tuple[int | None, ...]) -> tuple[int, ...]:
    """Pitches with each resting part carrying the sounding pitch above it (a part above
    the first sounding one: that one's pitch)."""
    out: list[int] = []
    for p in pitches:
        out.append(p if p is not None else (out[-1] if out else next(q for q in pitches if q is not None)))
    return tuple(out)


def build_layers(harmonized: Harmonized, voiced: Voiced,
                 layer_options: tuple[Layer, ...]) -> tuple[VoicedLayer, ...]:
    """Every background layer, voiced under the lead section."""
    return tuple(_voice_layer(harmonized, voiced, layer) for layer in layer_options)
