"""Background chords: the candidate voicings of one pad or hit chord and their costs.

A background chord voices a framework chord for a layer's section with the
guide tones first (third and seventh), then the tensions the chord allows
(``voicing_rules/layers.toml`` [tensions]), then root and fifth.  Candidates
are scored with the voicing stage's own rule checks (:mod:`arrange.rules`:
ranges, low-interval limits, crossing, minor ninths, doublings) plus the
layer's costs: sitting at or above the lead section's lowest note, and minor
seconds or minor ninths against lead-section notes that sound with it.

A pad is thinned rather than let rub: when no full set of chord tones is free
of minor seconds and minor ninths against every lead-section pitch sounding
during the chord (:func:`safe_pcs`), :func:`candidates` adds thinner voicings
of the clash-free tones only (a guide tone always among them), doubled in
octaves or with lower parts resting (a :class:`Group` says which parts sound; a
resting part carries the pitch of the part above it so that the rule checks see
the sounding intervals, and its own marks are left out).

Plain Python, pruned: a voicing that cannot sit under the lead section is never
placed (each stack's floor, the tops under the section), and the layer stage
prices only the voicings that pass its rules before any cost.
"""
from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from functools import lru_cache
from itertools import combinations, combinations_with_replacement

from arrange.errors import VoicingError
from arrange.theory.chords import Chord
from arrange.voicing import rules
from arrange.voicing.sections import Section, read_rules
from arrange.voicing.shapes import fifth_pc

__all__ = ["LayerRules", "layer_rules", "tone_order", "pc_sets", "safe_pcs", "rubs", "thinned_sets",
           "room_sets", "Group", "candidates", "rule_cost", "cross_cost", "clashes", "clash_table",
           "fits_under", "velocity"]


@dataclass(frozen=True, slots=True, eq=False)
class LayerRules:
    defaults: tuple[tuple[str, str], ...]
    tension_order: tuple[int, ...]
    families: tuple[tuple[int, ...], ...]
    max_gap: int
    max_bottom_gap: int
    weights: tuple[tuple[str, float], ...]
    velocities: tuple[tuple[str, int], ...]

    def default(self, name: str) -> str:
        return dict(self.defaults)[name]

    def weight(self, name: str) -> float:
        return _weights(self)[name]


@lru_cache(maxsize=8)
def _weights(lr: LayerRules) -> dict[str, float]:
    """The layer weights as a dict, made once (the search asks for them often)."""
    return dict(lr.weights)


@lru_cache(maxsize=1)
def layer_rules() -> LayerRules:
    where = "voicing_rules/layers.toml"
    d = read_rules("layers.toml")
    try:
        lr = LayerRules(
            tuple((k, str(v)) for k, v in d["defaults"].items()),
            tuple(int(t) % 12 for t in d["tensions"]["order"]),
            tuple(tuple(int(t) % 12 for t in f) for f in d["tensions"]["families"]),
            int(d["shape"]["max_gap"]), int(d["shape"]["max_bottom_gap"]),
            tuple((k, float(v)) for k, v in d["weights"].items()),
            tuple((k, int(v)) for k, v in d["velocity"].items()))
        for k in ("above_lead", "above_lead_step", "clash", "choice", "missing_guide", "doubled", "leap",
                  "thinned", "rest"):
            lr.weight(k)
        for k in ("pad_rhythm", "hits_rhythm", "pad_dynamics", "hits_dynamics"):
            lr.default(k)
    except (KeyError, TypeError, ValueError) as err:
        raise VoicingError(f"the layer table is broken ({err!r})", where=where,
                           accepted="tables defaults, tensions, shape, weights, velocity") from None
    if any(not 1 <= v <= 127 for _k, v in lr.velocities):
        raise VoicingError("a velocity outside 1..127", where=f"{where} [velocity]",
                           accepted="MIDI velocities 1..127")
    return lr


def velocity(dynamic: str) -> int:
    return dict(layer_rules().velocities)[dynamic]


