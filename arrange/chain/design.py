"""The chain designer: an exhaustive, vectorised search over motifs.

A motif of ``length`` notes starts on ``start`` and moves by steps drawn from
an allowed set, so the space holds ``len(steps) ** (length - 1)`` motifs.  The
search grows every candidate's RI chain at once in numpy arrays, with the very
rules of :func:`arrange.chain.build_chain` (exact and pitch-class links, the two
virtual statements behind ``compass_after_two`` and ``transposition``), keeps
the candidates that meet the constraints, ranks them, and rebuilds each
result with ``build_chain`` itself.  The space is walked in chunks (a block of
leading steps at a time, all trailing steps at once) sized so the working
arrays stay near :data:`MEMORY_BUDGET` bytes whatever the space.

Public API:
  * :class:`DesignSpec` - the constraints (:func:`make_spec` checks them);
  * :func:`search` - the ranked :class:`Design`;
  * :func:`meets` - the plain-Python check of one chain (the reference the
    benchmark times against);
  * :func:`score_of` - the ranking score of one line.
"""
from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np

from arrange.chain import kernel as design_kernel
from arrange.chain.core import Chain, build_chain
from arrange.chain.spec import DesignSpec, last_p_statement, make_spec, parse_steps, tonic_chord
from arrange.theory.pitch import pitch_name

__all__ = ["DesignSpec", "make_spec", "parse_steps", "Found", "Design", "search", "meets",
           "score_of", "space_size", "motif_at", "check_space", "estimate_seconds", "MAX_SECONDS", "why",
           "ranking_of"]

_TIERS = ("strict", "end on a note of the second key's scale", "any last note")


@dataclass(frozen=True, slots=True, eq=False)
class Found:
    motif: tuple[int, ...]
    chain: Chain
    score: float
    why: str
    in_range: bool = True      # the line lies within the lead's compass (spec.lead_span)
    travels: bool = True       # statement 3 lies at new pitch classes

    def to_json(self) -> dict[str, object]:
        return {"motif": list(self.motif), "names": [pitch_name(p) for p in self.motif],
                "chain": self.chain.to_json(), "score": self.score, "why": self.why,
                "in_range": self.in_range, "travels": self.travels}

    def rank(self) -> tuple[bool, bool, float, tuple[int, ...]]:
        """The ranking rule: within the lead's compass first, then travelling chains, then
        the score (higher first), then the motif (lower first)."""
        return (not self.in_range, not self.travels, -self.score, self.motif)


def ranking_of(spec: DesignSpec, chain: Chain) -> tuple[bool, bool]:
    """(in_range, travels) of one chain, in plain Python (the kernel's bonuses)."""
    lo, hi = chain.span
    return hi - lo <= spec.lead_span, chain.transposition % 12 != 0


@dataclass(frozen=True, slots=True, eq=False)
class Design:
    spec: DesignSpec
    count: int
    searched: int
    results: tuple[Found, ...]
    relaxed: tuple[str, ...]

    def to_json(self) -> dict[str, object]:
        return {"count": self.count, "searched": self.searched,
                "results": [f.to_json() for f in self.results], "relaxed": list(self.relaxed)}


def space_size(spec: DesignSpec) -> int:
    return len(spec.steps) ** (spec.length - 1)


def motif_at(spec: DesignSpec, index: int) -> tuple[int, ...]:
    """The motif at ``index`` of the space (motifs in ascending order of their steps)."""
    base, out = len(spec.steps), []
    for _ in range(spec.length - 1):
        index, d = divmod(index, base)
        out.append(spec.steps[d])
    pitches = [spec.start]
    for s in reversed(out):
        pitches.append(pitches[-1] + s)
    return tuple(pitches)


# ---------------------------------------------------------------- plain Python

def score_of(pitches: Sequence[int]) -> tuple[float, float, int, float]:
    """(score, mean step, interval classes used, evenness) of a line.

    smoothness = max(0, 1 - mean |step| / 12); evenness = the entropy of the
    steps' interval classes (0..6) over log(min(7, steps)); score = 0.6
    smoothness + 0.4 evenness, rounded to 6 places.
    """
    steps = [abs(b - a) for a, b in zip(pitches, pitches[1:], strict=False)]
    m = len(steps)
    mean = sum(steps) / m
    smooth = min(1.0, max(0.0, 1.0 - mean / 12.0))
    counts = [0] * 7
    for s in steps:
        ic = s % 12
        counts[min(ic, 12 - ic)] += 1
    h = -sum((c / m) * math.log(c / m) for c in counts if c)
    norm = math.log(min(7, m))
    even = h / norm if norm > 0 else 0.0
    return round(0.6 * smooth + 0.4 * even, 6), mean, sum(1 for c in counts if c), even


