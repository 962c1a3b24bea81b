"""The layer stage's search: which background voicings of a chord pass the rules a
background obeys before any cost, the cheapest of them, and the path through the layer's
chords (:mod:`arrange.voicing.layers` calls these for each layer).

* :func:`rules_first` (tone sets with their voicings, from :func:`arrange.voicing.pads.candidates`)
  -> the ones passing: fewest clashes, root at the bottom (:func:`rooted_test`), guide
  tones, most voices;
* :func:`cheapest` -> the ``KEEP`` cheapest with their costs (tone-set preference, the
  voicing stage's rules, the costs against the lead section);
* :func:`solve` -> one candidate per chord: costs plus motion (:func:`step_cost`), as the
  numpy search this replaced chose (its sums, its ties).

Plain Python; a step of ``VECTOR_PAIRS`` candidate pairs or more is priced with numpy at
once (:func:`numpy_step`, imported there only).
"""
from __future__ import annotations

import heapq
import math
from collections.abc import Callable

from arrange.theory.chords import Chord
from arrange.voicing import rules
from arrange.voicing.pads import Group, cross_cost, layer_rules, rubs, rule_cost, tone_order
from arrange.voicing.sections import Section
from arrange.voicing.shapes import recipes

__all__ = ["KEEP", "VECTOR_PAIRS", "rules_first", "cheapest", "rooted_test", "solve", "step_cost", "step_table",
           "numpy_sum", "numpy_step"]

KEEP = 500      # candidates per chord kept for the search (the cheapest by their own costs)


def rules_first(chord: Chord, lead: tuple[int, ...], pool: list[tuple[Group, tuple[tuple[int, ...], ...]]],
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
    """:func:`rules_first` over the tone sets ``read`` (the clash counts of their voicings
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


def cheapest(chord: Chord, section: Section, chosen: list[tuple[Group, tuple[tuple[int, ...], ...]]],
              sounding: list[tuple[float, tuple[int, ...]]], tables: list[dict[int, int]],
              priced: dict[tuple[tuple[int, ...], tuple[bool, ...]], float]
              ) -> list[tuple[float, Group, tuple[int, ...]]]:
    """The ``KEEP`` cheapest of ``chosen`` (tone sets with their voicings), equal costs in
    their order, each with its cost: tone-set preference plus the voicing stage's rule
    penalties (:func:`pads.rule_cost`, kept in ``priced`` for the chord) plus the costs
    against the lead section (:func:`pads.cross_cost`).  The rule penalties are never below
    zero (nor is any cost weight, ``shapes.recipes``), so where more than ``KEEP`` are
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
        flat += zip([g] * len(rows), rows, cross, strict=True)

    def weigh(k: int) -> float:
        g, row, cross = flat[k]
        pitches = g.pitches(row)
        pen = priced.get((pitches, g.rests))
        if pen is None:
            pen = priced[pitches, g.rests] = rule_cost(chord, section, pitches, g.rests, weights)
        return (g.cost + pen) + cross

    if len(flat) <= KEEP:
        done = [(weigh(k), k) for k in range(len(flat))]
    else:
        least = [g.cost + cross for g, _row, cross in flat]      # no more than the cost
        first = heapq.nsmallest(KEEP, range(len(flat)), key=least.__getitem__)
        done = [(weigh(k), k) for k in first]
        bar = max(w for w, _k in done)          # the KEEP cheapest cost no more than this
        seen = set(first)
        kept = [-w for w, _k in done]           # the KEEP least costs so far (negated heap)
        heapq.heapify(kept)
        for k in sorted((k for k in range(len(flat)) if least[k] <= bar and k not in seen), key=least.__getitem__):
            if least[k] > -kept[0]:
                break
            w = weigh(k)
            done.append((w, k))
            if w < -kept[0]:
                heapq.heapreplace(kept, -w)
    return [(w, flat[k][0], flat[k][1]) for w, k in sorted(done)[:KEEP]]


def rooted_test(chord: Chord, snd: list[tuple[int, float, tuple[int, ...]]], weight: float
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


def numpy_sum(values: list[float]) -> float:
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


def step_table(motion: float, leap: float, most: int) -> list[float]:
    """Cost of one voice moving ``d`` semitones, ``d`` = 0 .. ``most``."""
    return [motion * d + leap * max(d - 2, 0) for d in range(most + 1)]


def step_cost(a: tuple[int, ...], ra: tuple[bool, ...], b: tuple[int, ...], rb: tuple[bool, ...],
            table: list[float]) -> float:
    """The motion cost between two candidates: each voice's cost looked up by its distance,
    voices resting on either side free, added as :func:`numpy_sum` adds them."""
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
    return numpy_sum(values)


def solve(cands: list[list[tuple[int, ...]]], costs: list[list[float]],
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
    table = step_table(motion, leap, most)
    prune = motion >= 0 and leap >= 0
    total = [float(c) for c in costs[0]]
    back: list[list[int]] = []
    arg: list[int]
    new: list[float]
    for i in range(1, len(cands)):
        prev, prest, cur, crest = cands[i - 1], rests[i - 1], cands[i], rests[i]
        if len(prev) * len(cur) >= VECTOR_PAIRS:
            arg, new = numpy_step(prev, prest, cur, crest, total, costs[i], table)
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
                best = step_cost(prev[at], prest[at], row, rrow, table) + total[at]
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
                v = step_cost(prev[k], prest[k], row, rrow, table) + t
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
# a layer placed among the section up to KEEP)
VECTOR_PAIRS = 20_000


def numpy_step(prev: list[tuple[int, ...]], prest: list[tuple[bool, ...]], cur: list[tuple[int, ...]],
                crest: list[tuple[bool, ...]], total: list[float], costs: list[float], table: list[float]
                ) -> tuple[list[int], list[float]]:
    """One step of :func:`solve` priced over every pair at once: each voice's cost looked up
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