def tone_order(chord: Chord) -> tuple[int, ...]:
    """Pitch classes in the order a background voices them: guide tones (third,
    seventh or sixth), then allowed tensions, then root and fifth."""
    lr = layer_rules()
    iv = {i % 12 for i in chord.intervals}
    third = next((t for t in (4, 3, 5) if t in iv), None)
    seventh = next((t for t in (10, 11, 9) if t in iv), None)
    if chord.quality == "dim7":
        seventh = 9
    order: list[int] = [t for t in (third, seventh) if t is not None]
    allowed = {t % 12 for t in chord.tensions} - iv
    used_family: set[int] = set()
    for t in lr.tension_order:
        fam = next((k for k, f in enumerate(lr.families) if t in f), -1 - t)
        if t in allowed and fam not in used_family:
            order.append(t)
            used_family.add(fam)
    # a natural 13 or b13 beside the fifth makes a second inside the pad: leave the fifth out
    rest = [0] + ([] if {8, 9} & set(order[2:]) else [(fifth_pc(chord) - chord.root) % 12])
    order += [t for t in rest if t not in order]
    order += [t for t in sorted(iv) if t not in order]
    return tuple((chord.root + t) % 12 for t in order)


def pc_sets(chord: Chord, n: int) -> list[tuple[tuple[int, ...], float]]:
    """Multisets of ``n`` pitch classes to voice, each with its preference cost.
    Leaving out a guide tone costs ``missing_guide`` (so a pad drops one only to
    avoid a clash with the lead section); more parts than tones double
    root, then fifth, then the rest in order."""
    lr = layer_rules()
    order = tone_order(chord)
    guides = order[:2]
    if n > len(order):
        base = list(order)
        extra = [order[order.index(chord.root)]] + [p for p in order if p != chord.root]
        k = 0
        while len(base) < n:
            base.append(extra[k % len(extra)])
            k += 1
        return [(tuple(base), lr.weight("doubled") * (n - len(order)))]
    best = sum(range(n))
    out = []
    for combo in combinations(range(len(order)), n):
        pcs = tuple(order[i] for i in combo)
        missing = len(set(guides) - set(pcs)) if n >= len(guides) else 0
        if n >= 2 and missing == len(guides):      # a background always has a guide tone
            continue
        out.append((pcs, lr.weight("choice") * (sum(combo) - best) + lr.weight("missing_guide") * missing))
    return out


@lru_cache(maxsize=16384)
def _rel_stacks(pcs: tuple[int, ...], n: int) -> tuple[tuple[int, tuple[int, ...], int], ...]:
    """The stacks of the multiset ``pcs`` (sorted) within the gap limits: each one's top
    pitch class, every voice's distance below the top, and the lowest top at which every
    adjacent pair keeps its low-interval limit (``rules.below_limit``: the lower note
    ``top - offset`` at or above the limit of the gap).  Each order of the tones is stacked
    downward, each lower voice close or (up to five parts) an octave open, as far as the
    gap limits let it: the gaps depend only on the order and the open choices, so a stack
    with too wide a gap is never placed.  Stacks are the same for every transposition of
    the tones (:func:`_stacks`)."""
    lr = layer_rules()
    limit = [rules.low_limit(g) for g in range(25)]          # the rule's limit by gap (at most 24 here)
    out: list[tuple[int, tuple[int, ...], int]] = []
    if n > 5:       # rotations of the tones, close
        for order in {pcs[i:] + pcs[:i] for i in range(n)}:
            gaps = [(a - b) % 12 or 12 for a, b in zip(order, order[1:], strict=False)]
            if n > 1 and (max(gaps[:-1], default=0) > lr.max_gap or gaps[-1] > lr.max_bottom_gap):
                continue
            offsets = [0]
            floor = -(1 << 30)
            for g in gaps:
                offsets.append(offsets[-1] + g)
                # the lower note top - offset keeps the rule's limit (rules.below_limit)
                floor = max(floor, limit[g] + offsets[-1])
            out.append((order[0], tuple(offsets), floor))
        return tuple(out)
    left = {pc: pcs.count(pc) for pc in pcs}
    offsets = [0]

    def walk(first: int, above: int, floor: int) -> None:
        """Every order of the tones ``left`` stacked under the voice ``above`` (each tone
        once per copy: the multiset's distinct orders), close or an octave open."""
        depth = len(offsets)
        if depth == n:
            out.append((first, tuple(offsets), floor))
            return
        most = lr.max_bottom_gap if depth == n - 1 else lr.max_gap
        for pc, k in left.items():
            if not k:
                continue
            left[pc] = k - 1
            for g in ((above - pc) % 12 or 12, ((above - pc) % 12 or 12) + 12):
                if g > most:
                    break
                offsets.append(offsets[-1] + g)
                # the lower note top - offset keeps the rule's limit (rules.below_limit)
                walk(first, pc, max(floor, limit[g] + offsets[-1]))
                offsets.pop()
            left[pc] = k

    for pc in list(left):
        left[pc] -= 1
        walk(pc, pc, -(1 << 30))
        left[pc] += 1
    return tuple(out)


