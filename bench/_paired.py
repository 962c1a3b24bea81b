"""Paired medians: two commands run in turn (A B A B ...), each in a fresh process, and
the ratio A/B taken pair by pair, so a ratio holds while a shared machine's speed drifts.
The median of the ratios (and of each side's seconds) is quoted, never the fastest run."""
from __future__ import annotations

import statistics

from _measure import ROOT, run_once


def paired(a: list[str], b: list[str], runs: int = 7, cwd=ROOT) -> tuple[float, float, float]:  # noqa: ANN001
    """(median seconds of A, median seconds of B, median of the pairwise ratios A/B)."""
    run_once(a, cwd)
    run_once(b, cwd)          # one warm-up each (file cache, .pyc)
    ta, tb, ratios = [], [], []
    for _ in range(runs):
        x, _ = run_once(a, cwd)
        y, _ = run_once(b, cwd)
        ta.append(x)
        tb.append(y)
        ratios.append(x / y)
    return statistics.median(ta), statistics.median(tb), statistics.median(ratios)
