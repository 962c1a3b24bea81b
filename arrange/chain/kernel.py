"""The designer's vectorised kernel: a block of candidate motifs in, the ones that
meet a :class:`~arrange.design_spec.DesignSpec` out, with their ranking scores.

Arrays are held column by column (one 1-D array per note position, one row per
candidate), so every step is a whole-column numpy operation and the Python
loops run over note positions only (at most 8 per statement).  Rows that fail
are masked, and the columns are compacted whenever fewer than half survive.
The chain rules are those of :func:`arrange.chain.build_chain`: the axis that
maps the last ``o`` notes onto the next statement's first ``o``, exact links
when the tail is its own retrograde inversion, pitch-class links (new notes in
the octave nearest the note before, a tritone going up) when it is so only
by pitch class, and the virtual statements 2 and 3 behind ``compass`` and
``transposition`` when fewer statements are asked.
"""
from __future__ import annotations

import math
from typing import Any

import numpy as np

from arrange.chain.spec import DesignSpec, chain_length, last_p_statement, tonic_chord

__all__ = ["screen", "scores", "plan", "MEMORY_BUDGET"]

MEMORY_BUDGET = 192 * 2**20      # bytes of working arrays per chunk (far under 1 GiB)
_MAX_ROWS = 1 << 20
_DT = np.int16                   # live rows stay in MIDI 0..127; masked rows may wrap

Cols = list[np.ndarray]


def _next(stmt: Cols, o: int) -> tuple[Cols, np.ndarray | None]:
    """The RI statements after ``stmt`` with overlap ``o``; the rows that link (None = all)."""
    n = len(stmt)
    axis = stmt[n - 1] + stmt[n - o]
    ri = [axis - stmt[n - 1 - i] for i in range(n)]
    if o <= 2:                                   # overlaps 1 and 2 always link exactly
        return ri, None
    tail = stmt[n - o:]
    sums = [tail[i] + tail[o - 1 - i] for i in range(o)]
    exact = np.ones(len(axis), dtype=bool)
    pcl = np.ones(len(axis), dtype=bool)
    for s in sums[1:]:
        exact &= s == sums[0]
        pcl &= (s - sums[0]) % 12 == 0
    pcl &= ~exact
    if pcl.any():
        out = list(tail)
        for i in range(o, n):
            before = out[-1]
            cand = before + (ri[i] - before) % 12
            cand = np.where(cand - before > 6, cand - 12, cand).astype(_DT)
            out.append(cand)
        ri = [np.where(pcl, a, b) for a, b in zip(out, ri, strict=True)]
    return ri, exact | pcl


class _Block:
    """Named columns sharing their rows, a running mask, lazy compaction."""

    def __init__(self, arrays: dict[str, Any]) -> None:
        self.a = arrays
        self.mask = np.ones(len(arrays["gidx"]), dtype=bool)

    def __len__(self) -> int:
        return len(self.mask)

    def compact(self, force: bool = False) -> None:
        kept = int(self.mask.sum())
        if kept == len(self.mask) or (not force and kept * 2 > len(self.mask)):
            return
        m = self.mask
        self.a = {k: ([c[m] for c in v] if isinstance(v, list) else v[m]) for k, v in self.a.items()}
        self.mask = np.ones(kept, dtype=bool)


def _line(spec: DesignSpec, motif: Cols) -> Cols:
    """The merged line, column by column (only for rows already known to pass)."""
    o, line, stmt = spec.overlap, list(motif), motif
    for _ in range(2, spec.statements + 1):
        stmt, _ok = _next(stmt, o)
        line.extend(stmt[o:])
    return line