@lru_cache(maxsize=16384)
def _rel_by_first(pcs: tuple[int, ...], n: int) -> dict[int, tuple[tuple[tuple[int, ...], int], ...]]:
    """:func:`_rel_stacks` by top pitch class: each stack's distances below the top and
    floor, in ascending order of distances (so the voicings from one top come out in
    descending order of pitches)."""
    by_first: dict[int, list[tuple[tuple[int, ...], int]]] = {}
    for first, offsets, floor in _rel_stacks(pcs, n):
        by_first.setdefault(first, []).append((offsets, floor))
    return {first: tuple(sorted(v)) for first, v in by_first.items()}


@lru_cache(maxsize=16384)
def _stacks(pcs: tuple[int, ...], n: int) -> dict[int, tuple[tuple[tuple[int, ...], int], ...]]:
    """The stacks of the multiset ``pcs`` (sorted) by top pitch class (:func:`_rel_by_first`
    of the transposition of ``pcs`` that starts on 0)."""
    k = pcs[0]
    return {(first + k) % 12: v for first, v in _rel_by_first(tuple(p - k for p in pcs), n).items()}


@lru_cache(maxsize=65536)
def _at_top(pcs: tuple[int, ...], n: int, lo: int, top: int, fit: bool) -> tuple[tuple[int, ...], ...]:
    """The voicings (top to bottom, in descending order) of the multiset ``pcs`` from the top
    pitch ``top`` with the bottom at or above ``lo``; ``fit``: only those whose adjacent
    voices keep their low-interval limits."""
    return tuple(tuple(top - o for o in offsets) for offsets, floor in _stacks(pcs, n).get(top % 12, ())
                 if top - offsets[-1] >= lo and (not fit or top >= floor))


@lru_cache(maxsize=16384)
def _tops(pcs: tuple[int, ...], hi: int) -> tuple[int, ...]:
    """The tops a voicing of ``pcs`` may have (descending): a tone of the set within the
    octave below ``hi``, or one or two octaves lower."""
    tones = set(pcs)
    return tuple(t for t in range(hi, hi - 36, -1) if t % 12 in tones)


@lru_cache(maxsize=16384)
def _shapes(pcs: tuple[int, ...], lo: int, hi: int, n: int) -> tuple[tuple[int, ...], ...]:
    """Every voicing (top to bottom, rows in descending order) of the multiset ``pcs``
    (:func:`_stacks`) from a top within the octave below ``hi``, or one or two octaves
    lower, with the bottom at or above ``lo``."""
    return tuple(row for t in _tops(pcs, hi) for row in _at_top(pcs, n, lo, t, False))


def rubs(pc: int, lead_pc: int, chord: Chord) -> bool:
    """A background pitch class ``pc`` under a lead pitch class ``lead_pc`` sounds a
    minor second or minor ninth (the b9 over a dominant's root excepted)."""
    if (lead_pc - pc) % 12 != 1:
        return False
    return not (chord.is_dominant and pc % 12 == chord.root)


def safe_pcs(chord: Chord, lead: tuple[int, ...]) -> tuple[int, ...]:
    """The chord's pad tones (:func:`tone_order`) that rub against none of the
    lead-section pitches ``lead`` when voiced below them."""
    lead_pcs = {p % 12 for p in lead}
    return tuple(pc for pc in tone_order(chord) if not any(rubs(pc, q, chord) for q in lead_pcs))


