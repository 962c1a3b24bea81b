"""The arranger's rule checks: one implementation for one voicing or many.

A voicing is a sequence of sounding pitches, top to bottom, one per part.  Each rule is
written once, over the voices of a voicing, with comparisons, integer arithmetic and
``&``, ``|`` (never ``and``/``or``/``not`` on a pitch), which mean the same for a Python
``int`` (one voicing: the voice-leading search of :mod:`arrange.voicing.voicer`, tutti and
every finding, in plain Python) and for a column of integers (many voicings of one chord at
once: the pad search's thousands of candidates, :mod:`arrange.voicing.pads`, which holds
its candidates as numpy columns).  A rule's only table, the low-interval limits, is read by
:func:`low_limit` for either; nothing here imports numpy.

:func:`masks` marks each offending voice per rule; :func:`penalties` weighs the marks
(the search's costs); :func:`findings` turns the chosen voicings' marks into the report's
warnings.  One set of rules serves all of them, so the search avoids exactly what the
report would flag.

Rules (common practice of ensemble arranging):

* ``range``: outside the part's practical range (a warning);
* ``extreme``: outside the extreme range (an error unless ``allow_extreme``);
* ``low-interval``: two adjacent voices closer than ``voicing_rules/limits.toml``
  allows at that height (the lower note is marked);
* ``voice-crossing``: a part sounding above the part listed over it;
* ``minor-ninth``: a minor ninth (or compound) between any two voices, except
  the b9 over a dominant's root;
* ``doubling``: the third or a tension in two voices (the lead's own doubling,
  asked for by close writing, and unison writing are exempt);
* ``gap``: more than an octave between adjacent upper voices in close and drop
  voicings (the bottom voice of five or more is free);
* ``bottom``: the lowest voice is the b9 (a minor ninth over the root) or an avoid note
  (a tone outside the chord a half step above one of its tones), unison writing exempt.
"""
from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from functools import lru_cache
from typing import Any

from arrange.theory.chords import Chord
from arrange.theory.pitch import pitch_name
from arrange.voicing.sections import INTERVAL_NAMES, Section, low_interval_table

__all__ = ["KINDS", "Context", "context", "masks", "penalties", "low_interval_limits", "low_limit",
           "below_limit", "minor_ninth", "findings", "INTERVAL_NAMES"]

KINDS = ("range", "extreme", "low-interval", "voice-crossing", "minor-ninth", "doubling", "gap", "bottom")

# a pitch: an int (one voicing) or an integer column (many voicings); a mark: a bool or a
# bool column
Pitch = Any
Mark = Any

# the limit of an interval that has none: below every pitch
_NO_LIMIT = -(1 << 30)


@lru_cache(maxsize=1)
def low_interval_limits() -> tuple[int, ...]:
    """Lowest allowed lower note by interval (index = semitones, 0..24); -1 = no limit
    (``sections.low_interval_table``)."""
    return low_interval_table()


_BY_GAP: list[int] = []      # the limit of every gap 0..25 (0 and 25: every gap outside 1..24)


def _limits_by_gap() -> list[int]:
    if not _BY_GAP:
        table = low_interval_limits()
        _BY_GAP.extend(table[d] if 1 <= d <= 24 and table[d] >= 0 else _NO_LIMIT for d in range(26))
    return _BY_GAP


def low_limit(gap: Pitch) -> Pitch:
    """The lowest allowed lower note of two voices ``gap`` semitones apart (upper minus
    lower), or a value under every pitch where the interval has no limit (a unison, a
    crossing, more than two octaves)."""
    table = _BY_GAP or _limits_by_gap()
    if isinstance(gap, int):
        return table[gap] if 1 <= gap <= 24 else _NO_LIMIT
    import numpy as np   # a column: its caller has numpy loaded already

    return np.asarray(table)[np.clip(gap, 0, 25)]


def below_limit(upper: Pitch, lower: Pitch) -> Mark:
    """The low-interval rule: ``lower`` under ``upper`` lies below the limit of their
    interval (``voicing_rules/limits.toml``, read by :func:`low_limit`)."""
    gap = upper - lower
    if isinstance(gap, int):        # one voicing: the table read here, the search asks often
        return 1 <= gap <= 24 and lower < (_BY_GAP or _limits_by_gap())[gap]
    return lower < low_limit(gap)


