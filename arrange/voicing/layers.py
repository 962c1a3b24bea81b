"""Layers stage: background sections under the lead (``[[layers]]``).

``build_layers(harmonized, voiced, layers)`` gives one :class:`VoicedLayer` per
``[[layers]]`` entry:

* a **pad** voices the framework chords (never the approach chords) in the
  layer's ``rhythm`` (note values cycled within each chord; a chord change always
  starts a new chord, a repeated chord is held on);
* **hits** are short chords (``rhythm`` gives their length) on the groove's
  accents (:func:`accents`), on the chord the lead section plays there.

Each chord is voiced by :mod:`arrange.pads` (guide tones first, then allowed
tensions; the voicing stage's rule checks) and the whole layer is chosen by a
dynamic programme that keeps common tones and moves by step.  With ``placement =
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

import heapq
import math
import re
from bisect import bisect_right
from collections.abc import Callable
from dataclasses import dataclass
from fractions import Fraction

from arrange.errors import ProjectError
from arrange.harmony.events import FrameworkChord, Harmonized, stated_framework
from arrange.tables import Table
from arrange.theory.chords import Chord
from arrange.theory.pitch import pitch_name
from arrange.voicing import rules
from arrange.voicing.pads import (Group, candidates, clash_table, clashes, cross_cost, layer_rules, rubs, rule_cost,
                                  tone_order, velocity)
from arrange.voicing.sections import Section, section_from_table
from arrange.voicing.shapes import recipes
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


_KEEP = 500      # candidates per chord kept for the search (the cheapest by their own costs)


def _sum(values: list[float]) -> float:
    """``values`` added as numpy adds a row of float64 (``np.add.reduce`` over a contiguous
    axis: one by one under eight, else eight running sums joined pairwise, then the rest),
    so the search's sums stay those of the numpy search this replaced, ties and all.  (The
    builtin ``sum`` of floats rounds differently from Python 3.12 on.)"""
    return 0.0 + _pairwise(values, 0, len(values))


def _pairwise(a: list[float], i: int, n: int) -> float:
    if n < 8:
        res = -0.0
        for k in range(i, i + n):
            res += a[k]
        return res
    if n <= 128:
        r = a[i:i + 8]
        m = n - n % 8
        for k in range(i + 8, i + m, 8):
            for j in range(8):
                r[j] += a[k + j]
        res = ((r[0] + r[1]) + (r[2] + r[3])) + ((r[4] + r[5]) + (r[6] + r[7]))
        for k in range(i + m, i + n):
            res += a[k]
        return res
    half = n // 2
    half -= half % 8
    return _pairwise(a, i, half) + _pairwise(a, i + half, n - half)


def _step_table(motion: float, leap: float, most: int) -> list[float]:
    """Cost of one voice moving ``d`` semitones, ``d`` = 0 .. ``most``."""
    return [motion * d + leap * max(d - 2, 0) for d in range(most + 1)]


def _motion(a: tuple[int, ...], ra: tuple[bool, ...], b: tuple[int, ...], rb: tuple[bool, ...],
            table: list[float]) -> float:
    """The motion cost between two candidates: each voice's cost looked up by its distance,
    voices resting on either side free, added as :func:`_sum` adds them."""
    if True in ra or True in rb:
        values = [0.0 if p or q else table[abs(x - y)] for x, p, y, q in zip(a, ra, b, rb, strict=True)]
    else:
        values = [table[abs(x - y)] for x, y in zip(a, b, strict=True)]
    n = len(values)
    if n < 8:
        total = 0.0
        for v in values:
            total += v
        return total
    if n < 16:          # eight running sums of one value each, joined pairwise, then the rest
        total = ((values[0] + values[1]) + (values[2] + values[3])) + ((values[4] + values[5])
                                                                       + (values[6] + values[7]))
        for v in values[8:]:
            total += v
        return 0.0 + total
    return _sum(values)


def _solve(cands: list[list[tuple[int, ...]]], costs: list[list[float]],
           rests: list[list[tuple[bool, ...]]]) -> list[int]:
    """One candidate per chord minimising costs plus motion (semitones, every voice
    playing on both sides; common tones free) plus a leap cost beyond a whole step.

    A candidate's best predecessor has the least running total plus motion; ties go to the
    lowest index (as numpy's ``argmin`` over every pair would).  Where no step costs less
    than nothing (``motion``, ``leap`` >= 0) the predecessors are tried in order of their
    totals (after the one the candidate before chose), the scan stops at the first whose
    total alone exceeds the best price found, and one whose total plus ``motion`` times the
    differences of the sums of the voices both play, upper and lower half apart (no more
    than the motion itself), exceeds it is passed over unpriced."""
    motion, leap = recipes().weight("motion"), layer_rules().weight("leap")
    most = max(max(r) for c in cands for r in c) - min(min(r) for c in cands for r in c)
    table = _step_table(motion, leap, most)
    prune = motion >= 0 and leap >= 0
    total = [float(c) for c in costs[0]]
    back: list[list[int]] = []
    arg: list[int]
    new: list[float]
    for i in range(1, len(cands)):
        prev, prest, cur, crest = cands[i - 1], rests[i - 1], cands[i], rests[i]
        if len(prev) * len(cur) >= _VECTOR_PAIRS:
            arg, new = _numpy_step(prev, prest, cur, crest, total, costs[i], table)
            back.append(arg)
            total = new
            continue
        order = sorted(range(len(total)), key=total.__getitem__) if prune else list(range(len(total)))
        sums = [_halves(a, ra) for a, ra in zip(prev, prest, strict=True)]
        arg = []
        new = []
        for row, rrow, own in zip(cur, crest, costs[i], strict=True):
            best, at = math.inf, -1
            if prune and arg:
                # the row before's choice first (neighbouring candidates lie close): a low
                # price found early passes more of the others over
                at = arg[-1]
                best = _motion(prev[at], prest[at], row, rrow, table) + total[at]
            up, down = _halves(row, rrow)
            for k in order:
                t = total[k]
                if prune:
                    if t > best:
                        break
                    # the voices both play, in two halves: a bound on their motion where both
                    # rest the same parts
                    if rrow == prest[k]:
                        ku, kd = sums[k]
                        if t + motion * (abs(ku - up) + abs(kd - down)) * _SLACK > best:
                            continue
                v = _motion(prev[k], prest[k], row, rrow, table) + t
                if v < best or (v == best and k < at):
                    best, at = v, k
            arg.append(at)
            new.append(best + own)
        back.append(arg)
        total = new
    j = min(range(len(total)), key=total.__getitem__)
    path = [j]
    for arg in reversed(back):
        j = arg[j]
        path.append(j)
    return path[::-1]


# a step between two chords with this many candidate pairs or more is priced all at once
# with numpy (imported then only: the layers under a section keep a few candidates a chord,
# a layer placed among the section up to _KEEP)
_VECTOR_PAIRS = 20_000


def _numpy_step(prev: list[tuple[int, ...]], prest: list[tuple[bool, ...]], cur: list[tuple[int, ...]],
                crest: list[tuple[bool, ...]], total: list[float], costs: list[float], table: list[float]
                ) -> tuple[list[int], list[float]]:
    """One step of :func:`_solve` priced over every pair at once: each voice's cost looked up
    by its distance, one ``(len(cur), len(prev))`` plane at a time in the voices' order
    (numpy's own ``sum`` over the voices from eight on), resting voices free; each
    candidate's first least (``argmin``).  The same sums and choices as the pruned scan."""
    import numpy as np

    a, b = np.array(cur, dtype=np.intp), np.array(prev, dtype=np.intp)
    ra, rb = np.array(crest, dtype=bool), np.array(prest, dtype=bool)
    steps = np.array(table)
    n = a.shape[1]
    if n >= 8:
        step = steps[np.abs(a[:, None, :] - b[None, :, :])]
        moves = (step * ~(ra[:, None, :] | rb[None, :, :])).sum(axis=2)
    else:
        moves = np.zeros((len(a), len(b)))
        for v in range(n):
            plane = steps[np.abs(a[:, v][:, None] - b[:, v][None, :])]
            if ra[:, v].any() or rb[:, v].any():
                plane = plane * ~(ra[:, v][:, None] | rb[:, v][None, :])
            moves = plane if v == 0 else moves + plane
    whole = moves + np.array(total)[None, :]
    arg = whole.argmin(axis=1)
    best = whole[np.arange(len(a)), arg] + np.array(costs)
    return arg.tolist(), best.tolist()


def _halves(row: tuple[int, ...], rest: tuple[bool, ...]) -> tuple[int, int]:
    """The sums of the sounding pitches of the upper and the lower half of the parts."""
    half = len(row) // 2
    return (sum([p for p, r in zip(row[:half], rest[:half], strict=True) if not r]),
            sum([p for p, r in zip(row[half:], rest[half:], strict=True) if not r]))


# the bound's margin: the voices' float costs summed may round below ``motion`` times their
# distances summed, by far less than this share
_SLACK = 1 - 1e-9


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
        rooted = _rooted(chord, snd, root_weight)
        roomy = any(len(g.sounding) == n for g, _rows in pool)      # a voicing of every part fits under
        if not roomy and not any(rooted(row) for _g, rows in pool for row in rows):
            # no room under the section for even its root at the bottom: the background
            # rests there (an arranger leaves it out rather than muddy or cover the section,
            # or put another tone in the bass)
            silent.append((onset, dur, chord, snd))
            continue
        tables = [clash_table(p, chord) for _i, _w, p in snd]
        chosen = _rules_first(chord, lead, pool, tables, rooted)
        # the cheapest by their own costs (the voicing stage's rules, the lead section's
        # notes), equal costs in the candidates' order
        cheapest = _cheapest(chord, section, chosen, [(w, p) for _i, w, p in snd], tables,
                             priced.setdefault(chord, {}))
        # no room for every part: the chord's why says so (the section's lowest note named)
        cramped.append(None if roomy else min((q for _i, _w, p in snd for q in p), default=None))
        cands.append([g.pitches(row) for _w, g, row in cheapest])
        rests.append([g.rests for _w, g, _row in cheapest])
        costs.append([w for w, _g, _row in cheapest])
        sounding.append(snd)
        played.append((onset, dur, chord))
    path = _solve(cands, costs, rests) if cands else []
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


def _rules_first(chord: Chord, lead: tuple[int, ...], pool: list[tuple[Group, tuple[tuple[int, ...], ...]]],
                 tables: list[dict[int, int]], rooted: Callable[[tuple[int, ...]], bool]
                 ) -> list[tuple[Group, tuple[tuple[int, ...], ...]]]:
    """The candidates of ``pool`` (tone sets with their voicings) that pass the rules a
    background obeys before any cost, each a filter keeping the ones passing it wherever any
    does, in order: the fewest minor seconds / ninths against the lead-section notes sounding
    during the chord (``tables``: :func:`pads.clash_table` of each; a pad thins rather than
    rubs: its ``why`` then names the tones it leaves out, the root among them, and the lead
    notes they would rub), the root at the bottom (``rooted``), every guide tone that rubs
    against no lead note of the chord (where both rub, one of them), the most sounding
    voices.  Given as the tone sets keeping any, each with the voicings it keeps, in order.

    The tone sets are read in order of their sounding voices, most first: once the ones read
    settle every filter (one of them clashes not at all, one of those has the root at the
    bottom, one of those the guide tones) the rest, sounding fewer voices, cannot pass the
    last filter, and are never read."""
    table: dict[int, int] = {}
    for t in tables:
        for p, k in t.items():
            table[p] = table.get(p, 0) + k
    get = table.get
    counted: dict[int, tuple[int, list[int]]] = {}      # tone sets' voicings are often shared
    tiers = sorted({len(g.sounding) for g, _rows in pool}, reverse=True)
    least: int | None = None
    for i, voices in enumerate(tiers):
        for g, rows in pool:
            if len(g.sounding) != voices:
                continue
            hit = counted.get(id(rows))
            if hit is None:
                counts = [sum([get(p, 0) for p in row]) for row in rows] if table else [0] * len(rows)
                hit = counted[id(rows)] = (min(counts), counts)
            if least is None or hit[0] < least:
                least = hit[0]
        last = i == len(tiers) - 1
        if least != 0 and not last:
            continue
        read = [(g, rows) for g, rows in pool if len(g.sounding) >= voices]
        out = _filters(chord, lead, read, counted, least, rooted, last)
        if out is not None:
            return out
    return []


def _filters(chord: Chord, lead: tuple[int, ...], read: list[tuple[Group, tuple[tuple[int, ...], ...]]],
             counted: dict[int, tuple[int, list[int]]], least: int | None,
             rooted: Callable[[tuple[int, ...]], bool], last: bool
             ) -> list[tuple[Group, tuple[tuple[int, ...], ...]]] | None:
    """:func:`_rules_first` over the tone sets ``read`` (the clash counts of their voicings
    in ``counted``, the least of them ``least``); None where they do not settle a filter and
    more are to be read (not ``last``)."""
    fewest: list[tuple[Group, tuple[tuple[int, ...], ...]]] = []
    subsets: dict[int, tuple[tuple[int, ...], ...]] = {}
    for g, rows in read:
        low, counts = counted[id(rows)]
        if low != least:
            continue
        sub = subsets.get(id(rows))
        if sub is None:
            sub = subsets[id(rows)] = (rows if max(counts) == least
                                       else tuple(r for r, k in zip(rows, counts, strict=True) if k == least))
        fewest.append((g, sub))
    bass = (chord.bass if chord.bass is not None else chord.root) % 12
    if any(row[-1] % 12 == bass for _g, rows in fewest for row in rows):
        kept: dict[int, tuple[tuple[int, ...], ...]] = {}
        for g, rows in fewest:
            if id(rows) not in kept:
                kept[id(rows)] = tuple(r for r in rows if rooted(r))
        fewest = [(g, kept[id(rows)]) for g, rows in fewest if kept[id(rows)]]
    elif not last:
        return None
    # guide tones first, as ever: each one that rubs against no lead-section note of
    # the chord's time (a pad leaves a guide tone out only to avoid a clash or for room)
    guides = tone_order(chord)[:2]
    safe = tuple(g for g in guides if not any(rubs(g, q % 12, chord) for q in lead))
    guided = [(g, rows) for g, rows in fewest
              if (all(t in g.pcs for t in safe) if safe else any(t in g.pcs for t in guides))]
    if guided:       # where both rub: still one of them where it costs no further clash
        fewest = guided
    elif not last:
        return None
    # then as many voices as fit: a part rests only where the room under the section
    # (or a clash) leaves it nothing to play, never to save a leap
    most = max(len(g.sounding) for g, _rows in fewest)
    return [(g, rows) for g, rows in fewest if len(g.sounding) == most]


def _cheapest(chord: Chord, section: Section, chosen: list[tuple[Group, tuple[tuple[int, ...], ...]]],
              sounding: list[tuple[float, tuple[int, ...]]], tables: list[dict[int, int]],
              priced: dict[tuple[tuple[int, ...], tuple[bool, ...]], float]
              ) -> list[tuple[float, Group, tuple[int, ...]]]:
    """The ``_KEEP`` cheapest of ``chosen`` (tone sets with their voicings), equal costs in
    their order, each with its cost: tone-set preference plus the voicing stage's rule
    penalties (:func:`pads.rule_cost`, kept in ``priced`` for the chord) plus the costs
    against the lead section (:func:`pads.cross_cost`).  The rule penalties are never below
    zero (nor is any cost weight, ``shapes.recipes``), so where more than ``_KEEP`` are
    chosen the penalties are worked out in order of the other costs only until the rest
    cannot come in."""
    weights = {k: recipes().weight(k) for k in rules.KINDS}
    against = cross_cost(sounding, tables)
    crossed: dict[int, list[float]] = {}
    flat: list[tuple[Group, tuple[int, ...], float]] = []
    for g, rows in chosen:
        cross = crossed.get(id(rows))
        if cross is None:
            cross = crossed[id(rows)] = [against(row) for row in rows]
        flat += zip([g] * len(rows), rows, cross)

    def weigh(k: int) -> float:
        g, row, cross = flat[k]
        pitches = g.pitches(row)
        pen = priced.get((pitches, g.rests))
        if pen is None:
            pen = priced[pitches, g.rests] = rule_cost(chord, section, pitches, g.rests, weights)
        return (g.cost + pen) + cross

    if len(flat) <= _KEEP:
        done = [(weigh(k), k) for k in range(len(flat))]
    else:
        least = [g.cost + cross for g, _row, cross in flat]      # no more than the cost
        first = heapq.nsmallest(_KEEP, range(len(flat)), key=least.__getitem__)
        done = [(weigh(k), k) for k in first]
        bar = max(w for w, _k in done)          # the _KEEP cheapest cost no more than this
        seen = set(first)
        kept = [-w for w, _k in done]           # the _KEEP least costs so far (negated heap)
        heapq.heapify(kept)
        for k in sorted((k for k in range(len(flat)) if least[k] <= bar and k not in seen), key=least.__getitem__):
            if least[k] > -kept[0]:
                break
            w = weigh(k)
            done.append((w, k))
            if w < -kept[0]:
                heapq.heapreplace(kept, -w)
    return [(w, flat[k][0], flat[k][1]) for w, k in sorted(done)[:_KEEP]]


def _rooted(chord: Chord, snd: list[tuple[int, float, tuple[int, ...]]], weight: float
            ) -> Callable[[tuple[int, ...]], bool]:
    """Whether a candidate states the chord from its root (its bass for a slash chord): its
    lowest voice is that root, or the lead section's lowest note at the chord's start is
    that root and the candidate lies above it (common practice: a background states the
    chord from its root).  A resting voice carries the pitch above it, so the row's minimum
    is its lowest sounding note.  ``root_bottom`` = 0 (``layers.toml``) lets every one pass."""
    bass = (chord.bass if chord.bass is not None else chord.root) % 12
    first = snd[0][2] if snd else ()
    own = min(first) if first and min(first) % 12 == bass else None     # the section's own bass

    def rooted(row: tuple[int, ...]) -> bool:       # the sounding voices, top to bottom
        low = row[-1]
        return weight == 0 or low % 12 == bass or (own is not None and low > own)
    return rooted


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