def thinned_sets(chord: Chord, n: int, safe: tuple[int, ...]) -> list[tuple[tuple[int, ...], int, float]]:
    """``(multiset, sounding voices, cost)`` of the thinner pads made of the
    clash-free tones ``safe``, when no full set of ``n`` tones is clash free:
    fewer distinct tones (a guide tone always among them), doubled in octaves up
    to ``n`` voices or with the remaining parts resting.  Where both guide tones
    rub, one of them may join the clash-free tones (a pad keeps a guide tone;
    the search weighs the clash it brings)."""
    lr = layer_rules()
    order = tone_order(chord)
    guides = set(order[:2])
    full = min(n, len(order))
    if any(set(pcs) <= set(safe) for pcs, _c in pc_sets(chord, n)):
        return []
    pool = [pc for pc in order if pc in safe or pc in guides]
    out = []
    for s in range(min(len(pool), n - 1, full), 0, -1):
        for combo in combinations(pool, s):
            if not guides & set(combo) or len(set(combo) - set(safe)) > 1:
                continue
            pref = (lr.weight("choice") * sum(order.index(pc) for pc in combo)
                    + lr.weight("missing_guide") * len(guides - set(combo))
                    + lr.weight("thinned") * (full - s))
            for t in range(s, n + 1):
                for extra in combinations_with_replacement(combo, t - s):
                    cost = pref + lr.weight("doubled") * (t - s) + lr.weight("rest") * (n - t)
                    out.append((tuple(sorted(combo + extra)), t, cost))
    return out


def room_sets(chord: Chord, n: int) -> list[tuple[tuple[int, ...], float]]:
    """``(tones, cost)`` of the thinner pads that make room under a low lead section: ``1 ..
    n - 1`` distinct chord tones (:func:`tone_order`) holding the root or a guide tone (the
    open root and fifth under a low section), the other parts resting.  Each tone
    left out costs ``thinned`` and each resting part ``rest`` on top of the preference cost,
    so a pad thins only where its full voicing cannot sit under the section within the
    low-interval limits (:func:`fits_under`)."""
    lr = layer_rules()
    order = tone_order(chord)
    guides = set(order[:2])
    bass = (chord.bass if chord.bass is not None else chord.root) % 12
    full = min(n, len(order))
    out = []
    for s in range(1, min(n - 1, len(order)) + 1):
        for combo in combinations(range(len(order)), s):
            pcs = tuple(order[i] for i in combo)
            if not (guides | {bass}) & set(pcs):      # a background keeps its root or a guide tone
                continue
            out.append((pcs, lr.weight("choice") * sum(combo)
                        + lr.weight("missing_guide") * len(guides - set(pcs))
                        + lr.weight("thinned") * (full - s) + lr.weight("rest") * (n - s)))
    return out


@dataclass(frozen=True, slots=True, eq=False)
class Group:
    """One tone set voiced by some of a section's parts: its sorted tones, the parts that
    sound (indices, top to bottom; the others rest), the span those parts reach together
    and the set's preference cost.  A resting part carries the pitch of the sounding part
    above it (above the first sounding part: that part's pitch), so the rule checks see the
    sounding intervals (``carry``)."""
    pcs: tuple[int, ...]
    sounding: tuple[int, ...]
    lo: int
    hi: int
    cost: float
    carry: tuple[int, ...]
    rests: tuple[bool, ...]

    def pitches(self, row: tuple[int, ...]) -> tuple[int, ...]:
        """A voicing ``row`` of the sounding parts spread over every part (a resting part
        carrying the pitch above it)."""
        return row if len(row) == len(self.carry) else tuple(row[c] for c in self.carry)