def minor_ninth(uppers: Sequence[Pitch], lower: Pitch, ctx: Context) -> Mark:
    """The minor-ninth rule: ``lower`` lies a minor ninth or a compound of it below one of
    ``uppers``, other than the b9 over a dominant's root."""
    hit: Mark = False
    for upper in uppers:
        d = upper - lower
        hit = hit | ((d >= 13) & (d % 12 == 1))
    if ctx.dominant:
        hit = hit & (lower % 12 != ctx.root)
    return hit


def _has(mask: Pitch, pc: Pitch) -> Mark:
    """``pc`` (0..11) is in the 12-bit set ``mask`` (either may be a column)."""
    return (mask >> pc) & 1 == 1


def _lacks(mask: int, pc: Pitch) -> Mark:
    """``pc`` (0..11) is not in the 12-bit set ``mask``."""
    return (mask >> pc) & 1 == 0


@dataclass(frozen=True, slots=True, eq=False)
class Context:
    """What the rules need of one voicing's chord and type."""
    root: int          # root pitch class
    dominant: bool
    flagged: int       # 12-bit set: pitch classes that must not be doubled (third, tensions)
    closed: bool       # close or drop voicing (the gap rule applies)
    unison: bool
    tones: int         # 12-bit set: the chord's own pitch classes


@lru_cache(maxsize=1024)
def context(chord: Chord, vtype: str) -> Context:
    """The rule context of a voicing of ``chord`` of type ``vtype``: the pitch classes that
    must not be doubled are its third and its tensions outside the chord."""
    tones = set(chord.pitch_classes)
    flagged = {(chord.root + t) % 12 for t in chord.tensions if (chord.root + t) % 12 not in tones}
    flagged |= {(chord.root + third) % 12 for third in (3, 4) if third in chord.intervals}
    return Context(chord.root, bool(chord.is_dominant), sum(1 << pc for pc in flagged),
                   vtype in ("close", "drop2", "drop2-4", "drop3"), vtype == "unison",
                   sum(1 << pc for pc in tones))


_RANGES: dict[int, tuple[Section, tuple[tuple[int, int, int, int], ...]]] = {}


def _ranges(section: Section) -> tuple[tuple[int, int, int, int], ...]:
    """Each part's practical and extreme range (kept by the section's identity: a section
    is hashed through all its parts, and the search asks for every candidate)."""
    hit = _RANGES.get(id(section))
    if hit is None or hit[0] is not section:
        if len(_RANGES) >= 64:      # sections made on the fly (tutti's groups) come and go
            _RANGES.clear()
        hit = (section, tuple((*p.instrument.practical, *p.instrument.extreme) for p in section.parts))
        _RANGES[id(section)] = hit
    return hit[1]


def masks(voices: Sequence[Pitch], ctx: Context, section: Section) -> dict[str, list[Mark]]:
    """For each rule, one mark per voice (top to bottom): does this voice offend?  ``voices``:
    one voicing's pitches (ints), or one integer column per voice holding many voicings of
    the chord of ``ctx`` (the marks are then bool columns, or ``False`` for every row)."""
    n = len(voices)
    rng: list[Mark] = [False] * n
    ext: list[Mark] = [False] * n
    low: list[Mark] = [False] * n
    cross: list[Mark] = [False] * n
    m9: list[Mark] = [False] * n
    dbl: list[Mark] = [False] * n
    gap: list[Mark] = [False] * n
    bottom: list[Mark] = [False] * n
    pcs = [p % 12 for p in voices]
    flagged, unison = ctx.flagged, ctx.unison
    # the gap rule: adjacent upper voices (the bottom voice of five or more is free)
    gap_pairs = (n - 1 if n <= 4 else n - 2) if ctx.closed else 0
    above: Pitch = None
    heard: Pitch = 0
    for j, ((plo, phi, xlo, xhi), p) in enumerate(zip(_ranges(section), voices, strict=True)):
        rng[j] = ((p < plo) | (p > phi)) & (p >= xlo) & (p <= xhi)
        ext[j] = (p < xlo) | (p > xhi)
        if j:
            d = above - p
            low[j] = below_limit(above, p)
            cross[j] = d < 0
            if j <= gap_pairs:
                gap[j] = d > 12
            m9[j] = minor_ninth(voices[:j], p, ctx)
            if not unison:
                # the third or a tension (``flagged``) already sounding above (``heard``: the
                # pitch classes of the voices above, a 12-bit set), not the lead's
                pc = pcs[j]
                dbl[j] = _has(heard & flagged, pc) & (pc != pcs[0])
                heard = heard | (1 << pc)
        else:
            heard = 1 << pcs[0]
        above = p
    if n >= 3 and not unison:
        pc = pcs[-1]
        b9 = (pc - ctx.root) % 12 == 1
        avoid = _lacks(ctx.tones, pc) & _has(ctx.tones, (pc - 1) % 12)
        bottom[-1] = b9 | avoid
    return {"range": rng, "extreme": ext, "low-interval": low, "voice-crossing": cross,
            "minor-ninth": m9, "doubling": dbl, "gap": gap, "bottom": bottom}