def screen(spec: DesignSpec, motif: Cols, gidx: np.ndarray, *, with_scores: bool = True
           ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Candidates that meet ``spec``: (global indices, end tiers, ranks).  A rank is the
    score plus 2 for a line within ``spec.lead_span`` and 1 for a chain that travels."""
    n, o, k = spec.length, spec.overlap, spec.statements
    last_p = last_p_statement(k)
    b = _Block({"gidx": gidx, "motif": motif, "stmt": motif})
    lo, hi = motif[0].copy(), motif[0].copy()
    for c in motif[1:]:
        np.minimum(lo, c, out=lo)
        np.maximum(hi, c, out=hi)
    b.a.update(lo=lo, hi=hi)
    m = b.mask
    m &= (lo >= 0) & (hi <= 127)
    if spec.span is not None:
        m &= hi - lo <= spec.span
    if spec.no_repeats:
        pcs = [c % 12 for c in motif]
        for i in range(n):
            for j in range(i + 1, n):
                m &= pcs[i] != pcs[j]
    outside = None
    if spec.chromatic_notes is not None:
        outside = np.ones(12, dtype=_DT)
        outside[list(spec.key_notes())] = 0
        out = np.zeros(len(gidx), dtype=_DT)
        for c in motif:
            out += outside[c % 12]
        b.a["out"] = out
        m &= out <= spec.chromatic_notes
    agg_m = spec.aggregate_within
    if agg_m is not None:
        bits = np.zeros(len(gidx), dtype=_DT)
        for c in motif[:agg_m]:
            bits |= np.left_shift(np.ones(1, dtype=_DT), (c % 12).astype(_DT))
        b.a["bits"] = bits
    b.a["alive2"] = np.ones(len(gidx), dtype=bool)
    b.compact()
    pos = n                                   # line notes so far
    for j in range(2, max(k, 3) + 1):
        if not b.mask.any():
            break
        nxt, ok = _next(b.a["stmt"], o)
        b.a["stmt"] = nxt
        m = b.mask
        m0 = b.a["motif"][0]
        if j <= k:
            if ok is not None:
                m &= ok
            new = nxt[o:]
            lo, hi = b.a["lo"], b.a["hi"]
            for c in new:
                np.minimum(lo, c, out=lo)
                np.maximum(hi, c, out=hi)
            m &= (lo >= 0) & (hi <= 127)
            if spec.span is not None:
                m &= hi - lo <= spec.span
            if outside is not None:
                out = b.a["out"]
                for c in new:
                    out += outside[c % 12]
                m &= out <= spec.chromatic_notes
            if agg_m is not None:
                bits = b.a["bits"]
                one = np.ones(1, dtype=_DT)
                for i, c in enumerate(new):
                    if pos + i < agg_m:
                        bits |= np.left_shift(one, (c % 12).astype(_DT))
            pos += len(new)
        elif ok is not None:                  # a virtual statement: only its properties count
            b.a[f"alive{j}"] = ok if j == 2 else (b.a["alive2"] & ok)
        if j == 2:
            alive2 = b.a["alive2"]
            b.a["compass"] = np.where(alive2, nxt[-1] - m0, 0)
        if j == 3:
            alive3 = b.a.get("alive3", b.a["alive2"])
            t = np.where(alive3, nxt[0] - m0, 0)
            b.a["t"] = t
            if spec.transposition is not None:
                if spec.transposition_class:
                    m &= (t - spec.transposition) % 12 == 0
                else:
                    m &= t == spec.transposition
            if spec.compass is not None:
                m &= b.a["compass"] == spec.compass
            if spec.to_key is not None and o <= 2 and last_p > 3:
                # exact links: statement j+2 is statement j moved by t (module doc of chain),
                # so the last P statement lies ((P-1)/2) t from statement 1
                m &= (((last_p - 1) // 2) * t - spec.distance) % 12 == 0
        if j == last_p and spec.to_key is not None:
            # the P statements carry the keys: the last one starts in the second key
            m &= (nxt[0] - m0 - spec.distance) % 12 == 0
        b.compact()
    if agg_m is not None:
        b.mask &= b.a["bits"] == 4095
    b.compact(force=True)
    gidx = b.a["gidx"]
    if not len(gidx):
        z = np.zeros(0, dtype=np.int64)
        return z, z, np.zeros(0)
    if spec.to_key is not None:
        # statement k is the last one built unless virtual statements followed it
        last = b.a["stmt"][-1] if k >= 3 else _line(spec, b.a["motif"])[-1]
        pc = last % 12
        chord = np.zeros(12, dtype=bool)
        chord[list(tonic_chord(spec.to_key))] = True
        scale = np.zeros(12, dtype=bool)
        scale[list(spec.to_key.scale)] = True
        tier = np.where(chord[pc], 0, np.where(scale[pc], 1, 2))
    else:
        tier = np.zeros(len(gidx), dtype=np.int64)
    sc = scores(_line(spec, b.a["motif"])) if with_scores else np.zeros(len(gidx))
    if with_scores:
        # the ranking rule (README): lines within the lead's compass first, then lines whose
        # statement 3 travels to new pitch classes, then the score (in 0..1)
        fits = (b.a["hi"] - b.a["lo"]) <= spec.lead_span
        travels = b.a["t"] % 12 != 0
        sc = sc + 2.0 * fits + 1.0 * travels
    return gidx, tier, sc


def scores(line: Cols) -> np.ndarray:
    """The ranking score of every row (see ``arrange.design.score_of``)."""
    m = len(line) - 1
    rows = len(line[0])
    total = np.zeros(rows, dtype=np.int32)
    counts = [np.zeros(rows, dtype=np.int32) for _ in range(7)]
    for a, c in zip(line, line[1:], strict=False):
        d = np.abs(c.astype(np.int32) - a)
        total += d
        ic = d % 12
        ic = np.minimum(ic, 12 - ic)
        for v in range(7):
            counts[v] += ic == v
    smooth = np.clip(1.0 - (total / m) / 12.0, 0.0, 1.0)
    h = np.zeros(rows)
    for cnt in counts:
        p = cnt / m
        safe = np.where(p > 0, p, 1.0)
        h -= p * np.log(safe)
    norm = math.log(min(7, m))
    even = h / norm if norm > 0 else np.zeros(rows)
    return np.round(0.6 * smooth + 0.4 * even, 6)


def plan(spec: DesignSpec) -> tuple[int, int]:
    """(trailing steps enumerated per chunk, number of chunks)."""
    base, free = len(spec.steps), spec.length - 1
    per_row = (chain_length(spec) + 4 * spec.length + 16) * 8   # scoring columns and temporaries
    rows = max(1, min(_MAX_ROWS, MEMORY_BUDGET // per_row))
    r = 0
    while r < free and base ** (r + 1) <= rows:
        r += 1
    return r, base ** (free - r)
