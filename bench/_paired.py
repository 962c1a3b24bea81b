"""Paired medians: two commands run in turn (A B A B ...), each in a fresh process, and
the ratio A/B taken pair by pair, so a ratio holds while a shared machine's speed drifts.
The median of the ratios (and of each side's seconds) is quoted, never the fastest run.
Both wall seconds and processor seconds (user + system) are paired; on a machine others
are using at the same time the processor seconds are the steadier of the two."""
from __future__ import annotations

import statistics
from dataclasses import dataclass

from _measure import ROOT, run_measured


@dataclass(frozen=True)
class Paired:
    wall_a: float
    wall_b: float
    wall_ratio: float
    cpu_a: float
    cpu_b: float
    cpu_ratio: float


def paired_both(a: list[str], b: list[str], runs: int = 7, cwd=ROOT) -> Paired:  # noqa: ANN001
    """Medians of A's and B's wall and processor seconds and of the pairwise ratios A/B."""
    run_measured(a, cwd)
    run_measured(b, cwd)          # one warm-up each (file cache, .pyc)
    rows = []
    for _ in range(runs):
        wa, ca, _ = run_measured(a, cwd)
        wb, cb, _ = run_measured(b, cwd)
        rows.append((wa, wb, wa / wb, ca, cb, ca / cb))
    return Paired(*(statistics.median(r[i] for r in rows) for i in range(6)))


def paired(a: list[str], b: list[str], runs: int = 7, cwd=ROOT) -> tuple[float, float, float]:  # noqa: ANN001
    """(median seconds of A, median seconds of B, median of the pairwise ratios A/B), wall."""
    p = paired_both(a, b, runs, cwd)
    return p.wall_a, p.wall_b, p.wall_ratio
