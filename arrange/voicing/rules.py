"""The arranger's rule checks, vectorised over many voicings at once.

:func:`masks` takes an ``(m, n)`` array of sounding pitches (m voicings, n parts
top to bottom) and one row of context per voicing, and marks each offending
voice.  The voice-leading search turns the marks into penalties
(:func:`penalties`); the chosen voicings' marks become the report's findings
(:func:`findings`).  One set of rules serves both, so the search avoids exactly
what the report would flag.

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

import numpy as np

from arrange.theory.chords import Chord
from arrange.theory.pitch import pitch_name
from arrange.voicing.sections import INTERVAL_NAMES, Section, low_interval_table

__all__ = ["KINDS", "Context", "context", "masks", "penalties", "low_interval_limits", "findings",
           "INTERVAL_NAMES"]

KINDS = ("range", "extreme", "low-interval", "voice-crossing", "minor-ninth", "doubling", "gap", "bottom")


@lru_cache(maxsize=1)
def low_interval_limits() -> np.ndarray:
    """Lowest allowed lower note by interval (index = semitones, 0..24); -1 = no limit
    (``sections.low_interval_table`` as an array)."""
    return np.array(low_interval_table(), dtype=np.int64)


@dataclass(frozen=True, slots=True)
class Context:
    """Per-voicing rows of context (numpy arrays, one entry per voicing)."""
    root: np.ndarray        # (m,) root pitch class
    dominant: np.ndarray    # (m,) bool
    flagged: np.ndarray     # (m, 12) bool: pitch classes that must not be doubled
    closed: np.ndarray      # (m,) bool: close or drop voicing (gap rule applies)
    unison: np.ndarray      # (m,) bool
    tones: np.ndarray       # (m, 12) bool: the chord's own pitch classes


@lru_cache(maxsize=1024)
def _chord_row(c: Chord) -> tuple[tuple[bool, ...], tuple[bool, ...]]:
    """One chord's rows: the pitch classes that must not be doubled (its third, its
    tensions outside the chord) and its own pitch classes, as 12 flags each."""
    tones = set(c.pitch_classes)
    flagged = {(c.root + t) % 12 for t in c.tensions if (c.root + t) % 12 not in tones}
    flagged |= {(c.root + third) % 12 for third in (3, 4) if third in c.intervals}
    return tuple(pc in flagged for pc in range(12)), tuple(pc in tones for pc in range(12))


def context(chords: Sequence[Chord], vtypes: Sequence[str]) -> Context:
    m = len(chords)
    rows = [_chord_row(c) for c in chords]
    return Context(np.array([c.root for c in chords], dtype=np.int64),
                   np.array([c.is_dominant for c in chords], dtype=bool),
                   np.array([f for f, _t in rows], dtype=bool).reshape(m, 12),
                   np.array([v in ("close", "drop2", "drop2-4", "drop3") for v in vtypes], dtype=bool),
                   np.array([v == "unison" for v in vtypes], dtype=bool),
                   np.array([t for _f, t in rows], dtype=bool).reshape(m, 12))


def _ranges(section: Section) -> tuple[np.ndarray, ...]:
    parts = section.parts
    return tuple(np.array([getattr(p.instrument, attr)[k] for p in parts], dtype=np.int64)
                 for attr in ("practical", "extreme") for k in (0, 1))


def masks(pitches: np.ndarray, ctx: Context, section: Section) -> dict[str, np.ndarray]:
    """For each rule, an ``(m, n)`` bool array marking the offending voices."""
    P = np.asarray(pitches, dtype=np.int64)
    m, n = P.shape
    plo, phi, xlo, xhi = _ranges(section)
    out: dict[str, np.ndarray] = {}
    outside_x = (P < xlo) | (P > xhi)
    out["range"] = ((P < plo) | (P > phi)) & ~outside_x
    out["extreme"] = outside_x
    zeros = np.zeros((m, 1), dtype=bool)
    # adjacent pairs: d[:, i] = voice i minus voice i+1
    d = P[:, :-1] - P[:, 1:]
    limits = low_interval_limits()
    lim = limits[np.clip(d, 0, 24)]
    low = (d > 0) & (d <= 24) & (lim >= 0) & (P[:, 1:] < lim)
    out["low-interval"] = np.concatenate([zeros, low], axis=1)
    out["voice-crossing"] = np.concatenate([zeros, d < 0], axis=1)
    # every pair (i above j): minor ninths and compounds (i at least 13 semitones over j,
    # its pitch class one over j's), but the b9 over a dominant's root (j the root)
    dd = P[:, :, None] - P[:, None, :]
    pc = P % 12
    upper = np.triu(np.ones((n, n), dtype=bool), k=1)[None]
    b9_ok = ctx.dominant[:, None, None] & (pc == ctx.root[:, None])[:, None, :]
    m9 = upper & (dd >= 13) & (pc[:, :, None] == ((pc + 1) % 12)[:, None, :]) & ~b9_ok
    out["minor-ninth"] = m9.any(axis=1)
    # the pitch class's occurrence from the top down: voice j is its k-th (j and those above)
    same = pc[:, :, None] == pc[:, None, :]
    occurrence = (same & np.tril(np.ones((n, n), dtype=bool))[None]).sum(axis=2)
    flagged = np.take_along_axis(ctx.flagged, pc, axis=1)
    out["doubling"] = (occurrence >= 2) & flagged & (pc != pc[:, :1]) & ~ctx.unison[:, None]
    upper_pairs = np.arange(n - 1) < (n - 1 if n <= 4 else n - 2)
    gap = (d > 12) & upper_pairs[None, :] & ctx.closed[:, None]
    out["gap"] = np.concatenate([zeros, gap], axis=1)
    low = pc[:, -1]
    rows = np.arange(m)
    b9 = (low - ctx.root) % 12 == 1
    avoid = ~ctx.tones[rows, low] & ctx.tones[rows, (low - 1) % 12]
    bottom = np.zeros((m, n), dtype=bool)
    bottom[:, -1] = (b9 | avoid) & ~ctx.unison & (n >= 3)
    out["bottom"] = bottom
    return out


def penalties(marks: dict[str, np.ndarray], weights: dict[str, float]) -> np.ndarray:
    """Weighted count of offending voices per voicing, ``(m,)``."""
    total = np.zeros(next(iter(marks.values())).shape[0])
    for kind in KINDS:
        total += weights[kind] * marks[kind].sum(axis=1)
    return total


def findings(pitches: np.ndarray, ctx: Context, section: Section, *, bars: Sequence[int],
             allow_extreme: bool, vtypes: Sequence[str]) -> list[tuple[str, int, str, str, str]]:
    """``(kind, event, part, message, severity)`` for every mark of the chosen voicings."""
    P = np.asarray(pitches, dtype=np.int64)
    marks = masks(P, ctx, section)
    parts = section.parts
    limits = low_interval_limits()
    out: list[tuple[str, int, str, str, str]] = []
    rows, cols = np.nonzero(np.stack([marks[k] for k in KINDS], axis=0).any(axis=0))
    for i, j in zip(rows.tolist(), cols.tolist(), strict=True):
        p = int(P[i, j])
        part = parts[j]
        at = f"bar {bars[i]}: "
        above = parts[j - 1].name if j else ""
        q = int(P[i, j - 1]) if j else p
        inst = part.instrument
        for kind in KINDS:
            if not marks[kind][i, j]:
                continue
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
                       f"its low-interval limit {pitch_name(int(limits[gap]))}")
            elif kind == "voice-crossing":
                msg = f"{part.name} ({pitch_name(p)}) sounds above {above} ({pitch_name(q)})"
            elif kind == "minor-ninth":
                msg = (f"{pitch_name(p)} in {part.name} lies a minor ninth (or compound) below another "
                       "voice; only the b9 over a dominant's root is kept")
            elif kind == "doubling":
                msg = f"{part.name} doubles {pitch_name(p)[:-1]}, the third or a tension, already voiced above"
            elif kind == "bottom":
                what = "the b9" if (p - int(ctx.root[i])) % 12 == 1 else "an avoid note"
                msg = (f"{part.name} plays {pitch_name(p)}, {what} of the chord, as the section's "
                       "lowest voice")
            else:
                msg = (f"{q - p} semitones between {above} ({pitch_name(q)}) and {part.name} "
                       f"({pitch_name(p)}) in a {vtypes[i]} voicing; at most an octave")
            out.append((kind, i, part.name, at + msg, severity))
    return out