def _group(pcs: tuple[int, ...], sounding: tuple[int, ...], section: Section, cost: float,
           seen: dict[tuple[int, ...], tuple[int, int, tuple[int, ...], tuple[bool, ...]]]) -> Group:
    hit = seen.get(sounding)
    if hit is None:
        parts = section.parts
        n = len(parts)
        hit = seen[sounding] = (min(parts[j].instrument.practical[0] for j in sounding),
                                max(parts[j].instrument.practical[1] for j in sounding),
                                tuple(max(sum(1 for s in sounding if s <= j) - 1, 0) for j in range(n)),
                                tuple(j not in sounding for j in range(n)))
    return Group(pcs, sounding, hit[0], hit[1], cost, hit[2], hit[3])


@lru_cache(maxsize=512)
def _groups(chord: Chord, section: Section, safe: tuple[int, ...] | None) -> tuple[Group, ...]:
    """The tone sets a background chord is voiced from, in the search's order: the full sets
    (:func:`pc_sets`), the thinned ones where no full set is clash free (:func:`thinned_sets`,
    the top part always sounding, any others joining it), the ones making room under a low
    section (:func:`room_sets`, the lowest parts sounding, the bass part taking the root).
    Raises where not one of them has a voicing inside the section's ranges."""
    n = len(section.parts)
    seen: dict[tuple[int, ...], tuple[int, int, tuple[int, ...], tuple[bool, ...]]] = {}
    out = [_group(tuple(sorted(pcs)), tuple(range(n)), section, cost, seen) for pcs, cost in pc_sets(chord, n)]
    for ms, t, cost in thinned_sets(chord, n, safe) if safe is not None else []:
        # the top part always sounds; any t - 1 of the others join it
        out += [_group(ms, (0, *others), section, cost, seen) for others in combinations(range(1, n), t - 1)]
    for pcs, cost in room_sets(chord, n):
        # low down the lowest parts play (the bass part takes the root), the upper ones rest
        out.append(_group(tuple(sorted(pcs)), tuple(range(n - len(pcs), n)), section, cost, seen))
    if not any(_has_shape(g) for g in out):
        raise VoicingError(f"no voicing of {chord.symbol} fits the section {section.name!r}",
                           where="[[layers]] section",
                           accepted="a section whose parts' practical ranges overlap enough to hold a chord")
    return tuple(out)


def _has_shape(g: Group) -> bool:
    """Some stack of the group's tones fits between its parts' ``lo`` and ``hi``."""
    k = g.pcs[0]
    return any(g.hi - (g.hi - first - k) % 12 - offsets[-1] >= g.lo
               for first, stacks in _rel_by_first(tuple(p - k for p in g.pcs), len(g.sounding)).items()
               for offsets, _floor in stacks)


def candidates(chord: Chord, section: Section, lead: tuple[int, ...] = (),
               lows: tuple[int, ...] | None = None) -> list[tuple[Group, tuple[tuple[int, ...], ...]]]:
    """Candidate voicings of ``chord`` for ``section`` in the search's order: each tone set
    (:func:`_groups`) with its voicings of the parts that sound (top to bottom, in
    descending order of pitches; :meth:`Group.pitches` spreads one over every part).
    ``lead``: every lead-section pitch sounding during the chord; when no full voicing is
    free of clashes with it, thinner clash-free ones join (the lead matters only through its
    clash-free tones).  ``lows``: the lead section's lowest note of each stretch sounding
    with the chord; given, only the voicings that sit under the section within the
    low-interval limits (:func:`fits_under`) are listed, found without placing the others
    (the top below each low and its interval to it open, every adjacent pair open: a
    stack's own floor)."""
    groups = _groups(chord, section, safe_pcs(chord, lead) if lead else None)
    out: list[tuple[Group, tuple[tuple[int, ...], ...]]] = []
    if lows is None:
        for g in groups:
            rows = _shapes(g.pcs, g.lo, g.hi, len(g.sounding))
            if rows:
                out.append((g, rows))
        return out
    lows = tuple(sorted(set(lows)))
    ceiling = min(lows, default=max(g.hi for g in groups) + 1)
    floor = min(g.lo for g in groups)
    allowed = {t for t in range(ceiling - 1, floor - 1, -1) if not any(rules.below_limit(low, t) for low in lows)}
    for g in groups:
        t_n, lo = len(g.sounding), g.lo
        rows: tuple[tuple[int, ...], ...] = ()
        for top in _tops(g.pcs, g.hi):
            if top in allowed:
                rows += _at_top(g.pcs, t_n, lo, top, True)
        if rows:
            out.append((g, rows))
    return out


