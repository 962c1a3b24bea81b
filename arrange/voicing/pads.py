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
octaves or with lower parts resting (``rests``, a bool array beside the
pitches; a resting voice carries the pitch of the voice above it so that the
rule checks see the sounding intervals, and its own marks are cleared).
"""
from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache
from itertools import combinations, combinations_with_replacement, permutations, product

import numpy as np

from arrange.errors import VoicingError
from arrange.theory.chords import Chord
from arrange.voicing import rules
from arrange.voicing.sections import Section, read_rules
from arrange.voicing.shapes import fifth_pc, recipes

__all__ = ["LayerRules", "layer_rules", "tone_order", "pc_sets", "safe_pcs", "rubs", "thinned_sets",
           "room_sets", "candidates", "cross_costs", "clash_pairs", "clash_counts", "fits_under", "velocity"]


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
        return dict(self.weights)[name]


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


@lru_cache(maxsize=8)
def _open_choices(n: int) -> np.ndarray:
    """``(o, n - 1)`` 0/1: which voices below the top drop an extra octave."""
    rows = list(product((0, 1), repeat=n - 1)) if n <= 5 else [(0,) * (n - 1)]
    return np.array(rows, dtype=np.int64).reshape(len(rows), n - 1)


@lru_cache(maxsize=1024)
def _stacks(pcs: tuple[int, ...], n: int) -> tuple[np.ndarray, np.ndarray]:
    """The stacks of the multiset ``pcs`` within the gap limits: each one's top
    pitch class ``(k,)`` and every voice's distance below the top ``(k, n)``.
    Each order of the tones is stacked downward, each lower voice close or an
    octave open; the gaps depend only on the order and the open choices, so a
    stack with too wide a gap is dropped before any pitch is placed."""
    lr = layer_rules()
    orders = set(permutations(pcs)) if n <= 5 else {pcs[i:] + pcs[:i] for i in range(n)}
    order_rows = np.array(sorted(orders), dtype=np.int64).reshape(len(orders), n)
    close = (order_rows[:, :-1] - order_rows[:, 1:]) % 12
    close[close == 0] = 12
    gaps = close[:, None, :] + 12 * _open_choices(n)[None, :, :]          # (k, o, n - 1)
    if n > 1:
        ok = ((gaps[:, :, :-1].max(axis=2, initial=0) <= lr.max_gap)
              & (gaps[:, :, -1] <= lr.max_bottom_gap))
    else:
        ok = np.ones(gaps.shape[:2], dtype=bool)
    offsets = np.concatenate([np.zeros(gaps.shape[:2] + (1,), dtype=np.int64), np.cumsum(gaps, axis=2)], axis=2)
    first = np.broadcast_to(order_rows[:, :1], ok.shape)
    return first[ok], offsets[ok]


@lru_cache(maxsize=2048)
def _shapes(pcs: tuple[int, ...], lo: int, hi: int, n: int) -> np.ndarray:
    """Every voicing ``(k, n)`` (top to bottom, rows in descending order) of the
    multiset ``pcs`` (:func:`_stacks`) from a top within the octave below ``hi``,
    or one or two octaves lower, with the bottom at or above ``lo``."""
    first, offsets = _stacks(pcs, n)
    top = hi - (hi - first) % 12                         # the top in hi - 11 .. hi on the order's first tone
    V = (top[:, None] - 12 * np.arange(3)[None, :])[:, :, None] - offsets[:, None, :]   # (k, 3, n)
    rows = V[V[..., -1] >= lo].reshape(-1, n)
    if 0 <= lo and hi < 256 and n <= 7:
        # one base-256 number per row sorts as the row does (every pitch lies in lo .. hi)
        place = 256 ** np.arange(n - 1, -1, -1, dtype=np.int64)
        keys = np.unique(rows @ place)[::-1]
        out = (keys[:, None] // place[None, :]) % 256
    else:
        out = np.unique(rows, axis=0)[::-1].copy() if len(rows) else rows
    out.flags.writeable = False
    return out


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


def _embed(V: np.ndarray, sounding: tuple[int, ...], n: int) -> tuple[np.ndarray, np.ndarray]:
    """Voicings ``V`` of the ``sounding`` parts spread over ``n`` parts; a resting
    part carries the pitch of the sounding voice above it (above the first sounding part:
    that part's pitch), so the rule checks see the sounding intervals."""
    carry = [max(sum(1 for s in sounding if s <= j) - 1, 0) for j in range(n)]
    rests = np.array([j not in sounding for j in range(n)], dtype=bool)
    return V[:, carry], np.broadcast_to(rests, (len(V), n))


def candidates(chord: Chord, section: Section, lead: tuple[int, ...] = ()
               ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Candidate voicings ``(k, n)`` (sounding, top to bottom), their rests ``(k, n)``
    and costs ``(k,)``: preference cost plus the voicing stage's weighted rule
    penalties.  ``lead``: every lead-section pitch sounding during the chord; when
    no full voicing is free of clashes with it, thinner clash-free ones join.
    The lead matters only through its clash-free tones, so chords that repeat
    with the same tones free share one (read-only) result."""
    return _candidates(chord, section, safe_pcs(chord, lead) if lead else None)


@lru_cache(maxsize=512)
def _candidates(chord: Chord, section: Section, safe: tuple[int, ...] | None
                ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    n = len(section.parts)
    parts = section.parts
    lo = min(p.instrument.practical[0] for p in parts)
    hi = max(p.instrument.practical[1] for p in parts)
    rows: list[np.ndarray] = []
    rest_rows: list[np.ndarray] = []
    base: list[np.ndarray] = []
    for pcs, cost in pc_sets(chord, n):
        V = _shapes(tuple(sorted(pcs)), lo, hi, n)
        rows.append(V)
        rest_rows.append(np.zeros(V.shape, dtype=bool))
        base.append(np.full(len(V), cost))
    for ms, t, cost in thinned_sets(chord, n, safe) if safe is not None else []:
        # the top part always sounds; any t - 1 of the others join it
        for others in combinations(range(1, n), t - 1):
            sounding = (0, *others)
            s_lo = min(parts[j].instrument.practical[0] for j in sounding)
            s_hi = max(parts[j].instrument.practical[1] for j in sounding)
            row, rest = _embed(_shapes(ms, s_lo, s_hi, t), sounding, n)
            rows.append(row)
            rest_rows.append(rest)
            base.append(np.full(len(row), cost))
    for pcs, cost in room_sets(chord, n):
        t = len(pcs)
        # low down the lowest parts play (the bass part takes the root), the upper ones rest
        sounding = tuple(range(n - t, n))
        s_lo = min(parts[j].instrument.practical[0] for j in sounding)
        s_hi = max(parts[j].instrument.practical[1] for j in sounding)
        row, rest = _embed(_shapes(tuple(sorted(pcs)), s_lo, s_hi, t), sounding, n)
        rows.append(row)
        rest_rows.append(rest)
        base.append(np.full(len(row), cost))
    if not sum(len(r) for r in rows):
        raise VoicingError(f"no voicing of {chord.symbol} fits the section {section.name!r}",
                           where="[[layers]] section",
                           accepted="a section whose parts' practical ranges overlap enough to hold a chord")
    P = np.concatenate(rows, axis=0)
    R = np.concatenate(rest_rows, axis=0)
    weights = {k: recipes().weight(k) for k in rules.KINDS}
    # the voicing stage's own rules, run on one column of pitches per voice; a resting voice's
    # marks are cleared (it carries its neighbour's pitch only for the checks)
    plays = np.ascontiguousarray(~R.T)
    marks = rules.masks(list(np.ascontiguousarray(P.T)), rules.context(chord, "spread"), section)
    cost = np.concatenate(base) + rules.penalties(
        {k: [m & plays[j] for j, m in enumerate(ms)] for k, ms in marks.items()}, weights)
    for arr in (P, R, cost):
        arr.flags.writeable = False
    return P, R, cost


def clash_pairs(layer: np.ndarray, lead: np.ndarray, chord: Chord) -> np.ndarray:
    """``(m, n, q)`` bool: voice j of background voicing i against lead-section pitch
    q lies a minor second, minor ninth or compound apart.  The b9 over a dominant's
    root is kept, as inside a section (:mod:`arrange.rules`)."""
    # |lead - voice| is 1 mod 12 (a minor second, ninth or compound): with the lead above,
    # its pitch class lies 1 over the voice's; with the lead below, 11 over it.  Read from
    # a table by pitch class (voice x lead), with one comparison per pair for the side
    lead_pc = lead % 12
    step = (lead_pc[None, :] - np.arange(12)[:, None]) % 12          # (12, q): lead minus voice
    layer_pc = layer % 12
    above = lead[None, None, :] > layer[:, :, None]                   # (m, n, q)
    hit = np.where(above, (step == 1)[layer_pc], (step == 11)[layer_pc])
    root, b9 = chord.root, (chord.root + 1) % 12
    if chord.is_dominant and ((lead_pc == root) | (lead_pc == b9)).any():
        # the b9 over the root kept: the root below, the b9 at least a ninth above it
        d = lead[None, None, :] - layer[:, :, None]
        lp = layer_pc[:, :, None]
        ok = (((lp == root) & (lead_pc == b9)[None, None, :] & (d >= 13))
              | ((lp == b9) & (lead_pc == root)[None, None, :] & (d <= -13)))
        hit &= ~ok
    return hit


def clash_counts(P: np.ndarray, plays: np.ndarray, pitches: tuple[int, ...], chord: Chord) -> np.ndarray:
    """``(k,)``: how many (voice, lead pitch) pairs of each candidate :func:`clash_pairs`
    marks, counting the voices that play (``plays``).  A voice's clashes depend on its own
    pitch only, so they are counted once per pitch (a table of 128) and summed per row."""
    if not len(P):
        return np.zeros(0, dtype=np.int64)
    lead = np.array(pitches, dtype=np.int64)
    values = np.arange(max(int(P.max()), 0) + 1, dtype=np.int64)
    per_pitch = clash_pairs(values[:, None], lead, chord)[:, 0, :].sum(axis=1)
    return (per_pitch[P] * plays).sum(axis=1)


def fits_under(P: np.ndarray, lows: tuple[int, ...]) -> np.ndarray:
    """``(k,)`` bool: the candidates (resting parts carrying the pitch above them) that sit
    under the lead section within the low-interval limits (common practice: a background
    sits below the section it backs and keeps its low intervals open): the top below each of
    the section's lowest notes ``lows`` (one per stretch sounding with the chord), no two
    adjacent sounding voices below their limit (``voicing_rules/limits.toml``), nor the top
    below the limit of its interval to each of ``lows``."""
    cols = np.ascontiguousarray(P.T)
    ok = np.ones(len(P), dtype=bool)
    for upper, lower in zip(cols[:-1], cols[1:], strict=True):     # the voicing stage's own rule
        ok &= ~rules.below_limit(upper, lower)
    top = cols[0]
    for low in sorted(set(lows)):
        ok &= (low > top) & ~rules.below_limit(low, top)
    return ok


def cross_costs(P: np.ndarray, sounding: list[tuple[float, tuple[int, ...]]], chord: Chord,
                R: np.ndarray | None = None) -> np.ndarray:
    """Costs ``(k,)`` of each candidate against the lead-section notes sounding with it,
    given as ``(share of the chord's time, pitches)`` pairs; resting voices (``R``)
    cost nothing."""
    lr = layer_rules()
    cost = np.zeros(len(P))
    if not sounding:
        return cost
    plays = np.ones(P.shape, dtype=bool) if R is None else ~R
    lowest = min(min(p) for _w, p in sounding)
    above = (P >= lowest) & plays
    cost += lr.weight("above_lead") * above.sum(axis=1)
    cost += lr.weight("above_lead_step") * (np.clip(P - lowest + 1, 0, None) * plays).sum(axis=1)
    for share, pitches in sounding:
        cost += lr.weight("clash") * (0.5 + share) * clash_counts(P, plays, pitches, chord)
    return cost