def _end_tier(spec: DesignSpec, last: int) -> int:
    if spec.to_key is None:
        return 0
    if last % 12 in tonic_chord(spec.to_key):
        return 0
    return 1 if last % 12 in spec.to_key.scale else 2


def meets(spec: DesignSpec, chain: Chain) -> int | None:
    """None if ``chain`` misses a constraint, else its tier (0 unless a transition's
    last note had to be relaxed: 1 = in the second key's scale, 2 = anywhere)."""
    motif, line = chain.motif, chain.pitches
    if spec.no_repeats and len({p % 12 for p in motif}) < len(motif):
        return None
    if min(line) < 0 or max(line) > 127:
        return None
    if spec.transposition is not None:
        t = chain.transposition
        if (t - spec.transposition) % 12 if spec.transposition_class else t != spec.transposition:
            return None
    if spec.compass is not None and chain.compass_after_two != spec.compass:
        return None
    if spec.span is not None and max(line) - min(line) > spec.span:
        return None
    if spec.aggregate_within is not None and (chain.aggregate_at is None
                                              or chain.aggregate_at > spec.aggregate_within):
        return None
    if spec.chromatic_notes is not None:
        inside = spec.key_notes()
        if sum(1 for p in line if p % 12 not in inside) > spec.chromatic_notes:
            return None
    if spec.to_key is not None:
        last_p = chain.statements[last_p_statement(len(chain.statements)) - 1]
        if (last_p.transposition - spec.distance) % 12:
            return None
        return _end_tier(spec, line[-1])
    return 0


def why(spec: DesignSpec, chain: Chain) -> str:
    score, mean, classes, even = score_of(chain.pitches)
    lo, hi = chain.span
    in_range, travels = ranking_of(spec, chain)
    parts = [("within" if in_range else "beyond") + f" a lead's {spec.lead_span}-semitone compass",
             ("travels" if travels else "does not travel") + ": statement 3 at "
             + ("new pitch classes" if travels else "the pitch classes of statement 1"),
             f"mean step {mean:.2f} semitones (smoothness {max(0.0, 1 - mean / 12):.3f})",
             f"{classes} of 7 interval classes among {len(chain.pitches) - 1} steps "
             f"(evenness {even:.3f})",
             f"statement 3 at {chain.transposition:+d}", f"compass {chain.compass_after_two:+d}",
             f"span {hi - lo}"]
    if chain.aggregate_at:
        parts.append(f"aggregate at note {chain.aggregate_at}")
    if spec.chromatic_notes is not None:
        inside = spec.key_notes()
        parts.append(f"{sum(1 for p in chain.pitches if p % 12 not in inside)} notes outside "
                     f"{spec.key_label()}")
    if spec.to_key is not None and spec.from_key is not None:
        last = chain.statements[last_p_statement(len(chain.statements)) - 1]
        parts.append(f"last P statement {last.index} at {last.transposition:+d} "
                     f"({spec.from_key} to {spec.to_key}), ends on {pitch_name(chain.pitches[-1])}")
    return "; ".join(parts)


def _head(spec: DesignSpec, lead: int, c: int) -> list[int]:
    """The first ``lead + 1`` notes of chunk ``c`` (its leading steps, most significant first)."""
    base, digits = len(spec.steps), []
    for _ in range(lead):
        c, d = divmod(c, base)
        digits.append(spec.steps[d])
    notes = [spec.start]
    for s in reversed(digits):
        notes.append(notes[-1] + s)
    return notes


def _top(scores: np.ndarray, gidx: np.ndarray, m: int) -> tuple[np.ndarray, np.ndarray]:
    """The best ``m``: highest score first, then the lower index (= the lower motif)."""
    if len(scores) > 4 * m:
        cut = -np.partition(-scores, m - 1)[m - 1]
        keep = scores >= cut
        scores, gidx = scores[keep], gidx[keep]
    order = np.lexsort((gidx, -scores))[:m]
    return scores[order], gidx[order]