def fits_under(pitches: tuple[int, ...], lows: tuple[int, ...]) -> bool:
    """A candidate (resting parts carrying the pitch above them) sits under the lead
    section within the low-interval limits (common practice: a background sits below the
    section it backs and keeps its low intervals open): the top below each of the
    section's lowest notes ``lows`` (one per stretch sounding with the chord), no two
    adjacent sounding voices below their limit (``voicing_rules/limits.toml``), nor the top
    below the limit of its interval to each of ``lows``."""
    top = pitches[0]
    return (not any(rules.below_limit(u, w) for u, w in zip(pitches, pitches[1:], strict=False))
            and all(low > top and not rules.below_limit(low, top) for low in lows))


def rule_cost(chord: Chord, section: Section, pitches: tuple[int, ...], rests: tuple[bool, ...],
              weights: dict[str, float]) -> float:
    """The voicing stage's weighted rule penalties of one candidate (:func:`rules.masks` /
    :func:`rules.penalties` with ``weights``, the ``voicings.toml`` weights of
    ``rules.KINDS``: ranges, low-interval limits, crossing, minor ninths, doubling), a
    resting part's marks cleared (it carries its neighbour's pitch only for the checks)."""
    marks = rules.masks(pitches, rules.context(chord, "spread"), section)
    if True in rests:
        plays = [j for j, r in enumerate(rests) if not r]
        marks = {k: [ms[j] for j in plays] for k, ms in marks.items()}
    return rules.penalties(marks, weights)


def clashes(voice: int, lead: int, chord: Chord) -> bool:
    """A background pitch ``voice`` and a lead-section pitch ``lead`` lie a minor second,
    minor ninth or compound apart.  The b9 over a dominant's root is kept, as inside a
    section (:mod:`arrange.rules`): the root below, the b9 at least a ninth above it."""
    d = lead - voice
    if d % 12 != (1 if d > 0 else 11):
        return False
    if chord.is_dominant:
        root, b9 = chord.root, (chord.root + 1) % 12
        if voice % 12 == root and lead % 12 == b9 and d >= 13:
            return False
        if voice % 12 == b9 and lead % 12 == root and d <= -13:
            return False
    return True


def clash_table(pitches: tuple[int, ...], chord: Chord) -> dict[int, int]:
    """How many of the lead-section ``pitches`` each background pitch clashes with
    (:func:`clashes`); pitches clashing with none are left out."""
    out: dict[int, int] = {}
    for q in set(pitches):
        k = pitches.count(q)
        for v in (q - 1, q + 1):
            while 0 <= v < 128 + 24:
                if clashes(v, q, chord):
                    out[v] = out.get(v, 0) + k
                v += 12 if v > q else -12
    return out


def cross_cost(sounding: list[tuple[float, tuple[int, ...]]], tables: list[dict[int, int]]
               ) -> Callable[[tuple[int, ...]], float]:
    """The cost of a voicing's sounding voices (a row, top to bottom) against the
    lead-section notes sounding with it, given as ``(share of the chord's time, pitches)``
    pairs with their :func:`clash_table`: per voice at or above the section's lowest note
    (``above_lead``, and ``above_lead_step`` per semitone from one below it), per clash
    ``clash`` times ``0.5 + share`` (resting parts cost nothing: they are not in the row)."""
    if not sounding:
        return lambda row: 0.0
    lr = layer_rules()
    lowest = min(min(p) for _w, p in sounding)
    above, step = lr.weight("above_lead"), lr.weight("above_lead_step")
    per_clash = [(lr.weight("clash") * (0.5 + share), table.get)
                 for (share, _pitches), table in zip(sounding, tables, strict=True)]

    def cost(row: tuple[int, ...]) -> float:
        total = 0.0
        total += above * sum([1 for p in row if p >= lowest])
        total += step * sum([p - lowest + 1 for p in row if p >= lowest])
        for weight, get in per_clash:
            total += weight * sum([get(p, 0) for p in row])
        return total
    return cost