def penalties(marks: dict[str, list[Mark]], weights: dict[str, float]) -> Any:
    """Weighted count of offending voices (a float, or a float column), each rule's count
    weighed and added in the order of ``KINDS``."""
    total: Any = 0.0
    for kind in KINDS:
        total = total + weights[kind] * sum(marks[kind])
    return total


def findings(rows: Sequence[Sequence[int]], contexts: Sequence[Context], section: Section, *,
             bars: Sequence[int], allow_extreme: bool, vtypes: Sequence[str]
             ) -> list[tuple[str, int, str, str, str]]:
    """``(kind, event, part, message, severity)`` for every mark of the chosen voicings
    (``rows``, one per event, with its rule context)."""
    parts = section.parts
    limits = low_interval_limits()
    out: list[tuple[str, int, str, str, str]] = []
    for i, (row, ctx) in enumerate(zip(rows, contexts, strict=True)):
        row = [int(p) for p in row]
        marks = masks(row, ctx, section)
        for j, p in enumerate(row):
            kinds = [kind for kind in KINDS if marks[kind][j]]
            if not kinds:
                continue
            part = parts[j]
            at = f"bar {bars[i]}: "
            above = parts[j - 1].name if j else ""
            q = row[j - 1] if j else p
            inst = part.instrument
            for kind in kinds:
                severity = "warning"
                if kind == "range":
                    lo, hi = inst.practical
                    msg = f"{pitch_name(p)} lies outside the practical range {pitch_name(lo)}-{pitch_name(hi)}"
                elif kind == "extreme":
                    lo, hi = inst.extreme
                    msg = (f"{pitch_name(p)} lies outside the extreme range {pitch_name(lo)}-{pitch_name(hi)}"
                           + ("" if allow_extreme else " (allow_extreme = true keeps it on purpose)"))
                    severity = "warning" if allow_extreme else "error"
                elif kind == "low-interval":
                    gap = q - p
                    msg = (f"{INTERVAL_NAMES[gap] if gap < len(INTERVAL_NAMES) else f'{gap} semitones'} "
                           f"{pitch_name(q)} over {pitch_name(p)} ({above} over {part.name}) lies below "
                           f"its low-interval limit {pitch_name(limits[gap])}")
                elif kind == "voice-crossing":
                    msg = f"{part.name} ({pitch_name(p)}) sounds above {above} ({pitch_name(q)})"
                elif kind == "minor-ninth":
                    msg = (f"{pitch_name(p)} in {part.name} lies a minor ninth (or compound) below another "
                           "voice; only the b9 over a dominant's root is kept")
                elif kind == "doubling":
                    msg = f"{part.name} doubles {pitch_name(p)[:-1]}, the third or a tension, already voiced above"
                elif kind == "bottom":
                    what = "the b9" if (p - ctx.root) % 12 == 1 else "an avoid note"
                    msg = (f"{part.name} plays {pitch_name(p)}, {what} of the chord, as the section's "
                           "lowest voice")
                else:
                    msg = (f"{q - p} semitones between {above} ({pitch_name(q)}) and {part.name} "
                           f"({pitch_name(p)}) in a {vtypes[i]} voicing; at most an octave")
                out.append((kind, i, part.name, at + msg, severity))
    return out