def search(spec: DesignSpec, top: int = 10, *, count_only: bool = False,
           progress: Callable[[int, int], None] | None = None) -> Design:
    """Every motif of the space that meets ``spec``, best ``top`` first.

    Motifs are enumerated in ascending order of their steps (which is ascending
    order of the motifs themselves); ties of score go to the lower motif.
    """
    steps = np.array(spec.steps, dtype=np.int64)
    base, n = len(steps), spec.length
    total = space_size(spec)
    r, chunks = design_kernel.plan(spec)
    rows = base ** r
    # every combination of the r trailing steps, as offsets from the last leading note
    rem = np.arange(rows, dtype=np.int64)
    tail = np.empty((r, rows), dtype=np.int64)
    for c in range(r - 1, -1, -1):
        tail[c] = steps[rem % base]
        rem //= base
    offsets = np.cumsum(tail, axis=0).astype(np.int16)
    local = np.arange(rows, dtype=np.int64)
    tiers = 3 if spec.to_key is not None else 1
    counts = [0] * tiers
    best = [(np.zeros(0), np.zeros(0, dtype=np.int64)) for _ in range(tiers)]
    lead = n - 1 - r
    for c in range(chunks):
        head = _head(spec, lead, c)
        cols = [np.full(rows, p, dtype=np.int16) for p in head]
        cols += [off + np.int16(head[-1]) for off in offsets]
        gidx, tier, scores = design_kernel.screen(spec, cols, c * rows + local,
                                                  with_scores=not count_only)
        for t in range(tiers):
            sel = tier <= t
            counts[t] += int(sel.sum())
            if not count_only and sel.any():
                s0, g0 = best[t]
                best[t] = _top(np.concatenate([s0, scores[sel]]), np.concatenate([g0, gidx[sel]]), top)
        if progress is not None:
            progress((c + 1) * rows, total)
    chosen = next((t for t in range(tiers) if counts[t]), 0)
    relaxed: list[str] = []
    if spec.relaxed_start:
        relaxed.append(spec.relaxed_start)
    if chosen and spec.to_key is not None:
        chord = " ".join(pitch_name(60 + p)[:-1] for p in tonic_chord(spec.to_key))
        relaxed.append(f"end: no chain ends on a note of the {spec.to_key} tonic chord ({chord}); "
                       f"kept those with {_TIERS[chosen]}")
    found = []
    for g in best[chosen][1].tolist():
        motif = motif_at(spec, int(g))
        chain = build_chain(motif, spec.statements, spec.overlap)
        got = meets(spec, chain)
        if got is None or got > chosen:   # the two searches disagree: a fault, not bad input
            raise RuntimeError(f"design search and chain disagree on motif {motif}")
        found.append(Found(motif, chain, score_of(chain.pitches)[0], why(spec, chain),
                           *ranking_of(spec, chain)))
    found.sort(key=Found.rank)
    return Design(spec, counts[chosen], total, tuple(found), tuple(relaxed))


# Seconds per candidate motif, measured on a 2-core laptop (bench: design -n 6/7, -k 4..64):
# a constant part and a part per note of the chain grown; --aggregate costs more per note.
_COST = (0.33e-6, 0.0044e-6)
_COST_AGGREGATE = (0.45e-6, 0.0086e-6)
MAX_SECONDS = 300      # a search estimated longer than this needs --force


def estimate_seconds(spec: DesignSpec) -> float:
    """The search's expected time (within about 2x of the measured time on a laptop)."""
    from arrange.chain.spec import chain_length

    per = _COST[0] + _COST[1] * chain_length(spec)
    if spec.aggregate_within is not None:
        per += _COST_AGGREGATE[0] + _COST_AGGREGATE[1] * chain_length(spec)
    return space_size(spec) * per


def check_space(spec: DesignSpec, force: bool) -> int:
    """The space size; raise if it passes 10^9 candidates, or the search is estimated
    to take more than :data:`MAX_SECONDS`, and ``force`` is not given."""
    from arrange.chain.spec import MAX_SPACE
    from arrange.errors import DesignError

    total = space_size(spec)
    seconds = estimate_seconds(spec)
    if (total > MAX_SPACE or seconds > MAX_SECONDS) and not force:
        raise DesignError(
            f"the search space holds {total:,} candidate motifs ({len(spec.steps)} allowed steps "
            f"^ {spec.length - 1}), about {_duration(seconds)} of search",
            where="--length/--max-step/--steps/--statements",
            accepted=f"at most {MAX_SPACE:,} candidates and about {MAX_SECONDS // 60} minutes: narrow "
            "--max-step or --steps, shorten --length or --statements, or add --force")
    return total


def _duration(seconds: float) -> str:
    if seconds < 120:
        return f"{seconds:.0f} s"
    if seconds < 7200:
        return f"{seconds / 60:.0f} minutes"
    return f"{seconds / 3600:.1f} hours"
